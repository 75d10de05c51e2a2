"""Regular lon/lat grids: sea-floor ages and mantle flow. Reading (NetCDF, CSV), sampling.

An age grid is regular in longitude and latitude, ages in Myr, NaN where there is no
oceanic lithosphere. A mantle flow grid holds the east and north velocity of the mantle
below the plates in mm/yr. Sampling is bilinear in lon/lat with longitude wrapped; a sample
is NaN where any of its four grid nodes is NaN (no age is invented at continental margins).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import InputError, check_input_file, read_csv_rows

MAX_AGE_MYR = 300.0


@dataclass(frozen=True, eq=False)
class RegularGrid:
    """Nodes of a regular lon/lat grid: increasing longitudes (degrees, spanning less than
    360) and latitudes (degrees)."""

    lon: np.ndarray
    lat: np.ndarray

    @property
    def global_lon(self) -> bool:
        """Whether the longitudes wrap all the way round (one step from 360 degrees)."""
        if len(self.lon) < 2:
            return False
        step = np.diff(self.lon).mean()
        return abs(self.lon[-1] - self.lon[0] + step - 360.0) < 1e-6 * 360

    def covers_sphere(self) -> bool:
        """Whether the nodes reach round in longitude and to within a step of each pole."""
        dlat = abs(self.lat[1] - self.lat[0])
        return self.global_lon and self.lat[0] <= -90 + dlat + 1e-9 and \
            self.lat[-1] >= 90 - dlat - 1e-9

    def cell_areas(self) -> np.ndarray:
        """Areas (steradians) of the cells centred on the nodes, shape (nlat, nlon).

        Cells are bounded half-way between nodes and clipped at the poles, so a global grid's
        cells add up to 4 pi exactly.
        """
        lat = np.radians(self.lat)
        edges = np.r_[lat[0] - (lat[1] - lat[0]) / 2, (lat[1:] + lat[:-1]) / 2,
                      lat[-1] + (lat[-1] - lat[-2]) / 2]
        edges = np.clip(edges, -np.pi / 2, np.pi / 2)
        band = np.sin(edges[1:]) - np.sin(edges[:-1])
        dlon = np.radians(np.diff(self.lon).mean())
        return band[:, None] * dlon * np.ones((1, len(self.lon)))

    def _sample(self, values, lon_deg, lat_deg):
        return bilinear(self.lon, self.lat, values, lon_deg, lat_deg, self.global_lon)


@dataclass(frozen=True, eq=False)
class AgeGrid(RegularGrid):
    """Sea-floor ages (Myr) on a regular grid, ``age_myr`` of shape (nlat, nlon), NaN where
    there is no oceanic lithosphere."""

    age_myr: np.ndarray = None
    source: str = "<memory>"

    def sample(self, lon_deg, lat_deg) -> np.ndarray:
        """Bilinear ages at points (degrees), NaN outside the grid or next to a NaN node."""
        return self._sample(self.age_myr, lon_deg, lat_deg)


@dataclass(frozen=True, eq=False)
class FlowGrid(RegularGrid):
    """Horizontal mantle velocity (mm/yr) on a regular grid, each of shape (nlat, nlon)."""

    ve_mm_yr: np.ndarray = None
    vn_mm_yr: np.ndarray = None
    source: str = "<memory>"

    def sample(self, lon_deg, lat_deg):
        """Bilinear east and north velocity (mm/yr) at points."""
        return (self._sample(self.ve_mm_yr, lon_deg, lat_deg),
                self._sample(self.vn_mm_yr, lon_deg, lat_deg))


def bilinear(glon, glat, values, lon_deg, lat_deg, global_lon: bool) -> np.ndarray:
    """Bilinear interpolation on a regular grid (``values`` shape (nlat, nlon)).

    Longitudes wrap when the grid is global; points outside the grid give NaN.
    """
    lon = np.asarray(lon_deg, dtype=float)
    lat = np.asarray(lat_deg, dtype=float)
    a = values
    x = np.mod(lon - glon[0], 360.0)
    if global_lon:
        glon_ext = np.r_[glon - glon[0], 360.0]
        a = np.concatenate([a, a[:, :1]], axis=1)
    else:
        glon_ext = glon - glon[0]
    i = np.searchsorted(glon_ext, x, side="right") - 1
    j = np.searchsorted(glat, lat, side="right") - 1
    # a point on the last node of an axis belongs to the last cell
    i = np.where(x == glon_ext[-1], len(glon_ext) - 2, i)
    j = np.where(lat == glat[-1], len(glat) - 2, j)
    inside = (i >= 0) & (i < len(glon_ext) - 1) & (j >= 0) & (j < len(glat) - 1)
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
    path = check_input_file(path)
    if path.suffix.lower() == ".csv":
        lon, lat, age = _read_csv(path)
    else:
        lon, lat, age = _read_netcdf(path)
    lon, lat, (age,) = _normalise_axes(lon, lat, [age], path)
    finite = age[np.isfinite(age)]
    if finite.size and (finite.min() < 0 or finite.max() > MAX_AGE_MYR):
        raise InputError(f"ages must lie in 0-{MAX_AGE_MYR:g} Myr; found "
                         f"{finite.min():g} to {finite.max():g}", file=path)
    return AgeGrid(lon, lat, age, str(path))


def _open_grid(path, variables):
    """Read 1-D lon, lat and the named 2-D variables (each a tuple of accepted names)."""
    import xarray as xr
    with open(check_input_file(path), "rb") as fh:
        head = fh.read(8)
    if not (head.startswith(b"CDF") or head.startswith(b"\x89HDF\r\n\x1a\n")):
        raise InputError("is not a NetCDF file (it has neither the NetCDF nor the HDF5 "
                         "signature); give a NetCDF grid, or a CSV lon,lat,... with the "
                         "suffix .csv", file=path)
    try:
        ds = xr.open_dataset(path)
    except Exception as exc:  # noqa: BLE001 - any reader failure is bad input here
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise InputError(f"cannot read as NetCDF: {first}", file=path) from None
    with ds:
        def coord(names, what):
            for n in names:
                if n in ds.variables:
                    return np.asarray(ds[n].values, dtype=float), n
            raise InputError(f"no {what} coordinate (looked for {', '.join(names)})",
                             file=path)
        lon, lon_name = coord(("lon", "longitude", "x"), "longitude")
        lat, lat_name = coord(("lat", "latitude", "y"), "latitude")
        out = []
        for names in variables:
            var = next((ds[n] for n in names if n in ds.data_vars), None)
            if var is None:
                two_d = [v for v in ds.data_vars.values() if v.ndim == 2]
                if len(variables) == 1 and len(two_d) == 1:
                    var = two_d[0]
                else:
                    raise InputError(f"no variable named {' or '.join(map(repr, names))}",
                                     file=path)
            if set(var.dims) != {lon_name, lat_name}:
                raise InputError(f"variable {var.name!r} must have dimensions ({lat_name}, "
                                 f"{lon_name}), has {var.dims}", file=path)
            out.append(np.asarray(var.transpose(lat_name, lon_name).values, dtype=float))
    return lon, lat, out


def _read_netcdf(path):
    lon, lat, (age,) = _open_grid(path, [("age_myr", "age")])
    return lon, lat, age


def _normalise_axes(lon, lat, arrays, path):
    """Check the axes and return them increasing, longitudes in [-180, 180)."""
    _check_axis(lon, "longitude", path)
    _check_axis(lat, "latitude", path)
    if lon[1] < lon[0]:
        lon, arrays = lon[::-1], [a[:, ::-1] for a in arrays]
    if lat[1] < lat[0]:
        lat, arrays = lat[::-1], [a[::-1] for a in arrays]
    step = lon[1] - lon[0]
    if abs(lon[-1] - lon[0] - 360.0) < 1e-6 * step:
        # gridline registration (-180 and 180, or 0 and 360): the last column repeats the
        # first meridian; keep one copy, after checking that they agree
        for a in arrays:
            if not np.allclose(a[:, 0], a[:, -1], rtol=1e-6, atol=1e-9, equal_nan=True):
                raise InputError(f"longitudes {lon[0]:g} and {lon[-1]:g} are the same "
                                 "meridian but the grid holds different values there",
                                 file=path)
        lon, arrays = lon[:-1], [a[:, :-1] for a in arrays]
    elif lon[-1] - lon[0] > 360.0:
        raise InputError(f"longitudes span {lon[-1] - lon[0]:g} degrees, more than 360",
                         file=path)
    lon = np.where(lon >= 180.0 - 1e-9, lon - 360.0, lon)
    order = np.argsort(lon, kind="stable")
    lon, arrays = lon[order], [a[:, order] for a in arrays]
    if np.any(np.abs(lat) > 90.0):
        raise InputError("latitudes out of [-90, 90]", file=path)
    return lon.astype(float), lat.astype(float), [a.astype(float) for a in arrays]


def read_flow(path) -> FlowGrid:
    """Read a mantle flow grid: NetCDF with 1-D lon, lat and 2-D east and north velocity in
    mm/yr, named ``ve_mm_yr``/``vn_mm_yr`` (or ``east``/``north``, ``ve``/``vn``)."""
    path = check_input_file(path)
    lon, lat, (ve, vn) = _open_grid(path, [("ve_mm_yr", "east", "ve"),
                                           ("vn_mm_yr", "north", "vn")])
    lon, lat, (ve, vn) = _normalise_axes(lon, lat, [ve, vn], path)
    if not (np.all(np.isfinite(ve)) and np.all(np.isfinite(vn))):
        raise InputError("the mantle flow grid has NaN or infinite values", file=path)
    return FlowGrid(lon, lat, ve, vn, str(path))


def _read_csv(path):
    rows = read_csv_rows(path)
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
