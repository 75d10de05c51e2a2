"""The torque balance commands: ``fit``, ``predict`` and ``rank``."""

from __future__ import annotations

import dataclasses
import sys
from contextlib import ExitStack

import numpy as np

from ..errors import InputError, require_memory
from . import text
from .common import EXIT_OK, arg_type, count, frame_warning, inputs, manifest

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
              "included (CSV plate_1,axis_1,plate_2,axis_2,cov in (deg/Myr)^2; see the "
              "README): used instead of the motions' cov_* columns")
MODEL_ERROR = ("with --misfit chi-square: add a model error of this RMS velocity over each "
               "plate (mm/yr) to the observations' covariance, for what the physics leaves "
               "out (real misfits are mostly model error)")
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
    p.add_argument("--no-profile", action="store_true",
                   help="skip the profile-likelihood intervals (some tens of refits per "
                   "free coefficient)")
    p.set_defaults(func=run_fit)

    p = sub.add_parser("predict", help="Euler vectors that balance the torques",
                       description="Forward model: the Euler vector of every plate that "
                       "balances the torques of a hypothesis, in the frame where the mantle "
                       "is at rest. Free coefficients take their values from --coefficients.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("hypothesis", help="hypothesis file (TOML)")
    p.add_argument("--coefficients", metavar="FIT.json", help="output of torque fit")
    p.add_argument("--motions", help="motions CSV, only to synthesise sea-floor ages when "
                   "the world has no age grid")
    p.add_argument("-o", "--output", required=True, help="output motions CSV")
    p.set_defaults(func=run_predict)

    p = sub.add_parser("rank", help="compare hypotheses",
                       description="Fit every hypothesis to the same motions and rank them "
                       "by leave-one-plate-out cross-validation error (best first, with its "
                       "standard error and the one-standard-error rule); misfit, free "
                       "coefficients, AIC and BIC from the effective numbers of observations "
                       "and parameters; nested pairs compared by likelihood-ratio and F-tests "
                       "with a covariance (--misfit chi-square), by cross-validation "
                       "without.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("motions", help="observed motions CSV")
    p.add_argument("hypotheses", nargs="+", metavar="HYP", help="hypothesis files")
    p.add_argument("-o", "--output", help="output CSV")
    p.add_argument("--json", metavar="FILE", help="also write rows and F-tests as JSON")
    p.add_argument("--weighting", **WEIGHTING)
    p.add_argument("--free-frame", action="store_true", help=FREE_FRAME)
    p.add_argument("--resample-fit", **RESAMPLE_FIT)
    add_misfit_options(p)
    p.add_argument("--allow-synthetic-ages", action="store_true",
                   help="rank even when sea-floor ages are synthesised from the motions being "
                   "fitted (the comparison is then partly circular)")
    p.set_defaults(func=run_rank)


def add_misfit_options(p) -> None:
    """``--misfit``, ``--covariance`` and ``--model-error``, shared by fit and rank.

    Parameters
    ----------
    p : argparse.ArgumentParser
    """
    p.add_argument("--misfit", choices=("area", "chi-square"), default="area", help=MISFIT)
    p.add_argument("--covariance", metavar="COV.csv", help=COVARIANCE)
    p.add_argument("--model-error", type=nonnegative, metavar="MM_YR", help=MODEL_ERROR)


@dataclasses.dataclass(frozen=True, eq=False)
class Problem:
    """A hypothesis on a world's inputs, with observed motions if any, and its balance.

    Attributes
    ----------
    inputs : Inputs
    hypothesis : Hypothesis
    motions : Motions or None
    omega : ndarray, shape (P, 3), or None
        The motions in world plate order (rad/s).
    terms : list of ForceTerm
    system : System
    """

    inputs: object
    hypothesis: object
    motions: object
    omega: object
    terms: list
    system: object

    def __repr__(self) -> str:
        return f"Problem({self.system!r}, motions {'given' if self.omega is not None else 'none'})"

    @classmethod
    def build(cls, data, hypothesis, motions=None) -> "Problem":
        """Build every term of ``hypothesis`` on the inputs ``data``.

        Parameters
        ----------
        data : Inputs
        hypothesis : Hypothesis
        motions : Motions, optional

        Returns
        -------
        Problem
        """
        from ..inference.system import assemble
        from ..forces import build_terms
        omega = motions.for_world(data.world) if motions is not None else None
        terms = build_terms(data.context(hypothesis, omega))
        return cls(data, hypothesis, motions, omega, terms,
                   assemble(data.world, hypothesis, terms))

    def rebuild(self, physics):
        """The balance for other physics (a Monte Carlo draw); the world's data, located
        and clipped once, are shared.

        Parameters
        ----------
        physics : Physics

        Returns
        -------
        System
        """
        from ..inference.system import assemble
        from ..forces import build_terms
        hyp = dataclasses.replace(self.hypothesis, physics=physics)
        return assemble(self.inputs.world, hyp,
                        build_terms(self.inputs.context(hyp, self.omega)))

    def notes(self) -> list:
        """The notes of every term, in order."""
        return [n for t in self.terms for n in t.notes]


def _problem(args, motions_path=None) -> Problem:
    from ..io import load_hypothesis, read_motions
    data = inputs(args)
    motions = read_motions(motions_path) if motions_path else None
    return Problem.build(data, load_hypothesis(args.hypothesis), motions)


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
    from ..inference.analysis import analyse
    from ..io import output_suffix, write_json
    from ..inference.resampling import bootstrap, monte_carlo_motions, monte_carlo_physics
    output_suffix(args.output, (".json",))
    pb = _problem(args, args.motions)
    cov = covariances(args, pb.motions, pb.inputs.world, pb.system)
    if args.monte_carlo and cov.data is None:
        raise InputError("a Monte Carlo over motions needs their covariance: the file has no "
                         "cov_xx ... cov_zz columns", file=args.motions,
                         hint="add them in (deg/Myr)^2, give --covariance FILE, or leave out "
                         "--monte-carlo")
    if args.physics_samples and not pb.hypothesis.spread:
        raise InputError("a Monte Carlo over physics needs a [spread] table",
                         file=args.hypothesis, hint="add one, or leave out --physics-samples")
    _require_sample_memory(pb.system, args)
    mantle = _mantle_rotation(args.mantle_rotation)
    if not args.free_frame and mantle is None:
        warn_frame(pb.motions)
    obs_cov = cov.fit
    rep = analyse(pb.system, pb.omega, args.weighting, free_frame=args.free_frame,
                  obs_cov=obs_cov, mantle_rotation=mantle, profile=not args.no_profile)
    circular = pb.inputs.used_synthesised_ages
    if circular:
        print(f"warning: {CIRCULAR}", file=sys.stderr)
    unc = {}
    if args.bootstrap:
        unc["bootstrap"] = bootstrap(pb.system, rep.omega_obs, args.bootstrap, args.seed,
                                     args.weighting, args.resample_fit, obs_cov)
    if args.monte_carlo:
        unc["monte_carlo_motions"] = monte_carlo_motions(
            pb.system, rep.omega_obs, cov.data, args.monte_carlo, args.seed, args.weighting,
            args.resample_fit, obs_cov)
    if args.physics_samples:
        unc["monte_carlo_physics"] = monte_carlo_physics(
            pb.rebuild, pb.hypothesis.physics, pb.hypothesis.spread, rep.omega_obs,
            args.physics_samples, args.seed, args.weighting, args.resample_fit, obs_cov)
    result = dataclasses.replace(rep, uncertainty=unc).result(
        pb.notes() + cov.notes + ([f"circular: {CIRCULAR}"] if circular else []),
        observed_cov=cov.data, model_cov=cov.model)
    write_json(args.output, {**result.as_dict(), "run": manifest(args, pb.inputs)})
    print(text.fit(result.as_dict()))
    print(f"wrote {args.output}")
    return EXIT_OK


CIRCULAR = ("sea-floor ages were synthesised from the same motions that are fitted, so the "
            "fit is partly circular (the ages, and so ridge push and slab pull, depend on "
            "the motions); give the world an age grid")


@dataclasses.dataclass(frozen=True, eq=False)
class Covariances:
    """The covariances a fit uses, in world plate order, (rad/s)^2.

    Attributes
    ----------
    data : ndarray, shape (P, 3, 3) or (3P, 3P), or None
        Of the observations: the motions' cov_* columns, or a ``--covariance`` file.
    model : ndarray, shape (P, 3, 3), or None
        The ``--model-error`` term.
    fit : ndarray or None
        What the chi-square uses (``data`` plus ``model``); None for the area misfit.
    notes : list of str
        Where they came from, for the fit's notes.
    """

    data: object
    model: object
    fit: object
    notes: list

    def __repr__(self) -> str:
        shape = "none" if self.data is None else "x".join(map(str, np.shape(self.data)))
        return f"Covariances(data {shape}, model error {self.model is not None})"


def covariances(args, motions, world, system) -> Covariances:
    """The covariances of ``--misfit``, ``--covariance`` and ``--model-error``, checked.

    Parameters
    ----------
    args : argparse.Namespace
    motions : Motions
    world : World
    system : System
        Any hypothesis' balance on ``world`` (the model error needs its drag tensors).

    Returns
    -------
    Covariances

    Raises
    ------
    InputError
        For a chi-square misfit with no covariance at all, or a model error without it.
    """
    from ..inference.covariance import add_covariances, model_error_covariance
    from ..io import read_covariance
    notes = []
    if args.covariance:
        data = read_covariance(args.covariance, world.plate_names)
        notes.append(f"covariance: the full covariance of {args.covariance} (correlations "
                     "between plates included)"
                     + ("; the motions' cov_* columns were not used" if motions.cov is not None
                        else ""))
    else:
        data = motions.cov_for_world(world)
    if args.misfit != "chi-square":
        if args.model_error is not None:
            raise InputError("--model-error is part of the chi-square misfit",
                             hint="add --misfit chi-square, or leave out --model-error")
        return Covariances(data, None, None, notes)
    model = None
    if args.model_error:
        model = model_error_covariance(system, args.model_error)
        notes.append(f"model error: {args.model_error:g} mm/yr RMS velocity on each plate added "
                     "to the observations' covariance")
    if data is None and model is None:
        raise InputError("a chi-square misfit needs a covariance: the motions have no cov_xx "
                         "... cov_zz columns", file=args.motions,
                         hint="add them in (deg/Myr)^2, give --covariance FILE or "
                         "--model-error MM_YR, or leave out --misfit chi-square")
    total = data if model is None else add_covariances(data, model)
    return Covariances(data, model, total, notes)


def _mantle_rotation(text):
    """``--mantle-rotation LAT,LON,RATE`` as an Euler vector (rad/s), or None."""
    from ..euler import pole_to_vector
    if text is None:
        return None
    try:
        lat, lon, rate = (float(x) for x in text.split(","))
    except ValueError:
        raise InputError(f"--mantle-rotation must be LAT,LON,RATE (degrees, degrees, "
                         f"deg/Myr), got {text!r}") from None
    if not (np.isfinite([lat, lon, rate]).all() and -90 <= lat <= 90):
        raise InputError(f"--mantle-rotation {text}: the pole's latitude must be in "
                         "[-90, 90] and every number finite")
    return pole_to_vector(lat, lon, rate)


def warn_frame(motions) -> None:
    """Print :func:`~torque.cli.common.frame_warning` on stderr, if there is one.

    Parameters
    ----------
    motions : Motions
    """
    message = frame_warning(motions)
    if message:
        print(f"warning: {message}", file=sys.stderr)


def _require_sample_memory(system, args):
    """Refuse sample counts whose arrays cannot fit in memory, before any is drawn."""
    P, K = system.n_plates, len(system.labels)
    per_member = {
        # draws (3P), the torque columns of every member and their scaled copies (3P x K)
        "monte_carlo": 8 * 3 * P * (3 * K + 4),
        # one row of results per draw, with Python's overhead
        "bootstrap": 8 * K + 120,
        "physics_samples": 8 * K + 120,
    }
    for opt, per in per_member.items():
        n = getattr(args, opt)
        if n:
            require_memory(n * per, f"--{opt.replace('_', '-')} {n:,}",
                           hint="ask for fewer samples")


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
    from ..inference.solvers import predict
    from ..euler import Motions, net_rotation
    from ..io import output_suffix, read_coefficients, write_motions
    output_suffix(args.output, (".csv",))
    pb = _problem(args, args.motions)
    s = pb.system
    c = s.fixed.copy()
    if s.free.any():
        if not args.coefficients:
            raise InputError(f"free coefficient(s) {', '.join(pb.hypothesis.free_labels)} "
                             "need values", file=args.hypothesis,
                             hint="pass --coefficients FIT.json from torque fit, or fix them "
                             "in the hypothesis")
        values = read_coefficients(args.coefficients, pb.hypothesis)
        for i, label in enumerate(s.labels):
            if s.free[i]:
                c[i] = values[label]
    omega = predict(s, c)
    world = pb.inputs.world
    write_motions(args.output, Motions(tuple(world.plate_names), omega))
    print(f"predicted Euler vectors of {len(omega)} plates (mantle at rest); net rotation "
          f"{text.pole(net_rotation(world, omega))}")
    for note in pb.notes():
        print(f"note: {note}")
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
    from ..io import (atomic_path, atomic_write, dumps, load_hypothesis, output_suffix,
                      read_motions, write_csv)
    from ..inference.ranking import rank
    if args.output:
        output_suffix(args.output, (".csv",))
    if args.json:
        output_suffix(args.json, (".json",))
    data = inputs(args)
    motions = read_motions(args.motions)
    if not args.free_frame:
        warn_frame(motions)
    systems = [Problem.build(data, load_hypothesis(h), motions).system
               for h in args.hypotheses]
    if data.used_synthesised_ages:
        if not args.allow_synthetic_ages:
            raise InputError(CIRCULAR + "; ranking hypotheses on such ages can favour the "
                             "ones the synthesis flatters", file=args.world,
                             hint="add 'ages' to the world file, or pass "
                             "--allow-synthetic-ages to rank anyway")
        print(f"warning: {CIRCULAR}", file=sys.stderr)
    names = [s.name for s in systems]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        files = [h for h, n in zip(args.hypotheses, names) if n in dup]
        raise InputError(f"hypotheses share the name(s) {', '.join(map(repr, dup))} "
                         f"(files {', '.join(files)})", file=files[0],
                         hint="give each a different 'name'")
    obs_cov = covariances(args, motions, data.world, systems[0]).fit
    rows, tests = rank(systems, motions.for_world(data.world), args.weighting,
                       free_frame=args.free_frame, fit=args.resample_fit, obs_cov=obs_cov)
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
                "within_one_se": np.array([r.within_one_se for r in rows])})
        if args.json:
            with atomic_write(args.json) as fh:
                fh.write(dumps({"sorted_by": "cv_rms_mm_yr",
                                "rows": [r.__dict__ for r in rows], "tests": tests,
                                "f_tests": [t for t in tests if t["test"] == "F"],
                                "run": manifest(args, data)}))
    if args.output:
        print(f"wrote {args.output}")
    return EXIT_OK
