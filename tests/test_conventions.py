"""The statistics conventions of issue 26: bound mixtures, robust and known-variance
standard errors, the recommendation, resampling that refits the frame.

Sources, beside each check: Self and Liang (1987), J. Am. Stat. Assoc. 82 (the 50:50
chi-bar-square mixture of one coefficient on its bound); Kudo (1963), Biometrika 50, and
Shapiro (1985), Biometrika 72 (the weights of two coefficients on their bounds,
w_0 = 1/4 - arcsin(rho)/(2 pi), w_2 = 1/4 + arcsin(rho)/(2 pi), odd and even weights each
summing to 1/2; rho the correlation of the two estimates, from memory); Bell and McCaffrey
(2002), Survey Methodology 28 (CR2); Hurvich and Tsai (1989), Biometrika 76, and Burnham and
Anderson (2002), sec. 2.4 (AICc, and none needed with a known variance); Draper and Smith
(1998), sec. 2.6 (standard errors scaled by the residual variance, Student's t); scipy.stats
(chi2, t, norm) as the reference distributions.
"""

import dataclasses

import numpy as np
import pytest
from scipy import linalg, stats

import torque
from torque.euler import RAD_S_PER_DEG_MYR
from torque.inference import statistics
from torque.inference.covariance import cluster_robust_covariance
from torque.inference.ranking import ALPHA, nested, rank
from torque.inference.solvers import fit_velocity, fit_velocity_many

from .conftest import here

DEMO = here().parent / "polygons_demo"


def test_one_coefficient_on_its_bound_halves_the_p_value():
    # Self and Liang (1987): LR ~ 0.5 chi2_0 + 0.5 chi2_1
    w = statistics.chi_bar_square_weights(np.eye(1), [True])
    assert w.tolist() == [0.5, 0.5]
    t = statistics.likelihood_ratio_test(10.0 + 3.1, 2, 10.0, 3, weights=w)
    assert t["p_value"] == pytest.approx(0.5 * stats.chi2.sf(3.1, 1), rel=1e-12)
    # its 5 % point is the chi2_1 10 % point, 2.706 (1.645 squared)
    assert statistics.likelihood_ratio_test(
        stats.chi2.ppf(0.9, 1), 0, 0.0, 1, weights=w)["p_value"] == pytest.approx(0.05)


@pytest.mark.parametrize("rho", [-0.7, 0.0, 0.6])
def test_two_coefficients_on_their_bounds_take_the_weights_of_the_quadrant(rho):
    # Kudo (1963) / Shapiro (1985), from memory: w_2 = P(both estimates positive)
    V = np.array([[1.0, rho], [rho, 1.0]])
    w = statistics.chi_bar_square_weights(V, [True, True], draws=200_000, seed=1)
    want_2 = 0.25 + np.arcsin(rho) / (2 * np.pi)
    assert w[2] == pytest.approx(want_2, abs=4e-3)
    assert w[0] == pytest.approx(0.5 - want_2, abs=4e-3)
    assert w[1] == pytest.approx(0.5, abs=4e-3)


def test_an_unbounded_coefficient_keeps_the_plain_chi_square():
    w = statistics.chi_bar_square_weights(np.eye(2), [False, False])
    assert w.tolist() == [0.0, 0.0, 1.0]
    t = statistics.likelihood_ratio_test(14.0, 1, 10.0, 3, weights=w)
    assert t["p_value"] == pytest.approx(stats.chi2.sf(4.0, 2), rel=1e-12)


def test_cr2_against_its_definition():
    # Bell and McCaffrey (2002): V = B sum_g J_g^T (I - H_gg)^-1/2 r_g r_g^T (I - H_gg)^-1/2
    # J_g B, written out with scipy.linalg.sqrtm
    rng = np.random.default_rng(3)
    J = rng.normal(size=(30, 4))
    r = rng.normal(size=30)
    V, dof = cluster_robust_covariance(J, r, clusters=3)
    B = np.linalg.inv(J.T @ J)
    meat = np.zeros((4, 4))
    for g in range(10):
        Jg, rg = J[3 * g:3 * g + 3], r[3 * g:3 * g + 3]
        H = Jg @ B @ Jg.T
        u = np.real(linalg.inv(linalg.sqrtm(np.eye(3) - H))) @ rg
        meat += np.outer(Jg.T @ u, Jg.T @ u)
    np.testing.assert_allclose(V, B @ meat @ B, rtol=1e-10)
    assert np.all((dof > 1) & (dof <= 9))


def test_known_variance_information_criteria_need_no_small_sample_term():
    # Burnham and Anderson (2002), sec. 2.4: AICc's term corrects for an estimated variance
    ic = statistics.information_criteria_chi_square(40.0, 42, 3)
    assert ic["aicc"] == ic["aic"] == 46.0


def test_the_chi_square_check_names_its_tail():
    # scipy.stats.chi2: the two tails of the minimised chi-square
    hi = statistics.chi_square_check(80.0, 40)
    assert hi["tail"] == "high" and hi["p_high"] == pytest.approx(stats.chi2.sf(80, 40))
    assert "upper tail" in hi["message"]
    lo = statistics.chi_square_check(15.0, 40)
    assert lo["tail"] == "low" and lo["p_low"] == pytest.approx(stats.chi2.cdf(15, 40))
    assert statistics.chi_square_check(41.0, 40)["message"] is None


@pytest.fixture(scope="module")
def demo():
    inputs = torque.Inputs.load(DEMO / "world.toml")
    motions = torque.read_motions(DEMO / "motions.csv")
    omega = motions.for_world(inputs.world)
    cov = motions.cov_for_world(inputs.world)
    systems = {}
    for name in ("ridge_drag", "slab_drag", "ridge_slab_drag", "boundary_resistance",
                 "continental_drag"):
        hyp = torque.load_hypothesis(DEMO / "hypotheses" / f"{name}.toml")
        systems[name] = torque.assemble(inputs.world, hyp,
                                        torque.compute_torques(inputs, hyp, omega))
    return systems, omega, cov


def test_an_estimated_variance_scales_the_known_one_with_t_quantiles(demo):
    # Draper and Smith (1998), sec. 2.6: s^2 = chi^2 / dof, intervals with t(dof)
    systems, omega, cov = demo
    s = systems["continental_drag"]
    known = fit_velocity(s, omega, obs_cov=cov)
    est = fit_velocity(s, omega, obs_cov=cov, variance="estimated")
    np.testing.assert_allclose(est.values, known.values, rtol=1e-12)
    np.testing.assert_allclose(est.stderr, known.stderr * np.sqrt(known.chi_square / known.dof),
                               rtol=1e-10)
    assert known.quantile == pytest.approx(stats.norm.ppf(0.975), rel=1e-12)
    assert est.quantile == pytest.approx(stats.t.ppf(0.975, est.dof), rel=1e-10)


def _check_recommendation(rows, tests, systems, known=True):
    """The recommendation, the tests and the sentence never contradict one another."""
    by = {s.name: s for s in systems}
    chosen = [r for r in rows if r.recommended]
    assert len(chosen) == 1 and chosen[0].name == rows.recommended
    R = rows.recommended
    assert f"recommended: {R!r}" in rows.reason
    if rows.rule == "likelihood-ratio":
        decisive = [t for t in tests if t["test"] == ("likelihood-ratio" if known else "F")]
        # no hypothesis that contains the recommendation fits significantly better
        for t in decisive:
            if t["smaller"] == R:
                assert t["p_value"] >= ALPHA, t
        # a smaller one it contains is not rejected only if the sentence says it is beaten
        for t in decisive:
            if t["bigger"] == R and t["p_value"] >= ALPHA:
                small = t["smaller"]
                beaten = any(u["smaller"] == small and u["p_value"] < ALPHA for u in decisive)
                assert beaten, f"{small!r} was not beaten, yet {R!r} that contains it chosen"
            if t["bigger"] == R and t["p_value"] < ALPHA:
                assert repr(t["smaller"]) in rows.reason
    elif rows.rule in ("aic", "bic"):
        assert getattr(chosen[0], rows.rule) == min(getattr(r, rows.rule) for r in rows)
    else:
        assert chosen[0].within_one_se
        assert chosen[0].free == min(r.free for r in rows if r.within_one_se)
    for r in rows:
        if r.name != R and nested(by[r.name], by[R]) and rows.rule == "likelihood-ratio":
            assert "significantly better" in rows.reason or r.name in rows.reason


@pytest.mark.parametrize("rule", ["likelihood-ratio", "aic", "bic", "cross-validation"])
def test_the_recommendation_agrees_with_its_tests(demo, rule):
    systems, omega, cov = demo
    ss = list(systems.values())
    rows, tests = rank(ss, omega, obs_cov=cov, rule=rule)
    assert rows.rule == rule
    _check_recommendation(rows, tests, ss)
    # the sentence the terminal prints is the ranking's own
    from torque.present.text import rank as rank_text
    assert rows.reason in rank_text(rows, tests)


def test_with_an_estimated_variance_the_f_test_decides(demo):
    systems, omega, cov = demo
    ss = list(systems.values())
    rows, tests = rank(ss, omega, obs_cov=cov, variance="estimated")
    assert "nested F tests" in rows.reason
    _check_recommendation(rows, tests, ss, known=False)


def test_without_a_covariance_only_cross_validation_recommends(demo):
    systems, omega, _ = demo
    ss = list(systems.values())
    rows, tests = rank(ss, omega)
    assert rows.rule == "cross-validation"
    _check_recommendation(rows, tests, ss)
    with pytest.raises(torque.InputError, match="needs the likelihood"):
        rank(ss, omega, rule="aic")


def test_cross_validation_with_a_free_frame_refits_it_without_the_plate(demo):
    # the left-out plate must not inform the frame it is predicted in: each refit is
    # fit_velocity(..., free_frame=True) on the other plates (its definition)
    from torque.inference.ranking import cross_validation_errors
    from torque.inference.statistics import velocity_misfit
    systems, omega, _ = demo
    s = systems["ridge_slab_drag"]
    spin = np.array([0.1, -0.2, 0.15]) * RAD_S_PER_DEG_MYR
    obs = omega + spin
    e = cross_validation_errors(s, obs, free_frame=True)
    P = s.n_plates
    for p in (0, P // 2, P - 1):
        keep = np.r_[0:p, p + 1:P]
        f = fit_velocity(s, obs, None, True, plates=keep)
        pred = torque.inference.predict(s, f.values) + f.frame_rotation
        rms, _ = velocity_misfit(s, pred, obs)
        assert e[p] == pytest.approx(rms[p] ** 2, rel=1e-7)


def test_batched_members_refit_the_frame_as_one_fit_does(demo):
    systems, omega, _ = demo
    s = systems["ridge_slab_drag"]
    full = fit_velocity(s, omega, free_frame=True)
    draws = np.random.default_rng(5).integers(s.n_plates, size=(4, s.n_plates))
    values, frames = fit_velocity_many(s, omega, full, plates=draws, free_frame=True)
    for d, v, f in zip(draws, values, frames):
        one = fit_velocity(s, omega, full, True, plates=d)
        np.testing.assert_allclose(v, one.values, rtol=1e-9)
        np.testing.assert_allclose(f, one.frame_rotation, rtol=1e-7,
                                   atol=1e-9 * np.abs(one.frame_rotation).max())


def test_the_monte_carlo_draws_from_the_covariance_the_fit_uses(tmp_path):
    # with a model error the chi-square fit's covariance is data + model error, and its
    # standard errors describe draws from that: the Monte Carlo spread matches them
    # (a spread from the data covariance alone would be far narrower; common practice,
    # no source: a parametric bootstrap from the fitted model's own error distribution)
    from torque.workflows import FitOptions, fit
    inputs = torque.Inputs.load(DEMO / "world.toml")
    run = fit(inputs, DEMO / "hypotheses" / "continental_drag.toml", DEMO / "motions.csv",
              FitOptions(misfit="chi-square", model_error_mm_yr=3.0, monte_carlo=300,
                         profile=False))
    mc = run.result.uncertainty["monte_carlo_motions"]["coefficients"]
    for label, c in run.result.coefficients.items():
        if c.free:
            assert mc[label]["std"] == pytest.approx(c.stderr, rel=0.2), label


def test_a_one_sided_profile_interval_is_printed_as_such():
    from torque.present.text import profile_span
    assert profile_span({"profile_low": 0.0, "profile_high": 0.031,
                         "profile_low_at_bound": True}) == "0 to 0.031 (on its bound)"
    assert "(not found)" in profile_span({"profile_low": 0.02525, "profile_high": None})


def test_the_fit_states_which_standard_errors_lead(cli, tmp_path):
    from torque.io import read_fit
    out = tmp_path / "fit.json"
    code, text, _ = cli("fit", DEMO / "world.toml", DEMO / "hypotheses" / "continental_drag.toml",
                        DEMO / "motions.csv", "--no-profile", "-o", out)
    assert code == 0 and "standard errors: robust" in text
    r = read_fit(out)
    assert r.misfit["standard_errors"] == "robust"
    for c in r.coefficients.values():
        if c.free:
            assert c.stderr == c.robust_stderr and c.classical_stderr > 0
    code, text, _ = cli("fit", DEMO / "world.toml", DEMO / "hypotheses" / "continental_drag.toml",
                        DEMO / "motions.csv", "--no-profile", "--misfit", "chi-square",
                        "-o", out)
    assert code == 0 and "standard errors: classical (the covariance taken as known" in text
    # the demo's reduced chi-square, about 1.47 on 39 degrees of freedom, has p = 0.03:
    # not far enough in its tail for a warning (two-sided 1 %)
    assert "warning: reduced chi-square" not in text
    assert read_fit(out).misfit["chi_square_p_high"] == pytest.approx(
        stats.chi2.sf(read_fit(out).misfit["chi_square"], read_fit(out).misfit["dof"]))
    assert dataclasses.is_dataclass(read_fit(out).coefficients["slab"])


def test_a_covariance_four_times_too_small_is_warned_of(demo):
    from torque.inference.analysis import analyse
    from torque.present.text import fit as fit_text
    systems, omega, cov = demo
    d = analyse(systems["continental_drag"], omega, obs_cov=cov / 4).result().as_dict()
    assert d["misfit"]["chi_square_warning"].startswith("reduced chi-square 5.")
    assert "warning: reduced chi-square 5." in fit_text(d)


def test_bell_mccaffrey_degrees_of_freedom_of_a_balanced_mean_are_clusters_less_one():
    # Imbens and Kolesar (2016), Rev. Econ. Stat. 98 (from memory): for the mean of G
    # clusters of equal size the approximation gives G - 1, and fewer where one cluster
    # holds much of the information
    r = np.random.default_rng(0).normal(size=30)
    _, dof = cluster_robust_covariance(np.ones((30, 1)), r, clusters=3)
    assert dof[0] == pytest.approx(9.0, rel=1e-10)
    w = np.ones((30, 1))
    w[:3] = 10.0                                   # one cluster weighs 100 times the others
    _, dof = cluster_robust_covariance(w, r, clusters=3)
    assert dof[0] < 5


@pytest.mark.parametrize("argv, message", [
    (("rank", "--recommend", "aic"), "the aic rule needs the likelihood"),
    (("fit", "--variance", "known"), "only a chi-square's variance can be known"),
    (("fit", "--free-frame", "--bootstrap", "5", "--resample-fit", "torque"),
     "torque-space refits cannot fit a free frame"),
])
def test_options_that_contradict_each_other_are_refused(cli, tmp_path, argv, message):
    # options that cannot go together: exit 2 with a message that says what to change
    # (common practice, no source)
    command, *rest = argv
    hyp = DEMO / "hypotheses" / "ridge_drag.toml"
    args = ((DEMO / "world.toml", DEMO / "motions.csv", hyp) if command == "rank" else
            (DEMO / "world.toml", hyp, DEMO / "motions.csv", "-o", tmp_path / "f.json"))
    code, _, err = cli(command, *args, *rest)
    assert code == 2 and message in err and "Traceback" not in err
    assert not (tmp_path / "f.json").exists()


# -- plausibility guards (torque.workflows.plausibility; ranges and sources there) ---------

def _demo_copy(tmp_path, ages_factor=None):
    """The demo world copied into ``tmp_path``, its age grid scaled by ``ages_factor``."""
    import shutil
    import xarray as xr
    world = tmp_path / "demo"
    shutil.copytree(DEMO, world)
    if ages_factor is not None:
        with xr.open_dataset(DEMO / "ages.nc") as d:
            scaled = d.load()
        scaled["age"] = scaled["age"] * ages_factor
        (world / "ages.nc").unlink()
        scaled.to_netcdf(world / "ages.nc")
    return world


def _motions_scaled(tmp_path, factor):
    """The demo's motions with every rate multiplied by ``factor`` (a unit mistake)."""
    import csv
    rows = list(csv.DictReader(open(DEMO / "motions.csv")))
    out = tmp_path / "motions_scaled.csv"
    with open(out, "w", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        for r in rows:
            r["rate"] = repr(float(r["rate"]) * factor)
            w.writerow(r)
    return out


@pytest.mark.parametrize("factor, words", [
    (RAD_S_PER_DEG_MYR, ["every plate moves below 0.01 mm/yr", "rad/s",
                         "outside the plausible basal drag range"]),
    (1e6, ["faster than any plate on Earth", "deg/yr"]),
])
def test_rates_in_the_wrong_unit_are_warned_of(cli, tmp_path, factor, words):
    # rad/s written where deg/Myr are read: speeds below 0.01 mm/yr everywhere and a drag
    # coefficient far outside 1e12-1e18 Pa s/m; deg/yr: speeds of 1e5 mm/yr
    motions = _motions_scaled(tmp_path, factor)
    code, _, err = cli("fit", DEMO / "world.toml", DEMO / "hypotheses" / "ridge_slab_drag.toml",
                       motions, "--no-profile", "-o", tmp_path / "f.json")
    assert code == 0
    for w in words:
        assert w in err, (w, err)
    assert str(motions) in err
    assert "warning" not in cli("fit", DEMO / "world.toml",
                                DEMO / "hypotheses" / "ridge_slab_drag.toml",
                                DEMO / "motions.csv", "--no-profile",
                                "-o", tmp_path / "g.json")[2]


@pytest.mark.parametrize("factor, code_want, words", [
    # Myr divided by 1e6 once more: a warning; in years: refused by the reader (ages above
    # 300 Myr), with the unit it probably was
    (1e-6, 0, ["the oldest sea floor is", "Gyr"]),
    (1e6, 2, ["ages must lie in 0-300 Myr", "in kyr or years"]),
])
def test_ages_in_the_wrong_unit_are_warned_of(cli, tmp_path, factor, code_want, words):
    world = _demo_copy(tmp_path, factor)
    code, _, err = cli("torques", world / "world.toml",
                       DEMO / "hypotheses" / "ridge_slab_drag.toml", "--motions",
                       DEMO / "motions.csv", "-o", tmp_path / "t.csv")
    assert code == code_want
    for w in words:
        assert w in err, (w, err)
    assert "ages.nc" in err and "Traceback" not in err


def test_the_guards_ranges():
    # each guard's threshold, from torque.workflows.plausibility (sources there)
    from torque.workflows import plausibility as pl
    assert pl.age_warnings(np.array([0.0, 450.0]), "a.nc")[0].startswith("a.nc: sea floor up")
    assert pl.age_warnings(np.array([0.0, 180.0])) == []
    w = np.array([[0.0, 0.0, 1.0]]) * RAD_S_PER_DEG_MYR          # 1 deg/Myr: 111 mm/yr
    assert pl.motion_warnings(["A"], w, 6.371e6) == []
    assert "faster than any plate" in pl.motion_warnings(["A"], 3 * w, 6.371e6)[0]


def test_without_profiles_the_fit_prints_no_profile_column(cli, tmp_path):
    # an empty column says nothing (common practice, no source)
    hyp = DEMO / "hypotheses" / "ridge_drag.toml"
    _, out, _ = cli("fit", DEMO / "world.toml", hyp, DEMO / "motions.csv", "--no-profile",
                    "-o", tmp_path / "f.json")
    assert "profile interval" not in out and "torque space" in out
    _, out, _ = cli("fit", DEMO / "world.toml", hyp, DEMO / "motions.csv",
                    "-o", tmp_path / "f.json")
    assert "95 % profile interval" in out
