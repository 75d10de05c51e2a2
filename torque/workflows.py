"""The recipes every caller uses: the command line, the demo, notebooks and scripts.

Each recipe takes what a researcher names (a world's inputs, a hypothesis, observed
motions, a fit) and one :class:`FitOptions`, and returns a typed result
(:mod:`torque.results`). The rules that tie options together live here and nowhere else:
the chi-square needs a covariance, a model error goes with the chi-square, a mantle
rotation is fitted or given but not both. A fit's mantle frame travels with its
:class:`~torque.results.FitResult`: every recipe that takes a fit (torques, prediction,
maps) puts observed motions into that frame first (:func:`in_fit_frame`), so that a
plate held fixed in a motions file is not taken to be fixed over the mantle.

Files are read and written by :mod:`torque.io`; what the recipes read (hypotheses,
motions, covariance files) they read through it.

Examples
--------
>>> from torque import workflows
>>> inputs = workflows.load_inputs("polygons_demo/world.toml")
>>> run = workflows.fit(inputs, "polygons_demo/hypotheses/continental_drag.toml",
...                     "polygons_demo/motions.csv", workflows.FitOptions(profile=False))
>>> round(run.result.coefficients["slab"].value, 3)
0.05
"""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path

import numpy as np

from .errors import InputError, require_memory

__all__ = ["FitOptions", "Case", "Covariances", "FitRun", "load_inputs", "build_case",
           "forget_inputs", "covariances", "fit", "fit_coefficients", "in_fit_frame", "torque_table",
           "predict_motions", "rank", "map_inputs", "run_series", "CIRCULAR"]

MISFITS = ("area", "chi-square")
RESAMPLE_FITS = ("velocity", "torque")

CIRCULAR = ("sea-floor ages were synthesised from the same motions that are fitted, so the "
            "fit is partly circular (the ages, and so ridge push and slab pull, depend on "
            "the motions); give the world an age grid")


# ----------------------------------------------------------------------------------------
# options
# ----------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class FitOptions:
    """How a hypothesis is fitted, ranked and resampled: one object for every caller.

    Attributes
    ----------
    misfit : {"area", "chi-square"}
        What the velocity-space fit minimises: the area-integrated squared velocity
        misfit (plates weigh by their area; the variance is estimated from the residuals),
        or the chi-square with the observations' covariance (generalised least squares;
        the covariance is taken as known).
    covariance : str or Path, optional
        A full covariance file of the observed Euler vectors, used instead of the
        motions' ``cov_*`` columns.
    model_error_mm_yr : float, optional
        With the chi-square: a model error of this RMS velocity on each plate, added to
        the observations' covariance.
    weighting : {"velocity", "area", "none"}
        Of the torque-space fit's equations.
    free_frame : bool
        Fit the rotation of the motions' frame relative to the mantle.
    mantle_rotation : tuple of float, optional
        ``(lat, lon, rate_deg_myr)``: the mantle's rotation in the frame of the motions,
        known beforehand (not with ``free_frame``).
    seed : int
        Of every random draw.
    bootstrap, monte_carlo, physics_samples : int
        Resampled members: plates drawn with replacement, motions drawn from their
        covariance, physics drawn from the hypothesis' ``[spread]`` table.
    resample_fit : {"velocity", "torque"}
        How resampled and cross-validation members are refitted.
    profile : bool
        Profile-likelihood intervals of the free coefficients.
    """

    misfit: str = "area"
    covariance: str | Path | None = None
    model_error_mm_yr: float | None = None
    weighting: str = "velocity"
    free_frame: bool = False
    mantle_rotation: tuple | None = None
    seed: int = 0
    bootstrap: int = 0
    monte_carlo: int = 0
    physics_samples: int = 0
    resample_fit: str = "velocity"
    profile: bool = True

    def __post_init__(self):
        from .inference.system import WEIGHTINGS
        for name, value, allowed in (("misfit", self.misfit, MISFITS),
                                     ("weighting", self.weighting, WEIGHTINGS),
                                     ("resample_fit", self.resample_fit, RESAMPLE_FITS)):
            if value not in allowed:
                raise InputError(f"{name} must be one of {', '.join(allowed)}, got {value!r}")
        if self.model_error_mm_yr is not None:
            if not (np.isfinite(self.model_error_mm_yr) and self.model_error_mm_yr >= 0):
                raise InputError(f"the model error must be a finite number of mm/yr, 0 or "
                                 f"more, got {self.model_error_mm_yr!r}")
            if self.misfit != "chi-square":
                raise InputError("a model error (--model-error) is part of the chi-square misfit",
                                 hint="add --misfit chi-square, or leave out --model-error")
        if self.free_frame and self.mantle_rotation is not None:
            raise InputError("the mantle's rotation is either fitted (free frame) or given, "
                             "not both", hint="leave out --free-frame or --mantle-rotation")
        if self.mantle_rotation is not None:
            lat, lon, rate = (float(x) for x in self.mantle_rotation)
            if not (np.isfinite([lat, lon, rate]).all() and -90 <= lat <= 90):
                raise InputError(f"mantle rotation {self.mantle_rotation}: the pole's "
                                 "latitude must be in [-90, 90] and every number finite")
        for name in ("seed", "bootstrap", "monte_carlo", "physics_samples"):
            if int(getattr(self, name)) < 0:
                raise InputError(f"{name} must be 0 or more, got {getattr(self, name)}")

    @property
    def mantle_rotation_rad_s(self) -> np.ndarray | None:
        """The given mantle rotation as an Euler vector (rad/s), or None."""
        if self.mantle_rotation is None:
            return None
        from .euler import pole_to_vector
        return pole_to_vector(*(float(x) for x in self.mantle_rotation))

    def require_sample_memory(self, system) -> None:
        """Refuse sample counts whose arrays cannot fit in memory, before any is drawn.

        Parameters
        ----------
        system : System
        """
        P, K = system.n_plates, len(system.labels)
        per_member = {
            # draws (3P), the torque columns of every member and their scaled copies
            "monte_carlo": 8 * 3 * P * (3 * K + 4),
            # one row of results per draw, with Python's overhead
            "bootstrap": 8 * K + 120,
            "physics_samples": 8 * K + 120,
        }
        for opt, per in per_member.items():
            n = getattr(self, opt)
            if n:
                require_memory(n * per, f"--{opt.replace('_', '-')} {n:,}",
                               hint="ask for fewer samples")


# ----------------------------------------------------------------------------------------
# inputs, read once per process
# ----------------------------------------------------------------------------------------
_INPUTS: dict = {}


def _stamp(paths) -> tuple:
    """What says a file set is unchanged: each file's size and modification time."""
    out = []
    for p in paths:
        try:
            st = os.stat(p)
            out.append((str(p), st.st_size, st.st_mtime_ns))
        except OSError:
            out.append((str(p), None, None))
    return tuple(out)


def load_inputs(path, *, valid: bool = True):
    """A world and its data (:class:`torque.io.Inputs`), read and checked once per process.

    A second call for the same world file returns the same object while none of its files
    changed (size and modification time), so that a session or the demo running many
    commands reads, checks and locates the world once.

    Parameters
    ----------
    path : str or Path
        The world file.
    valid : bool
        Refuse a world with errors (:func:`torque.validate.require_valid`).

    Returns
    -------
    Inputs
    """
    from . import progress
    from .io import Inputs
    path = Path(path)
    key = (str(path.resolve()), valid)
    hit = _INPUTS.get(key)
    if hit is not None:
        inputs, stamp = hit
        if _stamp(_input_files(inputs)) == stamp:
            return inputs
    with progress.task(f"reading and checking {path.name}"):
        inputs = Inputs.load(path, valid=valid)
    _INPUTS.clear()                        # one world at a time: its grids can be large
    _INPUTS[key] = (inputs, _stamp(_input_files(inputs)))
    return inputs


def forget_inputs() -> None:
    """Drop the inputs :func:`load_inputs` keeps, so that the next call reads them again."""
    _INPUTS.clear()


def _input_files(inputs) -> list:
    return [inputs.path, *(p for p in inputs.world.paths.values() if p is not None)]


def _motions(motions):
    """A Motions from a Motions or a file path."""
    if motions is None or hasattr(motions, "for_world"):
        return motions
    from .io import read_motions
    return read_motions(motions)


def _hypothesis(hypothesis):
    """A Hypothesis from a Hypothesis or a file path."""
    if hasattr(hypothesis, "forces"):
        return hypothesis
    from .io import load_hypothesis
    return load_hypothesis(hypothesis)


def _fit_result(fit, world):
    """A FitResult from a FitResult or a fit file of ``world``'s plates; and its file."""
    if fit is None or hasattr(fit, "coefficients"):
        return fit, None
    from .io import read_fit
    return read_fit(fit, world.plate_names), str(fit)


# ----------------------------------------------------------------------------------------
# a hypothesis on a world
# ----------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True, eq=False)
class Case:
    """One case: a hypothesis on a world's inputs, with observed motions if any, and its
    balance (not to be confused with :class:`torque.world.Problem`, a problem found in an
    input file).

    Attributes
    ----------
    inputs : Inputs
    hypothesis : Hypothesis
    motions : Motions or None
    omega : ndarray, shape (P, 3), or None
        The motions in world plate order (rad/s), as given (in their own frame).
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
        return (f"Case({self.system!r}, motions "
                f"{'given' if self.omega is not None else 'none'})")

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
        from .forces import build_terms
        from .inference.system import assemble
        hyp = dataclasses.replace(self.hypothesis, physics=physics)
        return assemble(self.inputs.world, hyp,
                        build_terms(self.inputs.context(hyp, self.omega)))

    def notes(self) -> list:
        """The notes of every term, in order."""
        return [n for t in self.terms for n in t.notes]


def build_case(inputs, hypothesis, motions=None) -> Case:
    """Build every term of ``hypothesis`` on ``inputs``.

    Parameters
    ----------
    inputs : Inputs
    hypothesis : Hypothesis or str or Path
    motions : Motions or str or Path, optional
        Observed motions (the terms that depend on the motions, and synthesised ages, use
        them).

    Returns
    -------
    Case
    """
    from .forces import build_terms
    from .inference.system import assemble
    hyp = _hypothesis(hypothesis)
    motions = _motions(motions)
    omega = motions.for_world(inputs.world) if motions is not None else None
    terms = build_terms(inputs.context(hyp, omega))
    return Case(inputs, hyp, motions, omega, terms, assemble(inputs.world, hyp, terms))


# ----------------------------------------------------------------------------------------
# covariances
# ----------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True, eq=False)
class Covariances:
    """The covariances a fit uses, in world plate order, (rad/s)^2.

    Attributes
    ----------
    data : ndarray, shape (P, 3, 3) or (3P, 3P), or None
        Of the observations: the motions' ``cov_*`` columns, or a covariance file.
    model : ndarray, shape (P, 3, 3), or None
        The model error.
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


def covariances(options: FitOptions, motions, world, system) -> Covariances:
    """The covariances that ``options`` ask for, checked.

    Parameters
    ----------
    options : FitOptions
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
        For a chi-square misfit with no covariance at all.
    """
    from .inference.covariance import add_covariances, model_error_covariance
    from .io import read_covariance
    notes = []
    if options.covariance:
        data = read_covariance(options.covariance, world.plate_names)
        notes.append(f"covariance: the full covariance of {options.covariance} (correlations "
                     "between plates included)"
                     + ("; the motions' cov_* columns were not used" if motions.cov is not None
                        else ""))
    else:
        data = motions.cov_for_world(world)
    if options.misfit != "chi-square":
        return Covariances(data, None, None, notes)
    model = None
    if options.model_error_mm_yr:
        model = model_error_covariance(system, options.model_error_mm_yr)
        notes.append(f"model error: {options.model_error_mm_yr:g} mm/yr RMS velocity on each "
                     "plate added to the observations' covariance")
    if data is None and model is None:
        raise InputError("a chi-square misfit needs a covariance: the motions have no cov_xx "
                         "... cov_zz columns", file=motions.source,
                         hint="add them in (deg/Myr)^2, give --covariance FILE or "
                         "--model-error MM_YR, or leave out --misfit chi-square")
    total = data if model is None else add_covariances(data, model)
    return Covariances(data, model, total, notes)


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
    """

    result: object
    case: Case
    report: object
    covariances: Covariances
    circular: bool = False

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
    from .inference.analysis import analyse
    from .inference.resampling import bootstrap, monte_carlo_motions, monte_carlo_physics
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
                  profile=options.profile)
    unc = {}
    o = options
    if o.bootstrap:
        unc["bootstrap"] = bootstrap(pb.system, rep.omega_obs, o.bootstrap, o.seed,
                                     o.weighting, o.resample_fit, cov.fit)
    if o.monte_carlo:
        unc["monte_carlo_motions"] = monte_carlo_motions(
            pb.system, rep.omega_obs, cov.data, o.monte_carlo, o.seed, o.weighting,
            o.resample_fit, cov.fit)
    if o.physics_samples:
        unc["monte_carlo_physics"] = monte_carlo_physics(
            pb.rebuild, pb.hypothesis.physics, pb.hypothesis.spread, rep.omega_obs,
            o.physics_samples, o.seed, o.weighting, o.resample_fit, cov.fit)
    circular = bool(inputs.used_synthesised_ages)
    result = dataclasses.replace(rep, uncertainty=unc).result(
        pb.notes() + cov.notes + ([f"circular: {CIRCULAR}"] if circular else []),
        observed_cov=cov.data, model_cov=cov.model)
    return FitRun(result, pb, rep, cov, circular)


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
    from .results import TorqueTable
    world = inputs.world
    fit, fit_file = _fit_result(fit, world)
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
    from .euler import Motions
    from .inference.solvers import predict
    world = inputs.world
    fit, fit_file = _fit_result(fit, world)
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
        ``misfit``, ``covariance``, ``model_error_mm_yr``, ``weighting``, ``free_frame``
        and ``resample_fit`` apply.
    allow_synthetic_ages : bool
        Rank even when the ages are synthesised from the motions (circular).

    Returns
    -------
    rows : Ranking
    tests : list of dict
        See :func:`torque.inference.ranking.rank`.
    """
    from .inference.ranking import rank as rank_systems
    motions = _motions(motions)
    hyps = [_hypothesis(h) for h in hypotheses]
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
                        obs_cov=cov.fit)


# ----------------------------------------------------------------------------------------
# maps
# ----------------------------------------------------------------------------------------
def map_inputs(inputs, kind, motions=None, predicted=None, fit=None, hypothesis=None,
               frame: str = "mantle"):
    """What a map kind draws from, read, checked and put in one frame.

    Parameters
    ----------
    inputs : Inputs
    kind : str
        A key of :data:`torque.present.maps.KINDS`.
    motions, predicted : Motions or str or Path, optional
        Observed motions (in their own frame) and predicted ones (in the mantle's frame,
        as ``torque predict`` writes them).
    fit : FitResult or str or Path, optional
    hypothesis : Hypothesis or str or Path, optional
    frame : {"mantle", "motions"}
        Where the map's motions are drawn: the fit's mantle frame (default), or the frame
        of the observed motions (predicted motions then carry the fit's mantle rotation).

    Returns
    -------
    MapInputs
    """
    from .present.maps import KINDS, MapInputs
    if kind not in KINDS:
        raise InputError(f"no map kind {kind!r}", hint=f"kinds are {', '.join(KINDS)}")
    if frame not in ("mantle", "motions"):
        raise InputError(f"frame must be 'mantle' or 'motions', got {frame!r}")
    spec = KINDS[kind]
    given = {k for k, v in (("motions", motions), ("predicted", predicted), ("fit", fit),
                            ("hypothesis", hypothesis)) if v is not None}
    missing = [k for k in spec.needs if k not in given]
    if missing:
        raise InputError(f"a {kind} map needs {', '.join('--' + m for m in missing)}")
    extra = sorted(given - set(spec.allows))
    if extra:
        raise InputError(f"{', '.join('--' + e for e in extra)} make(s) no sense for a "
                         f"{kind} map", hint=f"a {kind} map shows {spec.shows}")
    world = inputs.world
    fit, fit_file = _fit_result(fit, world)
    observed = _motions(motions)
    observed = None if observed is None else observed.for_world(world)
    pred = _motions(predicted)
    pred = None if pred is None else pred.for_world(world)
    w = np.zeros(3) if fit is None else fit.mantle_rotation_rad_s
    if observed is not None and frame == "mantle":
        observed = observed - w
    if pred is not None and frame == "motions":
        pred = pred + w
    table = None
    if hypothesis is not None and fit is not None and motions is not None:
        table, _ = torque_table(inputs, hypothesis, motions, fit)
    return MapInputs(inputs, observed, pred, fit, fit_file,
                     _hypothesis(hypothesis) if hypothesis is not None else None,
                     torques=table, frame=frame)


# ----------------------------------------------------------------------------------------
# stage series
# ----------------------------------------------------------------------------------------
def run_series(path, executor, monte_carlo: int = 0, seed: int = 0, chunk: int = 25):
    """Read a series, build every stage's balance, fit jointly, rank, and resample.

    Parameters
    ----------
    path : str or Path
        The series file.
    executor : Executor
        Entered (``with Executor(...) as ex``): where the tasks run.
    monte_carlo : int
        Draws of every stage's motions from their covariance, each refitted.
    seed : int
        Of the draws: draw i has the seed ``SeedSequence(seed).spawn(n)[i]``, whatever the
        executor and the chunking.
    chunk : int
        Draws per task.

    Returns
    -------
    SeriesResult
    """
    from . import progress
    from .inference.ranking import within_one_se
    from .inference.stages import cross_validation_error, joint_information_criteria
    from .io.hypothesis import load_hypothesis
    from .io.series import fit_task, load_stage, monte_carlo_task, read_series, series_rms
    from .parallel import spawn_seeds
    from .results import SeriesResult
    series = read_series(path)
    hyps = (series.hypothesis,) + series.compare
    names = [load_hypothesis(h).name for h in hyps]
    S = len(series.stages)
    with progress.bar(S * len(hyps), "building every stage's balance", minimum=2) as bar:
        built = executor.map(load_stage, [(st, h) for h in hyps for st in series.stages],
                             bar)
    by_hyp = [built[i * S:(i + 1) * S] for i in range(len(hyps))]
    plates = list(dict.fromkeys(p for st in by_hyp[0] for p in st.system.plates))
    missing = [p for p in series.plates if p not in plates]
    if missing:
        raise InputError(f"plates to draw are in no stage: {', '.join(missing)}",
                         file=series.path)
    # every hypothesis' joint fit, and its fits without each plate (cross-validation)
    tasks = [(h, series.per_stage, series.misfit, None) for h in range(len(by_hyp))]
    tasks += [(h, series.per_stage, series.misfit, p) for h in range(len(by_hyp))
              for p in plates]
    with progress.bar(len(tasks), "joint fits and cross-validation", minimum=2) as bar:
        fits = executor.map(fit_task, tasks, bar, shared=by_hyp)
    H = len(hyps)
    ranking = []
    for h in range(H):
        jf = fits[h]
        cv, cv_se = cross_validation_error(by_hyp[h], fits[H + h * len(plates):
                                                           H + (h + 1) * len(plates)], plates)
        ic = joint_information_criteria(jf)
        ranking.append({"name": names[h], "file": hyps[h],
                        "rms_mm_yr": series_rms(by_hyp[h], jf), "cv_rms_mm_yr": cv,
                        "cv_stderr_mm_yr": cv_se, **ic,
                        "stage_rms_mm_yr": [float(x) for x in jf.stage_rms_mm_yr]})
    order = sorted(range(H), key=lambda h: ranking[h]["cv_rms_mm_yr"])
    best = ranking[order[0]]
    for h in order:
        ranking[h]["within_one_se"] = within_one_se(
            ranking[h]["cv_rms_mm_yr"], best["cv_rms_mm_yr"], best["cv_stderr_mm_yr"])
    ranking = [ranking[h] for h in order]
    mc = None
    if monte_carlo:
        stages = by_hyp[0]
        if any(st.obs_cov is None for st in stages):
            raise InputError("--monte-carlo needs every stage's motions with a covariance",
                             file=series.path, hint="give cov_* columns in the motions")
        seeds = spawn_seeds(seed, monte_carlo)
        start = fits[0].parameters
        tasks = [(series.per_stage, series.misfit, seeds[i:i + chunk], start)
                 for i in range(0, monte_carlo, chunk)]
        with progress.bar(len(tasks), "Monte Carlo over the stages' motions",
                          minimum=2) as bar:
            draws = np.vstack(executor.map(monte_carlo_task, tasks, bar, shared=stages))
        ok = np.all(np.isfinite(draws), axis=1)
        good = draws[ok]
        mc = {"draws": draws, "failed": int((~ok).sum()), "seed": seed, "n": monte_carlo,
              "sd": good.std(axis=0, ddof=1) if len(good) > 1 else np.full(draws.shape[1],
                                                                           np.nan),
              "low": np.percentile(good, 2.5, axis=0) if len(good) else None,
              "high": np.percentile(good, 97.5, axis=0) if len(good) else None}
    return SeriesResult(series, by_hyp[0], fits[0], ranking, mc, executor.describe())
