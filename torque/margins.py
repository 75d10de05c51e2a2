"""Motion along plate boundaries: sampling, relative velocity, classification.

Boundaries are sampled at the midpoints of pieces no longer than a given spacing; at each
sample the relative velocity of the right plate with respect to the left one is split
into a boundary-normal part (positive when the plates move apart) and an along-strike part
(positive when the right plate moves in the direction the line is walked).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import sphere
from .euler import M_S_TO_MM_YR
from .world import Boundary, BoundarySet

#: A boundary is a transform when its mean obliquity is within this many degrees of 90.
TRANSFORM_WITHIN_DEG = 30.0
#: Distance (km) into each plate at which ages are read to decide which plate sinks.
AGE_PROBE_KM = 100.0


@dataclass(frozen=True, eq=False)
class BoundarySamples:
    """Points along the boundaries of a world.

    Attributes
    ----------
    line : ndarray of int, shape (N,)
        Index into ``world.boundaries``.
    xyz : ndarray, shape (N, 3)
    tangent : ndarray, shape (N, 3)
        Unit direction in which the line is walked.
    normal : ndarray, shape (N, 3)
        Unit vector pointing into the left plate (the arc's pole).
    length : ndarray, shape (N,)
        Length of line each sample stands for (radians on the unit sphere).
    """

    line: np.ndarray
    xyz: np.ndarray
    tangent: np.ndarray
    normal: np.ndarray
    length: np.ndarray


def sample_boundaries(boundaries, spacing_rad: float) -> BoundarySamples:
    """Split every boundary into pieces of at most ``spacing_rad`` and sample their midpoints.

    Parameters
    ----------
    boundaries : sequence of Boundary
    spacing_rad : float
        Longest piece, radians.

    Returns
    -------
    BoundarySamples
    """
    arcs = BoundarySet.from_boundaries(boundaries, {})
    pa, pb, piece = sphere.densify_arcs(arcs.a, arcs.b, spacing_rad)
    n, theta = sphere.arc_pole(pa, pb)
    mid = sphere.slerp_points(pa, pb, 0.5)
    return BoundarySamples(arcs.line[piece], mid, np.cross(n, mid), n, theta)


@dataclass(frozen=True, eq=False)
class BoundaryMotion:
    """Relative motion of the right plate with respect to the left, at boundary samples.

    ``opening_mm_yr`` is the boundary-normal component (positive apart), ``along_mm_yr`` the
    along-strike one, ``obliquity_deg`` the angle between the relative velocity and the
    opening direction (0 pure opening, 90 pure strike-slip, 180 pure closing).

    Attributes
    ----------
    samples : BoundarySamples
    opening_mm_yr, along_mm_yr : ndarray, shape (N,)
    """

    samples: BoundarySamples
    opening_mm_yr: np.ndarray
    along_mm_yr: np.ndarray

    @property
    def obliquity_deg(self) -> np.ndarray:
        return np.degrees(np.arctan2(np.abs(self.along_mm_yr), self.opening_mm_yr))

    @property
    def speed_mm_yr(self) -> np.ndarray:
        return np.hypot(self.opening_mm_yr, self.along_mm_yr)


def boundary_motion(world, omega, samples: BoundarySamples) -> BoundaryMotion:
    """Relative motion at boundary samples for plate angular velocities ``omega`` (P, 3).

    Parameters
    ----------
    world : World
    omega : ndarray, shape (P, 3)
        rad/s.
    samples : BoundarySamples
        Of ``world.boundaries``.

    Returns
    -------
    BoundaryMotion
    """
    bs = world.boundary_set
    left, right = bs.left[samples.line], bs.right[samples.line]
    v = np.cross(omega[right] - omega[left], samples.xyz) * world.radius_m * M_S_TO_MM_YR
    # the normal points into the left plate, so moving apart is along -normal
    return BoundaryMotion(samples, -sphere.dot(v, samples.normal),
                          sphere.dot(v, samples.tangent))


def classify(world, motion: BoundaryMotion, ages=None):
    """Kinds of the world's boundaries from their motion.

    A line's kind comes from its length-weighted mean relative motion: a transform if the
    mean obliquity is within :data:`TRANSFORM_WITHIN_DEG` of 90 degrees, else a ridge if it
    opens and a subduction zone if it closes. The sinking plate of a subduction zone is the
    one with the older sea floor ``AGE_PROBE_KM`` inside it (a side with no age, i.e.
    continental, does not sink); without ages on either side it is left unresolved (None).

    Parameters
    ----------
    world : World
    motion : BoundaryMotion
    ages : AgeGrid, optional

    Returns
    -------
    kinds : list of str
    sinking : list of str or None
    """
    s = motion.samples
    nb = len(world.boundaries)
    w = s.length
    opening = np.bincount(s.line, weights=w * motion.opening_mm_yr, minlength=nb)
    along = np.bincount(s.line, weights=w * motion.along_mm_yr, minlength=nb)
    obliq = np.degrees(np.arctan2(np.abs(along), opening))
    kinds = np.where(np.abs(obliq - 90.0) <= TRANSFORM_WITHIN_DEG, "transform",
                     np.where(opening > 0, "ridge", "subduction"))

    sinking: list = [None] * nb
    if ages is not None:
        off = AGE_PROBE_KM * 1e3 / world.radius_m
        left_pts = sphere.step_toward(s.xyz, s.normal, off)
        right_pts = sphere.step_toward(s.xyz, -s.normal, off)
        side_age = []
        for pts in (left_pts, right_pts):
            lon, lat = sphere.xyz_to_lonlat(pts)
            age = ages.sample(lon, lat)
            ok = np.isfinite(age)
            tot = np.bincount(s.line[ok], weights=(w * age)[ok], minlength=nb)
            wt = np.bincount(s.line[ok], weights=w[ok], minlength=nb)
            with np.errstate(invalid="ignore", divide="ignore"):
                side_age.append(np.where(wt > 0, tot / wt, np.nan))
        for k, b in enumerate(world.boundaries):
            if kinds[k] != "subduction":
                continue
            al, ar = side_age[0][k], side_age[1][k]
            if np.isfinite(al) and (not np.isfinite(ar) or al > ar):
                sinking[k] = b.left
            elif np.isfinite(ar) and (not np.isfinite(al) or ar > al):
                sinking[k] = b.right
    return [str(k) for k in kinds], sinking


def with_kinds(world, kinds, sinking, only_unclassified: bool = True) -> list:
    """Copies of the world's boundaries with new kinds (by default only where unclassified).

    Parameters
    ----------
    world : World
    kinds : sequence of str
    sinking : sequence of str or None
    only_unclassified : bool

    Returns
    -------
    list of Boundary
    """
    out = []
    for b, k, s in zip(world.boundaries, kinds, sinking):
        if only_unclassified and b.kind != "unclassified":
            out.append(b)
        else:
            out.append(Boundary(k, b.left, b.right, b.xyz, b.feature,
                                s if k == "subduction" else None, dict(b.properties)))
    return out
