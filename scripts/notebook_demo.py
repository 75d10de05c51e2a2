"""The demo planet from Python, cell by cell (a notebook in script form).

Each ``# %%`` starts a cell: open this file in an editor that runs cells (or paste the cells
into a notebook), or run it whole: ``python scripts/notebook_demo.py [OUTDIR]``. Every
result shows itself as a small table in a notebook (``_repr_html_``) and converts to pandas
(``to_dataframe()``) and xarray (``to_dataset()``). Synthetic data: the demo's "observed"
motions were made by the forward model (polygons_demo/truth.json).
"""

# %% The world and its data, read and checked once
import sys
from pathlib import Path

import torque
from torque.present import maps
from torque.inference.analysis import analyse
from torque.inference.ranking import rank
from torque.results import TorqueTable

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "polygons_demo"
OUT = Path(sys.argv[1]) if len(sys.argv) > 1 else Path("notebook-demo")
OUT.mkdir(parents=True, exist_ok=True)
inputs = torque.Inputs.load(DEMO / "world.toml")
motions = torque.read_motions(DEMO / "motions.csv")
omega = motions.for_world(inputs.world)
motions.to_dataframe().head()

# %% Fit the true hypothesis by its chi-square, with the mantle's rotation fitted too
hyp = torque.load_hypothesis(DEMO / "hypotheses" / "continental_drag.toml")
terms = torque.compute_torques(inputs, hyp, omega)
system = torque.assemble(inputs.world, hyp, terms)
report = analyse(system, omega, free_frame=True,
                 obs_cov=motions.cov_for_world(inputs.world), profile=True)
fit = report.result(observed_cov=motions.cov_for_world(inputs.world))
fit                                   # a table in a notebook

# %% Per-plate results as a DataFrame, and everything as an xarray Dataset
plates = fit.to_dataframe()
print(plates[["pole_distance_deg", "rms_velocity_mm_yr"]].round(3))
print(fit.to_dataset())

# %% The torques at the fitted coefficients, in 10^25 N m
coefs = [fit.coefficients[t.label].value for t in terms]
torques = TorqueTable.from_terms(inputs.world, terms, coefs, report.omega_obs,
                                 ["fitted" if t.spec.free else "fixed" for t in terms])
print(torques.to_dataset()["magnitude_1e25_nm"].round(2).to_pandas())

# %% Rank the five hypotheses of the demo by cross-validation
systems = [torque.assemble(inputs.world, h, torque.compute_torques(inputs, h, omega))
           for h in (torque.load_hypothesis(p)
                     for p in sorted((DEMO / "hypotheses").glob("*.toml")))]
ranking, tests = rank(systems, omega)
print(ranking.to_dataframe()[["cv_rms_mm_yr", "cv_stderr_mm_yr", "within_one_se"]])

# %% One map: the poles with their ellipses, zoomed plate by plate
path = maps.poles_map(inputs.world, OUT / "poles.png", fit)
print(f"wrote {path}")
