"""Euler vectors, velocities, finite rotations and frames, against outside references.

Sources: the speed of a point at angular distance D from the Euler pole is omega R sin D,
directed along the small circle about the pole (Fowler 2005, *The Solid Earth*, 2nd ed.,
sec. 2.4; Cox and Hart 1986, *Plate Tectonics: How It Works*, ch. 4); distances and
azimuths from pyproj.Geod (GeographicLib); finite rotations against Rodrigues' rotation
formula (Cox and Hart 1986, ch. 9, written out here) and scipy.spatial.transform.Rotation.
"""

import numpy as np
import pytest
from pyproj import Geod
from scipy.spatial.transform import Rotation

from torque import euler, sphere
from torque import io as tio
from torque.io import world_from_rings

R = 6371e3
GEOD = Geod(a=R, b=R)


def test_pole_vector_round_trip_and_positive_rate():
    rng = np.random.default_rng(0)
    lat = rng.uniform(-90, 90, 100)
    lon = rng.uniform(-180, 180, 100)
    rate = rng.uniform(-2, 2, 100)
    w = euler.pole_to_vector(lat, lon, rate)
    lat2, lon2, rate2 = euler.vector_to_pole(w)
    assert np.all(rate2 >= 0)
    np.testing.assert_allclose(rate2, np.abs(rate), rtol=1e-13)
    # a negative rate is the same rotation about the antipodal pole
    flip = rate < 0
    np.testing.assert_allclose(lat2[flip], -lat[flip], atol=1e-9)
    np.testing.assert_allclose(np.mod(lon2[flip] - lon[flip], 360), 180, atol=1e-9)
    np.testing.assert_allclose(euler.pole_to_vector(lat2, lon2, rate2), w, rtol=1e-12,
                               atol=1e-30)


def test_speed_is_omega_r_sin_d_along_the_small_circle():
    # Source: Fowler (2005) sec. 2.4 / Cox and Hart (1986) ch. 4: |v| = omega R sin D, with D
    # the angular distance from the pole (here from pyproj.Geod.inv), and v at right angles
    # to the great circle through the point and the pole: for a counter-clockwise rotation
    # the azimuth of v is the azimuth to the pole plus 90 degrees.
    rng = np.random.default_rng(1)
    plat, plon, rate = 35.0, -120.0, 0.9
    w = euler.pole_to_vector(plat, plon, rate)
    lon = rng.uniform(-180, 180, 500)
    lat = rng.uniform(-85, 85, 500)
    ve, vn = euler.velocity_en(w, sphere.lonlat_to_xyz(lon, lat), R)
    speed, az = euler.speed_azimuth(ve, vn)
    az_to_pole, _, dist = GEOD.inv(lon, lat, np.full(500, plon), np.full(500, plat))
    D = dist / R
    omega_per_yr = np.radians(rate) / 1e6
    np.testing.assert_allclose(speed, omega_per_yr * R * np.sin(D) * 1e3, rtol=1e-9)
    diff = np.mod(az - (az_to_pole + 90.0) + 180.0, 360.0) - 180.0
    np.testing.assert_allclose(diff, 0.0, atol=1e-6)


def test_worked_example_one_degree_per_myr():
    # Worked by hand with the textbook formula v = omega R sin D (Fowler 2005, sec. 2.4):
    # a pole at (0 N, 0 E) turning at 1 deg/Myr moves the point (0 N, 90 E), 90 degrees
    # away, at (pi/180) rad/Myr x 6371 km = 111.19 km/Myr = 111.19 mm/yr, due north
    # (x cross y = z). The textbook's own worked example uses a real plate pair, which this
    # project does not reproduce; the formula is the same.
    ve, vn = euler.velocity_en(euler.pole_to_vector(0.0, 0.0, 1.0),
                               sphere.lonlat_to_xyz(90.0, 0.0)[None], R)
    assert ve[0] == pytest.approx(0.0, abs=1e-9)
    assert vn[0] == pytest.approx(111.19, abs=0.01)
    # relative motion: with plate B turning at 0.25 deg/Myr about the same pole, A moves
    # relative to B at (1 - 0.25) x 111.19 = 83.39 mm/yr
    w_ab = euler.relative(euler.pole_to_vector(0.0, 0.0, 1.0),
                          euler.pole_to_vector(0.0, 0.0, 0.25))
    _, vn_ab = euler.velocity_en(w_ab, sphere.lonlat_to_xyz(90.0, 0.0)[None], R)
    assert vn_ab[0] == pytest.approx(83.39, abs=0.01)


def rodrigues(axis, angle, v):
    """Rodrigues' rotation formula (Cox and Hart 1986, ch. 9): independent of scipy."""
    k = axis / np.linalg.norm(axis)
    return (v * np.cos(angle) + np.cross(k, v) * np.sin(angle)
            + np.outer(v @ k, k) * (1 - np.cos(angle)))


def test_finite_rotation_composition_matches_rodrigues_and_scipy():
    rng = np.random.default_rng(2)
    pts = sphere.normalize(rng.normal(size=(20, 3)))
    r1 = euler.finite_rotation(40.0, 10.0, 25.0)
    r2 = euler.finite_rotation(-15.0, 120.0, 60.0)
    both = euler.compose(r1, r2)
    step = rodrigues(sphere.lonlat_to_xyz(10.0, 40.0), np.radians(25.0), pts)
    step = rodrigues(sphere.lonlat_to_xyz(120.0, -15.0), np.radians(60.0), step)
    np.testing.assert_allclose(both.apply(pts), step, atol=1e-12)
    np.testing.assert_allclose(both.as_matrix(), (Rotation.from_rotvec(
        sphere.lonlat_to_xyz(120.0, -15.0) * np.radians(60.0)) * Rotation.from_rotvec(
        sphere.lonlat_to_xyz(10.0, 40.0) * np.radians(25.0))).as_matrix(), atol=1e-14)
    # the inverse undoes it; the pole of a rotation round-trips
    np.testing.assert_allclose((both.inv() * both).as_rotvec(), 0, atol=1e-14)
    lat, lon, ang = euler.rotation_pole(r1)
    assert (float(lat), float(lon), float(ang)) == pytest.approx((40.0, 10.0, 25.0))


def nine_plate_world():
    rng = np.random.default_rng(4)
    from .worlds import voronoi_rings
    _, _, rings = voronoi_rings(9, seed=5)
    return world_from_rings({f"P{i}": [r] for i, r in enumerate(rings)}), rng


def test_no_net_rotation_checked_by_independent_quadrature():
    # The NNR frame makes int r x v dA vanish over the sphere. Check with a plain midpoint
    # quadrature on a 0.2 degree lon/lat grid (cos-lat weights), not the drag tensors.
    world, rng = nine_plate_world()
    motions = euler.Motions.from_poles(world.plate_names, rng.uniform(-80, 80, 9),
                                       rng.uniform(-180, 180, 9), rng.uniform(0.2, 1.5, 9))
    nnr, w_net = euler.to_no_net_rotation(world, motions)
    step = 0.2
    lon, lat = euler.grid_lonlat(step)
    LON, LAT = np.meshgrid(lon, lat)
    xyz = sphere.lonlat_to_xyz(LON.ravel(), LAT.ravel())
    dA = np.radians(step) ** 2 * np.cos(np.radians(LAT.ravel()))
    plate = world.locate_xyz(xyz)

    def moment(om):
        v = np.cross(om[plate], xyz)
        return (np.cross(xyz, v) * dA[:, None]).sum(0)

    before = moment(motions.for_world(world))
    after = moment(nnr.for_world(world))
    # before: (8 pi / 3) w_net exactly (sum of drag tensors over a tiling); the grid sum
    # reproduces it to its own discretisation error
    np.testing.assert_allclose(before, 8 * np.pi / 3 * w_net, rtol=2e-3)
    assert np.linalg.norm(after) < 2e-3 * np.linalg.norm(before)
    # and the exact net rotation of the NNR motions is zero to rounding
    assert np.linalg.norm(euler.net_rotation(world.drag_tensor, nnr.for_world(world))) < 1e-12 * \
        np.linalg.norm(w_net)


def test_fixed_plate_frame_keeps_relative_motion():
    world, rng = nine_plate_world()
    m = euler.Motions.from_poles(world.plate_names, rng.uniform(-80, 80, 9),
                                 rng.uniform(-180, 180, 9), rng.uniform(0.2, 1.5, 9))
    fixed = m.relative_to("P3")
    assert np.linalg.norm(fixed.omega[3]) == 0
    np.testing.assert_allclose(fixed.omega[1] - fixed.omega[2], m.omega[1] - m.omega[2],
                               atol=1e-30)


def test_motions_csv_round_trip(tmp_path):
    # Contract: output rate >= 0 and at least 10 significant digits, so that a file written
    # and read back loses nothing that matters.
    rng = np.random.default_rng(3)
    m = euler.Motions.from_poles([f"X{i}" for i in range(20)], rng.uniform(-90, 90, 20),
                                 rng.uniform(-180, 180, 20), rng.uniform(-3, 3, 20))
    tio.write_motions(tmp_path / "m.csv", m)
    back = tio.read_motions(tmp_path / "m.csv")
    np.testing.assert_allclose(back.omega, m.omega, rtol=1e-13, atol=1e-28)
    rates = [float(r.split(",")[3]) for r in (tmp_path / "m.csv").read_text().split()[1:]]
    assert min(rates) >= 0
