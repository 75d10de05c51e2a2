"""Plate configurations through time: stage motions from finite rotations, and one fit of
the torque balance over a series of stages.

A stage is one past (or present) configuration of the plates: its own world, its observed
Euler vectors, one hypothesis shared by all stages (Lithgow-Bertelloni and Richards 1998,
*Rev. Geophys.* 36, fit one physics to the Cenozoic and Mesozoic this way). The joint fit
minimises the sum over stages of each stage's velocity misfit (area-integrated, or the
chi-square with the motions' covariance) with every free coefficient shared by all stages,
or, for the labels in ``per_stage``, one coefficient per stage. Each stage's balance is
solved as in :func:`torque.inference.solvers.predict`; the Jacobian is exact
(``d omega / d c = -M^-1 (A_k omega + b_k)`` per stage).

Stage Euler vectors from finite rotations: a finite rotation ``R(t)`` takes a plate from
its present position to its position at ``t`` Ma (a reconstruction rotation); rotations at
other times are interpolated by spherical linear interpolation (scipy's ``Slerp``), ``R(0)
= I``. The motion that brought the plate from ``t + dt`` to ``t`` is ``S = R(t) R(t +
dt)^-1``, and the stage's Euler vector is ``S``'s rotation vector over ``dt``.

This module is pure (arrays in, arrays out); reading series files is
:mod:`torque.io.series`, and where the tasks run is :mod:`torque.parallel`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import linalg, optimize
from scipy.spatial.transform import Rotation, Slerp

from ..errors import InputError, ModelError
from ..euler import M_S_TO_MM_YR, MYR_S
from ._optimise import GAUSS_NEWTON_STATUS, _gauss_newton, _minimise_bounded
from .covariance import (
    _covariance,
    cluster_robust_covariance,
    degrees_of_freedom,
    jittered_cholesky,
    misfit_whitening,
    variance_factor,
)
from .solvers import solve_balance
from .statistics import information_criteria, information_criteria_chi_square
from .system import plate_weights, rigid_constraint

__all__ = ["interpolate_rotations", "stage_euler_vector", "Stage", "JointFit",
           "fit_joint", "joint_information_criteria", "cross_validation_error",
           "draw_motions"]


# ----------------------------------------------------------------------------------------
# stage motions from finite rotations
# ----------------------------------------------------------------------------------------
def interpolate_rotations(times_ma, rotations: Rotation, at_ma) -> Rotation:
    """Finite rotations of one plate at other times, by spherical linear interpolation.

    Parameters
    ----------
    times_ma : array_like, shape (n,)
        Increasing; 0 (the identity) is added when missing.
    rotations : scipy.spatial.transform.Rotation, length n
        Present position -> position at each time.
    at_ma : array_like, shape (m,)
        Within the times given.

    Returns
    -------
    Rotation, length m
    """
    t = np.asarray(times_ma, float)
    if t[0] > 0:
        t = np.r_[0.0, t]
        rotations = Rotation.concatenate([Rotation.identity(), rotations])
    at = np.atleast_1d(np.asarray(at_ma, float))
    if at.min() < t[0] - 1e-12 or at.max() > t[-1] + 1e-12:
        raise ValueError(f"times {at.min():g}-{at.max():g} Ma are outside the rotations' "
                         f"{t[0]:g}-{t[-1]:g} Ma")
    return Slerp(t, rotations)(np.clip(at, t[0], t[-1]))


def stage_euler_vector(times_ma, rotations: Rotation, time_ma: float,
                       interval_myr: float) -> np.ndarray:
    """The Euler vector (rad/s, shape (3,)) that took a plate from ``time_ma +
    interval_myr`` to ``time_ma``: ``S = R(t) R(t + dt)^-1`` over ``dt``.

    Parameters
    ----------
    times_ma : array_like, shape (n,)
    rotations : Rotation, length n
        Present position -> position at each time.
    time_ma, interval_myr : float

    Returns
    -------
    ndarray, shape (3,)

    Examples
    --------
    A plate turning steadily at w about z was at angle -w t, t Myr ago:

    >>> w = 0.4 * np.pi / 180 / MYR_S                       # 0.4 deg/Myr in rad/s
    >>> R = Rotation.from_rotvec([[0, 0, -np.radians(0.4 * t)] for t in (10.0, 20.0)])
    >>> omega = stage_euler_vector([10.0, 20.0], R, 12.0, 3.0)
    >>> bool(np.allclose(omega, [0, 0, w], rtol=1e-12, atol=0))
    True
    """
    R = interpolate_rotations(times_ma, rotations, [time_ma, time_ma + interval_myr])
    S = R[0] * R[1].inv()
    return S.as_rotvec() / (interval_myr * MYR_S)


# ----------------------------------------------------------------------------------------
# the joint fit
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Stage:
    """One configuration of the series, its balance and its observations.

    Attributes
    ----------
    time_ma : float
    system : System
        The shared hypothesis on this stage's world.
    omega_obs : ndarray, shape (P, 3)
        Observed Euler vectors, rad/s, world plate order.
    obs_cov : ndarray, shape (P, 3, 3), optional
        Their covariance, (rad/s)^2.
    name : str
        For messages and outputs, e.g. ``"stage 2 (10 Ma)"``.
    """

    time_ma: float
    system: object
    omega_obs: np.ndarray
    obs_cov: np.ndarray | None = None
    name: str = "stage"


@dataclass(frozen=True, eq=False)
class JointFit:
    """Coefficients fitted to every stage at once.

    Attributes
    ----------
    labels : tuple of str
        The terms, in hypothesis order.
    per_stage : tuple of str
        Labels fitted once per stage.
    values, stderr : ndarray, shape (S, K)
        Every coefficient at every stage (shared ones repeat; fixed ones have stderr 0).
    params : tuple of str
        The fitted parameters: ``label`` (shared) or ``label@stage`` (per stage).
    cov : ndarray, shape (n, n)
        Of the parameters: classical for the chi-square, cluster-robust (a plate of a stage
        a cluster) for the area misfit, as a one-world fit leads with; both are in
        ``info`` (``classical_cov``, ``robust_cov``).
    rss : float
        The summed misfit (m^4/s^2, or the chi-square).
    dof : int
        Observations minus parameters.
    n_obs : int
    predicted : list of ndarray, shape (P_s, 3)
        Each stage's predicted Euler vectors at the fitted coefficients, rad/s.
    stage_rms_mm_yr, stage_variance_reduction : ndarray, shape (S,)
        Each stage's RMS velocity misfit over the sphere and variance reduction.
    misfit : str
        ``"area"`` or ``"chi-square"``.
    info : dict
    """

    labels: tuple
    per_stage: tuple
    values: np.ndarray
    stderr: np.ndarray
    params: tuple
    cov: np.ndarray
    rss: float
    dof: int
    n_obs: int
    predicted: list
    stage_rms_mm_yr: np.ndarray
    stage_variance_reduction: np.ndarray
    misfit: str = "area"
    info: dict = field(default_factory=dict)

    def __repr__(self) -> str:
        return (f"JointFit({len(self.predicted)} stages, parameters {list(self.params)}, "
                f"misfit {self.misfit!r})")

    @property
    def parameters(self) -> np.ndarray:
        """The fitted parameter values, in the order of ``params``."""
        return self.info["theta"]


class _Layout:
    """Where each stage's free coefficients sit in the parameter vector."""

    def __init__(self, stages, per_stage):
        first = stages[0].system
        for st in stages[1:]:
            s = st.system
            if s.labels != first.labels or not np.array_equal(s.free, first.free):
                raise InputError(f"{st.name} has terms {list(s.labels)}, the first stage "
                                 f"{list(first.labels)}: every stage needs the same hypothesis")
        unknown = sorted(set(per_stage) - set(first.labels))
        if unknown:
            raise InputError(f"per_stage names no term of the hypothesis: {unknown}",
                             hint=f"terms: {', '.join(first.labels)}")
        fixed = [l for l in per_stage if not first.free[first.labels.index(l)]]
        if fixed:
            raise InputError(f"per_stage coefficients must be free; fixed: {fixed}")
        self.labels = first.labels
        self.free_idx = np.nonzero(first.free)[0]
        S = len(stages)
        names, index = [], np.zeros((S, len(self.free_idx)), int)
        for j, k in enumerate(self.free_idx):
            label = self.labels[k]
            if label in per_stage:
                for s, st in enumerate(stages):
                    index[s, j] = len(names)
                    names.append(f"{label}@{st.name}")
            else:
                index[:, j] = len(names)
                names.append(label)
        self.index = index                  # (S, k): parameter of each stage's free coef
        self.names = tuple(names)
        self.n = len(names)

    def coefficients(self, stage_index, system, theta):
        c = system.fixed.copy()
        c[self.free_idx] = theta[self.index[stage_index]]
        return c


def _start(stages, layout, weighting="velocity"):
    """Parameters from the stacked torque-space fit (linear least squares with bounds)."""
    rows, rhs = [], []
    lo = np.full(layout.n, -np.inf)
    hi = np.full(layout.n, np.inf)
    for s, st in enumerate(stages):
        sy = st.system
        G = plate_weights(sy, weighting) @ sy.columns(st.omega_obs)
        block = np.zeros((G.shape[0], layout.n))
        np.add.at(block.T, layout.index[s], G[:, layout.free_idx].T)
        rows.append(block)
        rhs.append(-G[:, ~sy.free] @ sy.fixed[~sy.free])
        lo[layout.index[s]] = sy.bounds[layout.free_idx, 0]
        hi[layout.index[s]] = sy.bounds[layout.free_idx, 1]
    G, h = np.vstack(rows), np.concatenate(rhs)
    scale = np.linalg.norm(G, axis=0)
    scale = np.where(scale > 0, scale, 1.0)
    res = optimize.lsq_linear(G / scale, h, bounds=(lo * scale, hi * scale), method="bvls",
                              tol=1e-14, lsmr_tol=None)
    return res.x / scale, lo, hi


def fit_joint(stages, per_stage=(), misfit: str = "area", exclude_plate: str | None = None,
              start=None) -> JointFit:
    """Free coefficients fitted to the motions of every stage at once, in velocity space.

    Parameters
    ----------
    stages : sequence of Stage
        One hypothesis on each stage's world (same terms).
    per_stage : sequence of str
        Labels of free coefficients fitted once per stage; the others are shared.
    misfit : {"area", "chi-square"}
        Each stage's area-integrated squared velocity misfit, or its chi-square with the
        stage's ``obs_cov``.
    exclude_plate : str, optional
        Leave this plate's motions out of every stage's misfit (cross-validation); the
        balance is still solved for all plates.
    start : ndarray, optional
        Starting parameters (else the stacked torque-space fit).

    Returns
    -------
    JointFit
    """
    stages = list(stages)
    if not stages:
        raise InputError("a series needs at least one stage")
    layout = _Layout(stages, tuple(per_stage))
    if layout.n == 0:
        raise ModelError("the hypothesis has no free coefficient to fit")
    whiten, n_obs, lost = [], 0, 0
    for st in stages:
        if misfit == "chi-square" and st.obs_cov is None:
            raise InputError(f"{st.name}: the chi-square needs the motions' covariance",
                             hint="give cov_* columns in its motions, or use the area misfit")
        plates = None
        if exclude_plate is not None and exclude_plate in st.system.plates:
            plates = [i for i, p in enumerate(st.system.plates) if p != exclude_plate]
        W, n = misfit_whitening(st.system, st.obs_cov if misfit == "chi-square" else None,
                                plates)
        whiten.append(W)
        n_obs += n
        # motions that satisfy a rigid constraint (NNR, a fixed plate) lost three degrees
        # of freedom, as in a fit of one world
        lost += 3 if rigid_constraint(st.system, st.omega_obs) else 0
    x0, lo, hi = _start(stages, layout)
    if start is not None:
        x0 = np.asarray(start, float)
    scale = np.where(np.abs(x0) > 0, np.abs(x0), 1.0)
    x0 = np.clip(x0, lo, hi)
    last = [None] * len(stages)

    def stage_solution(s, theta):
        st = stages[s]
        c = layout.coefficients(s, st.system, theta)
        w, lu = solve_balance(st.system, c, last[s])
        if st.system.nonlinear:
            last[s] = w
        return c, w, lu

    def residual(x):
        theta = x * scale
        parts = []
        for s, st in enumerate(stages):
            _, w, _ = stage_solution(s, theta)
            parts.append(whiten[s] @ (w - st.omega_obs.ravel()))
        return np.concatenate(parts)

    def jacobian(x):
        theta = x * scale
        blocks = []
        for s, st in enumerate(stages):
            _, w, lu = stage_solution(s, theta)
            cols = st.system.columns(w.reshape(-1, 3))[:, layout.free_idx]
            dw = -linalg.lu_solve(lu, cols)                       # (3P, k)
            J = np.zeros((len(w), layout.n))
            np.add.at(J.T, layout.index[s], dw.T)
            blocks.append(whiten[s] @ J * scale)
        return np.vstack(blocks)

    # the optimiser of the one-world fits: Gauss-Newton to where the misfit's gradient
    # vanishes, the trust-region method where a step would leave the bounds, parameters
    # held on a bound where the KKT conditions say so
    lo_s, hi_s = lo / scale, hi / scale
    x_start = x0 / scale
    inside = bool(np.all((x_start > lo_s) & (x_start < hi_s)))
    x_opt, nfev = (_gauss_newton(residual, jacobian, x_start, np.ones(len(x_start), bool),
                                 lo_s, hi_s) if inside else (None, 0))
    status = GAUSS_NEWTON_STATUS
    if x_opt is None:
        x_opt, more, status, _ = _minimise_bounded(
            residual, jacobian, x_start, lo_s, hi_s, len(x_start),
            lambda x, keep: _gauss_newton(residual, jacobian, x, keep, lo_s, hi_s))
        nfev += more
    theta = x_opt * scale
    r_opt = residual(x_opt)
    rss = float(r_opt @ r_opt)
    J = jacobian(x_opt) / scale
    # one convention with the one-world fits: degrees of freedom counted once, a known
    # covariance unscaled, the area misfit's variance estimated from its residuals
    dof = degrees_of_freedom(n_obs, layout.n, lost_dof=lost)
    classical = _covariance(J, variance_factor(rss, dof, known=misfit == "chi-square"))
    # the same standard errors as a one-world fit leads with: classical with a covariance,
    # cluster-robust (a plate of a stage a cluster) for the area misfit
    robust, robust_dof = cluster_robust_covariance(J, r_opt)
    cov = classical if misfit == "chi-square" else robust
    S, K = len(stages), len(layout.labels)
    values, stderr = np.zeros((S, K)), np.zeros((S, K))
    se = np.sqrt(np.clip(np.diag(cov), 0, None))
    predicted, rms, vr = [], np.zeros(S), np.zeros(S)
    for s, st in enumerate(stages):
        c, w, _ = stage_solution(s, theta)
        values[s] = c
        stderr[s, layout.free_idx] = se[layout.index[s]]
        omega = w.reshape(-1, 3)
        predicted.append(omega)
        rms[s], vr[s] = _stage_misfit(st.system, omega, st.omega_obs)
    return JointFit(layout.labels, tuple(per_stage), values, stderr, layout.names, cov, rss,
                    dof, n_obs, predicted, rms, vr, misfit,
                    {"theta": theta, "evaluations": int(nfev), "status": int(status),
                     "classical_cov": classical, "robust_cov": robust, "robust_dof": robust_dof,
                     "standard_errors": "classical" if misfit == "chi-square" else "robust",
                     "stages": [st.name for st in stages],
                     "times_ma": [st.time_ma for st in stages],
                     "excluded_plate": exclude_plate})


def _stage_misfit(system, omega, omega_obs):
    """RMS velocity misfit over the sphere (mm/yr) and variance reduction of one stage."""
    R2 = system.radius_m ** 2
    d = omega - omega_obs
    mis = np.einsum("pi,pij,pj->", d, system.D, d) * R2
    obs = np.einsum("pi,pij,pj->", omega_obs, system.D, omega_obs) * R2
    area = system.area.sum()
    return float(np.sqrt(mis / area) * M_S_TO_MM_YR), float(1 - mis / obs) if obs else np.nan


def joint_information_criteria(fit: JointFit) -> dict:
    """AIC and BIC of a joint fit from its summed misfit, by the one-world formulas
    (:func:`torque.inference.statistics.information_criteria` for the area misfit, one
    variance estimated; :func:`~torque.inference.statistics.information_criteria_chi_square`
    for the chi-square, variances known).

    Parameters
    ----------
    fit : JointFit

    Returns
    -------
    dict
        ``aic``, ``bic``, ``k``, ``n``.
    """
    n, k = fit.n_obs, len(fit.params)
    ic = (information_criteria_chi_square(fit.rss, n, k) if fit.misfit == "chi-square"
          else information_criteria(fit.rss, n, k))
    return {"aic": ic["aic"], "bic": ic["bic"], "k": k, "n": n}


def cross_validation_error(stages, fits_without, plates) -> tuple[float, float]:
    """Leave-one-plate-out error over the series: each plate's predicted motion, from the
    fit that left that plate out of every stage, against its observed motion.

    Parameters
    ----------
    stages : sequence of Stage
    fits_without : sequence of JointFit
        One per plate in ``plates``, fitted with ``exclude_plate`` that plate.
    plates : sequence of str

    Returns
    -------
    rms_mm_yr : float
        RMS over the sphere of the left-out plates' velocity errors, all stages.
    stderr_mm_yr : float
        Its standard error over plates.
    """
    per_plate, area_all = [], 0.0
    for name, fit in zip(plates, fits_without):
        mis, area = 0.0, 0.0
        for s, st in enumerate(stages):
            if name not in st.system.plates:
                continue
            i = st.system.plates.index(name)
            d = fit.predicted[s][i] - st.omega_obs[i]
            mis += float(d @ st.system.D[i] @ d) * st.system.radius_m ** 2
            area += float(st.system.area[i])
        per_plate.append((mis, area))
        area_all += area
    mis = np.array([m for m, _ in per_plate])
    area = np.array([a for _, a in per_plate])
    total = np.sqrt(mis.sum() / area.sum()) * M_S_TO_MM_YR
    # standard error over plates of the mean squared error per area, propagated to the RMS
    msq = mis / np.where(area > 0, area, 1.0)
    w = area / area.sum()
    mean = float((w * msq).sum())
    var = float((w * (msq - mean) ** 2).sum() / max(len(msq) - 1, 1))
    se = 0.5 * np.sqrt(var) / np.sqrt(mean) * M_S_TO_MM_YR if mean > 0 else np.nan
    return float(total), float(se)


def draw_motions(stages, seed_sequence) -> list:
    """One Monte Carlo draw of every stage's observed motions from their covariances.

    Parameters
    ----------
    stages : sequence of Stage
        Each with ``obs_cov``.
    seed_sequence : numpy.random.SeedSequence
        This draw's own seed.

    Returns
    -------
    list of ndarray, shape (P_s, 3)
    """
    rng = np.random.default_rng(seed_sequence)
    out = []
    for st in stages:
        L = jittered_cholesky(st.obs_cov)
        out.append(st.omega_obs + np.einsum("pij,pj->pi", L,
                                            rng.standard_normal(st.omega_obs.shape)))
    return out
