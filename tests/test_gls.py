"""The velocity-space fit as generalised least squares with the observations' covariance
(issue 13, item 2).

Sources: Draper and Smith (1998), Applied Regression Analysis, 3rd ed., ch. 9: the
weighted (generalised) least-squares estimate of a model linear in one parameter,
y = c g + e with Cov(e) = C, is c = g^T C^-1 y / g^T C^-1 g with variance
1 / g^T C^-1 g; with C a multiple of the identity it is the ordinary least-squares estimate,
here computed independently with scipy.optimize.least_squares.
"""

import numpy as np
import pytest
from scipy import optimize

import torque
from torque import inference
from torque.euler import RAD_S_PER_DEG_MYR

from .conftest import demo_system, here
from .worlds import trench_hemispheres

DEMO = here().parent / "polygons_demo"


def test_one_driving_coefficient_has_the_weighted_least_squares_solution():
    # Slab pull (free) against fixed drag: the predicted motions are c g with g fixed, so
    # the chi-square's minimum is the textbook weighted least-squares estimate.
    system = trench_hemispheres()
    g = inference.predict(system, [1.0, 5e14]).ravel()         # motions per unit coefficient
    rng = np.random.default_rng(1)
    A = rng.normal(size=(2, 3, 3)) * 0.02 * RAD_S_PER_DEG_MYR
    C = A @ np.swapaxes(A, 1, 2) + (0.01 * RAD_S_PER_DEG_MYR) ** 2 * np.eye(3)
    y = 0.3 * g + rng.normal(size=6) * 0.01 * RAD_S_PER_DEG_MYR
    Ci = np.zeros((6, 6))
    Ci[:3, :3], Ci[3:, 3:] = np.linalg.inv(C[0]), np.linalg.inv(C[1])
    want = (g @ Ci @ y) / (g @ Ci @ g)
    fit = inference.fit_velocity(system, y.reshape(2, 3), obs_cov=C)
    assert fit.values[0] == pytest.approx(want, rel=1e-8)
    assert fit.chi_square == pytest.approx(
        (y - want * g) @ Ci @ (y - want * g), rel=1e-8)
    # its variance, 1 / g^T C^-1 g: the covariance is known, so the reduced chi-square does
    # not scale it (Draper and Smith 1998, sec. 9.2)
    var = 1 / (g @ Ci @ g)
    assert fit.stderr[0] == pytest.approx(np.sqrt(var), rel=1e-6)


def test_with_an_isotropic_covariance_it_is_ordinary_least_squares():
    inputs = torque.Inputs.load(DEMO / "world.toml")
    hyp = torque.load_hypothesis(DEMO / "hypotheses" / "continental_drag.toml")
    obs = torque.read_motions(DEMO / "motions.csv").for_world(inputs.world)
    system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, obs))
    cov = np.broadcast_to((0.01 * RAD_S_PER_DEG_MYR) ** 2 * np.eye(3), (14, 3, 3))
    gls = inference.fit_velocity(system, obs, obs_cov=cov)
    free = system.free
    scale = np.abs(gls.values[free])

    def residual(x):                   # in units of the noise, so the tolerances make sense
        pred = inference.predict(system, system.full_coefficients(x * scale))
        return (pred - obs).ravel() / (0.01 * RAD_S_PER_DEG_MYR)
    ols = optimize.least_squares(residual, np.ones(free.sum()) * 0.9, xtol=1e-14,
                                 ftol=1e-14, gtol=1e-14)
    np.testing.assert_allclose(gls.values[free], ols.x * scale, rtol=1e-6)


def test_the_command_line_reports_the_chi_square(tmp_path, cli):
    status, out, err = cli("fit", DEMO / "world.toml",
                           DEMO / "hypotheses" / "continental_drag.toml", DEMO / "motions.csv",
                           "--misfit", "chi-square", "-o", tmp_path / "f.json")
    assert status == 0, err
    d = torque.io.read_fit(tmp_path / "f.json").misfit
    assert d["dof"] == 3 * 14 - 3
    # the demo's noise is the covariance stated in its motions: a reduced chi-square near 1
    # (its standard deviation is sqrt(2 / 39) = 0.23; common practice, no source)
    assert 0.5 < d["reduced_chi_square"] < 2.0
    assert "chi-square" in out and "reduced" in out
    (tmp_path / "m.csv").write_text("plate,lat,lon,rate\n" + "".join(
        f"{p},0,0,0.1\n" for p in torque.load_world(DEMO / "world.toml").plate_names))
    status, out, err = cli("fit", DEMO / "world.toml",
                           DEMO / "hypotheses" / "continental_drag.toml", tmp_path / "m.csv",
                           "--misfit", "chi-square", "-o", tmp_path / "g.json")
    assert status == 2 and "needs a covariance" in err


def test_resampling_the_chi_square_fit_matches_its_standard_errors():
    # With the observations' true covariance, the Monte Carlo spread of chi-square refits is
    # the estimate's sampling spread, which is (J^T C^-1 J)^-1: the reported standard
    # error, the covariance being known (first-order propagation; Draper and Smith 1998).
    # 300 members give the spread to about 4 %.
    from torque.inference.resampling import monte_carlo_motions
    inputs = torque.Inputs.load(DEMO / "world.toml")
    hyp = torque.load_hypothesis(DEMO / "hypotheses" / "continental_drag.toml")
    motions = torque.read_motions(DEMO / "motions.csv")
    obs = motions.for_world(inputs.world)
    cov = motions.cov_for_world(inputs.world)
    system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, obs))
    fit = inference.fit_velocity(system, obs, obs_cov=cov)
    mc = monte_carlo_motions(system, obs, cov, 300, seed=4, obs_cov=cov)
    se = fit.stderr[system.free]
    sd = np.array([c["std"] for c in mc["coefficients"].values()])
    np.testing.assert_allclose(sd, se, rtol=0.15)


def test_a_full_covariance_gives_the_correlated_weighted_solution():
    # Draper and Smith (1998), ch. 9: with errors correlated between the two plates (a full
    # 6 x 6 C), the estimate is still c = g^T C^-1 y / g^T C^-1 g, with C^-1 the inverse of
    # the whole matrix, not of its blocks.
    system = trench_hemispheres()
    g = inference.predict(system, [1.0, 5e14]).ravel()
    rng = np.random.default_rng(4)
    A = rng.normal(size=(6, 6)) * 0.01 * RAD_S_PER_DEG_MYR
    C = A @ A.T + (0.005 * RAD_S_PER_DEG_MYR) ** 2 * np.eye(6)
    y = 0.3 * g + np.linalg.cholesky(C) @ rng.normal(size=6)
    Ci = np.linalg.inv(C)
    want = (g @ Ci @ y) / (g @ Ci @ g)
    fit = inference.fit_velocity(system, y.reshape(2, 3), obs_cov=C)
    assert fit.values[0] == pytest.approx(want, rel=1e-8)
    assert fit.chi_square == pytest.approx(
        (y - want * g) @ Ci @ (y - want * g), rel=1e-8)
    # the blocks alone give another answer: the correlations matter
    blocks = inference.covariance_blocks(C)
    Cb = np.zeros((6, 6))
    Cb[:3, :3], Cb[3:, 3:] = blocks
    other = (g @ np.linalg.inv(Cb) @ y) / (g @ np.linalg.inv(Cb) @ g)
    assert abs(other - want) > 1e-6 * abs(want)


def test_a_full_covariance_without_correlations_is_the_block_fit():
    # the same matrix given whole or as blocks is the same chi-square (Draper and Smith
    # 1998, ch. 9: block-diagonal C^-1 is the inverse of each block)
    system, obs, motions = demo_system()
    blocks = motions.cov[[motions.index()[p] for p in system.plates]]
    P = system.n_plates
    full = np.zeros((P, 3, P, 3))
    full[np.arange(P), :, np.arange(P), :] = blocks
    a = inference.fit_velocity(system, obs, obs_cov=blocks)
    b = inference.fit_velocity(system, obs, obs_cov=full.reshape(3 * P, 3 * P))
    np.testing.assert_allclose(b.values, a.values, rtol=1e-7)
    assert b.chi_square == pytest.approx(a.chi_square, rel=1e-8)
    np.testing.assert_allclose(inference.covariance_blocks(full.reshape(3 * P, 3 * P)), blocks)


def test_the_model_error_has_the_stated_rms_velocity_and_adds_to_the_covariance():
    # by its definition: E[R^2 e^T D_p e] / A_p = floor^2 for e ~ N(0, C_p), checked by
    # drawing (common practice, no source)
    system = trench_hemispheres()
    C = inference.model_error_covariance(system, 3.0)
    rng = np.random.default_rng(0)
    for p in range(2):
        e = rng.multivariate_normal(np.zeros(3), C[p], size=20000)
        ms = system.radius_m ** 2 * np.einsum("ni,ij,nj->n", e, system.D[p], e) / system.area[p]
        assert np.sqrt(ms.mean()) * torque.euler.M_S_TO_MM_YR == pytest.approx(3.0, rel=0.02)
    both = inference.add_covariances(np.zeros((6, 6)), C)
    np.testing.assert_allclose(inference.covariance_blocks(both), C)


def test_with_only_a_model_error_plates_weigh_equally_by_mean_square_misfit():
    # chi-square = 3 sum_p rms_p^2 / floor^2 by the model error's definition (above)
    system, obs, _ = demo_system("ridge_slab_drag")
    fit = inference.fit_velocity(system, obs, obs_cov=inference.model_error_covariance(system, 2.0))
    rms, _ = torque.inference.statistics.velocity_misfit(system, inference.predict(system, fit.values), obs)
    assert fit.chi_square == pytest.approx(3 * np.sum(rms ** 2) / 2.0 ** 2, rel=1e-9)


def test_motions_in_the_no_net_rotation_frame_lose_three_degrees_of_freedom():
    # three linear constraints on the observations remove three degrees of freedom (common
    # practice, no source); a free frame fits the same three directions, so it does not
    # remove three more
    system, obs, _ = demo_system()
    net = np.linalg.solve(system.D.sum(0), np.einsum("pij,pj->i", system.D, obs))
    obs_nnr = obs - net
    assert inference.rigid_constraint(system, obs) is None
    assert inference.rigid_constraint(system, obs_nnr) == "no-net-rotation"
    fixed = obs - obs[3]
    assert inference.rigid_constraint(system, fixed) == f"plate:{system.plates[3]}"
    k, P = system.n_free, system.n_plates
    m = torque.inference.analysis.analyse(system, obs_nnr).result().misfit
    assert (m["effective_observations"], m["effective_parameters"], m["dof"]) == \
        (3 * P - 3, k, 3 * P - 3 - k)
    m = torque.inference.analysis.analyse(system, obs_nnr, free_frame=True).result().misfit
    assert (m["effective_observations"], m["effective_parameters"], m["dof"]) == \
        (3 * P - 3, k, 3 * P - 3 - k)
    m = torque.inference.analysis.analyse(system, obs, free_frame=True).result().misfit
    assert (m["effective_observations"], m["effective_parameters"], m["dof"]) == \
        (3 * P, k + 3, 3 * P - 3 - k)
