"""Torques of the force terms against closed forms and identities.

Closed forms (vector calculus on the sphere, written out beside each test):
* a uniform eastward line force F along a meridian from pole to pole has torque
  R^2 int r x F e_hat ds = 2 F R^2 z_hat;
* basal drag on a hemisphere: -C R^4 (4 pi/3) omega (drag tensor of a hemisphere);
* a northward line force F along half the equator (lon 0 to 180): R^2 int r x F n_hat ds =
  -F R^2 int e_hat ds = (2 F R^2, 0, 0);
* transform resistance along the equator with the southern plate turning at w about z:
  2 pi c w R^3 z_hat on the northern plate;
* Stokes' theorem on the sphere: int_plate r x grad F dA = oint F dr, used to check the
  distributed ridge push on purely oceanic plates, with convergence in the grid step.
"""

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from torque import sphere
from torque.errors import InputError
from torque.euler import RAD_S_PER_DEG_MYR
from torque import compute_torques
from torque.grids import AgeGrid, FlowGrid
from torque.hypothesis import hypothesis_from_dict
from torque.lithosphere import Cooling, Physics
from torque.world import Boundary

from .conftest import here
from .worlds import east_west, hemispheres, hyp, voronoi_world

R = 6371e3


def line(coords, Q=None):
    lon, lat = np.asarray(coords, float).T
    xyz = sphere.lonlat_to_xyz(lon, lat)
    return xyz if Q is None else xyz @ Q.T


def test_line_force_along_a_meridian():
    # Walking from the north pole south along lon 0, East is on the left; the edge-form
    # ridge push pushes +n (eastward) into East: torque 2 F R^2 z_hat, and the opposite on
    # West.
    F = 2.5e12
    b = [Boundary("ridge", "East", "West", line([(0, 90), (0, 45), (0, 0), (0, -45),
                                                   (0, -90)])),
         Boundary("transform", "West", "East", line([(180, 90), (180, 0), (180, -90)]))]
    w = east_west(b)
    (t,) = compute_torques(w, hyp({"kind": "ridge", "form": "edge", "coefficient": 1.0,
                                   "force_per_length": F}))
    np.testing.assert_allclose(t.torque()[0], [0, 0, 2 * F * R**2], atol=1e-9 * F * R**2)
    np.testing.assert_allclose(t.torque()[1], [0, 0, -2 * F * R**2], atol=1e-9 * F * R**2)


def test_drag_on_a_hemisphere():
    w = hemispheres()
    omega = np.array([[1e-15, -2e-15, 3e-15], [0, 0, 0]])
    (t,) = compute_torques(w, hyp({"kind": "drag"}), omega)
    np.testing.assert_allclose(t.torque(omega)[0], -R**4 * 4 * np.pi / 3 * omega[0],
                               rtol=1e-12)
    assert t.velocity_dependent and t.unit == "Pa s/m"


def trench_world(Q=None):
    b = [Boundary("subduction", "Upper", "Lower", line([(0, 0), (60, 0), (120, 0),
                                                          (180, 0)], Q),
                  subducting="Lower"),
         Boundary("transform", "Upper", "Lower", line([(180, 0), (270, 0), (360, 0)], Q))]
    return hemispheres(b, Q)


def test_slab_pull_and_suction_on_half_the_equator():
    # Lower sinks under Upper along lon 0..180: slab pull on Lower points north (toward
    # Upper), torque (2 F R^2, 0, 0); suction on Upper points south, (-2 F R^2, 0, 0).
    F = 3e13
    w = trench_world()
    slab, suction = compute_torques(w, hyp(
        {"kind": "slab", "coefficient": 1.0, "force_per_length": F},
        {"kind": "suction", "coefficient": 0.1, "force_per_length": F}))
    scale = F * R**2
    np.testing.assert_allclose(slab.torque()[1], [2 * scale, 0, 0], atol=1e-9 * scale)
    np.testing.assert_allclose(slab.torque()[0], 0, atol=1e-9 * scale)
    np.testing.assert_allclose(suction.torque()[0], [-2 * scale, 0, 0], atol=1e-9 * scale)


def test_slab_pull_magnitude_from_the_trench_age():
    # With a slab age of 80 Myr (entry default) the force per metre is the cooling model's
    # slab buoyancy for 660 km: the same closed-form geometry scales with it.
    w = trench_world()
    (slab,) = compute_torques(w, hyp({"kind": "slab", "age_myr": 80.0}))
    F = Cooling(Physics()).slab_pull_n_m(80.0, 660.0)
    np.testing.assert_allclose(slab.torque()[1], [2 * F * R**2, 0, 0], rtol=1e-4,
                               atol=1e-9 * F * R**2)


def test_transform_resistance_closed_form():
    w = hemispheres([Boundary("transform", "Upper", "Lower",
                              line([(0, 0), (120, 0), (240, 0), (360, 0)]))])
    wz = 1.0 * RAD_S_PER_DEG_MYR
    omega = np.array([[0, 0, 0], [0, 0, wz]])
    full, strike, normal = compute_torques(w, hyp(
        {"kind": "transform", "label": "a"},
        {"kind": "transform", "label": "s", "component": "strike"},
        {"kind": "transform", "label": "n", "component": "normal"}), omega)
    expect = 2 * np.pi * wz * R**3
    np.testing.assert_allclose(full.torque(omega)[0], [0, 0, expect], rtol=1e-12,
                               atol=1e-12 * expect)
    np.testing.assert_allclose(full.torque(omega)[1], [0, 0, -expect], rtol=1e-12,
                               atol=1e-12 * expect)
    np.testing.assert_allclose(strike.torque(omega), full.torque(omega), atol=1e-9 * expect)
    np.testing.assert_allclose(normal.torque(omega), 0, atol=1e-9 * expect)


def test_rotating_the_world_rotates_every_torque():
    # Invariance: a rigid rotation Q of the world maps each torque t to Q t.
    Q = Rotation.from_euler("zyx", [40, -25, 70], degrees=True).as_matrix()
    forces = ({"kind": "slab", "age_myr": 70.0}, {"kind": "suction", "age_myr": 70.0},
              {"kind": "drag"}, {"kind": "transform"}, {"kind": "trench"})
    omega = np.array([[1e-15, 2e-15, -1e-15], [-2e-15, 0.5e-15, 1e-15]])
    a = compute_torques(trench_world(), hyp(*forces), omega)
    b = compute_torques(trench_world(Q), hyp(*forces), omega @ Q.T)
    for ta, tb in zip(a, b):
        ref = ta.torque(omega)
        scale = np.abs(ref).max()
        np.testing.assert_allclose(tb.torque(omega @ Q.T), ref @ Q.T, atol=1e-9 * scale)


def smooth_ages(lon, lat):
    """A smooth invented age field, 5 to 195 Myr."""
    x = sphere.lonlat_to_xyz(lon, lat)
    return 100 + 60 * x[..., 0] + 30 * x[..., 1] * x[..., 2] + 5 * np.sin(3 * x[..., 2])


def stokes_torques(world, cooling, k=64):
    """R^2 oint F dr round every plate, by Gauss-Legendre quadrature along each arc."""
    g = world.geometry
    a, b, plate = g.edges
    n, theta = sphere.arc_pole(a, b)
    u = np.cross(n, a)
    x, wq = np.polynomial.legendre.leggauss(k)
    t = 0.5 * (x + 1)[None, :] * theta[:, None]                      # (E, k)
    r = np.cos(t)[..., None] * a[:, None] + np.sin(t)[..., None] * u[:, None]
    dr = -np.sin(t)[..., None] * a[:, None] + np.cos(t)[..., None] * u[:, None]
    lon, lat = sphere.xyz_to_lonlat(r)
    F = cooling.ridge_push_n_m(smooth_ages(lon, lat))
    contrib = (F[..., None] * dr * (0.5 * theta[:, None] * wq[None, :])[..., None]).sum(1)
    out = np.zeros((g.n_plates, 3))
    np.add.at(out, plate, contrib)
    return out * world.radius_m ** 2


def age_grid(step):
    lon = np.arange(-180 + step / 2, 180, step)
    lat = np.arange(-90 + step / 2, 90, step)
    LON, LAT = np.meshgrid(lon, lat)
    return AgeGrid(lon, lat, smooth_ages(LON, LAT))


def test_distributed_ridge_push_matches_stokes_and_converges():
    # Reference: R^2 oint F(t) dr round each purely oceanic plate (Stokes' theorem).
    # The grid sum is first order (cells cut by edges); the default line integral along
    # the exact edges, F fitted one-sided from the grid, third order: measured median
    # errors over plates 3.3e-6, 5.0e-7, 5.8e-8 at 1, 0.5, 0.25 degree, against the grid
    # sum's 1.0e-3, 7.5e-4, 1.3e-4
    w = voronoi_world()
    cooling = Cooling(Physics())
    ref = stokes_torques(w, cooling)
    errs = {"grid": [], "boundary": []}
    for step in (1.0, 0.5, 0.25):
        for q in errs:
            (t,) = compute_torques(w, hyp({"kind": "ridge", "quadrature": q}),
                                   ages=age_grid(step))
            e = np.linalg.norm(t.torque() - ref, axis=1) / np.linalg.norm(ref, axis=1)
            errs[q].append(np.median(e))
    g, b = np.array(errs["grid"]), np.array(errs["boundary"])
    assert g[-1] < 0.01 and g[0] > g[1] > g[2] and g[0] / g[2] > 3.0   # first order
    assert np.all(b < g / 10)                      # ten times better at every step
    assert b[0] / b[2] > 16 and b[-1] < 1e-6       # better than second order


def test_distributed_ridge_push_is_zero_for_uniform_age():
    # grad F = 0 for a uniform age field: no torque (plate boundaries make no force): the
    # grid sum exactly, the line integral round each closed edge to rounding
    w = voronoi_world()
    g = age_grid(1.0)
    flat = AgeGrid(g.lon, g.lat, np.full_like(g.age_myr, 60.0))
    (t,) = compute_torques(w, hyp({"kind": "ridge", "quadrature": "grid"}), ages=flat)
    assert np.abs(t.torque()).max() == 0.0
    (t,) = compute_torques(w, hyp({"kind": "ridge"}), ages=flat)
    F = Cooling(Physics()).ridge_push_n_m(60.0)
    assert np.abs(t.torque()).max() < 1e-12 * F * R ** 2


def _flow_grid(step, omega, extra=None):
    """A flow grid of the rigid rotation ``omega`` (rad/s), plus ``extra(lon, lat)`` (ve, vn
    in mm/yr) if given."""
    from torque.euler import velocity_en
    lon = np.arange(-180 + step / 2, 180, step)
    lat = np.arange(-90 + step / 2, 90, step)
    LON, LAT = np.meshgrid(lon, lat)
    ve, vn = velocity_en(np.broadcast_to(omega, (LON.size, 3)),
                         sphere.lonlat_to_xyz(LON.ravel(), LAT.ravel()), R)
    ve, vn = ve.reshape(LON.shape), vn.reshape(LON.shape)
    if extra is not None:
        de, dn = extra(LON, LAT)
        ve, vn = ve + de, vn + dn
    return FlowGrid(lon, lat, ve, vn)


def test_a_rigidly_turning_mantle_drags_a_plate_turning_with_it_not_at_all():
    # A mantle turning rigidly with the plates exerts no drag on them (the traction is
    # C (v_mantle - v_plate) = 0 everywhere): exact, to 1e-10 of the drag it cancels, at
    # every grid step, since the flow's rigid part acts through the exact drag tensors.
    w = voronoi_world()
    wm = np.array([0.3, -0.2, 0.9]) * RAD_S_PER_DEG_MYR
    omega = np.tile(wm, (12, 1))
    for step in (5.0, 2.0, 1.0):
        (t,) = compute_torques(w, hyp({"kind": "mantle"}), omega, flow=_flow_grid(step, wm))
        ref = np.abs(np.einsum("piqj,qj->pi", t.resisting, omega)).max()
        assert np.abs(t.torque(omega)).max() < 1e-10 * ref, step


def test_the_non_rigid_rest_of_a_flow_converges_with_the_grid_step():
    # the rest is a grid sum (first order near plate edges): its error against a fine grid
    # falls as the step does (common practice, no source)
    from torque.forces.mantle import rigid_part
    w = voronoi_world()
    wm = np.array([0.3, -0.2, 0.9]) * RAD_S_PER_DEG_MYR

    def swirl(lon, lat):                  # a smooth non-rigid flow, mm/yr
        return (20 * np.cos(np.radians(lat)) ** 2 * np.sin(np.radians(2 * lon)),
                10 * np.sin(np.radians(2 * lat)) * np.cos(np.radians(lon)))
    omega = np.zeros((12, 3))
    fine = compute_torques(w, hyp({"kind": "mantle"}), omega,
                           flow=_flow_grid(0.25, wm, swirl))[0].driving
    errs = [np.abs(compute_torques(w, hyp({"kind": "mantle"}), omega,
                                   flow=_flow_grid(step, wm, swirl))[0].driving - fine).max()
            for step in (4.0, 2.0, 1.0)]
    assert errs[0] > errs[1] > errs[2] and errs[2] < 0.05 * np.abs(fine).max()
    # the rigid part of a rigid flow is that rotation (the normal equations' solution)
    g = _flow_grid(2.0, wm)
    xyz = sphere.lonlat_to_xyz(*np.meshgrid(g.lon, g.lat))
    east, north = sphere.east_north(xyz)
    from torque.euler import M_S_TO_MM_YR
    v = (g.ve_mm_yr[..., None] * east + g.vn_mm_yr[..., None] * north) / M_S_TO_MM_YR
    np.testing.assert_allclose(rigid_part(xyz, v, g.cell_areas()) / R, wm, rtol=1e-12)


def test_suction_per_length_is_its_own_force_in_newtons_per_metre():
    # the closed form above: a suction of S N/m on Upper along lon 0..180 has the torque
    # (-2 S R^2, 0, 0); at coefficient 1 N/m it equals the fraction form of 1 N/m
    w = trench_world()
    per, frac = compute_torques(w, hyp(
        {"kind": "suction", "form": "per-length"},
        {"kind": "suction", "label": "s2", "coefficient": 1.0, "force_per_length": 1.0}))
    assert per.unit == "N/m" and frac.unit == "dimensionless"
    np.testing.assert_allclose(per.torque()[0], [-2 * R**2, 0, 0], atol=1e-9 * R**2)
    np.testing.assert_allclose(per.driving, frac.driving, rtol=1e-14, atol=1e-3)
    with pytest.raises(InputError, match="per-length form does not use"):
        compute_torques(w, hyp({"kind": "suction", "form": "per-length", "age_myr": 50.0}))


def test_a_fit_recovers_a_suction_per_length():
    # the forward model with a stated suction of 2e12 N/m (invented, for the test), then a
    # fit with it free: the balance is exact, so the fit gives it back
    import torque
    inputs = torque.Inputs.load(here().parent / "polygons_demo" / "world.toml")
    forces = [{"kind": "ridge", "coefficient": 1.0}, {"kind": "slab", "coefficient": 0.05},
              {"kind": "suction", "form": "per-length", "coefficient": 2e12},
              {"kind": "drag", "coefficient": 2e14}]
    true_h = hypothesis_from_dict({"force": forces})
    system = torque.assemble(inputs.world, true_h, torque.compute_torques(inputs, true_h))
    omega = torque.predict(system, system.fixed)
    forces[2] = {"kind": "suction", "form": "per-length"}
    free_h = hypothesis_from_dict({"force": forces})
    free = torque.assemble(inputs.world, free_h, torque.compute_torques(inputs, free_h, omega))
    fit = torque.inference.solvers.fit_velocity(free, omega)
    assert fit.values[2] == pytest.approx(2e12, rel=1e-6) and free.units[2] == "N/m"


def test_age_coupling_by_hand():
    # h_L = 2.32 sqrt(kappa t) (Turcotte and Schubert 2002, eq. 4-127) with kappa = 8.047e-7
    # m2/s: 37.0 km at 10 Myr, 90.6 km at 60 Myr, 128 km at 120 Myr, capped at the 95 km
    # plate; with a 300 km channel base w(10) = 209.4 / 263.0, w(120) = 209.4 / 205.0
    from torque.forces.drag import age_weight
    w = age_weight([10.0, 60.0, 120.0], Physics())
    np.testing.assert_allclose(w, [209.44 / 263.03, 1.0, 209.44 / 205.0], rtol=2e-4)
    # older couples more, until the lithosphere reaches the plate's 95 km (at 66 Myr)
    ages = np.linspace(1, 120, 60)
    w = age_weight(ages, Physics())
    assert np.all(np.diff(w[ages < 65]) > 0) and np.all(np.diff(w[ages > 67]) == 0)


def test_uniform_age_coupling_tends_to_the_exact_oceanic_tensor():
    # As the channel's base goes deep, every weight tends to 1 and the grid-weighted
    # tensor to the exact polygon tensor of the ocean, to the grid's own error: first
    # order near plate edges and margins; on the demo's 0.5 degree age grid 0.03 % median
    # and 0.11 % at most (measured; the README's hand-written grid baseline errs by
    # 0.1-0.3 % at 0.5 degree)
    import torque
    demo = here().parent / "polygons_demo"
    inputs = torque.Inputs.load(demo / "world.toml")
    exact, = torque.compute_torques(inputs, hyp({"kind": "drag", "region": "ocean"}))
    deep, = torque.compute_torques(inputs, hyp({"kind": "drag", "region": "ocean",
                                                "coupling": "age",
                                                "channel_depth_km": 1e9}))
    D_exact = -np.einsum("pipj->pij", exact.resisting)
    D_grid = -np.einsum("pipj->pij", deep.resisting)
    scale = np.abs(D_exact).max(axis=(1, 2))
    err = np.abs(D_grid - D_exact).max(axis=(1, 2)) / scale
    assert np.median(err) < 0.002 and err.max() < 0.005
    # uniform coupling keeps the exact tensor, and age keys need age coupling
    with pytest.raises(InputError, match="are for age coupling"):
        torque.compute_torques(inputs, hyp({"kind": "drag", "channel_depth_km": 300.0}))
    with pytest.raises(InputError, match='use region = "ocean"'):
        torque.compute_torques(inputs, hyp({"kind": "drag", "coupling": "age"}))


def test_upper_and_lower_mantle_slabs_split_the_whole():
    # a vertical slab's buoyancy g L int rho alpha dT dz is linear in the depth L it spans
    # (Turcotte and Schubert 2002, sec. 6-20): on the half-equator trench (torque
    # (2 F R^2, 0, 0) on Lower) a 1000 km slab of 70 Myr splits at 660 km into the
    # buoyancy of 660 km and of 340 km, from the cooling model's direct quadrature
    w = trench_world()
    whole, upper, lower = compute_torques(w, hyp(
        {"kind": "slab", "coefficient": 1.0, "age_myr": 70.0, "depth_km": 1000.0},
        {"kind": "slab", "coefficient": 1.0, "age_myr": 70.0, "depth_km": 1000.0,
         "mantle_part": "upper"},
        {"kind": "slab", "coefficient": 1.0, "age_myr": 70.0, "depth_km": 1000.0,
         "mantle_part": "lower"}))
    assert (upper.label, lower.label) == ("slab_upper", "slab_lower")
    c = Cooling(Physics())
    for term, depth in ((whole, 1000.0), (upper, 660.0), (lower, 340.0)):
        F = float(c.slab_pull_n_m(70.0, depth))
        np.testing.assert_allclose(term.torque()[1], [2 * F * R**2, 0, 0], rtol=1e-8,
                                   atol=1e-9 * F * R**2)
    np.testing.assert_allclose(upper.driving + lower.driving, whole.driving, rtol=1e-12,
                               atol=1e-9 * np.abs(whole.driving).max())
    with pytest.raises(InputError, match="needs the slab's buoyancy"):
        compute_torques(w, hyp({"kind": "slab", "force_per_length": 3e13,
                                "mantle_part": "upper"}))
