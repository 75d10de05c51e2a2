"""The torque balance commands: ``fit``, ``predict`` and ``rank``."""

from __future__ import annotations

import sys
from contextlib import ExitStack

import numpy as np

from ..errors import InputError
from ..present import text
from .common import EXIT_OK, arg_type, count, frame_warning, inputs, manifest

__all__ = ["RESAMPLE_FIT", "FREE_FRAME", "MISFIT", "COVARIANCE", "MODEL_ERROR",
           "nonnegative", "WEIGHTING", "add_parser", "add_fit_option",
           "add_misfit_options", "options", "run_fit", "warn_frame", "run_predict",
           "run_rank"]

RESAMPLE_FIT = dict(choices=("velocity", "torque"), default="velocity",
                    help="how resampled members (bootstrap, Monte Carlo, cross-validation) are "
                    "refitted: the preferred velocity-space fit (default), or the faster "
                    "torque-space fit, whose spread is biased by the noise in its regressors")
FREE_FRAME = ("estimate the rotation of the motions' frame relative to the mantle together "
              "with the coefficients (three more parameters), instead of taking the motions "
              "to be in the mantle's frame")
MISFIT = ("what the velocity-space fit minimises: the area-integrated velocity misfit "
          "(default; plates weigh by their area, whatever their errors), or the chi-square with "
          "the observations' covariance (generalised least squares), from the motions' cov_* "
          "columns or --covariance, plus --model-error")
COVARIANCE = ("a full covariance of the observed Euler vectors, correlations between plates "
              "included (CSV plate_1,axis_1,plate_2,axis_2,cov in (deg/Myr)^2; see "
              "docs/outputs.md): used instead of the motions' cov_* columns")
MODEL_ERROR = ("with --misfit chi-square: add a model error of this RMS velocity over each "
               "plate (mm/yr) to the observations' covariance, for what the physics leaves "
               "out (real misfits are mostly model error)")
VARIANCE = ("with --misfit chi-square: take the covariance's scale as known (default: "
            "intervals unscaled, normal quantiles, a warning when the reduced chi-square is "
            "far from 1), or estimate it by the reduced chi-square (Student's t and F "
            "quantiles; nested pairs then decided by the F-test)")
STANDARD_ERRORS = ("the standard errors the fit leads with, propagates into the poles and "
                   "adjusts its profile intervals to; both are reported: classical (default "
                   "with --misfit chi-square) or cluster-robust, a plate a cluster (default "
                   "for the area misfit, whose classical errors assume one variance for "
                   "every plate)")
RECOMMEND = ("rank's rule: nested likelihood-ratio tests at 5 %% with the bound mixture, then "
             "AIC (default with --misfit chi-square), the lowest AIC, the lowest BIC, or the "
             "one-standard-error rule on cross-validation (default, and the only rule, "
             "without a covariance)")
nonnegative = arg_type(float, "a number", lambda x: bool(np.isfinite(x) and x >= 0),
                       "must be a finite number, 0 or more")
WEIGHTING = dict(choices=("velocity", "area", "none"), default="velocity",
                 help="weighting of the plates' torque equations in the torque-space fit "
                 "(default velocity: by the inverse square root of each plate's drag tensor)")


def add_parser(sub) -> None:
    """Add the ``fit``, ``predict`` and ``rank`` commands to the subparsers ``sub``.

    Parameters
    ----------
    sub : argparse subparsers
    """
    p = sub.add_parser("fit", help="estimate the free coefficients from observed motions",
                       description="Fit the free coefficients of a hypothesis to observed "
                       "Euler vectors, in torque space (linear) and in velocity space "
                       "(preferred), with profile-likelihood intervals, per-plate "
                       "diagnostics and optional resampling. The motions are taken to be in "
                       "the frame where the mantle is at rest unless --free-frame fits the "
                       "mantle's rotation in their frame or --mantle-rotation gives it.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("hypothesis", help="hypothesis file (TOML)")
    p.add_argument("motions", help="observed motions CSV")
    p.add_argument("-o", "--output", required=True, help="output JSON")
    p.add_argument("--weighting", **WEIGHTING)
    p.add_argument("--bootstrap", type=count, default=0, metavar="N",
                   help="refit on N resamples of the plates")
    p.add_argument("--monte-carlo", type=count, default=0, metavar="N",
                   help="refit on N draws of the motions from their covariance columns")
    p.add_argument("--physics-samples", type=count, default=0, metavar="N",
                   help="refit on N draws of the physics from the hypothesis' [spread] table")
    p.add_argument("--seed", type=count, default=0, help="random seed (default 0)")
    frame = p.add_mutually_exclusive_group()
    frame.add_argument("--free-frame", action="store_true", help=FREE_FRAME)
    frame.add_argument("--mantle-rotation", metavar="LAT,LON,RATE",
                       help="the mantle's rotation in the frame of the motions (pole in "
                       "degrees, rate in deg/Myr), e.g. of an absolute reference frame: "
                       "removed from the motions before fitting")
    p.add_argument("--resample-fit", **RESAMPLE_FIT)
    add_misfit_options(p)
    p.add_argument("--standard-errors", choices=("classical", "robust"),
                   help=STANDARD_ERRORS)
    p.add_argument("--no-profile", action="store_true",
                   help="skip the profile-likelihood intervals (some tens of refits per "
                   "free coefficient)")
    p.set_defaults(func=run_fit)

    p = sub.add_parser("predict", help="Euler vectors that balance the torques",
                       description="Forward model: the Euler vector of every plate that "
                       "balances the torques of a hypothesis, in the frame where the mantle "
                       "is at rest. Free coefficients take their values from --fit.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("hypothesis", help="hypothesis file (TOML)")
    add_fit_option(p, "values of the free coefficients")
    p.add_argument("--motions", help="motions CSV, only to synthesise sea-floor ages when "
                   "the world has no age grid")
    p.add_argument("-o", "--output", required=True, help="output motions CSV")
    p.set_defaults(func=run_predict)

    p = sub.add_parser("rank", help="compare hypotheses",
                       description="Fit every hypothesis to the same motions, compare them "
                       "and recommend one by a stated rule (--recommend): with a covariance "
                       "(--misfit chi-square) nested likelihood-ratio tests with the bound "
                       "mixture, then AIC, with cross-validation (the chi-square of each "
                       "left-out plate) as a check; without one, the one-standard-error rule "
                       "on leave-one-plate-out cross-validation. Misfit, free coefficients, "
                       "AIC and BIC from the effective numbers of observations and "
                       "parameters.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("motions", help="observed motions CSV")
    p.add_argument("hypotheses", nargs="+", metavar="HYP", help="hypothesis files")
    p.add_argument("-o", "--output", help="output CSV")
    p.add_argument("--json", metavar="FILE", help="also write rows and F-tests as JSON")
    p.add_argument("--weighting", **WEIGHTING)
    p.add_argument("--free-frame", action="store_true", help=FREE_FRAME)
    p.add_argument("--resample-fit", **RESAMPLE_FIT)
    add_misfit_options(p)
    p.add_argument("--recommend", choices=("likelihood-ratio", "aic", "bic",
                                           "cross-validation"), help=RECOMMEND)
    p.add_argument("--allow-synthetic-ages", action="store_true",
                   help="rank even when sea-floor ages are synthesised from the motions being "
                   "fitted (the comparison is then partly circular)")
    p.set_defaults(func=run_rank)


def add_fit_option(p, what: str, required: bool = False) -> None:
    """``--fit FIT.json`` (a ``torque fit`` output), with its former name
    ``--coefficients`` kept as an alias.

    Parameters
    ----------
    p : argparse.ArgumentParser
    what : str
        What the command takes from the fit, for the help.
    required : bool
    """
    p.add_argument("--fit", "--coefficients", dest="fit", metavar="FIT.json",
                   required=required,
                   help=f"output of torque fit: {what}, in its mantle frame (--coefficients "
                   "is the same option under its former name)")


def add_misfit_options(p) -> None:
    """``--misfit``, ``--covariance``, ``--model-error`` and ``--variance``, shared by fit
    and rank.

    Parameters
    ----------
    p : argparse.ArgumentParser
    """
    p.add_argument("--misfit", choices=("area", "chi-square"), default="area", help=MISFIT)
    p.add_argument("--covariance", metavar="COV.csv", help=COVARIANCE)
    p.add_argument("--model-error", type=nonnegative, metavar="MM_YR", help=MODEL_ERROR)
    p.add_argument("--variance", choices=("known", "estimated"), help=VARIANCE)


def options(args):
    """The :class:`~torque.workflows.FitOptions` of a command line (fit, rank).

    Parameters
    ----------
    args : argparse.Namespace

    Returns
    -------
    FitOptions
    """
    from ..workflows import FitOptions
    get = lambda name, default=None: getattr(args, name, default)  # noqa: E731
    return FitOptions(misfit=args.misfit, covariance=args.covariance,
                      model_error_mm_yr=args.model_error, weighting=args.weighting,
                      free_frame=args.free_frame,
                      mantle_rotation=_mantle_rotation(get("mantle_rotation")),
                      seed=get("seed", 0), bootstrap=get("bootstrap", 0),
                      monte_carlo=get("monte_carlo", 0),
                      physics_samples=get("physics_samples", 0),
                      resample_fit=args.resample_fit, profile=not get("no_profile", False),
                      variance=get("variance"), standard_errors=get("standard_errors"),
                      recommend=get("recommend"))


def run_fit(args) -> int:
    """Run ``torque fit``.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        The exit status (0).
    """
    from ..io import output_suffix, read_motions, write_json
    from ..workflows import CIRCULAR, fit
    output_suffix(args.output, (".json",))
    opts = options(args)
    data = inputs(args)
    motions = read_motions(args.motions)
    if not opts.free_frame and opts.mantle_rotation is None:
        warn_frame(motions)
    run = fit(data, args.hypothesis, motions, opts)
    if run.circular:
        print(f"warning: {CIRCULAR}", file=sys.stderr)
    for w in run.warnings:
        print(f"warning: {w}", file=sys.stderr)
    write_json(args.output, {**run.result.as_dict(), "run": manifest(args, data)})
    print(text.fit(run.result.as_dict(), args.verbose))
    print(f"wrote {args.output}")
    return EXIT_OK


def _mantle_rotation(text):
    """``--mantle-rotation LAT,LON,RATE`` as ``(lat, lon, rate_deg_myr)``, or None."""
    if text is None:
        return None
    try:
        lat, lon, rate = (float(x) for x in text.split(","))
    except ValueError:
        raise InputError(f"--mantle-rotation must be LAT,LON,RATE (degrees, degrees, "
                         f"deg/Myr), got {text!r}") from None
    return (lat, lon, rate)


def warn_frame(motions) -> None:
    """Print :func:`~torque.cli.common.frame_warning` on stderr, if there is one.

    Parameters
    ----------
    motions : Motions
    """
    message = frame_warning(motions)
    if message:
        print(f"warning: {message}", file=sys.stderr)


def run_predict(args) -> int:
    """Run ``torque predict``.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        The exit status (0).
    """
    from ..io import output_suffix, write_motions
    from ..workflows import net_rotation_on, predict_motions
    output_suffix(args.output, (".csv",))
    data = inputs(args)
    world = data.world
    motions, pb = predict_motions(data, args.hypothesis, args.fit, args.motions)
    omega = motions.omega
    write_motions(args.output, motions)
    print(f"predicted Euler vectors of {len(omega)} plates (mantle at rest); net rotation "
          f"{text.pole(net_rotation_on(world, omega))}")
    for line in text.note_lines(pb.notes(), args.verbose):
        print(line)
    print(f"wrote {args.output}")
    return EXIT_OK


def run_rank(args) -> int:
    """Run ``torque rank``: every hypothesis on one set of inputs, read once.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        The exit status (0).
    """
    from ..io import atomic_path, atomic_write, dumps, output_suffix, read_motions, write_csv
    from ..workflows import CIRCULAR, rank
    if args.output:
        output_suffix(args.output, (".csv",))
    if args.json:
        output_suffix(args.json, (".json",))
    opts = options(args)
    data = inputs(args)
    motions = read_motions(args.motions)
    if not args.free_frame:
        warn_frame(motions)
    rows, tests = rank(data, args.hypotheses, motions, opts, args.allow_synthetic_ages)
    if data.used_synthesised_ages:
        print(f"warning: {CIRCULAR}", file=sys.stderr)
    from ..workflows import input_warnings
    for w in input_warnings(data, motions):
        print(f"warning: {w}", file=sys.stderr)
    print(text.rank(rows, tests))
    # both outputs or neither: the CSV goes into place only once the JSON has
    with ExitStack() as stack:
        if args.output:
            write_csv(stack.enter_context(atomic_path(args.output)), {
                "rank": np.arange(1, len(rows) + 1),
                "hypothesis": np.array([r.name for r in rows], dtype=object),
                "rms_velocity_mm_yr": np.array([r.rms_velocity_mm_yr for r in rows]),
                "variance_reduction": np.array([r.variance_reduction for r in rows]),
                "free_coefficients": np.array([r.free for r in rows]),
                "aic": np.array([r.aic for r in rows]),
                "aicc": np.array([r.aicc for r in rows]),
                "bic": np.array([r.bic for r in rows]),
                "cv_rms_mm_yr": np.array([r.cv_rms_mm_yr for r in rows]),
                "cv_stderr_mm_yr": np.array([r.cv_stderr_mm_yr for r in rows]),
                "within_one_se": np.array([r.within_one_se for r in rows]),
                "cv_chi_square": np.array([np.nan if r.cv_chi_square is None
                                           else r.cv_chi_square for r in rows]),
                "recommended": np.array([r.recommended for r in rows])})
        if args.json:
            with atomic_write(args.json) as fh:
                sort = {"cross-validation": "cv_rms_mm_yr", "bic": "bic"}.get(rows.rule,
                                                                               "aic")
                fh.write(dumps({"sorted_by": sort, "rule": rows.rule,
                                "recommended": rows.recommended, "reason": rows.reason,
                                "check": rows.check,
                                "rows": [r.__dict__ for r in rows], "tests": tests,
                                "f_tests": [t for t in tests if t["test"] == "F"],
                                "run": manifest(args, data)}))
    if args.output:
        print(f"wrote {args.output}")
    return EXIT_OK
