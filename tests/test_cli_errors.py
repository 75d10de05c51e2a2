"""No input crashes the command line: every malformed input below ends with exit status 2,
a message naming the file, no traceback, and no output file left behind.

Each case was found by feeding malformed inputs to the command line (the sweep of
issue 10); the expectations are this project's contract (shared/interface.md), not
numbers from a source.
"""

import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from .conftest import assert_refused, plate_feature

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "polygons_demo"
HYP = DEMO / "hypotheses" / "ridge_drag.toml"
NORTH = [[0, 0], [120, 0], [240, 0], [0, 0]]
SOUTH = [[0, 0], [240, 0], [120, 0], [0, 0]]


@pytest.fixture
def demo(tmp_path):
    """A private copy of the demo world (so a test can spoil one of its files)."""
    d = tmp_path / "demo"
    shutil.copytree(DEMO, d)
    return d


def no_part_files(folder):
    return not [p for p in Path(folder).rglob("*") if p.name.endswith(".part")
                or p.name.startswith(".")]


# -- files that are not what they should be ----------------------------------------------
def test_empty_ring(write_world, cli, tmp_path):
    path = write_world([plate_feature("Upper", [NORTH]), plate_feature("Lower", [[]])])
    err = assert_refused(cli("check", path), None)
    assert "plates.geojson" in err


def test_empty_line_part(write_world, cli):
    path = write_world([plate_feature("Upper", [NORTH]), plate_feature("Lower", [SOUTH])],
                       [{"type": "Feature", "properties": {"kind": "ridge", "left": "Upper",
                                                           "right": "Lower"},
                         "geometry": {"type": "MultiLineString", "coordinates": [[]]}}],
                       extra='winding = "strict"\n')
    err = assert_refused(cli("check", path), None)
    assert "boundaries.geojson" in err


def test_json_nested_too_deeply(write_world, cli):
    path = write_world(None, raw_plates="[" * 100_000 + "]" * 100_000)
    assert_refused(cli("check", path), None, "plates.geojson", "nested too deeply")


def test_binary_file_as_age_csv(demo, cli, tmp_path):
    (demo / "ages.csv").write_bytes(bytes(range(256)) * 4)
    text = (demo / "world.toml").read_text().replace('"ages.nc"', '"ages.csv"')
    (demo / "world.toml").write_text(text)
    out = tmp_path / "t.csv"
    assert_refused(cli("torques", demo / "world.toml", HYP, "-o", out), out, "ages.csv",
                   "UTF-8")


def test_binary_file_as_points(demo, cli, tmp_path):
    (tmp_path / "points.csv").write_bytes(b"lon,lat\n\x00\x01\x02\n")
    out = tmp_path / "f.csv"
    assert_refused(cli("field", demo / "world.toml", demo / "motions.csv", "--points",
                       tmp_path / "points.csv", "-o", out), out, "points.csv", "NUL")


@pytest.mark.parametrize("which", ["world", "motions", "points", "hypothesis"])
def test_directory_where_a_file_is_expected(demo, cli, tmp_path, which):
    folder = tmp_path / "a_folder"
    folder.mkdir()
    out = tmp_path / "out.csv"
    world, motions = demo / "world.toml", demo / "motions.csv"
    if which == "world":
        argv = ("field", folder, motions, "-o", out)
    elif which == "motions":
        argv = ("field", world, folder, "-o", out)
    elif which == "points":
        argv = ("field", world, motions, "--points", folder, "-o", out)
    else:
        argv = ("torques", world, folder, "-o", out)
    err = assert_refused(cli(*argv), out, "is a directory")
    assert "does not exist" not in err and "not found" not in err


def test_directory_named_in_the_world_file(demo, cli):
    (demo / "grid_folder").mkdir()
    text = (demo / "world.toml").read_text().replace('"ages.nc"', '"grid_folder"')
    (demo / "world.toml").write_text(text)
    assert_refused(cli("check", demo / "world.toml"), None, "is a directory")


def test_text_file_as_netcdf(demo, cli, tmp_path):
    (demo / "ages.nc").write_text("lon,lat,age_myr\n0,0,10\n")
    out = tmp_path / "t.csv"
    err = assert_refused(cli("torques", demo / "world.toml", HYP, "-o", out), out,
                         "ages.nc", "not a NetCDF file")
    assert len(err.strip().splitlines()) == 1


def test_byte_order_marks_are_accepted(demo, cli):
    for name in ("world.toml", "plates.geojson", "boundaries.geojson"):
        p = demo / name
        p.write_bytes(b"\xef\xbb\xbf" + p.read_bytes())
    status, out, err = cli("check", demo / "world.toml")
    assert status == 0, err


def test_hypothesis_with_byte_order_mark(demo, cli, tmp_path):
    hyp = tmp_path / "h.toml"
    hyp.write_bytes(b"\xef\xbb\xbf" + HYP.read_bytes())
    out = tmp_path / "t.csv"
    status, _, err = cli("torques", demo / "world.toml", hyp, "--motions",
                         demo / "motions.csv", "-o", out)
    assert status == 0, err and out.exists()


# -- covariances ---------------------------------------------------------------------------
def _spoil_covariance(demo, value):
    lines = (demo / "motions.csv").read_text().splitlines()
    cells = lines[2].split(",")
    cells[5] = value            # cov_xy of the second plate
    lines[2] = ",".join(cells)
    (demo / "motions.csv").write_text("\n".join(lines) + "\n")
    return cells[0]


@pytest.mark.parametrize("value", ["nan", "inf", "-inf"])
def test_non_finite_covariance(demo, cli, tmp_path, value):
    plate = _spoil_covariance(demo, value)
    out = tmp_path / "fit.json"
    assert_refused(cli("fit", demo / "world.toml", HYP, demo / "motions.csv",
                       "--monte-carlo", "5", "-o", out), out, "motions.csv", plate,
                   "not finite")


def test_covariance_not_positive_semi_definite(demo, cli, tmp_path):
    # |cov_xy| > sqrt(cov_xx cov_yy) = 1e-4 makes the 2x2 minor negative
    plate = _spoil_covariance(demo, "0.01")
    out = tmp_path / "m.csv"
    assert_refused(cli("frame", demo / "world.toml", demo / "motions.csv",
                       "--to", "nnr", "-o", out), out, "motions.csv", plate,
                   "positive semi-definite")


# -- numbers on the command line -----------------------------------------------------------
def test_negative_seed(demo, cli, tmp_path):
    out = tmp_path / "fit.json"
    assert_refused(cli("fit", demo / "world.toml", HYP, demo / "motions.csv", "--seed", "-1",
                       "-o", out), out, "--seed", "negative")


@pytest.mark.parametrize("step", ["0", "-1", "nan"])
def test_bad_grid_step(demo, cli, tmp_path, step):
    out = tmp_path / "f.csv"
    assert_refused(cli("field", demo / "world.toml", demo / "motions.csv", "--step", step,
                       "-o", out), out, "--step")


def test_grid_step_too_fine_for_memory(demo, cli, tmp_path):
    out = tmp_path / "f.csv"
    assert_refused(cli("field", demo / "world.toml", demo / "motions.csv", "--step", "1e-5",
                       "-o", out), out, "memory", "GiB", "--step")


def test_sample_count_too_large_for_memory(demo, cli, tmp_path):
    out = tmp_path / "fit.json"
    assert_refused(cli("fit", demo / "world.toml", HYP, demo / "motions.csv",
                       "--monte-carlo", str(10 ** 12), "-o", out), out, "memory",
                   "--monte-carlo")


# -- output paths --------------------------------------------------------------------------
def test_output_under_a_file(demo, cli, tmp_path):
    blocker = tmp_path / "afile"
    blocker.write_text("mine")
    out = blocker / "f.csv"
    assert_refused(cli("field", demo / "world.toml", demo / "motions.csv", "-o", out), None,
                   "is a file, not a folder")
    assert blocker.read_text() == "mine"


def test_output_is_a_directory(demo, cli, tmp_path):
    out = tmp_path / "out.csv"
    out.mkdir()
    assert_refused(cli("field", demo / "world.toml", demo / "motions.csv", "-o", out), None,
                   "is a directory")
    assert out.is_dir() and not list(out.iterdir())


def test_demo_folder_under_a_file(cli, tmp_path):
    blocker = tmp_path / "afile"
    blocker.write_text("mine")
    assert_refused(cli("demo", blocker / "demo"), None, "is a file")
    assert blocker.read_text() == "mine"


def test_failed_rank_json_leaves_no_csv(demo, cli, tmp_path):
    csv_out = tmp_path / "rank.csv"
    blocker = tmp_path / "afile"
    blocker.write_text("mine")
    hyps = [DEMO / "hypotheses" / n for n in ("ridge_drag.toml", "ridge_slab_drag.toml")]
    assert_refused(cli("rank", demo / "world.toml", demo / "motions.csv", *hyps,
                       "-o", csv_out, "--json", blocker / "rank.json"), csv_out)
    assert no_part_files(tmp_path)


# -- messages from the balance name their file ---------------------------------------------
def test_all_coefficients_free_names_the_file(demo, cli, tmp_path):
    hyp = tmp_path / "allfree.toml"
    hyp.write_text('[[force]]\nkind = "ridge"\ncoefficient = "free"\n'
                   '[[force]]\nkind = "drag"\ncoefficient = "free"\n')
    out = tmp_path / "fit.json"
    assert_refused(cli("fit", demo / "world.toml", hyp, demo / "motions.csv", "-o", out), out,
                   "allfree.toml", "every coefficient is free")


def test_nothing_resists_says_so(demo, cli, tmp_path):
    hyp = tmp_path / "ridge_only.toml"
    hyp.write_text('[[force]]\nkind = "ridge"\ncoefficient = 1.0\n')
    out = tmp_path / "p.csv"
    err = assert_refused(cli("predict", demo / "world.toml", hyp, "--motions",
                             demo / "motions.csv", "-o", out), out, "ridge_only.toml",
                         "resists the motion of any plate")
    assert "plate(s)" not in err


def test_two_hypotheses_with_one_name(demo, cli, tmp_path):
    (tmp_path / "x").mkdir()
    a, b = tmp_path / "a.toml", tmp_path / "x" / "a.toml"
    shutil.copy(HYP, a)
    shutil.copy(HYP, b)
    out = tmp_path / "rank.csv"
    assert_refused(cli("rank", demo / "world.toml", demo / "motions.csv", a, b, "-o", out),
                   out, str(a), str(b), "share the name")


def test_monte_carlo_without_covariance_names_the_file(demo, cli, tmp_path):
    lines = (demo / "motions.csv").read_text().splitlines()
    (tmp_path / "nocov.csv").write_text(
        "\n".join(",".join(line.split(",")[:4]) for line in lines) + "\n")
    out = tmp_path / "fit.json"
    assert_refused(cli("fit", demo / "world.toml", HYP, tmp_path / "nocov.csv",
                       "--monte-carlo", "5", "-o", out), out, "nocov.csv", "covariance")


# -- problems in torque check --------------------------------------------------------------
def test_problem_without_location_has_no_empty_prefix(write_world, cli):
    # plates that leave most of the sphere uncovered: the area-sum problem has no place
    cap = [[0, 80], [120, 80], [240, 80], [0, 80]]
    path = write_world([plate_feature("Cap", [cap])])
    status, out, err = cli("check", path)
    assert status == 2
    assert "error: : " not in out + err


def test_overlap_names_both_plates(write_world, cli):
    # two plates that both hold the box 0-20 E, 0-20 N (and a third for the rest)
    box = [[0, 0], [20, 0], [20, 20], [0, 20], [0, 0]]
    big = [[-10, -10], [30, -10], [30, 30], [-10, 30], [-10, -10]]
    path = write_world([plate_feature("Small", [box]), plate_feature("Big", [big])])
    status, out, err = cli("check", path, "--json")
    assert status == 2
    msgs = [p["message"] for p in json.loads(out)["problems"]
            if p["message"].startswith("an overlap")]
    # shown although the gap (95 % of the sphere) is far larger
    assert msgs and all("2 plates" in m and "'Small'" in m and "'Big'" in m for m in msgs)


# -- signals and pipes (in a child process, as a user runs it) ------------------------------
def _torque(*argv, **kw):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    return subprocess.Popen([sys.executable, "-m", "torque", *map(str, argv)], env=env, **kw)


def test_closed_pipe_exits_quietly():
    p = _torque("cooling", "--json", stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    p.stdout.read(10)
    p.stdout.close()                 # the reader goes away, as `| head -c 10` does
    err = p.stderr.read().decode()
    p.wait(timeout=60)
    assert "Traceback" not in err and "Error" not in err
    # 0 if all was written before the reader left (it fits in the pipe), else 141
    assert p.returncode in (0, 141)


def test_sigterm_while_writing_leaves_no_part_file(demo, tmp_path):
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    out = out_dir / "field.csv"
    p = _torque("field", demo / "world.toml", demo / "motions.csv", "--step", "0.1", "-o",
                out, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and p.poll() is None:
        if any(f.name.endswith(".part") for f in out_dir.iterdir()):
            break
        time.sleep(0.005)
    if p.poll() is not None:
        pytest.skip("the field was written before a signal could be sent")
    p.send_signal(signal.SIGTERM)
    p.wait(timeout=60)
    assert p.returncode == 128 + signal.SIGTERM
    assert list(out_dir.iterdir()) == []
    assert "Traceback" not in p.stderr.read().decode()


def test_toml_nested_too_deeply(demo, cli, tmp_path):
    hyp = tmp_path / "deep.toml"
    hyp.write_text("a = " + "[" * 5000 + "]" * 5000 + "\n")
    out = tmp_path / "t.csv"
    assert_refused(cli("torques", demo / "world.toml", hyp, "-o", out), out, "deep.toml",
                   "nested too deeply")


def test_boundary_spacing_too_fine_for_memory(demo, cli, tmp_path):
    out = tmp_path / "b.csv"
    assert_refused(cli("boundaries", demo / "world.toml", demo / "motions.csv",
                       "--spacing-km", "1e-7", "-o", out), out, "memory", "--spacing-km")


def test_broken_pipe_in_process_is_quiet(monkeypatch, tmp_path, capsys):
    # A reader that has gone away: every write raises BrokenPipeError, as it does on a
    # closed pipe once the pipe's buffer is full.
    from torque.cli import main

    sink = open(tmp_path / "sink", "w")

    class Closed:
        def write(self, text):
            raise BrokenPipeError(32, "Broken pipe")

        def flush(self):
            pass

        def fileno(self):
            return sink.fileno()

    monkeypatch.setattr(sys, "stdout", Closed())
    assert main(["cooling", "--json"]) == 141
    sink.close()
    assert "Traceback" not in capsys.readouterr().err


def test_json_outputs_have_no_nan_tokens():
    # RFC 8259 has no token for NaN or infinity; they are written as null
    from torque.io import dumps
    text = dumps({"a": float("nan"), "b": np.array([1.0, np.inf]), "c": np.float64(-np.inf)})
    doc = json.loads(text, parse_constant=lambda name: pytest.fail(f"bare {name} token"))
    assert doc == {"a": None, "b": [1.0, None], "c": None}


@pytest.mark.parametrize("doc", ['{"coefficients": {}, "plates": [1, 2]}', '[]',
                                 '{"coefficients": {"ridge": {"value": "x"}}, "plates": []}'])
def test_malformed_fit_file(demo, cli, tmp_path, doc):
    fit = tmp_path / "fit.json"
    fit.write_text(doc)
    out = tmp_path / "b.png"
    assert_refused(cli("map", demo / "world.toml", "--kind", "budget", "--fit", fit,
                       "-o", out), out, "fit.json")
    out = tmp_path / "p.csv"
    assert_refused(cli("predict", demo / "world.toml", HYP, "--coefficients", fit,
                       "-o", out), out, "fit.json")
