"""Age and flow grids: readers agree, sampling is bilinear, bad grids are refused."""

import numpy as np
import pytest

from torque.errors import InputError
from torque.grids import read_ages, read_flow


def test_csv_and_netcdf_readers_agree_and_sampling_is_bilinear(tmp_path):
    import xarray as xr
    lon = np.arange(0.0, 360.0, 10.0)             # 0..350: wraps, and is shifted to -180..
    lat = np.arange(-80.0, 81.0, 10.0)
    LON, LAT = np.meshgrid(lon, lat)
    # bilinear in (lon, lat) away from the wrap: interpolation reproduces it exactly
    # (a property of bilinear interpolation; common practice, no source)
    age = 50.0 + 0.1 * np.mod(LON + 180, 360) + 0.2 * LAT + 0.001 * np.mod(LON + 180, 360) * LAT
    age[0, 0] = np.nan
    xr.Dataset({"age_myr": (("lat", "lon"), age)}, coords={"lon": lon, "lat": lat}).to_netcdf(
        tmp_path / "a.nc", engine="h5netcdf")
    rows = ["lon,lat,age_myr"] + [f"{x},{y},{'' if np.isnan(a) else a}" for x, y, a in
                                  zip(LON.ravel(), LAT.ravel(), age.ravel())]
    (tmp_path / "a.csv").write_text("\n".join(rows) + "\n")
    g1, g2 = read_ages(tmp_path / "a.nc"), read_ages(tmp_path / "a.csv")
    np.testing.assert_array_equal(g1.lon, g2.lon)
    np.testing.assert_array_equal(g1.age_myr, g2.age_myr)
    assert g1.lon[0] == -180.0 and g1.global_lon
    x, y = np.array([-100.0, 33.3, 151.0]), np.array([-12.5, 44.4, 71.0])
    u = np.mod(x + 180, 360)
    np.testing.assert_allclose(g1.sample(x, y), 50 + 0.1 * u + 0.2 * y + 0.001 * u * y,
                               rtol=1e-12)
    assert np.isnan(g1.sample(2.0, -78.0))         # next to the NaN node (lon 0, lat -80)
    assert np.isnan(g1.sample(0.0, 85.0))          # beyond the last latitude


def test_cell_areas_of_a_global_grid_add_up_to_the_sphere():
    from torque.grids import AgeGrid
    lon = np.arange(-179.5, 180, 1.0)
    lat = np.arange(-89.5, 90, 1.0)
    g = AgeGrid(lon, lat, np.zeros((180, 360)))
    assert g.cell_areas().sum() == pytest.approx(4 * np.pi, rel=1e-12)


def test_bad_grids(tmp_path):
    (tmp_path / "gap.csv").write_text("lon,lat,age_myr\n0,0,10\n10,0,10\n0,10,10\n")
    with pytest.raises(InputError, match="do not form a full regular grid"):
        read_ages(tmp_path / "gap.csv")
    (tmp_path / "word.csv").write_text("lon,lat,age_myr\n0,0,old\n")
    with pytest.raises(InputError, match="'old', not a number"):
        read_ages(tmp_path / "word.csv")
    (tmp_path / "flow.nc").write_text("not netcdf")
    with pytest.raises(InputError, match="is not a NetCDF file"):
        read_flow(tmp_path / "flow.nc")
