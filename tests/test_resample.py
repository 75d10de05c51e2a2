"""Uncertainty by resampling: bootstrap over plates, Monte Carlo over the motions and over
the physics.

Sources: first-order error propagation (the delta method; common practice, no source) for
the Monte Carlo spread; reproducibility from numpy's seeded ``default_rng``.
"""

import dataclasses

import numpy as np
import pytest

from torque import inference
from torque.errors import InputError
from torque.euler import RAD_S_PER_DEG_MYR
from torque.hypothesis import parse_spread
from torque.lithosphere import Physics
from torque.inference.resampling import bootstrap, monte_carlo_motions, monte_carlo_physics

from .worlds import KIND_CYCLE, TRUE, forces, system_for, voronoi_world


@pytest.fixture(scope="module")
def kinded():
    """A kinded world, motions made by its forward model, and the free balance (built, as
    the forward model was, without motions: slabs take the entry age, not synthesised
    ones)."""
    w = voronoi_world(16, 2, kinds=KIND_CYCLE)
    s0 = system_for(w, forces(False))
    omega = inference.predict(s0, s0.fixed)
    return w, omega, system_for(w, forces(True))


def test_monte_carlo_spread_matches_linear_propagation():
    # For small motion errors the Monte Carlo spread of the coefficients equals the linear
    # propagation of the motions' covariance through the (unbounded) least-squares solution
    # (first-order error propagation; common practice, no source).
    w = voronoi_world(16, 2, kinds=KIND_CYCLE)
    s0 = system_for(w, forces(False))
    omega = inference.predict(s0, s0.fixed)
    s = system_for(w, forces(True), omega)
    sigma = 1e-4 * RAD_S_PER_DEG_MYR
    cov = np.broadcast_to(sigma**2 * np.eye(3), (16, 3, 3)).copy()
    mc = monte_carlo_motions(s, omega, cov, 4000, seed=2, fit="torque")
    assert mc["refitted_with_bounds"] == 0
    # linear propagation by finite differences of the torque-space fit
    base = inference.fit_torque(s, omega).values[s.free]
    J = np.zeros((len(base), omega.size))
    eps = 1e-3 * sigma
    for j in range(omega.size):
        d = np.zeros(omega.size)
        d[j] = eps
        J[:, j] = (inference.fit_torque(s, omega + d.reshape(-1, 3)).values[s.free] - base) / eps
    sd_lin = sigma * np.sqrt(np.sum(J**2, axis=1))
    sd_mc = np.array([v["std"] for v in mc["coefficients"].values()])
    np.testing.assert_allclose(sd_mc, sd_lin, rtol=0.08)


def test_bootstrap_is_reproducible_and_centred_on_noise_free_truth(kinded):
    # On noise-free motions every resample of the plates fits the true coefficients.
    _, omega, s = kinded
    a = bootstrap(s, omega, 50, seed=7)
    b = bootstrap(s, omega, 50, seed=7)
    assert a == b and a["members"] + a["failed"] == 50
    for label, c in a["coefficients"].items():
        assert c["median"] == pytest.approx(TRUE[label], rel=1e-6)
        assert c["p2_5"] <= c["median"] <= c["p97_5"]


def test_physics_draws_follow_the_spread(kinded):
    # A [spread] of the expansivity: each draw rebuilds the balance with the drawn physics;
    # the build function sees draws whose sample standard deviation is the one asked for
    # (to sampling error, 4/sqrt(2n) relative at about 4 sigma).
    _, omega, s = kinded
    spread = parse_spread({"expansivity": {"normal": 0.2e-5}}, Physics())
    seen = []

    def build(physics):
        seen.append(physics.expansivity)
        return s
    out = monte_carlo_physics(build, Physics(), spread, omega, 400, seed=3)
    # once at the central physics (the fit every member starts from), then once per draw
    assert out["members"] == 400 and len(seen) == 401
    assert seen.pop(0) == Physics().expansivity
    assert np.std(seen, ddof=1) == pytest.approx(0.2e-5, rel=4 / np.sqrt(800))
    assert np.mean(seen) == pytest.approx(Physics().expansivity, abs=4 * 0.2e-5 / 20)


def test_spread_tables_are_checked():
    with pytest.raises(InputError, match="not a \\[physics\\] number"):
        parse_spread({"viscosity": {"normal": 1.0}}, Physics())
    with pytest.raises(InputError, match="LOW < HIGH"):
        parse_spread({"expansivity": {"uniform": [3e-5, 2e-5]}}, Physics())
    assert parse_spread({"plate_thickness_km": {"uniform": [85.0, 105.0]}}, Physics()) == {
        "plate_thickness_km": ("uniform", (85.0, 105.0))}
    assert dataclasses.replace(Physics(), expansivity=2e-5).expansivity == 2e-5


def test_velocity_space_monte_carlo_matches_its_linear_propagation(kinded):
    # The same check for the preferred fit: the spread of velocity-space refits equals the
    # motions' covariance propagated through finite differences of that fit (first-order
    # error propagation; common practice, no source). 800 members: the standard deviation
    # is then known to about 2.5 %, so a 12 % band is about five of its errors.
    _, omega, s = kinded
    sigma = 1e-4 * RAD_S_PER_DEG_MYR
    cov = np.broadcast_to(sigma ** 2 * np.eye(3), (16, 3, 3)).copy()
    mc = monte_carlo_motions(s, omega, cov, 800, seed=5)
    assert mc["fit"] == "velocity" and mc["members"] == 800
    start = inference.fit_velocity(s, omega)
    base = start.values[s.free]
    J = np.zeros((len(base), omega.size))
    eps = 1e-3 * sigma
    for j in range(omega.size):
        d = np.zeros(omega.size)
        d[j] = eps
        J[:, j] = (inference.fit_velocity(s, omega + d.reshape(-1, 3), start).values[s.free]
                   - base) / eps
    sd_lin = sigma * np.sqrt(np.sum(J ** 2, axis=1))
    sd_mc = np.array([v["std"] for v in mc["coefficients"].values()])
    np.testing.assert_allclose(sd_mc, sd_lin, rtol=0.12)


def test_the_demo_monte_carlo_interval_holds_the_truth():
    # The demo's motions are the forward model of stated true coefficients plus stated
    # Gaussian noise (polygons_demo/truth.json). Resampled with the preferred fit, the 95 %
    # interval holds both the truth and the fitted value (with the torque-space fit it held
    # neither: issue 13).
    import json

    import torque
    from .conftest import here
    demo = here().parent / "polygons_demo"
    inputs = torque.Inputs.load(demo / "world.toml")
    hyp = torque.load_hypothesis(demo / "hypotheses" / "continental_drag.toml")
    motions = torque.read_motions(demo / "motions.csv")
    omega = motions.for_world(inputs.world)
    system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, omega))
    fitted = inference.fit_velocity(system, omega)
    mc = monte_carlo_motions(system, omega, motions.cov_for_world(inputs.world), 600, seed=1)
    truth = json.loads((demo / "truth.json").read_text())["true_coefficients"]
    labels = [l for l, f in zip(system.labels, system.free) if f]
    for label, value in zip(labels, fitted.values[system.free]):
        c = mc["coefficients"][label]
        assert c["p2_5"] < truth[label] < c["p97_5"], label
        assert c["p2_5"] < value < c["p97_5"], label


def test_intervals_are_printed_and_disagreeing_fits_flagged(tmp_path, cli):
    from torque.present.sentences import fits_disagree
    from .conftest import here
    demo = here().parent / "polygons_demo"
    status, out, err = cli("fit", demo / "world.toml",
                           demo / "hypotheses" / "continental_drag.toml", demo / "motions.csv",
                           "--bootstrap", "30", "--monte-carlo", "40", "-o", tmp_path / "f.json")
    assert status == 0, err
    assert "bootstrap (30 members, velocity-space refits): 95 % intervals slab" in out
    assert "monte carlo motions (40 members, velocity-space refits)" in out
    # two fits 3 combined standard errors apart are flagged; 1 apart are not
    coef = {"value": 1.0, "stderr": 0.3, "free": True, "torque_space_value": 1.0 + 3 * 0.5,
            "torque_space_stderr": 0.4}
    assert len(fits_disagree({"coefficients": {"c": coef}})) == 1
    coef["torque_space_value"] = 1.5
    assert fits_disagree({"coefficients": {"c": coef}}) == []


def _stationarity(system, values, obs, plates=None):
    """|J_j^T r| / (|J_j| |r|) per free coefficient: 0 at an interior least-squares minimum
    (the normal equations; Nocedal and Wright 2006, Numerical Optimization, sec. 10.1),
    with J written out here from the balance: dw/dc_k = -M^-1 (A_k w + b_k)."""
    W, _ = inference.misfit_whitening(system, None, plates)
    M = np.tensordot(values, system.A, axes=1)
    w = np.linalg.solve(M, -(values @ system.b))
    J = W @ -np.linalg.solve(M, system.columns(w.reshape(-1, 3))[:, system.free])
    r = W @ (w - obs.ravel())
    return np.abs(J.T @ r) / (np.linalg.norm(J, axis=0) * np.linalg.norm(r))


@pytest.fixture(scope="module")
def demo():
    from .conftest import demo_system
    system, obs, motions = demo_system()
    return system, obs, motions, inference.fit_velocity(system, obs)


def test_fits_and_members_end_where_the_misfit_gradient_vanishes(demo):
    # the trust-region method alone stopped where the misfit stopped falling: 1e-9 of the
    # gradient's scale left on a bootstrap member of the demo (measured before this test)
    system, obs, _, fit = demo
    assert _stationarity(system, fit.values, obs).max() < 1e-11
    draws = np.random.default_rng(3).integers(system.n_plates, size=(20, system.n_plates))
    many = inference.fit_velocity_many(system, obs, fit, plates=draws)
    for d, values in zip(draws, many):
        assert _stationarity(system, values, obs, d).max() < 1e-11


def test_members_fitted_together_are_the_members_fitted_one_by_one(demo):
    # bootstrap draws and Monte Carlo motions; a tight upper bound on the slab fraction
    # (0.0502 against the fit's 0.0498) sends some members to the bounded fit
    system, obs, motions, fit = demo
    rng = np.random.default_rng(5)
    draws = rng.integers(system.n_plates, size=(30, system.n_plates))
    noisy = obs + 0.02 * np.abs(obs).mean() * rng.standard_normal((30, *obs.shape))
    i = system.labels.index("slab")
    bounds = system.bounds.copy()
    bounds[i, 1] = 0.0502
    tight = dataclasses.replace(system, bounds=bounds)
    tight_fit = inference.fit_velocity(tight, obs)
    for s, start in ((system, fit), (tight, tight_fit)):
        together = inference.fit_velocity_many(s, obs, start, plates=draws)
        alone = [inference.fit_velocity(s, obs, start, plates=d).values for d in draws]
        np.testing.assert_allclose(together, alone, rtol=1e-10, atol=0)
        together = inference.fit_velocity_many(s, noisy, start)
        alone = [inference.fit_velocity(s, o, start).values for o in noisy]
        np.testing.assert_allclose(together, alone, rtol=1e-10, atol=0)
    on_bound = inference.fit_velocity_many(tight, obs, tight_fit, plates=draws)[:, i] == 0.0502
    assert 0 < on_bound.sum() < len(draws)


def test_block_diagonal_balances_solve_plate_by_plate_to_the_same_members(demo):
    # drag-only balances (the demo's truth) split into one 3x3 system per plate; the same
    # members solved as one dense system agree to rounding (linear algebra: the LU of a
    # block-diagonal matrix is the LU of its blocks)
    system, obs, _, fit = demo
    assert system.block_diagonal
    dense = dataclasses.replace(system)
    dense.__dict__["block_diagonal"] = False           # the general path, same system
    draws = np.random.default_rng(7).integers(system.n_plates, size=(25, system.n_plates))
    np.testing.assert_allclose(inference.fit_velocity_many(system, obs, fit, plates=draws),
                               inference.fit_velocity_many(dense, obs, fit, plates=draws),
                               rtol=1e-12, atol=0)
    from .conftest import demo_system
    coupled, _, _ = demo_system("boundary_resistance")
    assert not coupled.block_diagonal                # resistances couple neighbours
