"""The published 52-plate model, end to end: the walkthrough of the README, runnable.

Runs ``check``, ``frame`` (to the no-net-rotation frame), ``fit`` with a free mantle frame,
``rank`` of the four hypotheses in ``hypotheses/``, ``predict``, ``torques`` and the maps on
``../shared/data/global-plates-2003`` (a published global model; see its ATTRIBUTION.md),
writing every output and ``transcript.txt`` (what each command printed) into the output
folder. Without the model's folder it says so and stops (status 0): nothing here is
downloaded.

    python examples/published-2003/run.py [--model DIR] [-o OUTDIR] [--no-maps]

The sea-floor ages are synthesised from the motions being fitted (the model has no age
grid), so the fit is partly circular; the commands say so, and ``rank`` is run with
``--allow-synthetic-ages``. The numbers are model-dependent research estimates.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]
MODEL = ROOT.parent / "shared" / "data" / "global-plates-2003"
HYPOTHESES = HERE / "hypotheses"
MOTIONS = "motions_G01_fixed.csv"


def steps(model: Path, out: Path, maps: bool = True) -> list:
    """The commands of the walkthrough, ``(title, argv)``, in the order they run."""
    world, motions = model / "world.toml", model / MOTIONS
    hyp = {h.stem: h for h in sorted(HYPOTHESES.glob("*.toml"))}
    best = hyp["ridge_slab_drag"]
    fit = out / "fit.json"
    run = [
        ("check", ["check", world]),
        ("frame", ["frame", world, motions, "--to", "nnr", "-o", out / "nnr.csv"]),
        ("fit", ["fit", world, best, motions, "--free-frame", "-o", fit]),
        ("rank", ["rank", world, motions, *(hyp[h] for h in (
            "ridge_drag", "ridge_slab_drag", "ridge_slab_suction_drag",
            "ridge_slab_drag_transform")), "--free-frame", "--allow-synthetic-ages",
            "-o", out / "rank.csv", "--json", out / "rank.json"]),
        ("predict", ["predict", world, best, "--fit", fit, "--motions", motions,
                     "-o", out / "predicted.csv"]),
        ("torques", ["torques", world, best, "--motions", motions, "--fit", fit,
                     "-o", out / "torques.csv"]),
    ]
    if maps:
        for kind, extra in (("plates", []), ("poles", ["--fit", fit]),
                            ("budget", ["--fit", fit]),
                            ("velocities", ["--motions", motions, "--fit", fit])):
            run.append((f"map {kind}", ["map", world, "--kind", kind, *extra,
                                        "-o", out / "maps" / f"{kind}.png"]))
    return run


def run(model: Path = MODEL, out: Path = Path("published-2003-out"),
        maps: bool = True) -> dict:
    """Run the walkthrough; ``{title: (status, stdout, stderr)}``, also written to
    ``out / "transcript.txt"``. None when the model's folder is absent."""
    from torque.cli import main
    if not (model / "world.toml").is_file():
        return None
    out = Path(out)
    (out / "maps").mkdir(parents=True, exist_ok=True)
    got, lines = {}, []
    for title, argv in steps(model, out, maps):
        o, e = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(o), contextlib.redirect_stderr(e):
            status = main([str(a) for a in argv] + ["-q"] * (title.startswith("map")))
        got[title] = (status, o.getvalue(), e.getvalue())
        lines += [f"$ torque {' '.join(str(a) for a in argv)}", o.getvalue().rstrip(),
                  e.getvalue().rstrip(), f"(status {status})", ""]
        if status != 0:
            break
    (out / "transcript.txt").write_text("\n".join(lines) + "\n")
    return got


def main_():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--model", type=Path, default=MODEL)
    ap.add_argument("-o", "--output", type=Path, default=Path("published-2003-out"))
    ap.add_argument("--no-maps", action="store_true")
    args = ap.parse_args()
    got = run(args.model, args.output, not args.no_maps)
    if got is None:
        print(f"skipped: no published model at {args.model} (it travels in ../shared/data/; "
              "nothing is downloaded)")
        return 0
    for title, (status, _, _) in got.items():
        print(f"{title:<14} status {status}")
    print(f"wrote {args.output} (transcript.txt holds what every command printed)")
    return max(s for s, _, _ in got.values())


if __name__ == "__main__":
    sys.path.insert(0, str(ROOT))
    sys.exit(main_())
