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
from dataclasses import dataclass, field

import numpy as np
from scipy import linalg, optimize

from .errors import InputError, ModelError
from .parallel import small_solves

WEIGHTINGS = ("velocity", "area", "none")
CONFIDENCE = 0.95


@dataclass(frozen=True, eq=False)
class System:
    """The linear pieces of a hypothesis' torque balance on a world.

    Attributes
    ----------
    labels, kinds, units : tuple of str
    free : ndarray of bool, shape (K,)
    fixed : ndarray, shape (K,)
        Fixed coefficient values (NaN where free).
    bounds : ndarray, shape (K, 2)
    b : ndarray, shape (K, 3P)
        Motion-independent torques (N m) at coefficient 1.
    A : ndarray, shape (K, 3P, 3P)
        Torque (N m) per angular velocity (rad/s) at coefficient 1.
    D : ndarray, shape (P, 3, 3)
        Drag tensors ``int (I - r r^T) dA`` of the plates on the unit sphere.
    area : ndarray, shape (P,)
        Plate areas on the unit sphere.
    radius_m : float
    plates : tuple of str
    name : str
        The hypothesis' name.
    source : str, optional
        The hypothesis file, named in messages.
    nonlinear : tuple of (int, object)
        The terms with a part nonlinear in the motions (a rate-independent resistance),
        as ``(term index, part)``; each part has ``torque(omega)`` (P, 3) and
        ``jacobian(omega)`` (P, 3, P, 3) at coefficient 1 (see
        :class:`torque.forces.base.ForceTerm`).
    """

    labels: tuple
    kinds: tuple
    units: tuple
    free: np.ndarray
    fixed: np.ndarray
    bounds: np.ndarray
    b: np.ndarray
    A: np.ndarray
    D: np.ndarray
    area: np.ndarray
    radius_m: float
    plates: tuple
    name: str = "hypothesis"
    source: str | None = None
    nonlinear: tuple = ()

    def __repr__(self) -> str:
        return (f"System({self.name!r}, {self.n_plates} plates, terms "
                f"{list(self.labels)}, {self.n_free} free)")

    @property
    def n_plates(self) -> int:
        return len(self.plates)

    @property
    def n_free(self) -> int:
        return int(self.free.sum())

    @functools.cached_property
    def block_diagonal(self) -> bool:
        """Whether each plate's torques depend on its own motion alone (drag and mantle
        terms, no resistance between plates): the balance then splits into one 3x3
        system per plate."""
        P = self.n_plates
        between = np.kron(~np.eye(P, dtype=bool), np.ones((3, 3), dtype=bool))
        return not np.any(self.A[:, between])

    def columns(self, omega) -> np.ndarray:
        """Torque of every term at coefficient 1 for motions ``omega`` (P, 3): (3P, K).

        Parameters
        ----------
        omega : array_like, shape (P, 3)
            rad/s.

        Returns
        -------
        ndarray, shape (3P, K)
        """
        w = np.asarray(omega, float).reshape(-1)
        G = (self.b + self.A @ w).T
        for k, part in self.nonlinear:
            G[:, k] += part.torque(w.reshape(-1, 3)).ravel()
        return G

    def balance_jacobian(self, coefficients, omega) -> np.ndarray:
        """d (total torque) / d omega at the given coefficients and motions, (3P, 3P).

        Parameters
        ----------
        coefficients : array_like, shape (K,)
        omega : array_like, shape (P, 3)
            rad/s.

        Returns
        -------
        ndarray, shape (3P, 3P)
            ``sum_k c_k A_k`` plus the nonlinear parts' Jacobians.
        """
        c = np.asarray(coefficients, float)
        J = np.tensordot(c, self.A, axes=1)
        for k, part in self.nonlinear:
            if c[k] != 0:
                J = J + c[k] * part.jacobian(np.asarray(omega, float).reshape(-1, 3)
                                             ).reshape(J.shape)
        return J

    def full_coefficients(self, free_values) -> np.ndarray:
        """Every coefficient: the fixed values, with the free ones filled in.

        Parameters
        ----------
        free_values : array_like, shape (k,)
            In the order of the free terms.

        Returns
        -------
        ndarray, shape (K,)
        """
        c = self.fixed.copy()
        c[self.free] = free_values
        return c


def assemble(world, hypothesis, terms) -> System:
    """Gather the force terms of a hypothesis into a :class:`System`.

    Parameters
    ----------
    world : World
    hypothesis : Hypothesis
    terms : list of ForceTerm
        One per force entry, in order (see :func:`torque.forces.build_terms`).

    Returns
    -------
    System
    """
    P = world.geometry.n_plates
    area = world.geometry.moments[0]
    D = world.drag_tensor
    specs = [t.spec for t in terms]
    return System(
        labels=tuple(t.label for t in terms), kinds=tuple(t.kind for t in terms),
        units=tuple(t.unit for t in terms),
        free=np.array([s.free for s in specs]),
        fixed=np.array([np.nan if s.free else s.coefficient for s in specs]),
        bounds=np.array([s.bounds for s in specs], float),
        b=np.stack([t.driving.reshape(3 * P) for t in terms]),
        A=np.stack([t.resisting.reshape(3 * P, 3 * P) for t in terms]),
        D=D, area=area, radius_m=world.radius_m, plates=tuple(world.plate_names),
        name=hypothesis.name, source=hypothesis.source,
        nonlinear=tuple((k, t.nonlinear) for k, t in enumerate(terms)
                        if t.nonlinear is not None))


# ----------------------------------------------------------------------------------------
# weighting
# ----------------------------------------------------------------------------------------
def plate_weights(system: System, weighting: str = "velocity") -> np.ndarray:
    """Block-diagonal weights of the plates' torque equations, shape (3P, 3P).

    Parameters
    ----------
    system : System
    weighting : {"velocity", "area", "none"}

    Returns
    -------
    ndarray, shape (3P, 3P)
    """
    P = system.n_plates
    W = np.zeros((P, 3, P, 3))
    if weighting == "velocity":
        vals, vecs = np.linalg.eigh(system.D)
        blocks = np.einsum("pij,pj,pkj->pik", vecs, 1.0 / np.sqrt(vals), vecs)
    elif weighting == "area":
        blocks = np.eye(3)[None] / system.area[:, None, None]
    elif weighting == "none":
        blocks = np.broadcast_to(np.eye(3), (P, 3, 3))
    else:
        raise InputError(f"weighting must be one of {', '.join(WEIGHTINGS)}, got "
                         f"{weighting!r}")
    W[np.arange(P), :, np.arange(P), :] = blocks
    return W.reshape(3 * P, 3 * P)


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
    active_bounds : tuple of str
        Free coefficients at a bound.
    info : dict
        Method-specific details (weighting, evaluations).
    """

    system: System
    method: str
    values: np.ndarray
    stderr: np.ndarray
    cov: np.ndarray
    rss: float
    dof: int
    active_bounds: tuple = ()
    info: dict = field(default_factory=dict)

    def __repr__(self) -> str:
        vals = ", ".join(f"{l}={v:.4g}" for l, v in zip(self.system.labels, self.values))
        return f"Fit({self.method!r}, {vals})"


def _check_fittable(system: System):
    if not system.free.any():
        raise ModelError("the hypothesis has no free coefficient to fit", file=system.source,
                         hint='mark at least one coefficient "free"')
    if system.free.all():
        raise ModelError("every coefficient is free, so the balance is homogeneous and all "
                         "coefficients = 0 fits it perfectly", file=system.source,
                         hint="fix one coefficient (for example ridge push at 1.0) to set "
                         "the scale")
    lo, hi = system.bounds[system.free].T
    if np.any(lo > hi):
        raise ModelError("a free coefficient has bounds with low > high", file=system.source)


def _identifiability(system: System, G: np.ndarray, omega):
    """Raise InputError naming coefficients the data cannot constrain or separate.

    A column counts as empty when it is zero to rounding against the size its term could
    have: ``|b_k| + |A_k| |omega|`` (a resistance between plates that move alike, say).
    """
    free_labels = [l for l, f in zip(system.labels, system.free) if f]
    norms = np.linalg.norm(G, axis=0)
    raw = np.linalg.norm(system.columns(omega)[:, system.free], axis=0)
    size = (np.linalg.norm(system.b[system.free], axis=1)
            + np.linalg.norm(system.A[system.free], axis=(1, 2)) * np.linalg.norm(omega))
    zero = [free_labels[i] for i in np.nonzero((norms == 0) | (raw <= 1e-10 * size))[0]]
    if zero:
        raise ModelError(f"free coefficient(s) {', '.join(map(repr, zero))} have no data to "
                         "constrain them: their torque is zero on every plate",
                         file=system.source, hint="fix them, or drop the terms")
    Gn = G / norms
    _, s, vt = np.linalg.svd(Gn, full_matrices=False)
    if s[-1] < 1e-10 * s[0]:
        null = vt[-1]
        involved = [free_labels[i] for i in np.nonzero(np.abs(null) > 0.1)[0]]
        raise ModelError(f"the data cannot separate the free coefficients "
                         f"{', '.join(map(repr, involved))}: their torques are (nearly) "
                         f"proportional on every plate (condition number {s[0] / s[-1]:.1e})",
                         file=system.source, hint="fix all but one of them")


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
    dof = max(n - k, 1)
    cov = rss / dof * np.linalg.inv((G / scale).T @ (G / scale)) / np.outer(scale, scale)
    values = system.full_coefficients(x)
    stderr = np.zeros(len(values))
    stderr[system.free] = np.sqrt(np.clip(np.diag(cov), 0, None))
    free_labels = [l for l, f in zip(system.labels, system.free) if f]
    active = tuple(free_labels[i] for i in np.nonzero(res.active_mask)[0])
    return Fit(system, "torque", values, stderr, cov, rss, dof, active,
               {"weighting": weighting})


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
    >>> system = assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp))
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


def _check_determined(system: System, M):
    # singular values scale with plate area; even a plate 1e-6 of the sphere stays far above
    # this relative threshold, so only a truly free motion trips it
    s = np.linalg.svd(M, compute_uv=False)
    if s[0] == 0:
        raise ModelError("nothing in the hypothesis resists the motion of any plate: it has "
                         "no drag, mantle or boundary resistance term with a non-zero "
                         "coefficient", file=system.source,
                         hint="add a 'drag' term (region = \"all\")")
    if s[-1] > 1e-11 * s[0]:
        return
    _, _, vt = np.linalg.svd(M)
    null = vt[-1].reshape(-1, 3)
    if np.allclose(null, null[0], atol=1e-6 * np.abs(null).max()):
        raise ModelError(
            "the net rotation is undetermined: no basal drag or mantle term resists a "
            "rotation of all plates together, so any such rotation balances as well",
            file=system.source,
            hint="add a 'drag' or 'mantle' term with a non-zero coefficient")
    involved = [system.plates[i] for i in np.nonzero(np.linalg.norm(null, axis=1)
                                                    > 0.1 * np.abs(null).max())[0]]
    raise ModelError(f"the motion of plate(s) {', '.join(map(repr, involved))} is "
                     "undetermined: nothing in the hypothesis resists it (no drag over "
                     "them, and no coupling to plates that have some)", file=system.source,
                     hint="use drag over 'all', or add a boundary resistance")


def fit_velocity(system: System, omega_obs, start: Fit | None = None,
                 free_frame: bool = False, plates=None, obs_cov=None,
                 lost_dof: int = 0) -> Fit:
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
        jointly and exactly; it is returned in ``info["frame_rotation"]`` (rad/s) with its
        covariance in ``info["frame_cov"]``.
    plates : array of int, optional
        Count only these plates' misfits (for the bootstrap and cross-validation); a plate
        may be repeated, and then counts as often. The balance is still solved for all.
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        Covariance of the observed Euler vectors, (rad/s)^2: one block per plate, or the
        full matrix with the covariances between plates. Given, the fit minimises the
        chi-square ``dw^T C^-1 dw`` (generalised least squares) instead of the
        area-integrated velocity misfit, and ``Fit.info`` holds ``chi_square``,
        ``reduced_chi_square`` and ``dof`` (see :func:`misfit_whitening` for ``plates``
        with a full matrix).
    lost_dof : int
        Degrees of freedom the observations lost before the fit: 3 for motions moved to
        the no-net-rotation frame or given relative to a fixed plate (see
        :func:`rigid_constraint`). A free frame fits those same three directions, so it
        adds no parameters beyond them: ``dof = n - k - max(3 * free_frame, lost_dof)``.

    Returns
    -------
    Fit
        ``info["status"]`` is :data:`GAUSS_NEWTON_STATUS` where Gauss-Newton finished the
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
    cov_all, dof = _covariance(jacobian(x_opt) / units, rss,
                               n_obs - extra + 3 * free_frame)
    cov = cov_all[:k_free, :k_free]
    values = system.full_coefficients(x)
    stderr = np.zeros(len(values))
    stderr[free] = np.sqrt(np.clip(np.diag(cov), 0, None))
    free_labels = [l for l, f in zip(system.labels, system.free) if f]
    active = tuple(free_labels[i] for i in np.nonzero(held[:k_free])[0])
    info = {"evaluations": nfev, "status": status,
            "observations": n_obs, "effective_observations": n_obs - lost_dof,
            "parameters": k_free + extra - lost_dof}
    if obs_cov is not None:
        info.update(misfit="chi-square", chi_square=rss, dof=dof, reduced_chi_square=rss / dof)
    if free_frame:
        info["frame_rotation"] = frame(x_opt)
        info["frame_cov"] = cov_all[k_free:, k_free:]
    return Fit(system, "velocity", values, stderr, cov, rss, dof, active, info)


def fit_velocity_many(system: System, omega_obs, start: Fit, plates=None,
                      obs_cov=None) -> np.ndarray:
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

    Returns
    -------
    ndarray, shape (B, K)
        Every member's coefficients; a row of NaN where :func:`fit_velocity` refuses the
        member (InputError).

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
    free = system.free
    x0 = start.values[free]
    lo, hi = system.bounds[free].T
    together = (not system.nonlinear and np.all(x0 != 0) and np.all((x0 > lo) & (x0 < hi)))
    alone = np.ones(B, bool)
    if together:
        # the scales fit_velocity takes for this start: |x0| (no coefficient is 0)
        scale = np.abs(x0)
        with np.errstate(over="ignore"):
            lo_s, hi_s = lo / scale, hi / scale
        N = 3 * system.n_plates
        chunk = max(1, 2_000_000 // (N * N))
        for a in range(0, B, chunk):
            m = np.arange(a, min(a + chunk, B))
            W = np.stack([misfit_whitening(system, obs_cov, draw[i])[0] for i in m])
            target = np.einsum("bij,bj->bi", W, obs[m].reshape(len(m), N))
            x, done, _ = _velocity_gauss_newton(system, W, target, None, scale,
                                                np.tile(x0 / scale, (len(m), 1)), lo_s,
                                                hi_s)
            out[m[done]] = system.fixed
            out[m[done][:, None], np.flatnonzero(free)] = x[done] * scale
            alone[m[done]] = False
    for i in np.flatnonzero(alone):
        try:
            out[i] = fit_velocity(system, obs[i], start, plates=draw[i], obs_cov=obs_cov).values
        except InputError:
            pass
    return out


#: Gauss-Newton stops when its step is below this fraction of every parameter's scale.
GAUSS_NEWTON_STEP = 1e-11
GAUSS_NEWTON_MAX_STEPS = 50
#: ``Fit.info["status"]`` of a fit that Gauss-Newton finished (the others carry scipy's
#: ``least_squares`` status, 1 to 4).
GAUSS_NEWTON_STATUS = 5


def _velocity_gauss_newton(system: System, W, target, frame_cols, scale, x, lo, hi,
                           keep=None):
    """Gauss-Newton on many velocity-space misfits of one linear balance at once.

    Member ``m`` minimises ``|W_m w(c) + F_m f - t_m|^2`` over its coefficients
    ``c = x[:k] * scale`` (with the system's fixed ones) and frame ``f = x[k:]``, where
    ``w(c) = -M(c)^-1 d(c)`` solves the balance; ``dw/dc_k = -M^-1 (A_k w + b_k)``. A step
    that raises the misfit is halved, except near the minimum (steps below 1e-6 of the
    scales), where the misfit changes below its rounding. Members are stacked, so each
    step is a few batched solves (scipy's least squares takes one problem at a time).

    Parameters
    ----------
    system : System
        Linear: no nonlinear part may have a non-zero coefficient.
    W : ndarray, shape (B, N, N)
        Whitening of each member's misfit (see :func:`misfit_whitening`).
    target : ndarray, shape (B, N)
        ``W_m`` times the member's observed motions.
    frame_cols : ndarray, shape (B, N, 3), or None
        The frame's columns (already scaled), when a frame is fitted.
    scale : ndarray, shape (k,)
    x : ndarray, shape (B, k) or (B, k + 3)
        Starting points, in units of ``scale``.
    lo, hi : ndarray, shape (k,) or (k + 3,)
        Bounds in the same units.
    keep : ndarray of bool, shape like ``lo``, optional
        The parameters fitted (default all); the others stay at their starting values.

    Returns
    -------
    x : ndarray, shape like ``x``
    done : ndarray of bool, shape (B,)
        Members that converged (a full step below :data:`GAUSS_NEWTON_STEP`) inside the
        bounds; the others are left where they stopped, for a bounded method to finish.
    evaluations : ndarray of int, shape (B,)
        Balances solved for each member.
    """
    free = system.free
    k = int(free.sum())
    K, N = system.b.shape
    A_flat = system.A.reshape(K, N * N)
    A_free, b_free = system.A[free], system.b[free]
    fixed = np.where(free, 0.0, system.fixed)

    P = N // 3
    if system.block_diagonal:
        # each plate balances on its own: (K, P * 9), one 3x3 block per plate
        A_flat = system.A.reshape(K, P, 3, P, 3)[:, np.arange(P), :, np.arange(P), :]
        A_flat = A_flat.transpose(1, 0, 2, 3).reshape(K, P * 9)

    def solve(C, rhs):
        # two batched solves cost less than one batched inverse (LU against Gauss-Jordan)
        if system.block_diagonal:
            M = (C @ A_flat).reshape(-1, P, 3, 3)
            return np.linalg.solve(M, rhs.reshape(len(C), P, 3, -1)).reshape(rhs.shape)
        return np.linalg.solve((C @ A_flat).reshape(-1, N, N), rhs)

    def evaluate(x, m):
        # residuals and Jacobians of members m at their points x
        C = fixed + np.zeros((len(x), 1))
        C[:, free] = x[:, :k] * scale
        w = -solve(C, (C @ system.b)[..., None])[..., 0]
        cols = np.einsum("kij,bj->bik", A_free, w) + b_free.T          # (B, N, k)
        Jw = -solve(C, cols) * scale
        r = np.einsum("bij,bj->bi", W[m], w) - target[m]
        J = np.matmul(W[m], Jw)
        if frame_cols is not None:
            r = r + np.einsum("bij,bj->bi", frame_cols[m], x[:, k:])
            J = np.concatenate([J, frame_cols[m]], axis=2)
        return r, J

    x = np.array(x, float)
    B, n = x.shape
    keep = np.ones(n, bool) if keep is None else np.asarray(keep, bool)
    done = np.zeros(B, bool)
    live = np.ones(B, bool)
    t = np.ones(B)
    evaluations = np.ones(B, int)
    try:
        r, J = evaluate(x, np.arange(B))
    except np.linalg.LinAlgError:
        return x, done, evaluations
    rss = np.einsum("bi,bi->b", r, r)
    for _ in range(GAUSS_NEWTON_MAX_STEPS):
        idx = np.flatnonzero(live)
        if not len(idx):
            break
        Ji, ri = J[idx][:, :, keep], r[idx]
        try:
            full = np.zeros((len(idx), n))
            full[:, keep] = -np.linalg.solve(np.einsum("bik,bil->bkl", Ji, Ji),
                                             np.einsum("bik,bi->bk", Ji, ri)[..., None])[..., 0]
        except np.linalg.LinAlgError:
            break
        step = full * t[idx, None]
        x_new = x[idx] + step
        outside = np.any((x_new < lo) | (x_new > hi), axis=1)
        # a converged step is below 1e-6 of the scales, so it is taken whatever the misfit
        # does there: its end needs no evaluation (the caller evaluates the fit)
        finish = ~outside & (np.abs(full).max(axis=1) <= GAUSS_NEWTON_STEP)
        x[idx[finish]] = x_new[finish]
        done[idx[finish]] = True
        live[idx[finish | outside]] = False
        go = ~finish & ~outside
        if not go.any():
            continue
        g = idx[go]
        try:
            r_new, J_new = evaluate(x_new[go], g)
        except np.linalg.LinAlgError:
            break
        evaluations[g] += 1
        rss_new = np.einsum("bi,bi->b", r_new, r_new)
        better = (rss_new <= rss[g]) | (np.abs(step[go]).max(axis=1) <= 1e-6)
        take = g[better]
        x[take], r[take], J[take], rss[take] = (x_new[go][better], r_new[better],
                                                J_new[better], rss_new[better])
        t[take] = 1.0
        t[g[~better]] /= 2
        live[g[t[g] < 1e-6]] = False
    return x, done, evaluations


def _gauss_newton(residual, jacobian, x, keep, lo, hi):
    """Gauss-Newton on one misfit given by its residual and Jacobian functions (a nonlinear
    balance, solved by Newton's method at each point): the parameters ``keep`` from ``x``,
    the others held. (x, evaluations), x None where a step would leave the bounds or it
    does not converge (a full step below :data:`GAUSS_NEWTON_STEP`)."""
    x = np.array(x, float)
    r = residual(x)
    rss, evaluations, t = float(r @ r), 1, 1.0
    J = jacobian(x)[:, keep]
    for _ in range(GAUSS_NEWTON_MAX_STEPS):
        full = np.zeros(len(x))
        full[keep] = np.linalg.lstsq(J, -r, rcond=None)[0]
        step = t * full
        x_new = x + step
        if np.any((x_new < lo) | (x_new > hi)):
            return None, evaluations
        if np.abs(full).max() <= GAUSS_NEWTON_STEP:
            return x_new, evaluations      # taken whatever the misfit does: no evaluation
        r_new = residual(x_new)
        evaluations += 1
        rss_new = float(r_new @ r_new)
        # near the minimum the misfit changes below its rounding: take the step there
        if rss_new <= rss or np.abs(step).max() <= 1e-6:
            x, r, rss, t = x_new, r_new, rss_new, 1.0
            J = jacobian(x)[:, keep]
        else:
            t /= 2
            if t < 1e-6:
                break
    return None, evaluations


def _least_squares(residual, jacobian, x_init, keep, lo, hi):
    """scipy's bounded trust-region least squares over the parameters ``keep``, the others
    held at ``x_init``: (x, evaluations, status, at-bound mask)."""
    if not keep.any():
        return x_init.copy(), 1, 1, np.zeros(len(x_init), bool)

    def embed(y):
        x = x_init.copy()
        x[keep] = y
        return x
    res = optimize.least_squares(lambda y: residual(embed(y)), x_init[keep],
                                 jac=lambda y: jacobian(embed(y))[:, keep],
                                 bounds=(lo[keep], hi[keep]), method="trf", x_scale="jac",
                                 xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=200)
    active = np.zeros(len(x_init), bool)
    active[np.flatnonzero(keep)[res.active_mask != 0]] = True
    return embed(res.x), int(res.nfev), int(res.status), active


def _minimise_bounded(residual, jacobian, x_start, lo, hi, k_free, gauss_newton):
    """The bounded least-squares minimum, with the parameters at a bound held exactly there.

    The trust-region method keeps its iterates strictly inside the bounds, so a parameter
    whose minimum lies on a bound only approaches it, a fixed fraction of the remaining
    distance per step: dozens of steps to reach 1e-300 of its scale, never the bound itself.
    Instead the parameters (of the first ``k_free``) that start on a bound, or that the
    optimiser finds at one, are held on it and the others refitted; that point is kept if it
    satisfies the Karush-Kuhn-Tucker conditions (the misfit's gradient points out of the
    feasible box in every held parameter; Nocedal and Wright 2006, Numerical Optimization,
    sec. 12.3), else every parameter is fitted freely within the bounds.

    ``gauss_newton(x, keep)`` (x, evaluations) fits the parameters ``keep`` from ``x`` by
    Gauss-Newton, or returns x None where it does not apply (a nonlinear balance) or does
    not converge inside the bounds; it is tried before the trust-region method on each
    subproblem, and after it to go on from where the misfit stops falling (to rounding,
    up to ~1e-8 from the minimum) to where its gradient vanishes.

    Returns
    -------
    x : ndarray
    evaluations, status : int
        Residual evaluations and scipy's status of the last solve.
    held : ndarray of bool
        The parameters on a bound.
    """
    n = len(x_start)
    coef = np.arange(n) < k_free

    def kkt(x, held):
        # d(|r|^2)/dx = 2 J^T r: >= 0 at a lower bound, <= 0 at an upper one (to rounding)
        J, r = jacobian(x), residual(x)
        g = J.T @ r
        tol = 1e-10 * np.linalg.norm(J, axis=0) * np.linalg.norm(r)
        at_lo = held & (x == lo)
        return bool(np.all(g[at_lo] >= -tol[at_lo]) and np.all(g[held & ~at_lo]
                                                             <= tol[held & ~at_lo]))

    evaluations = 0

    def fit(x_init, keep):
        # Gauss-Newton where it serves, else the trust-region method and then Gauss-Newton
        nonlocal evaluations
        x, nfev = gauss_newton(x_init, keep)
        evaluations += nfev
        if x is not None:
            return x, GAUSS_NEWTON_STATUS, np.zeros(n, bool)
        x, nfev, status, active = _least_squares(residual, jacobian, x_init, keep, lo, hi)
        evaluations += nfev
        if not (active & coef).any():
            y, nfev = gauss_newton(x, keep)
            evaluations += nfev
            if y is not None:
                return y, GAUSS_NEWTON_STATUS, active
        return x, status, active

    held = coef & ((x_start == lo) | (x_start == hi))
    if held.any():
        x, status, more = fit(x_start, ~held)
        if not more.any() and kkt(x, held):
            return x, evaluations, status, held
        x_start = x
    x, status, active = fit(x_start, np.ones(n, bool))
    active &= coef
    if active.any():
        # put the parameters the optimiser left next to a bound on it, and refit the rest
        x_on = np.where(active & (np.abs(x - lo) <= np.abs(x - hi)), lo,
                        np.where(active, hi, x))
        y, status_on, more = fit(x_on, ~active)
        r_y, r_x = residual(y), residual(x)
        if not more.any() and kkt(y, active) and r_y @ r_y <= r_x @ r_x * (1 + 1e-12):
            return y, evaluations, status_on, active
    return x, evaluations, status, active


def misfit_whitening(system: System, obs_cov=None, plates=None):
    """The matrix ``W`` (3P, 3P) whose residual ``W dw`` has the misfit as squared norm.

    * no covariance: blocks ``R^2 L_p^T`` with ``L_p L_p^T = D_p``, so that ``|W dw|^2 =
      R^4 sum_p dw_p^T D_p dw_p`` (m^4/s^2), the area-integrated squared velocity misfit;
    * a covariance ``C``, per plate (P, 3, 3) or full (3P, 3P): ``W^T W = C^-1``, so that
      ``|W dw|^2`` is the chi-square.

    With ``plates`` (plate indices, repeats allowed) each plate's rows count as often as
    it is drawn. A full covariance is then marginalised to the plates kept when none is
    repeated (leave-one-out); a draw with repeats (the bootstrap) takes each plate's own
    3x3 block, since a plate drawn twice cannot be correlated with itself as with
    another.

    Parameters
    ----------
    system : System
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        (rad/s)^2.
    plates : array of int, optional

    Returns
    -------
    W : ndarray, shape (3P, 3P)
    n : int
        Number of observations counted: 3 per plate, times its count.
    """
    P = system.n_plates
    count = (np.ones(P) if plates is None
             else np.bincount(np.asarray(plates), minlength=P).astype(float))
    C = None if obs_cov is None else np.asarray(obs_cov, float)
    if C is not None and C.ndim == 2:
        if plates is None or count.max() <= 1:
            rows = np.repeat(count > 0, 3)
            sub = C[np.ix_(rows, rows)]
            sub = sub + 1e-12 * np.trace(sub) / len(sub) * np.eye(len(sub))
            W = np.zeros((3 * P, 3 * P))
            # L^-1 with L L^T = C: |L^-1 dw|^2 = dw^T C^-1 dw
            W[np.ix_(rows, rows)] = linalg.solve_triangular(
                linalg.cholesky(sub, lower=True), np.eye(len(sub)), lower=True)
            return W, int(rows.sum())
        C = covariance_blocks(C)
    blocks = (system.radius_m ** 2 * np.swapaxes(np.linalg.cholesky(system.D), 1, 2)
              if C is None else _whitening(C))
    blocks = blocks * np.sqrt(count)[:, None, None]
    W = np.zeros((P, 3, P, 3))
    W[np.arange(P), :, np.arange(P), :] = blocks
    return W.reshape(3 * P, 3 * P), 3 * int(count.sum())


def covariance_blocks(cov) -> np.ndarray:
    """Each plate's own 3x3 block of a covariance, shape (P, 3, 3).

    Parameters
    ----------
    cov : ndarray, shape (P, 3, 3) or (3P, 3P)

    Returns
    -------
    ndarray, shape (P, 3, 3)
    """
    C = np.asarray(cov, float)
    if C.ndim == 3:
        return C
    P = len(C) // 3
    return C.reshape(P, 3, P, 3)[np.arange(P), :, np.arange(P), :]


def model_error_covariance(system: System, floor_mm_yr: float) -> np.ndarray:
    """Covariance (rad/s)^2 of a model error of RMS velocity ``floor_mm_yr`` on each plate.

    The model error of plate p is taken as a random rigid rotation ``e_p``, independent
    between plates, whose velocity has mean square ``floor^2`` over the plate:
    ``E[R^2 e^T D_p e] / A_p = floor^2``. The isotropic choice (in the plate's own misfit
    measure) is ``C_p = floor^2 A_p / (3 R^2) D_p^-1``: a big plate's Euler vector is held
    more tightly, since the same error velocity needs a smaller rotation there. Added to
    the observations' covariance, it stands for what the physics leaves out (real misfits
    are mostly model error, not measurement error).

    Parameters
    ----------
    system : System
    floor_mm_yr : float
        RMS velocity of the model error over each plate, mm/yr (>= 0).

    Returns
    -------
    ndarray, shape (P, 3, 3)

    Examples
    --------
    The mean square velocity of such an error over a plate is the floor squared:

    >>> import torque
    >>> from torque.euler import M_S_TO_MM_YR
    >>> inputs = torque.Inputs.load("polygons_demo/world.toml")
    >>> hyp = torque.load_hypothesis("polygons_demo/hypotheses/ridge_drag.toml")
    >>> system = assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp))
    >>> C = model_error_covariance(system, 2.0)
    >>> ms = system.radius_m ** 2 * np.einsum("pij,pji->p", system.D, C) / system.area
    >>> np.allclose(np.sqrt(ms) * M_S_TO_MM_YR, 2.0)
    True
    """
    from .euler import M_S_TO_MM_YR
    sigma = float(floor_mm_yr) / M_S_TO_MM_YR                           # m/s
    return (sigma ** 2 * system.area[:, None, None] / (3 * system.radius_m ** 2)
            * np.linalg.inv(system.D))


def add_covariances(cov, blocks) -> np.ndarray:
    """A covariance plus per-plate blocks, in the shape of ``cov``.

    Parameters
    ----------
    cov : ndarray, shape (P, 3, 3) or (3P, 3P), or None
    blocks : ndarray, shape (P, 3, 3)

    Returns
    -------
    ndarray
        (P, 3, 3), or (3P, 3P) when ``cov`` is full.
    """
    blocks = np.asarray(blocks, float)
    if cov is None:
        return blocks
    C = np.array(cov, float)
    if C.ndim == 3:
        return C + blocks
    P = len(blocks)
    C.reshape(P, 3, P, 3)[np.arange(P), :, np.arange(P), :] += blocks
    return C


def rigid_constraint(system: System, omega_obs) -> str | None:
    """Whether the observed motions were made to satisfy three rigid-rotation constraints.

    Motions moved to the no-net-rotation frame have zero net rotation, and motions given
    relative to a fixed plate have that plate at rest: either way three of the 3P numbers
    are no observations, and the fit has three degrees of freedom fewer (common practice,
    no source).

    Parameters
    ----------
    system : System
    omega_obs : array_like, shape (P, 3)
        rad/s.

    Returns
    -------
    str or None
        ``"no-net-rotation"``, ``"plate:NAME"``, or None when neither holds.
    """
    w = np.asarray(omega_obs, float)
    size = float(np.sqrt(np.mean(np.sum(w ** 2, axis=1))))
    if size == 0:
        return None
    rest = np.nonzero(np.linalg.norm(w, axis=1) <= 1e-12 * size)[0]
    if len(rest) == 1:
        return f"plate:{system.plates[rest[0]]}"
    net = np.linalg.solve(system.D.sum(0), np.einsum("pij,pj->i", system.D, w))
    return "no-net-rotation" if np.linalg.norm(net) <= 1e-9 * size else None


def _coefficient_scales(system, omega_obs, x0) -> np.ndarray:
    """Natural size of each free coefficient: its starting value, else what balances the
    fixed terms (the optimiser works in these units)."""
    free = system.free
    G = system.columns(omega_obs)
    h = np.linalg.norm(G[:, ~free] @ system.fixed[~free])
    typical = h / np.linalg.norm(G[:, free], axis=0)
    return np.where(np.abs(x0) > 0, np.abs(x0), typical)


def _whitening(obs_cov) -> np.ndarray:
    """Blocks ``U_p^T`` (P, 3, 3) with ``U U^T = C^-1``: ``|U^T dw|^2 = dw^T C^-1 dw``
    (a vanishing covariance is kept factorisable by a jitter relative to the largest)."""
    C = np.asarray(obs_cov, float)
    C = C + 1e-12 * np.trace(C, axis1=1, axis2=2).max() * np.eye(3)
    return np.swapaxes(np.linalg.cholesky(np.linalg.inv(C)), 1, 2)


def _covariance(J, rss: float, n: int):
    """Covariance of least-squares estimates, ``rss / dof (J^T J)^-1``, and the dof."""
    k = J.shape[1]
    dof = max(n - k, 1)
    try:
        return rss / dof * np.linalg.inv(J.T @ J), dof
    except np.linalg.LinAlgError:
        return np.full((k, k), np.nan), dof


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


# ----------------------------------------------------------------------------------------
# the registry of fit methods
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class FitMethod:
    """One way of estimating the free coefficients, as :func:`torque.diagnostics.analyse`
    runs it.

    Attributes
    ----------
    name : str
        Its key in :data:`FIT_METHODS` and its ``Fit.method``.
    run : callable
        ``run(system, omega_obs, earlier, weighting) -> Fit``; ``earlier`` maps the names
        of the methods already run (in registry order) to their fits, so a method can
        start from another's result.
    describes : str
        One line for the documentation.
    frames : bool
        Whether ``run`` takes ``free_frame=True`` and then estimates the rotation of the
        observations' frame relative to the mantle (``Fit.info["frame_rotation"]``).
    covariance : bool
        Whether ``run`` takes ``obs_cov=`` (the observations' covariance, (P, 3, 3) or
        (3P, 3P)) and then minimises the chi-square.
    counts_dof : bool
        Whether ``run`` takes ``lost_dof=`` (degrees of freedom the observations lost to a
        rigid constraint) into its degrees of freedom.
    """

    name: str
    run: object
    describes: str
    frames: bool = False
    covariance: bool = False
    counts_dof: bool = False


def _run_torque(system, omega_obs, earlier, weighting):
    return fit_torque(system, omega_obs, weighting)


def _run_velocity(system, omega_obs, earlier, weighting, free_frame=False, obs_cov=None,
                  lost_dof=0):
    return fit_velocity(system, omega_obs, earlier.get("torque"), free_frame,
                        obs_cov=obs_cov, lost_dof=lost_dof)


#: Fit methods in the order :func:`torque.diagnostics.analyse` runs them. A new method is
#: one entry here (its ``run`` may use the fits of the methods before it).
FIT_METHODS = {
    "torque": FitMethod("torque", _run_torque, "bounded linear least squares of the "
                        "weighted torque balance"),
    "velocity": FitMethod("velocity", _run_velocity, "nonlinear least squares of the "
                          "area-integrated velocity misfit, or of the chi-square with the "
                          "observations' covariance (preferred)", frames=True,
                          covariance=True, counts_dof=True),
}
PREFERRED_FIT = "velocity"
