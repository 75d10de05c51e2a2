"""The benchmark harness runs: its code path on a tiny world, untimed.

A change that breaks ``scripts/bench.py`` (or makes its synthetic world fail
``torque check``) fails here rather than when someone next measures speed.
"""

import importlib
import json
import sys
from pathlib import Path

import numpy as np

SCRIPTS = Path(__file__).resolve().parents[1] / "scripts"


def _bench():
    sys.path.insert(0, str(SCRIPTS))
    try:
        return importlib.import_module("bench")
    finally:
        sys.path.remove(str(SCRIPTS))


def test_synthetic_world_passes_check(tmp_path):
    bench = _bench()
    import synthetic_world as sw

    from torque import check_world   # reads the continents file too
    from torque.io import load_world
    world = sw.world(12, 2_000)
    path = bench.write_world(world, sw.ages(4.0), sw.flow(6.0), sw.continents(), tmp_path)
    report = check_world(load_world(path))
    assert report.ok, [str(p) for p in report.problems]


def test_harness_runs_on_a_tiny_world(tmp_path):
    bench = _bench()
    table = bench.run("tiny", tmp_path)
    assert "| exact moments |" in table and "Tiny run." in table
    result = json.loads((tmp_path / "bench.json").read_text())
    assert {"exact moments", "prediction", "Monte Carlo over motions (torque-space refits)",
            "Monte Carlo over motions (velocity-space refits, the default)"} <= set(
        result["stages"])
    assert all(s["seconds"] > 0 for s in result["stages"].values())
    # the grid baseline converges towards the exact drag tensors (its error is finite and
    # well under 100 % even on a 6 degree grid: common practice, no source)
    err = result["baseline"][0]["drag_tensor_error_median"]
    assert np.isfinite(err) and 0 < err < 0.5
    assert (tmp_path / "scaling.png").stat().st_size > 1000
