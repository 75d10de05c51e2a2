"""Slab pull: a line force on the subducting plate at the trench, normal to the trench and
toward the overriding plate.

Its magnitude per metre of trench is the coefficient (the fraction of the slab's negative
buoyancy passed to the plate) times ``force_per_length`` if given, else the slab's negative
buoyancy from the cooling model, ``g L int rho_m alpha (T_m - T) dz`` for a slab of the
trench's age reaching depth ``L`` [1]_ (sec. 6-20). The trench age comes from, in order:
the line's ``slab_age_myr`` property, the age field 30 km inside the subducting plate, the
entry's ``age_myr``; the depth from the line's ``slab_depth_km``, the entry's ``depth_km``,
else 660 km. The force is constant along pieces of at most 50 km.

``mantle_part = "upper"`` or ``"lower"`` keeps only the part of the slab above or below
``split_depth_km`` (default 660): the buoyancy of a vertical slab is linear in the depth
it spans, so the two parts add up to the whole, and two entries give upper- and
lower-mantle slabs a coefficient each (upper-mantle slabs pull their plates, lower-mantle
ones act mostly through mantle flow: Conrad and Lithgow-Bertelloni 2002, *Science* 298).

Slab geometry comes per line, from the boundaries file's properties or the world's slab
table (``slabs``): ``slab_depth_km``, ``slab_dip_deg``, ``slab_age_myr`` and
``slab_attached`` (false: a detached slab, which pulls nothing).

``warming = "conductive"``: the slab warms as it sinks. Its thermal deficit decays as the
fundamental mode of a layer of thickness ``a`` whose faces are held at the mantle's
temperature, ``exp(-tau / tau_d)`` with ``tau_d = a^2 / (pi^2 kappa)`` [1]_ (ch. 4) [2]_,
``a`` the plate thickness of the plate model (``2.32 sqrt(kappa t)`` for the half-space
model), and ``tau`` the time the slab has spent in the mantle: at depth ``z`` a slab of
dip ``delta`` sinking at the convergence rate ``v`` has been down ``z / (v sin delta)``. The
pull along the slab is then ``g Q(t) int exp(-z / lambda) dz`` over the depths it spans,
with ``lambda = v sin(delta) tau_d``: ``g Q lambda (exp(-z1/lambda) - exp(-z2/lambda))``
in closed form, and the vertical slab's ``g Q L`` as ``lambda`` grows. The rate is the
motions' convergence normal to the trench at each piece (or the entry's
``convergence_mm_yr``), so the term is built at the motions given.

``direction = "convergence"``: the pull acts along the motion of the sinking plate relative
to the overriding one, where that motion converges, instead of along the trench normal.

.. [1] Turcotte, D. L. and Schubert, G. (2002). *Geodynamics*, 2nd ed., sec. 6-20 and
   ch. 4 (the decay of the fundamental mode of heat conduction in a layer; from memory).
.. [2] McKenzie, D. P. (1969). Speculations on the consequences and causes of plate
   motions. *Geophys. J. R. Astr. Soc.* 18, 1-32 (the slab's thermal time scale).
"""

from __future__ import annotations

import numpy as np

from .. import sphere
from ..errors import InputError
from ..euler import M_S_TO_MM_YR, MYR_S
from .base import ForceTerm, empty_term

__all__ = ["KIND", "UNIT", "BUOYANCY_KEYS", "KEYS", "POSITIVE", "BUOYANCY_CHOICES",
           "CHOICES", "DEFAULT_DIP_DEG", "DEFAULT_DEPTH_KM", "DEFAULT_AGE_MYR",
           "default_label", "trench_geometry", "slab_buoyancy", "convergence_m_s",
           "warming_depth_m", "build", "convergence_direction"]

KIND = "slab"
UNIT = "dimensionless"
#: Keys that describe the slab's buoyancy, shared with suction's fraction form.
BUOYANCY_KEYS = {
    "depth_km": "depth reached by the slab, km (default 660)",
    "age_myr": "slab age at the trench, Myr, where neither the line nor the age field says "
               "(default 60)",
    "force_per_length": "N/m: overrides the cooling model's slab buoyancy",
    "mantle_part": '"whole" (default), "upper" or "lower": the part of the slab above or '
                   'below split_depth_km',
    "split_depth_km": "depth between the upper and lower parts, km (default 660)",
    "warming": '"none" (default) or "conductive": the slab warms as it sinks (see the '
               'module)',
    "dip_deg": "slab dip where the line gives none, degrees (default 60)",
    "convergence_mm_yr": "warming: the convergence rate, mm/yr, instead of the motions'",
}
KEYS = {**BUOYANCY_KEYS,
        "direction": '"normal" (default: along the trench normal) or "convergence" '
                     "(along the sinking plate's motion relative to the overriding one)"}
POSITIVE = ("depth_km", "age_myr", "force_per_length", "split_depth_km", "dip_deg",
            "convergence_mm_yr")
BUOYANCY_CHOICES = {"mantle_part": ("whole", "upper", "lower"),
                    "warming": ("none", "conductive")}
CHOICES = {**BUOYANCY_CHOICES, "direction": ("normal", "convergence")}
#: Slab dip where neither the line nor the entry gives one (common practice, no source).
DEFAULT_DIP_DEG = 60.0
DEFAULT_DEPTH_KM = 660.0
#: Slab age (Myr) where neither the line, the age field nor the entry gives one: about the
#: mean age of sea floor entering trenches today (common practice, no source; from memory).
DEFAULT_AGE_MYR = 60.0


def default_label(options) -> str:
    """The term's label when the entry gives none (the kind protocol, see :mod:`torque.forces`).

    Parameters
    ----------
    options : dict
        The entry's options.

    Returns
    -------
    str
    """
    part = options.get("mantle_part", "whole")
    return KIND if part == "whole" else f"{KIND}_{part}"


def trench_geometry(ctx, label):
    """Pieces of all subduction lines, with the sinking and the overriding plate of each.

    Parameters
    ----------
    ctx : Context
    label : str
        The term's label, for the message when there is no subduction zone.

    Returns
    -------
    pieces : Pieces
    sub_left : ndarray of bool, shape (N,)
        Whether the left plate sinks at each piece.
    sinking, overriding : ndarray of int, shape (N,)
    """
    ctx.require_lines("subduction", label)
    pcs = ctx.pieces("subduction")
    bnd, bs = ctx.world.boundaries, ctx.world.boundary_set
    sub_left = np.array([b.subducting == b.left for b in bnd])[pcs.line]
    left, right = bs.left[pcs.line], bs.right[pcs.line]
    sinking = np.where(sub_left, left, right)
    overriding = np.where(sub_left, right, left)
    return pcs, sub_left, sinking, overriding


def slab_buoyancy(ctx, spec, pcs, sub_left, sinking) -> tuple[np.ndarray, list]:
    """Force per metre of trench (N/m) on every piece, and notes.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
        The force entry, its options' defaults filled in.
    pcs : Pieces
        Of the subduction lines.
    sub_left : ndarray of bool, shape (N,)
    sinking : ndarray of int, shape (N,)
        The sinking plate at each piece (named in the notes).

    Returns
    -------
    F : ndarray, shape (N,)
        N/m.
    notes : list of str
    """
    part = spec.options.get("mantle_part", "whole")
    warming = spec.options.get("warming", "none")
    bnd = ctx.world.boundaries
    attached = np.array([bool(b.properties.get("slab_attached", True)) for b in bnd])[pcs.line]
    notes = []
    if not attached.all():
        notes.append(f"{spec.label}: {int((~attached).sum())} of {len(attached)} trench "
                     "pieces have a detached slab (slab_attached = false): no pull there")
    if "force_per_length" in spec.options:
        if part != "whole" or warming != "none":
            raise InputError(f"{spec.label}: an upper or lower part, or a warming slab, needs "
                             "the slab's buoyancy from the cooling model, not "
                             "force_per_length", file=ctx.hypothesis.source,
                             hint="drop one of them")
        return np.where(attached, float(spec.options["force_per_length"]), 0.0), notes
    depth = np.array([b.properties.get("slab_depth_km",
                                       spec.options.get("depth_km", DEFAULT_DEPTH_KM))
                      for b in bnd], dtype=float)[pcs.line] * 1e3
    # the depths (m) the part spans: [z1, z2]
    split = float(spec.options.get("split_depth_km", DEFAULT_DEPTH_KM)) * 1e3
    z1 = np.where(part == "lower", np.minimum(split, depth), 0.0)
    z2 = np.minimum(depth, split) if part == "upper" else depth
    age = np.array([b.properties.get("slab_age_myr", np.nan) for b in bnd],
                   dtype=float)[pcs.line]
    need = ~np.isfinite(age)
    grid = ctx.age_grid_if_any()
    if need.any() and grid is not None:
        # the age field 30 km inside the sinking plate: the same for every physics
        def probe_ages():
            off = ctx.TRENCH_PROBE_KM * 1e3 / ctx.R
            side = np.where(sub_left, 1.0, -1.0)[:, None]
            probe = sphere.step_toward(pcs.mid, side * pcs.n, off)
            return grid.sample(*sphere.xyz_to_lonlat(probe))
        sampled = ctx.data.derived(("trench ages", id(grid), ctx.TRENCH_PROBE_KM,
                                    len(pcs.mid)), probe_ages)
        age = np.where(need, sampled, age)
        need = ~np.isfinite(age)
    if need.any():
        entry = float(spec.options.get("age_myr", DEFAULT_AGE_MYR))
        age = np.where(need, entry, age)
        names = np.array(ctx.world.plate_names, dtype=object)[np.unique(sinking[need])]
        shown = ", ".join(names[:6]) + (f" and {len(names) - 6} more" if len(names) > 6 else "")
        notes.append(f"{spec.label}: {'entry' if 'age_myr' in spec.options else 'default'} "
                     f"age {entry:g} Myr used on {int(need.sum())} of {len(age)} trench "
                     f"pieces, where {_why_no_age(ctx, grid)} (sinking plate(s) {shown})")
    if warming == "conductive":
        lam, more = warming_depth_m(ctx, spec, pcs, sub_left, age)
        notes += more
        with np.errstate(divide="ignore", invalid="ignore"):
            span = np.where(lam > 0, lam * (np.exp(-z1 / lam) - np.exp(-z2 / lam)), 0.0)
    else:
        span = z2 - z1
    F = ctx.cooling.slab_pull_lookup(age, span / 1e3)
    return np.where(attached, F, 0.0), notes


def convergence_m_s(ctx, pcs, sub_left) -> np.ndarray:
    """Velocity (m/s, shape (N, 3)) of the sinking plate relative to the overriding one at
    each piece's midpoint, from the motions given.

    Parameters
    ----------
    ctx : Context
        Its ``omega`` (rad/s) must be set.
    pcs : Pieces
    sub_left : ndarray of bool, shape (N,)

    Returns
    -------
    ndarray, shape (N, 3)
    """
    bs = ctx.world.boundary_set
    left, right = bs.left[pcs.line], bs.right[pcs.line]
    sinking = np.where(sub_left, left, right)
    overriding = np.where(sub_left, right, left)
    omega = np.asarray(ctx.omega, float)
    return ctx.R * np.cross(omega[sinking] - omega[overriding], pcs.mid)


def warming_depth_m(ctx, spec, pcs, sub_left, age_myr) -> tuple[np.ndarray, list]:
    """``lambda = v sin(delta) tau_d`` (m) at each piece: the depth over which a sinking
    slab's thermal deficit falls by e (see the module), and notes.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
    pcs : Pieces
    sub_left : ndarray of bool, shape (N,)
    age_myr : ndarray, shape (N,)
        The slab's age at the trench.

    Returns
    -------
    lam : ndarray, shape (N,)
        m; zero where the plates do not converge.
    notes : list of str
    """
    ph = ctx.hypothesis.physics
    bnd = ctx.world.boundaries
    dip = np.array([b.properties.get("slab_dip_deg",
                                     spec.options.get("dip_deg", DEFAULT_DIP_DEG))
                    for b in bnd], dtype=float)[pcs.line]
    notes = []
    if "convergence_mm_yr" in spec.options:
        v = np.full(len(pcs.theta), float(spec.options["convergence_mm_yr"]) / M_S_TO_MM_YR)
        said = f"{float(spec.options['convergence_mm_yr']):g} mm/yr (the entry's)"
    else:
        if ctx.omega is None:
            raise InputError(f"{spec.label}: a warming slab needs the convergence rate",
                             file=ctx.hypothesis.source,
                             hint="give motions, or the entry's convergence_mm_yr")
        toward = np.where(sub_left, -1.0, 1.0)[:, None] * pcs.n
        v = sphere.dot(convergence_m_s(ctx, pcs, sub_left), toward)
        apart = v <= 0
        if apart.any():
            notes.append(f"{spec.label}: {int(apart.sum())} of {len(v)} trench pieces do not "
                         "converge in the motions given: their warming slab pulls nothing")
        v = np.maximum(v, 0.0)
        said = (f"the motions' normal convergence ({v.min() * M_S_TO_MM_YR:.3g} to "
                f"{v.max() * M_S_TO_MM_YR:.3g} mm/yr)")
    if ph.model == "plate":
        a = np.full(len(v), ph.plate_thickness_km * 1e3)
    else:
        from .drag import LITHOSPHERE_FACTOR
        a = LITHOSPHERE_FACTOR * np.sqrt(ph.diffusivity * np.asarray(age_myr) * MYR_S)
    tau_d = a ** 2 / (np.pi ** 2 * ph.diffusivity)
    lam = v * np.sin(np.radians(dip)) * tau_d
    notes.append(f"{spec.label}: warming slab, decay time {tau_d.min() / MYR_S:.3g} to "
                 f"{tau_d.max() / MYR_S:.3g} Myr, rate {said}, dip {dip.min():g} to "
                 f"{dip.max():g} degrees: e-folding depth {lam.min() / 1e3:.3g} to "
                 f"{lam.max() / 1e3:.3g} km")
    return lam, notes


def _why_no_age(ctx, grid) -> str:
    """Why the age field gives no age at a trench, in words."""
    if ctx.data.ages is not None:
        return (f"the age grid has no age {ctx.TRENCH_PROBE_KM:g} km inside the sinking plate "
                "(continental or outside its ocean)")
    if grid is not None:
        return ("ages are synthesised from ridges and the sinking plate has no opening ridge "
                "(or none near)")
    if ctx.omega is None:
        return "the world has no age grid, and no motions were given to synthesise ages"
    return "the world has no age grid and no ridges to synthesise ages from"


def build(ctx, spec) -> ForceTerm:
    """The :class:`~torque.forces.base.ForceTerm` of one force entry of this kind.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
        The force entry, its options' defaults filled in.

    Returns
    -------
    ForceTerm
    """
    pcs, sub_left, sinking, _ = trench_geometry(ctx, spec.label)
    F, notes = slab_buoyancy(ctx, spec, pcs, sub_left, sinking)
    # n points into the left plate; toward the overriding plate is -n if the left one sinks
    sign = np.where(sub_left, -1.0, 1.0)
    if spec.options.get("direction", "normal") == "convergence":
        d, note = convergence_direction(ctx, spec, pcs, sub_left, sign[:, None] * pcs.n)
        term = empty_term(ctx, spec, UNIT, notes + [note])
        tq = ctx.R ** 2 * np.cross(pcs.m, F[:, None] * d)
        np.add.at(term.driving, sinking, tq)
        return term
    term = empty_term(ctx, spec, UNIT, notes)
    term.driving[:] = ctx.line_force_torque(pcs, F, sign, sinking)
    return term


def convergence_direction(ctx, spec, pcs, sub_left, toward) -> tuple[np.ndarray, str]:
    """Unit direction (N, 3) of the sinking plate's motion relative to the overriding one,
    the trench normal ``toward`` where the plates do not converge; and a note.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
    pcs : Pieces
    sub_left : ndarray of bool, shape (N,)
    toward : ndarray, shape (N, 3)
        Trench normal toward the overriding plate.

    Returns
    -------
    direction : ndarray, shape (N, 3)
    note : str
    """
    if ctx.omega is None:
        raise InputError(f"{spec.label}: direction = \"convergence\" needs the plates' "
                         "motions", file=ctx.hypothesis.source,
                         hint='give motions, or use direction = "normal"')
    v = convergence_m_s(ctx, pcs, sub_left)
    speed = np.linalg.norm(v, axis=1)
    ok = (sphere.dot(v, toward) > 0) & (speed > 0)
    d = np.where(ok[:, None], v / np.where(speed > 0, speed, 1.0)[:, None], toward)
    angle = np.degrees(np.arccos(np.clip(sphere.dot(d, toward), -1, 1)))
    note = (f"{spec.label}: pull along the convergence direction of the motions given, "
            f"{np.median(angle):.3g} degrees from the trench normal (median; at most "
            f"{angle.max():.3g})" + (f"; the trench normal on {int((~ok).sum())} pieces that "
                                      "do not converge" if not ok.all() else ""))
    return d, note
