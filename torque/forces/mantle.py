"""Drag by an imposed mantle flow: traction ``C (v_mantle - v_plate)`` on the plate's base.

The part from the plate's own motion is the exact ``-C R^4 D omega`` of
:mod:`torque.forces.drag`. The flow is split into its best-fitting rigid rotation ``w``
(least squares over the grid, :func:`rigid_part`) and the rest: the rigid part drags each
plate exactly, ``C R^4 D w`` through the same drag tensors, and only the rest,
``C R^3 int r x (v_mantle - w x R r) dA`` on the unit sphere, is summed over the nodes of
the flow grid (a discretisation: each node stands for its cell, and belongs to the plate
and region that hold the node). So a plate moving with a rigidly turning mantle feels no
torque at any grid step.
"""

from __future__ import annotations

import numpy as np

from .. import sphere
from ..euler import M_S_TO_MM_YR, vector_to_pole
from .base import ForceTerm, empty_term
from .drag import CHOICES, DEFAULTS, region_notes, resisting_blocks  # noqa: F401

__all__ = ["KIND", "UNIT", "KEYS", "default_label", "build", "rigid_part"]

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
    xyz = sphere.lonlat_to_xyz(*np.meshgrid(grid.lon, grid.lat))        # (nlat, nlon, 3)
    east, north = sphere.east_north(xyz)
    v = (grid.ve_mm_yr[..., None] * east + grid.vn_mm_yr[..., None] * north) / M_S_TO_MM_YR
    cells = grid.cell_areas()
    w = rigid_part(xyz, v, cells) / ctx.R                              # rad/s
    # the remainder, v - w x R r, summed on the grid: zero for a rigidly rotating mantle
    rest = v - ctx.R * np.cross(w, xyz)
    rxv = np.cross(xyz, rest) * (cells * mask)[..., None]
    P = ctx.world.geometry.n_plates
    drv = np.stack([np.bincount(plate.ravel(), weights=rxv[..., k].ravel(), minlength=P)
                    for k in range(3)], axis=1) * ctx.R ** 3
    blocks = resisting_blocks(ctx, region)
    rms = float(np.sqrt(np.sum(cells[..., None] * rest ** 2) / cells.sum()) * M_S_TO_MM_YR)
    lat, lon, rate = vector_to_pole(w)
    term = empty_term(ctx, spec, UNIT, [
        f"{spec.label}: mantle flow from {grid.source}, {len(grid.lat)} x {len(grid.lon)} "
        f"nodes; its rigid rotation (pole {float(lat):.2f} N, {float(lon):.2f} E, "
        f"{float(rate):.4g} deg/Myr) acts exactly through the drag tensors, the rest (RMS "
        f"{rms:.3g} mm/yr) is summed on the grid", *region_notes(ctx, spec)])
    # the rigid part exactly: a mantle turning at w drags each plate as -blocks @ w would
    # resist the plate turning at w
    term.driving[:] = drv - np.einsum("piqj,j->pi", blocks, w)
    term.resisting[:] = blocks
    return term


def rigid_part(xyz, v, weights) -> np.ndarray:
    """The rigid rotation closest to a velocity field on the unit sphere, least squares.

    Minimises ``sum_i a_i |v_i - w x r_i|^2``: the normal equations are
    ``(sum a (I - r r^T)) w = sum a r x v``.

    Parameters
    ----------
    xyz : ndarray, shape (..., 3)
        Unit vectors of the nodes.
    v : ndarray, shape (..., 3)
        Velocities at the nodes (tangent; any unit).
    weights : ndarray, shape (...)
        Cell areas.

    Returns
    -------
    ndarray, shape (3,)
        The rotation, in the unit of ``v`` per unit radius.

    Examples
    --------
    >>> xyz = sphere.lonlat_to_xyz(*np.meshgrid(np.arange(-175, 180, 10.0),
    ...                                         np.arange(-85, 90, 10.0)))
    >>> w = np.array([0.1, -0.2, 0.3])
    >>> np.allclose(rigid_part(xyz, np.cross(w, xyz), np.cos(np.radians(
    ...     np.arange(-85, 90, 10.0)))[:, None] * np.ones((1, 36))), w)
    True
    """
    a = np.asarray(weights, float)[..., None]
    r = xyz.reshape(-1, 3)
    aw = a.reshape(-1, 1)
    N = (aw.sum() * np.eye(3) - np.einsum("ni,nj->ij", aw * r, r))
    rhs = (aw * np.cross(r, v.reshape(-1, 3))).sum(0)
    return np.linalg.solve(N, rhs)
