"""Throughput of the geometry core (issue targets, one core).

* exact moments (area, first, second) of 60 plates with about 100,000 vertices in all:
  target >= 2 million vertices/s;
* assigning 1,000,000 random points to those 60 plates: target >= 1 million points/s
  (set-up of the locator reported separately).

    python scripts/bench_geometry.py [--vertices N] [--points N] [--repeat K]
"""

from __future__ import annotations

import argparse
import os
import platform
import time

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402

from torque import sphere  # noqa: E402

from torque import polygons
from torque.locate import PlateLocator  # noqa: E402

import synthetic_world  # noqa: E402


def voronoi_world(n_plates: int, n_vertices: int, seed: int = 1):
    """Concatenated rings and ring starts of the synthetic benchmark world's plates
    (:func:`synthetic_world.plates`, about ``n_vertices`` vertices)."""
    geom, _, _ = synthetic_world.plates(n_plates, n_vertices, seed)
    return geom.xyz, geom.ring_start


def median_time(fn, repeat):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return float(np.median(times))


def main():
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--vertices", type=int, default=100_000)
    ap.add_argument("--points", type=int, default=1_000_000)
    ap.add_argument("--plates", type=int, default=60)
    ap.add_argument("--repeat", type=int, default=7)
    args = ap.parse_args()

    xyz, start = voronoi_world(args.plates, args.vertices)
    n = args.plates
    owner, hole = np.arange(n), np.zeros(n, bool)
    t_mom = median_time(lambda: polygons.region_moments(xyz, start, owner, hole, n), args.repeat)
    t_build = median_time(lambda: PlateLocator(xyz, start, owner, hole, n), 3)
    loc = PlateLocator(xyz, start, owner, hole, n)
    pts = sphere.normalize(np.random.default_rng(2).normal(size=(args.points, 3)))
    t_loc = median_time(lambda: loc.locate(pts), args.repeat)

    print(f"machine: {platform.machine()}, {os.cpu_count()} cores, Python "
          f"{platform.python_version()}, numpy {np.__version__}")
    print("| stage | size | median time | throughput | target |")
    print("|---|---|---|---|---|")
    print(f"| exact moments | {len(xyz):,} vertices, {n} plates | {t_mom * 1e3:.1f} ms | "
          f"{len(xyz) / t_mom / 1e6:.2f} M vertices/s | >= 2 M vertices/s |")
    print(f"| locator set-up | {len(xyz):,} vertices | {t_build * 1e3:.0f} ms | | |")
    print(f"| point assignment | {args.points:,} points | {t_loc * 1e3:.0f} ms | "
          f"{args.points / t_loc / 1e6:.2f} M points/s | >= 1 M points/s |")


if __name__ == "__main__":
    main()
