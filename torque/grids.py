"""Regular lon/lat grids: sea-floor ages, mantle flow, drag coupling and topography, and
sampling them.

An age grid is regular in longitude and latitude, ages in Myr, NaN where there is no
oceanic lithosphere. A mantle flow grid holds the east and north velocity of the mantle
below the plates in mm/yr. Sampling is bilinear in lon/lat with longitude wrapped; a sample
is NaN where any of its four grid nodes is NaN (no age is invented at continental margins).
Reading and writing them is :mod:`torque.io.grids`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["MAX_AGE_MYR", "RegularGrid", "AgeGrid", "FlowGrid", "CouplingGrid",
           "TopographyGrid", "bilinear"]


MAX_AGE_MYR = 300.0


@dataclass(frozen=True, eq=False)
class RegularGrid:
    """Nodes of a regular lon/lat grid: increasing longitudes (degrees, spanning less than
    360) and latitudes (degrees).

    Attributes
    ----------
    lon, lat : ndarray
        Node coordinates, degrees, increasing.
    """

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
    there is no oceanic lithosphere.

    Attributes
    ----------
    lon, lat : ndarray
    age_myr : ndarray, shape (nlat, nlon)
    source : str
        Where it came from, for messages.
    """

    age_myr: np.ndarray = None
    source: str = "<memory>"

    def sample(self, lon_deg, lat_deg) -> np.ndarray:
        """Bilinear ages at points (degrees), NaN outside the grid or next to a NaN node.

        Parameters
        ----------
        lon_deg, lat_deg : array_like, shape (N,)

        Returns
        -------
        ndarray, shape (N,)
        """
        return self._sample(self.age_myr, lon_deg, lat_deg)


@dataclass(frozen=True, eq=False)
class FlowGrid(RegularGrid):
    """Horizontal mantle velocity (mm/yr) on a regular grid, each of shape (nlat, nlon).

    Attributes
    ----------
    lon, lat : ndarray
    ve_mm_yr, vn_mm_yr : ndarray, shape (nlat, nlon)
        East and north velocity.
    source : str
    """

    ve_mm_yr: np.ndarray = None
    vn_mm_yr: np.ndarray = None
    source: str = "<memory>"

    def sample(self, lon_deg, lat_deg):
        """Bilinear east and north velocity (mm/yr) at points.

        Parameters
        ----------
        lon_deg, lat_deg : array_like, shape (N,)

        Returns
        -------
        ve, vn : ndarray, shape (N,)
        """
        return (self._sample(self.ve_mm_yr, lon_deg, lat_deg),
                self._sample(self.vn_mm_yr, lon_deg, lat_deg))


@dataclass(frozen=True, eq=False)
class CouplingGrid(RegularGrid):
    """Basal drag coupling ``C`` (Pa s/m, the traction per unit slip velocity) on a regular
    grid, shape (nlat, nlon): for a channel of viscosity eta and thickness h, C = eta / h.

    Attributes
    ----------
    lon, lat : ndarray
    coupling_pa_s_m : ndarray, shape (nlat, nlon)
        Finite and non-negative.
    source : str
    """

    coupling_pa_s_m: np.ndarray = None
    source: str = "<memory>"

    def sample(self, lon_deg, lat_deg) -> np.ndarray:
        """Bilinear coupling (Pa s/m) at points (degrees).

        Parameters
        ----------
        lon_deg, lat_deg : array_like, shape (N,)

        Returns
        -------
        ndarray, shape (N,)
        """
        return self._sample(self.coupling_pa_s_m, lon_deg, lat_deg)


@dataclass(frozen=True, eq=False)
class TopographyGrid(RegularGrid):
    """Surface elevation (m, negative below sea level) and, optionally, crustal thickness
    (m) on a regular grid, each of shape (nlat, nlon).

    Attributes
    ----------
    lon, lat : ndarray
    elevation_m : ndarray, shape (nlat, nlon)
    crust_m : ndarray, shape (nlat, nlon), or None
        None: the crust follows from the elevation by Airy isostasy (see
        :mod:`torque.columns`).
    source : str
    """

    elevation_m: np.ndarray = None
    crust_m: np.ndarray | None = None
    source: str = "<memory>"

    def sample(self, lon_deg, lat_deg):
        """Bilinear elevation (m) and crustal thickness (m, or None) at points (degrees).

        Parameters
        ----------
        lon_deg, lat_deg : array_like, shape (N,)

        Returns
        -------
        elevation : ndarray, shape (N,)
        crust : ndarray, shape (N,), or None
        """
        crust = (None if self.crust_m is None
                 else self._sample(self.crust_m, lon_deg, lat_deg))
        return self._sample(self.elevation_m, lon_deg, lat_deg), crust


def bilinear(glon, glat, values, lon_deg, lat_deg, global_lon: bool) -> np.ndarray:
    """Bilinear interpolation on a regular grid (``values`` shape (nlat, nlon)).

    Longitudes wrap when the grid is global; points outside the grid give NaN.

    Parameters
    ----------
    glon, glat : ndarray
        Grid axes, degrees, increasing.
    values : ndarray, shape (nlat, nlon)
    lon_deg, lat_deg : array_like, shape (N,)
    global_lon : bool
        Whether longitudes wrap.

    Returns
    -------
    ndarray, shape (N,)
    """
    lon = np.asarray(lon_deg, dtype=float)
    lat = np.asarray(lat_deg, dtype=float)
    a = values
    x = np.mod(lon - glon[0], 360.0)
    # a global grid's last cell closes on its first column (read in place, not copied)
    glon_ext = np.r_[glon - glon[0], 360.0] if global_lon else glon - glon[0]
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
    i1 = np.where(i + 1 == a.shape[1], 0, i + 1)
    out = ((1 - fx) * (1 - fy) * a[j, i] + fx * (1 - fy) * a[j, i1]
           + (1 - fx) * fy * a[j + 1, i] + fx * fy * a[j + 1, i1])
    return np.where(inside, out, np.nan)
