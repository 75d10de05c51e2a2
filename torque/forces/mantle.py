"""Drag by an imposed mantle flow: traction ``C (v_mantle - v_plate)`` on the plate's base.

The part from the plate's own motion is the exact ``-C R^4 D omega`` of
:mod:`torque.forces.drag`; the part from the mantle flow, ``C R^3 int r x v_mantle dA`` on
the unit sphere, is summed over the nodes of the flow grid (a discretisation: each node
stands for its cell, and belongs to the plate and region that hold the node).
"""

from __future__ import annotations

import numpy as np

from ..euler import M_S_TO_MM_YR
from .base import ForceTerm, empty_term
from .drag import CHOICES, DEFAULTS, region_notes, resisting_blocks  # noqa: F401

KIND = "mantle"
UNIT = "Pa s/m"
KEYS = {"region": '"all" (default), "ocean" or "continent"'}


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
    region = options.get("region", "all")
    return KIND if region == "all" else f"{KIND}_{region}"


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
    region = spec.options["region"]
    grid = ctx.flow
    plate = ctx.node_plates(grid)
    mask = np.ones(plate.shape, bool)
    if region != "all":
        cont = ctx.node_continental(grid)
        mask = cont if region == "continent" else ~cont
        ctx.drag_tensor(region)   # the same error as drag if there are no continents
    lam = np.radians(grid.lon)[None, :]
    phi = np.radians(grid.lat)[:, None]
    ve = grid.ve_mm_yr / M_S_TO_MM_YR
    vn = grid.vn_mm_yr / M_S_TO_MM_YR
    area = grid.cell_areas() * mask
    # r x v = r x (ve e_hat + vn n_hat) = ve n_hat - vn e_hat
    a = -vn * area   # along e_hat
    b = ve * area    # along n_hat
    sl, cl, sp, cp = np.sin(lam), np.cos(lam), np.sin(phi), np.cos(phi)
    comps = (-a * sl - b * sp * cl, a * cl - b * sp * sl, b * cp + 0 * a)
    P = ctx.world.geometry.n_plates
    drv = np.stack([np.bincount(plate.ravel(), weights=c.ravel(), minlength=P)
                    for c in comps], axis=1) * ctx.R ** 3
    blocks = resisting_blocks(ctx, region)
    term = empty_term(ctx, spec, UNIT, [f"{spec.label}: mantle flow from {grid.source}, "
                                        f"{len(grid.lat)} x {len(grid.lon)} nodes",
                                        *region_notes(ctx, spec)])
    term.driving[:] = drv
    term.resisting[:] = blocks
    return term
