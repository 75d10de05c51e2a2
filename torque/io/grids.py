"""Grids in and out: sea-floor ages, mantle flow, drag coupling and topography (NetCDF, and
CSV for ages), velocity fields (NetCDF, CF-style), through xarray and the h5netcdf engine."""

from __future__ import annotations

import json

import numpy as np

from ..errors import InputError
from ..grids import MAX_AGE_MYR, AgeGrid, CouplingGrid, FlowGrid, TopographyGrid
from .files import atomic_path, check_input_file
from .tables import read_table

__all__ = ["read_ages", "read_flow", "read_coupling", "read_topography", "write_netcdf",
           "write_age_grid", "field_dataset", "write_field"]


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

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    AgeGrid
        Longitudes in [-180, 180), increasing; ages in Myr, NaN for no ocean.
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
                         f"{finite.min():g} to {finite.max():g}", file=path,
                         hint="ages are read in Myr: were they written in kyr or years?"
                         if finite.max() > MAX_AGE_MYR and finite.min() >= 0 else None)
    return AgeGrid(lon, lat, age, str(path))


def _open_grid(path, variables, optional=()):
    """Read 1-D lon, lat and the named 2-D variables (each a tuple of accepted names); a
    variable whose index is in ``optional`` comes back None when absent."""
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
        for k, names in enumerate(variables):
            var = next((ds[n] for n in names if n in ds.data_vars), None)
            if var is None and k in optional:
                out.append(None)
                continue
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
    mm/yr, named ``ve_mm_yr``/``vn_mm_yr`` (or ``east``/``north``, ``ve``/``vn``).

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    FlowGrid
    """
    path = check_input_file(path)
    lon, lat, (ve, vn) = _open_grid(path, [("ve_mm_yr", "east", "ve"),
                                           ("vn_mm_yr", "north", "vn")])
    lon, lat, (ve, vn) = _normalise_axes(lon, lat, [ve, vn], path)
    if not (np.all(np.isfinite(ve)) and np.all(np.isfinite(vn))):
        raise InputError("the mantle flow grid has NaN or infinite values", file=path)
    return FlowGrid(lon, lat, ve, vn, str(path))


def read_coupling(path) -> CouplingGrid:
    """Read a basal drag coupling grid (NetCDF): 1-D lon, lat and either a 2-D coupling
    ``coupling_pa_s_m`` (or ``coupling``) in Pa s/m, or a channel viscosity
    ``viscosity_pa_s`` and thickness ``thickness_m``, taken as C = viscosity / thickness
    per node.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    CouplingGrid
        Every node finite and non-negative (a grid must say the coupling everywhere; zero
        is allowed: no drag there).
    """
    path = check_input_file(path)
    lon, lat, (c, eta, h) = _open_grid(path, [("coupling_pa_s_m", "coupling"),
                                              ("viscosity_pa_s",), ("thickness_m",)],
                                       optional=(0, 1, 2))
    if c is None:
        if eta is None or h is None:
            raise InputError("a coupling grid needs 'coupling_pa_s_m' (Pa s/m), or both "
                             "'viscosity_pa_s' and 'thickness_m'", file=path)
        if not (np.all(np.isfinite(h)) and np.all(h > 0)):
            raise InputError("thickness_m must be finite and positive at every node",
                             file=path)
        c = eta / h
    lon, lat, (c,) = _normalise_axes(lon, lat, [c], path)
    if not np.all(np.isfinite(c)) or np.any(c < 0):
        bad = int((~np.isfinite(c) | (c < 0)).sum())
        raise InputError(f"the drag coupling must be finite and non-negative at every node; "
                         f"{bad} node(s) are not", file=path,
                         hint="fill gaps (zero means no drag there)")
    return CouplingGrid(lon, lat, c, str(path))


def read_topography(path) -> TopographyGrid:
    """Read a topography grid (NetCDF): 1-D lon, lat, a 2-D elevation ``elevation_m`` (or
    ``elevation``, ``z``) in metres above sea level, and optionally a crustal thickness
    ``crust_km`` in km.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    TopographyGrid
        Elevations within +-11 km; crust (m) positive where given.
    """
    path = check_input_file(path)
    lon, lat, (e, crust) = _open_grid(path, [("elevation_m", "elevation", "z"),
                                             ("crust_km",)], optional=(1,))
    arrays = [e] if crust is None else [e, crust]
    lon, lat, arrays = _normalise_axes(lon, lat, arrays, path)
    e = arrays[0]
    if not np.all(np.isfinite(e)) or np.abs(e).max() > 11000:
        raise InputError("elevations must be finite metres within +-11 km at every node "
                         f"(found {np.nanmin(e):g} to {np.nanmax(e):g})", file=path,
                         hint="is the grid in km? give elevation_m in metres")
    crust_m = None
    if crust is not None:
        c = arrays[1]
        if not np.all(np.isfinite(c)) or c.min() <= 0 or c.max() > 100:
            raise InputError("crust_km must be finite, positive and at most 100 km at every "
                             f"node (found {np.nanmin(c):g} to {np.nanmax(c):g})", file=path)
        crust_m = c * 1e3
    return TopographyGrid(lon, lat, e, crust_m, str(path))


def _read_csv(path):
    table = read_table(path, ("lon", "lat", "age_myr"), empty="the file is empty",
                       hint="need lon,lat,age_myr")
    lon, lat = table.numbers("lon"), table.numbers("lat")
    age = table.numbers("age_myr", blank=np.nan)
    lon_u, ix = np.unique(lon, return_inverse=True)
    lat_u, iy = np.unique(lat, return_inverse=True)
    if len(lon_u) * len(lat_u) != len(table):
        raise InputError(f"the {len(table)} rows do not form a full regular grid "
                         f"({len(lon_u)} longitudes x {len(lat_u)} latitudes)", file=path)
    grid = np.full((len(lat_u), len(lon_u)), np.nan)
    grid[iy.ravel(), ix.ravel()] = age
    return lon_u, lat_u, grid


def write_netcdf(path, dataset) -> None:
    """Write an xarray Dataset to NetCDF-4 (h5netcdf engine), atomically.

    Parameters
    ----------
    path : str or Path
    dataset : xarray.Dataset
    """
    with atomic_path(path) as tmp:
        dataset.to_netcdf(tmp, engine="h5netcdf")


def write_age_grid(path, grid: AgeGrid, title: str) -> None:
    """Write an age grid as NetCDF (``lon``, ``lat``, ``age`` in Myr as float32), atomically.

    Parameters
    ----------
    path : str or Path
    grid : AgeGrid
    title : str
        The file's ``title`` attribute.
    """
    import xarray as xr
    ds = xr.Dataset(
        {"age": (("lat", "lon"), grid.age_myr.astype(np.float32),
                 {"units": "Myr", "long_name": "sea-floor age (synthetic)"})},
        coords={"lon": ("lon", grid.lon, {"units": "degrees_east"}),
                "lat": ("lat", grid.lat, {"units": "degrees_north"})},
        attrs={"title": title})
    with atomic_path(path) as tmp:
        ds.to_netcdf(tmp, engine="h5netcdf",
                     encoding={"age": {"zlib": True, "complevel": 6, "dtype": "float32"}})


def _field_spec(world, lon, lat, plate, ve, vn, grid=None):
    """The velocity field's dimensions, coordinates, variables and attributes, once, for
    :func:`field_dataset` and :func:`write_field`: ``(dims, coords, data_vars, attrs)``
    with ``name: (dims, values, attrs)`` entries."""
    names = world.plate_names
    attrs_plate = {"long_name": "plate holding the point (index into plate_names)",
                   "flag_values": np.arange(len(names), dtype=np.int16),
                   "plate_names": json.dumps(names)}
    v_attrs = lambda d: {"units": "mm/yr", "long_name": f"{d} velocity of the plate"}  # noqa
    lon_attrs = {"units": "degrees_east", "standard_name": "longitude"}
    lat_attrs = {"units": "degrees_north", "standard_name": "latitude"}
    if grid is not None:
        glon, glat = grid
        shape = (len(glat), len(glon))
        dims = ("lat", "lon")
        coords = {"lon": (("lon",), np.asarray(glon, float), lon_attrs),
                  "lat": (("lat",), np.asarray(glat, float), lat_attrs)}
    else:
        shape = (len(lon),)
        dims = ("point",)
        coords = {"lon": (dims, np.asarray(lon, float), lon_attrs),
                  "lat": (dims, np.asarray(lat, float), lat_attrs)}
    data_vars = {
        "ve_mm_yr": (dims, np.asarray(ve, float).reshape(shape), v_attrs("eastward")),
        "vn_mm_yr": (dims, np.asarray(vn, float).reshape(shape), v_attrs("northward")),
        "plate": (dims, np.asarray(plate).reshape(shape).astype(np.int16), attrs_plate)}
    attrs = {"Conventions": "CF-1.8", "title": f"plate velocity field of {world.name}",
             "source": "torque", "radius_m": world.radius_m,
             "caution": "model-dependent research estimate"}
    return dims, coords, data_vars, attrs


def field_dataset(world, lon, lat, plate, ve, vn, grid=None):
    """An xarray Dataset of a velocity field, CF-style (on the grid if one is given).

    Parameters
    ----------
    world : World
    lon, lat : ndarray, shape (N,)
        Degrees.
    plate : ndarray of int, shape (N,)
    ve, vn : ndarray, shape (N,)
        mm/yr.
    grid : tuple of ndarray, optional
        ``(lon, lat)`` axes when the points are a lat x lon grid.

    Returns
    -------
    xarray.Dataset
        What :func:`write_field` writes.
    """
    import xarray as xr
    _, coords, data_vars, attrs = _field_spec(world, lon, lat, plate, ve, vn, grid)
    return xr.Dataset(data_vars, coords=coords, attrs=attrs)


def write_field(path, world, lon, lat, plate, ve, vn, grid=None) -> None:
    """Write a velocity field as NetCDF-4, CF-style, atomically: the file that
    ``field_dataset(...).to_netcdf(path)`` writes, through the h5netcdf engine directly.

    Building an xarray Dataset where Dask is installed makes xarray import Dask (and
    writing it, Dask's distributed scheduler): a third of a second for a file of a few
    arrays. The file opens in xarray as :func:`field_dataset` (the tests check it).

    Parameters
    ----------
    path : str or Path
    world, lon, lat, plate, ve, vn, grid
        As for :func:`field_dataset`.
    """
    import h5netcdf
    dims, coords, data_vars, attrs = _field_spec(world, lon, lat, plate, ve, vn, grid)
    sizes = {}
    for d, values, _ in coords.values():
        sizes.update(zip(d, np.shape(values)))
    with atomic_path(path) as tmp, h5netcdf.File(tmp, "w") as f:
        f.dimensions = sizes
        for name, (d, values, a) in {**coords, **data_vars}.items():
            v = f.create_variable(name, d, data=values)
            v.attrs.update(a)
            if name in data_vars and dims == ("point",):
                v.attrs["coordinates"] = "lon lat"       # CF: the points' positions
        f.attrs.update(attrs)
