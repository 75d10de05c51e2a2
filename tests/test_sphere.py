"""Exact spherical integrals, checked against references outside the project.

Sources: pyproj.Geod on a sphere (GeographicLib; Karney 2013, J. Geodesy 87, 43-55) for
areas and perimeters; scipy.spatial.SphericalVoronoi.calculate_areas and scipy.integrate
for independent numbers; closed forms for hemispheres, lunes and caps (elementary calculus
on the sphere, e.g. any calculus text; written out beside each test).
"""

import numpy as np
import pytest
from pyproj import Geod
from scipy import integrate
from scipy.spatial.transform import Rotation

from torque import sphere

from torque import polygons

from .worlds import voronoi_rings

R = 6371e3
GEOD = Geod(a=R, b=R)


def moments_of(rings_lonlat, holes=None):
    """Moments of a single region given lon/lat rings (first exterior, rest holes)."""
    xyz = [sphere.lonlat_to_xyz(*np.asarray(r, float).T) for r in rings_lonlat]
    start = np.r_[0, np.cumsum([len(x) for x in xyz])]
    is_hole = np.zeros(len(xyz), bool) if holes is None else np.asarray(holes)
    a, f, s = polygons.region_moments(np.concatenate(xyz), start, np.zeros(len(xyz), int),
                                    is_hole, 1)
    return a[0], f[0], s[0]


def star_polygon(rng, lon0, lat0, n, rmin, rmax):
    """A random star-shaped polygon around a centre, made with pyproj's geodesic forward."""
    az = np.sort(rng.uniform(0, 360, n))
    dist = rng.uniform(rmin, rmax, n) * 1e3
    lon, lat, _ = GEOD.fwd(np.full(n, lon0), np.full(n, lat0), az, dist)
    # Walking with increasing azimuth (clockwise seen from above) leaves the centre on the
    # right; reverse for a counter-clockwise ring.
    return lon[::-1], lat[::-1]


@pytest.mark.parametrize("centre", [(10, 20), (179.5, -5), (-179.9, 60), (0, 90), (33, -90),
                                    (120, 88), (-60, -45)])
def test_area_and_perimeter_match_geographiclib(centre):
    # Source: pyproj.Geod (GeographicLib, Karney 2013) on a sphere of radius R.
    rng = np.random.default_rng(abs(hash(centre)) % 2**32)
    for _ in range(5):
        lon, lat = star_polygon(rng, *centre, n=rng.integers(3, 40), rmin=200, rmax=3000)
        ref_area, ref_perim = GEOD.polygon_area_perimeter(lon, lat)
        area, _, _ = moments_of([np.c_[lon, lat]])
        xyz = sphere.lonlat_to_xyz(lon, lat)
        perim = polygons.ring_perimeter(xyz, [0, len(xyz)])[0]
        assert ref_area > 0
        assert area * R**2 == pytest.approx(ref_area, rel=1e-9)
        assert perim * R == pytest.approx(ref_perim, rel=1e-12)


def test_area_larger_than_hemisphere_strict_winding():
    # Source: pyproj.Geod. A ring walked clockwise bounds everything outside it; GeographicLib
    # reports the small region with a negative sign, so the large one is 4 pi R^2 + area.
    rng = np.random.default_rng(7)
    lon, lat = star_polygon(rng, 40, 10, 25, 500, 4000)
    ref_small, _ = GEOD.polygon_area_perimeter(lon[::-1], lat[::-1])
    area, _, _ = moments_of([np.c_[lon[::-1], lat[::-1]]])
    assert ref_small < 0
    assert area * R**2 == pytest.approx(4 * np.pi * R**2 + ref_small, rel=1e-12)
    assert area > 2 * np.pi


def test_hemisphere_closed_forms():
    # Closed forms for the northern hemisphere: area 2 pi; int r dA = (0, 0, pi);
    # int z^2 dA = 2 pi/3 = int x^2 dA = int y^2 dA.
    ring = [(0, 0), (90, 0), (180, 0), (270, 0)]
    a, f, s = moments_of([ring])
    assert a == pytest.approx(2 * np.pi, rel=1e-14)
    np.testing.assert_allclose(f, [0, 0, np.pi], atol=1e-14)
    np.testing.assert_allclose(s, 2 * np.pi / 3 * np.eye(3), atol=1e-14)


@pytest.mark.parametrize("l1,l2", [(0.0, 30.0), (-20.0, 95.0), (170.0, 190.0)])
def test_lune_closed_forms(l1, l2):
    # A lune between meridians l1 < l2 (vertices at both poles, so the pole case is covered):
    # area 2 (l2 - l1); int r dA = (pi/2) (sin l2 - sin l1, cos l1 - cos l2, 0);
    # int z^2 dA = (2/3)(l2 - l1).
    ring = [(0, 90), (l1, 0), (0, -90), (l2, 0)]
    a, f, s = moments_of([ring])
    dl = np.radians(l2 - l1)
    r1, r2 = np.radians([l1, l2])
    assert a == pytest.approx(2 * dl, rel=1e-13)
    np.testing.assert_allclose(f, np.pi / 2 * np.array([np.sin(r2) - np.sin(r1),
                                                        np.cos(r1) - np.cos(r2), 0]),
                               atol=1e-13)
    assert s[2, 2] == pytest.approx(2 / 3 * dl, rel=1e-13)


def cap_ring(alpha_deg, n, lon0=0.0, lat0=90.0):
    lon, lat, _ = GEOD.fwd(np.full(n, lon0), np.full(n, lat0), np.linspace(360, 0, n,
                                                                          endpoint=False),
                           np.full(n, np.radians(alpha_deg) * R))
    return np.c_[lon, lat]


def test_polygons_converge_to_a_spherical_cap():
    # Closed forms for a cap of angular radius alpha about the north pole:
    # area 2 pi (1 - cos a); int r dA = (0, 0, pi sin^2 a); int z^2 dA = 2 pi (1 - cos^3 a)/3.
    # An inscribed regular n-gon differs by O(1/n^2): the error must fall ~4x per doubling.
    alpha = np.radians(35.0)
    exact = np.array([2 * np.pi * (1 - np.cos(alpha)), np.pi * np.sin(alpha) ** 2,
                      2 * np.pi * (1 - np.cos(alpha) ** 3) / 3])
    errs = []
    for n in (250, 500, 1000, 2000):
        a, f, s = moments_of([cap_ring(35.0, n)])
        got = np.array([a, f[2], s[2, 2]])
        errs.append(np.abs(got / exact - 1))
    errs = np.array(errs)
    assert np.all(errs[-1] < 1e-5)
    ratios = errs[:-1] / errs[1:]
    np.testing.assert_allclose(ratios, 4.0, rtol=0.02)


def test_voronoi_tiling_covers_the_sphere_and_matches_scipy_areas():
    # Source: scipy.spatial.SphericalVoronoi.calculate_areas (independent implementation);
    # the whole sphere has area 4 pi, int r dA = 0 and int r r^T dA = (4 pi / 3) I.
    gen, sv, rings = voronoi_rings(80, seed=11)
    xyz = [sphere.lonlat_to_xyz(*np.asarray(r[:-1]).T) for r in rings]
    start = np.r_[0, np.cumsum([len(x) for x in xyz])]
    a, f, s = polygons.region_moments(np.concatenate(xyz), start, np.arange(80),
                                    np.zeros(80, bool), 80)
    np.testing.assert_allclose(a, sv.calculate_areas(), rtol=1e-10)
    assert a.sum() == pytest.approx(4 * np.pi, rel=1e-13)
    np.testing.assert_allclose(f.sum(0), 0, atol=1e-13)
    np.testing.assert_allclose(s.sum(0), 4 * np.pi / 3 * np.eye(3), atol=1e-13)


def test_holes_and_multipolygons_are_additive():
    # A cap with a hole equals the cap minus the hole, for every moment; a MultiPolygon's
    # moments are the sum of its parts. Closed form of the caps as above.
    outer = cap_ring(40.0, 400, 10, 20)
    hole = cap_ring(10.0, 300, 15, 25)
    a1, f1, s1 = moments_of([outer])
    a2, f2, s2 = moments_of([hole])
    a, f, s = moments_of([outer, hole[::-1]], holes=[False, True])
    assert a == pytest.approx(a1 - a2, rel=1e-12)
    np.testing.assert_allclose(f, f1 - f2, atol=1e-12)
    np.testing.assert_allclose(s, s1 - s2, atol=1e-12)
    other = cap_ring(5.0, 100, -120, -60)
    a3, f3, s3 = moments_of([other])
    xyz = [sphere.lonlat_to_xyz(*r.T) for r in (outer, other)]
    am, fm, sm = polygons.region_moments(np.concatenate(xyz), [0, 400, 500], [0, 0],
                                       [False, False], 1)
    assert am[0] == pytest.approx(a1 + a3, rel=1e-12)
    np.testing.assert_allclose(fm[0], f1 + f3, atol=1e-12)


def test_invariance_to_start_vertex_densification_and_rotation():
    # Invariances that any exact integral must have.
    rng = np.random.default_rng(5)
    lon, lat = star_polygon(rng, 175, 70, 30, 300, 2500)
    ring = np.c_[lon, lat]
    a, f, s = moments_of([ring])
    a2, f2, s2 = moments_of([np.roll(ring, 7, axis=0)])
    np.testing.assert_allclose([a2, *f2, *s2.ravel()], [a, *f, *s.ravel()], atol=1e-14)

    xyz = sphere.lonlat_to_xyz(lon, lat)
    pa, pb, _ = sphere.densify_arcs(xyz, np.roll(xyz, -1, axis=0), np.radians(0.3))
    ad, fd, sd = polygons.region_moments(pa, [0, len(pa)], [0], [False], 1)
    assert len(pa) > 5 * len(xyz)
    np.testing.assert_allclose(ad[0], a, rtol=1e-12)
    np.testing.assert_allclose(fd[0], f, atol=1e-13)
    np.testing.assert_allclose(sd[0], s, atol=1e-13)

    Q = Rotation.random(random_state=3).as_matrix()
    ar, fr, sr = polygons.region_moments(xyz @ Q.T, [0, len(xyz)], [0], [False], 1)
    assert ar[0] == pytest.approx(a, rel=1e-12)
    np.testing.assert_allclose(fr[0], Q @ f, atol=1e-13)
    np.testing.assert_allclose(sr[0], Q @ s @ Q.T, atol=1e-13)


def test_line_integrals_match_quadrature_and_geodesic_distance():
    # Sources: pyproj.Geod.inv (GeographicLib) for arc length; scipy.integrate.quad for
    # int r ds and int r r^T ds along the arc r(t) = a cos t + u sin t.
    rng = np.random.default_rng(2)
    for _ in range(10):
        ll = rng.uniform([-180, -90], [180, 90], size=(2, 2))
        a, b = sphere.lonlat_to_xyz(ll[:, 0], ll[:, 1])
        length, first, second, pole = polygons.polyline_moments(a[None], b[None])
        _, _, dist = GEOD.inv(ll[0, 0], ll[0, 1], ll[1, 0], ll[1, 1])
        assert length[0] * R == pytest.approx(dist, rel=1e-12)
        u = np.cross(pole[0], a)
        th = length[0]
        r = lambda t: a * np.cos(t) + u * np.sin(t)  # noqa: E731
        for i in range(3):
            ref, _ = integrate.quad(lambda t: r(t)[i], 0, th, epsabs=1e-14)
            assert first[0, i] == pytest.approx(ref, abs=1e-12)
            for j in range(3):
                ref, _ = integrate.quad(lambda t: r(t)[i] * r(t)[j], 0, th, epsabs=1e-14)
                assert second[0, i, j] == pytest.approx(ref, abs=1e-12)


def test_points_left_of_rings_and_arc_helpers():
    # Closed forms: the equator walked east has the north pole on its left; the highest
    # point of the arc from (0, 40) to (180, 40) through the north pole is 90 degrees; the
    # distance from the north pole to the equator is pi/2. (Elementary spherical geometry.)
    eq = sphere.lonlat_to_xyz([0.0, 120.0, 240.0], [0.0, 0.0, 0.0])
    inside = polygons.points_left_of_rings(sphere.lonlat_to_xyz([0, 0], [89, -89]), eq, [0, 3])
    assert inside[:, 0].tolist() == [True, False]
    a, b = sphere.lonlat_to_xyz([0.0, 170.0], [40.0, 40.0])
    lo, hi = sphere.arc_lat_range(a, b)
    assert np.degrees(lo) == pytest.approx(40.0)
    assert 80.0 < np.degrees(hi) < 90.0
    d = sphere.point_arc_distance(np.array([0, 0, 1.0]), eq[0], eq[1])
    assert d == pytest.approx(np.pi / 2)


def test_drag_tensor_closed_forms():
    # Closed forms: for a hemisphere, R^2 int (I - r r^T) dA = R^2 (2 pi - 2 pi/3) I
    # = (4 pi / 3) R^2 I; summed over any tiling it is R^2 (4 pi - 4 pi/3) I = (8 pi/3) R^2 I.
    from torque.io import world_from_rings
    north = [[(0, 0), (120, 0), (240, 0)]]
    south = [[(0, 0), (240, 0), (120, 0)]]
    w = world_from_rings({"Upper": north, "Lower": south}, radius_km=1000.0, winding="strict")
    R = 1e6
    for D in w.drag_tensor_m2:
        np.testing.assert_allclose(D, 4 * np.pi / 3 * R**2 * np.eye(3), rtol=1e-13,
                                   atol=1e-13 * R**2)
    np.testing.assert_allclose(w.drag_tensor_m2.sum(0), 8 * np.pi / 3 * R**2 * np.eye(3),
                               rtol=1e-13, atol=1e-13 * R**2)
