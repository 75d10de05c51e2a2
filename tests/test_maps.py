"""Maps and charts: the registry of kinds, what each needs, and figures written.

Sources: a proper colouring gives neighbours different colours (definition); file
signatures (PNG, SVG/XML) for what was written.
"""

from pathlib import Path

import pytest

from torque.io import load_world
from torque.maps import KINDS, plate_colours

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "polygons_demo"
INPUTS = {"motions", "predicted", "fit", "hypothesis"}


@pytest.fixture(scope="module")
def demo_fit(tmp_path_factory):
    from torque.cli import main
    out = tmp_path_factory.mktemp("fit") / "fit.json"
    assert main(["fit", str(DEMO / "world.toml"),
                 str(DEMO / "hypotheses" / "ridge_slab_drag.toml"),
                 str(DEMO / "motions.csv"), "-o", str(out)]) == 0
    return out


def test_every_kind_says_what_it_needs_within_what_it_allows():
    for name, kind in KINDS.items():
        assert set(kind.needs) <= set(kind.allows) <= INPUTS, name
        assert kind.shows and callable(kind.draw)


def test_neighbouring_plates_get_different_colours():
    world = load_world(DEMO / "world.toml")
    colours = plate_colours(world)
    for b in world.boundaries:
        assert colours[world.plate_index[b.left]] != colours[world.plate_index[b.right]]


def test_a_map_is_a_png(tmp_path, cli):
    status, _, err = cli("map", DEMO / "world.toml", "--kind", "plates", "-o",
                         tmp_path / "p.png")
    assert status == 0, err
    data = (tmp_path / "p.png").read_bytes()
    assert data.startswith(b"\x89PNG\r\n\x1a\n") and len(data) > 20_000


@pytest.mark.parametrize("argv,words", [
    (["--kind", "poles"], "needs --fit"),
    (["--kind", "plates", "--predicted", "x.csv"], "--predicted make(s) no sense"),
    (["--kind", "misfit", "--motions", str(DEMO / "motions.csv")], "needs --predicted"),
    (["--kind", "plates", "-o", "map.jpg"], "cannot write .jpg"),
    (["--kind", "sideways"], "invalid choice"),
])
def test_map_options_that_make_no_sense(tmp_path, cli, argv, words):
    if "-o" not in argv:
        argv = argv + ["-o", str(tmp_path / "m.png")]
    status, out, err = cli("map", DEMO / "world.toml", *argv)
    assert status == 2 and words in err and "Traceback" not in err
    assert not list(tmp_path.iterdir())


def test_map_command_writes_a_figure(tmp_path, cli):
    status, out, err = cli("map", DEMO / "world.toml", "--kind", "velocities", "--motions",
                           DEMO / "motions.csv", "-o", tmp_path / "v.svg")
    assert status == 0, err
    assert (tmp_path / "v.svg").read_text().lstrip().startswith("<?xml")


@pytest.mark.parametrize("kind,extra", [
    ("budget", []),
    ("torques", ["--hypothesis", str(DEMO / "hypotheses" / "ridge_slab_drag.toml"),
                 "--motions", str(DEMO / "motions.csv")]),
])
def test_chart_kinds_draw_through_the_command_line(demo_fit, tmp_path, cli, kind, extra):
    # every kind is one entry of torque.maps.KINDS; the charts are the quick ones to draw
    fit = demo_fit
    status, _, err = cli("map", DEMO / "world.toml", "--kind", kind, "--fit", fit, *extra,
                         "-o", tmp_path / f"{kind}.svg")
    assert status == 0, err
    assert (tmp_path / f"{kind}.svg").read_text().lstrip().startswith("<?xml")


def test_the_poles_map_zooms_on_every_plate(demo_fit, tmp_path, monkeypatch):
    # one globe and one zoom panel per plate, each holding both poles (common practice, no
    # source: small ellipses must be visible)
    import numpy as np
    from torque import maps
    from torque.io import read_fit
    fit = read_fit(demo_fit)
    seen = {}
    real_save = maps._save

    def keep(fig, path):
        seen["axes"] = fig.axes
        return real_save(fig, path)
    monkeypatch.setattr(maps, "_save", keep)
    maps.poles_map(load_world(DEMO / "world.toml"), tmp_path / "p.png", fit)
    zooms = seen["axes"][1:]
    assert len(zooms) == len(fit.plates)
    assert [a.get_title() for a in zooms] == [p["plate"] for p in fit.plates]
    for a in zooms:
        x0, x1 = a.get_xlim()
        for line in a.get_lines():
            xs = np.asarray(line.get_xdata(), float)
            assert np.all((xs >= x0) & (xs <= x1))
