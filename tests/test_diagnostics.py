"""Diagnostics of a fit: information criteria, F-tests and pole ellipses against their
published forms; the fit results as a record that round-trips its JSON; the registry of
fit methods; short reprs; problems of the model itself as ModelError.

Sources: Draper and Smith (1998), Applied Regression Analysis, 3rd ed.: for nested linear
models differing by one coefficient the extra-sum-of-squares F equals the square of that
coefficient's t statistic; Burnham and Anderson (2002), Model Selection and Multimodel
Inference, sec. 2.2: AIC = n ln(RSS/n) + 2k for least squares; Schwarz (1978): BIC;
scipy.stats for the t, F and chi-square distributions.
"""

import json

import numpy as np
import pytest
from scipy import stats

from torque import compute_torques, inference
from torque.errors import InputError, ModelError, TorqueError
from torque.euler import RAD_S_PER_DEG_MYR
from torque.hypothesis import hypothesis_from_dict
from torque.inference.analysis import analyse
from torque.inference.solvers import predict
from torque.inference.system import assemble
from torque.io import (
    Inputs,
    dumps,
    fit_from_dict,
    load_hypothesis,
    load_world,
    read_fit,
    read_motions,
    write_json,
)
from torque.present.maps import MapInputs

from .conftest import here

DEMO = here().parent / "polygons_demo"


@pytest.fixture(scope="module")
def demo_fit():
    world = load_world(DEMO / "world.toml")
    motions = read_motions(DEMO / "motions.csv")
    hyp = load_hypothesis(DEMO / "hypotheses" / "ridge_drag.toml")
    omega = motions.for_world(world)
    terms = compute_torques(world, hyp, omega)
    system = assemble(world, hyp, terms)
    return world, motions, terms, system, analyse(system, omega)


def test_reprs_are_short_and_name_what_matters(demo_fit):
    world, motions, terms, system, report = demo_fit
    inputs = Inputs.load(DEMO / "world.toml")
    texts = [repr(x) for x in (world, world.geometry, motions, *terms, system, report,
                               report.preferred, report.result(), world.boundary_set,
                               inputs, inputs.continental_part, MapInputs(inputs, motions.omega),
                               inputs.context(load_hypothesis(DEMO / "hypotheses" /
                                                              "ridge_drag.toml")))]
    for t in texts:
        assert len(t) < 300 and "array(" not in t, t
    assert "14 plates" in repr(world) and "'Orrery'" in repr(world)
    assert "drag_all" in repr(system) and "1 free" in repr(system)
    assert "velocity-dependent" in repr(terms[1])
    assert repr(report.preferred).startswith("Fit('velocity', ridge=1,")


def test_model_problems_are_model_errors(demo_fit):
    world, motions, *_ = demo_fit
    hyp = hypothesis_from_dict({"force": [{"kind": "ridge", "coefficient": 1.0}]})
    system = assemble(world, hyp, compute_torques(world, hyp, motions.for_world(world)))
    with pytest.raises(ModelError, match="resists the motion of any plate") as info:
        predict(system, system.fixed)
    # a sibling of InputError under TorqueError (issue 25): the input was readable
    assert isinstance(info.value, TorqueError) and not isinstance(info.value, InputError)
    free = hypothesis_from_dict({"force": [{"kind": "ridge", "coefficient": "free"},
                                           {"kind": "drag", "coefficient": "free"}]})
    system = assemble(world, free, compute_torques(world, free, motions.for_world(world)))
    with pytest.raises(ModelError, match="every coefficient is free"):
        analyse(system, motions.for_world(world))
    assert np.all(np.isnan(system.fixed))


def test_f_test_equals_t_squared_and_information_criteria():
    # Draper and Smith (1998): nested models differing by one coefficient have F = t^2.
    rng = np.random.default_rng(4)
    n = 60
    X = np.c_[np.ones(n), rng.normal(size=n), rng.normal(size=n)]
    y = X @ [1.0, 0.5, 0.3] + rng.normal(scale=0.8, size=n)
    rss = []
    for cols in ([0, 1], [0, 1, 2]):
        b, *_ = np.linalg.lstsq(X[:, cols], y, rcond=None)
        rss.append(float(np.sum((y - X[:, cols] @ b) ** 2)))
    b, *_ = np.linalg.lstsq(X, y, rcond=None)
    s2 = rss[1] / (n - 3)
    se = np.sqrt(s2 * np.linalg.inv(X.T @ X)[2, 2])
    t = b[2] / se
    res = inference.f_test(rss[0], 2, rss[1], 3, n)
    assert res["F"] == pytest.approx(t**2, rel=1e-10)
    assert res["p_value"] == pytest.approx(2 * stats.t.sf(abs(t), n - 3), rel=1e-8)
    # Burnham and Anderson (2002): AIC = n ln(RSS/n) + 2k; BIC = n ln(RSS/n) + k ln n
    ic = inference.information_criteria(rss[1], n, 3)
    assert ic["aic"] == pytest.approx(n * np.log(rss[1] / n) + 6)
    assert ic["bic"] == pytest.approx(n * np.log(rss[1] / n) + 3 * np.log(n))
    # Hurvich and Tsai (1989), Biometrika 76: AICc with the variance a parameter, K = k + 1
    assert ic["aicc"] == pytest.approx(ic["aic"] + 2 * 4 * 5 / (n - 5))


def test_pole_ellipse_against_chi_square():
    # An isotropic covariance s^2 I of an Euler vector of rate w gives a circular 95 %
    # region of angular radius sqrt(chi2_2(0.95)) s / w (scipy.stats.chi2).
    w = np.array([0.0, 0.0, 1.0]) * RAD_S_PER_DEG_MYR
    s = 0.01 * RAD_S_PER_DEG_MYR
    e = inference.pole_ellipse(w, s**2 * np.eye(3))
    r = np.degrees(np.sqrt(stats.chi2.ppf(0.95, 2)) * s / np.linalg.norm(w))
    assert e["major_deg"] == pytest.approx(r) and e["minor_deg"] == pytest.approx(r)
    assert e["rate_stderr_deg_myr"] == pytest.approx(0.01)


def test_pole_ellipse_of_a_rank_deficient_covariance():
    # A covariance s^2 v v^T moves the Euler vector along v only. Along the pole itself (v
    # = the rate's direction) the pole does not move: both axes 0, whatever rounding adds;
    # along a tangent direction, the major axis is sqrt(chi2_2(0.95)) s / w along v and the
    # minor is 0 (definition of the linearised ellipse; scipy.stats.chi2). A circle's
    # azimuth is undefined and reported as 0.
    rate = RAD_S_PER_DEG_MYR
    w = np.array([0.0, 0.0, 1.0]) * rate
    s = 0.01 * rate
    noise = 1e-18 * s ** 2 * np.array([[1.0, 0.3, 0.0], [0.3, 2.0, 0.0], [0.0, 0.0, 0.0]])
    along = inference.pole_ellipse(w, s ** 2 * np.outer([0, 0, 1.0], [0, 0, 1.0]) + noise)
    assert along["major_deg"] == 0.0 and along["minor_deg"] == 0.0
    assert along["rate_stderr_deg_myr"] == pytest.approx(0.01)
    east = inference.pole_ellipse(np.array([1.0, 0.0, 0.0]) * rate,
                                    s ** 2 * np.outer([0, 1.0, 0], [0, 1.0, 0]) + noise)
    k = np.sqrt(stats.chi2.ppf(0.95, 2))
    assert east["major_deg"] == pytest.approx(np.degrees(k * s / rate))
    assert east["minor_deg"] == 0.0
    assert east["azimuth_deg"] == pytest.approx(90.0)
    circle = inference.pole_ellipse(w, s ** 2 * np.eye(3) + noise)
    assert circle["azimuth_deg"] == 0.0


def test_fit_result_round_trips_its_json(demo_fit, tmp_path):
    # What torque fit writes is read back into the same record (JSON keeps every digit of
    # a float: Python writes the shortest repr that reads back exactly).
    *_, report = demo_fit
    result = report.result(notes=("a note",))
    back = fit_from_dict(json.loads(dumps(result.as_dict())))
    assert back == result
    write_json(tmp_path / "fit.json", result.as_dict())
    assert read_fit(tmp_path / "fit.json", result.plate_names) == result
    with pytest.raises(InputError, match="other plates"):
        read_fit(tmp_path / "fit.json", result.plate_names[::-1])
    with pytest.raises(InputError, match="another hypothesis"):
        result.values(["drag_all", "slab"])
    assert result.values(["drag_all"]) == [result.coefficients["drag_all"].value]


def test_fit_result_refuses_what_is_not_a_fit(tmp_path):
    with pytest.raises(InputError, match="not the JSON output of torque fit"):
        fit_from_dict({"coefficients": {}}, file="x.json")
    with pytest.raises(InputError, match="no numeric 'value'"):
        fit_from_dict({"coefficients": {"slab": {"value": "high"}}, "plates": []})


def test_a_new_fit_method_plugs_in_without_editing_analyse(demo_fit, monkeypatch):
    # a method registered after the others sees their fits and is run and kept
    world, motions, terms, system, _ = demo_fit
    seen = {}

    def halfway(system, omega_obs, earlier, weighting):
        seen.update(earlier)
        t, v = earlier["torque"], earlier["velocity"]
        return inference.Fit(system, "halfway", (t.values + v.values) / 2, v.stderr, v.cov,
                           v.rss, v.dof)

    monkeypatch.setitem(inference.FIT_METHODS, "halfway",
                        inference.FitMethod("halfway", halfway, "the mean of the others"))
    report = analyse(system, motions.for_world(world))
    assert list(report.fits) == ["torque", "velocity", "halfway"]
    assert set(seen) == {"torque", "velocity"}
    np.testing.assert_allclose(report.fits["halfway"].values,
                               (report.torque_fit.values + report.velocity_fit.values) / 2)
    # the preferred fit is still the velocity-space one, and a caller may leave one out
    assert report.preferred is report.velocity_fit
    assert list(analyse(system, motions.for_world(world),
                        methods=("torque", "velocity")).fits) == ["torque", "velocity"]


def test_observed_poles_get_ellipses_from_their_covariance(tmp_path, cli):
    # The demo's motions carry an isotropic covariance (0.01 deg/Myr)^2 I: each observed
    # pole's 95 % region is then a circle of angular radius sqrt(chi2_2(0.95)) s / w
    # (scipy.stats.chi2), w the plate's rate.
    status, _, err = cli("fit", DEMO / "world.toml", DEMO / "hypotheses" / "ridge_drag.toml",
                         DEMO / "motions.csv", "-o", tmp_path / "f.json")
    assert status == 0, err
    fit = read_fit(tmp_path / "f.json")
    k = np.sqrt(stats.chi2.ppf(0.95, 2))
    for p in fit.plates:
        e, rate = p.observed_pole_ellipse, p.observed.rate
        r = np.degrees(k * 0.01 / rate)
        assert e["major_deg"] == pytest.approx(r, rel=1e-6)
        assert e["minor_deg"] == pytest.approx(r, rel=1e-6)
        assert e["rate_stderr_deg_myr"] == pytest.approx(0.01, rel=1e-6)


def test_the_prediction_ellipse_adds_the_observations_covariance(tmp_path, cli):
    # With ridge push fixed and one drag coefficient c free, the balance gives omega
    # proportional to 1 / c: the predicted pole does not move with c, so the coefficients'
    # ellipse is a point (rounding noise) though the pole is uncertain; the prediction ellipse
    # (coefficients plus the observation's covariance, as a regression's prediction
    # interval adds the noise variance: Draper and Smith 1998, sec. 3.1). The demo's
    # covariance is (0.01 deg/Myr)^2 I, whose projection on the predicted pole's tangent
    # plane is isotropic, of angular radius s / w_pred: both squared semi-axes grow by
    # (k s / w_pred)^2, k^2 = chi2_2(0.95) (scipy.stats.chi2).
    status, _, err = cli("fit", DEMO / "world.toml", DEMO / "hypotheses" / "ridge_drag.toml",
                         DEMO / "motions.csv", "-o", tmp_path / "f.json", "--no-profile")
    assert status == 0, err
    fit = read_fit(tmp_path / "f.json")
    k = np.sqrt(stats.chi2.ppf(0.95, 2))
    for p in fit.plates:
        coef, pred = p.pole_ellipse, p.prediction_ellipse
        r2 = np.degrees(k * 0.01 / p.predicted.rate) ** 2
        assert pred["major_deg"] ** 2 == pytest.approx(coef["major_deg"] ** 2 + r2, rel=1e-6)
        assert pred["minor_deg"] ** 2 == pytest.approx(coef["minor_deg"] ** 2 + r2, rel=1e-6)
        assert coef["major_deg"] < 1e-3 * pred["minor_deg"]
