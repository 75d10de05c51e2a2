"""Continents clipped to plates: exact moments of the continental part of each plate.

Sources: the area of a spherical cap of angular radius a is 2 pi (1 - cos a) (Gauss-Bonnet;
any text on spherical geometry); polygon areas on a sphere from GeographicLib through
pyproj.Geod (Karney 2013, J. Geodesy 87); mirror symmetry for the halves of a region cut
by a plane of symmetry.
"""

import numpy as np
import pytest
from pyproj import Geod

from torque import compute_torques, sphere

from torque import polygons
from torque.continents import Continents, clip_moments
from torque.hypothesis import hypothesis_from_dict

from .worlds import hemispheres, voronoi_world


def cap(lon0, lat0, alpha_deg, n=720):
    """A continent: n points on the circle of angular radius alpha about (lon0, lat0),
    counter-clockwise seen from outside (azimuths decreasing)."""
    geod = Geod(a=1, b=1)
    lon, lat, _ = geod.fwd(np.full(n, lon0), np.full(n, lat0),
                           np.linspace(360, 0, n, endpoint=False), np.full(n, np.radians(alpha_deg)))
    xyz = sphere.lonlat_to_xyz(lon, lat)
    return Continents(xyz, np.array([0, n]), np.array([False]), np.array([0])), lon, lat


def test_continents_are_clipped_to_plates_exactly():
    # A cap centred on the equator is cut in two equal halves by it (mirror symmetry), and
    # the whole cap's moments are the closed forms of a cap: area 2 pi (1 - cos a).
    alpha = np.radians(20.0)
    cont, _, _ = cap(30.0, 0.0, 20.0)
    area, first, second, warn = clip_moments(hemispheres(), cont)
    cap_area, _, _ = polygons.region_moments(cont.xyz, [0, 720], [0], [False], 1)
    assert area.sum() == pytest.approx(cap_area[0], rel=1e-12)
    assert area[0] == pytest.approx(area[1], rel=1e-10)
    assert cap_area[0] == pytest.approx(2 * np.pi * (1 - np.cos(alpha)), rel=1e-4)
    assert first[0, 2] == pytest.approx(-first[1, 2], rel=1e-10)
    assert warn == []
    # drag over the continent and the ocean add up to drag over the whole plate
    omega = np.array([[1e-15, 2e-15, 3e-15], [0, 0, 1e-15]])
    hyp = hypothesis_from_dict({"force": [
        {"kind": "drag"}, {"kind": "drag", "region": "ocean"},
        {"kind": "drag", "region": "continent"}]})
    tall, toc, tco = compute_torques(hemispheres(), hyp, omega, continents=cont)
    scale = np.abs(tall.torque(omega)).max()
    np.testing.assert_allclose(toc.torque(omega) + tco.torque(omega), tall.torque(omega),
                               rtol=1e-12, atol=1e-12 * scale)


def test_a_continent_over_many_plates_keeps_its_geodesic_area():
    # Source: pyproj.Geod (GeographicLib) area of the same polygon on the unit sphere. The
    # continent straddles several plates of a Voronoi world; the pieces must add up to it.
    world = voronoi_world(12, 3)
    cont, lon, lat = cap(-20.0, 35.0, 40.0, n=360)
    area, *_ , warn = clip_moments(world, cont)
    geod_area, _ = Geod(a=1, b=1).polygon_area_perimeter(lon, lat)
    assert (area > 0).sum() >= 2
    assert area.sum() == pytest.approx(abs(geod_area), rel=1e-9)
    assert warn == []


def test_contains_tells_continent_from_ocean():
    # The centre of a cap is inside it, its antipode is not; points just inside and outside
    # the rim (0.1 degree) fall on the right sides (definition of the region).
    cont, _, _ = cap(30.0, 0.0, 20.0)
    centre = sphere.lonlat_to_xyz(30.0, 0.0)
    assert cont.contains(np.array([centre, -centre])).tolist() == [True, False]
    north = sphere.lonlat_to_xyz(30.0, 19.9), sphere.lonlat_to_xyz(30.0, 20.1)
    assert cont.contains(np.array(north)).tolist() == [True, False]
