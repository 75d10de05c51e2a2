"""Speed of the torque balance on a 60-plate world, after the torque terms are built.

Targets (issue): fit plus prediction for 60 plates in at most 50 ms; a 10,000-member
Monte Carlo over motion uncertainties in at most 10 s.

    python scripts/bench_balance.py [--members N] [--repeat K]
"""

from __future__ import annotations

import argparse
import os
import time

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import synthetic_world as sw  # noqa: E402

from torque import inference  # noqa: E402
from torque.euler import RAD_S_PER_DEG_MYR  # noqa: E402
from torque import compute_torques  # noqa: E402
from torque.hypothesis import hypothesis_from_dict  # noqa: E402
from torque.inference.resampling import monte_carlo_motions

TRUE = [{"kind": "ridge", "form": "edge", "coefficient": 1.0},
        {"kind": "slab", "age_myr": 80.0, "coefficient": 0.07},
        {"kind": "drag", "coefficient": 4e14},
        {"kind": "transform", "coefficient": 3e20},
        {"kind": "subduction_resistance", "label": "trench", "coefficient": 8e20},
        {"kind": "collision", "coefficient": 5e20}]


def build(world, free):
    forces = [dict(f) for f in TRUE]
    if free:
        for f in forces[1:]:
            f["coefficient"] = "free"
    hyp = hypothesis_from_dict({"force": forces})
    return inference.assemble(world, hyp, compute_torques(world, hyp, np.zeros((60, 3))))


def setup():
    world = sw.world()
    truth = build(world, free=False)
    omega = inference.predict(truth, truth.fixed)
    rng = np.random.default_rng(0)
    sigma = 0.01 * RAD_S_PER_DEG_MYR
    obs = omega + sigma * rng.standard_normal(omega.shape)
    cov = np.broadcast_to(sigma ** 2 * np.eye(3), (60, 3, 3)).copy()
    return build(world, free=True), obs, cov


def main():
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--members", type=int, default=10_000)
    ap.add_argument("--repeat", type=int, default=20)
    args = ap.parse_args()
    system, obs, cov = setup()
    times = []
    for _ in range(args.repeat):
        t = time.perf_counter()
        rep = inference.analyse(system, obs)
        times.append(time.perf_counter() - t)
    t_fit = float(np.median(times))
    t = time.perf_counter()
    mc = monte_carlo_motions(system, obs, cov, args.members, seed=1, fit="torque")
    t_mc = time.perf_counter() - t
    print("| stage | size | median time | target |")
    print("|---|---|---|---|")
    print(f"| fit (torque and velocity space) + prediction + pole covariances | 60 plates, "
          f"{system.n_free} free coefficients | {t_fit * 1e3:.1f} ms | <= 50 ms |")
    print(f"| Monte Carlo over motion uncertainties, torque-space refits | {args.members:,} members "
          f"({mc['refitted_with_bounds']} refitted with bounds) | {t_mc:.2f} s | <= 10 s |")
    _ = rep


if __name__ == "__main__":
    main()
