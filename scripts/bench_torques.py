"""All torques of a 60-plate world with a 0.1 degree global age grid (6.5 million nodes):
target at most 3 s on this machine (issue target). Every force kind is included.

    python scripts/bench_torques.py [--step DEG] [--repeat K]
"""

from __future__ import annotations

import argparse
import os
import time
from dataclasses import replace

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import synthetic_world as sw  # noqa: E402

from torque import compute_torques  # noqa: E402
from torque.hypothesis import hypothesis_from_dict  # noqa: E402
from torque.world import PlateGeometry  # noqa: E402

HYPOTHESIS = {"force": [
    {"kind": "ridge"}, {"kind": "ridge", "form": "edge", "label": "ridge_edge"},
    {"kind": "slab", "age_myr": 80.0}, {"kind": "suction", "age_myr": 80.0},
    {"kind": "drag"}, {"kind": "drag", "region": "ocean"},
    {"kind": "drag", "region": "continent"}, {"kind": "mantle"},
    {"kind": "transform"}, {"kind": "subduction_resistance"}, {"kind": "collision"}]}


def main():
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--step", type=float, default=0.1, help="age grid step, degrees")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    world = sw.world()
    ages, flow, cont = sw.ages(args.step), sw.flow(1.0), sw.continents()
    omega = sw.motions(60)
    hyp = hypothesis_from_dict(HYPOTHESIS)
    g = world.geometry
    times = []
    for _ in range(args.repeat):
        # a fresh geometry each time, so the figure includes the point locator's set-up
        fresh = replace(world, geometry=PlateGeometry(g.xyz, g.ring_start, g.ring_plate,
                                                       g.ring_is_hole, g.ring_polygon,
                                                       g.n_plates))
        t = time.perf_counter()
        terms = compute_torques(fresh, hyp, omega, ages=ages, flow=flow, continents=cont)
        times.append(time.perf_counter() - t)
    nodes = ages.age_myr.size
    print("| stage | size | median time | target |")
    print("|---|---|---|---|")
    print(f"| all torques ({len(terms)} terms, every kind; locator set-up included) | 60 plates, "
          f"{len(world.geometry.xyz):,} vertices, {nodes:,} age nodes | "
          f"{np.median(times):.2f} s | <= 3 s |")


if __name__ == "__main__":
    main()
