"""Great-circle arcs indexed for fast queries: their lon/lat bounding boxes
(:func:`arc_boxes`) in a shapely STRtree, and the distance from points to the nearest arc
(:class:`ArcIndex`), exact on the sphere. Used to check boundaries against plate edges and
to derive boundaries from shared edges.
"""

from __future__ import annotations

import numpy as np
import shapely

from . import sphere

__all__ = ["arc_boxes", "ArcIndex"]


def arc_boxes(a, b):
    """Shapely lon/lat boxes (degrees) of arcs, split at the antimeridian.

    Use in a frame that keeps arcs off the poles (``PlateLocator.frame``). Returns the boxes
    and the arc each belongs to.

    Parameters
    ----------
    a, b : ndarray, shape (E, 3)
        Unit vectors, in the frame of the boxes.

    Returns
    -------
    boxes : ndarray of shapely Polygon
    owner : ndarray of int
    """
    lo, hi, _, la, lb = sphere.arc_lonlat_box(a, b)
    owner = np.arange(len(a))
    # pieces that run past +/-180 get a second box on the other side
    wrap_lo, wrap_hi = lo < -180.0, hi > 180.0
    boxes = [shapely.box(np.maximum(lo, -180.0), la, np.minimum(hi, 180.0), lb)]
    owners = [owner]
    if wrap_lo.any():
        boxes.append(shapely.box(lo[wrap_lo] + 360.0, la[wrap_lo], 180.0, lb[wrap_lo]))
        owners.append(owner[wrap_lo])
    if wrap_hi.any():
        boxes.append(shapely.box(-180.0, la[wrap_hi], hi[wrap_hi] - 360.0, lb[wrap_hi]))
        owners.append(owner[wrap_hi])
    return np.concatenate(boxes), np.concatenate(owners)


class ArcIndex:
    """Great-circle arcs split into short pieces, with a k-d tree of the pieces' midpoints,
    to find the arcs near points quickly; distances are then exact point-to-arc distances.

    Parameters
    ----------
    a, b : ndarray, shape (E, 3)
        Unit vectors: the arcs' ends.
    step_rad : float
        Longest piece (radians).

    Attributes
    ----------
    pa, pb : ndarray, shape (K, 3)
        The pieces' ends.
    owner : ndarray of int, shape (K,)
        The arc of each piece.
    """

    def __init__(self, a, b, step_rad: float = np.radians(0.1)):
        self.pa, self.pb, self.owner = sphere.densify_arcs(a, b, step_rad)
        self.half = 0.5 * np.linalg.norm(self.pa - self.pb, axis=1).max() if len(
            self.pa) else 0.0
        from scipy.spatial import cKDTree
        self.tree = cKDTree(sphere.normalize(self.pa + self.pb)) if len(self.pa) else None

    def __repr__(self) -> str:
        return f"ArcIndex({len(self.pa)} pieces of {len(np.unique(self.owner))} arcs)"

    def pairs(self, points, reach: float):
        """Candidate (point, piece) pairs: every piece that may lie within ``reach``.

        Parameters
        ----------
        points : ndarray, shape (N, 3)
        reach : float
            Radians.

        Returns
        -------
        v, e : ndarray of int
            Point and piece indices of the pairs.
        """
        if self.tree is None or not len(points):
            return np.zeros(0, np.int64), np.zeros(0, np.int64)
        cand = self.tree.query_ball_point(points, r=2 * np.sin(reach / 2) + self.half + 1e-12)
        counts = np.array([len(c) for c in cand], dtype=np.int64)
        v = np.repeat(np.arange(len(points)), counts)
        e = (np.concatenate([np.asarray(c, dtype=np.int64) for c in cand]) if len(v)
             else np.zeros(0, np.int64))
        return v, e

    def distance(self, points, reach: float) -> np.ndarray:
        """Exact distance (radians) from each point to the nearest arc, ``inf`` beyond
        ``reach``.

        Parameters
        ----------
        points : ndarray, shape (N, 3)
        reach : float

        Returns
        -------
        ndarray, shape (N,)
        """
        v, e = self.pairs(points, reach)
        out = np.full(len(points), np.inf)
        np.minimum.at(out, v, sphere.point_arc_distance(points[v], self.pa[e], self.pb[e]))
        return out
