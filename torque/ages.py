"""Sea-floor age grids: reading (NetCDF, CSV) and sampling.

An age grid is regular in longitude and latitude, ages in Myr, NaN where there is no
oceanic lithosphere. Sampling is bilinear in lon/lat with longitude wrapped; a sample is
NaN where any of its four grid nodes is NaN (no age is invented at continental margins).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import InputError

MAX_AGE_MYR = 300.0


@dataclass(frozen=True, eq=False)
class AgeGrid:
    """Ages (Myr) on a regular grid.

    Attributes
    ----------
    lon : ndarray, shape (nlon,)
        Increasing longitudes in degrees, spanning less than 360 degrees.
    lat : ndarray, shape (nlat,)
        Increasing latitudes in degrees.
    age_myr : ndarray, shape (nlat, nlon)
    source : str
    """

    lon: np.ndarray
    lat: np.ndarray
    age_myr: np.ndarray
    source: str = "<memory>"

    @property
    def global_lon(self) -> bool:
        """Whether the longitudes wrap all the way round (one step from 360 degrees)."""
        if len(self.lon) < 2:
            return False
        step = np.diff(self.lon).mean()
        return abs(self.lon[-1] - self.lon[0] + step - 360.0) < 1e-6 * 360

    def sample(self, lon_deg, lat_deg) -> np.ndarray:
        """Bilinear ages at points (degrees), NaN outside the grid or next to a NaN node."""
        lon = np.asarray(lon_deg, dtype=float)
        lat = np.asarray(lat_deg, dtype=float)
        glon, glat, a = self.lon, self.lat, self.age_myr
        x = np.mod(lon - glon[0], 360.0)
        if self.global_lon:
            glon_ext = np.r_[glon - glon[0], 360.0]
            a = np.concatenate([a, a[:, :1]], axis=1)
        else:
            glon_ext = glon - glon[0]
        i = np.searchsorted(glon_ext, x, side="right") - 1
        j = np.searchsorted(glat, lat, side="right") - 1
        inside = (i >= 0) & (i < len(glon_ext) - 1) & (j >= 0) & (j < len(glat) - 1)
        # points exactly on the last node row/column
        on_last_lat = lat == glat[-1]
        j = np.where(on_last_lat, len(glat) - 2, j)
        inside |= on_last_lat & (i >= 0) & (i < len(glon_ext) - 1)
        i = np.clip(i, 0, len(glon_ext) - 2)
        j = np.clip(j, 0, len(glat) - 2)
        fx = (x - glon_ext[i]) / (glon_ext[i + 1] - glon_ext[i])
        fy = (lat - glat[j]) / (glat[j + 1] - glat[j])
        out = ((1 - fx) * (1 - fy) * a[j, i] + fx * (1 - fy) * a[j, i + 1]
               + (1 - fx) * fy * a[j + 1, i] + fx * fy * a[j + 1, i + 1])
        return np.where(inside, out, np.nan)


def _check_axis(values, name, path):
    if values.ndim != 1 or len(values) < 2:
        raise InputError(f"{name} must be a 1-D coordinate with at least 2 values", file=path)
    d = np.diff(values)
    if not (np.all(d > 0) or np.all(d < 0)):
        raise InputError(f"{name} must increase (or decrease) monotonically", file=path)
    if not np.allclose(d, d[0], rtol=1e-6, atol=1e-9):
        raise InputError(f"{name} must be evenly spaced (a regular grid)", file=path)


def read_ages(path) -> AgeGrid:
    """Read an age grid from NetCDF (1-D lon and lat, 2-D age in Myr) or CSV lon,lat,age_myr.

    NetCDF: the coordinates may be called ``lon``/``longitude``/``x`` and
    ``lat``/``latitude``/``y``; the age variable ``age_myr`` or ``age``, or else the only
    2-D variable. CSV: one row per grid node, header ``lon,lat,age_myr``, empty or ``nan``
    age for no ocean; the nodes must form a full regular grid.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError("file not found", file=path)
    if path.suffix.lower() == ".csv":
        lon, lat, age = _read_csv(path)
    else:
        lon, lat, age = _read_netcdf(path)
    _check_axis(lon, "longitude", path)
    _check_axis(lat, "latitude", path)
    if lon[1] < lon[0]:
        lon, age = lon[::-1], age[:, ::-1]
    if lat[1] < lat[0]:
        lat, age = lat[::-1], age[::-1]
    lon = np.where(lon > 180.0 + 1e-9, lon - 360.0, lon)
    order = np.argsort(lon, kind="stable")
    lon, age = lon[order], age[:, order]
    if np.any(np.abs(lat) > 90.0):
        raise InputError("latitudes out of [-90, 90]", file=path)
    finite = age[np.isfinite(age)]
    if finite.size and (finite.min() < 0 or finite.max() > MAX_AGE_MYR):
        raise InputError(f"ages must lie in 0-{MAX_AGE_MYR:g} Myr; found "
                         f"{finite.min():g} to {finite.max():g}", file=path)
    return AgeGrid(lon.astype(float), lat.astype(float), age.astype(float), str(path))


def _read_netcdf(path):
    import xarray as xr
    try:
        ds = xr.open_dataset(path)
    except Exception as exc:  # noqa: BLE001 - any reader failure is bad input here
        raise InputError(f"cannot read as NetCDF: {exc}", file=path) from None
    with ds:
        def coord(names, what):
            for n in names:
                if n in ds.variables:
                    return np.asarray(ds[n].values, dtype=float), n
            raise InputError(f"no {what} coordinate (looked for {', '.join(names)})",
                             file=path)
        lon, lon_name = coord(("lon", "longitude", "x"), "longitude")
        lat, lat_name = coord(("lat", "latitude", "y"), "latitude")
        var = None
        for n in ("age_myr", "age"):
            if n in ds.data_vars:
                var = ds[n]
                break
        if var is None:
            two_d = [v for v in ds.data_vars.values() if v.ndim == 2]
            if len(two_d) != 1:
                raise InputError("no variable 'age_myr' or 'age', and not exactly one 2-D "
                                 "variable", file=path)
            var = two_d[0]
        if set(var.dims) != {lon_name, lat_name}:
            raise InputError(f"the age variable must have dimensions ({lat_name}, "
                             f"{lon_name}), has {var.dims}", file=path)
        age = np.asarray(var.transpose(lat_name, lon_name).values, dtype=float)
    return lon, lat, age


def _read_csv(path):
    import csv
    with open(path, newline="", encoding="utf-8-sig") as fh:
        rows = [r for r in csv.reader(fh) if r and any(c.strip() for c in r)]
    if not rows:
        raise InputError("the file is empty", file=path)
    header = [h.strip().lower() for h in rows[0]]
    for need in ("lon", "lat", "age_myr"):
        if need not in header:
            raise InputError(f"the header has no column {need!r} (need lon,lat,age_myr)",
                             file=path)
    ci = [header.index(k) for k in ("lon", "lat", "age_myr")]
    vals = np.full((len(rows) - 1, 3), np.nan)
    for n, r in enumerate(rows[1:]):
        for k, c in enumerate(ci):
            s = r[c].strip() if c < len(r) else ""
            if s == "" and k == 2:
                continue
            try:
                vals[n, k] = float(s)
            except ValueError:
                raise InputError(f"{header[c]} is {s!r}, not a number", file=path,
                                 where=f"line {n + 2}") from None
    lon_u, ix = np.unique(vals[:, 0], return_inverse=True)
    lat_u, iy = np.unique(vals[:, 1], return_inverse=True)
    if len(lon_u) * len(lat_u) != len(vals):
        raise InputError(f"the {len(vals)} rows do not form a full regular grid "
                         f"({len(lon_u)} longitudes x {len(lat_u)} latitudes)", file=path)
    age = np.full((len(lat_u), len(lon_u)), np.nan)
    age[iy.ravel(), ix.ravel()] = vals[:, 2]
    return lon_u, lat_u, age
