"""From rings as digitised to a sound world: zero-width spikes removed (and the boundary
lines along them trimmed), rings oriented with their plate on the left, the geometry put
together, and boundaries derived from the plates' shared edges where a world has none.

This module reads no file (:mod:`torque.io` calls it while building a world).
"""

from __future__ import annotations

import numpy as np

from . import sphere

from . import polygons
from .arcindex import ArcIndex
from .world import SAME_VERTEX_RAD, Boundary, PlateGeometry, Problem

__all__ = ["remove_spikes", "WINDING_TIE_SR", "geometry_from_rings", "trim_along_spikes",
           "as_written", "derive_boundaries"]


def remove_spikes(xyz, tol_rad: float = SAME_VERTEX_RAD):
    """Remove zero-width spikes from a ring: stretches where it runs out along some arcs and
    straight back along the same arcs (A -> B -> A), as digitised outlines sometimes do.

    A spike encloses no area, but its two sides are boundary for line forces and its
    retraced arcs cross one another to rounding, so it is taken out: every apex ``B`` of an
    ``A -> B -> A`` turn is removed together with the repeated ``A``, repeatedly, so a spike
    of several arcs goes entirely. Repeated consecutive vertices go too.

    Parameters
    ----------
    xyz : ndarray, shape (n, 3)
        Unit vectors of a ring without its closing vertex.
    tol_rad : float
        Vertices closer than this are the same.

    Returns
    -------
    kept : ndarray of int, shape (m,)
        Indices into ``xyz`` of the vertices that remain, in order.
    apexes : list of int
        Indices of the spikes' removed tips, in order of removal.
    length_rad : float
        Length of the outline removed (both sides of every spike), radians.

    Examples
    --------
    A square with a two-arc spike out of its first corner:

    >>> ll = [(0, 0), (1, 1), (2, 2), (1, 1), (0, 0), (10, 0), (10, 10), (0, 10)]
    >>> kept, apexes, _ = remove_spikes(sphere.lonlat_to_xyz(*np.array(ll, float).T))
    >>> kept.tolist(), apexes
    ([0, 5, 6, 7], [2, 1])
    """
    xyz = np.asarray(xyz, float)
    n = len(xyz)
    tol2 = tol_rad ** 2          # on chords: cos(1e-9) is 1 to double precision

    def same(i, j):
        d = xyz[i] - xyz[j]
        return float(d @ d) <= tol2

    nxt = np.roll(np.arange(n), -1)
    prv = np.roll(np.arange(n), 1)
    if not (np.any(np.sum((xyz[prv] - xyz[nxt]) ** 2, axis=1) <= tol2)
            or np.any(np.sum((xyz - xyz[nxt]) ** 2, axis=1) <= tol2)):
        return np.arange(n), [], 0.0             # the common case: nothing to do
    out, apexes, length = [], [], 0.0
    for k in range(n):           # a stack walk, only for the rare ring that has a spike
        if out and same(out[-1], k):
            continue
        if len(out) >= 2 and same(out[-2], k):
            apex = out.pop()
            apexes.append(apex)
            length += 2.0 * float(sphere.angle_between(xyz[apex], xyz[k]))
            continue
        out.append(k)
    changed = True
    while changed and len(out) >= 3:             # the ring closes: look across the seam
        if same(out[-1], out[0]):
            out.pop()
        elif same(out[-2], out[0]):
            apex = out.pop()
            apexes.append(apex)
            length += 2.0 * float(sphere.angle_between(xyz[apex], xyz[out[0]]))
        elif same(out[-1], out[1]):
            apex = out.pop(0)
            apexes.append(apex)
            length += 2.0 * float(sphere.angle_between(xyz[apex], xyz[out[0]]))
        else:
            changed = False
    return np.array(out, dtype=np.int64), apexes, length


# Two regions whose areas differ by less than this (steradians, about 0.5 km^2 on the
# Earth) are a tie: an exact hemisphere, for which "the smaller region" is rounding noise.
WINDING_TIE_SR = 1e-8


def _orient(rings, is_hole, winding):
    """Orient rings so that their plate is on the left; returns ``(rings, reversed)``.

    ``"strict"`` keeps RFC 7946's rule as written (exterior counter-clockwise, holes
    clockwise, seen from outside). ``"auto"`` makes each exterior ring bound the smaller of
    its two regions, and each hole the smaller region it cuts out; where the two regions
    are equal to within ``WINDING_TIE_SR`` (a hemisphere), the ring is kept as written.
    """
    flipped = np.zeros(len(rings), bool)
    if winding == "strict":
        return rings, flipped
    out = []
    for k, (ring, hole) in enumerate(zip(rings, is_hole)):
        left = polygons.ring_left_area(ring, [0, len(ring)])[0]
        if abs(left - 2.0 * np.pi) <= WINDING_TIE_SR:
            out.append(ring)
            continue
        small_on_left = left < 2.0 * np.pi
        flipped[k] = small_on_left == bool(hole)
        out.append(ring[::-1] if flipped[k] else ring)
    return out, flipped


def geometry_from_rings(rings, ring_plate, ring_is_hole, ring_polygon, n_plates: int,
                        winding: str = "auto", spike_xyz=None) -> PlateGeometry:
    """Orient rings and concatenate them into a :class:`PlateGeometry`.

    Parameters
    ----------
    rings : list of ndarray, each shape (n_i, 3)
        Unit vectors of each ring, without the closing vertex, as written in the file.
    ring_plate, ring_polygon : sequence of int, length R
        The plate and the polygon part (numbered across the world) of each ring.
    ring_is_hole : sequence of bool, length R
    n_plates : int
    winding : {"auto", "strict"}
        How to read each ring's orientation (see :func:`_orient`).
    spike_xyz : ndarray, shape (K, 3), optional
        Vertices of spikes removed from the rings.

    Returns
    -------
    PlateGeometry
        Every ring with its plate on the left.
    """
    rings, flipped = _orient(rings, np.asarray(ring_is_hole, bool), winding)
    xyz = np.concatenate(rings)
    ring_start = np.r_[0, np.cumsum([len(r) for r in rings])].astype(np.int64)
    return PlateGeometry(xyz, ring_start, np.asarray(ring_plate, dtype=np.int64),
                         np.asarray(ring_is_hole, dtype=bool),
                         np.asarray(ring_polygon, np.int64), n_plates, flipped,
                         None if spike_xyz is None or not len(spike_xyz)
                         else np.asarray(spike_xyz, float).reshape(-1, 3))


def trim_along_spikes(boundaries, geometry, plate_index, tol_rad: float = SAME_VERTEX_RAD):
    """Boundary lines without the vertices that ran along removed outline spikes.

    A vertex of a line is trimmed when it is a removed spike vertex and does not lie on the
    remaining edges of both of the line's plates (a spike's tip may also be a junction of
    other plates' edges, where their lines rightly end).

    Parameters
    ----------
    boundaries : sequence of Boundary
    geometry : PlateGeometry
        With the removed spike vertices in ``spike_xyz``.
    plate_index : dict
        ``{name: index}``.
    tol_rad : float

    Returns
    -------
    boundaries : list of Boundary
        Lines with fewer than 2 vertices left are dropped.
    trimmed : list of (int, int)
        For every line changed, its index and how many vertices went.
    """
    spike_xyz = geometry.spike_xyz
    if spike_xyz is None or not len(spike_xyz):
        return list(boundaries), []
    tol2 = tol_rad ** 2          # on chords, as in remove_spikes
    ea, eb, eplate = geometry.edges
    out, trimmed = [], []
    for k, b in enumerate(boundaries):
        d2 = np.sum((b.xyz[:, None, :] - spike_xyz[None, :, :]) ** 2, axis=2)
        on_spike = np.any(d2 <= tol2, axis=1)
        sides = [plate_index.get(b.left, -1), plate_index.get(b.right, -1)]
        for v in np.nonzero(on_spike)[0]:
            on_both = all((eplate == p).any() and sphere.point_arc_distance(
                b.xyz[v], ea[eplate == p], eb[eplate == p]).min() <= tol_rad for p in sides)
            if on_both:
                on_spike[v] = False       # on the edge the two plates share: a junction
        if not on_spike.any():
            out.append(b)
            continue
        xyz = b.xyz[~on_spike]
        if len(xyz):
            keep = np.r_[True, np.sum((xyz[1:] - xyz[:-1]) ** 2, axis=1) > tol2]
            xyz = xyz[keep]
        trimmed.append((k, int(on_spike.sum())))
        if len(xyz) >= 2:
            out.append(Boundary(b.kind, b.left, b.right, xyz, b.feature, b.subducting,
                                dict(b.properties)))
    return out, trimmed


def as_written(geometry: PlateGeometry) -> PlateGeometry:
    """The same rings walked as the file wrote them (undoing ``winding = "auto"``).

    Parameters
    ----------
    geometry : PlateGeometry

    Returns
    -------
    PlateGeometry
    """
    rev = geometry.ring_reversed
    if rev is None or not rev.any():
        return geometry
    xyz = geometry.xyz.copy()
    s = geometry.ring_start
    for r in np.nonzero(rev)[0]:
        xyz[s[r]:s[r + 1]] = xyz[s[r]:s[r + 1]][::-1]
    return PlateGeometry(xyz, s, geometry.ring_plate, geometry.ring_is_hole,
                         geometry.ring_polygon, geometry.n_plates, None, geometry.spike_xyz)


def _vertex_ids(xyz, tol_rad: float) -> np.ndarray:
    """One id per group of vertices closer than ``tol_rad`` (chains of them too)."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components
    from scipy.spatial import cKDTree
    pairs = cKDTree(xyz).query_pairs(r=tol_rad, output_type="ndarray")
    n = len(xyz)
    graph = coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
    return connected_components(graph, directed=False)[1].astype(np.int64)


def _with_t_junctions(geometry: PlateGeometry, tol_rad: float):
    """The rings with a vertex added to every edge that another plate's vertex lies on
    (within ``tol_rad``, away from the edge's ends): a T-junction then becomes a shared
    vertex.

    Returns
    -------
    xyz : ndarray, shape (V', 3)
    ring_start : ndarray of int, shape (R + 1,)
    ring_plate : ndarray of int, shape (R,)
    """
    xyz, rs = geometry.xyz, geometry.ring_start
    a, b, plate = geometry.edges
    vplate = plate                                  # a vertex's plate is its edge's
    index = ArcIndex(a, b, np.radians(0.5))
    v, e = index.pairs(xyz, 2 * tol_rad)
    e = index.owner[e]
    keep = vplate[v] != plate[e]                     # another plate's edge
    v, e = v[keep], e[keep]
    on = sphere.point_arc_distance(xyz[v], a[e], b[e]) <= tol_rad
    inner = (sphere.angle_between(xyz[v], a[e]) > tol_rad) & (
        sphere.angle_between(xyz[v], b[e]) > tol_rad)
    v, e = v[on & inner], e[on & inner]
    if not len(v):
        return xyz, rs, geometry.ring_plate
    # insert each point after its edge's start, in order along the edge
    pair = np.unique(np.c_[e, v], axis=0)            # a vertex once per edge
    e, v = pair[:, 0], pair[:, 1]
    t = sphere.angle_between(a[e], xyz[v])
    order = np.lexsort((t, e))
    e, v = e[order], v[order]
    new_xyz = np.insert(xyz, e + 1, xyz[v], axis=0)
    ring = polygons.ring_index(rs)[e]
    added = np.bincount(ring, minlength=len(rs) - 1)
    new_rs = rs + np.r_[0, np.cumsum(added)]
    return new_xyz, new_rs, geometry.ring_plate


def derive_boundaries(geometry: PlateGeometry, plate_names,
                      tol_rad: float = SAME_VERTEX_RAD) -> tuple[list, list]:
    """Boundaries of kind ``unclassified`` from the edges that two plates share.

    Two plates share an edge when one walks it from vertex u to v and the other from v to u,
    vertices closer than ``tol_rad`` being one vertex; a vertex of one plate that lies on an
    edge of its neighbour (a T-junction) splits that edge first. Runs of consecutive shared edges become polylines,
    walked as in the ring of the plate that comes first, which is then their left plate.

    Returns ``(boundaries, problems)``; edges that no other plate shares are reported as
    warnings (a gap, an overlap, or a vertex of one plate in the middle of another plate's
    edge: give both plates the same vertices).

    Parameters
    ----------
    geometry : PlateGeometry
    plate_names : sequence of str
    tol_rad : float
        Vertices closer than this (radians) are one vertex.
    """
    xyz, rs, ring_plate = _with_t_junctions(geometry, tol_rad)
    vid = _vertex_ids(xyz, tol_rad)
    nv = int(vid.max()) + 1
    nxt = polygons.ring_next(rs)
    plate = ring_plate[polygons.ring_index(rs)]
    fwd = vid * nv + vid[nxt]
    rev = vid[nxt] * nv + vid
    order = np.argsort(fwd, kind="stable")
    pos = np.clip(np.searchsorted(fwd[order], rev), 0, len(fwd) - 1)
    match = order[pos]
    has = (fwd[match] == rev) & (plate[match] != plate)
    neighbour = np.where(has, plate[match], -1)

    out, problems = [], []
    for r in range(len(rs) - 1):
        s, e = rs[r], rs[r + 1]
        nb = neighbour[s:e]
        p = int(ring_plate[r])
        # rotate so that a run does not wrap past the ring's start
        change = np.nonzero(nb != np.roll(nb, 1))[0]
        shift = int(change[0]) if change.size else 0
        idx = np.roll(np.arange(s, e), -shift)
        nbr = nb[idx - s]
        cuts = np.r_[0, np.nonzero(np.diff(nbr))[0] + 1, len(nbr)]
        for c0, c1 in zip(cuts[:-1], cuts[1:]):
            q_ = int(nbr[c0])
            edges = idx[c0:c1]
            if q_ < 0:
                lon, lat = sphere.xyz_to_lonlat(xyz[edges[0]])
                problems.append(Problem(
                    "warning", f"{len(edges)} edge(s) of this plate are shared with no other "
                    "plate, so no boundary is derived there (a gap, an overlap, or vertices "
                    "that differ between neighbours)", None, None, plate_names[p],
                    float(lon), float(lat)))
                continue
            if p > q_:
                continue  # the neighbour's ring gives the same line
            line = np.concatenate([xyz[edges], xyz[nxt[edges[-1]]][None]])
            out.append(Boundary("unclassified", plate_names[p], plate_names[q_], line))
    return out, problems


