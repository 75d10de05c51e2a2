"""Issue 17's figures, before and after, in one run: this tree against an earlier commit.

    python scripts/bench_speed.py [--before REV] [--quick]

The earlier commit (default 3f69a88, the code before the issue's work) is checked out into
a temporary git worktree; every figure is measured in a fresh subprocess per tree, with
one BLAS thread:

* all torques (every force kind) of the 60-plate, 100k-vertex world at 0.1 degree
  (6.48 M age nodes), the point locator's set-up included (after the same on a small
  world, so that modules imported on first use are not counted), and the process's peak
  memory: the median time of three processes, the largest peak;
* the same at 2 arcmin (58 M nodes; skipped with --quick);
* ``torque --help`` and ``import torque`` (wall time of the process, best of 5);
* the plate locator's set-up on the demo world and on the 100k-vertex world;
* one physics Monte Carlo draw on the demo (hypothesis continental_drag, 200 draws,
  velocity-space refits), and 10,000 draws;
* ``torque demo`` (CPU time: user + system, the median of three runs).
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
ENV = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1")

TORQUES = r"""
import resource, sys, time, json
sys.path.insert(0, "{scripts}")
import synthetic_world as sw
from bench_torques import HYPOTHESIS
from torque import compute_torques
from torque.hypothesis import hypothesis_from_dict
hyp = hypothesis_from_dict(HYPOTHESIS)
# a small world first: the modules a term imports on first use are not the torques' time
small = sw.world(12, 2_000)
compute_torques(small, hyp, sw.motions(12), ages=sw.ages(4.0), flow=sw.flow(6.0),
                continents=sw.continents())
world = sw.world(); ages = sw.ages({step}); flow = sw.flow(1.0); cont = sw.continents()
omega = sw.motions(60)
t = time.perf_counter()
terms = compute_torques(world, hyp, omega, ages=ages, flow=flow, continents=cont)
dt = time.perf_counter() - t
print(json.dumps({{"s": dt, "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                  "nodes": int(ages.age_myr.size)}}))
"""

LOCATOR = r"""
import sys, time, json
sys.path.insert(0, "{scripts}")
import synthetic_world as sw
from torque.io import load_world
from torque.locate import PlateLocator
out = {{}}
for name, g in (("demo", load_world("{root}/polygons_demo/world.toml").geometry),
                ("100k", sw.world().geometry)):
    best = 1e9
    for _ in range(3):
        t = time.perf_counter()
        PlateLocator(g.xyz, g.ring_start, g.ring_plate, g.ring_is_hole, g.n_plates)
        best = min(best, time.perf_counter() - t)
    out[name] = best
print(json.dumps(out))
"""

PHYSICS = r"""
import sys, time, json
sys.path.insert(0, "{root}")
import torque
from torque.cli.balance import Problem
from torque.inference.resampling import monte_carlo_physics
inputs = torque.Inputs.load("{root}/polygons_demo/world.toml")
hyp = torque.load_hypothesis("{root}/polygons_demo/hypotheses/continental_drag.toml")
pb = Problem.build(inputs, hyp, torque.read_motions("{root}/polygons_demo/motions.csv"))
monte_carlo_physics(pb.rebuild, hyp.physics, hyp.spread, pb.omega, 5, seed=0)
t = time.perf_counter()
monte_carlo_physics(pb.rebuild, hyp.physics, hyp.spread, pb.omega, {n}, seed=0)
print(json.dumps({{"per_draw_ms": (time.perf_counter() - t) / {n} * 1e3,
                  "total_s": time.perf_counter() - t}}))
"""


def run_py(tree, code, timeout=3600):
    env = dict(ENV, PYTHONPATH=str(tree))
    out = subprocess.run([sys.executable, "-c", code], cwd=tree, env=env, capture_output=True,
                         text=True, timeout=timeout)
    if out.returncode:
        raise RuntimeError(out.stderr[-2000:])
    return json.loads(out.stdout.strip().splitlines()[-1])


def wall(tree, argv, repeat=5):
    env = dict(ENV, PYTHONPATH=str(tree))
    best = 1e9
    for _ in range(repeat):
        t = time.perf_counter()
        subprocess.run([sys.executable, *argv], cwd=tree, env=env, capture_output=True)
        best = min(best, time.perf_counter() - t)
    return best


def demo_cpu(tree, repeat=3):
    """The median CPU time (user + system) of ``repeat`` runs of ``torque demo``."""
    env = dict(ENV, PYTHONPATH=str(tree))
    runs = []
    for _ in range(repeat):
        with tempfile.TemporaryDirectory() as d:
            before = os.times()
            subprocess.run([sys.executable, "-m", "torque", "-q", "demo",
                            str(Path(d) / "out")], cwd=tree, env=env, capture_output=True,
                           check=True)
            after = os.times()
        runs.append(after.children_user - before.children_user
                    + after.children_system - before.children_system)
    return sorted(runs)[len(runs) // 2]


def measure(tree, quick, long_mc=True):
    scripts = tree / "scripts"
    r = {}
    # three fresh processes, the median time (one run varies by about 10 % here)
    runs = sorted((run_py(tree, TORQUES.format(scripts=scripts, step=0.1)) for _ in range(3)),
                  key=lambda x: x["s"])
    r["torques"] = dict(runs[1], peak_mb=max(x["peak_mb"] for x in runs))
    if not quick:
        r["torques_2min"] = run_py(tree, TORQUES.format(scripts=scripts, step=1 / 30))
    r["help_s"] = wall(tree, ["-m", "torque", "--help"])
    r["import_s"] = wall(tree, ["-c", "import torque"])
    r["locator"] = run_py(tree, LOCATOR.format(scripts=scripts, root=tree))
    r["physics"] = run_py(tree, PHYSICS.format(root=tree, n=200))
    if not quick and long_mc:
        r["physics_10k"] = run_py(tree, PHYSICS.format(root=tree, n=10_000))
    else:
        # not run: 10,000 times the 200 draws' cost per draw
        r["physics_10k"] = {"total_s": r["physics"]["per_draw_ms"] * 10}
    r["demo_cpu_s"] = demo_cpu(tree)
    return r


def main():
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--before", default="3f69a88")
    ap.add_argument("--quick", action="store_true")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        prev = Path(tmp) / "before"
        subprocess.run(["git", "worktree", "add", "--detach", str(prev), args.before],
                       cwd=ROOT, check=True, capture_output=True)
        try:
            before = measure(prev, args.quick, long_mc=False)
        finally:
            subprocess.run(["git", "worktree", "remove", "--force", str(prev)], cwd=ROOT,
                           capture_output=True)
    after = measure(ROOT, args.quick)
    rows = [("all torques, 0.1 degree (6.48 M nodes)", "s", lambda r: r["torques"]["s"]),
            ("peak memory of that process", "MB", lambda r: r["torques"]["peak_mb"])]
    if not args.quick:
        rows += [("all torques, 2 arcmin (58 M nodes)", "s",
                  lambda r: r["torques_2min"]["s"]),
                 ("peak memory of that process", "MB", lambda r: r["torques_2min"]["peak_mb"])]
    rows += [("torque --help", "s", lambda r: r["help_s"]),
             ("import torque", "s", lambda r: r["import_s"]),
             ("locator set-up, demo (72 vertices)", "s", lambda r: r["locator"]["demo"]),
             ("locator set-up, 100,166 vertices", "s", lambda r: r["locator"]["100k"]),
             ("physics Monte Carlo, one draw (demo)", "ms",
              lambda r: r["physics"]["per_draw_ms"])]
    if not args.quick:
        rows.append(("physics Monte Carlo, 10,000 draws (demo; before: 10,000 x its "
                     "cost per draw)", "s", lambda r: r["physics_10k"]["total_s"]))
    rows.append(("torque demo, CPU", "s", lambda r: r["demo_cpu_s"]))
    import platform
    print(f"Machine: {platform.machine()}, {os.cpu_count()} cores (one BLAS thread), Python "
          f"{platform.python_version()}. Before: {args.before}; after: this tree.\n")
    print("| figure | before | after | ratio |")
    print("|---|---|---|---|")
    for name, unit, get in rows:
        b, a = get(before), get(after)
        print(f"| {name} | {b:.3g} {unit} | {a:.3g} {unit} | {b / a:.2f}x |")
    (ROOT / "bench_results").mkdir(exist_ok=True)
    (ROOT / "bench_results" / "speed.json").write_text(json.dumps(
        {"before": before, "after": after, "before_rev": args.before}, indent=1))


if __name__ == "__main__":
    main()
