"""World files (TOML): a plate model and the files of its data, read into a
:class:`~torque.world.World`; and worlds built from rings in memory."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..rings import derive_boundaries, trim_along_spikes
from ..world import EARTH_RADIUS_KM, Problem, World
from .files import atomic_write, read_toml
from .geojson import check_line_values, plates_from_features, read_boundaries, read_plates
from .tables import read_table

__all__ = ["WORLD_KEYS", "FROM_AGES", "DEFAULT_VERTEX_TOLERANCE_M", "DATA_KEYS",
           "SLAB_COLUMNS", "load_world", "apply_slab_table", "world_from_rings",
           "write_world_file"]

WORLD_KEYS = {
    "name": "optional title used in reports",
    "radius_km": "planet radius in km (default 6371.0)",
    "plates": "GeoJSON file of plate polygons (required)",
    "boundaries": "GeoJSON file of boundary lines",
    "continents": 'GeoJSON file of continental regions, or "from-ages": the age grid\'s '
                  'no-data nodes',
    "ages": "sea-floor age grid (NetCDF or CSV lon,lat,age_myr)",
    "mantle_flow": "mantle velocity grid (NetCDF)",
    "drag_coupling": "basal drag coupling grid, Pa s/m (NetCDF), for drag coupling = \"grid\"",
    "topography": "elevation (and crustal thickness) grid (NetCDF), for the 'gpe' force",
    "slabs": "slab table (CSV feature,slab_depth_km,slab_dip_deg,slab_attached,"
             "slab_age_myr): per subduction line of the boundaries file",
    "winding": '"auto" (default) or "strict"',
    "vertex_tolerance_m": "vertices closer than this are one vertex (default 5 m)",
}
#: The value of the world key ``continents`` that takes the age grid's no-data nodes as the
#: continental region.
FROM_AGES = "from-ages"
#: Vertices closer than this are one vertex (a digitiser's repeated point): a few metres.
DEFAULT_VERTEX_TOLERANCE_M = 5.0
DATA_KEYS = ("plates", "boundaries", "continents", "ages", "mantle_flow", "drag_coupling",
             "topography", "slabs")
#: The columns of a slab table besides ``feature``: line properties of a subduction line.
SLAB_COLUMNS = ("slab_depth_km", "slab_dip_deg", "slab_attached", "slab_age_myr")


def load_world(path) -> World:
    """Read a world file (TOML) and the files it names.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    World
        With ``problems`` listing whatever reading found wrong or doubtful; call
        :func:`torque.validate.run_checks` for the full set of checks.

    Raises
    ------
    InputError
        For files that cannot be read at all: missing files, malformed TOML or JSON,
        unknown keys, features of the wrong type.

    Examples
    --------
    >>> import numpy as np
    >>> w = load_world("polygons_demo/world.toml")
    >>> len(w.plates), w.plate_names[:2]
    (14, ['Vessane', 'Orlum'])
    >>> round(float(w.area_m2.sum() / (4 * np.pi * w.radius_m ** 2)), 12)   # exact areas
    1.0
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
    for key in DATA_KEYS:
        if key == "continents" and cfg.get(key) == FROM_AGES:
            if "ages" not in cfg:
                raise InputError('continents = "from-ages" needs an age grid: add \'ages\'',
                                 file=path)
            paths[key] = FROM_AGES
            continue
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

    tol_m = cfg.get("vertex_tolerance_m", DEFAULT_VERTEX_TOLERANCE_M)
    if (not isinstance(tol_m, (int, float)) or isinstance(tol_m, bool)
            or not np.isfinite(tol_m) or not 0 < tol_m <= 1000):
        raise InputError(f"vertex_tolerance_m must be a number of metres in (0, 1000], got "
                         f"{tol_m!r}", file=path)
    tol_rad = float(tol_m) / (float(radius_km) * 1e3)
    plates, geometry, problems = read_plates(paths["plates"], winding, tol_rad)
    names = [p.name for p in plates]
    if "boundaries" in paths:
        boundaries, more = read_boundaries(paths["boundaries"], names)
        features = [b.feature for b in boundaries]
        boundaries, trimmed = trim_along_spikes(boundaries, geometry,
                                                {n: i for i, n in enumerate(names)}, tol_rad)
        left = {b.feature for b in boundaries}
        more += [Problem("warning", f"{n} vertex(es) that ran along a removed outline spike "
                         "were trimmed from this line"
                         + ("" if features[k] in left else "; nothing of it is left"),
                         paths["boundaries"], features[k]) for k, n in trimmed]
        derived = False
        if "slabs" in paths:
            boundaries = apply_slab_table(paths["slabs"], boundaries)
    else:
        if "slabs" in paths:
            raise InputError("a slab table names lines of the boundaries file; this world "
                             "has none", file=path, hint="add 'boundaries', or drop 'slabs'")
        boundaries, more = derive_boundaries(geometry, names, tol_rad)
        derived = True
    name = cfg.get("name", path.stem)
    return World(tuple(plates), geometry, tuple(boundaries), float(radius_km) * 1e3, derived,
                 paths, tuple(problems + more), str(name), winding, tol_rad)


def apply_slab_table(path, boundaries) -> list:
    """Boundaries with the slab properties of a slab table merged into their lines.

    The table (CSV) has a column ``feature``, the 0-based index of a subduction line in
    the boundaries file (as messages name features), and any of :data:`SLAB_COLUMNS`; an
    empty cell leaves the line as it is. A value the line already has in its own
    properties is an error (one place says each number).

    Parameters
    ----------
    path : str or Path
    boundaries : list of Boundary

    Returns
    -------
    list of Boundary
    """
    table = read_table(path, ("feature",), comments=True,
                       hint="need a column 'feature' and any of " + ", ".join(SLAB_COLUMNS))
    unknown = [c for c in table.header if c != "feature" and c not in SLAB_COLUMNS]
    if unknown:
        raise InputError(f"unknown column(s) {', '.join(map(repr, unknown))}", file=path,
                         hint=f"valid columns: feature, {', '.join(SLAB_COLUMNS)}")
    feature = table.numbers("feature")
    by_feature = {}
    for b in boundaries:
        by_feature.setdefault(b.feature, []).append(b)
    rows = {}
    for i, f in enumerate(feature):
        where = f"line {table.line(i)}"
        if f != int(f) or int(f) not in by_feature:
            raise InputError(f"feature {f:g} is not a line of the boundaries file", file=path,
                             where=where, hint="features count from 0 in file order")
        if by_feature[int(f)][0].kind != "subduction":
            raise InputError(f"feature {int(f)} is a {by_feature[int(f)][0].kind} line, not a "
                             "subduction zone", file=path, where=where)
        if int(f) in rows:
            raise InputError(f"feature {int(f)} is listed twice", file=path, where=where)
        values = {}
        for c in table.header:
            if c == "feature":
                continue
            cell = table.text(c)[i]
            if cell == "":
                continue
            if c == "slab_attached":
                low = cell.lower()
                if low not in ("true", "false", "yes", "no", "1", "0"):
                    raise InputError(f"slab_attached is {cell!r}; write true or false",
                                     file=path, where=where)
                values[c] = low in ("true", "yes", "1")
            else:
                values[c] = table.numbers(c, blank=np.nan)[i]
        check_line_values(values, path, where)
        twice = sorted(set(values) & set(by_feature[int(f)][0].properties))
        if twice:
            raise InputError(f"feature {int(f)} already gives {', '.join(twice)} in the "
                             "boundaries file", file=path, where=where,
                             hint="say each number in one place")
        rows[int(f)] = values
    return [dataclasses.replace(b, properties={**b.properties, **rows[b.feature]})
            if b.feature in rows else b for b in boundaries]


def world_from_rings(plates: dict, boundaries=(), radius_km: float = EARTH_RADIUS_KM,
                     winding: str = "auto", name: str = "world",
                     vertex_tolerance_m: float = DEFAULT_VERTEX_TOLERANCE_M) -> World:
    """Build a world in code.

    Parameters
    ----------
    plates : dict
        ``{name: polygon}``, where a polygon is a list of rings (the first the exterior, the
        rest holes) or a list of such polygons, each ring an ``(n, 2)`` array of lon, lat in
        degrees (closed or not).
    boundaries : sequence of Boundary, optional
        Without them, the shared edges are used (kind ``unclassified``).
    radius_km : float
    winding : {"auto", "strict"}
    name : str
    vertex_tolerance_m : float
        Vertices closer than this are one vertex.

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
    pl, geometry, problems = plates_from_features(
        feats, "<plates in memory>", winding, tol_rad=vertex_tolerance_m / (radius_km * 1e3))
    names = [x.name for x in pl]
    if boundaries:
        bnd, derived = tuple(boundaries), False
    else:
        bnd, more = derive_boundaries(geometry, names,
                                      vertex_tolerance_m / (radius_km * 1e3))
        bnd, derived = tuple(bnd), True
        problems = problems + more
    return World(pl, geometry, bnd, radius_km * 1e3, derived, {}, tuple(problems), name,
                 winding, vertex_tolerance_m / (radius_km * 1e3))


def write_world_file(path, keys: dict, comment: str | None = None) -> None:
    """Write a world file (TOML), atomically.

    Parameters
    ----------
    path : str or Path
    keys : dict
        Keys of :data:`WORLD_KEYS` and their values (strings and numbers), in order.
    comment : str, optional
        A first line, written as a TOML comment.
    """
    from .hypothesis import toml_value
    unknown = sorted(set(keys) - set(WORLD_KEYS))
    if unknown:
        raise ValueError(f"not world file keys: {unknown}")
    lines = ([f"# {comment}"] if comment else []) + [f"{k} = {toml_value(v)}"
                                                     for k, v in keys.items()]
    with atomic_write(path) as fh:
        fh.write("\n".join(lines) + "\n")
