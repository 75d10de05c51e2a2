"""A free mantle frame: the rotation of the observations' frame relative to the mantle,
fitted with the coefficients (issue 13, item 1).

Sources: a rigid rotation added to every plate's Euler vector changes no relative motion
(Cox and Hart 1986, Plate Tectonics: How It Works, ch. 4: Euler vectors add), so a fit
that estimates the frame must be invariant to it and must recover it; the demo's
noise-free motions were made by the forward model from stated coefficients
(polygons_demo/truth.json).
"""

import json

import numpy as np
import pytest

import torque
from torque.euler import RAD_S_PER_DEG_MYR, pole_to_vector
from torque.inference.analysis import analyse
from torque.io import fit_from_dict

from .conftest import here

DEMO = here().parent / "polygons_demo"
SPIN = pole_to_vector(30.0, -40.0, 0.3)          # an invented rigid rotation, 0.3 deg/Myr


@pytest.fixture(scope="module")
def demo():
    inputs = torque.Inputs.load(DEMO / "world.toml")
    hyp = torque.load_hypothesis(DEMO / "hypotheses" / "continental_drag.toml")
    true = torque.read_motions(DEMO / "true_motions.csv").for_world(inputs.world)
    obs = torque.read_motions(DEMO / "motions.csv").for_world(inputs.world)
    system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, obs))
    truth = json.loads((DEMO / "truth.json").read_text())["true_coefficients"]
    return system, true, obs, truth


def test_a_rotation_added_to_the_observations_is_recovered(demo):
    system, true, _, truth = demo
    report = analyse(system, true + SPIN, free_frame=True)
    np.testing.assert_allclose(report.frame["rotation"], SPIN, atol=1e-6 * np.abs(SPIN).max())
    np.testing.assert_allclose(report.preferred.values,
                               [truth[label] for label in system.labels], rtol=1e-6)
    # the report's observations are in the mantle's frame
    np.testing.assert_allclose(report.omega_obs, true, atol=1e-6 * np.abs(SPIN).max())


def test_the_fit_is_invariant_to_any_rigid_rotation(demo):
    system, _, obs, _ = demo
    a = analyse(system, obs, free_frame=True)
    b = analyse(system, obs + SPIN, free_frame=True)
    np.testing.assert_allclose(b.preferred.values, a.preferred.values, rtol=1e-7)
    np.testing.assert_allclose(b.preferred.stderr, a.preferred.stderr, rtol=1e-5)
    np.testing.assert_allclose(b.frame["rotation"] - a.frame["rotation"], SPIN,
                               atol=1e-9 * RAD_S_PER_DEG_MYR)
    np.testing.assert_allclose(b.torque_fit.values, a.torque_fit.values, rtol=1e-7)


def test_the_frame_is_reported_and_counted(demo, tmp_path, cli):
    system, _, obs, _ = demo
    result = analyse(system, obs, free_frame=True).result()
    f = result.frame
    assert f["free"] and len(f["stderr_deg_myr"]) == 3 and all(s > 0 for s in
                                                               f["stderr_deg_myr"])
    assert fit_from_dict(json.loads(torque.io.dumps(result.as_dict()))) == result
    # three more parameters: AIC = n ln(RSS/n) + 2 (k + 3) (Burnham and Anderson 2002)
    m = result.misfit
    n, k = m["n"], m["free_coefficients"]
    assert m["frame_parameters"] == 3
    assert m["aic"] == pytest.approx(n * np.log(m["velocity_rss_m4_s2"] / n) + 2 * (k + 3))
    # the command line: motions relative to a fixed plate need no frame change first
    rel = tmp_path / "rel.csv"
    assert cli("frame", DEMO / "world.toml", DEMO / "motions.csv", "--to",
               "plate:Vessane", "-o", rel)[0] == 0
    status, out, err = cli("fit", DEMO / "world.toml",
                           DEMO / "hypotheses" / "continental_drag.toml", rel,
                           "--free-frame", "-o", tmp_path / "f.json")
    assert status == 0 and "free mantle frame" in out and "at rest" not in err
    status, out, err = cli("rank", DEMO / "world.toml", rel,
                           DEMO / "hypotheses" / "ridge_drag.toml",
                           DEMO / "hypotheses" / "continental_drag.toml", "--free-frame")
    assert status == 0, err


def test_a_given_mantle_rotation_is_removed_before_fitting(demo, tmp_path, cli):
    # motions in any frame plus the mantle's known rotation in that frame give the same fit
    # as the motions in the mantle's frame
    system, _, obs, _ = demo
    a = analyse(system, obs)
    b = analyse(system, obs + SPIN, mantle_rotation=SPIN)
    np.testing.assert_allclose(b.preferred.values, a.preferred.values, rtol=1e-9)
    result = b.result()
    assert result.frame["free"] is False and result.misfit["frame_parameters"] == 0
    assert result.misfit["aic"] == pytest.approx(a.result().misfit["aic"], rel=1e-9)
    rel = tmp_path / "rel.csv"
    torque.write_motions(rel, torque.read_motions(DEMO / "motions.csv").add_rotation(SPIN))
    lat, lon, rate = torque.euler.vector_to_pole(SPIN)
    status, out, err = cli("fit", DEMO / "world.toml",
                           DEMO / "hypotheses" / "continental_drag.toml", rel,
                           "--mantle-rotation", f"{lat:.12f},{lon:.12f},{rate:.12f}",
                           "-o", tmp_path / "f.json")
    assert status == 0, err
    assert "given mantle frame" in out
    got = torque.io.read_fit(tmp_path / "f.json").coefficients["slab"].value
    assert got == pytest.approx(a.preferred.values[1], rel=1e-6)
    status, out, err = cli("fit", DEMO / "world.toml",
                           DEMO / "hypotheses" / "continental_drag.toml", rel,
                           "--mantle-rotation", "north", "-o", tmp_path / "g.json")
    assert status == 2 and "LAT,LON,RATE" in err


def test_the_chi_square_fit_with_correlated_plates_is_invariant_too(demo):
    # the same invariance (Cox and Hart 1986, ch. 4) must hold whatever the misfit measure:
    # here the chi-square with an invented covariance correlated between plates
    system, _, obs, _ = demo
    P = system.n_plates
    rng = np.random.default_rng(7)
    A = rng.normal(size=(3 * P, 3 * P)) * 0.002 * RAD_S_PER_DEG_MYR
    C = A @ A.T + (0.01 * RAD_S_PER_DEG_MYR) ** 2 * np.eye(3 * P)
    a = analyse(system, obs, free_frame=True, obs_cov=C)
    b = analyse(system, obs + SPIN, free_frame=True, obs_cov=C)
    np.testing.assert_allclose(b.preferred.values, a.preferred.values, rtol=1e-7)
    assert b.preferred.chi_square == pytest.approx(a.preferred.chi_square,
                                                           rel=1e-8)
    np.testing.assert_allclose(b.frame["rotation"] - a.frame["rotation"], SPIN,
                               atol=1e-9 * RAD_S_PER_DEG_MYR)
