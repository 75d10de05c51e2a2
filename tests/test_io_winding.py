"""Ring orientation: ``winding = "auto"`` ties, its hint towards "strict", and continents.

An exact hemisphere splits the sphere into two regions of equal area (Gauss-Bonnet: a
great circle bounds 2 pi on each side), so "the smaller region" is decided by rounding
and the ring must be taken as written (RFC 7946, sec. 3.1.6, right-hand rule).
"""

import json

import numpy as np
import pytest

from torque import sphere
from torque.io import read_continents
from torque.io import load_world

from .conftest import assert_refused, feature_collection, plate_feature


def circle(pole, radius_deg, n=37, seed=0):
    """A closed lon/lat ring at angular radius ``radius_deg`` round ``pole``, counter-
    clockwise seen from outside (its cap on the left), with irregular vertex spacing."""
    pole = sphere.normalize(np.asarray(pole, float))
    e = sphere.normalize(np.cross(pole, [0.31, -0.47, 0.83]))
    f = np.cross(pole, e)
    t = np.sort(np.random.default_rng(seed).uniform(0, 2 * np.pi, n))
    r = np.radians(radius_deg)
    xyz = np.cos(r) * pole + np.sin(r) * (np.cos(t)[:, None] * e + np.sin(t)[:, None] * f)
    lon, lat = sphere.xyz_to_lonlat(xyz)
    ring = np.c_[lon, lat].tolist()
    return ring + [ring[0]]


def geod_area(ring, radius_m=6371e3):
    """Area of the smaller region a closed lon/lat ring bounds (pyproj.Geod on a sphere)."""
    from pyproj import Geod
    lon, lat = np.array(ring[:-1]).T
    a = abs(Geod(a=radius_m, b=radius_m).polygon_area_perimeter(lon, lat)[0])
    return min(a, 4 * np.pi * radius_m ** 2 - a)


# seeds 19-29 are ones where the old rounding-decided choice put both plates on one side
@pytest.mark.parametrize("seed", [0, 1, 19, 20, 23, 25, 27, 29])
def test_tilted_hemispheres_tile_with_auto(write_world, cli, seed):
    # A great circle through irregular points: both plates are exact hemispheres, each
    # 2 pi R^2 (closed form), whatever rounding says about which side is "smaller".
    pole = np.random.default_rng(100 + seed).normal(size=3)
    ring = circle(pole, 90.0, seed=seed)
    path = write_world([plate_feature("Near", [ring]), plate_feature("Far", [ring[::-1]])])
    status, out, err = cli("check", path, "--json")
    assert status == 0, err
    d = json.loads(out)
    assert d["problems"] == []
    half = 2 * np.pi * 6371e3 ** 2
    assert [p["area_m2"] for p in d["plates"]] == pytest.approx([half, half], rel=1e-9)


def test_auto_that_fails_to_tile_suggests_strict(write_world, cli):
    # A 60 degree cap and the rest of the sphere, both written by the right-hand rule:
    # "auto" turns the larger plate into a second copy of the cap.
    cap = circle([0.2, 0.3, 0.9], 60.0)
    path = write_world([plate_feature("Cap", [cap]), plate_feature("Rest", [cap[::-1]])])
    status, out, err = cli("check", path)
    assert status == 2 and "Traceback" not in err
    assert 'winding = "strict"' in out + err
    # with the key set, it tiles
    text = path.read_text()
    path.write_text('winding = "strict"\n' + text)
    status, out, err = cli("check", path, "--json")
    assert status == 0, err
    rest = json.loads(out)["plates"][1]["area_m2"]
    # the rest is the sphere less the cap polygon, whose area pyproj.Geod gives on a sphere
    # (great-circle edges; reference library)
    assert rest == pytest.approx(4 * np.pi * 6371e3 ** 2 - geod_area(cap), rel=1e-9)


def test_other_commands_give_the_same_hint(write_world, cli, tmp_path):
    cap = circle([0.2, 0.3, 0.9], 60.0)
    path = write_world([plate_feature("Cap", [cap]), plate_feature("Rest", [cap[::-1]])])
    out = tmp_path / "f.csv"
    motions = tmp_path / "m.csv"
    motions.write_text("plate,lat,lon,rate\nCap,10,20,0.5\nRest,0,0,0\n")
    assert_refused(cli("field", path, motions, "--step", "10", "-o", out), out,
                   'winding = "strict"')


def _continent_world(write_world, tmp_path, winding):
    north = [[0, 0], [120, 0], [240, 0], [0, 0]]
    south = [[0, 0], [240, 0], [120, 0], [0, 0]]
    # a continent larger than a hemisphere: everything north of 30 S, counter-clockwise
    # round the north pole as RFC 7946 writes it
    big = circle([0, 0, 1], 120.0)
    (tmp_path / "continents.geojson").write_text(json.dumps(feature_collection([
        {"type": "Feature", "properties": {},
         "geometry": {"type": "Polygon", "coordinates": [big]}}])))
    return write_world([plate_feature("Upper", [north]), plate_feature("Lower", [south])],
                       extra=f'winding = "{winding}"\ncontinents = "continents.geojson"\n')


def test_strict_continent_larger_than_a_hemisphere_is_kept(write_world, tmp_path):
    world = load_world(_continent_world(write_world, tmp_path, "strict"))
    cont = read_continents(world.paths["continents"], world.winding)
    # 20 S lies inside the 120 degree cap round the north pole, 60 S outside it
    inside = cont.contains(sphere.lonlat_to_xyz(np.array([10.0, 10.0]),
                                                np.array([-20.0, -60.0])))
    assert inside.tolist() == [True, False]
    # and "auto" takes the smaller region, the 60 degree cap round the south pole
    auto = read_continents(world.paths["continents"], "auto")
    inside = auto.contains(sphere.lonlat_to_xyz(np.array([10.0, 10.0]),
                                                np.array([-20.0, -60.0])))
    assert inside.tolist() == [False, True]


def test_continental_drag_uses_the_world_winding(write_world, tmp_path):
    # The continental area of the strict world is the sphere less the small polygon round
    # the south pole that the ring also bounds (its area from pyproj.Geod on a sphere,
    # reference library), split between the two hemisphere plates.
    from torque.continents import clip_moments
    world = load_world(_continent_world(write_world, tmp_path, "strict"))
    cont = read_continents(world.paths["continents"], world.winding)
    area = clip_moments(world, cont)[0] * 6371e3 ** 2
    big = circle([0, 0, 1], 120.0)
    assert np.sum(area) == pytest.approx(4 * np.pi * 6371e3 ** 2 - geod_area(big), rel=1e-9)
