"""Sea-floor ages made from ridges and spreading rates, when the world has no age grid.

The age of a point of a plate is its distance to the nearest ridge of that plate divided
by the plate's half spreading rate (half the length-weighted mean opening rate of its
ridges, from the motions). Plates with no ridge, or whose ridges do not open, get no age
(NaN), and so no distributed ridge push. Nodes on continents get no age either. Ages are
capped at the grid's 300 Myr limit.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from ..errors import InputError
from ..euler import MYR_S
from ..grids import MAX_AGE_MYR, AgeGrid

__all__ = ["ridge_distance_ages", "synthesise_ages"]


def ridge_distance_ages(xyz, ridge_xyz, half_rate_m_s: float, radius_m: float,
                        max_age_myr: float = MAX_AGE_MYR) -> np.ndarray:
    """Sea-floor age at points from their distance to the nearest ridge point.

    Parameters
    ----------
    xyz : ndarray, shape (N, 3)
        Unit vectors of the points.
    ridge_xyz : ndarray, shape (M, 3)
        Unit vectors of points along the ridges.
    half_rate_m_s : float
        Half spreading rate, m/s.
    radius_m : float
    max_age_myr : float
        Ages are capped here.

    Returns
    -------
    ndarray, shape (N,)
        ``distance / half rate`` in Myr, the distance along the great circle to the nearest
        ridge point (a k-d tree on chords, ``scipy.spatial.cKDTree``).
    """
    d, _ = cKDTree(ridge_xyz).query(xyz)
    angle = 2.0 * np.arcsin(np.clip(d / 2.0, 0.0, 1.0))
    return np.minimum(angle * radius_m / half_rate_m_s / MYR_S, max_age_myr)


def synthesise_ages(ctx):
    """The synthesised :class:`AgeGrid` and notes on how it was made.

    Parameters
    ----------
    ctx : Context
        Needs motions (``ctx.omega``) and ridge boundaries.

    Returns
    -------
    grid : AgeGrid
        On a ``ctx.SYNTH_STEP_DEG`` cell-centred grid, NaN where no age.
    notes : tuple of str
        How it was made, per plate.
    """
    world = ctx.world
    if ctx.omega is None:
        raise InputError("no age grid in the world, and no motions to make one from ridges "
                         "and spreading rates", file=world.paths.get("world"),
                         hint="add 'ages' to the world file, or pass --motions")
    ridges = ctx.lines("ridge")
    if not ridges:
        raise InputError("no age grid in the world, and no ridge boundaries to make one from",
                         file=world.paths.get("world"),
                         hint="add 'ages' to the world file, or classify the boundaries")
    from ..margins import boundary_motion, sample_boundaries
    step = ctx.SYNTH_STEP_DEG
    lon = np.arange(-180.0 + step / 2, 180.0, step)
    lat = np.arange(-90.0 + step / 2, 90.0, step)
    grid = AgeGrid(lon, lat, np.full((len(lat), len(lon)), np.nan), "synthesised")
    plate = ctx.node_plates(grid)
    xyz = ctx.node_xyz(grid)

    bnd = [world.boundaries[k] for k in ridges]
    samples = sample_boundaries(bnd, 10e3 / ctx.R)
    sub = type(world)(world.plates, world.geometry, tuple(bnd), world.radius_m)
    motion = boundary_motion(sub, ctx.omega, samples)
    w = samples.length
    age = grid.age_myr
    notes = []
    bs = sub.boundary_set
    left, right = bs.left[samples.line], bs.right[samples.line]
    for p in world.plates:
        mine = (left == p.index) | (right == p.index)
        if not mine.any():
            notes.append(f"{p.name}: no ridge, no synthesised age")
            continue
        rate = float(np.sum(w[mine] * motion.opening_mm_yr[mine]) / np.sum(w[mine]))
        if rate <= 1e-3:
            notes.append(f"{p.name}: its ridges do not open, no synthesised age")
            continue
        half_m_s = rate / 2.0 / 1e3 / (MYR_S / 1e6)
        nodes = plate == p.index
        age[nodes] = ridge_distance_ages(xyz[nodes], samples.xyz[mine], half_m_s, ctx.R)
        notes.append(f"{p.name}: half rate {rate / 2:.1f} mm/yr")
    cont = ctx.node_continental(grid)
    age[cont] = np.nan
    header = (f"sea-floor ages synthesised from ridges and half spreading rates on a {step:g} "
              "degree grid (no age grid in the world)")
    return grid, (header, *notes)
