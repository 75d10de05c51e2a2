"""Every command on the published 52-plate model in ../shared/data/global-plates-2003/
(Bird 2003; see its ATTRIBUTION.md), timed, and `rank` with four hypotheses with BLAS on
one thread (the default) and with BLAS threads allowed.

Target (issue 12): `rank` with four hypotheses under 10 s on one core.

    python scripts/bench_published.py [--model DIR] [--repeat K]
"""

from __future__ import annotations

import argparse
import contextlib
import io
import platform
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from torque.inference import solvers  # noqa: E402
from torque.cli import main  # noqa: E402

MODEL = ROOT.parent / "shared" / "data" / "global-plates-2003"
#: The four hypotheses of the README's walkthrough, shipped with the published-model example.
HYPOTHESES = ROOT / "examples" / "published-2003" / "hypotheses"
NAMES = ("ridge_drag", "ridge_slab_drag", "ridge_slab_suction_drag",
         "ridge_slab_drag_transform")


def write_hypotheses(folder: Path) -> list:
    """The four hypotheses' files (``folder`` is not needed: they are shipped); their
    paths, in the order of :data:`NAMES`."""
    return [HYPOTHESES / f"{name}.toml" for name in NAMES]


def timed(argv, repeat):
    """Median wall time (s) of ``torque argv`` in-process, and its status."""
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
            status = main([str(a) for a in argv])
        times.append(time.perf_counter() - t)
        assert status == 0, argv
    return float(np.median(times))


def run(model: Path, repeat: int = 3) -> str:
    """Time every command on the model; the Markdown table."""
    world = model / "world.toml"
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        hyps = write_hypotheses(tmp)
        nnr = tmp / "nnr.csv"
        steps = [
            ("check", ["check", world]),
            ("frame (to no-net-rotation)", ["frame", world, model / "motions_G01_fixed.csv",
                                             "--to", "nnr", "-o", nnr]),
            ("field (1 degree)", ["field", world, nnr, "--step", "1", "-o", tmp / "f.nc"]),
            ("boundaries", ["boundaries", world, nnr, "-o", tmp / "b.csv"]),
            ("torques (synthesised ages)", ["torques", world, hyps[1], "--motions", nnr,
                                            "-o", tmp / "t.csv"]),
            ("fit", ["fit", world, hyps[1], nnr, "-o", tmp / "fit.json"]),
            ("predict", ["predict", world, hyps[1], "--coefficients", tmp / "fit.json",
                         "--motions", nnr, "-o", tmp / "p.csv"]),
            ("rank (4 hypotheses)", ["rank", world, nnr, *hyps, "--allow-synthetic-ages",
                                     "-o", tmp / "r.csv"]),
        ]
        for name, argv in steps:
            rows.append((name, timed(argv, 1 if name.startswith("frame") else repeat)))
        limits = solvers.small_solves
        solvers.small_solves = contextlib.nullcontext    # let BLAS use its threads
        try:
            rows.append(("rank (4 hypotheses), BLAS threads allowed",
                         timed(steps[-1][1], repeat)))
        finally:
            solvers.small_solves = limits
    lines = [f"Machine: {platform.machine()}, Python {platform.python_version()}, numpy "
             f"{np.__version__}; medians of {repeat} runs in one process.", "",
             "| command on the published model (52 plates) | time |", "|---|---|"]
    lines += [f"| {name} | {t:.2f} s |" for name, t in rows]
    return "\n".join(lines)


def main_():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--model", type=Path, default=MODEL)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    if not (args.model / "world.toml").is_file():
        sys.exit(f"no published model at {args.model} (it is in ../shared/data/)")
    print(run(args.model, args.repeat))


if __name__ == "__main__":
    main_()
