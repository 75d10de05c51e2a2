"""Torques in the field's units (issue 14, item 1): magnitudes in 10^25 N m, poles,
totals that are the balance's residual, equivalent forces, and the torques command.

Sources: the demo's noise-free motions (polygons_demo/true_motions.csv) were made by the
forward model from the coefficients in truth.json, so at those coefficients and motions
every plate's torques sum to zero (Solomon, Sleep and Richardson 1975: plates do not
accelerate); a force F tangent at r exerts the torque R r x F (any mechanics text).
"""

import csv
import json

import numpy as np
import pytest

import torque
from torque.euler import vector_to_pole
from torque.results import TORQUE_UNIT_NM, TorqueTable

from .conftest import here

DEMO = here().parent / "polygons_demo"


@pytest.fixture(scope="module")
def truth_table():
    truth = json.loads((DEMO / "truth.json").read_text())
    inputs = torque.Inputs.load(DEMO / "world.toml")
    hyp = torque.load_hypothesis(DEMO / truth["hypothesis_file"])
    true = torque.read_motions(DEMO / "true_motions.csv").for_world(inputs.world)
    terms = torque.compute_torques(inputs, hyp, true)
    coefs = [truth["true_coefficients"][t.label] for t in terms]
    return TorqueTable.from_terms(inputs.world, terms, coefs, true,
                                  ["fixed" if not t.spec.free else "fitted" for t in terms])


def test_at_the_true_coefficients_every_plate_is_in_balance(truth_table):
    t = truth_table
    assert t.complete
    largest = np.linalg.norm(t.torque_nm, axis=-1).max(axis=1)
    assert np.all(np.linalg.norm(t.total_nm, axis=1) < 1e-7 * largest)


def test_magnitudes_poles_and_equivalent_forces(truth_table):
    t = truth_table
    np.testing.assert_allclose(t.magnitude * TORQUE_UNIT_NM,
                               np.linalg.norm(t.torque_nm, axis=-1), rtol=1e-14)
    lat, lon = (a.ravel() for a in t.pole)
    vlat, vlon, _ = vector_to_pole(t.torque_nm.reshape(-1, 3))
    some = np.any(t.torque_nm.reshape(-1, 3), axis=1)
    assert np.isnan(lat[~some]).all() and (~some).any()      # no pole for no torque
    np.testing.assert_allclose(lat[some], vlat[some], atol=1e-9)
    np.testing.assert_allclose(np.cos(np.radians(lon[some] - vlon[some])), 1.0, atol=1e-12)
    # R c x F gives back the torque less its component along the centroid
    east, north = torque.sphere.east_north(t.centroid)
    fe = t.equivalent_force_n()
    F = fe[..., :1] * east[:, None, :] + fe[..., 1:] * north[:, None, :]
    back = t.radius_m * np.cross(t.centroid[:, None, :], F)
    along = np.einsum("pki,pi->pk", t.torque_nm, t.centroid)
    want = t.torque_nm - along[..., None] * t.centroid[:, None, :]
    np.testing.assert_allclose(back, want, atol=1e-9 * np.abs(t.torque_nm).max())


def test_largest_terms_come_first(truth_table):
    t = truth_table
    for p, row in enumerate(t.largest(3)):
        mags = [m for _, m in row]
        assert mags == sorted(mags, reverse=True)
        assert mags[0] == pytest.approx(t.magnitude[p].max())


def test_the_command_takes_fitted_coefficients_and_says_so(cli, tmp_path):
    world, hyp = DEMO / "world.toml", DEMO / "hypotheses" / "ridge_slab_drag.toml"
    assert cli("fit", world, hyp, DEMO / "motions.csv", "-o", tmp_path / "f.json",
               "--no-profile")[0] == 0
    fit = torque.io.read_fit(tmp_path / "f.json")
    status, out, _ = cli("torques", world, hyp, "--motions", DEMO / "motions.csv",
                         "--coefficients", tmp_path / "f.json", "-o", tmp_path / "t.csv")
    assert status == 0 and "at the fitted coefficients" in out and "10^25 N m" in out
    rows = list(csv.DictReader(open(tmp_path / "t.csv")))
    # the contract's columns come first, in its order (../shared/interface.md)
    assert list(rows[0])[:6] == ["plate", "term", "coefficient", "tx_nm", "ty_nm", "tz_nm"]
    slab = [r for r in rows if r["term"] == "slab"]
    assert {r["coefficient_source"] for r in slab} == {"fitted"}
    assert float(slab[0]["coefficient"]) == pytest.approx(fit.coefficients["slab"].value)
    totals = [r for r in rows if r["term"] == "total"]
    assert len(totals) == 14
    # without a fit, free terms are at 1, each row says so, and no total is written
    status, out, _ = cli("torques", world, hyp, "--motions", DEMO / "motions.csv",
                         "-o", tmp_path / "u.csv")
    assert status == 0 and "no fit given" in out
    rows = list(csv.DictReader(open(tmp_path / "u.csv")))
    assert {r["coefficient_source"] for r in rows if r["term"] == "slab"} == {"unit"}
    assert not [r for r in rows if r["term"] == "total"]
