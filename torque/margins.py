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

__all__ = ["TRANSFORM_WITHIN_DEG", "AGE_PROBE_KM", "BoundarySamples",
           "sample_boundaries", "BoundaryMotion", "boundary_motion", "classify",
           "with_kinds", "SAME_AGE_MYR", "MIN_RUN_KM", "classify_pieces"]

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
    start, end : ndarray, shape (N, 3)
        Ends of the piece each sample stands for (consecutive pieces of a line meet).
    """

    line: np.ndarray
    xyz: np.ndarray
    tangent: np.ndarray
    normal: np.ndarray
    length: np.ndarray
    start: np.ndarray | None = None
    end: np.ndarray | None = None


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
    return BoundarySamples(arcs.line[piece], mid, np.cross(n, mid), n, theta, pa, pb)


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
        side_age = []
        for age in _side_ages(world, s, ages):
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


#: Sea floor on the two sides of a convergent boundary whose mean ages differ by less than
#: this (Myr) is of one age: which side sinks is left unresolved, not guessed.
SAME_AGE_MYR = 1.0

#: Stretches of a line shorter than this (km) take the kind of their neighbours when lines
#: are classified piece by piece, so that a kind does not flicker along a line.
MIN_RUN_KM = 50.0


def _side_ages(world, samples, ages):
    """Ages (Myr) ``AGE_PROBE_KM`` inside the left and the right plate at every sample."""
    off = AGE_PROBE_KM * 1e3 / world.radius_m
    out = []
    for sign in (1.0, -1.0):
        lon, lat = sphere.xyz_to_lonlat(sphere.step_toward(samples.xyz, sign * samples.normal,
                                                           off))
        out.append(ages.sample(lon, lat))
    return out


def _runs(kind, line, length, min_len):
    """Runs of equal kind within each line, short runs merged into a neighbour.

    Returns ``(start, stop, kind)`` lists over sample indices (stop exclusive). Runs merge
    only within a line, so the work is done line by line (samples come line by line).
    """
    out = []
    bounds = np.r_[0, np.nonzero(line[1:] != line[:-1])[0] + 1, len(line)]
    for s0, s1 in zip(bounds[:-1], bounds[1:]):
        k = kind[s0:s1]
        cuts = np.r_[0, np.nonzero(k[1:] != k[:-1])[0] + 1, len(k)] + s0
        runs = [[int(a), int(b), str(kind[a])] for a, b in zip(cuts[:-1], cuts[1:])]
        while len(runs) > 1:       # merge the shortest short run into its longer neighbour
            lens = [float(length[a:b].sum()) for a, b, _ in runs]
            r = int(np.argmin(lens))
            if lens[r] >= min_len:
                break
            q = max((x for x in (r - 1, r + 1) if 0 <= x < len(runs)), key=lambda x: lens[x])
            runs[q] = [min(runs[q][0], runs[r][0]), max(runs[q][1], runs[r][1]), runs[q][2]]
            del runs[r]
            merged = [runs[0]]                 # neighbours of one kind that now touch
            for x in runs[1:]:
                if x[2] == merged[-1][2]:
                    merged[-1][1] = x[1]
                else:
                    merged.append(x)
            runs = merged
        out += runs
    return out


def classify_pieces(world, motion: BoundaryMotion, ages=None, min_run_km: float = MIN_RUN_KM):
    """Kinds of the world's unclassified boundaries, piece by piece, lines split where their
    kind changes.

    Each sample takes the kind of its own relative motion: a transform within
    :data:`TRANSFORM_WITHIN_DEG` of pure strike-slip, else a ridge where it opens and a
    convergent boundary where it closes. Runs shorter than ``min_run_km`` take the kind of
    their longer neighbour. Along a convergent run the plate with the older sea floor
    ``AGE_PROBE_KM`` inside it sinks (a subduction zone); where neither side has sea floor
    it is a collision; without ages, or with sea floor of one age (within
    :data:`SAME_AGE_MYR`) on both sides, the sinking plate is left unresolved (None).

    Parameters
    ----------
    world : World
    motion : BoundaryMotion
        At samples of ``world.boundaries`` (with their piece ends, from
        :func:`sample_boundaries`).
    ages : AgeGrid, optional
    min_run_km : float

    Returns
    -------
    boundaries : list of Boundary
        Lines already classified, as they were; every unclassified line cut into runs of one
        kind (its properties copied to each piece).
    sample_line : ndarray of int, shape (N,)
        The new line of every sample.
    """
    s = motion.samples
    obliq = motion.obliquity_deg
    kind = np.where(np.abs(obliq - 90.0) <= TRANSFORM_WITHIN_DEG, "transform",
                    np.where(motion.opening_mm_yr > 0, "ridge", "convergent"))
    given = np.array([b.kind != "unclassified" for b in world.boundaries])
    kind = np.where(given[s.line], "given", kind)
    runs = _runs(kind, s.line, s.length, min_run_km / (world.radius_m / 1e3))
    al = ar = None
    if ages is not None:
        al, ar = _side_ages(world, s, ages)
    out, sample_line, done = [], np.empty(len(s.line), np.int64), set()
    for a, b, k in runs:
        src = int(s.line[a])
        old = world.boundaries[src]
        if k == "given":
            if src not in done:
                done.add(src)
                out.append(old)
            sample_line[a:b] = len(out) - 1
            continue
        sink = None
        if k == "convergent":
            k = "subduction"
            if al is not None:
                w = s.length[a:b]
                mean = [np.nansum(w * x[a:b]) / w[np.isfinite(x[a:b])].sum()
                        if np.isfinite(x[a:b]).any() else np.nan for x in (al, ar)]
                if not np.isfinite(mean).any():
                    k = "collision"               # closing with no sea floor on either side
                elif not np.isfinite(mean[1]) or mean[0] > mean[1] + SAME_AGE_MYR:
                    sink = old.left
                elif not np.isfinite(mean[0]) or mean[1] > mean[0] + SAME_AGE_MYR:
                    sink = old.right              # (sea floor of one age: not guessed)
        xyz = np.concatenate([s.start[a:a + 1], s.end[a:b]])
        out.append(Boundary(k, old.left, old.right, xyz, old.feature, sink,
                            dict(old.properties)))
        sample_line[a:b] = len(out) - 1
    return out, sample_line
