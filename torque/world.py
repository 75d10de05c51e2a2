"""Plates, boundaries and the world file: reading, orienting and the data model.

A :class:`World` is the plate model of one planet: plate polygons on the unit sphere
(concatenated rings, see :mod:`torque.sphere`), boundary lines with their kinds, the radius,
and the paths of the optional data files. Problems found while reading (a malformed ring,
a boundary that names an unknown plate) are kept in ``World.problems`` so that
``torque check`` can list them all; :func:`torque.validate.require_valid` turns them into an error
for commands that need a sound world.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

import numpy as np

from . import sphere
from .errors import InputError, read_json, read_text

EARTH_RADIUS_KM = 6371.0
BOUNDARY_KINDS = ("ridge", "subduction", "transform", "collision", "unclassified")
WORLD_KEYS = {
    "name": "optional title used in reports",
    "radius_km": "planet radius in km (default 6371.0)",
    "plates": "GeoJSON file of plate polygons (required)",
    "boundaries": "GeoJSON file of boundary lines",
    "continents": "GeoJSON file of continental regions",
    "ages": "sea-floor age grid (NetCDF or CSV lon,lat,age_myr)",
    "mantle_flow": "mantle velocity grid (NetCDF)",
    "winding": '"auto" (default) or "strict"',
}
_DATA_KEYS = ("plates", "boundaries", "continents", "ages", "mantle_flow")


@dataclass(frozen=True)
class Problem:
    """One thing wrong (``severity="error"``) or doubtful (``"warning"``) in a world."""

    severity: str
    message: str
    file: str | None = None
    feature: int | None = None
    plate: str | None = None
    lon: float | None = None
    lat: float | None = None

    def as_dict(self) -> dict:
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
    """A plate: its name, position in the world and the feature it came from."""

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
    """

    xyz: np.ndarray
    ring_start: np.ndarray
    ring_plate: np.ndarray
    ring_is_hole: np.ndarray
    ring_polygon: np.ndarray
    n_plates: int
    ring_reversed: np.ndarray | None = None

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
        from .locate import PlateLocator
        return PlateLocator(self.xyz, self.ring_start, self.ring_plate, self.ring_is_hole,
                            self.n_plates)


@dataclass(frozen=True, eq=False)
class World:
    """The plate model of one planet.

    Use :func:`load_world` to read one from a world file, or :func:`world_from_rings` to
    build one in code.
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

    def __repr__(self) -> str:
        return (f"World({self.name!r}, {len(self.plates)} plates, {len(self.boundaries)} "
                f"boundary lines, radius {self.radius_m / 1e3:g} km)")

    # -- lookups --------------------------------------------------------------------------
    @cached_property
    def plate_index(self) -> dict:
        return {p.name: p.index for p in self.plates}

    @property
    def plate_names(self) -> list:
        return [p.name for p in self.plates]

    def plate(self, name: str) -> Plate:
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

    @property
    def drag_tensor_m2(self) -> np.ndarray:
        """``R^2 int (I - r r^T) dA`` per plate, m^2, shape (P, 3, 3).

        The basal drag torque of a plate turning at ``omega`` (rad/s) over a mantle at rest,
        with traction ``-C v``, is ``-C R^2 D omega`` with ``D`` this tensor.
        """
        area, _, second = self.geometry.moments
        return (area[:, None, None] * np.eye(3) - second) * self.radius_m ** 2

    def locate(self, lon_deg, lat_deg) -> np.ndarray:
        """Plate index holding each point (lon/lat in degrees)."""
        return self.geometry.locator.locate_lonlat(lon_deg, lat_deg)

    def locate_xyz(self, xyz) -> np.ndarray:
        """Plate index holding each unit vector ``(N, 3)``."""
        return self.geometry.locator.locate(xyz)

    # -- validity -------------------------------------------------------------------------
    @property
    def errors(self) -> list:
        return [p for p in self.problems if p.severity == "error"]


# ----------------------------------------------------------------------------------------
# reading files
# ----------------------------------------------------------------------------------------
def _read_json(path: Path):
    return read_json(path)


def read_toml(path) -> dict:
    """Read a TOML file with errors that name the file and the line."""
    path = Path(path)
    text = read_text(path)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML: {exc}", file=path) from None
    except RecursionError:
        raise InputError("the TOML is nested too deeply to read", file=path) from None


def _features(doc, path: Path, what: str) -> list:
    if not isinstance(doc, dict) or doc.get("type") != "FeatureCollection":
        raise InputError(f"expected a GeoJSON FeatureCollection of {what}", file=path)
    feats = doc.get("features")
    if not isinstance(feats, list) or not feats:
        raise InputError(f"the FeatureCollection has no features (expected {what})", file=path)
    for i, f in enumerate(feats):
        if not isinstance(f, dict) or f.get("type") != "Feature":
            raise InputError("not a GeoJSON Feature", file=path, where=f"feature {i}")
        if not isinstance(f.get("geometry"), dict):
            raise InputError("the feature has no geometry", file=path, where=f"feature {i}")
        if not isinstance(f.get("properties"), dict):
            raise InputError("the feature has no properties", file=path, where=f"feature {i}")
    return feats


def _coords_array(coords, path, where) -> np.ndarray:
    if not isinstance(coords, list) or not coords:
        raise InputError("a ring or line has no coordinates (an empty list)", file=path,
                         where=where, hint="remove the empty part")
    try:
        arr = np.array([[float(c[0]), float(c[1])] for c in coords], dtype=float)
    except (TypeError, ValueError, IndexError):
        raise InputError("coordinates must be [lon, lat] number pairs", file=path,
                         where=where) from None
    return arr.reshape(-1, 2)


def _check_coordinates(lonlat, path, i, name, add) -> bool:
    """Range checks on one ring or line; add problems; True if usable."""
    lon, lat = lonlat[:, 0], lonlat[:, 1]
    if not np.all(np.isfinite(lonlat)):
        k = int(np.nonzero(~np.all(np.isfinite(lonlat), axis=1))[0][0])
        add("error", f"vertex {k} has a coordinate that is not a finite number (NaN or inf)",
            i, name)
        return False
    if np.any(np.abs(lat) > 90.0):
        k = int(np.argmax(np.abs(lat)))
        if np.all(np.abs(lon) <= 90.0):
            add("error", f"vertex {k} has latitude {lat[k]:g}, out of [-90, 90]; the "
                "coordinates look like [lat, lon], but GeoJSON wants [lon, lat]", i, name)
        else:
            add("error", f"vertex {k} has latitude {lat[k]:g}, out of [-90, 90]", i, name)
        return False
    if np.any((lon < -180.0) | (lon > 360.0)):
        k = int(np.argmax(np.abs(lon)))
        add("error", f"vertex {k} has longitude {lon[k]:g}, out of [-180, 360]", i, name)
        return False
    return True


def _clean_ring(lonlat, path, i, name, add):
    """Unit vectors of a ring without its closing vertex and repeated vertices, or None."""
    xyz = sphere.lonlat_to_xyz(lonlat[:, 0], lonlat[:, 1])
    # Points at a pole are the same whatever their longitude.
    keep = np.r_[True, np.any(np.abs(np.diff(xyz, axis=0)) > 1e-15, axis=1)]
    xyz, ll = xyz[keep], lonlat[keep]
    if len(xyz) > 1 and np.all(np.abs(xyz[0] - xyz[-1]) <= 1e-15):
        xyz, ll = xyz[:-1], ll[:-1]
    if len(xyz) < 3:
        add("error", f"a ring has {len(xyz)} distinct vertices; a polygon needs at least 3",
            i, name, *(lonlat[0] if len(lonlat) else (None, None)))
        return None
    nxt = np.roll(np.arange(len(xyz)), -1)
    antipodal = sphere.dot(xyz, xyz[nxt]) < -1.0 + 1e-12
    if antipodal.any():
        k = int(np.nonzero(antipodal)[0][0])
        add("error", f"vertices {k} and {(k + 1) % len(xyz)} are antipodal, so the edge between "
            "them is not a defined great-circle arc; insert a vertex between them", i, name,
            *ll[k])
        return None
    return xyz


def read_plates(path, winding: str = "auto"):
    """Read plate polygons from GeoJSON.

    Returns
    -------
    plates : tuple of Plate
    geometry : PlateGeometry
    problems : list of Problem
    """
    path = Path(path)
    return plates_from_features(_features(_read_json(path), path, "plate polygons"), path,
                                winding)


def plates_from_features(feats, path, winding: str = "auto", noun: str = "plate"):
    """:func:`read_plates` for GeoJSON features already in memory (``path`` names them).

    ``noun`` names what the polygons are in messages ("plate", "continent").
    """
    problems: list = []

    def add(sev, msg, i=None, name=None, lon=None, lat=None):
        problems.append(Problem(sev, msg, str(path), i, name,
                                None if lon is None else float(lon),
                                None if lat is None else float(lat)))

    plates, seen = [], {}
    rings, ring_plate, ring_hole, ring_poly = [], [], [], []
    n_poly = 0
    for i, f in enumerate(feats):
        name = f["properties"].get("plate")
        if not isinstance(name, str) or not name.strip():
            raise InputError("properties.plate must be a non-empty string naming the plate",
                             file=path, where=f"feature {i}")
        if name in seen:
            add("error", f"plate name {name!r} is used again (first in feature {seen[name]}); "
                "names must be unique", i, name)
            continue
        seen[name] = i
        geom = f["geometry"]
        gtype, coords = geom.get("type"), geom.get("coordinates")
        if gtype == "Polygon":
            parts = [coords]
        elif gtype == "MultiPolygon":
            parts = coords
        else:
            raise InputError(f"geometry type {gtype!r} is not a plate; use Polygon or "
                             "MultiPolygon", file=path, where=f"feature {i} (plate {name!r})")
        if not isinstance(parts, list) or not parts or not all(
                isinstance(p, list) and p for p in parts):
            raise InputError("polygon coordinates must be a non-empty list of rings",
                             file=path, where=f"feature {i} (plate {name!r})")
        index = len(plates)
        plates.append(Plate(name, index, i))
        for part in parts:
            for k, ring in enumerate(part):
                if not isinstance(ring, list):
                    raise InputError("a ring must be a list of [lon, lat] positions",
                                     file=path, where=f"feature {i} (plate {name!r})")
                ll = _coords_array(ring, path, f"feature {i} (plate {name!r})")
                if not _check_coordinates(ll, path, i, name, add):
                    continue
                xyz = _clean_ring(ll, path, i, name, add)
                if xyz is None:
                    continue
                rings.append(xyz)
                ring_plate.append(index)
                ring_hole.append(k > 0)
                ring_poly.append(n_poly)
            n_poly += 1

    if not rings:
        detail = "; ".join(
            f"feature {p.feature}" + (f" (plate {p.plate!r})" if noun == "plate" else "")
            + f": {p.message}" for p in problems[:3])
        raise InputError(f"no usable {noun} polygon in the file"
                         + (f": {detail}" if detail else ""), file=path)
    rings, flipped = _orient(rings, np.array(ring_hole), winding)
    xyz = np.concatenate(rings)
    ring_start = np.r_[0, np.cumsum([len(r) for r in rings])].astype(np.int64)
    geometry = PlateGeometry(xyz, ring_start, np.array(ring_plate, dtype=np.int64),
                             np.array(ring_hole, dtype=bool), np.array(ring_poly, np.int64),
                             len(plates), flipped)
    return tuple(plates), geometry, problems


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


def as_written(geometry: PlateGeometry) -> PlateGeometry:
    """The same rings walked as the file wrote them (undoing ``winding = "auto"``)."""
    rev = geometry.ring_reversed
    if rev is None or not rev.any():
        return geometry
    xyz = geometry.xyz.copy()
    s = geometry.ring_start
    for r in np.nonzero(rev)[0]:
        xyz[s[r]:s[r + 1]] = xyz[s[r]:s[r + 1]][::-1]
    return PlateGeometry(xyz, s, geometry.ring_plate, geometry.ring_is_hole,
                         geometry.ring_polygon, geometry.n_plates)


def read_boundaries(path, plate_names) -> tuple[list, list]:
    """Read boundary lines from GeoJSON; returns ``(boundaries, problems)``."""
    path = Path(path)
    feats = _features(_read_json(path), path, "boundary lines")
    names = set(plate_names)
    out, problems = [], []

    def add(sev, msg, i, lon=None, lat=None):
        problems.append(Problem(sev, msg, str(path), i, None, lon, lat))

    for i, f in enumerate(feats):
        props, geom = f["properties"], f["geometry"]
        where = f"feature {i}"
        kind = props.get("kind")
        if kind not in BOUNDARY_KINDS:
            raise InputError(f"kind {kind!r} is not a boundary kind", file=path, where=where,
                             hint=f"use one of {', '.join(BOUNDARY_KINDS)}")
        left, right = props.get("left"), props.get("right")
        if not isinstance(left, str) or not isinstance(right, str):
            raise InputError("properties.left and properties.right must name the plates on "
                             "either side", file=path, where=where)
        ok = True
        for side, nm in (("left", left), ("right", right)):
            if nm not in names:
                add("error", f"{side} plate {nm!r} is not a plate of the world", i)
                ok = False
        if left == right:
            add("error", f"left and right are the same plate {left!r}", i)
            ok = False
        sub = props.get("subducting")
        if kind == "subduction":
            if sub not in (left, right):
                add("error", f"a subduction boundary must name its sinking plate in "
                    f"properties.subducting (one of {left!r}, {right!r}); got {sub!r}", i)
                ok = False
        elif sub is not None:
            add("warning", f"'subducting' is ignored on a {kind} boundary", i)
            sub = None
        extra = {k: v for k, v in props.items()
                 if k not in ("kind", "left", "right", "subducting", "name")}
        for k, v in extra.items():
            if not isinstance(v, (int, float)) or isinstance(v, bool) or not np.isfinite(v):
                raise InputError(f"property {k!r} must be a finite number, got {v!r}",
                                 file=path, where=where)
        gtype, coords = geom.get("type"), geom.get("coordinates")
        if gtype == "LineString":
            parts = [coords]
        elif gtype == "MultiLineString":
            parts = coords
        else:
            raise InputError(f"geometry type {gtype!r} is not a boundary line; use LineString "
                             "or MultiLineString", file=path, where=where)
        if not isinstance(parts, list) or not parts:
            raise InputError("line coordinates must be a non-empty list", file=path,
                             where=where)
        for part in parts:
            if not isinstance(part, list):
                raise InputError("a line must be a list of [lon, lat] positions", file=path,
                                 where=where)
            ll = _coords_array(part, path, where)
            if not _check_coordinates(ll, path, i, None,
                                      lambda s, m, *a: add(s, m, i)):
                ok = False
                continue
            xyz = sphere.lonlat_to_xyz(ll[:, 0], ll[:, 1])
            keep = np.r_[True, np.any(np.abs(np.diff(xyz, axis=0)) > 1e-15, axis=1)]
            xyz = xyz[keep]
            if len(xyz) < 2:
                add("error", "a boundary line needs at least 2 distinct vertices", i)
                ok = False
                continue
            if np.any(sphere.dot(xyz[:-1], xyz[1:]) < -1.0 + 1e-12):
                add("error", "two consecutive vertices are antipodal; insert a vertex "
                    "between them", i)
                ok = False
                continue
            if ok:
                out.append(Boundary(kind, left, right, xyz, i, sub, extra))
    return out, problems


def derive_boundaries(geometry: PlateGeometry, plate_names) -> tuple[list, list]:
    """Boundaries of kind ``unclassified`` from the edges that two plates share.

    Two plates share an edge when one walks it from vertex u to v and the other from v to u
    (vertices matched to 1e-9 degrees). Runs of consecutive shared edges become polylines,
    walked as in the ring of the plate that comes first, which is then their left plate.

    Returns ``(boundaries, problems)``; edges that no other plate shares are reported as
    warnings (a gap, an overlap, or a vertex of one plate in the middle of another plate's
    edge: give both plates the same vertices).
    """
    xyz, rs = geometry.xyz, geometry.ring_start
    q = np.round(xyz * 1e11).astype(np.int64)      # ~1e-9 degrees
    _, vid = np.unique(q, axis=0, return_inverse=True)
    vid = vid.ravel().astype(np.int64)
    nv = int(vid.max()) + 1
    nxt = sphere.ring_next(rs)
    plate = geometry.ring_plate[sphere.ring_index(rs)]
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
        p = int(geometry.ring_plate[r])
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


def load_world(path) -> World:
    """Read a world file (TOML) and the files it names.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    World
        With ``problems`` listing whatever reading found wrong or doubtful; call
        :func:`torque.validate.check_world` for the full set of checks.

    Raises
    ------
    InputError
        For files that cannot be read at all: missing files, malformed TOML or JSON,
        unknown keys, features of the wrong type.
    """
    path = Path(path)
    cfg = read_toml(path)
    unknown = sorted(set(cfg) - set(WORLD_KEYS))
    if unknown:
        raise InputError(f"unknown key(s) {', '.join(map(repr, unknown))}", file=path,
                         hint=f"valid keys: {', '.join(WORLD_KEYS)}")
    if "plates" not in cfg:
        raise InputError("the key 'plates' is required (a GeoJSON file of plate polygons)",
                         file=path)
    radius_km = cfg.get("radius_km", EARTH_RADIUS_KM)
    if (not isinstance(radius_km, (int, float)) or isinstance(radius_km, bool)
            or not np.isfinite(radius_km) or radius_km <= 0):
        raise InputError(f"radius_km must be a positive number, got {radius_km!r}", file=path)
    winding = cfg.get("winding", "auto")
    if winding not in ("auto", "strict"):
        raise InputError(f"winding must be \"auto\" or \"strict\", got {winding!r}", file=path)
    paths = {"world": str(path)}
    for key in _DATA_KEYS:
        if key in cfg:
            if not isinstance(cfg[key], str):
                raise InputError(f"{key} must be a file name (a string)", file=path)
            p = (path.parent / cfg[key]).resolve()
            if p.is_dir():
                raise InputError(f"{key!r}: {cfg[key]} is a directory, not a file",
                                 file=path)
            if not p.is_file():
                raise InputError(f"the file named by {key!r} does not exist: {cfg[key]}",
                                 file=path)
            paths[key] = str(p)

    plates, geometry, problems = read_plates(paths["plates"], winding)
    names = [p.name for p in plates]
    if "boundaries" in paths:
        boundaries, more = read_boundaries(paths["boundaries"], names)
        derived = False
    else:
        boundaries, more = derive_boundaries(geometry, names)
        derived = True
    name = cfg.get("name", path.stem)
    return World(tuple(plates), geometry, tuple(boundaries), float(radius_km) * 1e3, derived,
                 paths, tuple(problems + more), str(name), winding)


def world_from_rings(plates: dict, boundaries=(), radius_km: float = EARTH_RADIUS_KM,
                     winding: str = "auto", name: str = "world") -> World:
    """Build a world in code.

    Parameters
    ----------
    plates : dict
        ``{name: polygon}``, where a polygon is a list of rings (the first the exterior, the
        rest holes) or a list of such polygons, each ring an ``(n, 2)`` array of lon, lat in
        degrees (closed or not).
    boundaries : sequence of Boundary, optional
        Without them, the shared edges are used (kind ``unclassified``).

    Examples
    --------
    Two hemispheres (exactly half the sphere each, so the winding must be taken as written):

    >>> north = [[(0, 0), (120, 0), (240, 0)]]
    >>> south = [[(0, 0), (240, 0), (120, 0)]]
    >>> w = world_from_rings({"Upper": north, "Lower": south}, winding="strict")
    >>> [round(float(a) / 2.5505e14, 3) for a in w.area_m2]
    [1.0, 1.0]
    >>> w.locate([10.0, 10.0], [30.0, -30.0]).tolist()
    [0, 1]
    """
    feats = []
    for nm, poly in plates.items():
        poly = [np.asarray(r, float).tolist() for r in poly] if np.ndim(poly[0][0]) == 1 \
            else [[np.asarray(r, float).tolist() for r in part] for part in poly]
        gtype = "Polygon" if np.ndim(poly[0][0]) == 1 else "MultiPolygon"
        feats.append({"type": "Feature", "properties": {"plate": nm},
                      "geometry": {"type": gtype, "coordinates": poly}})
    pl, geometry, problems = plates_from_features(feats, "<plates in memory>", winding)
    names = [x.name for x in pl]
    if boundaries:
        bnd, derived = tuple(boundaries), False
    else:
        bnd, more = derive_boundaries(geometry, names)
        bnd, derived = tuple(bnd), True
        problems = problems + more
    return World(pl, geometry, bnd, radius_km * 1e3, derived, {}, tuple(problems), name,
                 winding)
