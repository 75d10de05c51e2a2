"""The full covariance file (issue 13, item 2): read, written, refused when wrong, and used
by fit and rank. Invented numbers, checked against what was written (round trip) and
against the same covariance given as the motions' cov_* columns."""

import json

import numpy as np
import pytest

from torque import io as tio
from torque.errors import InputError
from torque.euler import RAD_S_PER_DEG_MYR

from .conftest import assert_refused, here

DEMO = here().parent / "polygons_demo"
HEADER = "plate_1,axis_1,plate_2,axis_2,cov\n"


def _variances(plates, v=1e-4):
    return "".join(f"{p},{a},{p},{a},{v}\n" for p in plates for a in "xyz")


def test_written_and_read_back(tmp_path):
    rng = np.random.default_rng(0)
    A = rng.normal(size=(9, 9))
    C = (A @ A.T + 9 * np.eye(9)) * 1e-5 * RAD_S_PER_DEG_MYR ** 2
    tio.write_covariance(tmp_path / "c.csv", C, ["A", "B", "C"])
    back = tio.read_covariance(tmp_path / "c.csv", ["A", "B", "C"])
    np.testing.assert_allclose(back, C, rtol=1e-14)
    # another plate order reorders rows and columns
    other = tio.read_covariance(tmp_path / "c.csv", ["C", "A", "B"])
    order = np.r_[6:9, 0:3, 3:6]
    np.testing.assert_allclose(other, C[np.ix_(order, order)], rtol=1e-14)


@pytest.mark.parametrize("body, words", [
    (_variances("AB") + "Q,x,A,x,1e-5\n", ["plate 'Q' is not a plate", "line 8"]),
    (_variances("AB") + "A,w,B,x,1e-5\n", ["axis_1 must be x, y or z"]),
    (_variances("AB") + "A,x,B,x,nan\n", ["cov is not finite"]),
    (_variances("AB") + "A,x,B,x,1e-5\nB,x,A,x,2e-5\n", ["given before with another value"]),
    (_variances("A"), ["plate 'B' has no positive variance"]),
    (_variances("AB") + "A,x,B,x,2e-4\n", ["not positive definite", "'A'"]),
    ("", ["empty"]),
])
def test_a_bad_file_is_refused_naming_what_is_wrong(tmp_path, body, words):
    path = tmp_path / "c.csv"
    path.write_text(HEADER + body if body else "")
    with pytest.raises(InputError) as err:
        tio.read_covariance(path, ["A", "B"])
    text = str(err.value)
    assert str(path) in text
    for w in words:
        assert w in text, text


def _demo_blocks_as_file(tmp_path):
    motions = tio.read_motions(DEMO / "motions.csv")
    P = len(motions.plates)
    full = np.zeros((P, 3, P, 3))
    full[np.arange(P), :, np.arange(P), :] = motions.cov
    path = tmp_path / "cov.csv"
    tio.write_covariance(path, full.reshape(3 * P, 3 * P), motions.plates)
    return path


def test_fit_with_the_file_equals_fit_with_the_same_columns(cli, tmp_path):
    # the same covariance, given as blocks in the motions or whole in a file
    path = _demo_blocks_as_file(tmp_path)
    args = [DEMO / "world.toml", DEMO / "hypotheses" / "ridge_slab_drag.toml",
            DEMO / "motions.csv", "--misfit", "chi-square", "--no-profile"]
    assert cli("fit", *args, "-o", tmp_path / "a.json")[0] == 0
    status, out, _ = cli("fit", *args, "--covariance", path, "-o", tmp_path / "b.json")
    assert status == 0 and "full covariance" in out
    a = json.loads((tmp_path / "a.json").read_text())
    b = json.loads((tmp_path / "b.json").read_text())
    for label in ("slab", "drag_all"):
        assert b["coefficients"][label]["value"] == pytest.approx(
            a["coefficients"][label]["value"], rel=1e-7)
    assert b["misfit"]["chi_square"] == pytest.approx(a["misfit"]["chi_square"], rel=1e-8)


def test_the_options_refuse_what_cannot_work(cli, tmp_path):
    world, hyp = DEMO / "world.toml", DEMO / "hypotheses" / "ridge_drag.toml"
    bare = tmp_path / "m.csv"          # the demo's motions without their cov_* columns
    bare.write_text("".join(",".join(line.split(",")[:4]) + "\n"
                            for line in (DEMO / "motions.csv").read_text().splitlines()))
    out = tmp_path / "f.json"
    assert_refused(cli("fit", world, hyp, DEMO / "motions.csv", "-o", out, "--model-error",
                       "1"), out, "model error (--model-error) is part of the chi-square misfit")
    assert_refused(cli("fit", world, hyp, DEMO / "motions.csv", "-o", out, "--model-error",
                       "-1"), out, "0 or more")
    assert_refused(cli("fit", world, hyp, bare, "-o", out, "--misfit", "chi-square"), out,
                   "needs a covariance", "--model-error")
    # a model error alone is a covariance
    status, text, _ = cli("fit", world, hyp, bare, "-o", out, "--misfit", "chi-square",
                          "--model-error", "2", "--no-profile")
    assert status == 0 and "model error: 2 mm/yr" in text
    bad = tmp_path / "bad.csv"
    bad.write_text(HEADER + "Nowhere,x,Nowhere,x,1\n")
    assert_refused(cli("rank", world, DEMO / "motions.csv", hyp, "--misfit", "chi-square",
                       "--covariance", bad), None, "bad.csv", "'Nowhere' is not a plate")
