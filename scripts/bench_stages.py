"""The stage series on one and two workers, and the work of one task, for the README's
scale-on-paper section.

    python scripts/bench_stages.py [--draws N] [--step DEG]

1. The demo series (5 stages, 3 hypotheses: balances, joint fits, leave-one-plate-out
   cross-validation) with N Monte Carlo draws, on this process, a pool of 2 processes and
   a local Dask cluster of 2 workers: wall times and the speed-up of 2 workers over 1.
2. One task at the scale of a real study: one stage's balance on a 60-plate world with a
   global age grid of step DEG (0.1 degree: 6.5 million nodes), and one draw of a physics
   Monte Carlo on it (the terms rebuilt under drawn physics, the node labels kept), with
   their peak memory; and one joint refit of the demo series (a motions draw).
"""

from __future__ import annotations

import argparse
import os
import resource
import sys
import time
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
sys.path.insert(0, str(Path(__file__).resolve().parent))

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
SERIES = ROOT / "polygons_demo" / "stages" / "series.toml"


def series_times(draws):
    from torque.workflows import run_series
    from torque.parallel import Executor
    out = {}
    for label, kw in (("1 process", {"jobs": 1}), ("pool of 2", {"jobs": 2}),
                      ("Dask, 2 workers", {"scheduler": "local:2"})):
        try:
            with Executor(**kw, preload=("torque.io.series",)) as ex:
                t = time.perf_counter()
                r = run_series(SERIES, ex, monte_carlo=draws, seed=0)
                out[label] = (time.perf_counter() - t, r.fit.parameters.copy())
        except Exception as exc:  # noqa: BLE001 - a missing optional extra, say
            print(f"{label}: not run ({exc})")
    return out


def one_draw_of_the_series():
    import dataclasses

    from torque.io.series import load_stage, read_series
    from torque.parallel import spawn_seeds
    from torque.inference.stages import draw_motions, fit_joint
    s = read_series(SERIES)
    stages = [load_stage((st, s.hypothesis)) for st in s.stages]
    start = fit_joint(stages).parameters
    times = []
    for ss in spawn_seeds(0, 5):
        drawn = [dataclasses.replace(st, omega_obs=w)
                 for st, w in zip(stages, draw_motions(stages, ss))]
        t = time.perf_counter()
        fit_joint(drawn, start=start)
        times.append(time.perf_counter() - t)
    return float(np.median(times)), len(stages)


def big_stage(step):
    import synthetic_world as sw

    from torque import WorldData, compute_torques
    from torque.hypothesis import hypothesis_from_dict
    from torque.lithosphere import Physics
    world = sw.world()
    data = WorldData(world, ages=sw.ages(step), continents=sw.continents())
    omega = sw.motions(60)
    hyp = hypothesis_from_dict({"force": [
        {"kind": "ridge"}, {"kind": "slab", "age_myr": 80.0},
        {"kind": "drag", "region": "ocean"}, {"kind": "drag", "region": "continent"},
        {"kind": "transform"}]})
    t = time.perf_counter()
    compute_torques(data, hyp, omega)
    build = time.perf_counter() - t
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    draws = []
    rng = np.random.default_rng(0)
    for _ in range(3):
        drawn = hypothesis_from_dict({"force": [dict(f) for f in [
            {"kind": "ridge"}, {"kind": "slab", "age_myr": 80.0},
            {"kind": "drag", "region": "ocean"}, {"kind": "drag", "region": "continent"},
            {"kind": "transform"}]], "physics": {
                "expansivity": float(Physics().expansivity * (1 + 0.05 * rng.standard_normal())),
                "plate_thickness_km": float(rng.uniform(85, 105))}})
        t = time.perf_counter()
        compute_torques(data, drawn, omega)
        draws.append(time.perf_counter() - t)
    return build, float(np.median(draws)), peak_mb, data.ages.age_myr.size


def main():
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--draws", type=int, default=200)
    ap.add_argument("--step", type=float, default=0.1)
    args = ap.parse_args()
    times = series_times(args.draws)
    base = times["1 process"][0]
    print(f"## The demo series ({args.draws} Monte Carlo draws), {os.cpu_count()} cores")
    print("| executor | wall time | speed-up | same numbers as 1 process |")
    print("|---|---|---|---|")
    for label, (t, p) in times.items():
        same = np.allclose(p, times["1 process"][1], rtol=1e-12, atol=0)
        print(f"| {label} | {t:.2f} s | {base / t:.2f}x | {'yes' if same else 'NO'} |")
    draw, n_stages = one_draw_of_the_series()
    print(f"\none joint refit of the demo series ({n_stages} stages, one motions draw): "
          f"{1e3 * draw:.0f} ms")
    build, phys, peak, nodes = big_stage(args.step)
    print(f"one stage at {args.step:g} degree (60 plates, {nodes:,} age nodes): balance "
          f"{build:.2f} s, one physics draw {phys:.2f} s, peak memory {peak:.0f} MB")
    tasks = 10_000 * 12
    print(f"\na physics Monte Carlo of 10,000 draws over 12 stages: {tasks:,} tasks of "
          f"{phys:.2f} s = {tasks * phys / 3600:.0f} CPU hours; on 100 single-core workers "
          f"{tasks * phys / 100 / 3600:.1f} h, each holding one stage ({peak:.0f} MB)")


if __name__ == "__main__":
    main()
