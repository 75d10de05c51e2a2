"""`torque torques`: the contract CSV, and every bad input of the forces issue."""

import csv
import json

import numpy as np
import pytest

from .conftest import assert_refused as assert_bad, line_feature, plate_feature

NORTH = [[0, 0], [120, 0], [240, 0], [0, 0]]
SOUTH = [[0, 0], [240, 0], [120, 0], [0, 0]]


@pytest.fixture
def world(write_world, tmp_path):
    """Hemispheres with a trench on half the equator and a transform on the other half."""
    bnd = [line_feature([[0, 0], [90, 0], [180, 0]], kind="subduction", left="Upper",
                        right="Lower", subducting="Lower", slab_age_myr=60.0),
           line_feature([[180, 0], [270, 0], [360, 0]], kind="transform", left="Upper",
                        right="Lower")]
    path = write_world([plate_feature("Upper", [NORTH]), plate_feature("Lower", [SOUTH])],
                       bnd, extra='winding = "strict"\n')
    (tmp_path / "m.csv").write_text("plate,lat,lon,rate\nUpper,90,0,0.2\nLower,0,90,0.5\n")
    return path


def write_hyp(tmp_path, text, name="h.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_torques_csv_contract(world, tmp_path, cli):
    h = write_hyp(tmp_path, '[[force]]\nkind = "slab"\ncoefficient = "free"\n\n'
                  '[[force]]\nkind = "drag"\ncoefficient = 2e19\n')
    status, out, err = cli("torques", world, h, "--motions", tmp_path / "m.csv", "-o",
                           tmp_path / "t.csv")
    assert status == 0, err
    with open(tmp_path / "t.csv") as fh:
        rows = list(csv.DictReader(fh))
    # the contract's columns, in its order; the rest extends it (../shared/interface.md)
    assert list(rows[0])[:6] == ["plate", "term", "coefficient", "tx_nm", "ty_nm", "tz_nm"]
    assert [(r["plate"], r["term"]) for r in rows] == [
        ("Upper", "slab"), ("Lower", "slab"), ("Upper", "drag_all"), ("Lower", "drag_all")]
    assert float(rows[0]["coefficient"]) == 1.0 and float(rows[2]["coefficient"]) == 2e19
    # slab pull only on the sinking plate
    assert float(rows[0]["tx_nm"]) == 0.0 and float(rows[1]["tx_nm"]) > 0


def test_velocity_dependent_terms_need_motions(world, tmp_path, cli):
    h = write_hyp(tmp_path, '[[force]]\nkind = "drag"\n\n[[force]]\nkind = "transform"\n')
    assert_bad(cli("torques", world, h, "-o", tmp_path / "t.csv"), tmp_path / "t.csv",
               "drag_all, transform", "depend on the plates' motion", "--motions")


def test_unknown_kind_names_the_valid_ones(world, tmp_path, cli):
    h = write_hyp(tmp_path, '[[force]]\nkind = "plume"\n')
    assert_bad(cli("torques", world, h, "-o", tmp_path / "t.csv"), tmp_path / "t.csv",
               "h.toml", "[[force]] 1", "'plume'", "ridge, slab, suction, gpe, drag")


def test_unknown_key_names_the_valid_ones(world, tmp_path, cli):
    h = write_hyp(tmp_path, '[[force]]\nkind = "drag"\nregoin = "ocean"\n')
    assert_bad(cli("torques", world, h, "-o", tmp_path / "t.csv"), tmp_path / "t.csv",
               "'regoin'", "valid keys", "region")


def test_unknown_top_level_key(world, tmp_path, cli):
    h = write_hyp(tmp_path, 'nmae = "x"\n[[force]]\nkind = "drag"\n')
    assert_bad(cli("torques", world, h, "-o", tmp_path / "t.csv"), tmp_path / "t.csv",
               "'nmae'")


def test_negative_density_contrast(world, tmp_path, cli):
    h = write_hyp(tmp_path, '[physics]\nmantle_density = 900.0\n[[force]]\nkind = "slab"\n')
    assert_bad(cli("torques", world, h, "-o", tmp_path / "t.csv"), tmp_path / "t.csv",
               "mantle_density must exceed water_density")


def test_slab_term_without_subduction(write_world, tmp_path, cli):
    path = write_world([plate_feature("Upper", [NORTH]), plate_feature("Lower", [SOUTH])],
                       [line_feature([[0, 0], [120, 0], [240, 0], [360, 0]], kind="ridge",
                                     left="Upper", right="Lower")],
                       extra='winding = "strict"\n')
    for kind in ("slab", "suction"):
        h = write_hyp(tmp_path, f'[[force]]\nkind = "{kind}"\nage_myr = 50.0\n')
        assert_bad(cli("torques", path, h, "-o", tmp_path / "t.csv"), tmp_path / "t.csv",
                   f"the '{kind}' term needs subduction boundaries")


def write_ages(path, lon, lat, age):
    import xarray as xr
    xr.Dataset({"age": (("lat", "lon"), age)}, coords={"lon": lon, "lat": lat}).to_netcdf(
        path, engine="h5netcdf")


def with_ages(world, tmp_path, lon, lat, age, continents=None):
    write_ages(tmp_path / "ages.nc", lon, lat, age)
    extra = 'ages = "ages.nc"\n'
    if continents is not None:
        (tmp_path / "cont.geojson").write_text(json.dumps(
            {"type": "FeatureCollection", "features": [plate_feature("c", [continents])]}))
        extra += 'continents = "cont.geojson"\n'
    world.write_text(world.read_text() + extra)


def test_ages_out_of_range(world, tmp_path, cli):
    lon, lat = np.arange(-180, 180, 2.0), np.arange(-89, 90, 2.0)
    age = np.full((len(lat), len(lon)), 50.0)
    age[10, 10] = 350.0
    with_ages(world, tmp_path, lon, lat, age)
    h = write_hyp(tmp_path, '[[force]]\nkind = "ridge"\n')
    assert_bad(cli("torques", world, h, "-o", tmp_path / "t.csv"), tmp_path / "t.csv",
               "ages.nc", "0-300 Myr", "350")


def test_nan_age_inside_an_oceanic_plate(world, tmp_path, cli):
    # the NaN mask of an age grid is where there is no ocean floor: a node without an age
    # in the ocean gets no force, and the user is told
    lon, lat = np.arange(-180, 180, 2.0), np.arange(-89, 90, 2.0)
    age = np.full((len(lat), len(lon)), 50.0)
    age[60, 45] = np.nan          # lat 31, lon -90: ocean of Upper
    box = [[0, 10], [20, 10], [20, 30], [0, 30], [0, 10]]
    with_ages(world, tmp_path, lon, lat, age, continents=box)
    h = write_hyp(tmp_path, '[[force]]\nkind = "ridge"\n')
    status, out, err = cli("torques", world, h, "-o", tmp_path / "t.csv")
    assert status == 0, err
    assert "1 age node(s) outside the continents have no age" in out
    assert "'Upper'" in out and "lon -90" in out


def test_age_grid_that_does_not_cover_the_plates(world, tmp_path, cli):
    lon, lat = np.arange(-60, 60, 1.0), np.arange(-30, 30, 1.0)
    with_ages(world, tmp_path, lon, lat, np.full((len(lat), len(lon)), 40.0))
    h = write_hyp(tmp_path, '[[force]]\nkind = "ridge"\n')
    assert_bad(cli("torques", world, h, "-o", tmp_path / "t.csv"), tmp_path / "t.csv",
               "does not cover the plates")


def test_region_drag_without_continents(world, tmp_path, cli):
    h = write_hyp(tmp_path, '[[force]]\nkind = "drag"\nregion = "ocean"\n')
    assert_bad(cli("torques", world, h, "--motions", tmp_path / "m.csv", "-o",
                   tmp_path / "t.csv"), tmp_path / "t.csv", "needs continents")


def test_bounds_low_above_high(world, tmp_path, cli):
    h = write_hyp(tmp_path, '[[force]]\nkind = "drag"\nbounds = [5.0, 1.0]\n')
    assert_bad(cli("torques", world, h, "--motions", tmp_path / "m.csv", "-o",
                   tmp_path / "t.csv"), tmp_path / "t.csv", "low > high")


def test_synthesised_ages_are_announced(world, tmp_path, cli):
    # No age grid: with motions and a ridge, ages are made from ridges and rates, and the
    # output says so. Relative rotation 0.6 deg/Myr about x opens the ridge along lon
    # 180..360 at 0.6 x 111.19 |sin L| mm/yr (omega x r, closed form); its length-weighted
    # mean is 0.6 x 111.19 x 2/pi = 42.47 mm/yr, so each plate's half rate is 21.2 mm/yr.
    bnd = json.loads((tmp_path / "boundaries.geojson").read_text())
    bnd["features"][1]["properties"]["kind"] = "ridge"
    (tmp_path / "boundaries.geojson").write_text(json.dumps(bnd))
    (tmp_path / "m2.csv").write_text("plate,lat,lon,rate\nUpper,0,0,-0.3\nLower,0,0,0.3\n")
    h = write_hyp(tmp_path, '[[force]]\nkind = "ridge"\n')
    status, out, err = cli("torques", world, h, "--motions", tmp_path / "m2.csv", "-o",
                           tmp_path / "t.csv")
    assert status == 0, err
    assert "ages synthesised from ridges" in out
    assert "Upper: half rate 21.2 mm/yr" in out and "Lower: half rate 21.2 mm/yr" in out


@pytest.mark.parametrize("text,words", [
    ('physics = 3\n[[force]]\nkind = "drag"\n', "'physics' must be a table"),
    ('force = 3\n', "'force' must be an array of tables"),
    ('spread = "wide"\n[[force]]\nkind = "drag"\n', "'spread' must be a table"),
    ('[spread]\nexpansivity = 3\n[[force]]\nkind = "drag"\n', "{uniform = [LOW, HIGH]}"),
])
def test_hypothesis_tables_of_the_wrong_type(tmp_path, cli, text, words):
    h = write_hyp(tmp_path, text)
    status, out, err = cli("cooling", "--physics", h)
    assert status == 2 and words in err and "Traceback" not in err
