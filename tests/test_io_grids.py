"""Age and flow grids: readers agree, sampling is bilinear, bad grids are refused."""

import numpy as np
import pytest

from torque.errors import InputError
from torque.io import read_ages, read_flow


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


# -- grids written gridline-registered (a repeated meridian) -------------------------------
def _field(LON, LAT):
    # a smooth field that is periodic in longitude, so both copies of the meridian agree
    return 60 + 30 * np.cos(np.radians(LON)) * np.cos(np.radians(LAT)) + 0.1 * LAT


@pytest.mark.parametrize("lon0", [-180.0, 0.0])
@pytest.mark.parametrize("fmt", ["nc", "csv"])
def test_gridline_registered_grid_drops_the_repeated_meridian(tmp_path, lon0, fmt):
    import xarray as xr
    step = 0.5
    lon = np.arange(lon0, lon0 + 360 + step / 2, step)        # both ends: 721 meridians
    lat = np.arange(-90.0, 90 + step / 2, step)               # nodes on the poles
    LON, LAT = np.meshgrid(lon, lat)
    age = _field(LON, LAT)
    path = tmp_path / f"a.{fmt}"
    if fmt == "nc":
        xr.Dataset({"age": (("lat", "lon"), age)}, coords={"lon": lon, "lat": lat}).to_netcdf(
            path, engine="h5netcdf")
    else:
        path.write_text("lon,lat,age_myr\n" + "".join(
            f"{x:.6f},{y:.6f},{a:.12g}\n" for x, y, a in zip(LON.ravel(), LAT.ravel(),
                                                           age.ravel())))
    g = read_ages(path)
    assert len(g.lon) == 720 and g.global_lon and g.covers_sphere()
    np.testing.assert_allclose(np.diff(g.lon), step)
    # every meridian once: the cells add up to the sphere (4 pi; definition)
    assert g.cell_areas().sum() == pytest.approx(4 * np.pi, rel=1e-12)
    LON2, LAT2 = np.meshgrid(g.lon, g.lat)
    np.testing.assert_allclose(g.age_myr, _field(LON2, LAT2), rtol=1e-9)


def test_repeated_meridian_with_other_values_is_refused(tmp_path):
    import xarray as xr
    lon = np.arange(-180.0, 180.1, 10.0)
    lat = np.arange(-80.0, 81.0, 10.0)
    age = np.full((len(lat), len(lon)), 50.0)
    age[:, -1] = 60.0
    xr.Dataset({"age": (("lat", "lon"), age)}, coords={"lon": lon, "lat": lat}).to_netcdf(
        tmp_path / "a.nc", engine="h5netcdf")
    with pytest.raises(InputError, match="same meridian"):
        read_ages(tmp_path / "a.nc")


def test_torques_with_a_gridline_registered_half_degree_age_grid(tmp_path, cli):
    # The demo's own cell-centred ages, resampled onto a gridline-registered 0.5 degree
    # grid, must be accepted (it was refused as "does not cover the plates").
    import shutil

    import xarray as xr

    from torque.io import read_ages as ra
    from .conftest import here
    demo = tmp_path / "demo"
    shutil.copytree(here().parent / "polygons_demo", demo)
    src = ra(demo / "ages.nc")
    # continents carry no age; give them one so that resampling leaves no NaN at margins
    src = type(src)(src.lon, src.lat, np.nan_to_num(src.age_myr, nan=150.0), src.source)
    lon = np.arange(-180.0, 180.01, 0.5)
    lat = np.arange(-90.0, 90.01, 0.5)
    LON, LAT = np.meshgrid(lon, lat)
    age = src.sample(LON, np.clip(LAT, src.lat[0], src.lat[-1]))
    age[:, -1] = age[:, 0]
    xr.Dataset({"age": (("lat", "lon"), age)}, coords={"lon": lon, "lat": lat}).to_netcdf(
        demo / "ages.nc", engine="h5netcdf")
    out = tmp_path / "t.csv"
    status, _, err = cli("torques", demo / "world.toml",
                         demo / "hypotheses" / "ridge_drag.toml", "--motions",
                         demo / "motions.csv", "-o", out)
    assert status == 0, err
    assert out.exists()


def _rigid_flow(lon, lat):
    from torque import sphere
    from torque.euler import pole_to_vector, velocity_en
    LON, LAT = np.meshgrid(lon, lat)
    w = pole_to_vector(30.0, 60.0, 0.3)
    ve, vn = velocity_en(np.broadcast_to(w, (LON.size, 3)),
                         sphere.lonlat_to_xyz(LON.ravel(), LAT.ravel()), 6371e3)
    return ve.reshape(LON.shape), vn.reshape(LON.shape)


def _mantle_world(tmp_path, lon, lat):
    import shutil

    import xarray as xr

    from .conftest import here
    demo = tmp_path / "demo"
    if not demo.exists():
        shutil.copytree(here().parent / "polygons_demo", demo)
    ve, vn = _rigid_flow(lon, lat)
    xr.Dataset({"ve_mm_yr": (("lat", "lon"), ve), "vn_mm_yr": (("lat", "lon"), vn)},
               coords={"lon": lon, "lat": lat}).to_netcdf(demo / "flow.nc", engine="h5netcdf")
    text = (demo / "world.toml").read_text()
    if "mantle_flow" not in text:
        (demo / "world.toml").write_text(text + 'mantle_flow = "flow.nc"\n')
    hyp = tmp_path / "mantle.toml"
    hyp.write_text('[[force]]\nkind = "ridge"\ncoefficient = 1.0\n'
                   '[[force]]\nkind = "mantle"\ncoefficient = 1e19\n')
    return demo, hyp


def test_flow_grid_that_does_not_cover_the_plates_is_refused(tmp_path, cli):
    demo, hyp = _mantle_world(tmp_path, np.arange(0.5, 90, 1.0), np.arange(-89.5, 90, 1.0))
    out = tmp_path / "t.csv"
    status, _, err = cli("torques", demo / "world.toml", hyp, "--motions",
                         demo / "motions.csv", "-o", out)
    assert status == 2 and "flow.nc" in err and "does not cover" in err
    assert not out.exists()


def test_flow_grid_written_both_ways_gives_the_same_torque(tmp_path, cli):
    # cell-centred 1 degree against gridline-registered 1 degree: the same rigid flow; the
    # grid sums differ by the discretisation only (well under 1 %: common practice)
    import csv
    out = {}
    for reg, lon, lat in (("cell", np.arange(-179.5, 180, 1.0), np.arange(-89.5, 90, 1.0)),
                          ("line", np.arange(-180.0, 180.01, 1.0),
                           np.arange(-90.0, 90.01, 1.0))):
        demo, hyp = _mantle_world(tmp_path, lon, lat)
        o = tmp_path / f"{reg}.csv"
        status, _, err = cli("torques", demo / "world.toml", hyp, "--motions",
                             demo / "motions.csv", "-o", o)
        assert status == 0, err
        with open(o) as fh:
            rows = [r for r in csv.DictReader(fh) if r["term"].startswith("mantle")]
        out[reg] = np.array([[float(r[k]) for k in ("tx_nm", "ty_nm", "tz_nm")]
                             for r in rows])
    scale = np.abs(out["cell"]).max()
    np.testing.assert_allclose(out["line"], out["cell"], atol=0.01 * scale)


# -- the common published layouts ----------------------------------------------------------
def _smooth(LON, LAT):
    """A smooth age field periodic in longitude (Myr)."""
    return 100 + 60 * np.cos(np.radians(LAT)) * np.cos(np.radians(LON - 30)) + 0.2 * LAT


def _write(path, layout):
    """An age grid in one of the layouts age grids are published in, written by xarray."""
    import xarray as xr
    cell = layout in ("cell", "cf-names", "lat-descending", "scaled-int")
    if cell:
        lon = np.arange(-179.5, 180, 1.0)
        lat = np.arange(-89.5, 90, 1.0)
    else:                                          # gridline: both 0 and 360, both poles
        lon = np.arange(0.0, 360.1, 1.0)
        lat = np.arange(-90.0, 90.1, 1.0)
    if layout == "lat-descending":
        lat = lat[::-1]
    LON, LAT = np.meshgrid(lon, lat)
    age = _smooth(LON, LAT)
    age[np.abs(LAT) > 80] = np.nan                 # no ocean floor near the poles
    names = {"cell": ("lon", "lat", "age"), "gridline-0-360-xyz": ("x", "y", "z"),
             "cf-names": ("longitude", "latitude", "seafloor_age"),
             "lat-descending": ("lon", "lat", "age_myr"),
             "scaled-int": ("lon", "lat", "age")}[layout]
    x, y, z = names
    enc = {}
    if layout == "scaled-int":                     # int16 with a scale factor and a fill
        enc = {z: {"dtype": "int16", "scale_factor": 0.01, "_FillValue": -32768}}
    attrs = ({"standard_name": "longitude", "units": "degrees_east"},
             {"standard_name": "latitude", "units": "degrees_north"})
    xr.Dataset({z: ((y, x), age, {"units": "Myr"})},
               coords={x: (x, lon, attrs[0]), y: (y, lat, attrs[1])}).to_netcdf(
        path, engine="h5netcdf", encoding=enc)


@pytest.mark.parametrize("layout", ["cell", "gridline-0-360-xyz", "cf-names",
                                    "lat-descending", "scaled-int"])
def test_published_layouts_read_the_same_field(tmp_path, layout):
    # Every layout holds samples of one smooth field; read back and sampled bilinearly at
    # the same points they agree with it to the interpolation error of a 1 degree grid
    # (h^2 f''/8, about 1e-3 Myr here; a 0.01 Myr quantum for the scaled integers).
    _write(tmp_path / "a.nc", layout)
    g = read_ages(tmp_path / "a.nc")
    assert g.lon[0] < g.lon[1] and g.lat[0] < g.lat[1] and g.global_lon and g.covers_sphere()
    rng = np.random.default_rng(3)
    x, y = rng.uniform(-180, 180, 500), rng.uniform(-78, 78, 500)
    np.testing.assert_allclose(g.sample(x, y), _smooth(x, y), atol=0.02)
    assert np.isnan(g.sample(np.array([10.0]), np.array([85.0])))[0]


def test_continents_from_the_age_grids_no_data_nodes(tmp_path, cli):
    # continents = "from-ages": a block of no-data nodes is a continent, and its area in
    # the plate is the exact area of the block's cells, R^2 dlon (sin lat2 - sin lat1)
    # (the area of a lon/lat box on a sphere); a single no-data node in the ocean is a gap,
    # not a continent: it gets no force, and a note says so.
    import xarray as xr

    from torque import Inputs, compute_torques
    from torque.hypothesis import hypothesis_from_dict
    from .conftest import feature_collection, plate_feature
    north = [[0, 0], [120, 0], [240, 0], [0, 0]]
    (tmp_path / "plates.geojson").write_text(__import__("json").dumps(feature_collection(
        [plate_feature("Upper", [north]), plate_feature("Lower", [north[::-1]])])))
    lon = np.arange(-179.5, 180, 1.0)
    lat = np.arange(-89.5, 90, 1.0)
    age = np.full((len(lat), len(lon)), 50.0)
    block = (lat[:, None] > 10) & (lat[:, None] < 30) & (lon > 0) & (lon < 20)
    age[block] = np.nan                          # 20 x 20 nodes: lon 0-20, lat 10-30
    age[120, 300] = np.nan                       # one node, lat 30.5, lon 120.5: a gap
    xr.Dataset({"age": (("lat", "lon"), age)}, coords={"lon": lon, "lat": lat}).to_netcdf(
        tmp_path / "ages.nc", engine="h5netcdf")
    (tmp_path / "world.toml").write_text('plates = "plates.geojson"\nages = "ages.nc"\n'
                                         'continents = "from-ages"\nwinding = "strict"\n')
    inputs = Inputs.load(tmp_path / "world.toml")
    part = inputs.continental_part
    exact = np.radians(20.0) * (np.sin(np.radians(30.0)) - np.sin(np.radians(10.0)))
    assert part.area[inputs.world.plate_index["Upper"]] == pytest.approx(exact, rel=1e-12)
    assert part.area[inputs.world.plate_index["Lower"]] == 0.0
    hyp = hypothesis_from_dict({"force": [{"kind": "ridge", "coefficient": 1.0},
                                          {"kind": "drag", "region": "ocean"},
                                          {"kind": "drag", "region": "continent"},
                                          {"kind": "drag", "label": "all"}]})
    ridge, ocean, cont, whole = compute_torques(inputs, hyp)
    assert any("1 age node(s) outside the continents have no age" in n for n in ridge.notes)
    np.testing.assert_allclose(ocean.resisting + cont.resisting, whole.resisting,
                               atol=1e-12 * np.abs(whole.resisting).max())
    status, out, err = cli("check", tmp_path / "world.toml")
    assert status == 0 and "no-data nodes of the age grid" in out
    # an age grid is needed
    (tmp_path / "w2.toml").write_text('plates = "plates.geojson"\ncontinents = "from-ages"\n')
    status, out, err = cli("check", tmp_path / "w2.toml")
    assert status == 2 and "needs an age grid" in err


@pytest.mark.parametrize("on_grid", [True, False])
def test_the_field_file_opens_in_xarray_as_the_field_dataset(tmp_path, on_grid):
    # the reference is xarray itself: the file written through h5netcdf directly reads back
    # identical (values, dimensions, coordinates, attributes) to the Dataset the library
    # builds, on a grid and at scattered points
    import xarray as xr
    from torque.euler import grid_lonlat, velocity_field
    from torque.io import field_dataset, load_world, read_motions, write_field
    from .conftest import here
    demo = here().parent / "polygons_demo"
    world = load_world(demo / "world.toml")
    omega = read_motions(demo / "motions.csv").for_world(world)
    if on_grid:
        glon, glat = grid_lonlat(10.0)
        LON, LAT = np.meshgrid(glon, glat)
        lon, lat, grid = LON.ravel(), LAT.ravel(), (glon, glat)
    else:
        lon, lat, grid = np.array([-170.0, 3.5, 120.0]), np.array([-60.0, 0.0, 45.0]), None
    plate, ve, vn = velocity_field(world, omega, lon, lat)
    write_field(tmp_path / "f.nc", world, lon, lat, plate, ve, vn, grid)
    with xr.open_dataset(tmp_path / "f.nc") as got:
        xr.testing.assert_identical(got.load(), field_dataset(world, lon, lat, plate, ve, vn,
                                                             grid))
