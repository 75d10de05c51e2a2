"""The torque balance of a hypothesis on a world as arrays (:class:`System`), the
weighting of its equations, and the checks that it can be fitted and solved.

Plates do not accelerate, so on every plate the torques of all force terms sum to zero:
``sum_k c_k (b_k + A_k omega) = 0`` (3 equations per plate), with ``b_k`` the
motion-independent torques and ``A_k`` the torque per angular velocity of term k (see
:class:`torque.forces.ForceTerm`). How it is fitted and solved: :mod:`torque.inference.solvers`.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from ..errors import InputError, ModelError
from ..euler import net_rotation

__all__ = ["WEIGHTINGS", "System", "assemble", "plate_weights", "rigid_constraint"]

WEIGHTINGS = ("velocity", "area", "none")


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
    net = net_rotation(system.D, w)
    return "no-net-rotation" if np.linalg.norm(net) <= 1e-9 * size else None


def _coefficient_scales(system, omega_obs, x0) -> np.ndarray:
    """Natural size of each free coefficient: its starting value, else what balances the
    fixed terms (the optimiser works in these units)."""
    free = system.free
    G = system.columns(omega_obs)
    h = np.linalg.norm(G[:, ~free] @ system.fixed[~free])
    typical = h / np.linalg.norm(G[:, free], axis=0)
    return np.where(np.abs(x0) > 0, np.abs(x0), typical)
