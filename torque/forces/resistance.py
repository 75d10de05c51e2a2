"""Resistance at plate boundaries proportional to the relative velocity: the kinds
``transform``, ``subduction_resistance`` and ``collision``, one per boundary kind
(``trench``, the old name of ``subduction_resistance``, is still read, with a note).

On a boundary between plates P (left) and Q (right) the force per unit length on P is
``-c (v_P - v_Q)``, or only its along-strike or boundary-normal part (``component``). Its
torque on P, on the unit sphere with ``Delta = omega_P - omega_Q``, is
``-c R^3 K Delta`` with, for each great-circle arc of length theta and pole n:
``K = theta I - int r r^T ds`` (all), ``theta n n^T`` (along strike: ``r x t = n`` is
constant along the arc), or their difference (normal). All exact. The coefficient c is in
Pa s (N per metre of boundary per m/s).

``law = "constant-stress"``: a rate-independent resistance, a shear stress of constant
magnitude (the coefficient, in Pa) on a fault of down-dip width ``fault_width_km`` (default
20), opposite the relative motion (or its along-strike or normal part). Per metre of
boundary the force on P is ``-tau W u / sqrt(|u|^2 + eps^2)`` with ``u`` the resisted part of
``v_P - v_Q`` and ``eps`` (``smoothing_mm_yr``, default 0.01 mm/yr) a regularisation that
keeps the balance differentiable where plates are locked: common practice for
rate-independent friction in numerical models (no source). The direction varies along
a boundary, so the torque is summed at the midpoints of pieces of at most
``piece_km`` (default 25 km; second order, tested). The torque balance is then nonlinear
in the motions: :func:`torque.inference.solvers.predict` solves it by Newton's method, and
the fit
works in velocity space.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from functools import cached_property

import numpy as np


from .. import polygons
from ..errors import InputError
from .base import ForceTerm, empty_term

__all__ = ["UNIT", "STRESS_UNIT", "KEYS", "CHOICES", "DEFAULTS", "POSITIVE",
           "DEFAULT_FAULT_WIDTH_KM", "build_resistance", "ConstantStress",
           "ResistanceKind", "KINDS"]

UNIT = "Pa s"
#: The coefficient's unit with law = "constant-stress": the shear stress.
STRESS_UNIT = "Pa"
KEYS = {"component": '"all" (default), "strike" or "normal": which part of the relative '
                     'velocity is resisted',
        "law": '"viscous" (default: force per length c times the relative velocity) or '
               '"constant-stress" (a shear stress of the coefficient, in Pa, opposite the '
               'motion; rate-independent)',
        "fault_width_km": "constant stress: the fault's down-dip width, km (default 20)",
        "smoothing_mm_yr": "constant stress: the regularising speed, mm/yr (default 0.01)",
        "piece_km": "constant stress: the longest piece of the midpoint sum, km (default 25)"}
CHOICES = {"component": ("all", "strike", "normal"), "law": ("viscous", "constant-stress")}
DEFAULTS = {"component": "all"}
POSITIVE = ("fault_width_km", "smoothing_mm_yr", "piece_km")
#: Fault width (km) of a constant-stress resistance where the entry gives none: about the
#: depth of the seismogenic layer (common practice, no source).
DEFAULT_FAULT_WIDTH_KM = 20.0


def build_resistance(ctx, spec, boundary_kind) -> ForceTerm:
    """The term of a resistance along the boundaries of ``boundary_kind``.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
        Its option ``component`` chooses which part of the relative velocity is resisted.
    boundary_kind : str
        ``"transform"``, ``"subduction"`` or ``"collision"``.

    Returns
    -------
    ForceTerm
        Only a resisting part: ``resisting[p, :, q, :]`` couples each pair of neighbours.
    """
    ctx.require_lines(boundary_kind, spec.label)
    if spec.options.get("law", "viscous") == "constant-stress":
        return _constant_stress(ctx, spec, boundary_kind)
    extra = sorted(set(spec.options) & {"fault_width_km", "smoothing_mm_yr", "piece_km"})
    if extra:
        raise InputError(f"{spec.label}: {', '.join(map(repr, extra))} are for a "
                         "constant-stress resistance", file=ctx.hypothesis.source,
                         hint='add law = "constant-stress", or drop them')
    arcs = ctx.world.boundary_set.of_kind(boundary_kind)
    theta, _, second, n = polygons.polyline_moments(arcs.a, arcs.b)
    strike = theta[:, None, None] * np.einsum("ei,ej->eij", n, n)
    full = theta[:, None, None] * np.eye(3) - second
    comp = spec.options["component"]
    K = {"all": full, "strike": strike, "normal": full - strike}[comp]
    left, right = arcs.arc_left, arcs.arc_right
    term = empty_term(ctx, spec, UNIT)
    scale = ctx.R ** 3
    for p, q in ((left, right), (right, left)):
        # torque on p: -c R^3 K (omega_p - omega_q)
        np.add.at(term.resisting, (p, slice(None), p, slice(None)), -scale * K)
        np.add.at(term.resisting, (p, slice(None), q, slice(None)), scale * K)
    return term


def _constant_stress(ctx, spec, boundary_kind) -> ForceTerm:
    """A rate-independent resistance: its torque is the term's nonlinear part."""
    from ..euler import M_S_TO_MM_YR
    pcs = ctx.pieces(boundary_kind, float(spec.options.get("piece_km", 25.0)))
    bs = ctx.world.boundary_set
    comp = spec.options["component"]
    width = float(spec.options.get("fault_width_km", DEFAULT_FAULT_WIDTH_KM)) * 1e3
    eps = float(spec.options.get("smoothing_mm_yr", 0.01)) / M_S_TO_MM_YR
    r = pcs.mid
    n = pcs.n
    t = np.cross(n, r)                              # along strike, the way the line runs
    if comp == "all":
        proj = np.eye(3)[None] - np.einsum("ei,ej->eij", r, r)
    elif comp == "strike":
        proj = np.einsum("ei,ej->eij", t, t)
    else:
        proj = np.einsum("ei,ej->eij", n, n)
    nl = ConstantStress(left=bs.left[pcs.line], right=bs.right[pcs.line], r=r,
                        length=pcs.theta, proj=proj, width_m=width, eps_m_s=eps,
                        radius_m=ctx.R, n_plates=ctx.world.geometry.n_plates)
    term = empty_term(ctx, spec, STRESS_UNIT, [
        f"{spec.label}: constant shear stress on a {width / 1e3:g} km wide fault, opposite "
        f"the relative motion ({comp}), regularised below {eps * M_S_TO_MM_YR:g} mm/yr, "
        f"summed over {len(pcs.theta)} pieces: the balance is nonlinear"])
    return dataclasses.replace(term, nonlinear=nl)


@dataclass(frozen=True, eq=False)
class ConstantStress:
    """The torque of a rate-independent boundary resistance at coefficient 1 (stress 1 Pa).

    On each piece (midpoint ``r``, length ``length`` on the unit sphere) the force per
    metre on the left plate is ``-W g(u)``, ``g(u) = P u / sqrt(|P u|^2 + eps^2)``, with
    ``u = R (omega_left - omega_right) x r`` and ``P`` the projection on the resisted
    part; the right plate feels the opposite.

    Attributes
    ----------
    left, right : ndarray of int, shape (N,)
    r : ndarray, shape (N, 3)
    length : ndarray, shape (N,)
    proj : ndarray, shape (N, 3, 3)
    width_m, eps_m_s, radius_m : float
    n_plates : int
    """

    left: np.ndarray
    right: np.ndarray
    r: np.ndarray
    length: np.ndarray
    proj: np.ndarray
    width_m: float
    eps_m_s: float
    radius_m: float
    n_plates: int

    @cached_property
    def _maps(self):
        """Per piece: ``B`` with ``P u = B (omega_left - omega_right)``, ``A`` with the left
        plate's torque ``A g``, and sparse sums from pieces to plates and to pairs."""
        from scipy import sparse
        X = _cross_matrices(self.r)
        B = -self.radius_m * self.proj @ X
        A = -self.width_m * self.radius_m ** 2 * self.length[:, None, None] * X
        P, n = self.n_plates, len(self.r)
        e = np.arange(n)
        # torque on plates: +1 on the left plate, -1 on the right one
        to_plates = sparse.csr_matrix((np.r_[np.ones(n), -np.ones(n)],
                                       (np.r_[self.left, self.right], np.r_[e, e])),
                                      shape=(P, n))
        pairs, inverse = np.unique(self.left * P + self.right, return_inverse=True)
        to_pairs = sparse.csr_matrix((np.ones(n), (inverse, e)), shape=(len(pairs), n))
        return B, A, to_plates, to_pairs, pairs // P, pairs % P

    def _slip(self, omega):
        B = self._maps[0]
        omega = np.asarray(omega, float).reshape(-1, 3)
        pu = np.einsum("eij,ej->ei", B, omega[self.left] - omega[self.right])
        s = np.sqrt(np.einsum("ei,ei->e", pu, pu) + self.eps_m_s ** 2)
        return pu, s

    def torque(self, omega) -> np.ndarray:
        """Torque (N m, shape (P, 3)) at stress 1 Pa for motions ``omega``.

        Parameters
        ----------
        omega : array_like, shape (P, 3)
            rad/s.

        Returns
        -------
        ndarray, shape (P, 3)
        """
        pu, s = self._slip(omega)
        A, to_plates = self._maps[1], self._maps[2]
        # the left plate's torque R^2 l r x (-W g), g = P u / s
        tq = np.einsum("eij,ej->ei", A, pu / s[:, None])
        return to_plates @ tq

    def jacobian(self, omega) -> np.ndarray:
        """d torque / d omega (N m per rad/s, shape (P, 3, P, 3)) at stress 1 Pa.

        Parameters
        ----------
        omega : array_like, shape (P, 3)
            rad/s.

        Returns
        -------
        ndarray, shape (P, 3, P, 3)
        """
        pu, s = self._slip(omega)
        B, A, _, to_pairs, p, q = self._maps
        # dg/d(delta omega) = (B - g g^T B) / s, g = P u / s
        g = pu / s[:, None]
        dg = (B - g[:, :, None] * np.einsum("ej,ejk->ek", g, B)[:, None, :]) / s[:, None, None]
        S = (to_pairs @ (A @ dg).reshape(-1, 9)).reshape(-1, 3, 3)
        P = self.n_plates
        out = np.zeros((P, 3, P, 3))
        for a, b, sign in ((p, p, 1.0), (p, q, -1.0), (q, p, -1.0), (q, q, 1.0)):
            np.add.at(out, (a, slice(None), b, slice(None)), sign * S)
        return out


def _cross_matrices(r) -> np.ndarray:
    """``[r]x`` (N, 3, 3): ``[r]x v = r x v``."""
    X = np.zeros((len(r), 3, 3))
    X[:, 0, 1], X[:, 0, 2] = -r[:, 2], r[:, 1]
    X[:, 1, 0], X[:, 1, 2] = r[:, 2], -r[:, 0]
    X[:, 2, 0], X[:, 2, 1] = -r[:, 1], r[:, 0]
    return X


@dataclass(frozen=True)
class ResistanceKind:
    """One force kind of this module, in the shape every force kind has (see
    :mod:`torque.forces`): a resistance along the boundaries of one boundary kind.

    Attributes
    ----------
    KIND : str
        The force kind's name in hypothesis files.
    boundary_kind : str
        The boundaries it acts along.
    """

    KIND: str
    boundary_kind: str
    UNIT = UNIT
    KEYS = KEYS
    CHOICES = CHOICES
    DEFAULTS = DEFAULTS
    POSITIVE = POSITIVE

    def default_label(self, options) -> str:
        """The term's label when the entry gives none: the kind.

        Parameters
        ----------
        options : dict
            The entry's options.

        Returns
        -------
        str
        """
        return self.KIND

    def build(self, ctx, spec) -> ForceTerm:
        """The :class:`ForceTerm` of one force entry of this kind.

        Parameters
        ----------
        ctx : Context
        spec : ForceSpec
            The force entry, its options' defaults filled in.

        Returns
        -------
        ForceTerm
        """
        return build_resistance(ctx, spec, self.boundary_kind)


KINDS = (ResistanceKind("transform", "transform"),
         ResistanceKind("subduction_resistance", "subduction"),
         ResistanceKind("collision", "collision"))
