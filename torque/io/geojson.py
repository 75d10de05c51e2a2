"""GeoJSON (RFC 7946) in and out: plate polygons, boundary lines, continents, points.

Decoding checks every feature and collects what is wrong with rings and lines as
:class:`~torque.world.Problem` records (so that ``torque check`` can list them all); a file
that cannot be read at all raises :class:`~torque.errors.InputError` naming the file and
the feature.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from .. import sphere
from ..continents import Continents
from ..errors import InputError
from ..locate import cached as cached_locator
from ..rings import geometry_from_rings, remove_spikes
from ..world import BOUNDARY_KINDS, EARTH_RADIUS_KM, SAME_VERTEX_RAD, Boundary, Plate, Problem
from .files import atomic_write, read_json

__all__ = ["features", "read_plates", "plates_from_features", "NUMERIC_LINE_KEYS",
           "BOOLEAN_LINE_KEYS", "check_line_values", "read_boundaries",
           "read_continents", "write_points_geojson", "write_boundaries_geojson",
           "write_feature_collection"]


def features(doc, path, what: str) -> list:
    """The features of a GeoJSON FeatureCollection, each checked to have a geometry and
    properties; InputError naming the file and the feature otherwise.

    ``what`` names what the features should be, for messages ("plate polygons").

    Parameters
    ----------
    doc : object
        The parsed JSON.
    path : str or Path
        Named in messages.
    what : str

    Returns
    -------
    list of dict
    """
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


def _clean_ring(lonlat, path, i, name, add, spikes=None, tol_rad=SAME_VERTEX_RAD):
    """Unit vectors of a ring without its closing vertex and repeated vertices, or None."""
    xyz = sphere.lonlat_to_xyz(lonlat[:, 0], lonlat[:, 1])
    # Points at a pole are the same whatever their longitude.
    # vertices closer than the tolerance are one vertex (a digitiser's repeated point)
    keep = np.r_[True, np.sum(np.diff(xyz, axis=0) ** 2, axis=1) > tol_rad ** 2]
    xyz, ll = xyz[keep], lonlat[keep]
    if len(xyz) > 1 and np.sum((xyz[0] - xyz[-1]) ** 2) <= tol_rad ** 2:
        xyz, ll = xyz[:-1], ll[:-1]
    kept, apexes, length = remove_spikes(xyz, tol_rad)
    if apexes:
        add("warning", f"a zero-width spike was removed: the outline ran out and back along "
            f"the same {len(apexes)} arc(s) (about {length * EARTH_RADIUS_KM:,.0f} km of outline "
            "on an Earth-sized sphere, no area); boundary lines along it are trimmed", i, name,
            *ll[apexes[0]])
        if spikes is not None:
            spikes.append(xyz[apexes])
        xyz, ll = xyz[kept], ll[kept]
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


def read_plates(path, winding: str = "auto", tol_rad: float = SAME_VERTEX_RAD):
    """Read plate polygons from GeoJSON.

    Parameters
    ----------
    path : str or Path
    winding : {"auto", "strict"}
    tol_rad : float
        Vertices closer than this (radians on the unit sphere) are one vertex.

    Returns
    -------
    plates : tuple of Plate
    geometry : PlateGeometry
    problems : list of Problem
    """
    path = Path(path)
    return plates_from_features(features(read_json(path), path, "plate polygons"), path,
                                winding, tol_rad=tol_rad)


def plates_from_features(feats, path, winding: str = "auto", noun: str = "plate",
                         tol_rad: float = SAME_VERTEX_RAD):
    """:func:`read_plates` for GeoJSON features already in memory (``path`` names them).

    ``noun`` names what the polygons are in messages ("plate", "continent").

    Parameters
    ----------
    feats : list of dict
        GeoJSON features with ``properties.plate``.
    path : str or Path
    winding : {"auto", "strict"}
    noun : str
    tol_rad : float
        Vertices closer than this (radians on the unit sphere) are one vertex.

    Returns
    -------
    plates : tuple of Plate
    geometry : PlateGeometry
    problems : list of Problem
    """
    problems: list = []

    def add(sev, msg, i=None, name=None, lon=None, lat=None):
        problems.append(Problem(sev, msg, str(path), i, name,
                                None if lon is None else float(lon),
                                None if lat is None else float(lat)))

    spikes: list = []
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
                xyz = _clean_ring(ll, path, i, name, add, spikes, tol_rad)
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
    geometry = geometry_from_rings(rings, ring_plate, ring_hole, ring_poly, len(plates),
                                   winding, np.concatenate(spikes) if spikes else None)
    return tuple(plates), geometry, problems


#: The properties of a boundary line that the tool interprets (per-line overrides); any other
#: property (a name, a class code of the source) is kept and passed through to outputs.
NUMERIC_LINE_KEYS = {
    "slab_depth_km": "depth the slab reaches, km (slab pull and suction)",
    "slab_age_myr": "age of the sinking plate at the trench, Myr",
    "slab_dip_deg": "dip of the slab, degrees in (0, 90] (slab warming)",
    "ridge_age_myr": "age at which the edge form of ridge push is evaluated, Myr",
}
#: Line properties that are true or false.
BOOLEAN_LINE_KEYS = {
    "slab_attached": "whether the slab still hangs from the plate (false: a detached slab, "
                     "no pull)",
}


def check_line_values(values: dict, path, where) -> None:
    """InputError unless the slab and ridge numbers of a line (GeoJSON properties, or a
    row of a slab table) are valid.

    Parameters
    ----------
    values : dict
        Property name -> value; keys other than the documented ones are not checked.
    path : str or Path
        For the message.
    where : str
        The feature or row, for the message.
    """
    for k in NUMERIC_LINE_KEYS:
        v = values.get(k)
        if v is not None and (not isinstance(v, (int, float)) or isinstance(v, bool)
                              or not np.isfinite(v) or v <= 0
                              or (k == "slab_dip_deg" and v > 90)):
            raise InputError(f"property {k!r} must be a positive number"
                             + (" of at most 90" if k == "slab_dip_deg" else "")
                             + f", got {v!r}", file=path, where=where,
                             hint=NUMERIC_LINE_KEYS[k])
    for k in BOOLEAN_LINE_KEYS:
        v = values.get(k)
        if v is not None and not isinstance(v, bool):
            raise InputError(f"property {k!r} must be true or false, got {v!r}", file=path,
                             where=where, hint=BOOLEAN_LINE_KEYS[k])


def read_boundaries(path, plate_names) -> tuple[list, list]:
    """Read boundary lines from GeoJSON; returns ``(boundaries, problems)``.

    Parameters
    ----------
    path : str or Path
    plate_names : sequence of str
        The world's plates (a line naming another is a problem).

    Returns
    -------
    boundaries : list of Boundary
    problems : list of Problem
    """
    path = Path(path)
    feats = features(read_json(path), path, "boundary lines")
    names = set(plate_names)
    out, problems = [], []

    def add(sev, msg, i, lon=None, lat=None):
        problems.append(Problem(sev, msg, str(path), i, None, lon, lat))

    for i, f in enumerate(feats):
        kind, left, right, sub, extra, ok = _boundary_properties(
            f["properties"], names, path, i, add)
        for xyz in _line_parts(f["geometry"], path, i, add):
            if xyz is None:
                ok = False
            elif ok:
                out.append(Boundary(kind, left, right, xyz, i, sub, extra))
    return out, problems


def _boundary_properties(props, names, path, i, add):
    """Kind, plates, sinking plate and numeric overrides of boundary feature ``i``, and
    whether they are usable (problems go to ``add``; unreadable ones raise InputError)."""
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
    # every other property passes through to outputs; only the documented numeric
    # overrides are interpreted, and checked
    extra = {k: v for k, v in props.items() if k not in ("kind", "left", "right", "subducting")}
    check_line_values(extra, path, where)
    return kind, left, right, sub, extra, ok


def _line_parts(geom, path, i, add) -> list:
    """Unit vectors ``(K, 3)`` of each part of a boundary feature's line, None for a part
    that cannot be used (the problem goes to ``add``)."""
    where = f"feature {i}"
    gtype, coords = geom.get("type"), geom.get("coordinates")
    if gtype == "LineString":
        parts = [coords]
    elif gtype == "MultiLineString":
        parts = coords
    else:
        raise InputError(f"geometry type {gtype!r} is not a boundary line; use LineString "
                         "or MultiLineString", file=path, where=where)
    if not isinstance(parts, list) or not parts:
        raise InputError("line coordinates must be a non-empty list", file=path, where=where)
    out = []
    for part in parts:
        if not isinstance(part, list):
            raise InputError("a line must be a list of [lon, lat] positions", file=path,
                             where=where)
        ll = _coords_array(part, path, where)
        if not _check_coordinates(ll, path, i, None, lambda s, m, *a: add(s, m, i)):
            out.append(None)
            continue
        xyz = sphere.lonlat_to_xyz(ll[:, 0], ll[:, 1])
        keep = np.r_[True, np.any(np.abs(np.diff(xyz, axis=0)) > 1e-15, axis=1)]
        xyz = xyz[keep]
        if len(xyz) < 2:
            add("error", "a boundary line needs at least 2 distinct vertices", i)
            out.append(None)
        elif np.any(sphere.dot(xyz[:-1], xyz[1:]) < -1.0 + 1e-12):
            add("error", "two consecutive vertices are antipodal; insert a vertex between "
                "them", i)
            out.append(None)
        else:
            out.append(xyz)
    return out


def read_continents(path, winding: str = "auto") -> Continents:
    """Read continental regions (GeoJSON Polygon/MultiPolygon features, any properties).

    Continents must not overlap one another. ``winding`` is the world's key: ``"auto"``
    takes the smaller region of each ring, ``"strict"`` the rings as written (RFC 7946).

    Parameters
    ----------
    path : str or Path
    winding : {"auto", "strict"}

    Returns
    -------
    Continents
    """
    path = Path(path)
    feats = features(read_json(path), path, "continent polygons")
    # plates_from_features wants a name per feature; continents need none.
    named = []
    for i, f in enumerate(feats):
        g = dict(f)
        g["properties"] = dict(f.get("properties") or {}, plate=f"continent {i}")
        named.append(g)
    _, geom, problems = plates_from_features(named, path, winding, noun="continent")
    errs = [p for p in problems if p.severity == "error"]
    if errs:
        raise InputError("; ".join(f"feature {e.feature}: {e.message}" for e in errs[:3]),
                         file=path)
    c = Continents(geom.xyz, geom.ring_start, geom.ring_is_hole, geom.ring_polygon, str(path))
    # continents alone (not a tiling): a cell held by two of them is an overlap
    n_poly = int(geom.ring_polygon.max()) + 1
    alone = cached_locator(geom.xyz, geom.ring_start, geom.ring_polygon, geom.ring_is_hole,
                         n_poly)
    where = alone.overlaps()
    if len(where):
        lon, lat = sphere.xyz_to_lonlat(where[0])
        raise InputError(f"continents overlap one another (near lon {float(lon):.2f}, lat "
                         f"{float(lat):.2f}); merge the overlapping polygons", file=path)
    return c


def write_points_geojson(path, lon, lat, properties: dict) -> None:
    """Write points with per-point properties as a GeoJSON FeatureCollection.

    Parameters
    ----------
    path : str or Path
    lon, lat : array_like, shape (N,)
        Degrees.
    properties : dict
        ``{name: array of N values}``.
    """
    names = list(properties)
    cols = [np.asarray(properties[n]).tolist() for n in names]
    feats = []
    for k, (x, y) in enumerate(zip(np.asarray(lon).tolist(), np.asarray(lat).tolist())):
        props = {n: c[k] for n, c in zip(names, cols)}
        feats.append({"type": "Feature", "geometry": {"type": "Point", "coordinates": [x, y]},
                      "properties": props})
    with atomic_write(path) as fh:
        json.dump({"type": "FeatureCollection", "features": feats}, fh)


def write_boundaries_geojson(path, boundaries) -> None:
    """Write boundary lines in the contract's format.

    Each line's ``feature`` property is the index of the feature of the boundaries file
    it came from (:attr:`Boundary.feature`), so that lines split by classification can be
    joined back to their source; a line the world derived from the plates' shared edges
    has none.

    Parameters
    ----------
    path : str or Path
    boundaries : sequence of Boundary
    """
    feats = []
    for b in boundaries:
        lon, lat = sphere.xyz_to_lonlat(b.xyz)
        props = {"kind": b.kind, "left": b.left, "right": b.right}
        if b.subducting:
            props["subducting"] = b.subducting
        props.update(b.properties)
        props.pop("feature", None)            # a source file's own, when read back
        if b.feature is not None:
            props["feature"] = int(b.feature)
        feats.append({"type": "Feature", "properties": props,
                      "geometry": {"type": "LineString",
                                   "coordinates": np.round(np.c_[lon, lat], 10).tolist()}})
    with atomic_write(path) as fh:
        json.dump({"type": "FeatureCollection", "features": feats}, fh, indent=1)


def write_feature_collection(path, features) -> None:
    """Write GeoJSON features (dicts) as a FeatureCollection, atomically.

    Parameters
    ----------
    path : str or Path
    features : iterable of dict
    """
    with atomic_write(path) as fh:
        json.dump({"type": "FeatureCollection", "features": list(features)}, fh, indent=1)
