"""Fitting and ranking hypotheses, and what is computed at a fit: torques and predictions,
in the fit's mantle frame.
"""

from __future__ import annotations

import dataclasses
import numpy as np
from ..errors import InputError
from .cases import Case, Covariances, as_fit, as_hypothesis, as_motions, build_case, covariances
from .options import FitOptions

__all__ = ["CIRCULAR", "FitRun", "fit", "fit_coefficients", "in_fit_frame",
           "torque_table", "predict_motions", "rank"]


CIRCULAR = ("sea-floor ages were synthesised from the same motions that are fitted, so the "
            "fit is partly circular (the ages, and so ridge push and slab pull, depend on "
            "the motions); give the world an age grid")


# ----------------------------------------------------------------------------------------
# fit
# ----------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True, eq=False)
class FitRun:
    """A fitted hypothesis: what is reported, and what it was computed from.

    Attributes
    ----------
    result : FitResult
        What ``torque fit`` writes.
    case : Case
    report : Report
        The computation (every fit method's :class:`~torque.inference.solvers.Fit`).
    covariances : Covariances
    circular : bool
        Whether sea-floor ages were synthesised from the fitted motions.
    warnings : tuple of str
        Plausibility guards (:mod:`torque.workflows.plausibility`): motions, ages or
        fitted coefficients whose size says a unit is wrong.
    """

    result: object
    case: Case
    report: object
    covariances: Covariances
    circular: bool = False
    warnings: tuple = ()

    def __repr__(self) -> str:
        return f"FitRun({self.result.hypothesis!r}, {self.case.system.n_plates} plates)"


def fit(inputs, hypothesis, motions, options: FitOptions = FitOptions()) -> FitRun:
    """Fit a hypothesis to observed motions: every fit method, profile intervals, the
    resampling the options ask for, and the per-plate diagnostics.

    Parameters
    ----------
    inputs : Inputs
    hypothesis : Hypothesis or str or Path
    motions : Motions or str or Path
    options : FitOptions

    Returns
    -------
    FitRun
    """
    from ..inference.analysis import analyse
    from ..inference.resampling import bootstrap, monte_carlo_motions, monte_carlo_physics
    pb = build_case(inputs, hypothesis, motions)
    cov = covariances(options, pb.motions, inputs.world, pb.system)
    if options.monte_carlo and cov.data is None:
        raise InputError("a Monte Carlo over motions needs their covariance: the file has no "
                         "cov_xx ... cov_zz columns", file=pb.motions.source,
                         hint="add them in (deg/Myr)^2, give --covariance FILE, or leave out "
                         "--monte-carlo")
    if options.physics_samples and not pb.hypothesis.spread:
        raise InputError("a Monte Carlo over physics needs a [spread] table",
                         file=pb.hypothesis.source,
                         hint="add one, or leave out --physics-samples")
    options.require_sample_memory(pb.system)
    rep = analyse(pb.system, pb.omega, options.weighting, free_frame=options.free_frame,
                  obs_cov=cov.fit, mantle_rotation=options.mantle_rotation_rad_s,
                  profile=options.profile, variance=options.variance,
                  errors=options.errors)
    unc = {}
    o = options
    # members refit what the fit fitted: with a free frame, the frame too, from the
    # observations as given; and they are drawn from the covariance the fit used
    free = bool(o.free_frame)
    observed = rep.frame["observed_frame"] if free else rep.omega_obs
    draw_cov = cov.fit if cov.fit is not None else cov.data
    if o.bootstrap:
        unc["bootstrap"] = bootstrap(pb.system, observed, o.bootstrap, o.seed,
                                     o.weighting, o.resample_fit, cov.fit, free)
    if o.monte_carlo:
        unc["monte_carlo_motions"] = monte_carlo_motions(
            pb.system, observed, draw_cov, o.monte_carlo, o.seed, o.weighting,
            o.resample_fit, cov.fit, free)
    if o.physics_samples:
        unc["monte_carlo_physics"] = monte_carlo_physics(
            pb.rebuild, pb.hypothesis.physics, pb.hypothesis.spread, observed,
            o.physics_samples, o.seed, o.weighting, o.resample_fit, cov.fit, free)
    circular = bool(inputs.used_synthesised_ages)
    result = dataclasses.replace(rep, uncertainty=unc).result(
        pb.notes() + cov.notes + ([f"circular: {CIRCULAR}"] if circular else []),
        observed_cov=cov.data, model_cov=cov.model)
    from .plausibility import coefficient_warnings, input_warnings
    warnings = (input_warnings(inputs, pb.motions)
                + coefficient_warnings(pb.system, rep.preferred.values, pb.hypothesis.source))
    return FitRun(result, pb, rep, cov, circular, tuple(warnings))


def fit_coefficients(system, fit, file=None) -> np.ndarray:
    """Every coefficient of ``system``: the fixed ones, and the free ones from a fit.

    Parameters
    ----------
    system : System
    fit : FitResult or None
        Of this hypothesis; None where no coefficient is free.
    file : str, optional
        The fit's file, named in messages.

    Returns
    -------
    ndarray, shape (K,)

    Raises
    ------
    InputError
        A free coefficient and no fit, a fit of another hypothesis, or a value outside the
        coefficient's bounds.
    """
    c = system.fixed.copy()
    free_labels = [l for l, f in zip(system.labels, system.free) if f]
    if not free_labels:
        return c
    if fit is None:
        raise InputError(f"free coefficient(s) {', '.join(free_labels)} need values",
                         file=system.source, hint="pass --fit FIT.json from torque fit, or "
                         "fix them in the hypothesis")
    extra = sorted(set(fit.coefficients) - set(system.labels))
    if extra:
        raise InputError(f"the fit comes from another hypothesis: not in {system.name!r}: "
                         f"{', '.join(extra)}", file=file,
                         hint="fit this hypothesis with torque fit first")
    values = fit.values(free_labels, file=file)
    for label, v in zip(free_labels, values):
        i = system.labels.index(label)
        lo, hi = system.bounds[i]
        if not lo <= v <= hi:
            raise InputError(f"coefficient {label!r} = {v:g} lies outside its bounds "
                             f"[{lo:g}, {hi:g}]", file=file,
                             hint="refit with this hypothesis' bounds")
        c[i] = v
    return c


def in_fit_frame(omega, fit) -> np.ndarray:
    """Observed Euler vectors moved into the frame where the fit's mantle is at rest.

    A fit with a free or given mantle frame found the mantle turning at ``w`` in the
    frame of the motions; relative to the mantle a plate then moves at ``omega - w``.
    Without such a frame (or without a fit) the motions are returned as they are.

    Parameters
    ----------
    omega : ndarray, shape (P, 3)
        rad/s, in the frame of the fitted motions.
    fit : FitResult or None

    Returns
    -------
    ndarray, shape (P, 3)
    """
    omega = np.asarray(omega, float)
    if fit is None:
        return omega
    return omega - fit.mantle_rotation_rad_s


# ----------------------------------------------------------------------------------------
# torques and predictions at a fit
# ----------------------------------------------------------------------------------------
def torque_table(inputs, hypothesis, motions=None, fit=None):
    """Every term's torque on every plate, at a fit's coefficients and in its frame.

    Parameters
    ----------
    inputs : Inputs
    hypothesis : Hypothesis or str or Path
    motions : Motions or str or Path, optional
        Needed by the motion-dependent terms; moved into the fit's mantle frame.
    fit : FitResult or str or Path, optional
        Free coefficients take their values from it (else 1, marked ``"unit"``).

    Returns
    -------
    table : TorqueTable
    case : Case
    """
    from ..results import TorqueTable
    world = inputs.world
    fit, fit_file = as_fit(fit, world)
    pb = build_case(inputs, hypothesis, motions)
    moving = [t.label for t in pb.terms if t.velocity_dependent]
    if moving and pb.omega is None:
        raise InputError(f"term(s) {', '.join(moving)} depend on the plates' motion",
                         file=pb.hypothesis.source,
                         hint="give the motions with --motions M.csv")
    s = pb.system
    if fit is not None:
        coefs = fit_coefficients(s, fit, fit_file)
        sources = ["fitted" if f else "fixed" for f in s.free]
    else:
        coefs = np.where(s.free, 1.0, s.fixed)
        sources = ["unit" if f else "fixed" for f in s.free]
    omega = None if pb.omega is None else in_fit_frame(pb.omega, fit)
    return TorqueTable.from_terms(world, pb.terms, coefs, omega, sources), pb


def predict_motions(inputs, hypothesis, fit=None, motions=None):
    """The Euler vectors that balance a hypothesis' torques, in the mantle's frame.

    Parameters
    ----------
    inputs : Inputs
    hypothesis : Hypothesis or str or Path
    fit : FitResult or str or Path, optional
        Values of the free coefficients.
    motions : Motions or str or Path, optional
        Only to synthesise sea-floor ages when the world has none.

    Returns
    -------
    motions : Motions
        World plate order, rad/s inside.
    case : Case
    """
    from ..euler import Motions
    from ..inference.solvers import predict
    world = inputs.world
    fit, fit_file = as_fit(fit, world)
    pb = build_case(inputs, hypothesis, motions)
    omega = predict(pb.system, fit_coefficients(pb.system, fit, fit_file))
    return Motions(tuple(world.plate_names), omega), pb


# ----------------------------------------------------------------------------------------
# ranking
# ----------------------------------------------------------------------------------------
def rank(inputs, hypotheses, motions, options: FitOptions = FitOptions(),
         allow_synthetic_ages: bool = False):
    """Fit every hypothesis to the same motions and rank them.

    Parameters
    ----------
    inputs : Inputs
    hypotheses : sequence of Hypothesis or str or Path
        With different names.
    motions : Motions or str or Path
    options : FitOptions
        ``misfit``, ``covariance``, ``model_error_mm_yr``, ``weighting``, ``free_frame``,
        ``resample_fit``, ``recommend`` and ``variance`` apply.
    allow_synthetic_ages : bool
        Rank even when the ages are synthesised from the motions (circular).

    Returns
    -------
    rows : Ranking
    tests : list of dict
        See :func:`torque.inference.ranking.rank`.
    """
    from ..inference.ranking import rank as rank_systems
    motions = as_motions(motions)
    hyps = [as_hypothesis(h) for h in hypotheses]
    systems = [build_case(inputs, h, motions).system for h in hyps]
    if inputs.used_synthesised_ages and not allow_synthetic_ages:
        raise InputError(CIRCULAR + "; ranking hypotheses on such ages can favour the "
                         "ones the synthesis flatters", file=inputs.path,
                         hint="add 'ages' to the world file, or pass "
                         "--allow-synthetic-ages to rank anyway")
    names = [s.name for s in systems]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        files = [h.source for h, n in zip(hyps, names) if n in dup]
        raise InputError(f"hypotheses share the name(s) {', '.join(map(repr, dup))} "
                         f"(files {', '.join(map(str, files))})", file=files[0],
                         hint="give each a different 'name'")
    cov = covariances(options, motions, inputs.world, systems[0])
    return rank_systems(systems, motions.for_world(inputs.world), options.weighting,
                        free_frame=options.free_frame, fit=options.resample_fit,
                        obs_cov=cov.fit, rule=options.recommend,
                        variance=options.variance or "known")
