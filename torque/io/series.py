"""Stage series files (TOML), finite rotations (CSV), and loading each stage's balance.

A series file lists stages, each a world at a time (Ma) with its observed motions (or
motions made from finite rotations), and the hypothesis they share::

    name = "Orrery through time"
    hypothesis = "hypotheses/continental_drag.toml"
    compare = ["hypotheses/ridge_slab_drag.toml"]   # optional: ranked against it
    per_stage = ["slab"]                  # optional: coefficients fitted once per stage
    misfit = "area"                       # or "chi-square" (the motions' covariance)
    plates = ["Vessane", "Orlum"]         # optional: plates drawn against time

    [[stage]]
    time_ma = 0.0
    world = "world.toml"
    motions = "motions.csv"

    [[stage]]
    time_ma = 10.0
    world = "t10/world.toml"
    rotations = "rotations.csv"           # stage motions from finite rotations instead
    interval_myr = 2.0                    # from time_ma + 2 Myr to time_ma (default 1)

Relative paths are relative to the series file. Every problem is reported with the stage
it is in (``stage 2 (10 Ma)``).

A finite rotations file (CSV) has a header ``plate,time_ma,lat,lon,angle_deg``: the pole
(degrees) and angle (degrees, right-hand rule) of the rotation that takes the plate from
its present position to its position at ``time_ma``; the identity at 0 Ma is implied.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError, TorqueError
from ..euler import pole_to_vector
from ..results import SeriesResult
from .files import read_toml
from .tables import read_table

__all__ = ["SERIES_KEYS", "STAGE_KEYS", "StageFile", "SeriesFile", "read_series",
           "read_rotations", "stage_motions", "load_stage", "fit_task",
           "monte_carlo_task", "series_rms", "plate_speed_mm_yr", "series_tables",
           "series_record"]

SERIES_KEYS = {"name", "hypothesis", "compare", "per_stage", "misfit", "plates", "stage"}
STAGE_KEYS = {"time_ma", "world", "motions", "rotations", "interval_myr", "label"}


@dataclass(frozen=True)
class StageFile:
    """One stage of a series file, paths resolved.

    Attributes
    ----------
    index : int
        1-based, as in messages.
    time_ma : float
    world : str
    motions : str or None
    rotations : str or None
    interval_myr : float
    """

    index: int
    time_ma: float
    world: str
    motions: str | None = None
    rotations: str | None = None
    interval_myr: float = 1.0

    @property
    def name(self) -> str:
        """``stage N (T Ma)``: how messages and outputs name it."""
        return f"stage {self.index} ({self.time_ma:g} Ma)"


@dataclass(frozen=True)
class SeriesFile:
    """A stage series file, checked.

    Attributes
    ----------
    path : str
    name : str
    hypothesis : str
    compare : tuple of str
    per_stage : tuple of str
    misfit : str
    plates : tuple of str
    stages : tuple of StageFile
    """

    path: str
    name: str
    hypothesis: str
    compare: tuple
    per_stage: tuple
    misfit: str
    plates: tuple
    stages: tuple


def read_series(path) -> SeriesFile:
    """Read and check a stage series file (see the module).

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    SeriesFile
        Stages in order of time; every file named exists.
    """
    path = Path(path)
    cfg = read_toml(path)
    unknown = sorted(set(cfg) - SERIES_KEYS)
    if unknown:
        raise InputError(f"unknown key(s) {', '.join(map(repr, unknown))}", file=path,
                         hint=f"valid keys: {', '.join(sorted(SERIES_KEYS))}")
    base = path.parent

    def existing(value, key, where=None):
        if not isinstance(value, str):
            raise InputError(f"{key} must be a file name (a string), got {value!r}",
                             file=path, where=where)
        p = (base / value).resolve()
        if not p.is_file():
            raise InputError(f"the file named by {key!r} does not exist: {value}", file=path,
                             where=where)
        return str(p)

    if "hypothesis" not in cfg:
        raise InputError("the key 'hypothesis' is required (the hypothesis every stage "
                         "shares)", file=path)
    hyp = existing(cfg["hypothesis"], "hypothesis")
    compare = cfg.get("compare", [])
    if not isinstance(compare, list):
        raise InputError("compare must be a list of hypothesis files", file=path)
    compare = tuple(existing(c, "compare") for c in compare)
    per_stage = cfg.get("per_stage", [])
    plates = cfg.get("plates", [])
    for key, value in (("per_stage", per_stage), ("plates", plates)):
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise InputError(f"{key} must be a list of names", file=path)
    misfit = cfg.get("misfit", "area")
    if misfit not in ("area", "chi-square"):
        raise InputError(f'misfit must be "area" or "chi-square", got {misfit!r}', file=path)
    entries = cfg.get("stage", [])
    if not isinstance(entries, list) or not entries:
        raise InputError("the series has no [[stage]] tables", file=path)
    stages = []
    for i, e in enumerate(entries, start=1):
        where = f"[[stage]] {i}"
        if not isinstance(e, dict):
            raise InputError("each [[stage]] must be a table", file=path, where=where)
        bad = sorted(set(e) - STAGE_KEYS)
        if bad:
            raise InputError(f"unknown key(s) {', '.join(map(repr, bad))}", file=path,
                             where=where, hint=f"valid keys: {', '.join(sorted(STAGE_KEYS))}")
        t = e.get("time_ma")
        if not isinstance(t, (int, float)) or isinstance(t, bool) or not np.isfinite(t) \
                or t < 0:
            raise InputError(f"time_ma must be a number of Ma >= 0, got {t!r}", file=path,
                             where=where)
        where = f"[[stage]] {i} ({t:g} Ma)"
        if "world" not in e:
            raise InputError("a stage needs a 'world' file", file=path, where=where)
        has_m, has_r = "motions" in e, "rotations" in e
        if has_m == has_r:
            raise InputError("a stage needs either 'motions' or 'rotations' (not both)",
                             file=path, where=where)
        dt = e.get("interval_myr", 1.0)
        if not isinstance(dt, (int, float)) or isinstance(dt, bool) or not dt > 0:
            raise InputError(f"interval_myr must be a positive number, got {dt!r}",
                             file=path, where=where)
        if "interval_myr" in e and not has_r:
            raise InputError("interval_myr is for motions made from rotations", file=path,
                             where=where)
        stages.append(StageFile(i, float(t), existing(e["world"], "world", where),
                                existing(e["motions"], "motions", where) if has_m else None,
                                existing(e["rotations"], "rotations", where) if has_r
                                else None, float(dt)))
    times = [s.time_ma for s in stages]
    if len(set(times)) != len(times):
        raise InputError(f"two stages have the same time ({times})", file=path)
    stages.sort(key=lambda s: s.time_ma)
    return SeriesFile(str(path.resolve()), str(cfg.get("name", path.stem)), hyp, compare,
                      tuple(per_stage), misfit, tuple(plates), tuple(stages))


def read_rotations(path) -> dict:
    """Read finite rotations (CSV ``plate,time_ma,lat,lon,angle_deg``).

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    dict
        ``{plate: (times_ma (n,), scipy Rotation of length n)}``, times increasing.
    """
    from scipy.spatial.transform import Rotation
    table = read_table(path, ("plate", "time_ma", "lat", "lon", "angle_deg"), comments=True,
                       hint="need plate,time_ma,lat,lon,angle_deg")
    plate = table.text("plate")
    t = table.numbers("time_ma")
    lat, lon, angle = (table.numbers(c) for c in ("lat", "lon", "angle_deg"))
    if np.any(np.abs(lat) > 90) or np.any(t < 0):
        i = int(np.argmax((np.abs(lat) > 90) | (t < 0)))
        raise InputError("a latitude is outside [-90, 90] or a time is negative", file=path,
                         where=f"line {table.line(i)}")
    axis = pole_to_vector(lat, lon, np.ones_like(lat))
    axis = axis / np.linalg.norm(axis, axis=1)[:, None]
    out = {}
    for name in dict.fromkeys(plate):
        rows = [i for i, p in enumerate(plate) if p == name]
        order = sorted(rows, key=lambda i: t[i])
        times = t[order]
        if len(set(times)) != len(times):
            raise InputError(f"plate {name!r} has two rotations at one time", file=path)
        out[name] = (times, Rotation.from_rotvec(axis[order] * np.radians(angle[order])
                                                 [:, None]))
    return out


def stage_motions(stage: StageFile, world):
    """Observed Euler vectors (rad/s, world plate order) and covariance (or None) of a
    stage, from its motions file or its finite rotations.

    Parameters
    ----------
    stage : StageFile
    world : World

    Returns
    -------
    omega : ndarray, shape (P, 3)
    cov : ndarray, shape (P, 3, 3), or None
    """
    from ..inference.stages import stage_euler_vector
    from .motions import read_motions
    if stage.motions is not None:
        m = read_motions(stage.motions)
        return m.for_world(world), m.cov_for_world(world)
    rot = read_rotations(stage.rotations)
    missing = [p for p in world.plate_names if p not in rot]
    if missing:
        raise InputError(f"no rotations for plate(s) {', '.join(missing[:6])}",
                         file=stage.rotations, where=stage.name)
    omega = np.zeros((len(world.plate_names), 3))
    for i, p in enumerate(world.plate_names):
        times, R = rot[p]
        try:
            omega[i] = stage_euler_vector(times, R, stage.time_ma, stage.interval_myr)
        except ValueError as exc:
            raise InputError(f"plate {p!r}: {exc}", file=stage.rotations,
                             where=stage.name) from None
    return omega, None


def load_stage(task):
    """The balance of one hypothesis on one stage: a task for :class:`torque.parallel.Executor`.

    Parameters
    ----------
    task : tuple
        ``(StageFile, hypothesis path)``.

    Returns
    -------
    Stage
        Problems come back as InputError naming the stage.
    """
    from ..inference.system import assemble
    from ..inference.stages import Stage
    from .hypothesis import load_hypothesis
    from .inputs import Inputs, compute_torques
    stage, hyp_path = task
    try:
        inputs = Inputs.load(stage.world)
        hyp = load_hypothesis(hyp_path)
        omega, cov = stage_motions(stage, inputs.world)
        system = assemble(inputs.world, hyp, compute_torques(inputs, hyp, omega))
    except TorqueError as exc:
        raise type(exc)(exc.message, file=exc.file,
                         where=f"{stage.name}" + (f", {exc.where}" if exc.where else ""),
                         hint=exc.hint) from None
    return Stage(stage.time_ma, system, omega, cov, stage.name)


# ----------------------------------------------------------------------------------------
# the whole job over a series: tasks, and the result
# ----------------------------------------------------------------------------------------
def fit_task(shared, task):
    """A joint fit (a task for :class:`torque.parallel.Executor`).

    Parameters
    ----------
    shared : list of list of Stage
        Every hypothesis' stages.
    task : tuple
        ``(hypothesis index, per_stage, misfit, exclude_plate)``.

    Returns
    -------
    JointFit
    """
    from ..inference.stages import fit_joint
    h, per_stage, misfit, exclude = task
    return fit_joint(shared[h], per_stage, misfit, exclude)


def monte_carlo_task(stages, task):
    """Refits on draws of the motions (a task for :class:`torque.parallel.Executor`).

    Parameters
    ----------
    stages : list of Stage
    task : tuple
        ``(per_stage, misfit, seed sequences, start)``.

    Returns
    -------
    ndarray, shape (n, k)
        The parameters of each draw; NaN rows for draws whose fit failed.
    """
    import dataclasses

    from ..inference.stages import draw_motions, fit_joint
    per_stage, misfit, seeds, start = task
    out = np.full((len(seeds), len(start)), np.nan)
    for i, ss in enumerate(seeds):
        drawn = [dataclasses.replace(st, omega_obs=w)
                 for st, w in zip(stages, draw_motions(stages, ss))]
        try:
            out[i] = fit_joint(drawn, per_stage, misfit, start=start).parameters
        except TorqueError:
            pass
    return out


def series_rms(stages, fit) -> float:
    """RMS velocity misfit over every stage's sphere, mm/yr.

    Parameters
    ----------
    stages : sequence of Stage
    fit : JointFit

    Returns
    -------
    float
    """
    num = sum(r ** 2 * st.system.area.sum() for r, st in zip(fit.stage_rms_mm_yr, stages))
    den = sum(st.system.area.sum() for st in stages)
    return float(np.sqrt(num / den))


# ----------------------------------------------------------------------------------------
# outputs
# ----------------------------------------------------------------------------------------
def plate_speed_mm_yr(system, omega) -> np.ndarray:
    """RMS speed of each plate over its area: ``sqrt(R^2 w^T D_p w / A_p)``.

    Parameters
    ----------
    system : System
        Its drag tensors, areas and radius.
    omega : array_like, shape (P, 3)
        rad/s.

    Returns
    -------
    ndarray, shape (P,)
        mm/yr.
    """
    from ..euler import M_S_TO_MM_YR
    w = np.asarray(omega, float)
    return (np.sqrt(system.radius_m ** 2 * np.einsum("pi,pij,pj->p", w, system.D, w)
                    / system.area) * M_S_TO_MM_YR)


def series_tables(result: SeriesResult) -> dict:
    """The result's tables as columns: ``torques``, ``predicted``, ``misfit``, ``rank``
    (for CSV and the report).

    Parameters
    ----------
    result : SeriesResult

    Returns
    -------
    dict
        ``{name: {column: list}}``.
    """
    from ..euler import vector_to_pole
    from ..results import TORQUE_UNIT_NM
    fit = result.fit
    tq = {k: [] for k in ("stage", "time_ma", "plate", "term", "coefficient", "tx_nm",
                          "ty_nm", "tz_nm", "magnitude_1e25_nm")}
    pr = {k: [] for k in ("stage", "time_ma", "plate", "lat", "lon", "rate",
                          "observed_lat", "observed_lon", "observed_rate",
                          "predicted_speed_mm_yr", "observed_speed_mm_yr")}
    for s, st in enumerate(result.stages):
        sy = st.system
        c = fit.values[s]
        G = sy.columns(st.omega_obs).reshape(sy.n_plates, 3, -1) * c       # (P, 3, K)
        for p, plate in enumerate(sy.plates):
            rows = [(label, c[k], G[p, :, k]) for k, label in enumerate(sy.labels)]
            rows.append(("total", np.nan, G[p].sum(axis=1)))
            for label, coef, t in rows:
                tq["stage"].append(s + 1)
                tq["time_ma"].append(st.time_ma)
                tq["plate"].append(plate)
                tq["term"].append(label)
                tq["coefficient"].append(coef)
                for axis, v in zip("xyz", t):
                    tq[f"t{axis}_nm"].append(v)
                tq["magnitude_1e25_nm"].append(float(np.linalg.norm(t)) / TORQUE_UNIT_NM)
        lat, lon, rate = vector_to_pole(fit.predicted[s])
        olat, olon, orate = vector_to_pole(st.omega_obs)
        sp = plate_speed_mm_yr(sy, fit.predicted[s])
        so = plate_speed_mm_yr(sy, st.omega_obs)
        for p, plate in enumerate(sy.plates):
            for k, v in (("stage", s + 1), ("time_ma", st.time_ma), ("plate", plate),
                         ("lat", lat[p]), ("lon", lon[p]), ("rate", rate[p]),
                         ("observed_lat", olat[p]), ("observed_lon", olon[p]),
                         ("observed_rate", orate[p]), ("predicted_speed_mm_yr", sp[p]),
                         ("observed_speed_mm_yr", so[p])):
                pr[k].append(v)
    mis = {"stage": list(range(1, len(result.stages) + 1)),
           "time_ma": [st.time_ma for st in result.stages],
           "rms_velocity_mm_yr": list(fit.stage_rms_mm_yr),
           "variance_reduction": list(fit.stage_variance_reduction)}
    rank = {k: [r[k] for r in result.ranking] for k in
            ("name", "cv_rms_mm_yr", "cv_stderr_mm_yr", "within_one_se", "recommended",
             "rms_mm_yr", "k", "aic", "bic")}
    rank = {"rank": list(range(1, len(result.ranking) + 1)), **rank}
    return {"torques": tq, "predicted": pr, "misfit": mis, "rank": rank}


def series_record(result: SeriesResult, manifest=None) -> dict:
    """The JSON record of a series run: coefficients (with standard errors and the Monte
    Carlo spread), every stage's coefficients and misfit, the ranking, the manifest.

    Parameters
    ----------
    result : SeriesResult
    manifest : dict, optional

    Returns
    -------
    dict
    """
    fit = result.fit
    se = np.sqrt(np.clip(np.diag(fit.cov), 0, None))
    mc = result.monte_carlo
    params = {}
    for j, name in enumerate(fit.params):
        entry = {"value": float(fit.parameters[j]), "stderr": float(se[j])}
        if mc is not None:
            entry.update(monte_carlo_sd=float(mc["sd"][j]),
                         monte_carlo_low=None if mc["low"] is None else float(mc["low"][j]),
                         monte_carlo_high=None if mc["high"] is None
                         else float(mc["high"][j]))
        params[name] = entry
    out = {"series": result.series.name, "file": result.series.path,
           "hypothesis": result.hypothesis_name,
           "misfit": fit.misfit, "per_stage": list(fit.per_stage),
           "parameters": params,
           "stages": [{"stage": s + 1, "name": st.name, "time_ma": st.time_ma,
                       "coefficients": {l: float(v) for l, v in zip(fit.labels, fit.values[s])},
                       "rms_velocity_mm_yr": float(fit.stage_rms_mm_yr[s]),
                       "variance_reduction": float(fit.stage_variance_reduction[s])}
                      for s, st in enumerate(result.stages)],
           "fit": {"rss": fit.rss, "dof": fit.dof, "observations": fit.n_obs,
                   "evaluations": fit.info["evaluations"]},
           "ranking": result.ranking,
           "recommendation": result.recommendation,
           "monte_carlo": None if mc is None else {"draws": mc["n"], "failed": mc["failed"],
                                                    "seed": mc["seed"]},
           "executor": result.executor,
           "caution": "model-dependent research estimates, not for hazard or engineering use"}
    if manifest is not None:
        out["run"] = manifest
    return out
