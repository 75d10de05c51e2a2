"""A stage series: every stage's balance built, the joint fit, the ranking and the Monte
Carlo draws, on an executor (:func:`run_series`).
"""

from __future__ import annotations

import numpy as np
from ..errors import InputError

__all__ = ["run_series"]


# ----------------------------------------------------------------------------------------
# stage series
# ----------------------------------------------------------------------------------------
def run_series(path, executor, monte_carlo: int = 0, seed: int = 0, chunk: int = 25):
    """Read a series, build every stage's balance, fit jointly, rank, and resample.

    Parameters
    ----------
    path : str or Path
        The series file.
    executor : Executor
        Entered (``with Executor(...) as ex``): where the tasks run.
    monte_carlo : int
        Draws of every stage's motions from their covariance, each refitted.
    seed : int
        Of the draws: draw i has the seed ``SeedSequence(seed).spawn(n)[i]``, whatever the
        executor and the chunking.
    chunk : int
        Draws per task.

    Returns
    -------
    SeriesResult
    """
    from .. import progress
    from ..inference.ranking import within_one_se
    from ..inference.stages import cross_validation_error, joint_information_criteria
    from ..io.hypothesis import load_hypothesis
    from ..io.series import fit_task, load_stage, monte_carlo_task, read_series, series_rms
    from ..parallel import spawn_seeds
    from ..results import SeriesResult
    series = read_series(path)
    hyps = (series.hypothesis,) + series.compare
    names = [load_hypothesis(h).name for h in hyps]
    S = len(series.stages)
    with progress.bar(S * len(hyps), "building every stage's balance", minimum=2) as bar:
        built = executor.map(load_stage, [(st, h) for h in hyps for st in series.stages],
                             bar)
    by_hyp = [built[i * S:(i + 1) * S] for i in range(len(hyps))]
    plates = list(dict.fromkeys(p for st in by_hyp[0] for p in st.system.plates))
    missing = [p for p in series.plates if p not in plates]
    if missing:
        raise InputError(f"plates to draw are in no stage: {', '.join(missing)}",
                         file=series.path)
    # every hypothesis' joint fit, and its fits without each plate (cross-validation)
    tasks = [(h, series.per_stage, series.misfit, None) for h in range(len(by_hyp))]
    tasks += [(h, series.per_stage, series.misfit, p) for h in range(len(by_hyp))
              for p in plates]
    with progress.bar(len(tasks), "joint fits and cross-validation", minimum=2) as bar:
        fits = executor.map(fit_task, tasks, bar, shared=by_hyp)
    H = len(hyps)
    ranking = []
    for h in range(H):
        jf = fits[h]
        cv, cv_se = cross_validation_error(by_hyp[h], fits[H + h * len(plates):
                                                           H + (h + 1) * len(plates)], plates)
        ic = joint_information_criteria(jf)
        ranking.append({"name": names[h], "file": hyps[h],
                        "rms_mm_yr": series_rms(by_hyp[h], jf), "cv_rms_mm_yr": cv,
                        "cv_stderr_mm_yr": cv_se, **ic,
                        "stage_rms_mm_yr": [float(x) for x in jf.stage_rms_mm_yr]})
    order = sorted(range(H), key=lambda h: ranking[h]["cv_rms_mm_yr"])
    best = ranking[order[0]]
    for h in order:
        ranking[h]["within_one_se"] = within_one_se(
            ranking[h]["cv_rms_mm_yr"], best["cv_rms_mm_yr"], best["cv_stderr_mm_yr"])
    ranking = [ranking[h] for h in order]
    recommendation = recommend_series(ranking, [by_hyp[h][0].system for h in range(H)],
                                      fits[:H], names, series.misfit, series.per_stage)
    mc = None
    if monte_carlo:
        stages = by_hyp[0]
        if any(st.obs_cov is None for st in stages):
            raise InputError("--monte-carlo needs every stage's motions with a covariance",
                             file=series.path, hint="give cov_* columns in the motions")
        seeds = spawn_seeds(seed, monte_carlo)
        start = fits[0].parameters
        tasks = [(series.per_stage, series.misfit, seeds[i:i + chunk], start)
                 for i in range(0, monte_carlo, chunk)]
        with progress.bar(len(tasks), "Monte Carlo over the stages' motions",
                          minimum=2) as bar:
            draws = np.vstack(executor.map(monte_carlo_task, tasks, bar, shared=stages))
        ok = np.all(np.isfinite(draws), axis=1)
        good = draws[ok]
        mc = {"draws": draws, "failed": int((~ok).sum()), "seed": seed, "n": monte_carlo,
              "sd": good.std(axis=0, ddof=1) if len(good) > 1 else np.full(draws.shape[1],
                                                                           np.nan),
              "low": np.percentile(good, 2.5, axis=0) if len(good) else None,
              "high": np.percentile(good, 97.5, axis=0) if len(good) else None}
    return SeriesResult(series, by_hyp[0], fits[0], ranking, mc, executor.describe(),
                        recommendation)


def recommend_series(ranking, systems, fits, names, misfit, per_stage=()) -> dict:
    """A series' recommendation by the rule ``rank`` uses for the same misfit: with the
    chi-square, nested likelihood-ratio tests of the joint fits (the chi-bar-square mixture
    where a left-out coefficient lies on its bound) and then AIC; with the area misfit,
    the one-standard-error rule on cross-validation.

    Parameters
    ----------
    ranking : list of dict
        The series' ranking rows (``name``, ``k``, ``aic``, ``bic``, ``cv_rms_mm_yr``,
        ``cv_stderr_mm_yr``, ``within_one_se``, ``rms_mm_yr``); each gets
        ``recommended``.
    systems : list of System
        Each hypothesis' balance on the first stage (which terms, bounds and settings).
    fits : list of JointFit
        Each hypothesis' joint fit, in the order of ``names``.
    names : list of str
    misfit : {"area", "chi-square"}
    per_stage : sequence of str

    Returns
    -------
    dict
        ``rule``, ``recommended``, ``reason`` and the nested ``tests``.
    """
    import types

    from ..inference.ranking import bound_weights, nested, recommend
    from ..inference.statistics import likelihood_ratio_test
    from ..results import RankRow
    by_name = {n: (s, f) for n, s, f in zip(names, systems, fits)}
    rows = [RankRow(r["name"], r["rms_mm_yr"], float("nan"), r["k"], r["aic"], r["aic"],
                    r["bic"], r["cv_rms_mm_yr"], {}, cv_stderr_mm_yr=r["cv_stderr_mm_yr"],
                    within_one_se=r["within_one_se"]) for r in ranking]
    import dataclasses
    named = [dataclasses.replace(s, name=n) for s, n in zip(systems, names)]
    tests = []
    if misfit == "chi-square":
        for a, sa in zip(names, named):
            for b, sb in zip(names, named):
                if a == b or not nested(sa, sb):
                    continue
                fa, fb = by_name[a][1], by_name[b][1]
                # the joint covariance is by coefficient only when none is per stage;
                # else the tested coefficients are taken as independent
                cov = fb.cov if not per_stage else None
                weights = bound_weights(sa, sb, types.SimpleNamespace(
                    cov=cov if cov is not None else
                    np.full((sb.n_free, sb.n_free), np.nan)))
                t = {"smaller": a, "bigger": b, "test": "likelihood-ratio",
                     **likelihood_ratio_test(fa.rss, len(fa.params), fb.rss, len(fb.params),
                                             weights)}
                if weights is not None:
                    t["weights"] = [float(w) for w in weights]
                tests.append(t)
    rule = "likelihood-ratio" if misfit == "chi-square" else "cross-validation"
    pick, reason = recommend(rule, rows, tests, named)
    for r in ranking:
        r["recommended"] = r["name"] == pick
    return {"rule": rule, "recommended": pick, "reason": reason, "tests": tests}
