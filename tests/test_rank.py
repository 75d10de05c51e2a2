"""Ranking hypotheses: cross-validation first, information criteria, nested comparisons.

Sources: Burnham and Anderson (2002), Model Selection and Multimodel Inference, sec. 2.2
(AIC = n ln(RSS/n) + 2k for least squares); Hurvich and Tsai (1989), Biometrika 76
(AICc); Self and Liang (1987), J. Am. Stat. Assoc. 82 (the chi-bar-square mixture of a
coefficient on its bound); Schwarz (1978), Ann. Stat. 6 (BIC);
Draper and Smith (1998), Applied Regression Analysis (the extra-sum-of-squares F-test),
with scipy.stats.f for its p-value; Wilks (1938), Ann. Math. Stat. 9 (the likelihood-ratio
test), with scipy.stats.chi2; Hastie, Tibshirani and Friedman (2009), The Elements of
Statistical Learning, sec. 7.10 (cross-validation and its standard error).
"""

import dataclasses

import numpy as np
import pytest
from scipy import stats

from torque import inference
from torque.inference.analysis import analyse
from torque.euler import RAD_S_PER_DEG_MYR
from torque.hypothesis import hypothesis_from_dict
from torque.inference.ranking import cross_validation, rank

from .worlds import KIND_CYCLE, forces, system_for, voronoi_world


@pytest.fixture(scope="module")
def ranked():
    w = voronoi_world(16, 2, kinds=KIND_CYCLE)
    s0 = system_for(w, forces(False))
    rng = np.random.default_rng(11)
    omega = inference.predict(s0, s0.fixed)
    omega = omega + 0.002 * RAD_S_PER_DEG_MYR * rng.standard_normal(omega.shape)
    full = system_for(w, forces(True))
    entries = [e for e in _entries() if e["kind"] != "trench"]
    small = system_for(w, hypothesis_from_dict({"name": "no trench", "force": entries}))
    full = dataclasses.replace(full, name="full")
    return omega, full, small, rank([small, full], omega)


def _entries():
    return [{"kind": "ridge", "form": "edge", "coefficient": 1.0},
            {"kind": "slab", "age_myr": 80.0}, {"kind": "drag", "label": "drag"},
            {"kind": "transform"}, {"kind": "trench"}]


def test_rows_carry_the_published_criteria_and_sort_by_cross_validation(ranked):
    omega, full, small, (rows, tests) = ranked
    assert [r.name for r in rows] == ["full", "no trench"]
    assert rows[0].cv_rms_mm_yr <= rows[1].cv_rms_mm_yr
    for r, s in zip(rows, (full, small)):
        rss = analyse(s, omega).misfit()[1]["velocity_rss_m4_s2"]
        n, k = 3 * s.n_plates, s.n_free
        assert r.free == k
        assert r.aic == pytest.approx(n * np.log(rss / n) + 2 * k, rel=1e-12)
        assert r.bic == pytest.approx(n * np.log(rss / n) + k * np.log(n), rel=1e-12)
        # Hurvich and Tsai (1989), Biometrika 76: the correction counts the variance as a
        # parameter, K = k + 1
        K = k + 1
        assert r.aicc == pytest.approx(r.aic + 2 * K * (K + 1) / (n - K - 1), rel=1e-12)


def test_without_a_covariance_the_nested_pair_is_compared_by_cross_validation(ranked):
    # the area misfit's residuals are neither independent nor of equal variance, so no
    # F-test; the paired per-plate difference of the left-out errors instead (Hastie et al.
    # 2009, sec. 7.10)
    omega, full, small, (rows, tests) = ranked
    assert len(tests) == 1 and tests[0]["smaller"] == "no trench"
    t = tests[0]
    assert t["test"] == "cross-validation" and "p_value" not in t
    by = {r.name: r for r in rows}
    assert t["cv_difference_mm_yr"] == pytest.approx(
        by["no trench"].cv_rms_mm_yr - by["full"].cv_rms_mm_yr, rel=1e-12)


def test_with_a_covariance_the_nested_pair_gets_likelihood_ratio_and_f_tests(ranked):
    omega, full, small, _ = ranked
    cov = np.broadcast_to((0.002 * RAD_S_PER_DEG_MYR) ** 2 * np.eye(3), (16, 3, 3))
    _, tests = rank([small, full], omega, obs_cov=cov)
    chi2 = {s.name: analyse(s, omega, obs_cov=cov).preferred.chi_square
            for s in (full, small)}
    n, k_b, k_s = 3 * full.n_plates, full.n_free, small.n_free
    lr = next(t for t in tests if t["test"] == "likelihood-ratio")
    assert lr["statistic"] == pytest.approx(chi2["no trench"] - chi2["full"], rel=1e-9)
    # the trench resistance is bounded below by 0, the value the smaller model gives it:
    # the reference is the 50:50 mixture of chi2_0 and chi2_1 (Self and Liang 1987), half
    # the plain p-value
    i = full.labels.index(next(l for l in full.labels if l not in small.labels))
    assert full.bounds[i][0] == 0 and k_b - k_s == 1
    assert lr["weights"] == [0.5, 0.5]
    assert lr["p_value"] == pytest.approx(0.5 * stats.chi2.sf(lr["statistic"], 1), rel=1e-9)
    F = next(t for t in tests if t["test"] == "F")
    want = ((chi2["no trench"] - chi2["full"]) / (k_b - k_s)) / (chi2["full"] / (n - k_b))
    assert F["statistic"] == pytest.approx(want, rel=1e-9)
    assert F["p_value"] == pytest.approx(0.5 * stats.f.sf(want, 1, n - k_b), rel=1e-9)


def test_the_cross_validation_error_and_its_standard_error_over_plates(ranked):
    # the area-weighted mean of the left-out squared errors, and its standard error from
    # their spread over plates by the delta method (common practice, no source)
    from torque.inference.ranking import cross_validation_errors
    omega, full, small, (rows, _) = ranked
    e = cross_validation_errors(full, omega)
    w = full.area / full.area.sum()
    m = np.sum(w * e)
    P = len(e)
    se_m = np.sqrt(P / (P - 1) * np.sum(w ** 2 * (e - m) ** 2))
    r = next(r for r in rows if r.name == "full")
    assert r.cv_rms_mm_yr == pytest.approx(np.sqrt(m), rel=1e-12)
    assert r.cv_stderr_mm_yr == pytest.approx(se_m / (2 * np.sqrt(m)), rel=1e-12)
    assert r.within_one_se and r.cv_excess_se == 0.0


def test_cross_validation_of_the_true_model_is_near_its_misfit(ranked):
    # leaving one plate out moves the coefficients only by the noise, so the left-out
    # plates' misfit stays of the order of the fit's own misfit (common practice, no source)
    omega, full, small, (rows, _) = ranked
    cv = cross_validation(full, omega)
    assert rows[0].rms_velocity_mm_yr <= cv < 3 * rows[0].rms_velocity_mm_yr


def test_printed_values_carry_only_meaningful_digits(ranked):
    # AIC to 0.1 (differences under 1 carry no evidence: Burnham and Anderson 2002,
    # sec. 2.6), and p-values below 1e-6 only as such, since the residuals are spatially
    # correlated and far tails mean nothing here (common practice, no source)
    from torque.present.text import p_value, rank as rank_table
    _, _, _, (rows, tests) = ranked
    text = rank_table(rows, tests)
    assert f"{rows[0].aic:10.1f}" in text
    assert p_value(1e-17) == "p < 1e-6" and p_value(0.0123) == "p = 0.012"


def test_with_known_covariances_the_criteria_come_from_the_chi_square(ranked):
    # Burnham and Anderson (2002), sec. 2.2: with known variances, -2 ln L = chi^2 + const,
    # so AIC = chi^2 + 2k and BIC = chi^2 + k ln n.
    omega, full, small, _ = ranked
    cov = np.broadcast_to((0.002 * RAD_S_PER_DEG_MYR) ** 2 * np.eye(3), (16, 3, 3))
    rows, _ = rank([small, full], omega, obs_cov=cov)
    for r, s in zip(sorted(rows, key=lambda r: r.name), (full, small)):
        chi2 = analyse(s, omega, obs_cov=cov).preferred.chi_square
        n, k = 3 * s.n_plates, s.n_free
        assert r.aic == pytest.approx(chi2 + 2 * k, rel=1e-12)
        assert r.bic == pytest.approx(chi2 + k * np.log(n), rel=1e-12)
