"""The torque balance: fit force coefficients to observed motions, predict Euler vectors.

Plates do not accelerate, so on every plate the torques of all force terms sum to zero:
``sum_k c_k (b_k + A_k omega) = 0`` (3 equations per plate), with ``b_k`` the
motion-independent torques and ``A_k`` the torque per angular velocity of term k (see
:class:`torque.forces.ForceTerm`).

* **Fit in torque space** (:func:`fit_torque`): with the observed ``omega`` the balance is
  linear in the free coefficients; it is solved by bounded linear least squares
  (``scipy.optimize.lsq_linear``) over all plates at once, after weighting each plate's
  three equations (``weighting``):

  - ``"velocity"`` (default): by ``D_p^{-1/2}``, with ``D_p`` the plate's drag tensor, so
    that where drag dominates the weighted residual is the plate's area-integrated velocity
    misfit; big plates do not drown small ones merely by their size;
  - ``"area"``: by ``1 / area``;
  - ``"none"``: raw torques (N m), dominated by the largest plates.

* **Prediction** (:func:`predict`): with every coefficient known the balance is one linear
  system ``M omega = -d`` for all plates together (boundary resistances couple
  neighbours), in the frame where the mantle is at rest.

* **Fit in velocity space** (:func:`fit_velocity`): nonlinear least squares of the
  area-integrated squared velocity misfit between predicted and observed motions,
  ``sum_p int |(w_pred - w_obs) x R r|^2 dA = R^4 sum_p dw^T D_p dw``, exact through the drag
  tensors, started from the torque-space fit and using the exact Jacobian
  ``d omega / d c_k = -M^{-1} (A_k omega + b_k)``. It is solved by Gauss-Newton steps to
  where the misfit's gradient vanishes (a step below 1e-11 of every coefficient's scale),
  by scipy's bounded trust-region method where a step would leave the bounds, and with a
  coefficient whose minimum lies on a bound held exactly there when the Karush-Kuhn-Tucker
  conditions confirm it (Nocedal and Wright 2006, *Numerical Optimization*, secs. 10.3 and
  12.3). Resampled members (bootstrap, Monte Carlo, cross-validation) take their
  Gauss-Newton steps together in stacked arrays (:func:`fit_velocity_many`).

Prefer the velocity-space fit: it measures misfit in what is observed (plate velocities),
and does not depend on a weighting of torques. The torque-space fit is linear, fast and
always available; it is the starting point, and resampling can use it (``fit="torque"``)
when speed matters more than the errors-in-variables bias.

Drag acts relative to the mantle, so predicted motions are in the frame where the mantle is
at rest. Observed motions are taken to be in that frame unless the fit estimates the
mantle's rotation in their frame (``free_frame``) or is given it; moving them to the
no-net-rotation frame first is not neutral, since a hypothesis with unequal drag predicts a
net rotation of its own.

References
----------
.. [1] Solomon, S. C., Sleep, N. H. and Richardson, R. M. (1975). On the forces driving
   plate tectonics: inferences from absolute plate velocities and intraplate stress.
   *Geophys. J. R. Astr. Soc.* 42, 769-801; Chapple, W. M. and Tullis, T. E. (1977).
   Evaluation of the forces that drive the plates. *J. Geophys. Res.* 82, 1967-1984
   (the torque balance; page numbers from memory).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
from scipy import linalg, optimize, special

from ..errors import ModelError, TorqueError
from ..parallel import small_solves
from ._optimise import (
    GAUSS_NEWTON_STATUS,
    _gauss_newton,
    _minimise_bounded,
    _velocity_gauss_newton,
)
from .covariance import (
    _covariance,
    cluster_robust_covariance,
    degrees_of_freedom,
    misfit_whitening,
    variance_factor,
)
from .system import (
    System,
    _check_determined,
    _check_fittable,
    _coefficient_scales,
    _identifiability,
    plate_weights,
)

#: The normal 97.5 % quantile (``scipy.stats.norm.ppf(0.975)``).
Z95 = 1.959963984540054

__all__ = ["Z95", "Fit", "fit_torque", "predict", "NEWTON_TOL", "NEWTON_MAX_STEPS",
           "solve_balance", "fit_velocity", "fit_velocity_many", "on_one_blas_thread"]


# ----------------------------------------------------------------------------------------
# results
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Fit:
    """Coefficients estimated by one fit.

    ``values`` and ``stderr`` have one entry per term (fixed ones with stderr 0);
    ``cov`` is the covariance of the free coefficients, in the order of ``system.free``.

    Attributes
    ----------
    system : System
    method : str
        The fit method's name (see :data:`FIT_METHODS`).
    values, stderr : ndarray, shape (K,)
    cov : ndarray, shape (k, k)
    rss : float
        Residual sum of squares (in the method's own measure).
    dof : int
        Degrees of freedom (:func:`~torque.inference.covariance.degrees_of_freedom`).
    active_bounds : tuple of str
        Free coefficients at a bound.
    variance_factor : float
        The ``s^2`` that ``cov`` is scaled by: 1 for a chi-square with a known covariance,
        ``rss / dof`` otherwise (:func:`~torque.inference.covariance.variance_factor`).
    misfit : {"area", "chi-square", "torque"}
        What was minimised: the area-integrated velocity misfit, the chi-square with the
        observations' covariance, or the weighted torque balance (torque-space fit).
    chi_square : float or None
        The minimised chi-square (``rss``) of a chi-square fit.
    weighting : str or None
        The torque-space fit's weighting of the plates' equations.
    frame_rotation : ndarray, shape (3,), or None
        With a free frame: the mantle's rotation in the frame of the observations, rad/s.
    frame_cov : ndarray, shape (3, 3), or None
        Its covariance, (rad/s)^2.
    observations, effective_observations, parameters : int
        Observations counted, those left after a rigid constraint, parameters fitted
        (a free frame's included, counted once with the constraint).
    evaluations : int
        Balances solved.
    status : int
        :data:`~torque.inference._optimise.GAUSS_NEWTON_STATUS` where Gauss-Newton
        finished the fit, else scipy's status.
    known_variance : bool
        Whether ``cov`` takes the misfit's scale as known (a chi-square with its
        covariance, ``s^2 = 1``) rather than estimated from the residuals.
    robust_cov : ndarray, shape (k, k), or None
        The cluster-robust (sandwich, CR2) covariance of the free coefficients, a plate a
        cluster (:func:`~torque.inference.covariance.cluster_robust_covariance`);
        velocity-space fits only.
    robust_stderr : ndarray, shape (K,), or None
        Its standard errors (0 for fixed coefficients).
    robust_dof : ndarray, shape (k,), or None
        The free coefficients' degrees of freedom for its intervals (Bell and McCaffrey).
    """

    system: System
    method: str
    values: np.ndarray
    stderr: np.ndarray
    cov: np.ndarray
    rss: float
    dof: int
    active_bounds: tuple = ()
    variance_factor: float = 1.0
    misfit: str = "area"
    chi_square: float | None = None
    weighting: str | None = None
    frame_rotation: np.ndarray | None = None
    frame_cov: np.ndarray | None = None
    observations: int = 0
    effective_observations: int = 0
    parameters: int = 0
    evaluations: int = 0
    status: int = 0
    known_variance: bool = False
    robust_cov: np.ndarray | None = None
    robust_stderr: np.ndarray | None = None
    robust_dof: np.ndarray | None = None

    @property
    def named(self) -> dict:
        """``{label: value}`` of every coefficient (``values`` by name)."""
        return {l: float(v) for l, v in zip(self.system.labels, self.values)}

    @property
    def quantile(self) -> float:
        """The multiple of ``stderr`` a 95 % interval spans on each side: the normal
        quantile with a known variance, Student's t with ``dof`` degrees of freedom when it
        is estimated (``scipy.stats.t.ppf``, through ``scipy.special.stdtrit``)."""
        return Z95 if self.known_variance else float(special.stdtrit(self.dof, 0.975))

    @property
    def robust_quantiles(self) -> np.ndarray:
        """The multiples of ``robust_stderr`` a 95 % interval spans, one per coefficient
        (0 for fixed ones): Student's t with each free coefficient's Bell and McCaffrey
        degrees of freedom (Imbens and Kolesar 2016)."""
        q = np.zeros(len(self.values))
        if self.robust_dof is not None:
            q[self.system.free] = special.stdtrit(np.clip(self.robust_dof, 1, None), 0.975)
        return q

    @property
    def reduced_chi_square(self) -> float | None:
        """The chi-square over the degrees of freedom (None for other misfits)."""
        return None if self.chi_square is None else self.chi_square / self.dof

    def __repr__(self) -> str:
        vals = ", ".join(f"{l}={v:.4g}" for l, v in zip(self.system.labels, self.values))
        return f"Fit({self.method!r}, {vals})"


def fit_torque(system: System, omega_obs, weighting: str = "velocity",
               plates=None) -> Fit:
    """Free coefficients by bounded linear least squares of the plates' torque balance.

    Parameters
    ----------
    system : System
    omega_obs : ndarray, shape (P, 3)
        Observed angular velocities (rad/s), mantle at rest.
    weighting : {"velocity", "area", "none"}
    plates : array of int, optional
        Use only these plates' equations (for the bootstrap and cross-validation); a plate
        may be repeated.
    """
    _check_fittable(system)
    G_all = system.columns(omega_obs)                                # (3P, K)
    W = plate_weights(system, weighting)
    Gw = W @ G_all
    if plates is not None:
        rows = (3 * np.asarray(plates)[:, None] + np.arange(3)).ravel()
        Gw = Gw[rows]
    fixed = ~system.free
    h = -Gw[:, fixed] @ system.fixed[fixed]
    G = Gw[:, system.free]
    _identifiability(system, G, omega_obs)
    scale = np.linalg.norm(G, axis=0)
    lo, hi = (system.bounds[system.free] * scale[:, None]).T
    res = optimize.lsq_linear(G / scale, h, bounds=(lo, hi), method="bvls",
                              tol=1e-14, lsmr_tol=None)
    x = res.x / scale
    r = G @ x - h
    n, k = G.shape
    rss = float(r @ r)
    dof = degrees_of_freedom(n, k)
    s2 = variance_factor(rss, dof, known=False)
    cov = s2 * np.linalg.inv((G / scale).T @ (G / scale)) / np.outer(scale, scale)
    values = system.full_coefficients(x)
    stderr = np.zeros(len(values))
    stderr[system.free] = np.sqrt(np.clip(np.diag(cov), 0, None))
    free_labels = [l for l, f in zip(system.labels, system.free) if f]
    active = tuple(free_labels[i] for i in np.nonzero(res.active_mask)[0])
    return Fit(system, "torque", values, stderr, cov, rss, dof, active, s2, misfit="torque",
               weighting=weighting, observations=n, effective_observations=n, parameters=k)


def predict(system: System, coefficients) -> np.ndarray:
    """Euler vectors (rad/s, shape (P, 3)) that balance the torques, mantle at rest.

    Raises InputError explaining which motion is undetermined when the system is singular
    (no basal drag or mantle term: the net rotation is then free).

    Parameters
    ----------
    system : System
    coefficients : array_like, shape (K,)
        Every coefficient (fixed and free).

    Returns
    -------
    ndarray, shape (P, 3)

    Examples
    --------
    The demo planet's noise-free motions were made by this forward model from the
    coefficients in its truth.json; predicting with them gives them back:

    >>> import json
    >>> import torque
    >>> inputs = torque.Inputs.load("polygons_demo/world.toml")
    >>> hyp = torque.load_hypothesis("polygons_demo/hypotheses/continental_drag.toml")
    >>> system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp))
    >>> truth = json.load(open("polygons_demo/truth.json"))["true_coefficients"]
    >>> omega = predict(system, [truth[label] for label in system.labels])
    >>> true = torque.read_motions("polygons_demo/true_motions.csv").for_world(inputs.world)
    >>> bool(np.abs(omega - true).max() < 1e-8 * np.abs(true).max())
    True
    """
    c = np.asarray(coefficients, float)
    M = np.tensordot(c, system.A, axes=1)
    _check_determined(system, M)
    w, _ = solve_balance(system, c)
    return w.reshape(-1, 3)


#: Newton's method on a nonlinear balance stops when the torque left over is below this
#: fraction of the largest term's torque, and the last step below it of the motions.
NEWTON_TOL = 1e-10
NEWTON_MAX_STEPS = 100


def solve_balance(system: System, coefficients, start=None):
    """Motions that zero the total torque, and the LU factors of the balance's Jacobian.

    Linear balances take one solve. With a nonlinear part (a rate-independent resistance
    with a non-zero coefficient) Newton's method starts from ``start``, else from the
    balance with the nonlinear parts left out, halves a step that does not reduce the
    torque left over, and stops at :data:`NEWTON_TOL`.

    Parameters
    ----------
    system : System
    coefficients : array_like, shape (K,)
    start : array_like, shape (3P,), optional
        rad/s.

    Returns
    -------
    omega : ndarray, shape (3P,)
        rad/s.
    lu : tuple
        :func:`scipy.linalg.lu_factor` of the Jacobian at ``omega``.

    Raises
    ------
    ModelError
        When Newton's method does not converge (the message says how far it got).
    """
    c = np.asarray(coefficients, float)
    M = np.tensordot(c, system.A, axes=1)
    d = c @ system.b
    lu = linalg.lu_factor(M)
    w = linalg.lu_solve(lu, -d)
    parts = [(k, p) for k, p in system.nonlinear if c[k] != 0]
    if not parts:
        return w, lu
    if start is not None:
        w = np.asarray(start, float).reshape(-1).copy()

    def residual(w):
        r = M @ w + d
        for k, p in parts:
            r = r + c[k] * p.torque(w.reshape(-1, 3)).ravel()
        return r
    # the torque scale: the largest driving or nonlinear term at the start
    scale = max(np.abs(d).max(), *(abs(c[k]) * np.abs(p.torque(w.reshape(-1, 3))).max()
                                   for k, p in parts), 1e-300)
    r = residual(w)
    for step in range(NEWTON_MAX_STEPS):
        J = system.balance_jacobian(c, w)
        lu = linalg.lu_factor(J)
        dw = linalg.lu_solve(lu, -r)
        t = 1.0
        while True:                      # backtracking: halve until the residual falls
            r_new = residual(w + t * dw)
            if np.linalg.norm(r_new) < np.linalg.norm(r) or t < 1e-6:
                break
            t /= 2
        w, r = w + t * dw, r_new
        if (np.abs(r).max() <= NEWTON_TOL * scale
                and np.abs(t * dw).max() <= NEWTON_TOL * max(np.abs(w).max(), 1e-300)):
            return w, linalg.lu_factor(system.balance_jacobian(c, w))
    raise ModelError(f"the nonlinear torque balance did not converge in {NEWTON_MAX_STEPS} "
                     f"Newton steps: the torque left over is {np.abs(r).max() / scale:.2g} "
                     f"of the largest term's (tolerance {NEWTON_TOL:g})", file=system.source,
                     hint="raise smoothing_mm_yr of the constant-stress resistance, or check "
                     "that drag resists every plate")


def fit_velocity(system: System, omega_obs, start: Fit | None = None,
                 free_frame: bool = False, plates=None, obs_cov=None,
                 lost_dof: int = 0, variance: str | None = None) -> Fit:
    """Free coefficients minimising the area-integrated squared velocity misfit.

    Parameters
    ----------
    system : System
    omega_obs : array_like, shape (P, 3)
        Observed Euler vectors, rad/s, mantle at rest.
    start : Fit, optional
        The torque-space fit to start from (made if not given).
    free_frame : bool
        Also estimate the rotation ``w`` of the observations' frame relative to the
        mantle: the observed motions are then compared with ``predicted + w``. The misfit
        is linear in ``w`` (its Jacobian is ``R^2 L_p^T`` per plate), so ``w`` is fitted
        jointly and exactly; it is returned in ``Fit.frame_rotation`` (rad/s) with its
        covariance in ``Fit.frame_cov``.
    plates : array of int, optional
        Count only these plates' misfits (for the bootstrap and cross-validation); a plate
        may be repeated, and then counts as often. The balance is still solved for all.
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        Covariance of the observed Euler vectors, (rad/s)^2: one block per plate, or the
        full matrix with the covariances between plates. Given, the fit minimises the
        chi-square ``dw^T C^-1 dw`` (generalised least squares) instead of the
        area-integrated velocity misfit, and the Fit has its ``chi_square``,
        ``reduced_chi_square`` and ``dof`` (see :func:`misfit_whitening` for ``plates``
        with a full matrix).
    lost_dof : int
        Degrees of freedom the observations lost before the fit: 3 for motions moved to
        the no-net-rotation frame or given relative to a fixed plate (see
        :func:`rigid_constraint`). A free frame fits those same three directions, so it
        adds no parameters beyond them: ``dof = n - k - max(3 * free_frame, lost_dof)``.
    variance : {"known", "estimated"}, optional
        With ``obs_cov``: take its scale as known (default; ``s^2 = 1``, normal quantiles)
        or estimate it by the reduced chi-square (Student's t quantiles). Without it the
        variance is always estimated.

    Returns
    -------
    Fit
        ``Fit.status`` is :data:`GAUSS_NEWTON_STATUS` where Gauss-Newton finished the
        fit, else scipy's ``least_squares`` status; ``active_bounds`` names the
        coefficients held on a bound.

    Notes
    -----
    Gauss-Newton from the start where the balance is linear (or Newton's method solves
    it at each point) and the steps stay inside the bounds; otherwise the parameters that
    start on a bound are held there and the others refitted, kept if the misfit's gradient
    points out of the bounds in every held one, else every parameter is fitted by scipy's
    bounded trust-region method and Gauss-Newton goes on from where it stops (where the
    misfit stopped falling, up to ~1e-8 from the minimum) to where the gradient vanishes.
    """
    _check_fittable(system)
    if start is None:
        start = fit_torque(system, omega_obs)
    free = system.free
    x0 = start.values[free]
    scale = _coefficient_scales(system, omega_obs, x0)
    fixed_c = system.fixed
    k_free = int(free.sum())
    omega_obs = np.asarray(omega_obs, float)
    P = system.n_plates
    # the frame's rotation, scaled by the size of the observed motions
    w_scale = float(np.sqrt(np.mean(np.sum(omega_obs ** 2, axis=1)))) or 1.0
    W, n_obs = misfit_whitening(system, obs_cov, plates)               # (3P, 3P)
    frame_cols = W @ np.tile(np.eye(3), (P, 1)) * w_scale              # d r / d w

    def coeffs(x):
        c = fixed_c.copy()
        c[free] = x * scale
        return c

    last = {}

    def solve(x):
        # the optimiser asks for the residual and then the Jacobian at the same point:
        # one balance serves both
        if "x" in last and np.array_equal(x, last["x"]):
            return last["solved"]
        c = coeffs(x)
        # a nonlinear balance starts Newton from the last solution (the optimiser's steps
        # are small)
        w, lu = solve_balance(system, c, last.get("w"))
        if system.nonlinear:
            last["w"] = w
        last["x"], last["solved"] = np.array(x, float), (c, lu, w)
        return c, lu, w

    def frame(x):
        return x[k_free:] * w_scale if free_frame else np.zeros(3)

    def residual(x):
        _, _, w = solve(x[:k_free])
        return W @ (w.reshape(-1, 3) + frame(x) - omega_obs).ravel()

    def jacobian(x):
        _, lu, w = solve(x[:k_free])
        # d w / d c_k = -M^{-1} (A_k w + b_k), for the free k
        rhs = system.columns(w.reshape(-1, 3))[:, free]                # (3P, k)
        J = W @ (-linalg.lu_solve(lu, rhs) * scale)
        return np.hstack([J, frame_cols]) if free_frame else J

    M0 = np.tensordot(start.values, system.A, axes=1)
    _check_determined(system, M0)
    with np.errstate(over="ignore"):     # a bound past the float range in these units is none
        lo, hi = (system.bounds[free] / scale[:, None]).T
    x_start = np.clip(x0 / scale, lo, hi)
    if free_frame:
        # the best frame for the starting coefficients: the misfit is linear in it
        _, _, w0 = solve(x_start)
        gap = W @ (omega_obs - w0.reshape(-1, 3)).ravel()
        w_start = np.linalg.lstsq(frame_cols, gap, rcond=None)[0]
        x_start = np.r_[x_start, w_start]
        lo, hi = np.r_[lo, [-np.inf] * 3], np.r_[hi, [np.inf] * 3]
    # Gauss-Newton steps from the start while they stay inside the bounds; the trust-region
    # method (scipy), which keeps to the bounds, takes over where they would leave them
    position = {k: i for i, k in enumerate(np.flatnonzero(free))}

    def gauss_newton(x, keep=None):
        """Gauss-Newton over the parameters ``keep`` (default all), the others held:
        (x, evaluations), x None where it does not converge inside the bounds."""
        keep = np.ones(len(x), bool) if keep is None else keep
        # the balance is linear where every nonlinear part's coefficient is fixed at 0 or
        # held at 0: then the members' batched steps, else Newton's method at each point
        linear = all(x[position[k]] == 0 and not keep[position[k]] if free[k]
                     else fixed_c[k] == 0 for k, _ in system.nonlinear)
        if not linear:
            return _gauss_newton(residual, jacobian, x, keep, lo, hi)
        x_gn, done, steps = _velocity_gauss_newton(
            system, W[None], (W @ omega_obs.ravel())[None],
            frame_cols[None] if free_frame else None, scale, x[None], lo, hi, keep)
        return (x_gn[0], int(steps[0])) if done[0] else (None, int(steps[0]))

    inside = np.all((x_start[:k_free] > lo[:k_free]) & (x_start[:k_free] < hi[:k_free]))
    x_opt, nfev = gauss_newton(x_start) if inside else (None, 0)
    status, held = GAUSS_NEWTON_STATUS, np.zeros(len(x_start), bool)
    if x_opt is None:
        x_opt, more, status, held = _minimise_bounded(residual, jacobian, x_start, lo, hi,
                                                      k_free, gauss_newton)
        nfev += more
    x = x_opt[:k_free] * scale
    units = np.r_[scale, [w_scale] * (3 if free_frame else 0)]
    r_opt = residual(x_opt)
    rss = float(r_opt @ r_opt)
    # the frame's three parameters and the three directions the data lost are the same
    # rigid rotations: count them once
    extra = max(3 if free_frame else 0, lost_dof)
    dof = degrees_of_freedom(n_obs, k_free, free_frame, lost_dof)
    if variance not in (None, "known", "estimated"):
        raise ValueError(f"variance must be 'known' or 'estimated', got {variance!r}")
    if variance == "known" and obs_cov is None:
        raise ValueError("only a chi-square's variance can be known: give obs_cov")
    known = obs_cov is not None and variance != "estimated"
    s2 = variance_factor(rss, dof, known=known)
    J_opt = jacobian(x_opt) / units
    cov_all = _covariance(J_opt, s2)
    cov = cov_all[:k_free, :k_free]
    robust_all, robust_dof = cluster_robust_covariance(J_opt, r_opt)
    robust = robust_all[:k_free, :k_free]
    values = system.full_coefficients(x)
    stderr = np.zeros(len(values))
    stderr[free] = np.sqrt(np.clip(np.diag(cov), 0, None))
    robust_stderr = np.zeros(len(values))
    robust_stderr[free] = np.sqrt(np.clip(np.diag(robust), 0, None))
    free_labels = [l for l, f in zip(system.labels, system.free) if f]
    active = tuple(free_labels[i] for i in np.nonzero(held[:k_free])[0])
    chi = obs_cov is not None
    return Fit(system, "velocity", values, stderr, cov, rss, dof, active, s2,
               misfit="chi-square" if chi else "area", chi_square=rss if chi else None,
               frame_rotation=frame(x_opt) if free_frame else None,
               frame_cov=cov_all[k_free:, k_free:] if free_frame else None,
               observations=n_obs, effective_observations=n_obs - lost_dof,
               parameters=k_free + extra - lost_dof, evaluations=nfev, status=status,
               known_variance=known, robust_cov=robust, robust_stderr=robust_stderr,
               robust_dof=robust_dof[:k_free])


def fit_velocity_many(system: System, omega_obs, start: Fit, plates=None,
                      obs_cov=None, free_frame: bool = False):
    """Velocity-space fits of many resampled members at once (bootstrap, Monte Carlo).

    Each member is what :func:`fit_velocity` returns for it, started from ``start``: for
    a linear balance whose start lies inside the bounds the members take Gauss-Newton steps
    together (a few batched solves per step, in chunks of about 16 MB); a member that
    reaches a bound, does not converge, or belongs to a nonlinear balance is fitted by
    :func:`fit_velocity` on its own. Both end where the misfit's gradient vanishes, so
    the two ways agree to rounding (about 1e-12 of each coefficient).

    Parameters
    ----------
    system : System
    omega_obs : array_like, shape (P, 3) or (B, P, 3)
        The observations, one set for every member or one per member, rad/s.
    start : Fit
        The fit every member starts from (the fit to the data).
    plates : sequence of B arrays of int, optional
        The plates each member counts (see :func:`fit_velocity`).
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
    free_frame : bool
        Refit every member's frame rotation too (``start`` then a free-frame fit), so that
        the members' spread holds the frame's covariance with the coefficients.

    Returns
    -------
    values : ndarray, shape (B, K)
        Every member's coefficients; a row of NaN where :func:`fit_velocity` refuses the
        member (InputError).
    frames : ndarray, shape (B, 3)
        With ``free_frame`` only: every member's frame rotation, rad/s (NaN where refused).

    Examples
    --------
    Two bootstrap draws of the demo's plates, fitted together and one by one:

    >>> import torque
    >>> inputs = torque.Inputs.load("polygons_demo/world.toml")
    >>> hyp = torque.load_hypothesis("polygons_demo/hypotheses/ridge_slab_drag.toml")
    >>> omega = torque.read_motions("polygons_demo/motions.csv").for_world(inputs.world)
    >>> system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, omega))
    >>> fit = fit_velocity(system, omega)
    >>> draws = np.random.default_rng(0).integers(system.n_plates, size=(2, system.n_plates))
    >>> together = fit_velocity_many(system, omega, fit, plates=draws)
    >>> alone = [fit_velocity(system, omega, fit, plates=d).values for d in draws]
    >>> bool(np.allclose(together, alone, rtol=1e-10, atol=0))
    True
    """
    _check_fittable(system)
    omega_obs = np.asarray(omega_obs, float)
    B = (len(omega_obs) if omega_obs.ndim == 3 else len(plates) if plates is not None
         else 1)
    obs = np.broadcast_to(omega_obs, (B, *omega_obs.shape[-2:]))
    draw = [None] * B if plates is None else [np.asarray(p) for p in plates]
    out = np.full((B, len(system.labels)), np.nan)
    frames = np.full((B, 3), np.nan)
    free = system.free
    x0 = start.values[free]
    k = len(x0)
    lo, hi = system.bounds[free].T
    if free_frame and start.frame_rotation is None:
        raise ValueError("members with a free frame start from a free-frame fit")
    together = (not system.nonlinear and np.all(x0 != 0) and np.all((x0 > lo) & (x0 < hi)))
    alone = np.ones(B, bool)
    if together:
        # the scales fit_velocity takes for this start: |x0| (no coefficient is 0)
        scale = np.abs(x0)
        with np.errstate(over="ignore"):
            lo_s, hi_s = lo / scale, hi / scale
        N = 3 * system.n_plates
        w_scale = float(np.sqrt(np.mean(np.sum(obs[0] ** 2, axis=1)))) or 1.0
        x_start = x0 / scale
        if free_frame:
            x_start = np.r_[x_start, start.frame_rotation / w_scale]
            lo_s, hi_s = np.r_[lo_s, [-np.inf] * 3], np.r_[hi_s, [np.inf] * 3]
        frame = np.tile(np.eye(3), (system.n_plates, 1)) * w_scale       # (N, 3)
        chunk = max(1, 2_000_000 // (N * N))
        for a in range(0, B, chunk):
            m = np.arange(a, min(a + chunk, B))
            W = np.stack([misfit_whitening(system, obs_cov, draw[i])[0] for i in m])
            target = np.einsum("bij,bj->bi", W, obs[m].reshape(len(m), N))
            # each member's frame columns: W_m F
            x, done, _ = _velocity_gauss_newton(
                system, W, target, W @ frame if free_frame else None, scale,
                np.tile(x_start, (len(m), 1)), lo_s, hi_s)
            out[m[done]] = system.fixed
            out[m[done][:, None], np.flatnonzero(free)] = x[done, :k] * scale
            if free_frame:
                frames[m[done]] = x[done, k:] * w_scale
            alone[m[done]] = False
    for i in np.flatnonzero(alone):
        try:
            f = fit_velocity(system, obs[i], start, free_frame, plates=draw[i],
                             obs_cov=obs_cov)
        except TorqueError:
            continue
        out[i] = f.values
        if free_frame:
            frames[i] = f.frame_rotation
    return (out, frames) if free_frame else out


def on_one_blas_thread(func):
    """Decorate a function to run inside :func:`small_solves`.

    Parameters
    ----------
    func : callable

    Returns
    -------
    callable
    """
    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with small_solves():
            return func(*args, **kwargs)
    return wrapper
