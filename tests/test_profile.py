"""Profile-likelihood intervals and coefficients at a bound (issue 13, item 3).

Sources: Draper and Smith (1998), Applied Regression Analysis, 3rd ed., sec. 24.5: for a
model linear in its parameters the sum-of-squares region S(c) <= S_min + z^2 s^2, with the
residual variance s^2 = S_min / dof, is exactly the standard-error interval
value +- z stderr, z Student's t with dof degrees of freedom where s^2 is estimated
(scipy.stats.t.ppf); Venzon and Moolgavkar (1988), Applied Statistics 37: the profile
interval of a nonlinear model, which tends to it as the model becomes linear over the
errors' range.
"""

import dataclasses

import numpy as np
import pytest
from scipy import stats

import torque
from torque import inference
from torque.euler import RAD_S_PER_DEG_MYR
from torque.inference.profile import fixed_at, profile_intervals

from .conftest import demo_system, here
from .worlds import trench_hemispheres

DEMO = here().parent / "polygons_demo"


def test_for_a_linear_model_the_profile_is_the_standard_error_interval():
    # Draper and Smith (1998), sec. 24.5: exact for a model linear in its parameter
    system = trench_hemispheres(slab_bounds=(-10.0, 10.0))
    g = inference.predict(system, [1.0, 5e14])
    rng = np.random.default_rng(2)
    obs = 0.3 * g + 0.01 * RAD_S_PER_DEG_MYR * rng.normal(size=g.shape)
    fit = inference.fit_velocity(system, obs)
    p = profile_intervals(fit, obs)["slab"]
    c, se = fit.values[0], fit.stderr[0]
    # the area misfit's variance is estimated: Student's t quantile (scipy.stats.t)
    z = stats.t.ppf(0.975, fit.dof)
    assert fit.quantile == pytest.approx(z, rel=1e-10)
    assert p["low"] == pytest.approx(c - z * se, rel=1e-6)
    assert p["high"] == pytest.approx(c + z * se, rel=1e-6)
    assert p["at_bound"] is None and not p["low_at_bound"] and not p["high_at_bound"]


@pytest.fixture(scope="module")
def demo():
    system, obs, _ = demo_system()
    return system, obs


def test_far_from_its_bound_the_profile_agrees_with_the_standard_error(demo):
    # Venzon and Moolgavkar (1988): the profile interval tends to the Wald (standard error)
    # interval as the model becomes linear over the errors' range; the demo's coefficients
    # are known to 2-3 %, so the two agree to a few % of the interval's width
    system, obs = demo
    fit = inference.fit_velocity(system, obs)
    prof = profile_intervals(fit, obs)
    for label, p in prof.items():
        i = system.labels.index(label)
        c, se, z = fit.values[i], fit.stderr[i], fit.quantile
        width = 2 * z * se
        assert abs(p["low"] - (c - z * se)) < 0.05 * width, label
        assert abs(p["high"] - (c + z * se)) < 0.05 * width, label
        assert p["low"] < c < p["high"]


def test_an_interval_end_is_where_the_misfit_has_risen_by_the_threshold(demo):
    # the definition of the profile: refit with the coefficient held at an end
    system, obs = demo
    fit = inference.fit_velocity(system, obs)
    p = profile_intervals(fit, obs)["slab"]
    # F(1, dof) = t(dof)^2 with the variance estimated (Draper and Smith 1998, sec. 24.5)
    threshold = fit.rss * (1 + stats.f.ppf(0.95, 1, fit.dof) / fit.dof)
    for end in (p["low"], p["high"]):
        refit = inference.fit_velocity(fixed_at(system, "slab", end), obs, fit)
        assert refit.rss == pytest.approx(threshold, rel=1e-6)


def test_a_coefficient_held_at_its_bound_is_flagged_and_its_interval_ends_there(demo, cli,
                                                                               tmp_path):
    # true slab fraction 0.05 (the demo's truth.json); bounds from 0.06 hold it at 0.06
    system, obs = demo
    i = system.labels.index("slab")
    bounds = system.bounds.copy()
    bounds[i] = [0.06, 1.0]
    held = dataclasses.replace(system, bounds=bounds)
    fit = inference.fit_velocity(held, obs)
    assert fit.values[i] == pytest.approx(0.06) and "slab" in fit.active_bounds
    p = profile_intervals(fit, obs)["slab"]
    assert p["at_bound"] == "lower" and p["low"] == 0.06 and p["low_at_bound"]
    assert p["high"] > 0.06
    # from the command line: the warning, and the flag in the JSON
    hyp = (DEMO / "hypotheses" / "continental_drag.toml").read_text().replace(
        "bounds = [0.0, 1.0]", "bounds = [0.06, 1.0]")
    (tmp_path / "h.toml").write_text(hyp)
    status, out, _ = cli("fit", DEMO / "world.toml", tmp_path / "h.toml", DEMO / "motions.csv",
                         "-o", tmp_path / "f.json")
    assert status == 0 and "warning: slab is at its lower bound" in out
    doc = torque.io.read_fit(tmp_path / "f.json")
    assert doc.coefficients["slab"].at_bound == "lower"
    assert doc.coefficients["slab"].profile_low == pytest.approx(0.06)
    assert doc.coefficients["drag_ocean"].at_bound is None
