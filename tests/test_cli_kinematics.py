"""`torque frame`, `torque field` and `torque boundaries`: contract, closed forms, bad input.

Closed forms on a world of two hemispheres split by the equator: with the northern plate
at rest and the southern one turning at rate a about the y axis, the southern plate moves
at omega x r; on the equator at longitude L that is a R cos(L) due south (away from the
northern plate: opening) (omega x r, elementary vector algebra). Turning about z instead,
it moves due east at a R along the equator.
"""

import csv
import json

import numpy as np
import pytest

from torque import euler

from .conftest import assert_refused as shared_assert_refused, line_feature, plate_feature

NORTH = [[0, 0], [120, 0], [240, 0], [0, 0]]
SOUTH = [[0, 0], [240, 0], [120, 0], [0, 0]]
R = 6371e3
DEG_MYR_MM_YR = np.radians(1.0) * R * 1e3 / 1e6     # 1 deg/Myr at 90 deg from the pole


@pytest.fixture
def hemi(write_world, tmp_path):
    """Two hemispheres with an equatorial boundary, and a writer for motions files."""
    bnd = [line_feature([[-60, 0], [0, 0], [60, 0]], kind="unclassified", left="Upper",
                        right="Lower"),
           line_feature([[120, 0], [180, 0], [240, 0]], kind="unclassified", left="Upper",
                        right="Lower"),
           line_feature([[60, 0], [90, 0], [120, 0]], kind="ridge", left="Upper",
                        right="Lower"),
           line_feature([[270, 0], [300, 0], [330, 0]], kind="unclassified", left="Upper",
                        right="Lower")]
    world = write_world([plate_feature("Upper", [NORTH]), plate_feature("Lower", [SOUTH])],
                        bnd, extra='winding = "strict"\n')

    def motions(rows, name="m.csv"):
        p = tmp_path / name
        p.write_text("plate,lat,lon,rate\n" + "".join(f"{r}\n" for r in rows))
        return p

    return world, motions, tmp_path


def read_csv(path):
    with open(path) as fh:
        return list(csv.DictReader(fh))


def test_boundaries_opening_and_along_strike_closed_forms(hemi, cli):
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,0", "Lower,0,90,1"])   # Lower turns about +y at 1 deg/Myr
    status, out, err = cli("boundaries", world, m, "--spacing-km", "100", "-o",
                           tmp / "b.csv")
    assert status == 0, err
    rows = read_csv(tmp / "b.csv")
    assert list(rows[0]) == ["lon", "lat", "feature", "line", "left", "right", "kind",
                             "subducting", "opening_mm_yr", "along_mm_yr", "obliquity_deg"]
    lon = np.array([float(r["lon"]) for r in rows])
    opening = np.array([float(r["opening_mm_yr"]) for r in rows])
    along = np.array([float(r["along_mm_yr"]) for r in rows])
    np.testing.assert_allclose(opening, DEG_MYR_MM_YR * np.cos(np.radians(lon)), atol=1e-6)
    np.testing.assert_allclose(along, 0.0, atol=1e-6)

    m = motions(["Upper,90,0,0", "Lower,90,0,1"], "z.csv")  # about +z: eastward along strike
    cli("boundaries", world, m, "-o", tmp / "b2.csv")
    rows = read_csv(tmp / "b2.csv")
    np.testing.assert_allclose([float(r["along_mm_yr"]) for r in rows], DEG_MYR_MM_YR,
                               rtol=1e-8)
    np.testing.assert_allclose([float(r["obliquity_deg"]) for r in rows], 90.0, atol=1e-6)


def test_classify_kinds_and_sinking_plate_from_ages(hemi, cli):
    import xarray as xr
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,0", "Lower,0,90,1"])
    status, out, err = cli("boundaries", world, m, "--classify", "-o", tmp / "b.csv",
                           "--geojson", tmp / "b.geojson")
    assert status == 0, err
    kinds = {r["line"]: (r["kind"], r["subducting"]) for r in read_csv(tmp / "b.csv")}
    # opening is a R cos(L): line 0 (lon -60..60) opens, line 1 (120..240) closes, line 2
    # keeps the kind it was given, line 3 (270..330) opens.
    assert kinds["0"] == ("ridge", "")
    assert kinds["1"] == ("subduction", "unresolved")
    assert kinds["2"] == ("ridge", "")
    assert "unresolved" in out
    gj = json.loads((tmp / "b.geojson").read_text())
    # the unresolved convergent line is written unclassified (no valid subduction zone
    # without a sinking plate), with what is known of it
    assert [f["properties"]["kind"] for f in gj["features"]] == ["ridge", "unclassified",
                                                                 "ridge", "ridge"]
    assert gj["features"][1]["properties"]["motion"] == "convergent, sinking plate unresolved"
    # with ages (Lower older) the southern plate sinks
    lon = np.arange(-180, 180, 1.0)
    lat = np.arange(-90, 90.1, 1.0)
    age = np.where(lat[:, None] < 0, 120.0, 30.0) + 0 * lon[None, :]
    xr.Dataset({"age": (("lat", "lon"), age)}, coords={"lon": lon, "lat": lat}).to_netcdf(
        tmp / "ages.nc", engine="h5netcdf")
    text = world.read_text() + 'ages = "ages.nc"\n'
    world.write_text(text)
    cli("boundaries", world, m, "--classify", "-o", tmp / "b3.csv")
    kinds = {r["line"]: (r["kind"], r["subducting"]) for r in read_csv(tmp / "b3.csv")}
    assert kinds["1"] == ("subduction", "Lower")


def test_frame_nnr_and_fixed_plate(voronoi_world_file, cli, tmp_path):
    path, gen = voronoi_world_file
    rng = np.random.default_rng(0)
    rows = [f"P{i},{rng.uniform(-80, 80):.6f},{rng.uniform(-180, 180):.6f},"
            f"{rng.uniform(0.1, 2):.6f}" for i in range(12)]
    (tmp_path / "m.csv").write_text("plate,lat,lon,rate\n" + "\n".join(rows) + "\n")
    status, out, err = cli("frame", path, tmp_path / "m.csv", "--to", "nnr", "-o",
                           tmp_path / "nnr.csv")
    assert status == 0, err
    assert "net rotation" in out
    status, out, _ = cli("frame", path, tmp_path / "nnr.csv", "--to", "nnr", "-o",
                         tmp_path / "nnr2.csv")
    first_line = out.splitlines()[0]
    # motions in the frame already: no rotation to the printed precision, and no pole
    assert "no rotation to 1e-6 deg/Myr, so no pole" in first_line
    status, _, _ = cli("frame", path, tmp_path / "m.csv", "--to", "plate:P5", "-o",
                       tmp_path / "fixed.csv")
    fixed = {r["plate"]: r for r in read_csv(tmp_path / "fixed.csv")}
    assert float(fixed["P5"]["rate"]) == 0.0


def test_field_csv_geojson_and_netcdf(hemi, cli):
    import xarray as xr
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,0.5", "Lower,0,90,1"])
    (tmp / "pts.csv").write_text("lon,lat\n10,45\n-170,-30\n90,-1\n0,89.999\n")
    status, out, err = cli("field", world, m, "--points", tmp / "pts.csv", "-o",
                           tmp / "f.csv")
    assert status == 0, err
    rows = read_csv(tmp / "f.csv")
    assert list(rows[0])[:5] == ["lon", "lat", "plate", "ve_mm_yr", "vn_mm_yr"]
    assert [r["plate"] for r in rows] == ["Upper", "Lower", "Lower", "Upper"]
    assert [float(r["lon"]) for r in rows] == [10, -170, 90, 0]
    # Upper turns about z at 0.5 deg/Myr: due east at 0.5 x 111.19 x cos(45 deg) mm/yr
    assert float(rows[0]["ve_mm_yr"]) == pytest.approx(0.5 * DEG_MYR_MM_YR * np.cos(
        np.radians(45)), rel=1e-9)
    cli("field", world, m, "--step", "30", "-o", tmp / "f.geojson")
    gj = json.loads((tmp / "f.geojson").read_text())
    assert len(gj["features"]) == 12 * 6
    cli("field", world, m, "--step", "2", "-o", tmp / "f.nc")
    with xr.open_dataset(tmp / "f.nc") as ds:
        assert ds["ve_mm_yr"].dims == ("lat", "lon")
        assert ds["ve_mm_yr"].attrs["units"] == "mm/yr"
        assert ds.sizes == {"lat": 90, "lon": 180}
        assert json.loads(ds["plate"].attrs["plate_names"]) == ["Upper", "Lower"]


def test_every_point_lies_in_a_plate_on_a_valid_world(voronoi_world_file):
    # Cannot happen on a valid world: dense random points and the poles all find a plate.
    from torque.io import load_world
    path, gen = voronoi_world_file
    world = load_world(path)
    rng = np.random.default_rng(8)
    lon = np.r_[rng.uniform(-180, 180, 300_000), 0, 0]
    lat = np.r_[np.degrees(np.arcsin(rng.uniform(-1, 1, 300_000))), 90, -90]
    plate, ve, vn = euler.velocity_field(world, np.zeros((12, 3)), lon, lat)
    assert plate.min() >= 0 and plate.max() == 11


# ---- bad input --------------------------------------------------------------------------
def assert_refused(result, out_path, *words):
    shared_assert_refused(result, out_path, *words)
    assert not list(out_path.parent.glob(f".{out_path.name}*"))


def test_motions_name_unknown_plate(hemi, cli):
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,0", "Lower,0,90,1", "Extra,0,0,1"])
    assert_refused(cli("field", world, m, "-o", tmp / "f.csv"), tmp / "f.csv", "m.csv",
                   "'Extra'", "not in the world")


def test_plate_without_motion(hemi, cli):
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,0"])
    assert_refused(cli("frame", world, m, "--to", "nnr", "-o", tmp / "o.csv"),
                   tmp / "o.csv", "no motion for plate(s) 'Lower'")


def test_non_numeric_motion(hemi, cli):
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,fast", "Lower,0,90,1"])
    assert_refused(cli("field", world, m, "-o", tmp / "f.csv"), tmp / "f.csv", "line 2",
                   "'Upper'", "rate is 'fast'")


def test_pole_out_of_range(hemi, cli):
    world, motions, tmp = hemi
    m = motions(["Upper,95,0,1", "Lower,0,90,1"])
    assert_refused(cli("boundaries", world, m, "-o", tmp / "b.csv"), tmp / "b.csv",
                   "latitude 95", "[-90, 90]")


def test_frame_to_unknown_plate(hemi, cli):
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,0", "Lower,0,90,1"])
    assert_refused(cli("frame", world, m, "--to", "plate:Middle", "-o",
                       tmp / "o.csv"), tmp / "o.csv", "no plate named 'Middle'")
    assert_refused(cli("frame", world, m, "--to", "sideways", "-o",
                       tmp / "o.csv"), tmp / "o.csv", "'sideways' is not a frame")


def test_unsupported_output_suffix(hemi, cli):
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,0", "Lower,0,90,1"])
    assert_refused(cli("field", world, m, "-o", tmp / "f.xlsx"), tmp / "f.xlsx",
                   "cannot write .xlsx", ".csv, .geojson")


def test_field_refuses_a_world_with_a_gap(write_world, cli, tmp_path):
    path = write_world([plate_feature("Upper", [NORTH])], extra='winding = "strict"\n')
    (tmp_path / "m.csv").write_text("plate,lat,lon,rate\nUpper,90,0,1\n")
    assert_refused(cli("field", path, tmp_path / "m.csv", "-o", tmp_path / "f.csv"),
                   tmp_path / "f.csv", "problem", "torque check")


def test_bad_points_file(hemi, cli):
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,0", "Lower,0,90,1"])
    (tmp / "pts.csv").write_text("lon,lat\n10,45\n20,north\n")
    assert_refused(cli("field", world, m, "--points", tmp / "pts.csv", "-o", tmp / "f.csv"),
                   tmp / "f.csv", "pts.csv", "line 3", "'north'")


def test_outputs_get_ordinary_permissions(hemi, cli):
    # Written through a temporary file, but readable like any new file (umask applies).
    import os
    import stat
    world, motions, tmp = hemi
    m = motions(["Upper,90,0,0", "Lower,0,90,1"])
    cli("field", world, m, "--step", "30", "-o", tmp / "f.csv")
    mask = os.umask(0)
    os.umask(mask)
    assert stat.S_IMODE(os.stat(tmp / "f.csv").st_mode) == 0o666 & ~mask


def test_a_zero_rotation_has_no_pole(tmp_path, cli):
    # a rotation of zero (to the printed precision) has no pole (common practice, no
    # source): motions already in the no-net-rotation frame, moved there again, have a net
    # rotation of rounding size, and the command says so instead of printing a pole
    from .conftest import here
    from torque.present.text import pole
    demo = here().parent / "polygons_demo"
    nnr = tmp_path / "nnr.csv"
    assert cli("frame", demo / "world.toml", demo / "motions.csv", "--to", "nnr",
               "-o", nnr)[0] == 0
    status, out, _ = cli("frame", demo / "world.toml", nnr, "--to", "nnr",
                         "-o", tmp_path / "again.csv")
    assert status == 0 and "no rotation to 1e-6 deg/Myr, so no pole" in out
    assert pole([0.0, 0.0, 0.0]).startswith("none")
    assert pole([0.0, 0.0, 1e-12]).startswith("pole 90.0000 N")        # 1.8e3 deg/Myr
