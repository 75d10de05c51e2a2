"""Vectors and great-circle arcs on the unit sphere: coordinates, bases, arc poles and
moments, densified and intersected arcs, distances to arcs.

Everything here lives on the **unit sphere**; callers apply the radius at the edge.
Integrals over whole polygons (areas, moments, drag tensors, point-in-polygon) are in
:mod:`torque.polygons`, built on these arcs.
"""

from __future__ import annotations

import numpy as np

__all__ = ["FOUR_PI", "lonlat_to_xyz", "xyz_to_lonlat", "normalize", "cross", "dot",
           "angle_between", "east_north", "step_toward", "arc_pole", "arc_first_moment",
           "arc_second_moment", "slerp_points", "densify_arcs", "arc_lat_range",
           "arc_lonlat_box", "arcs_cross", "point_arc_distance"]

FOUR_PI = 4.0 * np.pi


# ----------------------------------------------------------------------------------------
# coordinates
# ----------------------------------------------------------------------------------------
def lonlat_to_xyz(lon_deg, lat_deg) -> np.ndarray:
    """Unit vectors from longitude and latitude in degrees.

    Parameters
    ----------
    lon_deg, lat_deg : array_like, broadcastable, shape (...)

    Returns
    -------
    xyz : ndarray, shape (..., 3)
        Earth-centred axes: x to (0 E, 0 N), y to (90 E, 0 N), z to the north pole.

    Examples
    --------
    >>> lonlat_to_xyz(90.0, 0.0).round(12)
    array([0., 1., 0.])
    """
    lon = np.radians(np.asarray(lon_deg, dtype=float))
    lat = np.radians(np.asarray(lat_deg, dtype=float))
    lon, lat = np.broadcast_arrays(lon, lat)
    cl = np.cos(lat)
    return np.stack([cl * np.cos(lon), cl * np.sin(lon), np.sin(lat)], axis=-1)


def xyz_to_lonlat(xyz) -> tuple[np.ndarray, np.ndarray]:
    """Longitude in [-180, 180] and latitude in [-90, 90], degrees, of vectors ``(..., 3)``.

    The vectors need not be unit length.

    Parameters
    ----------
    xyz : array_like, shape (..., 3)

    Returns
    -------
    lon, lat : ndarray, shape (...)
        Degrees.
    """
    xyz = np.asarray(xyz, dtype=float)
    x, y, z = xyz[..., 0], xyz[..., 1], xyz[..., 2]
    lon = np.degrees(np.arctan2(y, x))
    lat = np.degrees(np.arctan2(z, np.hypot(x, y)))
    return lon, lat


def normalize(v) -> np.ndarray:
    """``v / |v|`` along the last axis.

    Parameters
    ----------
    v : array_like, shape (..., 3)

    Returns
    -------
    ndarray, shape (..., 3)
    """
    v = np.asarray(v, dtype=float)
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


def cross(a, b) -> np.ndarray:
    """Row-wise cross product of ``(N, 3)`` arrays (faster than ``np.cross`` for long rows).

    Parameters
    ----------
    a, b : ndarray, shape (N, 3)

    Returns
    -------
    ndarray, shape (N, 3)
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    if a.ndim != 2 or b.ndim != 2 or a.shape != b.shape:
        return np.cross(a, b)
    a0, a1, a2 = a[:, 0], a[:, 1], a[:, 2]
    b0, b1, b2 = b[:, 0], b[:, 1], b[:, 2]
    return np.stack([a1 * b2 - a2 * b1, a2 * b0 - a0 * b2, a0 * b1 - a1 * b0], axis=1)


def dot(a, b) -> np.ndarray:
    """Row-wise dot product of ``(..., 3)`` arrays.

    Parameters
    ----------
    a, b : array_like, shape (..., 3)

    Returns
    -------
    ndarray, shape (...)
    """
    return np.einsum("...i,...i->...", a, b)


def angle_between(a, b) -> np.ndarray:
    """Angle in radians between unit vectors, accurate at 0 and pi.

    Parameters
    ----------
    a, b : array_like, shape (..., 3)
        Unit vectors.

    Returns
    -------
    ndarray, shape (...)
        Radians, from ``atan2(|a x b|, a . b)``.
    """
    return np.arctan2(np.linalg.norm(np.cross(a, b), axis=-1), dot(a, b))


def east_north(xyz) -> tuple[np.ndarray, np.ndarray]:
    """Local unit east and north vectors at points.

    Parameters
    ----------
    xyz : array_like, shape (..., 3)
        Unit vectors. At a pole, where east is undefined, east is taken along +y (the
        direction of longitude 90 E), so that north is then along -x or +x.

    Returns
    -------
    east, north : ndarray, shape (..., 3)

    Examples
    --------
    >>> e, n = east_north([1.0, 0.0, 0.0])        # lon 0, lat 0
    >>> e.tolist(), n.tolist()
    ([0.0, 1.0, 0.0], [0.0, 0.0, 1.0])
    """
    xyz = np.asarray(xyz, dtype=float)
    east = np.cross([0.0, 0.0, 1.0], xyz)
    en = np.linalg.norm(east, axis=-1, keepdims=True)
    east = np.where(en > 1e-15, east / np.where(en > 0, en, 1.0), [0.0, 1.0, 0.0])
    return east, np.cross(xyz, east)


def step_toward(xyz, tangent, angle) -> np.ndarray:
    """Points a given angle away from ``xyz`` along the great circle in direction ``tangent``.

    Used to step off a boundary into the plate on one side (``tangent`` the arc's pole,
    which points into its left plate) or the other (``-tangent``).

    Parameters
    ----------
    xyz : array_like, shape (..., 3)
        Unit vectors.
    tangent : array_like, shape (..., 3)
        Unit vectors perpendicular to ``xyz``.
    angle : float or array_like, shape (...)
        Radians on the unit sphere (distance / radius).

    Returns
    -------
    ndarray, shape (..., 3)
        ``cos(angle) xyz + sin(angle) tangent``, unit vectors.

    Examples
    --------
    >>> p = step_toward([1.0, 0.0, 0.0], [0.0, 0.0, 1.0], np.pi / 2)   # to the north pole
    >>> np.round(p, 12).tolist()
    [0.0, 0.0, 1.0]
    """
    angle = np.asarray(angle, float)[..., None]      # one angle per point, or one for all
    return np.cos(angle) * np.asarray(xyz, float) + np.sin(angle) * np.asarray(tangent, float)


# ----------------------------------------------------------------------------------------
# arcs
# ----------------------------------------------------------------------------------------
def arc_pole(a, b) -> tuple[np.ndarray, np.ndarray]:
    """Unit pole ``n = a x b / |a x b|`` and angle ``theta`` of the arcs ``a -> b``.

    The pole is the left-hand normal of the arc: at every point of the arc it is the unit
    tangent vector pointing to the left of the direction of travel. Zero-length arcs get
    ``n = 0`` and ``theta = 0``, so they add nothing to any integral.

    Parameters
    ----------
    a, b : array_like, shape (..., 3)
        Unit vectors: the start and end of each arc.

    Returns
    -------
    n : ndarray, shape (..., 3)
    theta : ndarray, shape (...)
    """
    c = np.cross(a, b)
    s = np.linalg.norm(c, axis=-1)
    theta = np.arctan2(s, dot(a, b))
    with np.errstate(invalid="ignore", divide="ignore"):
        n = np.where(s[..., None] > 0, c / s[..., None], 0.0)
    return n, theta


def arc_first_moment(a, b) -> np.ndarray:
    """``int r ds`` along the arcs ``a -> b`` on the unit sphere: ``tan(theta/2) (a + b)``.

    Parameters
    ----------
    a, b : array_like, shape (..., 3)
        Unit vectors: the start and end of each arc.

    Returns
    -------
    ndarray, shape (..., 3)
    """
    s = np.linalg.norm(np.cross(a, b), axis=-1)
    return (s / (1.0 + dot(a, b)))[..., None] * (np.asarray(a) + np.asarray(b))


def arc_second_moment(a, b) -> np.ndarray:
    """``int r r^T ds`` along the arcs ``a -> b`` on the unit sphere, shape ``(..., 3, 3)``.

    With ``r(t) = a cos t + u sin t`` and ``u = n x a``, the integral over ``0 <= t <= theta``
    is ``a a^T (theta/2 + sin 2theta/4) + u u^T (theta/2 - sin 2theta/4)
    + (a u^T + u a^T) sin^2(theta)/2``.

    Parameters
    ----------
    a, b : array_like, shape (..., 3)
        Unit vectors: the start and end of each arc.

    Returns
    -------
    ndarray, shape (..., 3, 3)
    """
    n, theta = arc_pole(a, b)
    u = np.cross(n, a)
    s2 = np.sin(2.0 * theta) / 4.0
    caa = theta / 2.0 + s2
    cuu = theta / 2.0 - s2
    cau = np.sin(theta) ** 2 / 2.0
    aa = np.einsum("...i,...j->...ij", a, a)
    uu = np.einsum("...i,...j->...ij", u, u)
    au = np.einsum("...i,...j->...ij", a, u)
    return (caa[..., None, None] * aa + cuu[..., None, None] * uu
            + cau[..., None, None] * (au + np.swapaxes(au, -1, -2)))


def slerp_points(a, b, fractions) -> np.ndarray:
    """Points at the given fractions (0..1) of the way along the arcs ``a -> b``.

    ``a``, ``b`` and ``fractions`` broadcast against each other (``a``, ``b`` with a trailing
    axis of 3).

    Parameters
    ----------
    a, b : array_like, shape (..., 3)
        Unit vectors: the arcs' ends.
    fractions : array_like, shape (...)
        0 at ``a``, 1 at ``b``.

    Returns
    -------
    ndarray, shape (..., 3)
        Unit vectors.
    """
    n, theta = arc_pole(a, b)
    u = np.cross(n, a)
    t = np.asarray(fractions, dtype=float) * theta
    return np.cos(t)[..., None] * a + np.sin(t)[..., None] * u


def densify_arcs(a, b, max_angle: float):
    """Split arcs ``a -> b`` ``(E, 3)`` into pieces no longer than ``max_angle`` radians.

    Parameters
    ----------
    a, b : ndarray, shape (E, 3)
        Unit vectors.
    max_angle : float
        Longest piece, radians.

    Returns
    -------
    pa, pb : ndarray, shape (P, 3)
        Start and end of every piece, in order.
    owner : ndarray of int, shape (P,)
        Index of the arc each piece belongs to.
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    _, theta = arc_pole(a, b)
    k = np.maximum(1, np.ceil(theta / max_angle).astype(np.int64))
    owner = np.repeat(np.arange(len(a)), k)
    first = np.cumsum(k) - k
    j = np.arange(owner.size) - first[owner]
    # the original vertices bit for bit, so shared edges stay shared; points in between
    # only for arcs cut in several pieces
    pa, pb = a[owner], b[owner]
    cut = np.flatnonzero(k[owner] > 1)
    if len(cut):
        oc, jc, kc = owner[cut], j[cut], k[owner[cut]]
        inner = jc > 0
        pa[cut[inner]] = slerp_points(a[oc[inner]], b[oc[inner]], jc[inner] / kc[inner])
        inner = jc < kc - 1
        pb[cut[inner]] = slerp_points(a[oc[inner]], b[oc[inner]],
                                      (jc[inner] + 1) / kc[inner])
    return pa, pb, owner


def arc_lat_range(a, b, pole=None) -> tuple[np.ndarray, np.ndarray]:
    """Exact minimum and maximum latitude (radians) reached along the arcs ``a -> b``.

    A great-circle arc can rise above both of its end points; its highest point is where the
    arc meets the meridian plane of its pole, ``e = z - (z.n) n`` (normalised).

    Parameters
    ----------
    a, b : array_like, shape (..., 3)
        Unit vectors: the start and end of each arc.
    pole : ndarray, shape (..., 3), optional
        The arcs' unit poles (:func:`arc_pole`), when the caller has them.

    Returns
    -------
    lat_min, lat_max : ndarray, shape (...)
        Radians.
    """
    n = arc_pole(a, b)[0] if pole is None else pole
    lat_a = np.arcsin(np.clip(a[..., 2], -1, 1))
    lat_b = np.arcsin(np.clip(b[..., 2], -1, 1))
    lo = np.minimum(lat_a, lat_b)
    hi = np.maximum(lat_a, lat_b)
    z = np.array([0.0, 0.0, 1.0])
    e = z - n[..., 2:3] * n
    en = np.linalg.norm(e, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        e = e / en[..., None]
    lat_e = np.arcsin(np.clip(e[..., 2], -1, 1))
    for sign in (1.0, -1.0):
        es = sign * e
        on_arc = (dot(cross(a, es), n) >= 0) & (dot(cross(es, b), n) >= 0) & (en > 0)
        if sign > 0:
            hi = np.where(on_arc, np.maximum(hi, lat_e), hi)
        else:
            lo = np.where(on_arc, np.minimum(lo, -lat_e), lo)
    return lo, hi


def arc_lonlat_box(a, b, pole=None):
    """Longitude span and latitude range (degrees) of arcs ``a -> b``.

    Returns ``lo, hi, dlon, lat_lo, lat_hi``: the arc runs from longitude ``lo`` to ``hi``
    (``hi - lo = |dlon| < 180``, possibly outside [-180, 180]) and ``dlon`` is the signed
    change of longitude along it. Longitude is monotone along an arc that passes no pole,
    so the box is exact there; near a pole the caller must widen it.

    Parameters
    ----------
    a, b : ndarray, shape (E, 3)
        Unit vectors.
    pole : ndarray, shape (E, 3), optional
        The arcs' unit poles, when the caller has them.

    Returns
    -------
    lo, hi, dlon, lat_lo, lat_hi : ndarray, shape (E,)
        Degrees.
    """
    lon_a, _ = xyz_to_lonlat(a)
    lon_b, _ = xyz_to_lonlat(b)
    dlon = np.mod(lon_b - lon_a + 180.0, 360.0) - 180.0
    lat_lo, lat_hi = (np.degrees(t) for t in arc_lat_range(a, b, pole))
    return lon_a + np.minimum(dlon, 0.0), lon_a + np.maximum(dlon, 0.0), dlon, lat_lo, lat_hi


def arcs_cross(a1, b1, a2, b2) -> np.ndarray:
    """Whether the arcs ``a1 -> b1`` and ``a2 -> b2`` cross at an interior point.

    Each arc's end points must lie strictly on opposite sides of the other arc's great
    circle; the two circles then meet at ``+/- x``, and the arcs cross when both contain the
    same one of the two (the one on the side of each arc's midpoint direction).
    Touching at an end point does not count. All arcs shorter than pi.

    Parameters
    ----------
    a1, b1, a2, b2 : array_like, shape (..., 3)
        Unit vectors: two sets of arcs, broadcast against each other.

    Returns
    -------
    ndarray of bool, shape (...)
    """
    n1 = np.cross(a1, b1)
    n2 = np.cross(a2, b2)
    s_a2 = dot(n1, a2)
    s_b2 = dot(n1, b2)
    s_a1 = dot(n2, a1)
    s_b1 = dot(n2, b1)
    straddle = (s_a2 * s_b2 < 0) & (s_a1 * s_b1 < 0)
    x = np.cross(n1, n2)
    same = np.sign(dot(x, a1 + b1)) == np.sign(dot(x, a2 + b2))
    return straddle & same


def point_arc_distance(p, a, b) -> np.ndarray:
    """Angular distance (radians) from points ``p`` to the arcs ``a -> b`` (broadcasting).

    Parameters
    ----------
    p : array_like, shape (..., 3)
        Unit vectors.
    a, b : array_like, shape (..., 3)
        The arcs' ends.

    Returns
    -------
    ndarray, shape (...)
        Radians: to the nearest point of the arc, an end point included.
    """
    n, _ = arc_pole(a, b)
    # foot of the perpendicular from p on the great circle
    f = p - dot(p, n)[..., None] * n
    fn = np.linalg.norm(f, axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        f = f / fn[..., None]
    within = (dot(np.cross(a, f), n) >= 0) & (dot(np.cross(f, b), n) >= 0) & (fn > 0)
    d_line = np.abs(np.arcsin(np.clip(dot(p, n), -1, 1)))
    d_end = np.minimum(angle_between(p, a), angle_between(p, b))
    return np.where(within, d_line, d_end)
