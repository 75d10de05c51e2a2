"""Slab geometry: warming slabs, detached slabs, the slab table, the pull's direction.

Closed forms and sources (beside each check):
* half-space thermal deficit of a plate of age t: int rho_m alpha (T_m - T) dz =
  rho_m alpha dT 2 sqrt(kappa t / pi), since int_0^inf erfc(x) dx = 1/sqrt(pi)
  (Abramowitz and Stegun 1964, 7.1; Turcotte and Schubert 2002, sec. 4-15, from memory);
* a warming slab: pull g Q lambda (exp(-z1/lambda) - exp(-z2/lambda)) with
  lambda = v sin(dip) a^2 / (pi^2 kappa) (the module's model, integrated by hand);
* a northward line force F along half the equator (lon 0 to 180) has torque
  (2 F R^2, 0, 0); along any direction d(lon) the torque is R^2 int r x F d dlon,
  integrated here with scipy.integrate.quad.
"""

import shutil

import numpy as np
import pytest
from scipy import integrate

import torque
from torque import compute_torques, sphere
from torque.errors import InputError
from torque.euler import MYR_S, RAD_S_PER_DEG_MYR
from torque.lithosphere import Physics
from torque.world import Boundary

from .conftest import here
from .worlds import hemispheres, hyp

R = 6371e3


def trench_world(**props):
    lon = np.array([0.0, 60.0, 120.0, 180.0])
    xyz = sphere.lonlat_to_xyz(lon, 0 * lon)
    lon2 = np.array([180.0, 270.0, 360.0])
    b = [Boundary("subduction", "Upper", "Lower", xyz, subducting="Lower", properties=props),
         Boundary("transform", "Upper", "Lower", sphere.lonlat_to_xyz(lon2, 0 * lon2))]
    return hemispheres(b)


def half_space_deficit(t_myr):
    p = Physics(model="half-space")
    return (p.mantle_density * p.expansivity * p.temperature_contrast
            * 2 * np.sqrt(p.diffusivity * t_myr * MYR_S / np.pi))


def test_warming_slab_matches_the_closed_form():
    # half-space, 70 Myr slab to 660 km, dip 45, 50 mm/yr: a = 2.32 sqrt(kappa t),
    # tau_d = a^2 / (pi^2 kappa), lambda = v sin(45) tau_d; pull g Q lambda (1 - e^(-L/lambda))
    p = Physics(model="half-space")
    t, v = 70.0, 50e-3 / (MYR_S / 1e6)
    a = 2.32 * np.sqrt(p.diffusivity * t * MYR_S)
    lam = v * np.sin(np.radians(45.0)) * a ** 2 / (np.pi ** 2 * p.diffusivity)
    Q = half_space_deficit(t)
    whole = p.gravity * Q * lam * (1 - np.exp(-660e3 / lam))
    upper = p.gravity * Q * lam * (1 - np.exp(-400e3 / lam))
    entry = {"kind": "slab", "coefficient": 1.0, "age_myr": t, "warming": "conductive",
             "convergence_mm_yr": 50.0, "dip_deg": 45.0}
    terms = compute_torques(trench_world(), hyp(
        entry, {**entry, "mantle_part": "upper", "split_depth_km": 400.0},
        {**entry, "mantle_part": "lower", "split_depth_km": 400.0},
        {"kind": "slab", "coefficient": 1.0, "age_myr": t, "label": "cold"},
        model="half-space"))
    w, u, lo, cold = (term.torque()[1] for term in terms)
    np.testing.assert_allclose(w, [2 * whole * R**2, 0, 0], rtol=1e-6, atol=1e-9 * abs(w[0]))
    np.testing.assert_allclose(u, [2 * upper * R**2, 0, 0], rtol=1e-6, atol=1e-9 * abs(w[0]))
    np.testing.assert_allclose(u + lo, w, rtol=1e-12, atol=1e-12 * abs(w[0]))
    # a 1350 km e-folding depth (tau_d 38 Myr) keeps 79 % of the cold slab's pull here
    assert 0.78 < w[0] / cold[0] < 0.80
    assert w[0] / cold[0] == pytest.approx(lam / 660e3 * (1 - np.exp(-660e3 / lam)),
                                           rel=1e-6)


def test_warming_tends_to_the_cold_slab_and_needs_a_rate():
    # as the rate grows the slab has no time to warm: lambda -> inf gives g Q L
    fast = {"kind": "slab", "coefficient": 1.0, "age_myr": 50.0, "warming": "conductive",
            "convergence_mm_yr": 1e7}
    warm, cold = compute_torques(trench_world(), hyp(
        fast, {"kind": "slab", "coefficient": 1.0, "age_myr": 50.0, "label": "cold"}))
    np.testing.assert_allclose(warm.torque(), cold.torque(), rtol=2e-4,
                               atol=1e-9 * np.abs(cold.torque()).max())
    with pytest.raises(InputError, match="needs the convergence rate"):
        compute_torques(trench_world(), hyp({"kind": "slab", "warming": "conductive"}))
    with pytest.raises(InputError, match="not force_per_length"):
        compute_torques(trench_world(), hyp({"kind": "slab", "warming": "conductive",
                                             "force_per_length": 1e12}))


def test_warming_rate_comes_from_the_motions_and_dip_from_the_line():
    # Lower turning about x at w: at the trench point lon 90 it moves north at w R, toward
    # Upper; the normal rate is w R sin(lon), so the warming varies along the trench, and
    # matches the closed form piece by piece (quad over lon)
    p = Physics(model="half-space")
    w_rad = 1.0 * RAD_S_PER_DEG_MYR
    omega = np.array([[0, 0, 0], [w_rad, 0, 0]])
    t = 40.0
    a = 2.32 * np.sqrt(p.diffusivity * t * MYR_S)
    tau = a ** 2 / (np.pi ** 2 * p.diffusivity)
    Q = half_space_deficit(t)

    def F(lon):
        lam = w_rad * R * np.sin(lon) * np.sin(np.radians(30.0)) * tau
        return p.gravity * Q * lam * (1 - np.exp(-660e3 / lam)) if lam > 0 else 0.0
    # northward force: r x n_hat = -e_hat; x component of -e_hat is sin(lon)
    want = R ** 2 * integrate.quad(lambda lon: F(lon) * np.sin(lon), 0, np.pi,
                                   epsabs=0, epsrel=1e-10)[0]
    term, = compute_torques(trench_world(slab_dip_deg=30.0), hyp(
        {"kind": "slab", "coefficient": 1.0, "age_myr": t, "warming": "conductive",
         "dip_deg": 80.0}, model="half-space"), omega)
    assert term.torque()[1, 0] == pytest.approx(want, rel=2e-4)   # 50 km pieces


def test_detached_slab_pulls_nothing():
    cold, = compute_torques(trench_world(slab_attached=False),
                            hyp({"kind": "slab", "coefficient": 1.0, "age_myr": 50.0}))
    assert np.all(cold.torque() == 0) and any("detached" in n for n in cold.notes)


def test_pull_along_the_convergence_direction():
    # Lower turning about (x + z) relative to Upper: at (lon, 0) it moves w R (east +
    # sin(lon) north), so the pull of F per metre points along that direction where it
    # converges (lon in (0, 180)): torque R^2 int r x F d dlon by quad
    w_rad = 0.5 * RAD_S_PER_DEG_MYR
    omega = np.array([[0, 0, 0], [w_rad, 0, w_rad]])
    F = 2e12

    def torque_density(lon, i):
        r = np.array([np.cos(lon), np.sin(lon), 0.0])
        east = np.array([-np.sin(lon), np.cos(lon), 0.0])
        north = np.array([0.0, 0.0, 1.0])
        d = east + np.sin(lon) * north
        return np.cross(r, F * d / np.linalg.norm(d))[i]
    want = [R ** 2 * integrate.quad(torque_density, 0, np.pi, args=(i,), epsrel=1e-10,
                                 epsabs=1e-10 * F)[0]
            for i in range(3)]
    term, normal = compute_torques(trench_world(), hyp(
        {"kind": "slab", "coefficient": 1.0, "force_per_length": F,
         "direction": "convergence"},
        {"kind": "slab", "coefficient": 1.0, "force_per_length": F, "label": "normal"}),
        omega)
    np.testing.assert_allclose(term.torque()[1], want, rtol=1e-5, atol=1e-6 * abs(want[0]))
    np.testing.assert_allclose(normal.torque()[1], [2 * F * R**2, 0, 0], rtol=1e-9,
                               atol=1e-9 * F * R**2)
    assert any("convergence direction" in n for n in term.notes)
    with pytest.raises(InputError, match="needs the plates' motions"):
        compute_torques(trench_world(), hyp({"kind": "slab", "direction": "convergence"}))


def demo_copy(tmp_path, table):
    demo = here().parent / "polygons_demo"
    for f in demo.iterdir():
        if f.is_file():
            shutil.copy(f, tmp_path / f.name)
    # the demo's world file names slabs.csv (invented dips): this table replaces it
    assert 'slabs = "slabs.csv"' in (tmp_path / "world.toml").read_text()
    (tmp_path / "slabs.csv").write_text(table)
    return tmp_path / "world.toml"


def test_slab_table_sets_lines(tmp_path):
    # feature 0 of the demo's boundaries is a subduction zone: detach its slab, and the
    # slab torque drops by exactly that line's share
    path = demo_copy(tmp_path, "feature,slab_depth_km,slab_dip_deg,slab_attached\n"
                               "0,,35,false\n5,410,,\n")
    world = torque.load_world(path)
    props = {b.feature: b.properties for b in world.boundaries}
    assert props[0]["slab_attached"] is False and props[0]["slab_dip_deg"] == 35.0
    assert props[5]["slab_depth_km"] == 410.0 and "slab_attached" not in props[5]
    h = hyp({"kind": "slab", "coefficient": 1.0, "age_myr": 60.0})
    base = torque.Inputs.load(here().parent / "polygons_demo" / "world.toml")
    before, = compute_torques(base, h)
    after, = compute_torques(torque.Inputs.load(path), h)
    assert not np.allclose(before.driving, after.driving)
    assert any("1 of" in n or "detached" in n for n in after.notes)


@pytest.mark.parametrize("table, message", [
    ("feature,slab_dip_deg\n1,30\n", "not a subduction zone"),
    ("feature,slab_dip_deg\n99,30\n", "not a line of the boundaries file"),
    ("feature,slab_dip_deg\n0,120\n", "at most 90"),
    ("feature,slab_attached\n0,maybe\n", "write true or false"),
    ("feature,slab_dip_deg\n0,30\n0,40\n", "listed twice"),
    ("feature,slab_width\n0,30\n", "unknown column"),
])
def test_bad_slab_tables_are_refused(tmp_path, table, message):
    with pytest.raises(InputError, match=message):
        torque.load_world(demo_copy(tmp_path, table))


def test_a_bad_slab_table_exits_2_naming_file_and_line(tmp_path, cli):
    from .conftest import assert_refused
    world = demo_copy(tmp_path, "feature,slab_dip_deg\n0,30\n1,40\n")
    assert_refused(cli("check", world), None, "slabs.csv", "line 3",
                   "not a subduction zone")
