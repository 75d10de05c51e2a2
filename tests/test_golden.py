"""Every command's output on the demo planet stays what it was: the safety net for
restructuring the code (issue 11). The recorded outputs in ``tests/golden/`` were made by
this module; a change that moves any number by more than a relative 1e-9 fails here.

To record them again after a change that is *meant* to change results (and say so in the
commit): ``python -m tests.test_golden``.
"""

import contextlib
import io
import os
import shutil
import sys
from pathlib import Path

import pytest

from .conftest import assert_same_text_and_numbers

ROOT = Path(__file__).resolve().parents[1]
GOLDEN = Path(__file__).resolve().parent / "golden"
HYP = "demo/hypotheses/ridge_slab_drag.toml"

# (output file, argv[, path written under out/]); an output ending in .stdout is what the
# command prints
COMMANDS = [
    ("check.stdout", ["check", "demo/world.toml", "--json"]),
    ("cooling.stdout", ["cooling", "--physics", HYP, "--ages", "1,5,20,50,80,120,200",
                        "--json"]),
    ("torques.csv", ["torques", "demo/world.toml", HYP, "--motions", "demo/motions.csv",
                     "-o", "out/torques.csv"]),
    ("fit.json", ["fit", "demo/world.toml", HYP, "demo/motions.csv", "-o", "out/fit.json"]),
    ("predicted.csv", ["predict", "demo/world.toml", HYP, "--coefficients", "out/fit.json",
                       "-o", "out/predicted.csv"]),
    ("field.csv", ["field", "demo/world.toml", "demo/motions.csv", "--step", "15", "-o",
                   "out/field.csv"]),
    ("nnr.csv", ["frame", "demo/world.toml", "demo/motions.csv", "--to", "nnr",
                 "-o", "out/nnr.csv"]),
    ("boundaries.csv", ["boundaries", "demo/world.toml", "demo/motions.csv",
                        "--spacing-km", "500", "-o", "out/boundaries.csv"]),
    ("rank.csv", ["rank", "demo/world.toml", "demo/motions.csv",
                  "demo/hypotheses/ridge_drag.toml", HYP, "-o", "out/rank.csv"]),
    # every resampling, and every hypothesis on one world (recorded with the code from
    # before issue 11's redesign, which reads the world's data once for all of them)
    ("fit_uncertainty.json", ["fit", "demo/world.toml", "demo/hypotheses/continental_drag.toml",
                              "demo/motions.csv", "-o", "out/fit_uncertainty.json",
                              "--bootstrap", "200", "--monte-carlo", "1000",
                              "--physics-samples", "20", "--seed", "1"]),
    ("rank_all.json", ["rank", "demo/world.toml", "demo/motions.csv",
                       *[f"demo/hypotheses/{h}.toml" for h in (
                           "boundary_resistance", "continental_drag", "ridge_drag",
                           "ridge_slab_drag", "slab_drag")], "--json", "out/rank_all.json"]),
    # the paths issue 25 carves (recorded before moving the code): the chi-square misfit,
    # a free mantle frame and what is computed from its fit, and a stage series
    ("fit_chi_square.json", ["fit", "demo/world.toml", "demo/hypotheses/continental_drag.toml",
                             "demo/motions.csv", "--misfit", "chi-square",
                             "-o", "out/fit_chi_square.json"]),
    ("fit_free_frame.json", ["fit", "demo/world.toml", HYP, "demo/motions.csv", "--free-frame",
                             "-o", "out/fit_free_frame.json"]),
    ("torques_free_frame.csv", ["torques", "demo/world.toml", HYP, "--motions",
                                "demo/motions.csv", "--coefficients", "out/fit_free_frame.json",
                                "-o", "out/torques_free_frame.csv"]),
    ("rank_chi_square.csv", ["rank", "demo/world.toml", "demo/motions.csv",
                             "demo/hypotheses/ridge_drag.toml", HYP,
                             "demo/hypotheses/continental_drag.toml", "--misfit", "chi-square",
                             "-o", "out/rank_chi_square.csv"]),
    ("stages_series_fit.json", ["stages", "demo/stages/series.toml", "-o", "out/stages", "-q"],
     "stages/series_fit.json"),
    ("stages_rank.csv", None, "stages/rank.csv"),
]


def produce(folder: Path) -> dict:
    """Run every command on a copy of the demo in ``folder``; ``{name: text}``."""
    from torque.cli import main
    shutil.copytree(ROOT / "polygons_demo", folder / "demo")
    (folder / "out").mkdir()
    texts = {}
    here = os.getcwd()
    os.chdir(folder)            # relative paths, so that no output names the folder
    try:
        for name, argv, *written in COMMANDS:
            # an entry with no argv is another file written by the command before it
            buf = io.StringIO()
            if argv is not None:
                with contextlib.redirect_stdout(buf):
                    status = main(argv)
                assert status == 0, (name, argv)
            text = (buf.getvalue() if name.endswith(".stdout") else
                    (folder / "out" / (written[0] if written else name)).read_text())
            # a series record names its file by its absolute path
            texts[name] = _without_manifest(text).replace(str(folder.resolve()), ".")
    finally:
        os.chdir(here)
    return texts


def _without_manifest(text):
    """A JSON output without its run manifest (times, versions and paths change from run
    to run; tests/test_manifest.py checks it), written again as the tool writes JSON."""
    import json
    from torque.io import dumps
    try:
        doc = json.loads(text)
    except ValueError:
        return text
    if isinstance(doc, dict) and doc.pop("run", None) is not None:
        return dumps(doc) + ("\n" if text.endswith("\n") else "")
    return text


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    return produce(tmp_path_factory.mktemp("golden"))


@pytest.mark.parametrize("name", [c[0] for c in COMMANDS])
def test_output_is_unchanged(outputs, name):
    want = (GOLDEN / name).read_text()
    got = outputs[name]
    # Relative 1e-9: numbers are written with 10 to 15 significant digits, and a fresh
    # install of the newest numpy 2.4 / scipy 1.17 moves fitted values by up to 1.8e-11
    # (iterative fits stop at a tolerance, and another BLAS or libm rounds differently);
    # a restructuring that changes a result moves it by far more (common practice, no
    # source).
    assert_same_text_and_numbers(got, want, name, rtol=1e-9, atol=1e-300)


if __name__ == "__main__":
    import tempfile
    with tempfile.TemporaryDirectory() as tmp:
        texts = produce(Path(tmp))
    GOLDEN.mkdir(exist_ok=True)
    for name, text in texts.items():
        (GOLDEN / name).write_text(text)
    print(f"wrote {len(texts)} files into {GOLDEN}", file=sys.stderr)
