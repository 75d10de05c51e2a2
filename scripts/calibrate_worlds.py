"""Calibration of every interval kind and of ``rank``'s recommendation on worlds other than
the demo (issue 26): the published 52-plate geometry and a random 30-plate Voronoi world.

For each world an invented truth (slab pull, trench suction of about 3 standard errors,
drag; ridge push fixed) gives the noise-free motions; one heteroscedastic, non-diagonal
covariance is drawn for the plates (each plate's own RMS velocity error, log-uniform from
0.5 to 5 mm/yr, in a random anisotropic shape), and each realisation adds a draw of it (and,
with ``--free-frame``, a random rigid rotation of up to 0.5 deg/Myr). Each realisation
records whether the 95 % interval of each kind holds the truth:

* ``se``: ``value +- q stderr`` (classical; q normal with a known covariance, Student's t
  where the variance is estimated);
* ``robust``: ``value +- t robust_stderr`` (cluster-robust, a plate a cluster; t with
  Bell and McCaffrey's degrees of freedom);
* ``profile``: the profile-likelihood interval (adjusted to the robust errors for the
  area misfit: ``profile_robust``; classical: ``profile``);
* ``bootstrap``: the expanded percentile interval (Hesterberg 2015) of refits on plates
  drawn with replacement;
* ``monte_carlo``: the same of refits on draws from the covariance the fit used;

and, of ``rank`` on three hypotheses (the truth's terms; without suction; with a spurious
transform resistance, truly 0, on its bound), whether the recommendation keeps suction and
whether it adds the spurious term, beside the rates theory gives for AIC and BIC, and the
likelihood-ratio test's size at the bound (the truth against the spurious hypothesis).

    python scripts/calibrate_worlds.py --world published|random30 [--realisations N]
        [--members M] [--seed S] [--free-frame] [--misfit area|chi-square] [--json FILE]

Synthetic truth, invented for the calibration; the geometry of ``published`` is the
published model's (../shared/data/global-plates-2003, see its ATTRIBUTION.md).
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import numpy as np
from scipy import stats

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import torque  # noqa: E402
from torque import inference, parallel  # noqa: E402
from torque.euler import RAD_S_PER_DEG_MYR  # noqa: E402
from torque.hypothesis import hypothesis_from_dict  # noqa: E402
from torque.inference.analysis import analyse  # noqa: E402
from torque.inference.covariance import jittered_cholesky  # noqa: E402
from torque.inference.profile import profile_intervals  # noqa: E402
from torque.inference.ranking import rank  # noqa: E402
from torque.inference.resampling import bootstrap, monte_carlo_motions  # noqa: E402

PUBLISHED = ROOT.parent / "shared" / "data" / "global-plates-2003" / "world.toml"
KINDS = ("se", "robust", "profile", "profile_robust", "bootstrap", "monte_carlo")


def _hypothesis(name, suction=True, spurious=False, values=None):
    """Ridge push (edge, fixed) with slab pull, drag and, as asked, suction and a spurious
    transform resistance; free, or fixed at ``values``."""
    def c(label):
        return "free" if values is None else values[label]
    f = [{"kind": "ridge", "form": "edge", "coefficient": 1.0},
         {"kind": "slab", "age_myr": 80.0, "coefficient": c("slab")},
         {"kind": "drag", "label": "drag", "coefficient": c("drag")}]
    if suction:
        f.append({"kind": "suction", "coefficient": c("suction")})
    if spurious:
        f.append({"kind": "transform", "coefficient": c("transform") if values else "free"})
    return hypothesis_from_dict({"name": name, "force": f})


def world_for(name: str, seed: int = 1):
    """The world of a calibration: the published geometry, or a random 30-plate one."""
    if name == "published":
        return torque.Inputs.load(PUBLISHED).world
    if name == "random30":
        sys.path.insert(0, str(ROOT))
        from tests.worlds import KIND_CYCLE, voronoi_world
        return voronoi_world(30, seed, kinds=KIND_CYCLE)
    raise SystemExit(f"unknown world {name!r}: published or random30")


def _system(world, hyp):
    omega = np.zeros((world.geometry.n_plates, 3))
    return inference.assemble(world, hyp, torque.compute_torques(world, hyp, omega))


def covariance_for(system, rng) -> np.ndarray:
    """Per-plate covariances (P, 3, 3), rad/s^2: each plate's RMS velocity error
    log-uniform in 0.5-5 mm/yr, in a random anisotropic, correlated shape."""
    P = system.n_plates
    floor = np.exp(rng.uniform(np.log(0.5), np.log(5.0), P))
    base = np.stack([inference.covariance.model_error_covariance(system, f)[p]
                     for p, f in enumerate(floor)])
    L = np.linalg.cholesky(base)
    out = np.empty_like(base)
    for p in range(P):
        q, _ = np.linalg.qr(rng.normal(size=(3, 3)))
        shape = q @ np.diag(rng.uniform(0.3, 1.7, 3)) @ q.T
        out[p] = L[p] @ shape @ L[p].T
    return out


def setup(world_name: str, seed: int = 0):
    """Truth, systems and covariance of one world (the same for every realisation)."""
    world = world_for(world_name)
    rng = np.random.default_rng(seed + 1000)
    full = _system(world, _hypothesis("truth"))
    small = _system(world, _hypothesis("no suction", suction=False))
    spur = _system(world, _hypothesis("spurious", spurious=True))
    # a plausible truth: slab and drag as a unit-suction world's balance would have them,
    # then suction set to 3 standard errors of its chi-square fit
    truth = {"slab": 0.05, "drag": 1.0e15, "suction": 0.0}
    cov = covariance_for(full, rng)
    for _ in range(2):
        fixed = _system(world, _hypothesis("t", values=truth))
        omega = inference.predict(fixed, fixed.fixed)
        fit = inference.solvers.fit_velocity(full, omega, obs_cov=cov)
        i = full.labels.index("suction")
        truth["suction"] = 3.0 * float(fit.stderr[i])
    fixed = _system(world, _hypothesis("t", values=truth))
    omega = inference.predict(fixed, fixed.fixed)
    return {"world": world, "full": full, "small": small, "spurious": spur, "truth": truth,
            "omega": omega, "cov": cov}


def _inside(lo, hi, x):
    return bool(lo is not None and hi is not None and lo <= x <= hi)


def calibrate_world(world_name: str, n: int = 200, members: int = 100, seed: int = 0,
                    free_frame: bool = False, misfit: str = "chi-square",
                    recommend: bool = True, noise_seed: int | None = None) -> dict:
    """Coverage of every interval kind and the recommendation's pick rates (see the
    module notes).

    ``seed`` makes the world's truth and covariance, ``noise_seed`` (default ``seed``) the
    realisations' noise: two runs with one ``seed`` and two noise seeds are one experiment
    in two halves.

    Returns
    -------
    dict
        ``coverage[kind][label]`` (share of realisations whose interval holds the truth),
        ``picks`` (shares keeping suction, adding the spurious term, rejecting the truth
        against the spurious hypothesis at 5 %) and their theoretical rates.
    """
    S = setup(world_name, seed)
    full, cov, truth = S["full"], S["cov"], S["truth"]
    free = [l for l, f in zip(full.labels, full.free) if f]
    want = np.array([truth[l] for l in free])
    obs_cov = cov if misfit == "chi-square" else None
    errors = "classical" if obs_cov is not None else "robust"
    L = jittered_cholesky(cov)
    base = seed if noise_seed is None else noise_seed + 7919
    rng = np.random.default_rng(base)
    hits = {k: [] for k in KINDS}
    picks = {"keeps_suction": [], "adds_spurious": [], "lr_rejects_truth": []}
    z_suction = []
    t0 = time.time()
    with parallel.small_solves():
        for r in range(n):
            obs = S["omega"] + np.einsum("pij,pj->pi", L, rng.standard_normal(S["omega"].shape))
            if free_frame:
                spin = rng.normal(size=3)
                obs = obs + spin * rng.uniform(0, 0.5) * RAD_S_PER_DEG_MYR / np.linalg.norm(spin)
            rep = analyse(full, obs, free_frame=free_frame, obs_cov=obs_cov, errors=errors)
            fit = rep.preferred
            v = fit.values[full.free]
            se, q = fit.stderr[full.free], fit.quantile
            rse, rq = fit.robust_stderr[full.free], fit.robust_quantiles[full.free]
            hits["se"].append(np.abs(v - want) <= q * se)
            hits["robust"].append(np.abs(v - want) <= rq * rse)
            z_suction.append((v - want)[free.index("suction")] / se[free.index("suction")])
            for kind, how in (("profile", "classical"), ("profile_robust", "robust")):
                if how == "robust" and obs_cov is not None:
                    hits[kind].append(hits["robust"][-1])
                    continue
                p = profile_intervals(fit, obs, free_frame, obs_cov, errors=how)
                hits[kind].append([_inside(p[l]["low"], p[l]["high"], w)
                                   for l, w in zip(free, want)])
            if members:
                for kind, u in (
                        ("bootstrap", bootstrap(full, obs, members, base + r, obs_cov=obs_cov,
                                                free_frame=free_frame)),
                        ("monte_carlo", monte_carlo_motions(
                            full, obs, cov, members, base + r, obs_cov=obs_cov,
                            free_frame=free_frame))):
                    hits[kind].append([_inside(u["coefficients"][l]["low"],
                                               u["coefficients"][l]["high"], w)
                                       for l, w in zip(free, want)])
            if recommend:
                rows, tests = rank([S["small"], full, S["spurious"]], obs,
                                   free_frame=free_frame, obs_cov=obs_cov)
                pick = rows.recommended
                picks["keeps_suction"].append(pick in ("truth", "spurious"))
                picks["adds_spurious"].append(pick == "spurious")
                if obs_cov is not None:
                    lr = next(t for t in tests if t["test"] == "likelihood-ratio"
                              and t["smaller"] == "truth" and t["bigger"] == "spurious")
                    picks["lr_rejects_truth"].append(lr["p_value"] < 0.05)
            if r % 20 == 19:
                print(f"  {r + 1}/{n} realisations, {time.time() - t0:.0f} s", file=sys.stderr)
    N = 3 * full.n_plates - (3 if free_frame else 0)
    k_extra = 1
    delta = 3.0
    out = {"world": world_name, "plates": full.n_plates, "realisations": n,
           "members": members, "free_frame": free_frame, "misfit": misfit,
           "truth": truth, "coverage": {}, "seconds": time.time() - t0,
           "suction_z_sd": float(np.std(z_suction, ddof=1))}
    for kind, h in hits.items():
        if h:
            a = np.array(h, bool)
            out["coverage"][kind] = {l: float(a[:, i].mean()) for i, l in enumerate(free)}
    if recommend:
        out["picks"] = {k: float(np.mean(v)) for k, v in picks.items() if v}
        # theory for a term of delta standard errors, one parameter, n observations
        bic_keep = float(stats.norm.sf(np.sqrt(np.log(N)) - delta)
                         + stats.norm.cdf(-np.sqrt(np.log(N)) - delta))
        out["theory"] = {"bic_keeps_3se": bic_keep,
                         "aic_keeps_3se": float(stats.norm.sf(np.sqrt(2) - delta)),
                         "lr5_keeps_3se": float(stats.norm.sf(1.6449 - delta)),
                         "aic_adds_on_bound": float(0.5 * stats.chi2.sf(2 * k_extra, 1)),
                         "bic_adds_on_bound": float(0.5 * stats.chi2.sf(np.log(N), 1)),
                         "lr_size": 0.05, "observations": N}
    return out


def table(results) -> str:
    """The calibration table (markdown) of a list of :func:`calibrate_world` results."""
    lines = ["| world | misfit | frame | interval | " + " | ".join(
        results[0]["coverage"]["se"]) + " |", "|---|---|---|---|" + "---|" * len(
        results[0]["coverage"]["se"])]
    for res in results:
        for kind, cov in res["coverage"].items():
            lines.append(f"| {res['world']} ({res['plates']} plates) | {res['misfit']} | "
                         f"{'free' if res['free_frame'] else 'mantle'} | {kind} | "
                         + " | ".join(f"{100 * c:.1f} %" for c in cov.values()) + " |")
    lines.append("")
    lines.append("| world | misfit | frame | keeps suction (3 SE) | adds spurious (on bound) | "
                 "LR size at bound | theory: BIC keeps, AIC adds |")
    lines.append("|---|---|---|---|---|---|---|")
    for res in results:
        if "picks" not in res:
            continue
        p, t = res["picks"], res["theory"]
        lr = f"{100 * p['lr_rejects_truth']:.1f} %" if "lr_rejects_truth" in p else "-"
        lines.append(f"| {res['world']} | {res['misfit']} | "
                     f"{'free' if res['free_frame'] else 'mantle'} | "
                     f"{100 * p['keeps_suction']:.1f} % | {100 * p['adds_spurious']:.1f} % | "
                     f"{lr} | {100 * t['bic_keeps_3se']:.1f} %, "
                     f"{100 * t['aic_adds_on_bound']:.1f} % |")
    return "\n".join(lines)


def merge(results) -> list:
    """Results of one experiment run in parts (same world, misfit, frame and truth; other
    noise seeds) combined, each share weighted by its realisations."""
    groups = {}
    for r in results:
        groups.setdefault((r["world"], r["misfit"], r["free_frame"]), []).append(r)
    out = []
    for parts in groups.values():
        n = sum(p["realisations"] for p in parts)
        m = dict(parts[0], realisations=n)

        def avg(get):
            return sum(p["realisations"] * get(p) for p in parts) / n
        m["coverage"] = {k: {l: avg(lambda p: p["coverage"][k][l]) for l in c}
                         for k, c in parts[0]["coverage"].items()}
        if "picks" in parts[0]:
            m["picks"] = {k: avg(lambda p: p["picks"][k]) for k in parts[0]["picks"]}
        out.append(m)
    return out


def summary_table(results) -> str:
    """The compact calibration table (markdown): one row per interval kind, one column per
    world, misfit and frame, each cell the lowest and highest coverage over the
    coefficients; then the recommendation's pick rates."""
    kinds = {"se": "standard error (the fit's quantile)",
             "robust": "cluster-robust standard error",
             "profile": "profile likelihood",
             "profile_robust": "profile, adjusted to the robust errors",
             "bootstrap": "bootstrap over plates (expanded percentiles)",
             "monte_carlo": "Monte Carlo over the covariance"}
    results = merge(results)
    heads = [f"{r['world']}, {'χ²' if r['misfit'] == 'chi-square' else 'area'}, "
             f"{'free frame' if r['free_frame'] else 'mantle frame'} ({r['realisations']})"
             for r in results]
    lines = ["| 95 % interval | " + " | ".join(heads) + " |",
             "|---|" + "---|" * len(results)]
    for kind, name in kinds.items():
        cells = []
        for r in results:
            c = r["coverage"].get(kind)
            if kind == "profile_robust" and r["misfit"] == "chi-square":
                c = None                     # the chi-square leads with classical errors
            cells.append("" if not c else
                         f"{100 * min(c.values()):.1f}-{100 * max(c.values()):.1f} %")
        lines.append(f"| {name} | " + " | ".join(cells) + " |")
    lines += ["", "| recommendation | " + " | ".join(heads) + " |",
              "|---|" + "---|" * len(results)]
    for key, name in (("keeps_suction", "keeps the 3-SE suction term"),
                      ("adds_spurious", "adds the spurious term on its bound"),
                      ("lr_rejects_truth", "likelihood-ratio test's size at the bound")):
        lines.append(f"| {name} | " + " | ".join(
            f"{100 * r['picks'][key]:.1f} %" if key in r.get("picks", {}) else "-"
            for r in results) + " |")
    lines.append("| theory: BIC keeps / AIC adds | " + " | ".join(
        f"{100 * r['theory']['bic_keeps_3se']:.1f} / {100 * r['theory']['aic_adds_on_bound']:.1f} %"
        if "theory" in r else "-" for r in results) + " |")
    return "\n".join(lines)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--world", default="published", choices=("published", "random30"))
    ap.add_argument("--realisations", type=int, default=200)
    ap.add_argument("--members", type=int, default=100)
    ap.add_argument("--seed", type=int, default=0, help="of the truth and covariance")
    ap.add_argument("--noise-seed", type=int, help="of the realisations' noise (default "
                    "--seed)")
    ap.add_argument("--free-frame", action="store_true")
    ap.add_argument("--misfit", default="chi-square", choices=("area", "chi-square"))
    ap.add_argument("--json", help="also write the result as JSON")
    ap.add_argument("--summarise", nargs="+", metavar="JSON",
                    help="print the compact table of results written with --json")
    args = ap.parse_args()
    if args.summarise:
        print(summary_table([json.loads(Path(f).read_text()) for f in args.summarise]))
        return
    res = calibrate_world(args.world, args.realisations, args.members, args.seed,
                          args.free_frame, args.misfit, noise_seed=args.noise_seed)
    if args.json:
        Path(args.json).write_text(json.dumps(res, indent=1, default=float))
    print(table([res]))


if __name__ == "__main__":
    main()
