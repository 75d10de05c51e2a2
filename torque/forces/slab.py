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

.. [1] Turcotte, D. L. and Schubert, G. (2002). *Geodynamics*, 2nd ed., sec. 6-20.
"""

from __future__ import annotations

import numpy as np

from .. import sphere
from ..errors import InputError
from .base import ForceTerm, empty_term

KIND = "slab"
UNIT = "dimensionless"
KEYS = {
    "depth_km": "depth reached by the slab, km (default 660)",
    "age_myr": "slab age at the trench, Myr, where neither the line nor the age field says "
               "(default 60)",
    "force_per_length": "N/m: overrides the cooling model's slab buoyancy",
    "mantle_part": '"whole" (default), "upper" or "lower": the part of the slab above or '
                   'below split_depth_km',
    "split_depth_km": "depth between the upper and lower parts, km (default 660)",
}
POSITIVE = ("depth_km", "age_myr", "force_per_length", "split_depth_km")
CHOICES = {"mantle_part": ("whole", "upper", "lower")}
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
    if "force_per_length" in spec.options:
        if part != "whole":
            raise InputError(f"{spec.label}: an upper or lower part needs the slab's "
                             "buoyancy from the cooling model, not force_per_length",
                             file=ctx.hypothesis.source, hint="drop one of them")
        return np.full(len(pcs.theta), float(spec.options["force_per_length"])), []
    bnd = ctx.world.boundaries
    depth = np.array([b.properties.get("slab_depth_km",
                                       spec.options.get("depth_km", DEFAULT_DEPTH_KM))
                      for b in bnd], dtype=float)[pcs.line]
    if part != "whole":
        split = float(spec.options.get("split_depth_km", DEFAULT_DEPTH_KM))
        depth = np.minimum(depth, split) if part == "upper" else np.maximum(depth - split, 0)
    age = np.array([b.properties.get("slab_age_myr", np.nan) for b in bnd],
                   dtype=float)[pcs.line]
    notes = []
    need = ~np.isfinite(age)
    grid = ctx.age_grid_if_any()
    if need.any() and grid is not None:
        off = ctx.TRENCH_PROBE_KM * 1e3 / ctx.R
        side = np.where(sub_left, 1.0, -1.0)[:, None]
        probe = sphere.step_toward(pcs.mid, side * pcs.n, off)
        lon, lat = sphere.xyz_to_lonlat(probe)
        age = np.where(need, grid.sample(lon, lat), age)
        need = ~np.isfinite(age)
    if need.any():
        entry = float(spec.options.get("age_myr", DEFAULT_AGE_MYR))
        age = np.where(need, entry, age)
        names = np.array(ctx.world.plate_names, dtype=object)[np.unique(sinking[need])]
        shown = ", ".join(names[:6]) + (f" and {len(names) - 6} more" if len(names) > 6 else "")
        notes.append(f"{spec.label}: {'entry' if 'age_myr' in spec.options else 'default'} "
                     f"age {entry:g} Myr used on {int(need.sum())} of {len(age)} trench "
                     f"pieces, where {_why_no_age(ctx, grid)} (sinking plate(s) {shown})")
    return ctx.cooling.slab_pull_lookup(age, depth), notes


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
    term = empty_term(ctx, spec, UNIT, notes)
    term.driving[:] = ctx.line_force_torque(pcs, F, sign, sinking)
    return term
