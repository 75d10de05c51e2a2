"""One verdict from every command (issue 25): a fit's frame, coefficients and statistics
mean the same in ``fit``, ``torques``, ``predict``, ``map``, ``frame`` and ``stages``.

Sources: the torque balance itself (Solomon, Sleep and Richardson 1975; Chapple and Tullis
1977: at the fitted coefficients the torques on a plate sum to the fit's residual torque,
whatever command adds them up); a one-stage series is by definition the fit of that one
world, so both must give the same numbers to rounding (common practice, no source).
The demo is invented data; the published model (Bird 2003, ../shared/data) holds plate G01
fixed in its motions, the case that exposed the dropped frame.
"""

import csv
import json

import numpy as np
import pytest

from torque import workflows
from torque.euler import pole_to_vector
from torque.io import read_fit, read_motions

from .conftest import here

DEMO = here().parent / "polygons_demo"
MODEL = here().parents[1] / "shared" / "data" / "global-plates-2003"
HYP = DEMO / "hypotheses" / "ridge_slab_drag.toml"


def _totals(csv_path) -> dict:
    return {r["plate"]: np.array([float(r[k]) for k in ("tx_nm", "ty_nm", "tz_nm")])
            for r in csv.DictReader(open(csv_path)) if r["term"] == "total"}


def _check_balance(cli, tmp_path, world, hyp, motions):
    """A free-frame fit, then torques at its coefficients: each plate's total is the fit's
    residual torque (to the CSV's 10 digits), and every plate feels drag."""
    fit = tmp_path / "fit.json"
    assert cli("fit", world, hyp, motions, "--free-frame", "--no-profile", "-o", fit)[0] == 0
    out = tmp_path / "torques.csv"
    status, _, err = cli("torques", world, hyp, "--motions", motions, "--fit", fit, "-o", out)
    assert status == 0, err
    totals = _totals(out)
    result = read_fit(fit)
    for p in result.plates:
        resid = np.array(p.residual_torque_nm)
        np.testing.assert_allclose(totals[p.plate], resid, rtol=0,
                                   atol=1e-8 * np.abs(resid).max(), err_msg=p.plate)
    drag = {r["plate"]: float(r["magnitude_1e25_nm"]) for r in csv.DictReader(open(out))
            if r["term"].startswith("drag")}
    assert min(drag.values()) > 0
    return result, drag


def test_torques_at_a_free_frame_fit_balance_every_plate_on_the_demo(cli, tmp_path):
    _check_balance(cli, tmp_path, DEMO / "world.toml", HYP, DEMO / "motions.csv")


@pytest.mark.skipif(not (MODEL / "world.toml").is_file(),
                    reason=f"the published model is not at {MODEL}")
def test_the_plate_fixed_in_the_motions_feels_drag_on_the_published_model(cli, tmp_path):
    hyp = tmp_path / "h.toml"
    hyp.write_text('name = "ridge, slab and drag"\n[[force]]\nkind = "ridge"\n'
                   'coefficient = 1.0\n[[force]]\nkind = "slab"\n[[force]]\nkind = "drag"\n')
    result, drag = _check_balance(cli, tmp_path, MODEL / "world.toml", hyp,
                                  MODEL / "motions_G01_fixed.csv")
    # G01 is at rest in the file, not over the mantle: it turns at minus the mantle's
    # rotation, and drag resists that (it was exactly 0 when the frame was dropped)
    assert np.linalg.norm(result.mantle_rotation_rad_s) > 0
    assert drag["G01"] > 1.0                                    # 10^25 N m


def test_maps_of_one_fit_show_the_drag_the_fit_reports(cli, tmp_path):
    # the torque chart and the torque globe draw one table; projected on each plate's
    # driving torque its drag is the budget chart's share (force_budget's definition)
    fit = tmp_path / "fit.json"
    assert cli("fit", DEMO / "world.toml", HYP, DEMO / "motions.csv", "--free-frame",
               "--no-profile", "-o", fit)[0] == 0
    inputs = workflows.load_inputs(DEMO / "world.toml")
    chart = workflows.map_inputs(inputs, "torques", DEMO / "motions.csv", fit=fit,
                                 hypothesis=HYP).torques
    globe = workflows.map_inputs(inputs, "torque-globe", DEMO / "motions.csv", fit=fit,
                                 hypothesis=HYP).torques
    np.testing.assert_array_equal(chart.torque_nm, globe.torque_nm)
    labels = list(chart.labels)
    drive = chart.torque_nm[:, [labels.index("ridge"), labels.index("slab")]].sum(1)
    drag = chart.torque_nm[:, labels.index("drag_all")]
    share = np.einsum("pi,pi->p", drag, drive) / np.einsum("pi,pi->p", drive, drive)
    result = read_fit(fit)
    budget = [p.budget["drag_all"] for p in result.plates]
    np.testing.assert_allclose(share, budget, rtol=1e-9)


def test_predict_at_a_fit_gives_the_fits_own_predictions(cli, tmp_path):
    fit = tmp_path / "fit.json"
    assert cli("fit", DEMO / "world.toml", HYP, DEMO / "motions.csv", "--free-frame",
               "--no-profile", "-o", fit)[0] == 0
    result = read_fit(fit)
    own = pole_to_vector(*np.array([[getattr(p.predicted, k) for k in ("lat", "lon", "rate")]
                                    for p in result.plates]).T)
    inputs = workflows.load_inputs(DEMO / "world.toml")
    motions, _ = workflows.predict_motions(inputs, HYP, fit)
    np.testing.assert_allclose(motions.omega, own, rtol=0, atol=1e-9 * np.abs(own).max())
    # the command writes them with 10 significant digits
    out = tmp_path / "p.csv"
    assert cli("predict", DEMO / "world.toml", HYP, "--fit", fit, "-o", out)[0] == 0
    written = read_motions(out).for_world(inputs.world)
    np.testing.assert_allclose(written, own, rtol=0, atol=1e-9 * np.abs(own).max())


def test_frame_moves_motions_into_a_fits_mantle_frame(cli, tmp_path):
    fit = tmp_path / "fit.json"
    world = DEMO / "world.toml"
    assert cli("fit", world, HYP, DEMO / "motions.csv", "--free-frame", "--no-profile",
               "-o", fit)[0] == 0
    out = tmp_path / "m.csv"
    status, _, err = cli("frame", world, DEMO / "motions.csv", "--to", f"mantle:{fit}",
                         "-o", out)
    assert status == 0, err
    inputs = workflows.load_inputs(world)
    moved = read_motions(out).for_world(inputs.world)
    result = read_fit(fit)
    # the fit's "observed" poles are the motions in its mantle frame
    own = pole_to_vector(*np.array([[getattr(p.observed, k) for k in ("lat", "lon", "rate")]
                                    for p in result.plates]).T)
    np.testing.assert_allclose(moved, own, rtol=0, atol=1e-9 * np.abs(own).max())


def test_the_old_frame_order_is_refused_with_the_new_command(cli, tmp_path):
    status, _, err = cli("frame", DEMO / "motions.csv", "--world", DEMO / "world.toml",
                         "--to", "nnr", "-o", tmp_path / "n.csv")
    assert status == 2 and "Traceback" not in err
    assert f"torque frame {DEMO / 'world.toml'} {DEMO / 'motions.csv'} --to nnr" in err
    assert not (tmp_path / "n.csv").exists()


def test_the_former_fit_option_name_still_works(cli, tmp_path):
    fit = tmp_path / "fit.json"
    assert cli("fit", DEMO / "world.toml", HYP, DEMO / "motions.csv", "--no-profile",
               "-o", fit)[0] == 0
    a, b = tmp_path / "a.csv", tmp_path / "b.csv"
    assert cli("predict", DEMO / "world.toml", HYP, "--coefficients", fit, "-o", a)[0] == 0
    assert cli("predict", DEMO / "world.toml", HYP, "--fit", fit, "-o", b)[0] == 0
    assert a.read_text() == b.read_text()


def _one_stage_series(cli, folder, misfit, hypotheses):
    """Run a series of the demo's present day alone, the first hypothesis compared with
    the others; its ``series_fit.json``."""
    series = folder / "one.toml"
    compare = ", ".join(f'"{h}"' for h in hypotheses[1:])
    series.write_text(f'name = "one stage"\nhypothesis = "{hypotheses[0]}"\n'
                      f'compare = [{compare}]\nmisfit = "{misfit}"\n[[stage]]\n'
                      f'time_ma = 0.0\nworld = "{DEMO}/world.toml"\n'
                      f'motions = "{DEMO}/motions.csv"\n')
    assert cli("stages", series, "-o", folder / "out", "-q")[0] == 0
    return json.loads((folder / "out" / "series_fit.json").read_text())


@pytest.mark.parametrize("misfit", ["area", "chi-square"])
def test_a_one_stage_series_is_the_fit_of_its_world(cli, tmp_path, misfit):
    joint = _one_stage_series(cli, tmp_path, misfit,
                              [DEMO / "hypotheses" / "continental_drag.toml"])["parameters"]
    fit = tmp_path / "fit.json"
    assert cli("fit", DEMO / "world.toml", DEMO / "hypotheses" / "continental_drag.toml",
               DEMO / "motions.csv", "--misfit", misfit, "--no-profile", "-o", fit)[0] == 0
    single = read_fit(fit).coefficients
    for label, p in joint.items():
        assert p["value"] == pytest.approx(single[label].value, rel=1e-9), label
        assert p["stderr"] == pytest.approx(single[label].stderr, rel=1e-9), label


def test_a_known_covariance_is_not_rescaled(cli, tmp_path):
    # with the chi-square the covariance is known: standard errors do not move with the
    # reduced chi-square (the demo's is about 1.47, which used to scale them by 1.21)
    from torque.inference.covariance import variance_factor
    assert variance_factor(57.5, 39, known=True) == 1.0
    assert variance_factor(57.5, 39, known=False) == pytest.approx(57.5 / 39)
    fit = tmp_path / "fit.json"
    assert cli("fit", DEMO / "world.toml", DEMO / "hypotheses" / "continental_drag.toml",
               DEMO / "motions.csv", "--misfit", "chi-square", "-o", fit)[0] == 0
    result = read_fit(fit)
    assert result.misfit["reduced_chi_square"] > 1.2
    slab = result.coefficients["slab"]
    # the profile interval uses the same variance: for a nearly linear coefficient its
    # half-width is 1.96 standard errors (Draper and Smith 1998, sec. 24.5), not 1.96
    # standard errors times the square root of the reduced chi-square
    half = (slab.profile_high - slab.profile_low) / 2
    assert half == pytest.approx(1.96 * slab.stderr, rel=0.05)


@pytest.mark.parametrize("misfit", ["area", "chi-square"])
def test_a_one_stage_series_recommends_what_rank_recommends(cli, tmp_path, misfit):
    # one rule for one misfit: the series' recommendation (joint fits, their tests) is
    # rank's on the same world, motions and hypotheses
    hyps = [DEMO / "hypotheses" / f"{h}.toml" for h in
            ("continental_drag", "ridge_slab_drag", "ridge_drag")]
    rec = _one_stage_series(cli, tmp_path, misfit, hyps)["recommendation"]
    out = tmp_path / "rank.json"
    assert cli("rank", DEMO / "world.toml", DEMO / "motions.csv", *hyps, "--misfit", misfit,
               "--json", out)[0] == 0
    ranked = json.loads(out.read_text())
    assert rec["rule"] == ranked["rule"]
    assert rec["recommended"] == ranked["recommended"]
