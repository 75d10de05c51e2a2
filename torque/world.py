"""The data model of a plate model: plates, boundaries, their geometry, the world.

A :class:`World` is the plate model of one planet: plate polygons on the unit sphere
(concatenated rings, see :mod:`torque.sphere`), boundary lines with their kinds, the radius,
and the paths of the optional data files. Problems found while reading (a malformed ring,
a boundary that names an unknown plate) are kept in ``World.problems`` so that
``torque check`` can list them all; :func:`torque.validate.require_valid` turns them into an
error for commands that need a sound world.

This module reads no file: :mod:`torque.io` builds worlds from files (and from rings in
memory, :func:`torque.io.world_from_rings`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from . import sphere
from .errors import InputError
from .locate import ArcIndex
from .locate import cached as cached_locator

EARTH_RADIUS_KM = 6371.0
BOUNDARY_KINDS = ("ridge", "subduction", "transform", "collision", "unclassified")
#: Two vertices closer than this (radians, about 6 mm on the Earth) are the same vertex, for
#: worlds built without a stated tolerance (world files state one in metres).
SAME_VERTEX_RAD = 1e-9


@dataclass(frozen=True)
class Problem:
    """One thing wrong (``severity="error"``) or doubtful (``"warning"``) in a world.

    Attributes
    ----------
    severity : {"error", "warning"}
    message : str
    file : str, optional
        The file it is in.
    feature : int, optional
        The feature's index in the file.
    plate : str, optional
    lon, lat : float, optional
        Roughly where, degrees.
    """

    severity: str
    message: str
    file: str | None = None
    feature: int | None = None
    plate: str | None = None
    lon: float | None = None
    lat: float | None = None

    def as_dict(self) -> dict:
        """The fields that are set, as a dict (for JSON).
        """
        return {k: v for k, v in self.__dict__.items() if v is not None}

    def __str__(self) -> str:
        where = []
        if self.file:
            where.append(self.file)
        if self.feature is not None:
            where.append(f"feature {self.feature}")
        if self.plate:
            where.append(f"plate {self.plate!r}")
        at = (f" near lon {self.lon:.3f}, lat {self.lat:.3f}"
              if self.lon is not None and self.lat is not None else "")
        head = f"{', '.join(where)}: " if where else ""
        return f"{self.severity}: {head}{self.message}{at}"


@dataclass(frozen=True)
class Plate:
    """A plate: its name, position in the world and the feature it came from.

    Attributes
    ----------
    name : str
    index : int
        Its position in ``World.plates`` (and in every (P, ...) array).
    feature : int
        The feature of the plates file it came from.
    """

    name: str
    index: int
    feature: int


@dataclass(frozen=True, eq=False)
class Boundary:
    """A boundary line between two plates.

    ``xyz`` holds the polyline's unit vectors ``(K, 3)``; ``left`` and ``right`` are the
    plates on either side as the line is walked, seen from outside the sphere.
    ``properties`` keeps the feature's other numeric properties (per-boundary overrides
    such as ``slab_depth_km``).

    Attributes
    ----------
    kind : str
        ``ridge``, ``subduction``, ``transform``, ``collision`` or ``unclassified``.
    left, right : str
        Plate names.
    xyz : ndarray, shape (K, 3)
        Unit vectors of the polyline's vertices.
    feature : int, optional
        The feature of the boundaries file it came from.
    subducting : str, optional
        The sinking plate of a subduction zone.
    properties : dict
        Numeric per-line overrides.
    """

    kind: str
    left: str
    right: str
    xyz: np.ndarray
    feature: int | None = None
    subducting: str | None = None
    properties: dict = field(default_factory=dict)

    @property
    def length(self) -> float:
        """Length on the unit sphere (radians)."""
        return float(sphere.angle_between(self.xyz[:-1], self.xyz[1:]).sum())


@dataclass(frozen=True, eq=False)
class BoundarySet:
    """Boundary lines as columns: one row per great-circle arc, computed once per world.

    Attributes
    ----------
    a, b : ndarray, shape (E, 3)
        Start and end of each arc (unit vectors), in the order the lines are walked.
    line : ndarray of int, shape (E,)
        The line each arc belongs to (index into ``World.boundaries``).
    left, right : ndarray of int, shape (L,)
        Plate index on either side of each line (-1 for a name that is not a plate).
    kind : ndarray of str, shape (L,)
        Kind of each line.

    The arcs' poles and lengths (:attr:`pole`, :attr:`theta`) are computed on first use
    and kept.
    """

    a: np.ndarray
    b: np.ndarray
    line: np.ndarray
    left: np.ndarray
    right: np.ndarray
    kind: np.ndarray

    def __repr__(self) -> str:
        return f"BoundarySet({len(self.kind)} lines, {len(self.line)} arcs)"

    @classmethod
    def from_boundaries(cls, boundaries, plate_index: dict) -> "BoundarySet":
        """Columns of a sequence of :class:`Boundary` (``plate_index``: name -> index).

        Parameters
        ----------
        boundaries : sequence of Boundary
        plate_index : dict
            ``{name: index}``; a name not in it gets index -1.

        Returns
        -------
        BoundarySet
        """
        if not boundaries:
            return cls(np.zeros((0, 3)), np.zeros((0, 3)), np.zeros(0, np.int64),
                       np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0, str))
        return cls(np.concatenate([x.xyz[:-1] for x in boundaries]),
                   np.concatenate([x.xyz[1:] for x in boundaries]),
                   np.repeat(np.arange(len(boundaries)),
                             [len(x.xyz) - 1 for x in boundaries]),
                   np.array([plate_index.get(x.left, -1) for x in boundaries], np.int64),
                   np.array([plate_index.get(x.right, -1) for x in boundaries], np.int64),
                   np.array([x.kind for x in boundaries]))

    def of_kind(self, kind: str) -> "BoundarySet":
        """The arcs of the lines of one kind (``line`` still indexes all the lines).

        Parameters
        ----------
        kind : str
            A boundary kind.

        Returns
        -------
        BoundarySet
        """
        keep = self.kind[self.line] == kind
        return BoundarySet(self.a[keep], self.b[keep], self.line[keep], self.left,
                           self.right, self.kind)

    @cached_property
    def pole(self) -> np.ndarray:
        """Unit pole of each arc (pointing into its left plate), shape (E, 3)."""
        return sphere.arc_pole(self.a, self.b)[0]

    @cached_property
    def theta(self) -> np.ndarray:
        """Length of each arc on the unit sphere (radians), shape (E,)."""
        return sphere.arc_pole(self.a, self.b)[1]

    @property
    def arc_left(self) -> np.ndarray:
        """Plate index on the left of each arc, shape (E,)."""
        return self.left[self.line]

    @property
    def arc_right(self) -> np.ndarray:
        """Plate index on the right of each arc, shape (E,)."""
        return self.right[self.line]

    def length(self) -> np.ndarray:
        """Length of each line on the unit sphere (radians), shape (L,)."""
        return np.bincount(self.line, weights=self.theta, minlength=len(self.kind))


@dataclass(frozen=True, eq=False)
class PlateGeometry:
    """All rings of all plates, concatenated, each with its plate on the left.

    Attributes
    ----------
    xyz : ndarray, shape (V, 3)
    ring_start : ndarray of int, shape (R + 1,)
    ring_plate : ndarray of int, shape (R,)
    ring_is_hole : ndarray of bool, shape (R,)
    ring_polygon : ndarray of int, shape (R,)
        Polygon part of each ring, numbered across the world.
    ring_reversed : ndarray of bool, shape (R,), optional
        Rings that ``winding = "auto"`` walks the other way from the file (None: unknown,
        or none reversed). Kept so that a failed tiling can say whether the rings as
        written would have tiled.
    spike_xyz : ndarray, shape (K, 3), optional
        Vertices of zero-width spikes removed from the outlines (see
        :func:`remove_spikes`), so that boundary lines along them can be trimmed.
    """

    xyz: np.ndarray
    ring_start: np.ndarray
    ring_plate: np.ndarray
    ring_is_hole: np.ndarray
    ring_polygon: np.ndarray
    n_plates: int
    ring_reversed: np.ndarray | None = None
    spike_xyz: np.ndarray | None = None

    def __repr__(self) -> str:
        return (f"PlateGeometry({self.n_plates} plates, {len(self.ring_start) - 1} rings, "
                f"{len(self.xyz)} vertices)")

    @cached_property
    def edges(self):
        """Start, end and plate of every edge: ``(a, b, plate)``."""
        nxt = sphere.ring_next(self.ring_start)
        return self.xyz, self.xyz[nxt], self.ring_plate[sphere.ring_index(self.ring_start)]

    @cached_property
    def moments(self):
        """Exact ``(area, first, second)`` moments per plate on the unit sphere."""
        return sphere.region_moments(self.xyz, self.ring_start, self.ring_plate,
                                     self.ring_is_hole, self.n_plates)

    @cached_property
    def locator(self):
        return cached_locator(self.xyz, self.ring_start, self.ring_plate, self.ring_is_hole,
                            self.n_plates)


@dataclass(frozen=True, eq=False)
class World:
    """The plate model of one planet.

    Use :func:`load_world` to read one from a world file, or :func:`world_from_rings` to
    build one in code.

    Attributes
    ----------
    plates : tuple of Plate
    geometry : PlateGeometry
        Every ring of every plate, plate on the left.
    boundaries : tuple of Boundary
    radius_m : float
    boundaries_derived : bool
        Whether the boundaries are the plates' shared edges (no boundaries file).
    paths : dict
        Resolved paths of the world file (``world``) and of its data files, by key.
    problems : tuple of Problem
        What reading found wrong or doubtful.
    name : str
    winding : {"auto", "strict"}
    tolerance_rad : float
        Vertices closer than this (radians) are one vertex (the world file's
        ``vertex_tolerance_m`` over the radius).
    """

    plates: tuple
    geometry: PlateGeometry
    boundaries: tuple
    radius_m: float = EARTH_RADIUS_KM * 1e3
    boundaries_derived: bool = False
    paths: dict = field(default_factory=dict)
    problems: tuple = ()
    name: str = "world"
    winding: str = "auto"
    tolerance_rad: float = SAME_VERTEX_RAD

    def __repr__(self) -> str:
        return (f"World({self.name!r}, {len(self.plates)} plates, {len(self.boundaries)} "
                f"boundary lines, radius {self.radius_m / 1e3:g} km)")

    # -- lookups --------------------------------------------------------------------------
    @cached_property
    def plate_index(self) -> dict:
        return {p.name: p.index for p in self.plates}

    @cached_property
    def boundary_set(self) -> BoundarySet:
        """The boundary lines as columns of arcs (:class:`BoundarySet`)."""
        return BoundarySet.from_boundaries(self.boundaries, self.plate_index)

    @property
    def plate_names(self) -> list:
        return [p.name for p in self.plates]

    def plate(self, name: str) -> Plate:
        """The plate of a name; InputError listing the plates if there is none.

        Parameters
        ----------
        name : str

        Returns
        -------
        Plate
        """
        try:
            return self.plates[self.plate_index[name]]
        except KeyError:
            raise InputError(f"no plate named {name!r}",
                             hint=f"plates are: {', '.join(self.plate_names)}") from None

    # -- exact geometry, in SI units ------------------------------------------------------
    @property
    def area_m2(self) -> np.ndarray:
        """Area of each plate in m^2, shape (P,)."""
        return self.geometry.moments[0] * self.radius_m ** 2

    @property
    def first_moment(self) -> np.ndarray:
        """``int r dA`` on the unit sphere per plate, shape (P, 3)."""
        return self.geometry.moments[1]

    @property
    def second_moment(self) -> np.ndarray:
        """``int r r^T dA`` on the unit sphere per plate, shape (P, 3, 3)."""
        return self.geometry.moments[2]

    @cached_property
    def drag_tensor(self) -> np.ndarray:
        """``int (I - r r^T) dA`` per plate on the unit sphere, shape (P, 3, 3)."""
        area, _, second = self.geometry.moments
        return sphere.drag_tensor(area, second)

    @property
    def drag_tensor_m2(self) -> np.ndarray:
        """``R^2 int (I - r r^T) dA`` per plate, m^2, shape (P, 3, 3).

        The basal drag torque of a plate turning at ``omega`` (rad/s) over a mantle at rest,
        with traction ``-C v``, is ``-C R^2 D omega`` with ``D`` this tensor.
        """
        return self.drag_tensor * self.radius_m ** 2

    def locate(self, lon_deg, lat_deg) -> np.ndarray:
        """Plate index holding each point (lon/lat in degrees).

        Parameters
        ----------
        lon_deg, lat_deg : array_like, shape (N,)

        Returns
        -------
        ndarray of int, shape (N,)
            Index into ``plates`` (-1 where no plate holds the point).
        """
        return self.geometry.locator.locate_lonlat(lon_deg, lat_deg)

    def locate_xyz(self, xyz) -> np.ndarray:
        """Plate index holding each unit vector ``(N, 3)``.

        Parameters
        ----------
        xyz : array_like, shape (N, 3)
            Unit vectors.

        Returns
        -------
        ndarray of int, shape (N,)
        """
        return self.geometry.locator.locate(xyz)

    # -- validity -------------------------------------------------------------------------
    @property
    def errors(self) -> list:
        return [p for p in self.problems if p.severity == "error"]


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
        left = sphere.ring_left_area(ring, [0, len(ring)])[0]
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
    ring = sphere.ring_index(rs)[e]
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
    nxt = sphere.ring_next(rs)
    plate = ring_plate[sphere.ring_index(rs)]
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


