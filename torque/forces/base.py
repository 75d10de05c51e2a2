"""The common shape of every force kind: :class:`ForceTerm` and boundary :class:`Pieces`.

Force modules import from here (and from :mod:`torque.forces.context`), never from the
package itself, so imports inside ``torque.forces`` run one way: base -> context -> kinds ->
the registry in ``__init__``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["ForceTerm", "empty_term", "Pieces"]


@dataclass(frozen=True, eq=False)
class ForceTerm:
    """The torque of one force entry on every plate, per unit coefficient.

    Attributes
    ----------
    label, kind : str
    spec : ForceSpec
    unit : str
        Unit of the coefficient.
    driving : ndarray, shape (P, 3)
        Torque (N m) independent of the plates' motion.
    resisting : ndarray, shape (P, 3, P, 3)
        Torque (N m) per angular velocity (rad/s): ``resisting[p, :, q, :] @ omega[q]`` is
        the torque on plate p from the motion of plate q.
    notes : tuple of str
        How the term was computed where a user should know (e.g. synthesised ages).
    nonlinear : object, optional
        A part that is not linear in the motions (a rate-independent resistance): it has
        ``torque(omega) -> (P, 3)`` and ``jacobian(omega) -> (P, 3, P, 3)``, both at
        coefficient 1 (see :class:`torque.forces.resistance.ConstantStress`). The torque
        balance is then solved by Newton's method.
    """

    label: str
    kind: str
    spec: object
    unit: str
    driving: np.ndarray
    resisting: np.ndarray
    notes: tuple = ()
    nonlinear: object = None

    def __repr__(self) -> str:
        moving = ", velocity-dependent" if self.velocity_dependent else ""
        return (f"ForceTerm({self.label!r}, kind {self.kind!r}, {self.driving.shape[0]} "
                f"plates, unit {self.unit!r}{moving})")

    @property
    def n_plates(self) -> int:
        return self.driving.shape[0]

    @property
    def velocity_dependent(self) -> bool:
        return self.nonlinear is not None or bool(np.any(self.resisting != 0))

    def torque(self, omega=None) -> np.ndarray:
        """Torque (N m, shape (P, 3)) at coefficient 1 for angular velocities ``omega``.

        Parameters
        ----------
        omega : array_like, shape (P, 3), optional
            rad/s; needed for a velocity-dependent term.

        Returns
        -------
        ndarray, shape (P, 3)
        """
        if omega is None:
            if self.velocity_dependent:
                raise ValueError(f"term {self.label!r} depends on plate motion")
            return self.driving.copy()
        out = self.driving + np.einsum("piqj,qj->pi", self.resisting, omega)
        if self.nonlinear is not None:
            out = out + self.nonlinear.torque(np.asarray(omega, float))
        return out


def empty_term(ctx, spec, unit, notes=()):
    """A term of zero torque to fill in: every kind's ``build`` starts here.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
    unit : str
        Of the coefficient.
    notes : sequence of str

    Returns
    -------
    ForceTerm
        ``driving`` (P, 3) and ``resisting`` (P, 3, P, 3) of zeros.
    """
    P = ctx.world.geometry.n_plates
    notes = tuple(notes) + ((spec.note,) if getattr(spec, "note", None) else ())
    return ForceTerm(spec.label, spec.kind, spec, unit, np.zeros((P, 3)),
                     np.zeros((P, 3, P, 3)), notes)


@dataclass(frozen=True, eq=False)
class Pieces:
    """Boundary arcs split into short pieces: geometry and ownership.

    ``line`` indexes ``ctx.world.boundaries``; ``n`` is the left-hand unit normal (pointing
    into the left plate); ``m`` is ``int r ds`` over the piece; ``theta`` its length
    (radians); ``mid`` its midpoint.

    Attributes
    ----------
    a, b : ndarray, shape (N, 3)
        Ends of each piece.
    line : ndarray of int, shape (N,)
    n : ndarray, shape (N, 3)
    m : ndarray, shape (N, 3)
    theta : ndarray, shape (N,)
    mid : ndarray, shape (N, 3)
    """

    a: np.ndarray
    b: np.ndarray
    line: np.ndarray
    n: np.ndarray
    m: np.ndarray
    theta: np.ndarray
    mid: np.ndarray
