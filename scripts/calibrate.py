"""Calibration of the fit's uncertainty on synthetic data with known truth (issue 13).

The demo planet's noise-free motions (polygons_demo/true_motions.csv) are the forward model
of its stated true coefficients (truth.json). Each realisation adds Gaussian noise of the
demo's stated size to every Cartesian component of every Euler vector, fits the truth
hypothesis, and records whether each coefficient's 95 % interval (value +- q standard
errors, q the fit's own quantile: normal with a known covariance, Student's t where the
variance is estimated), and its cluster-robust interval, hold the truth, and the error in
units of the standard error. A calibrated fit
covers the truth 95 % of the time (93-97 % over a few hundred realisations) with a bias
well under a tenth of a standard error.

With ``--free-frame`` every realisation also adds a random rigid rotation to the
observations, which the fit must recover. With ``--profile`` the preferred fit's
profile-likelihood intervals (torque.inference.profile) are calibrated too.

    python scripts/calibrate.py [--realisations N] [--seed S] [--free-frame] [--gls]
                                [--profile] [--world demo|published|random30]

``--world published`` or ``random30`` runs the calibration of issue 26 instead
(scripts/calibrate_worlds.py: worlds other than the demo, heteroscedastic non-diagonal
covariances, every interval kind and the recommendation of ``rank``).
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import torque  # noqa: E402
from torque import parallel  # noqa: E402
from torque.inference.analysis import analyse
from torque.euler import RAD_S_PER_DEG_MYR  # noqa: E402

DEMO = ROOT / "polygons_demo"


def calibrate(n: int = 200, seed: int = 0, free_frame: bool = False,
              gls: bool = False, profile: bool = False) -> dict:
    """Coverage and bias of both fits over ``n`` noisy realisations of the demo.

    Parameters
    ----------
    n : int
        Realisations.
    seed : int
    free_frame : bool
        Add a random rotation (up to 0.5 deg/Myr) to each realisation and fit it.
    gls : bool
        Fit the chi-square with the noise's covariance (generalised least squares) instead
        of the area-integrated velocity misfit.
    profile : bool
        Also record whether the preferred fit's profile-likelihood intervals hold the
        truth (``profile``: coverage per coefficient).

    Returns
    -------
    dict
        Per fit (``velocity``, ``torque``) and free coefficient: ``coverage`` (share of
        realisations whose 95 % interval holds the truth) and ``bias_se`` (mean error over
        mean standard error); with a free frame, the frame's coverage and the largest error
        of the recovered rotation in its standard errors.
    """
    truth = json.loads((DEMO / "truth.json").read_text())
    inputs = torque.Inputs.load(DEMO / "world.toml")
    hyp = torque.load_hypothesis(DEMO / truth["hypothesis_file"])
    true = torque.read_motions(DEMO / "true_motions.csv").for_world(inputs.world)
    system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, true))
    sigma = truth["noise_deg_myr_per_component"] * RAD_S_PER_DEG_MYR
    free = [l for l, f in zip(system.labels, system.free) if f]
    want = np.array([truth["true_coefficients"][l] for l in free])
    cov = np.broadcast_to(sigma ** 2 * np.eye(3), (len(true), 3, 3))
    rng = np.random.default_rng(seed)
    err = {"velocity": [], "torque": []}
    se = {"velocity": [], "torque": []}
    quant = {"velocity": [], "torque": []}
    frame_z = []
    inside = []
    robust = []
    with parallel.small_solves():
        for _ in range(n):
            obs = true + sigma * rng.standard_normal(true.shape)
            spin = np.zeros(3)
            if free_frame:
                spin = rng.normal(size=3)
                spin *= rng.uniform(0, 0.5) * RAD_S_PER_DEG_MYR / np.linalg.norm(spin)
            rep = analyse(system, obs + spin, free_frame=free_frame,
                          obs_cov=cov if gls else None, profile=profile)
            if profile:
                inside.append([rep.profile[l]["low"] <= w <= rep.profile[l]["high"]
                               for l, w in zip(free, want)])
            for name, fit in (("velocity", rep.velocity_fit), ("torque", rep.torque_fit)):
                err[name].append(fit.values[system.free] - want)
                # intervals of the fit's own quantile: normal with a known covariance,
                # Student's t where the variance is estimated (1.96 for the torque fit)
                se[name].append(fit.stderr[system.free])
                quant[name].append(fit.quantile if name == "velocity" else 1.96)
            f = rep.velocity_fit
            robust.append(np.abs(f.values[system.free] - want)
                          <= f.robust_quantiles[system.free] * f.robust_stderr[system.free])
            if free_frame:
                fse = np.sqrt(np.diag(rep.frame["cov"]))
                frame_z.append(np.abs(rep.frame["rotation"] - spin) / fse)
    out = {"realisations": n, "noise_deg_myr": truth["noise_deg_myr_per_component"],
           "free_frame": free_frame, "gls": gls, "fits": {}}
    for name in err:
        e, s, q = np.array(err[name]), np.array(se[name]), np.array(quant[name])
        out["fits"][name] = {l: {"coverage": float(np.mean(np.abs(e[:, i]) <= q * s[:, i])),
                                 "bias_se": float(e[:, i].mean() / s[:, i].mean())}
                             for i, l in enumerate(free)}
    out["robust"] = {l: {"coverage": float(np.mean(np.array(robust)[:, i]))}
                     for i, l in enumerate(free)}
    if profile:
        out["profile"] = {l: {"coverage": float(np.mean(np.array(inside)[:, i]))}
                          for i, l in enumerate(free)}
    if free_frame:
        z = np.array(frame_z)
        out["frame"] = {"coverage": float(np.mean(np.all(z <= 1.96, axis=1))),
                        "coverage_per_component": float(np.mean(z <= 1.96)),
                        "largest_error_se": float(z.max())}
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--realisations", type=int, default=200)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--free-frame", action="store_true")
    ap.add_argument("--gls", action="store_true", help="fit the chi-square (GLS)")
    ap.add_argument("--profile", action="store_true",
                    help="also calibrate the profile-likelihood intervals")
    ap.add_argument("--world", default="demo", choices=("demo", "published", "random30"),
                    help="another world: scripts/calibrate_worlds.py (every interval kind "
                    "and the recommendation, heteroscedastic covariances)")
    args = ap.parse_args()
    if args.world != "demo":
        sys.path.insert(0, str(ROOT / "scripts"))
        from calibrate_worlds import calibrate_world, table
        print(table([calibrate_world(args.world, args.realisations, seed=args.seed,
                                     free_frame=args.free_frame,
                                     misfit="chi-square" if args.gls else "area")]))
        return
    res = calibrate(args.realisations, args.seed, args.free_frame, args.gls, args.profile)
    print(f"{res['realisations']} realisations, noise {res['noise_deg_myr']} deg/Myr per "
          f"component{', free frame' if res['free_frame'] else ''}"
          f"{', chi-square (GLS)' if res['gls'] else ''}")
    print("| fit | coefficient | coverage of the 95 % interval | bias / standard error |")
    print("|---|---|---|---|")
    for name, coefs in res["fits"].items():
        for label, c in coefs.items():
            print(f"| {name} space | {label} | {100 * c['coverage']:.1f} % | "
                  f"{c['bias_se']:+.3f} |")
    for label, c in res["robust"].items():
        print(f"| velocity space, cluster-robust errors | {label} | {100 * c['coverage']:.1f} % "
              "| |")
    for label, c in res.get("profile", {}).items():
        print(f"| velocity space, profile interval | {label} | {100 * c['coverage']:.1f} % | |")
    if "frame" in res:
        f = res["frame"]
        print(f"frame: per-component coverage {100 * f['coverage_per_component']:.1f} %, "
              f"largest error {f['largest_error_se']:.2f} standard errors")


if __name__ == "__main__":
    main()
