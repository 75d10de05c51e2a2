"""Throughput of the velocity field: 1,000,000 points, plate assignment included, on a
60-plate world of about 100,000 vertices (target >= 1 million points/s on one core).

    python scripts/bench_kinematics.py [--points N] [--repeat K]
"""

from __future__ import annotations

import argparse
import os

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
from bench_geometry import median_time, voronoi_world  # noqa: E402

from torque import euler  # noqa: E402
from torque.world import PlateGeometry, World  # noqa: E402


def main():
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--points", type=int, default=1_000_000)
    ap.add_argument("--repeat", type=int, default=7)
    args = ap.parse_args()
    xyz, start = voronoi_world(60, 100_000)
    n = 60
    geom = PlateGeometry(xyz, start, np.arange(n), np.zeros(n, bool), np.arange(n), n)
    world = World(tuple(), geom, tuple())
    geom.locator  # set-up is not part of the per-call figure
    rng = np.random.default_rng(0)
    omega = euler.pole_to_vector(rng.uniform(-90, 90, n), rng.uniform(-180, 180, n),
                                 rng.uniform(0.1, 2, n))
    lon = rng.uniform(-180, 180, args.points)
    lat = np.degrees(np.arcsin(rng.uniform(-1, 1, args.points)))
    t = median_time(lambda: euler.velocity_field(world, omega, lon, lat), args.repeat)
    print("| stage | size | median time | throughput | target |")
    print("|---|---|---|---|---|")
    print(f"| velocity field (assignment included) | {args.points:,} points | "
          f"{t * 1e3:.0f} ms | {args.points / t / 1e6:.2f} M points/s | >= 1 M points/s |")


if __name__ == "__main__":
    main()
