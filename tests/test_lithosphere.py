"""Cooling models against published relations and closed forms.

Sources:
* GDH1, Stein and Stein (1992), Nature 359, 123-129. Their fitted relations, written here
  from memory: depth d = 2600 + 365 t^(1/2) m for t < 20 Myr, d = 5651 - 2473 exp(-0.0278 t)
  for t >= 20 Myr; heat flow q = 510 t^(-1/2) mW/m2 for t <= 55 Myr, q = 48 + 96
  exp(-0.0278 t) for t > 55 Myr.
* Turcotte and Schubert (2002), Geodynamics, 2nd ed.: half-space subsidence
  d - d_r = 2 rho_m alpha dT / (rho_m - rho_w) (kappa t / pi)^(1/2) (sec. 4-23) and ridge
  push F = g rho_m alpha dT kappa t [1 + (2/pi) rho_m alpha dT / (rho_m - rho_w)]
  (sec. 6-20).
* Facts of the trade, common practice, no source: ridge push has done most of its work by
  about 90 Myr; an 80 Myr slab reaching 660 km weighs about an order of magnitude more than
  ridge push; ridge push is a few 10^12 N/m.
"""

import numpy as np
import pytest

from torque.lithosphere import Cooling, Physics

AGES = np.linspace(1.0, 200.0, 400)


def test_plate_model_reproduces_gdh1_depth_and_heat_flow():
    c = Cooling(Physics())            # defaults are the GDH1 parameters
    t = AGES
    depth = np.where(t < 20, 2600 + 365 * np.sqrt(t), 5651 - 2473 * np.exp(-0.0278 * t))
    q = np.where(t <= 55, 510 / np.sqrt(t), 48 + 96 * np.exp(-0.0278 * t))
    assert np.max(np.abs(c.depth_m(t) / depth - 1)) < 0.005
    assert np.max(np.abs(c.heat_flow_mw_m2(t) / q - 1)) < 0.01


def test_half_space_depth_and_ridge_push_closed_forms():
    p = Physics(model="half-space")
    c = Cooling(p)
    t_s = AGES * 3.15576e13
    depth = p.ridge_depth_m + 2 * p.mantle_density * p.expansivity * p.temperature_contrast / (
        p.mantle_density - p.water_density) * np.sqrt(p.diffusivity * t_s / np.pi)
    np.testing.assert_allclose(c.depth_m(AGES), depth, rtol=1e-8)
    ra = p.mantle_density * p.expansivity * p.temperature_contrast
    F = p.gravity * ra * p.diffusivity * t_s * (1 + 2 / np.pi * ra / (p.mantle_density
                                                                       - p.water_density))
    np.testing.assert_allclose(c.ridge_push_n_m(AGES), F, rtol=0.01)
    # (the quadrature in fact agrees far better than the 1 % asked for)
    np.testing.assert_allclose(c.ridge_push_n_m(AGES), F, rtol=1e-8)


def test_facts_of_the_trade():
    # common practice, no source
    plate = Cooling(Physics())
    half = Cooling(Physics(model="half-space"))
    limit = plate.ridge_push_limit_n_m()
    assert plate.ridge_push_n_m(90.0) >= 0.85 * limit
    assert 1e12 <= limit <= 1e13
    for c in (plate, half):
        ratio = c.slab_pull_n_m(80.0, 660.0) / c.ridge_push_n_m(80.0)
        assert 5 <= ratio <= 30
        assert 1e12 <= c.ridge_push_n_m(80.0) <= 1e13


def test_plate_model_limits():
    # Closed forms: at great age the plate geotherm is linear (steady conduction through a
    # slab of thickness a), and young plate-model sea floor subsides like the half-space.
    c = Cooling(Physics())
    z = np.linspace(0, 95e3, 20)
    np.testing.assert_allclose(c.theta(z, 1e4), z / 95e3, atol=1e-12)
    h = Cooling(Physics(model="half-space"))
    np.testing.assert_allclose(c.depth_m([0.5, 1, 5]), h.depth_m([0.5, 1, 5]), rtol=1e-9)
    np.testing.assert_allclose(c.heat_flow_mw_m2([0.5, 1, 5]), h.heat_flow_mw_m2([0.5, 1, 5]),
                               rtol=1e-9)


@pytest.mark.parametrize("model", ["plate", "half-space"])
def test_the_lookups_equal_the_direct_quadrature_to_1e_8(model):
    # The splines in sqrt(age) stand in for the quadrature on large grids and many trench
    # pieces; at every age, the youngest included, they agree with it to 1e-8 relative
    # (the bound; common practice, no source), for ridge push and slab buoyancy.
    c = Cooling(Physics(model=model))
    t = np.r_[np.geomspace(1e-4, 1.0, 200), np.linspace(1.0, 300.0, 1500)]
    for lookup, direct in ((c.ridge_push_lookup(t), c.ridge_push_n_m(t)),
                           (c.slab_pull_lookup(t, 410.0), c.slab_pull_n_m(t, 410.0))):
        assert np.max(np.abs(lookup / direct - 1)) < 1e-8
    assert c.slab_pull_lookup(0.0) == pytest.approx(0.0, abs=1e-6)


@pytest.mark.parametrize("key,value,words", [
    ("water_density", 3400.0, "must exceed water_density"),
    ("diffusivity", 0.0, "diffusivity must be positive"),
    ("plate_thickness_km", -1.0, "plate_thickness_km must be positive"),
    ("model", "'slab'", "model must be one of"),
    ("viscosity", 1e21, "unknown key(s) in [physics]: 'viscosity'"),
])
def test_impossible_physics_is_refused(tmp_path, cli, key, value, words):
    hyp = tmp_path / "h.toml"
    hyp.write_text(f"[physics]\n{key} = {value}\n\n[[force]]\nkind = \"drag\"\n")
    status, out, err = cli("cooling", "--physics", hyp)
    assert status == 2 and "Traceback" not in err
    assert words in err and "h.toml" in err


def test_cooling_command_table(cli):
    import json
    status, out, _ = cli("cooling", "--ages", "10,80", "--json")
    assert status == 0
    rows = json.loads(out)["rows"]
    assert [r["age_myr"] for r in rows] == [10.0, 80.0]
    # the contract's keys (../shared/interface.md), and the new name of the last one
    assert set(rows[0]) == {"age_myr", "depth_m", "heat_flow_mw_m2", "ridge_push_n_m",
                            "slab_pull_n_m", "slab_buoyancy_n_m"}
    assert rows[0]["slab_pull_n_m"] == rows[0]["slab_buoyancy_n_m"]
    status, _, err = cli("cooling", "--ages", "10,400")
    assert status == 2 and "(0, 300]" in err
