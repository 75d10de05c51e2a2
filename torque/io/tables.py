"""Reading point lists and writing tables, GeoJSON and NetCDF, atomically.

Every writer goes through a temporary file beside the target, renamed into place only when
complete, so that no output is ever left half-written.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from . import sphere
from .errors import (InputError, atomic_path, atomic_write, check_output_path,
                     read_csv_rows, read_json)

FIELD_SUFFIXES = (".csv", ".geojson", ".json", ".nc")


def output_suffix(path, allowed) -> str:
    """The lower-case suffix of ``path``, or InputError if it is not one of ``allowed`` or
    the path cannot be written (a folder, or under a file): checked before any work."""
    check_output_path(path)
    suffix = Path(path).suffix.lower()
    if suffix not in allowed:
        raise InputError(f"cannot write {suffix or 'a file without a suffix'}",
                         file=path, hint=f"use one of {', '.join(allowed)}")
    return suffix


def _csv_text(column) -> np.ndarray:
    """Text values escaped for CSV, done once per distinct value."""
    uniq, inverse = np.unique(column.astype(str), return_inverse=True)
    esc = np.array(['"' + u.replace('"', '""') + '"' if any(ch in u for ch in ',"\n\r')
                    else u for u in uniq], dtype=object)
    return esc[inverse.ravel()]


def write_csv(path, columns: dict) -> None:
    """Write equal-length columns ``{name: array}`` as CSV.

    Floats are written to 10 significant digits, integers as integers, anything else as
    text, quoted as CSV requires.
    """
    names = list(columns)
    cols = [np.asarray(columns[n]) for n in names]
    fmts = []
    for c in cols:
        if c.dtype.kind == "f":
            fmts.append("%.10g")
        elif c.dtype.kind in "iu":
            fmts.append("%d")
        else:
            fmts.append("%s")
    line = ",".join(fmts) + "\n"
    text_cols = [(_csv_text(c) if f == "%s" else c).tolist() for c, f in zip(cols, fmts)]
    with atomic_write(path, newline="") as fh:
        fh.write(",".join(names) + "\n")
        fh.writelines(line % row for row in zip(*text_cols))


def write_points_geojson(path, lon, lat, properties: dict) -> None:
    """Write points with per-point properties as a GeoJSON FeatureCollection."""
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
    """Write boundary lines in the contract's format."""
    feats = []
    for b in boundaries:
        lon, lat = sphere.xyz_to_lonlat(b.xyz)
        props = {"kind": b.kind, "left": b.left, "right": b.right}
        if b.subducting:
            props["subducting"] = b.subducting
        props.update(b.properties)
        feats.append({"type": "Feature", "properties": props,
                      "geometry": {"type": "LineString",
                                   "coordinates": np.round(np.c_[lon, lat], 10).tolist()}})
    with atomic_write(path) as fh:
        json.dump({"type": "FeatureCollection", "features": feats}, fh, indent=1)


def write_netcdf(path, dataset) -> None:
    """Write an xarray Dataset to NetCDF-4 (h5netcdf engine) atomically."""
    with atomic_path(path) as tmp:
        dataset.to_netcdf(tmp, engine="h5netcdf")


def read_points(path):
    """Read a CSV with columns ``lon,lat`` (degrees); returns two arrays, in file order."""
    path = Path(path)
    rows = read_csv_rows(path)
    if not rows:
        raise InputError("the file is empty; expected a header lon,lat", file=path)
    header = [h.strip().lower() for h in rows[0]]
    if "lon" not in header or "lat" not in header:
        raise InputError("the header must name columns 'lon' and 'lat'", file=path)
    il, ia = header.index("lon"), header.index("lat")
    vals = np.empty((len(rows) - 1, 2))
    for n, r in enumerate(rows[1:]):
        for k, c in enumerate((il, ia)):
            try:
                vals[n, k] = float(r[c])
            except (ValueError, IndexError):
                raise InputError(f"{header[c]} is {r[c] if c < len(r) else ''!r}, not a "
                                 "number", file=path, where=f"line {n + 2}") from None
    if not len(vals):
        raise InputError("no points after the header", file=path)
    bad = ~np.isfinite(vals).all(axis=1) | (np.abs(vals[:, 1]) > 90) | (
        (vals[:, 0] < -180) | (vals[:, 0] > 360))
    if bad.any():
        k = int(np.nonzero(bad)[0][0])
        raise InputError(f"point ({vals[k, 0]:g}, {vals[k, 1]:g}) is out of range "
                         "(lon in [-180, 360], lat in [-90, 90])", file=path,
                         where=f"line {k + 2}")
    return vals[:, 0], vals[:, 1]


# ----------------------------------------------------------------------------------------
# the fit JSON (output of `torque fit`), read in one place
# ----------------------------------------------------------------------------------------
def read_fit(path, plate_names=None) -> dict:
    """Read and check the JSON written by ``torque fit``.

    Parameters
    ----------
    path : str or Path
    plate_names : list of str, optional
        The world's plates: the fit must list exactly these, in this order.

    Returns
    -------
    dict
        The parsed document, with a ``coefficients`` object and a ``plates`` list.
    """
    doc = read_json(path)
    if not (isinstance(doc, dict) and isinstance(doc.get("coefficients"), dict)
            and isinstance(doc.get("plates"), list)
            and all(isinstance(p, dict) and "plate" in p for p in doc["plates"])):
        raise InputError("not the JSON output of torque fit (it needs 'coefficients' and "
                         "'plates')", file=path)
    if plate_names is not None and [p["plate"] for p in doc["plates"]] != list(plate_names):
        raise InputError("the fit is for other plates than this world's", file=path)
    return doc


def fit_values(doc: dict, labels, path) -> list:
    """The fitted value of each coefficient in ``labels`` (floats, in that order), or
    InputError naming ``path`` when the fit lacks one or holds no number for it."""
    coefs = doc["coefficients"]
    missing = [x for x in labels if x not in coefs]
    if missing:
        raise InputError(f"the fit is for another hypothesis: no coefficient for "
                         f"{', '.join(map(repr, missing))}", file=path,
                         hint="fit this hypothesis with torque fit first")
    out = []
    for label in labels:
        v = coefs[label].get("value") if isinstance(coefs[label], dict) else None
        if not isinstance(v, (int, float)) or isinstance(v, bool) or not np.isfinite(v):
            raise InputError(f"coefficient {label!r} has no numeric 'value'", file=path)
        out.append(float(v))
    return out
