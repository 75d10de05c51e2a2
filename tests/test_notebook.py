"""Results in a notebook (issue 14, item 7): small HTML tables, pandas DataFrames and
xarray Datasets that hold the same numbers as the JSON (checked against it), and the
notebook-style script that runs the demo from Python."""

import json
import subprocess
import sys

import numpy as np
import pytest

import torque
from torque.inference.ranking import rank
from torque.results import TorqueTable

from .conftest import demo_system, here

ROOT = here().parent


@pytest.fixture(scope="module")
def fit(tmp_path_factory):
    from torque.cli import main
    out = tmp_path_factory.mktemp("nb") / "fit.json"
    assert main(["fit", str(ROOT / "polygons_demo" / "world.toml"),
                 str(ROOT / "polygons_demo" / "hypotheses" / "continental_drag.toml"),
                 str(ROOT / "polygons_demo" / "motions.csv"), "-o", str(out)]) == 0
    return out


def test_a_fit_converts_without_losing_a_number(fit):
    doc = json.loads(fit.read_text())
    result = torque.io.read_fit(fit)
    df = result.to_dataframe()
    assert list(df.index) == [p["plate"] for p in doc["plates"]]
    np.testing.assert_array_equal(df["rms_velocity_mm_yr"],
                                  [p["rms_velocity_mm_yr"] for p in doc["plates"]])
    np.testing.assert_array_equal(df["predicted_lat"],
                                  [p["predicted"]["lat"] for p in doc["plates"]])
    coefs = result.to_dataframe("coefficients")
    assert coefs.loc["slab", "value"] == doc["coefficients"]["slab"]["value"]
    ds = result.to_dataset()
    assert dict(ds.sizes) == {"plate": 14, "term": 4}
    assert float(ds["coefficient_value"].sel(term="slab")) == doc["coefficients"]["slab"]["value"]
    assert ds.attrs["rms_velocity_mm_yr"] == doc["misfit"]["rms_velocity_mm_yr"]
    html = result._repr_html_()
    assert html.startswith("<table>") and "drag_continent" in html


def test_motions_rankings_and_torques_convert():
    system, omega, motions = demo_system("ridge_drag")
    df = motions.to_dataframe()
    lat, lon, rate = motions.poles
    np.testing.assert_array_equal(df["rate"], rate)
    assert "cov_xx" in df and dict(motions.to_dataset().sizes)["plate"] == 14
    assert "<table>" in motions._repr_html_()
    other, _, _ = demo_system("slab_drag")
    rows, _ = rank([system, other], omega)
    frame = rows.to_dataframe()
    assert list(frame.index) == [r.name for r in rows]
    assert frame["cv_rms_mm_yr"].tolist() == [r.cv_rms_mm_yr for r in rows]
    assert "hypothesis" in rows.to_dataset().dims and "<table>" in rows._repr_html_()
    world = torque.Inputs.load(ROOT / "polygons_demo" / "world.toml").world
    terms = torque.compute_torques(world, torque.load_hypothesis(
        ROOT / "polygons_demo" / "hypotheses" / "ridge_drag.toml"), omega)
    table = TorqueTable.from_terms(world, terms[:1])
    ds = table.to_dataset()
    np.testing.assert_array_equal(ds["torque_nm"].values, table.torque_nm)
    assert len(table.to_dataframe()) == 14 + 14          # the term's rows and the totals


def test_the_notebook_script_runs_the_demo_and_draws_a_map(tmp_path):
    done = subprocess.run([sys.executable, str(ROOT / "scripts" / "notebook_demo.py"),
                           str(tmp_path)], capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    assert (tmp_path / "poles.png").read_bytes()[:4] == b"\x89PNG"
    assert "cv_rms_mm_yr" in done.stdout and "wrote" in done.stdout
