"""The ``stages`` command: one hypothesis fitted to a series of plate configurations."""

from __future__ import annotations

import json
from pathlib import Path

from ..errors import InputError
from .common import EXIT_OK, arg_type, count

__all__ = ["jobs_type", "add_parser", "run_stages"]

jobs_type = arg_type(int, "a whole number", lambda n: n >= 1, "must be 1 or more")


def add_parser(sub) -> None:
    """Add the ``stages`` command to the subparsers ``sub``.

    Parameters
    ----------
    sub : argparse subparsers
    """
    p = sub.add_parser("stages", help="fit one hypothesis to plate configurations through time",
                       description="Fit the hypothesis of a stage series file (TOML; see "
                       "docs/time-series.md) to every stage at once, rank it against the "
                       "series' other hypotheses by leave-one-plate-out cross-validation, and "
                       "write into "
                       "OUTDIR the fitted coefficients (series_fit.json), every term's torque "
                       "per plate per stage (torques.csv), predicted and observed motions "
                       "(predicted.csv), the misfit per stage (misfit.csv), the ranking "
                       "(rank.csv), charts against time and a report. Stages, hypotheses and "
                       "Monte Carlo draws run as independent tasks: here, on a local pool "
                       "(--jobs) or on a Dask cluster (--scheduler), with the same numbers.")
    p.add_argument("series", help="stage series file (TOML)")
    p.add_argument("-o", "--outdir", required=True, help="output folder (made if missing; "
                   "refused when it holds other files, unless --force)")
    p.add_argument("--force", action="store_true",
                   help="write into a folder that holds other files, overwriting this "
                   "command's own output names there (nothing is deleted)")
    p.add_argument("--monte-carlo", type=count, default=0, metavar="N",
                   help="refit on N draws of every stage's motions from their covariance")
    p.add_argument("--seed", type=count, default=0, help="random seed (default 0)")
    p.add_argument("--jobs", type=jobs_type, default=1, metavar="N",
                   help="worker processes of a local pool (default 1: this process)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="a Dask scheduler (tcp://host:port), or local:N for a local Dask "
                   "cluster of N workers; needs the cluster extra (pip install -e '.[cluster]')")
    p.add_argument("--plates", metavar="A,B,...",
                   help="plates to chart against time (default: the series file's, else the "
                   "four largest)")
    p.set_defaults(func=run_stages)


def run_stages(args) -> int:
    """Run ``torque stages``.

    Parameters
    ----------
    args : argparse.Namespace

    Returns
    -------
    int
    """
    from ..io import write_csv, write_json
    from ..io.files import output_folder
    from ..io.manifest import run_manifest
    from ..io.series import series_record, series_tables
    from ..parallel import Executor
    from ..present.report import write_series_report
    from ..present.timeplots import default_plates, speed_through_time, torque_through_time
    from ..workflows import run_series
    outdir = Path(args.outdir)
    # checked before the work, made after it (nothing is written for a refused series)
    output_folder(outdir, "stages", args.force, make=False)
    with Executor(args.jobs, args.scheduler, preload=("torque.io.series",)) as ex:
        result = run_series(args.series, ex, args.monte_carlo, args.seed)
    plates = args.plates.split(",") if args.plates else default_plates(result)
    known = set(p for st in result.stages for p in st.system.plates)
    unknown = [p for p in plates if p not in known]
    if unknown:
        raise InputError(f"--plates: no stage has plate(s) {', '.join(unknown)}")
    tables = series_tables(result)
    output_folder(outdir, "stages", True)
    series = result.series
    files = [args.series, series.hypothesis, *series.compare]
    for st in series.stages:
        files += [st.world, st.motions or st.rotations]
    manifest = run_manifest([getattr(args, "argv", [])], files,
                            {"Monte Carlo draws": args.seed} if args.monte_carlo else {},
                            getattr(args, "started", None))
    write_json(outdir / "series_fit.json", series_record(result, manifest), end="\n")
    for name in ("torques", "predicted", "misfit", "rank"):
        write_csv(outdir / f"{name}.csv", tables[name])
    figures = [("Torques through time", torque_through_time(
                   outdir / "torque_through_time.png", result, tables, plates).name),
               ("Speed through time", speed_through_time(
                   outdir / "speed_through_time.png", result, tables, plates).name)]
    truth_path = Path(series.path).parent / "truth.json"
    truth = json.loads(truth_path.read_text()) if truth_path.is_file() else None
    write_series_report(outdir, result, tables, figures, manifest, truth)
    fit = result.fit
    print(f"series {series.name!r}: {len(result.stages)} stages, hypothesis "
          f"{result.hypothesis_name!r}, tasks on {result.executor}")
    se = fit.cov.diagonal() ** 0.5
    for j, name in enumerate(fit.params):
        extra = ""
        if result.monte_carlo is not None:
            extra = f"   Monte Carlo sd {result.monte_carlo['sd'][j]:.3g}"
        print(f"  {name:<24} {fit.parameters[j]:.5g} ± {se[j]:.2g}{extra}")
    for st, rms in zip(result.stages, fit.stage_rms_mm_yr):
        print(f"  {st.name:<24} RMS misfit {rms:.3f} mm/yr")
    print("ranking (leave-one-plate-out CV over all stages, mm/yr): " + "; ".join(
        f"{r['name']} {r['cv_rms_mm_yr']:.3f} ± {r['cv_stderr_mm_yr']:.2g}"
        for r in result.ranking))
    if result.recommendation.get("reason"):
        print(result.recommendation["reason"])
    print("caution: model-dependent research estimates, not for hazard or engineering use")
    print(f"wrote {outdir}")
    return EXIT_OK
