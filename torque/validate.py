"""Checks of a world: tiling, rings, boundaries. Used by ``torque check``.

:func:`run_checks` returns a :class:`CheckReport`: a per-plate summary and the list of
problems, each an error (the world cannot be used) or a warning (it can, with care).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from . import sphere

from . import polygons
from .data import WorldData
from .errors import InputError
from .arcindex import ArcIndex, arc_boxes
from .world import Problem, World

__all__ = ["AREA_RTOL", "BOUNDARY_TOL_KM", "CheckReport", "require_valid",
           "tiling_problems", "ring_crossings", "boundary_offsets", "UNCOVERED_MIN_KM",
           "uncovered_edges", "run_checks"]

AREA_RTOL = 1e-9            # total area against 4 pi R^2
BOUNDARY_TOL_KM = 1.0       # how far a boundary vertex may be from its plates' edges
_CLUSTER_DEG = 5.0          # problem cells closer than this are reported once
_OFFSET_SEARCH_KM = 200.0   # boundary offsets up to this are measured, beyond it "far"


@dataclass(frozen=True)
class CheckReport:
    """What ``torque check`` reports.

    Attributes
    ----------
    world : World
    plates : list of dict
        Per plate: exact area, perimeter, centroid, vertices, neighbours.
    problems : list of Problem
    """

    world: World
    plates: list
    problems: list

    @property
    def ok(self) -> bool:
        return not any(p.severity == "error" for p in self.problems)

    def as_dict(self) -> dict:
        """The report as ``torque check --json`` prints it (see the contract).
        """
        w = self.world
        kinds = {}
        for b in w.boundaries:
            kinds.setdefault(b.kind, 0.0)
            kinds[b.kind] += b.length * w.radius_m
        return {
            "world": w.name,
            "radius_m": w.radius_m,
            "total_area_m2": float(w.area_m2.sum()),
            "sphere_area_m2": 4.0 * np.pi * w.radius_m ** 2,
            "plates": self.plates,
            "boundaries": {"derived": w.boundaries_derived, "count": len(w.boundaries),
                           "length_m_by_kind": kinds},
            "ok": self.ok,
            "problems": [p.as_dict() for p in self.problems],
        }


def _plate_summary(world: World) -> list:
    g = world.geometry
    R = world.radius_m
    area, first, _ = g.moments
    lon, lat = sphere.xyz_to_lonlat(first)
    perim = polygons.ring_perimeter(g.xyz, g.ring_start)
    nvert = np.diff(g.ring_start)
    neighbours = {p.name: set() for p in world.plates}
    for b in world.boundaries:
        if b.left in neighbours and b.right in neighbours:
            neighbours[b.left].add(b.right)
            neighbours[b.right].add(b.left)
    out = []
    for p in world.plates:
        rings = g.ring_plate == p.index
        out.append({
            "plate": p.name,
            "area_m2": float(area[p.index] * R ** 2),
            "area_fraction": float(area[p.index] / (4 * np.pi)),
            "perimeter_m": float(perim[rings].sum() * R),
            "centroid_lon": float(lon[p.index]),
            "centroid_lat": float(lat[p.index]),
            "vertices": int(nvert[rings].sum()),
            "rings": int(rings.sum()),
            "holes": int((rings & g.ring_is_hole).sum()),
            "neighbours": sorted(neighbours[p.name]),
        })
    return out


def _clusters(xyz, radius_deg=_CLUSTER_DEG, most=10):
    """Indices of representative points, one per cluster of nearby points."""
    left = np.arange(len(xyz))
    reps = []
    cos_r = np.cos(np.radians(radius_deg))
    while left.size and len(reps) < most:
        k = left[0]
        reps.append(k)
        left = left[sphere.dot(xyz[left], xyz[k]) < cos_r]
    return reps, left.size


def require_valid(world: World) -> World:
    """``world``, or :class:`~torque.errors.InputError` unless it is usable.

    Usable means: reading found no error, the plates tile the sphere (exact area sum and
    grid coverage, see :func:`tiling_problems`) and no ring crosses itself
    (:func:`ring_crossings`): the errors ``torque check`` reports. ``torque check`` also
    runs the checks that can only warn, and lists every problem.

    Parameters
    ----------
    world : World

    Returns
    -------
    World
    """
    # the same verdict as torque check on everything that makes a world unusable: reading,
    # the tiling, and rings that cross themselves
    errs = world.errors or [p for p in _crossing_problems(world) + tiling_problems(world)
                            if p.severity == "error"]
    if errs:
        shown = "; ".join(str(e) for e in errs[:5])
        more = f" (and {len(errs) - 5} more)" if len(errs) > 5 else ""
        raise InputError(f"the world has {len(errs)} problem(s): {shown}{more}",
                         file=world.paths.get("world"),
                         hint="run 'torque check' on it for the full list")
    return world


def tiling_problems(world: World) -> list:
    """Errors where the plates do not tile the sphere: area sum, gaps and overlaps.

    Parameters
    ----------
    world : World

    Returns
    -------
    list of Problem
    """
    g = world.geometry
    probs = []
    total = g.moments[0].sum()
    rel = total / (4 * np.pi) - 1.0
    if abs(rel) > AREA_RTOL:
        what = "overlap" if rel > 0 else "leave gaps"
        probs.append(Problem("error", f"the plates' areas sum to {1 + rel:.12f} of the sphere "
                             f"(relative difference {rel:.2e}): plates {what}; they must tile "
                             "the sphere"))
    for k, a in enumerate(g.moments[0]):
        if a <= 1e-14:
            probs.append(Problem("error", "the plate has no area (a degenerate ring?)",
                                 plate=world.plates[k].name))
    xyz_all, cov_all = g.locator.coverage_problems()
    rest = 0
    # overlaps first, then gaps, each with their own few representatives, so that a large
    # gap does not hide an overlap
    for sel in (cov_all > 1, cov_all < 1):
        xyz, cov = xyz_all[sel], cov_all[sel]
        if not len(xyz):
            continue
        reps, more = _clusters(xyz, most=5)
        rest += more
        left = polygons.points_left_of_rings(xyz[reps], g.xyz, g.ring_start)
        for j, k in enumerate(reps):
            inside = (np.bincount(g.ring_plate, weights=left[j], minlength=g.n_plates)
                      - np.bincount(g.ring_plate, weights=g.ring_is_hole, minlength=g.n_plates))
            holders = [world.plates[i].name for i in np.nonzero(np.rint(inside) > 0)[0]]
            lon, lat = sphere.xyz_to_lonlat(xyz[k])
            if cov[k] < 1:
                msg = "a gap: this point lies in no plate"
            else:
                msg = (f"an overlap: this point lies in {cov[k]} plates "
                       f"({', '.join(map(repr, holders))})")
            probs.append(Problem("error", msg, lon=float(lon), lat=float(lat)))
    if rest:
        probs.append(Problem("error", f"and {rest} more grid points in gaps or overlaps"))
    if probs and _written_winding_tiles(g):
        # first, so that a shortened list of problems still shows it
        probs.insert(0, Problem(
            "error", 'winding = "auto" took the smaller region of some rings, and so the '
            "plates do not tile the sphere; walked as written (RFC 7946) they would: set "
            'winding = "strict" in the world file (needed for plates larger than a '
            "hemisphere)"))
    return probs


def _written_winding_tiles(g) -> bool:
    """Whether the rings as written (before ``winding = "auto"``) tile the sphere."""
    from .rings import as_written
    if g.ring_reversed is None or not g.ring_reversed.any():
        return False
    w = as_written(g)
    if abs(w.moments[0].sum() / (4 * np.pi) - 1.0) > AREA_RTOL or (w.moments[0] <= 0).any():
        return False
    return len(w.locator.coverage_problems()[0]) == 0


def ring_crossings(geometry, frame=None, tol_rad: float = 0.0):
    """Pairs of edges of the same polygon part that cross each other.

    Candidate pairs come from an STR-tree of the edges' exact lon/lat boxes (in a rotated
    frame that keeps every arc away from the poles); each candidate is then tested exactly
    with :func:`torque.sphere.arcs_cross`.

    Parameters
    ----------
    geometry : PlateGeometry
    frame : scipy Rotation, optional
        The rotated frame (default: the locator's).
    tol_rad : float
        Arcs that meet within this (radians) of one of their end points touch, and do not
        count as crossing (``World.tolerance_rad``, from the world file's
        ``vertex_tolerance_m``).

    Returns
    -------
    pairs : ndarray of int, shape (K, 2)
        Edge indices (edge ``i`` runs from vertex ``i`` to the next vertex of its ring).
    """
    g = geometry
    if frame is None:
        frame = g.locator.frame
    nxt = polygons.ring_next(g.ring_start)
    a, b = g.xyz @ frame.T, g.xyz[nxt] @ frame.T
    poly = g.ring_polygon[polygons.ring_index(g.ring_start)]
    boxes, owner = arc_boxes(a, b)
    tree = shapely.STRtree(boxes)
    qi, ti = tree.query(boxes, predicate="intersects")
    i, j = owner[qi], owner[ti]
    keep = (i < j) & (poly[i] == poly[j]) & (nxt[i] != j) & (nxt[j] != i)
    i, j = i[keep], j[keep]
    pairs = np.unique(np.stack([i, j], axis=1), axis=0)
    if len(pairs) == 0:
        return pairs.reshape(0, 2)
    p, q = pairs[:, 0], pairs[:, 1]
    hit = sphere.arcs_cross(a[p], b[p], a[q], b[q])
    if tol_rad > 0 and hit.any():
        # arcs that meet within the tolerance of an end point touch there: rounding, or
        # a digitiser's near-repeated vertex, not a crossing
        p, q, pairs = p[hit], q[hit], pairs[hit]
        x = sphere.normalize(np.cross(np.cross(a[p], b[p]), np.cross(a[q], b[q])))
        x *= np.sign(sphere.dot(x, a[p] + b[p]))[:, None]
        near_end = np.min([sphere.angle_between(x, e) for e in (a[p], b[p], a[q], b[q])],
                          axis=0) <= tol_rad
        return pairs[~near_end]
    return pairs[hit]


def _crossing_problems(world: World) -> list:
    g = world.geometry
    pairs = ring_crossings(g, tol_rad=world.tolerance_rad)
    probs = []
    seen = set()
    for i, j in pairs[:50]:
        r = int(np.searchsorted(g.ring_start, i, side="right") - 1)
        key = int(g.ring_polygon[r])
        if key in seen:
            continue
        seen.add(key)
        plate = world.plates[int(g.ring_plate[r])]
        lon, lat = sphere.xyz_to_lonlat(g.xyz[i])
        n = int(np.sum(g.ring_polygon[np.searchsorted(g.ring_start, pairs[:, 0], "right") - 1]
                       == key))
        probs.append(Problem(
            "error", f"the polygon crosses itself ({n} pair(s) of crossing edges; the first "
            f"starts at ring vertex {i - g.ring_start[r]})", world.paths.get("plates"),
            plate.feature, plate.name, float(lon), float(lat)))
    return probs


def boundary_offsets(world: World):
    """Distance (radians) of every boundary vertex from the edges of its left and right plates.

    Candidate edge pieces (plate edges split at 0.1 degree) come from a k-d tree of their
    midpoints; distances to them are exact point-to-arc distances. A tight search settles
    the vertices that lie on their plates' edges; only the others are searched again, far
    enough to measure offsets up to ``_OFFSET_SEARCH_KM``.

    Parameters
    ----------
    world : World

    Returns
    -------
    owner : ndarray of int, shape (K,)
        Boundary (index into ``world.boundaries``) of each vertex.
    xyz : ndarray, shape (K, 3)
    dist : ndarray, shape (K,)
        The larger of the two distances; ``inf`` where no edge of a plate is near.
    """
    g = world.geometry
    idx = world.plate_index
    tol = BOUNDARY_TOL_KM * 1e3 / world.radius_m
    a, b, plate = g.edges
    edges = ArcIndex(a, b)
    pa, pb, piece_plate = edges.pa, edges.pb, plate[edges.owner]

    usable = [k for k, bd in enumerate(world.boundaries)
              if bd.left in idx and bd.right in idx]
    if not usable:
        return np.zeros(0, int), np.zeros((0, 3)), np.zeros(0)
    owner = np.concatenate([np.full(len(world.boundaries[k].xyz), k) for k in usable])
    xyz = np.concatenate([world.boundaries[k].xyz for k in usable])
    left = np.array([idx[bd.left] for bd in world.boundaries])[owner]
    right = np.array([idx[bd.right] for bd in world.boundaries])[owner]

    def measure(which, reach):
        v, e = edges.pairs(xyz[which], reach)
        v = which[v]
        dist = np.full((2, len(xyz)), np.inf)
        for side, want in enumerate((left, right)):
            sel = piece_plate[e] == want[v]
            d = sphere.point_arc_distance(xyz[v[sel]], pa[e[sel]], pb[e[sel]])
            np.minimum.at(dist[side], v[sel], d)
        return dist.max(axis=0)

    dist = measure(np.arange(len(xyz)), tol)
    off = np.nonzero(dist > tol)[0]
    if off.size:
        far = measure(off, max(_OFFSET_SEARCH_KM * 1e3 / world.radius_m, tol))
        dist[off] = far[off]
    return owner, xyz, dist


#: Stretches of shared plate edge with no boundary line, shorter than this, are not reported
#: (line ends at junctions leave short gaps of no consequence).
UNCOVERED_MIN_KM = 20.0


def uncovered_edges(world: World, piece_km: float = 25.0):
    """Stretches of plate edge that no boundary line runs along.

    Every plate edge is split into pieces of at most ``piece_km``; a piece is covered when
    its midpoint lies within ``BOUNDARY_TOL_KM`` of a boundary line (exact point-to-arc
    distances to candidates from a k-d tree). The plate across an uncovered piece is found
    by stepping off its midpoint, so neighbours need not share vertices.

    Parameters
    ----------
    world : World
    piece_km : float

    Returns
    -------
    pairs : dict
        ``{(plate_i, plate_j): (length_rad, xyz)}`` with ``i < j``: the uncovered length of
        the edge the two plates share (radians on the unit sphere), and a point on it.
    """
    R = world.radius_m
    tol = BOUNDARY_TOL_KM * 1e3 / R
    a, b, plate = world.geometry.edges
    pa, pb, piece = sphere.densify_arcs(a, b, piece_km * 1e3 / R)
    n, theta = sphere.arc_pole(pa, pb)
    mid = sphere.slerp_points(pa, pb, 0.5)
    bs = world.boundary_set
    covered = ArcIndex(bs.a, bs.b).distance(mid, tol) <= tol
    out = {}
    todo = np.nonzero(~covered & (theta > 0))[0]
    if not len(todo):
        return out
    # across the edge: the pole points into the piece's own plate
    step = np.minimum(theta[todo] / 4, 1e3 / R)
    other = world.locate_xyz(sphere.step_toward(mid[todo], -n[todo], step))
    own = plate[piece[todo]]
    for i, j, t, x in zip(own, other, theta[todo], mid[todo]):
        if j < 0 or i == j:
            continue
        key = (int(min(i, j)), int(max(i, j)))
        length, at = out.get(key, (0.0, x))
        out[key] = (length + 0.5 * t, at)          # each shared edge is walked twice
    return out


def _coverage_problems(world: World) -> list:
    if world.boundaries_derived:
        return []
    R_km = world.radius_m / 1e3
    probs = []
    for (i, j), (length, at) in sorted(uncovered_edges(world).items(),
                                       key=lambda kv: -kv[1][0]):
        if length * R_km < UNCOVERED_MIN_KM:
            continue
        lon, lat = sphere.xyz_to_lonlat(at)
        names = world.plate_names
        probs.append(Problem(
            "warning", f"{length * R_km:,.0f} km of the edge between {names[i]!r} and "
            f"{names[j]!r} has no boundary line: no boundary force acts there",
            world.paths.get("boundaries"), None, None, float(lon), float(lat)))
    return probs


def _boundary_problems(world: World) -> list:
    if world.boundaries_derived or not world.boundaries:
        return []
    R_km = world.radius_m / 1e3
    tol = BOUNDARY_TOL_KM / R_km
    idx = world.plate_index
    path = world.paths.get("boundaries")
    probs = []
    owner, xyz, dist = boundary_offsets(world)
    far = np.zeros(len(world.boundaries), bool)
    for k in np.unique(owner[dist > tol]):
        bd = world.boundaries[k]
        mine = np.nonzero(owner == k)[0]
        worst = mine[np.argmax(dist[mine])]
        lon, lat = sphere.xyz_to_lonlat(xyz[worst])
        d = dist[worst]
        how = (f"{d * R_km:.1f} km" if np.isfinite(d)
               else f"more than {_OFFSET_SEARCH_KM:g} km")
        probs.append(Problem(
            "warning", f"the {bd.kind} boundary between {bd.left!r} and {bd.right!r} is {how} "
            f"from the edge those plates share (vertex {worst - mine[0]}); tolerance "
            f"{BOUNDARY_TOL_KM:g} km", path, bd.feature, None, float(lon), float(lat)))
        far[k] = True
    # Which side is which: step off the longest segment of each line to its left and right.
    probes, which = [], []
    for k, bd in enumerate(world.boundaries):
        if far[k] or bd.left not in idx or bd.right not in idx:
            continue
        seg = int(np.argmax(sphere.angle_between(bd.xyz[:-1], bd.xyz[1:])))
        s0, s1 = bd.xyz[seg], bd.xyz[seg + 1]
        n, theta = sphere.arc_pole(s0, s1)
        m = sphere.slerp_points(s0, s1, 0.5)
        off = min(theta / 4.0, np.radians(0.25))
        probes += [sphere.step_toward(m, n, off), sphere.step_toward(m, -n, off), m]
        which.append(k)
    if which:
        got = world.locate_xyz(np.array(probes)).reshape(-1, 3)
        for (on_left, on_right, _), k, mid in zip(got, which, np.array(probes)[2::3]):
            bd = world.boundaries[k]
            if on_left == idx[bd.right] and on_right == idx[bd.left]:
                lon, lat = sphere.xyz_to_lonlat(mid)
                probs.append(Problem(
                    "error", f"left and right are swapped: walking the line as written, "
                    f"{bd.right!r} is on the left and {bd.left!r} on the right", path,
                    bd.feature, None, float(lon), float(lat)))
    return probs


def _continent_problems(data: WorldData) -> list:
    """The continents: readable, no overlaps, and how exactly they clip to plates."""
    world = data.world
    if "continents" not in world.paths and data.continents is None:
        return []
    path = world.paths.get("continents")
    try:
        part = data.continental_part
    except InputError as exc:
        return [Problem("error", f"continents: {exc.message}", exc.file or path)]
    return [Problem("warning", w, path) for w in part.warnings]


def run_checks(world) -> CheckReport:
    """Run every check on a world.

    Parameters
    ----------
    world : World or WorldData
        With a :class:`~torque.data.WorldData` (such as :class:`torque.io.Inputs`, which
        reads the world's continents file), its continents are checked too.

    Returns
    -------
    CheckReport
        The per-plate summary and every problem found.

    Notes
    -----
    Checks: problems found while reading (malformed rings, unknown plates, subduction
    without a sinking plate); the plates tile the sphere (total area to 1e-9 relative, and
    no gaps or overlaps at the centres of a 0.25 degree grid); no ring crosses itself;
    boundaries lie on the shared edge of their two plates (to 1 km) with left and right
    the right way round; continents (if any) do not overlap, and none of their edges runs
    along a plate edge (where clipping would depend on rounding).

    Examples
    --------
    >>> from torque.io import world_from_rings
    >>> w = world_from_rings({"Upper": [[(0, 0), (120, 0), (240, 0)]],
    ...                       "Lower": [[(0, 0), (240, 0), (120, 0)]]}, winding="strict")
    >>> report = run_checks(w)
    >>> report.ok, [p["plate"] for p in report.plates], report.problems
    (True, ['Upper', 'Lower'], [])
    """
    data = world if isinstance(world, WorldData) else WorldData(world)
    world = data.world
    probs = list(world.problems)
    probs += tiling_problems(world)
    probs += _crossing_problems(world)
    probs += _boundary_problems(world)
    probs += _coverage_problems(world)
    probs += _continent_problems(data)
    return CheckReport(world, _plate_summary(world), probs)
