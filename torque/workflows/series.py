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
    # the recommendation by the series' one rule, cross-validation's one-standard-error
    # rule (as rank's without a covariance; a series has no nested tests yet)
    ties = [r for r in ranking if r["within_one_se"]] or ranking[:1]
    pick = min(ties, key=lambda r: (r["k"], r["cv_rms_mm_yr"]))
    for r in ranking:
        r["recommended"] = r is pick
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
    return SeriesResult(series, by_hyp[0], fits[0], ranking, mc, executor.describe())
