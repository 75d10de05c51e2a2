"""Shared fixtures and helpers for the tests: worlds written to temporary folders, the
command line run in-process, and comparisons. Worlds in memory are in ``worlds.py``."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest

from .worlds import voronoi_rings


def feature_collection(features):
    return {"type": "FeatureCollection", "features": features}


def plate_feature(name, rings, multi=False):
    return {"type": "Feature", "properties": {"plate": name},
            "geometry": {"type": "MultiPolygon" if multi else "Polygon", "coordinates": rings}}


def line_feature(coords, **props):
    return {"type": "Feature", "properties": props,
            "geometry": {"type": "LineString", "coordinates": coords}}


@pytest.fixture
def write_world(tmp_path):
    """Write a world folder; returns the path of world.toml."""

    def _write(plates, boundaries=None, extra="", name="world.toml", raw_plates=None):
        d = tmp_path
        (d / "plates.geojson").write_text(
            raw_plates if raw_plates is not None else json.dumps(feature_collection(plates)))
        text = 'plates = "plates.geojson"\n'
        if boundaries is not None:
            (d / "boundaries.geojson").write_text(json.dumps(feature_collection(boundaries)))
            text += 'boundaries = "boundaries.geojson"\n'
        (d / name).write_text(text + extra)
        return d / name

    return _write


def hemispheres_file(write_world, boundaries=None, extra=""):
    """Write the northern (Upper) and southern (Lower) hemispheres; the world file's path."""
    north = [[0, 0], [120, 0], [240, 0], [0, 0]]
    return write_world([plate_feature("Upper", [north]), plate_feature("Lower", [north[::-1]])],
                       boundaries, extra='winding = "strict"\n' + extra)


@pytest.fixture
def voronoi_world_file(write_world):
    """A 12-plate Voronoi world (plates P0..P11) and its generators."""
    gen, sv, rings = voronoi_rings(12, seed=3)
    path = write_world([plate_feature(f"P{i}", [r]) for i, r in enumerate(rings)])
    return path, gen


def run_cli(argv, capsys):
    """Run the command line in-process; returns (status, stdout, stderr)."""
    from torque.cli import main

    try:
        status = main([str(a) for a in argv])
    except SystemExit as exc:  # argparse usage errors
        status = exc.code
    out = capsys.readouterr()
    return status, out.out, out.err


def assert_refused(result, out_path, *words):
    """Exit status 2, no traceback, every word in the message, and (if an output path is
    given) no output file. Returns stderr."""
    status, out, err = result
    assert status == 2 and "Traceback" not in err
    for w in words:
        assert w in err, err
    if out_path is not None:
        assert not out_path.exists()
    return err


@pytest.fixture
def cli(capsys):
    return lambda *argv: run_cli(argv, capsys)


def here() -> Path:
    return Path(__file__).resolve().parent


def demo_system(stem="continental_drag"):
    """The demo's balance for hypothesis ``stem`` at its observed motions: ``(system,
    omega_obs, motions)`` (motions with their covariance, world plate order in omega)."""
    import torque
    demo = here().parent / "polygons_demo"
    inputs = torque.Inputs.load(demo / "world.toml")
    hyp = torque.load_hypothesis(demo / "hypotheses" / f"{stem}.toml")
    motions = torque.read_motions(demo / "motions.csv")
    obs = motions.for_world(inputs.world)
    return (torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, obs)),
            obs, motions)


_NUMBER = re.compile(r"[-+]?(?:\d+\.\d*|\.\d+|\d+)(?:[eE][-+]?\d+)?")


def assert_same_text_and_numbers(got, want, name, rtol=1e-9, atol=1e-9):
    """The two texts agree but for the last digits of their numbers.

    The generator's floating-point results may differ in the 15th digit between machines
    and library versions (BLAS, libm), so numbers are compared to a relative 1e-9 (the
    demo's data carry no meaning at that level: common practice, no source) and the text
    around them exactly.
    """
    assert _NUMBER.sub("#", got) == _NUMBER.sub("#", want), f"{name}: text differs"
    a = np.array([float(x) for x in _NUMBER.findall(got)])
    b = np.array([float(x) for x in _NUMBER.findall(want)])
    np.testing.assert_allclose(a, b, rtol=rtol, atol=atol, err_msg=name)
