"""Distributed ridge push: accuracy and time of three ways of computing it, at three steps.

    python scripts/bench_ridge.py [--plates N] [--vertices N]

On the synthetic world (60 plates, no continents) with the smooth analytic age field of
``synthetic_world.ages``, the reference is the exact boundary integral ``R^2 oint F dr``
round every plate (Stokes' theorem on the sphere), by 16-point Gauss-Legendre on every
edge with the analytic ages. Compared, at 1, 0.5 and 0.25 degree:

* the approach written by hand: a lon/lat grid, a shapely point-in-polygon test per cell
  and plate, and the sum of r x grad F over cells (gradients between cells of one plate);
* the tool's grid sum (``quadrature = "grid"``, the same sum with exact point location);
* the tool's default line integral along the exact edges (``quadrature = "boundary"``).

Errors are per plate, |T - T_ref| / |T_ref|, median and maximum over plates.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
sys.path.insert(0, str(Path(__file__).resolve().parent))

import numpy as np  # noqa: E402
import shapely  # noqa: E402
import synthetic_world as sw  # noqa: E402
from bench import baseline_polygons  # noqa: E402

from torque import WorldData, compute_torques, sphere  # noqa: E402
from torque.forces.ridge import body_force_torque  # noqa: E402
from torque.hypothesis import hypothesis_from_dict  # noqa: E402
from torque.lithosphere import Cooling, Physics  # noqa: E402


def analytic_age(lon, lat):
    """The age field of ``synthetic_world.ages`` at any points (degrees)."""
    lam, phi = np.radians(lon), np.radians(lat)
    x, y, z = np.cos(phi) * np.cos(lam), np.cos(phi) * np.sin(lam), np.sin(phi)
    return 100 + 60 * x + 30 * y * z + 5 * np.sin(3 * z)


def reference(world, cooling, k=16):
    a, b, plate = world.geometry.edges
    n, theta = sphere.arc_pole(a, b)
    u = np.cross(n, a)
    x, wq = np.polynomial.legendre.leggauss(k)
    out = np.zeros((world.geometry.n_plates, 3))
    for c in range(0, len(a), 20_000):
        s = slice(c, c + 20_000)
        t = 0.5 * (x + 1)[None, :] * theta[s, None]
        r = np.cos(t)[..., None] * a[s, None] + np.sin(t)[..., None] * u[s, None]
        dr = -np.sin(t)[..., None] * a[s, None] + np.cos(t)[..., None] * u[s, None]
        F = cooling.ridge_push_n_m(analytic_age(*sphere.xyz_to_lonlat(r)))
        contrib = (F[..., None] * dr * (0.5 * theta[s, None] * wq)[..., None]).sum(1)
        np.add.at(out, plate[s], contrib)
    return out * world.radius_m ** 2


def by_hand(world, grid, cooling, polys):
    LON, LAT = np.meshgrid(grid.lon, grid.lat)
    label = np.full(LON.shape, -1)
    for p, poly in enumerate(polys):
        shapely.prepare(poly)
        inside = np.zeros(LON.shape, bool)
        for shift in (-360.0, 0.0, 360.0):
            inside |= shapely.contains_xy(poly, LON + shift, LAT)
        label[inside & (label < 0)] = p
    F = cooling.ridge_push_n_m(grid.age_myr)
    return body_force_torque(grid, F, np.maximum(label, 0), label >= 0,
                             world.geometry.n_plates, world.radius_m)


def errors(T, ref):
    e = np.linalg.norm(T - ref, axis=1) / np.linalg.norm(ref, axis=1)
    return float(np.median(e)), float(e.max())


def main():
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--plates", type=int, default=60)
    ap.add_argument("--vertices", type=int, default=100_000)
    args = ap.parse_args()
    world = sw.world(args.plates, args.vertices)
    cooling = Cooling(Physics())
    ref = reference(world, cooling)
    polys = baseline_polygons(world)
    print("| grid | method | time | error median | error max | median vs by hand |")
    print("|---|---|---|---|---|---|")
    for step in (1.0, 0.5, 0.25):
        grid = sw.ages(step)
        t = time.perf_counter()
        hand = by_hand(world, grid, cooling, polys)
        rows = [("by hand (shapely per cell, grid sum)", time.perf_counter() - t, hand)]
        for q in ("grid", "boundary"):
            data = WorldData(world, ages=grid)
            world.geometry.locator              # built once, as every command does
            t = time.perf_counter()
            term, = compute_torques(data, hypothesis_from_dict(
                {"force": [{"kind": "ridge", "quadrature": q}]}))
            rows.append((f"torque, quadrature = \"{q}\"", time.perf_counter() - t,
                         term.driving))
        base = errors(hand, ref)[0]
        for name, dt, T in rows:
            med, mx = errors(T, ref)
            print(f"| {step:g} deg | {name} | {dt:.2f} s | {100 * med:.2g} % | "
                  f"{100 * mx:.2g} % | {base / med:.3g}x |")


if __name__ == "__main__":
    main()
