"""Exact integrals over spherical polygons and along polylines, and which points lie in
them (the arcs themselves are :mod:`torque.sphere`).

Everything here lives on the **unit sphere**; callers apply the radius at the edge
(an area in m^2 is ``area * R**2``, a second moment ``second * R**2``, and so on).

Polygons are stored as concatenated rings of unit vectors, shape ``(V, 3)``, with offsets
``ring_start`` of shape ``(R + 1,)``; ring ``r`` is ``xyz[ring_start[r]:ring_start[r + 1]]``,
*not* closed (the last vertex joins the first by an arc). Every edge is the shorter
great-circle arc between consecutive vertices, and a ring bounds the region on its **left**
as walked, seen from outside the sphere.

The integrals are exact boundary identities, evaluated edge by edge in closed form:

* area, from Gauss-Bonnet: the region left of a ring of great-circle arcs has area
  ``2*pi - sum(turning angles)``;
* first moment, ``int r dA = 1/2 oint r x dr`` (the rotation field ``c x r`` is smooth on the
  whole sphere, so Stokes' theorem needs no reference point), which for an arc of angle theta
  with unit pole ``n`` is ``theta * n / 2``;
* second moment, ``int r r^T dA = A I / 3 + 1/6 sum(n m^T + m n^T)`` with
  ``m = int r ds = tan(theta/2) (a + b)`` along each arc; this follows from
  ``int Y dA = -(1/6) oint dY/dnu ds`` for the degree-2 harmonics ``Y = r_i r_j - delta_ij/3``
  and the fact that the outward normal of an arc is ``-n``, constant along it.

References
----------
.. [1] do Carmo, M. P. (1976). *Differential Geometry of Curves and Surfaces*, sec. 4-5
   (Gauss-Bonnet theorem).
.. [2] Van Oosterom, A. and Strackee, J. (1983). The solid angle of a plane triangle.
   *IEEE Trans. Biomed. Eng.* 30(2), 125-126.
"""

from __future__ import annotations

import numpy as np

from .sphere import (FOUR_PI, angle_between, arc_first_moment, arc_pole, arc_second_moment,
                     cross, dot)

__all__ = ["ring_next", "ring_index", "ring_left_area", "region_moments", "drag_tensor", "ring_perimeter", "points_left_of_rings", "polyline_moments"]


# ----------------------------------------------------------------------------------------
# rings and polygons
# ----------------------------------------------------------------------------------------
def ring_next(ring_start) -> np.ndarray:
    """Index of the next vertex of every vertex (cyclic within each ring), shape (V,).

    Parameters
    ----------
    ring_start : array_like of int, shape (R + 1,)
        Offsets of the rings in the concatenated vertices.

    Returns
    -------
    ndarray of int, shape (V,)
    """
    ring_start = np.asarray(ring_start)
    nxt = np.arange(1, ring_start[-1] + 1)
    nxt[ring_start[1:] - 1] = ring_start[:-1]
    return nxt


def ring_index(ring_start) -> np.ndarray:
    """Ring number of every vertex, shape (V,).

    Parameters
    ----------
    ring_start : array_like of int, shape (R + 1,)
        Offsets of the rings in the concatenated vertices.

    Returns
    -------
    ndarray of int, shape (V,)
    """
    ring_start = np.asarray(ring_start)
    return np.repeat(np.arange(len(ring_start) - 1), np.diff(ring_start))


def _ring_edge_terms(xyz, ring_start):
    """Per-edge quantities shared by the ring integrals (edge i runs from vertex i to next).

    Returns the unit poles ``n`` (E, 3), angles ``theta`` (E,), line moments
    ``m = int r ds`` (E, 3) and the turning angle at each vertex (E,).
    """
    nxt = ring_next(ring_start)
    a, b = xyz, xyz[nxt]
    c = cross(a, b)
    s = np.sqrt(dot(c, c))
    d = dot(a, b)
    theta = np.arctan2(s, d)
    with np.errstate(invalid="ignore", divide="ignore"):
        n = np.where(s[:, None] > 0, c / s[:, None], 0.0)
    m = (s / (1.0 + d))[:, None] * (a + b)
    prev = np.empty_like(nxt)
    prev[nxt] = np.arange(len(nxt))
    n_in = n[prev]                          # pole of the edge arriving at each vertex
    # turning angle: signed angle from the incoming to the outgoing pole, about the vertex
    turn = np.arctan2(dot(xyz, cross(n_in, n)), dot(n_in, n))
    return n, theta, m, turn


def _left_area_from_turns(turn, ring_start):
    per_ring = np.add.reduceat(turn, np.asarray(ring_start)[:-1]) if len(turn) else turn
    return np.mod(2.0 * np.pi - per_ring, FOUR_PI)


def ring_left_area(xyz, ring_start) -> np.ndarray:
    """Area (steradians) of the region on the left of each ring, in ``[0, 4 pi)``.

    Gauss-Bonnet for a region bounded by geodesics: ``A = 2 pi - sum(turning angles)``; the
    turning angle at a vertex is the signed angle from the pole of the incoming arc to the
    pole of the outgoing arc, about the vertex.

    Parameters
    ----------
    xyz : ndarray, shape (V, 3)
    ring_start : ndarray of int, shape (R + 1,)

    Returns
    -------
    area : ndarray, shape (R,)

    Examples
    --------
    The equator walked eastward bounds the northern hemisphere:

    >>> from torque.sphere import lonlat_to_xyz

    >>> ring = lonlat_to_xyz([0.0, 120.0, 240.0], [0.0, 0.0, 0.0])
    >>> float(ring_left_area(ring, [0, 3])[0] / np.pi)
    2.0
    """
    xyz = np.asarray(xyz, dtype=float)
    return _left_area_from_turns(_ring_edge_terms(xyz, ring_start)[3], ring_start)


def region_moments(xyz, ring_start, ring_owner, ring_is_hole, n_owner: int):
    """Exact area, first and second moments of regions bounded by great-circle rings.

    Each region (a plate, say) is a set of rings, all oriented with the region on their
    left: the outer ring of every polygon part, and its holes walked so that the hole is on
    their right. The region's area is the sum of the left areas of its rings minus 4 pi per
    hole; the moments are sums of closed-form edge terms (see the module notes).

    Parameters
    ----------
    xyz : ndarray, shape (V, 3)
        Unit vectors.
    ring_start : ndarray of int, shape (R + 1,)
    ring_owner : ndarray of int, shape (R,)
        Region of each ring, in ``range(n_owner)``.
    ring_is_hole : ndarray of bool, shape (R,)
    n_owner : int

    Returns
    -------
    area : ndarray, shape (n_owner,)
        ``int dA`` in steradians.
    first : ndarray, shape (n_owner, 3)
        ``int r dA``.
    second : ndarray, shape (n_owner, 3, 3)
        ``int r r^T dA``. The drag tensor is ``area * I - second``.

    Notes
    -----
    Cost is linear in the number of vertices, with no grid and no quadrature.

    Examples
    --------
    The northern hemisphere: area 2 pi, ``int r dA = (0, 0, pi)``.

    >>> from torque.sphere import lonlat_to_xyz

    >>> ring = lonlat_to_xyz([0.0, 120.0, 240.0], [0.0, 0.0, 0.0])
    >>> area, first, second = region_moments(ring, [0, 3], [0], [False], 1)
    >>> np.round(first / np.pi, 12)
    array([[0., 0., 1.]])
    """
    xyz = np.asarray(xyz, dtype=float)
    ring_start = np.asarray(ring_start)
    ring_owner = np.asarray(ring_owner)
    n, theta, m, turn = _ring_edge_terms(xyz, ring_start)
    # One pass over the edges: sum, per ring, the turning angles (area), theta n / 2 (first
    # moment) and the six distinct entries of n m^T + m n^T (second moment).
    i, j = np.triu_indices(3)
    terms = np.concatenate([turn[:, None], 0.5 * theta[:, None] * n,
                            n[:, i] * m[:, j] + m[:, i] * n[:, j]], axis=1)
    per_ring = np.add.reduceat(terms, ring_start[:-1], axis=0)
    left = np.mod(2.0 * np.pi - per_ring[:, 0], FOUR_PI)
    per_ring[:, 0] = left - FOUR_PI * np.asarray(ring_is_hole, dtype=float)
    per_owner = np.zeros((n_owner, terms.shape[1]))
    np.add.at(per_owner, ring_owner, per_ring)
    area = per_owner[:, 0]
    first = per_owner[:, 1:4]
    second = np.empty((n_owner, 3, 3))
    second[:, i, j] = per_owner[:, 4:] / 6.0
    second[:, j, i] = per_owner[:, 4:] / 6.0
    second += area[:, None, None] / 3.0 * np.eye(3)
    return area, first, second


def drag_tensor(area, second) -> np.ndarray:
    """``int (I - r r^T) dA`` of regions from their area and second moment.

    Parameters
    ----------
    area : array_like, shape (P,)
        Areas on the unit sphere (steradians).
    second : array_like, shape (P, 3, 3)
        ``int r r^T dA`` on the unit sphere.

    Returns
    -------
    ndarray, shape (P, 3, 3)
        The basal drag tensor on the unit sphere: a plate turning at ``omega`` over a
        mantle at rest, with traction ``-C v``, feels the torque ``-C R^4 D omega``.

    Examples
    --------
    The whole sphere: ``int r r^T dA = (4 pi / 3) I``, so ``D = (8 pi / 3) I``.

    >>> D = drag_tensor([4 * np.pi], [4 * np.pi / 3 * np.eye(3)])
    >>> np.allclose(D[0], 8 * np.pi / 3 * np.eye(3))
    True
    """
    area = np.asarray(area, float)
    return area[..., None, None] * np.eye(3) - np.asarray(second, float)


def ring_perimeter(xyz, ring_start) -> np.ndarray:
    """Length (radians on the unit sphere) of each ring, shape (R,).

    Parameters
    ----------
    xyz : ndarray, shape (V, 3)
        Vertices of all rings, concatenated (unit vectors).
    ring_start : array_like of int, shape (R + 1,)

    Returns
    -------
    ndarray, shape (R,)
    """
    nxt = ring_next(ring_start)
    theta = angle_between(xyz, np.asarray(xyz)[nxt])
    return np.add.reduceat(theta, np.asarray(ring_start)[:-1])


def points_left_of_rings(points, xyz, ring_start, left_area=None) -> np.ndarray:
    """Whether each point lies in the region on the left of each ring (exact, for few points).

    The signed solid angles of the triangles ``(q, a_i, a_{i+1})`` [2]_ sum to the ring's
    left area ``L`` or to ``L - 4 pi``; the sum jumps by ``4 pi`` only where ``q`` crosses
    the ring's antipodal image (the branch cut of the arctangent). Taking ``q = -p``, the sum
    is ``L - 4 pi`` exactly when ``p`` is on the left. Cost is ``points x vertices``; use
    :class:`torque.locate.PlateLocator` for many points. The test is ill-conditioned only
    for a point on the ring itself.

    Parameters
    ----------
    points : ndarray, shape (n_points, 3)
        Unit vectors.
    xyz : ndarray, shape (V, 3)
        Vertices of all rings, concatenated.
    ring_start : array_like of int, shape (R + 1,)
    left_area : ndarray, shape (R,), optional
        Each ring's left area, if already known (see :func:`ring_left_area`).

    Returns
    -------
    inside : ndarray of bool, shape (n_points, R)
    """
    points = np.atleast_2d(np.asarray(points, dtype=float))
    xyz = np.asarray(xyz, dtype=float)
    if left_area is None:
        left_area = ring_left_area(xyz, ring_start)
    nxt = ring_next(ring_start)
    a, b = xyz, xyz[nxt]
    q = -points
    triple = q @ np.cross(a, b).T                                        # (P, V)
    denom = 1.0 + q @ a.T + dot(a, b)[None, :] + q @ b.T
    omega = 2.0 * np.arctan2(triple, denom)
    fan = np.add.reduceat(omega, np.asarray(ring_start)[:-1], axis=1)    # (P, R)
    return np.abs(fan - (left_area[None, :] - FOUR_PI)) < 2.0 * np.pi


def polyline_moments(a, b):
    """Closed-form line integrals along arcs ``a -> b`` ``(E, 3)`` on the unit sphere.

    Parameters
    ----------
    a, b : ndarray, shape (E, 3)
        Unit vectors: the arcs' ends.

    Returns
    -------
    length : ndarray, shape (E,)
        ``int ds`` (radians).
    first : ndarray, shape (E, 3)
        ``int r ds``.
    second : ndarray, shape (E, 3, 3)
        ``int r r^T ds``.
    pole : ndarray, shape (E, 3)
        Left-hand unit normal of each arc (constant along it).
    """
    pole, length = arc_pole(a, b)
    return length, arc_first_moment(a, b), arc_second_moment(a, b), pole
