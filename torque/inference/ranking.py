"""Comparing driving-force hypotheses on the same world and motions, and recommending one.

**Leave-one-plate-out cross-validation**: for every plate, the coefficients (and, with a
free frame, the frame's rotation) are refitted (velocity space by default) without that
plate's misfit, all plates are predicted, and the left-out plate is scored: by its mean
square velocity misfit over its area (the error is the area-weighted RMS of these, mm/yr),
and, with the observations' covariance, also by its chi-square with its own 3x3 block of
the covariance (the mean over plates; about 3 for a right model and covariance). It asks
how well each hypothesis predicts a plate it was not fitted to. Its standard error comes
from the spread over plates. How far each hypothesis lies above the best in standard errors
of the paired per-plate difference is reported beside it (``cv_excess_se``).

**The recommendation** follows one stated rule (``rule``), and the sentence printed says
which and why:

* with the observations' covariance (``--misfit chi-square``) the default is
  ``"likelihood-ratio"``: every nested pair (one hypothesis' terms a subset of another's,
  with equal settings) is tested at 5 %; a hypothesis is set aside when one that contains it
  fits significantly better; of those left, one that contains another left adds terms the
  tests found unneeded and is set aside too; the rest are not nested in one another, and
  the lowest AIC among them is recommended. Why this default: a test at 5 % keeps a real
  term of 3 standard errors about 91 % of the time (one-sided, on its bound) and adds a
  spurious one 5 % of the time, where BIC keeps it about 77 % (at 156 observations) and AIC
  adds a spurious term on its bound 7.9 %; and its decisions are the p-values printed
  beside it. ``"aic"`` and ``"bic"`` recommend the lowest criterion.
* without a covariance the likelihood is unknown, and the rule is ``"cross-validation"``:
  the simplest hypothesis whose error lies within one standard error of the best one's,
  that standard error being the best model's own (the one-standard-error rule of Hastie,
  Tibshirani and Friedman 2009, sec. 7.10; a row's ``within_one_se``). With a covariance,
  cross-validation is reported as a check on the likelihood rule.

Information criteria (AIC, AICc, BIC) come from :meth:`torque.inference.analysis.Report.result`,
with the effective numbers of observations and parameters (a free frame's three
parameters, and the three degrees of freedom that motions in the no-net-rotation frame or
relative to a fixed plate lost). With the area-integrated misfit they assume independent
residuals of equal variance, which the area weighting and spatial correlation break, so
they are printed but not recommended by; with ``--misfit chi-square`` they follow from the
chi-square (known variances) and are as good as the covariance.

Nested pairs get the comparison their assumptions allow:

* with the observations' covariance (chi-square): the likelihood-ratio test, ``chi2_s -
  chi2_b`` against the chi-square distribution with ``k_b - k_s`` degrees of freedom
  (covariance known: Wilks 1938), and the extra-sum-of-squares F-test (covariance known up
  to a common factor: Draper and Smith 1998, sec. 6.1). A coefficient the smaller leaves
  out (0) that lies on its bound in the bigger (a resistance in ``[0, inf)``) makes the
  reference a chi-bar-square mixture (Self and Liang 1987;
  :func:`torque.inference.statistics.chi_bar_square_weights`): for one such coefficient
  the p-value is half the plain one. The likelihood-ratio rule decides by the first when
  the covariance is known (``variance="known"``), by the second when its scale is
  estimated;
* without it: no p-value, whose assumptions fail there, but the paired cross-validation
  difference and its standard error over plates.

References
----------
.. [1] Hastie, T., Tibshirani, R. and Friedman, J. (2009). *The Elements of Statistical
   Learning*, 2nd ed. Springer, sec. 7.10 (cross-validation, the one-standard-error rule).
.. [2] Wilks, S. S. (1938). The large-sample distribution of the likelihood ratio for
   testing composite hypotheses. *Ann. Math. Stat.* 9, 60-62.
.. [3] Draper, N. R. and Smith, H. (1998). *Applied Regression Analysis*, 3rd ed. Wiley.
.. [4] Self, S. G. and Liang, K.-Y. (1987). Asymptotic properties of maximum likelihood
   estimators and likelihood ratio tests under nonstandard conditions. *J. Am. Stat.
   Assoc.* 82, 605-610.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .. import progress
from ..errors import InputError, TorqueError
from ..results import RankRow
from ..tabular import html_table
from .analysis import analyse
from .covariance import covariance_blocks, jittered_cholesky
from .solvers import (
    fit_torque,
    fit_velocity,
    fit_velocity_many,
    on_one_blas_thread,
    predict,
)
from .statistics import (
    chi_bar_square_weights,
    f_test,
    likelihood_ratio_test,
    velocity_misfit,
)
from .system import System

__all__ = ["RULES", "ALPHA", "Ranking", "cross_validation_errors", "cross_validation",
           "within_one_se", "rank", "recommend", "nested", "bound_weights"]


class Ranking(list):
    """The rows of a ranking (a list of :class:`~torque.results.RankRow`) that a notebook
    shows as a table and pandas or xarray can take, with the recommendation.

    Attributes
    ----------
    rule : str
        The rule of the recommendation (one of :data:`RULES`).
    recommended : str or None
        The recommended hypothesis' name.
    reason : str
        The sentence that says why.
    check : str or None
        With a likelihood rule: what cross-validation says of the recommendation.
    """

    def __init__(self, rows=(), rule="cross-validation", recommended=None, reason="",
                 check=None):
        super().__init__(rows)
        self.rule, self.recommended, self.reason, self.check = (rule, recommended, reason,
                                                                check)

    def _repr_html_(self) -> str:
        rows = [[r.name, "yes" if r.recommended else "", r.cv_rms_mm_yr, r.cv_stderr_mm_yr,
                 "yes" if r.within_one_se else "no", r.rms_velocity_mm_yr, r.free,
                 round(r.aic, 1), round(r.bic, 1)] for r in self]
        return html_table(["hypothesis", "recommended", "CV mm/yr", "± se",
                           "within 1 se of best", "RMS mm/yr", "free", "AIC", "BIC"], rows,
                          f"hypotheses; {self.reason}")

    def to_dataframe(self):
        """One row per hypothesis, best first: the fields of :class:`~torque.results.RankRow` (its free
        coefficients as ``coef_<label>``).

        Returns
        -------
        pandas.DataFrame
        """
        import pandas as pd
        rows = []
        for r in self:
            d = {k: v for k, v in r.__dict__.items() if k != "coefficients"}
            d.update({f"coef_{l}": v for l, v in r.coefficients.items()})
            rows.append(d)
        return pd.DataFrame(rows).set_index("name")

    def to_dataset(self):
        """The ranking as an xarray Dataset with dimension ``hypothesis``.

        Returns
        -------
        xarray.Dataset
        """
        import xarray as xr
        return xr.Dataset.from_dataframe(self.to_dataframe().rename_axis("hypothesis"))


def _left_out_residuals(system: System, omega_obs, weighting="velocity",
                        fit: str = "velocity", obs_cov=None, free_frame: bool = False,
                        full=None):
    """Each plate's residual ``w_pred + frame - w_obs`` (P, 3) when left out of the fit,
    rad/s; NaN everywhere if a refit fails (see :func:`cross_validation_errors`). ``full``
    is the velocity-space fit to all plates with the same frame and covariance, if already
    made (the refits start from it)."""
    P = system.n_plates
    omega_obs = np.asarray(omega_obs, float)
    keeps = [np.r_[0:p, p + 1:P] for p in range(P)]
    bad = np.full((P, 3), np.nan)
    if free_frame and fit != "velocity":
        raise ValueError("cross-validation with a free frame refits it: fit='velocity'")
    try:
        if full is None and (free_frame or fit == "velocity"):
            full = fit_velocity(system, omega_obs, fit_torque(system, omega_obs, weighting),
                                free_frame, obs_cov=obs_cov)
        mantle = omega_obs - full.frame_rotation if free_frame else omega_obs
        # the torque-space refits, which also refuse what the data cannot separate
        values = np.array([fit_torque(system, mantle, weighting, plates=k).values
                           for k in keeps])
        frames = np.zeros((P, 3))
        if fit == "velocity":
            got = fit_velocity_many(system, omega_obs, full, plates=keeps,
                                    obs_cov=obs_cov, free_frame=free_frame)
            values, frames = got if free_frame else (got, frames)
            if np.isnan(values).any():
                return bad
        out = np.empty((P, 3))
        for p in range(P):
            out[p] = predict(system, values[p])[p] + frames[p] - omega_obs[p]
    except TorqueError:
        return bad
    return out


def cross_validation_errors(system: System, omega_obs, weighting="velocity",
                            fit: str = "velocity", obs_cov=None, free_frame: bool = False,
                            score: str = "velocity") -> np.ndarray:
    """Each plate's misfit when left out of the fit: its squared RMS velocity misfit,
    (mm/yr)^2, or its chi-square.

    Parameters
    ----------
    system : System
    omega_obs : array_like, shape (P, 3)
        rad/s; in the frame of the observations as given when ``free_frame``.
    weighting : {"velocity", "area", "none"}
    fit : {"velocity", "torque"}
        How the coefficients are refitted without each plate: the preferred velocity-space
        fit (default, warm-started) or the faster torque-space fit.
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        With it, the velocity-space refits minimise the chi-square of the plates kept
        (a full covariance marginalised to them).
    free_frame : bool
        Refit the frame's rotation without each plate too, so that the left-out plate
        does not inform the frame it is predicted in (velocity-space refits only).
    score : {"velocity", "chi-square"}
        How the left-out plate is scored: its squared RMS velocity misfit over its area,
        or its chi-square ``dw^T C_p^-1 dw`` with its own 3x3 block of ``obs_cov`` (the
        misfit a chi-square fit minimises; about 3 per plate for a right model and
        covariance, more for the parameters' own error).

    Returns
    -------
    ndarray, shape (P,)
        NaN everywhere if a refit fails.
    """
    dw = _left_out_residuals(system, omega_obs, weighting, fit, obs_cov, free_frame)
    if score not in ("velocity", "chi-square"):
        raise ValueError(f"score must be 'velocity' or 'chi-square', got {score!r}")
    if score == "chi-square" and obs_cov is None:
        raise ValueError("a chi-square score needs the observations' covariance")
    return _scores(system, dw, obs_cov if score == "chi-square" else None)


def cross_validation(system: System, omega_obs, weighting="velocity",
                     fit: str = "velocity", obs_cov=None, free_frame: bool = False) -> float:
    """Leave-one-plate-out RMS velocity misfit (mm/yr), area-weighted over the plates.

    Parameters
    ----------
    system : System
    omega_obs : array_like, shape (P, 3)
    weighting : {"velocity", "area", "none"}
    fit : {"velocity", "torque"}
        See :func:`cross_validation_errors`.
    obs_cov : ndarray, optional
        See :func:`cross_validation_errors`.
    free_frame : bool
        See :func:`cross_validation_errors`.

    Returns
    -------
    float
        mm/yr; NaN if a refit fails.
    """
    e = cross_validation_errors(system, omega_obs, weighting, fit, obs_cov, free_frame)
    return float(np.sqrt(_weighted_mean_se(e, system.area)[0]))


def within_one_se(cv, best_cv, best_se) -> bool:
    """The one-standard-error rule: whether a cross-validation error lies within one
    standard error of the best one, that standard error being the best model's own
    (Hastie, Tibshirani and Friedman 2009, *Elements of Statistical Learning*, sec. 7.10).

    Parameters
    ----------
    cv : float
        A hypothesis' cross-validation error.
    best_cv, best_se : float
        The lowest cross-validation error and its standard error.

    Returns
    -------
    bool

    Examples
    --------
    >>> within_one_se(1.9, 1.7, 0.25), within_one_se(2.0, 1.7, 0.25)
    (True, False)
    """
    return bool(np.isfinite(cv) and cv <= best_cv + (best_se if np.isfinite(best_se) else 0))


def _weighted_mean_se(values, weights):
    """Weighted mean of per-plate values and its standard error from their spread."""
    w = np.asarray(weights, float) / np.sum(weights)
    m = float(np.sum(w * values))
    P = len(values)
    se = float(np.sqrt(P / max(P - 1, 1) * np.sum(w ** 2 * (values - m) ** 2)))
    return m, se


#: The rules ``rank`` can recommend by; the default is the first that applies: with the
#: observations' covariance ``"likelihood-ratio"``, without one ``"cross-validation"``.
RULES = ("likelihood-ratio", "aic", "bic", "cross-validation")

#: The size of the nested tests the likelihood-ratio rule makes.
ALPHA = 0.05


@on_one_blas_thread
def rank(systems, omega_obs, weighting="velocity", free_frame: bool = False,
         fit: str = "velocity", obs_cov=None, rule: str | None = None,
         variance: str = "known"):
    """Fit every hypothesis, cross-validate it, compare the nested pairs and recommend one.

    Parameters
    ----------
    systems : sequence of System
        One per hypothesis, on the same world, with different names.
    omega_obs : ndarray, shape (P, 3)
        Observed Euler vectors (rad/s), mantle at rest unless ``free_frame``.
    weighting : {"velocity", "area", "none"}
        Of the torque-space fits.
    free_frame : bool
        Fit the rotation of the observations' frame relative to the mantle with each
        hypothesis (three more parameters in the information criteria; see
        :func:`torque.inference.analysis.analyse`); cross-validation refits it without
        each plate.
    fit : {"velocity", "torque"}
        How cross-validation refits (see :func:`cross_validation`).
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        The observations' covariance: each hypothesis is then fitted by its chi-square, the
        information criteria come from the chi-square, nested pairs get likelihood-ratio
        and F-tests, and cross-validation scores the left-out plate by its chi-square.
    rule : {"likelihood-ratio", "aic", "bic", "cross-validation"}, optional
        How the recommendation is made (default: ``"likelihood-ratio"`` with a covariance,
        ``"cross-validation"`` without; the likelihood rules need one). See the module notes.
    variance : {"known", "estimated"}
        With a covariance: taken as known (the likelihood-ratio test), or known up to a
        common factor estimated from the residuals (the F-test decides instead).

    Returns
    -------
    rows : Ranking
        A list of :class:`~torque.results.RankRow`, sorted by the rule's own criterion
        (cross-validation error for ``"cross-validation"``, BIC for ``"bic"``, AIC
        otherwise), with ``rule``, ``recommended`` (a name) and ``reason`` (the sentence
        printed).
    tests : list of dict
        Comparisons of the nested pairs: ``smaller``, ``bigger``, ``test``
        (``"likelihood-ratio"``, ``"F"`` or ``"cross-validation"``) and its numbers
        (``statistic``, ``df``, ``p_value`` and ``reference`` for the tests;
        ``cv_difference_mm_yr``, ``excess_se`` for cross-validation).
    """
    chi = obs_cov is not None
    rule = rule or ("likelihood-ratio" if chi else "cross-validation")
    if rule not in RULES:
        raise InputError(f"rule must be one of {', '.join(RULES)}, got {rule!r}")
    if rule != "cross-validation" and not chi:
        raise InputError(f"the {rule} rule needs the likelihood, and so the observations' "
                         "covariance", hint="add --misfit chi-square, or recommend by "
                         "cross-validation")
    if free_frame and fit != "velocity":
        raise InputError("cross-validation with a free frame refits it without each plate, "
                         "which only velocity-space refits do",
                         hint="leave out --resample-fit torque")
    fitted, errors, chis = [], {}, {}
    with progress.bar(len(systems), "fitting and cross-validating hypotheses") as b:
        for s in systems:
            b.set_postfix_str(s.name, refresh=False)
            rep = analyse(s, omega_obs, weighting, free_frame=free_frame, obs_cov=obs_cov)
            observed = rep.frame["observed_frame"] if free_frame else rep.omega_obs
            # the refits start from the report's own fit to all plates (not made again)
            dw = _left_out_residuals(s, observed, weighting, fit, obs_cov, free_frame,
                                     rep.preferred)
            errors[s.name] = _scores(s, dw, None)
            if chi:
                chis[s.name] = _scores(s, dw, obs_cov)
            fitted.append((s, rep, rep.result().misfit))
            b.update()
    area = systems[0].area
    cv = {n: _weighted_mean_se(e, area) for n, e in errors.items()}
    finite = [n for n in cv if np.isfinite(cv[n][0])]
    best = min(finite, key=lambda n: cv[n][0]) if finite else None

    def rms_se(name):
        # the RMS and its standard error, from the mean square's (delta method)
        ms, se = cv[name]
        rms = float(np.sqrt(ms))
        return rms, (se / (2 * rms) if rms > 0 else np.nan)

    best_rms, best_se = rms_se(best) if best is not None else (np.nan, np.nan)
    rows = []
    for s, rep, m in fitted:
        excess = 0.0
        if best is not None and s.name != best:
            d, d_se = _weighted_mean_se(errors[s.name] - errors[best], area)
            excess = d / d_se if d_se > 0 else (np.inf if d > 0 else 0.0)
        rms, rms_stderr = rms_se(s.name)
        coefs = {l: float(v) for l, v, f in zip(s.labels, rep.preferred.values, s.free) if f}
        c_mean, c_se = _mean_se(chis[s.name]) if chi else (None, None)
        rows.append(RankRow(s.name, m["rms_velocity_mm_yr"], m["variance_reduction"], s.n_free,
                            m["aic"], m["aicc"], m["bic"], rms, coefs,
                            cv_stderr_mm_yr=rms_stderr,
                            cv_excess_se=float(excess),
                            within_one_se=within_one_se(rms, best_rms, best_se),
                            effective_observations=m["effective_observations"],
                            effective_parameters=m["effective_parameters"],
                            chi_square=m.get("chi_square"),
                            cv_chi_square=c_mean, cv_chi_square_se=c_se))
    by_name = {s.name: (s, rep, m) for s, rep, m in fitted}
    tests = []
    for a in systems:
        for b in systems:
            if a is not b and nested(a, b):
                tests += _compare(a, by_name[a.name], b, by_name[b.name], errors, area)
    known = variance == "known"
    name, reason = recommend(rule, rows, tests, systems, known)
    check = _cv_check(rows, chi, name) if rule != "cross-validation" else None
    rows = [dataclasses.replace(r, recommended=r.name == name) for r in rows]
    key = {"cross-validation": lambda r: (np.isnan(r.cv_rms_mm_yr), r.cv_rms_mm_yr),
           "bic": lambda r: r.bic}.get(rule, lambda r: r.aic)
    return Ranking(sorted(rows, key=key), rule=rule, recommended=name, reason=reason,
                   check=check), tests


def _scores(system, dw, obs_cov):
    """Left-out scores of residuals ``dw``: squared RMS velocities, or chi-squares."""
    if obs_cov is None:
        return velocity_misfit(system, dw, np.zeros_like(dw))[0] ** 2
    z = np.linalg.solve(jittered_cholesky(covariance_blocks(obs_cov)), dw[..., None])[..., 0]
    return np.einsum("pi,pi->p", z, z)


def _mean_se(values):
    """The plain mean of per-plate values and its standard error over plates."""
    v = np.asarray(values, float)
    if not np.all(np.isfinite(v)):
        return float("nan"), float("nan")
    return float(v.mean()), float(v.std(ddof=1) / np.sqrt(len(v)))


def _decisive(test, known):
    """The p-value a likelihood rule decides a nested pair by: the likelihood-ratio
    test's with a known covariance, the F-test's with its scale estimated."""
    return test["test"] == ("likelihood-ratio" if known else "F")


def recommend(rule, rows, tests, systems, known=True):
    """The recommended hypothesis and the sentence that says why (see the module notes).

    Parameters
    ----------
    rule : str
        One of :data:`RULES`.
    rows : sequence of RankRow
    tests : list of dict
        The nested pairs' tests (``smaller``, ``bigger``, ``test``, ``p_value``).
    systems : sequence of System
        Named as the rows.
    known : bool
        Whether the covariance is taken as known (the likelihood-ratio test decides) or
        its scale estimated (the F-test decides).

    Returns
    -------
    name : str or None
    reason : str
    """
    ok = [r for r in rows if np.isfinite(r.aic if rule != "cross-validation"
                                         else r.cv_rms_mm_yr)]
    if not ok:
        return None, "no recommendation: no hypothesis could be fitted and cross-validated"
    if rule in ("aic", "bic"):
        best = min(ok, key=lambda r: getattr(r, rule))
        return best.name, (f"recommended: {best.name!r} (rule: the lowest "
                           f"{rule.upper()}, from the chi-square)")
    if rule == "cross-validation":
        ties = [r for r in ok if r.within_one_se]
        best = min(ok, key=lambda r: r.cv_rms_mm_yr)
        pick = min(ties, key=lambda r: (r.free, r.cv_rms_mm_yr)) if ties else best
        return pick.name, (
            f"recommended: {pick.name!r} (rule: the simplest hypothesis whose "
            f"cross-validation error lies within one standard error of the best one's, "
            f"{best.name!r} at {best.cv_rms_mm_yr:.3g} ± {_best_se(best):.2g} mm/yr; "
            "Hastie, Tibshirani and Friedman 2009, sec. 7.10)")
    # nested tests at ALPHA: a hypothesis is set aside when one that contains it fits
    # significantly better; of those left, one that contains another left adds terms the
    # tests found unneeded; the rest are not nested in one another, and AIC chooses
    by_sys = {s.name: s for s in systems}
    decisive = [t for t in tests if _decisive(t, known) and t["p_value"] is not None]
    beaten = {t["smaller"] for t in decisive if t["p_value"] < ALPHA}
    left = [r for r in ok if r.name not in beaten]
    plain = [r for r in left if not any(
        o is not r and nested(by_sys[o.name], by_sys[r.name]) for o in left)]
    pick = min(plain, key=lambda r: r.aic)
    name = "likelihood-ratio" if known else "F"
    why = [(f"recommended: {pick.name!r} (rule: nested {name} tests at {100 * ALPHA:g} %, "
            "with the chi-bar-square mixture for a coefficient on its bound; then the "
            "lowest AIC among hypotheses not nested in one another)")]
    up = [t for t in decisive if t["smaller"] == pick.name]
    down = [t for t in decisive if t["bigger"] == pick.name]
    if up:
        t = min(up, key=lambda t: t["p_value"])
        why.append(f"no hypothesis that contains it fits significantly better (closest: "
                   f"{t['bigger']!r}, {_p(t['p_value'])})")
    for t in down:
        if t["p_value"] < ALPHA:
            why.append(f"it fits significantly better than {t['smaller']!r}, which it "
                       f"contains ({_p(t['p_value'])})")
    others = [r.name for r in plain if r is not pick]
    if others:
        why.append(f"its AIC is lower than that of {', '.join(map(repr, others))}")
    return pick.name, "; ".join(why)


def _best_se(row):
    """The standard error of a row's cross-validation error (0 when unknown)."""
    return row.cv_stderr_mm_yr if np.isfinite(row.cv_stderr_mm_yr) else 0.0


def _p(p):
    return "p < 1e-6" if p < 1e-6 else f"p = {p:.2g}"


def _cv_check(rows, chi, recommended):
    """Cross-validation as a check on a likelihood rule's recommendation: the best by the
    left-out plates' chi-square (or velocity misfit), and whether it agrees."""
    if chi:
        ok = [r for r in rows if r.cv_chi_square is not None and np.isfinite(r.cv_chi_square)]
        if not ok:
            return None
        best = min(ok, key=lambda r: r.cv_chi_square)
        ties = [r for r in ok if r.cv_chi_square <= best.cv_chi_square + best.cv_chi_square_se]
        what = (f"cross-validation (the chi-square of each left-out plate) as a check: best "
                f"{best.name!r} at {best.cv_chi_square:.3g} ± {best.cv_chi_square_se:.2g} a "
                "plate")
    else:
        ok = [r for r in rows if np.isfinite(r.cv_rms_mm_yr)]
        if not ok:
            return None
        best = min(ok, key=lambda r: r.cv_rms_mm_yr)
        ties = [r for r in ok if r.within_one_se]
        what = f"cross-validation as a check: best {best.name!r}"
    simplest = min(ties, key=lambda r: (r.free, r.name))
    agree = recommended in {r.name for r in ties}
    return (what + ("; the recommendation is within one standard error of it" if agree else
                    f"; the recommendation is not within one standard error of it (the "
                    f"simplest that is: {simplest.name!r}): the likelihood decides, given a "
                    "right covariance, and cross-validation leaves out whole plates"))


def _compare(small, fitted_small, big, fitted_big, errors, area) -> list:
    """The comparisons a nested pair allows (see the module notes)."""
    m_small, m_big = fitted_small[2], fitted_big[2]
    pair = {"smaller": small.name, "bigger": big.name}
    if "chi_square" in m_small:
        k_s, k_b = m_small["effective_parameters"], m_big["effective_parameters"]
        n = m_big["effective_observations"]
        weights = bound_weights(small, big, fitted_big[1].preferred)
        out = [{**pair, "test": "likelihood-ratio",
                **likelihood_ratio_test(m_small["chi_square"], k_s, m_big["chi_square"], k_b,
                                        weights),
                "reduced_chi_square_bigger": m_big["reduced_chi_square"]},
               {**pair, "test": "F",
                **_f(f_test(m_small["chi_square"], k_s, m_big["chi_square"], k_b, n,
                            weights))}]
        if weights is not None:
            for t in out:
                t["weights"] = [float(w) for w in weights]
        return out
    d, d_se = _weighted_mean_se(errors[small.name] - errors[big.name], area)
    cv_s, cv_b = (np.sqrt(_weighted_mean_se(errors[n], area)[0])
                  for n in (small.name, big.name))
    return [{**pair, "test": "cross-validation", "cv_difference_mm_yr": float(cv_s - cv_b),
             "excess_se": float(d / d_se) if d_se > 0 else None}]


def bound_weights(small: System, big: System, fit):
    """The chi-bar-square weights of a nested pair, or None when no tested coefficient's
    null value (0, the term left out) lies on one of its bounds.

    Parameters
    ----------
    small, big : System
        The nested hypothesis and the one that contains it.
    fit : object
        With ``cov``, the bigger fit's covariance of its free coefficients (in the order
        of ``big.free``; NaN for independent coefficients).

    Returns
    -------
    ndarray or None
        See :func:`torque.inference.statistics.chi_bar_square_weights`.
    """
    free = [i for i in np.flatnonzero(big.free) if big.labels[i] not in small.labels]
    if not free:
        return None
    bounded = [bool(np.any(big.bounds[i] == 0.0)) for i in free]
    if not any(bounded):
        return None
    pos = {k: j for j, k in enumerate(np.flatnonzero(big.free))}
    sub = [pos[i] for i in free]
    return chi_bar_square_weights(fit.cov[np.ix_(sub, sub)], bounded)


def _f(t):
    """An F-test's result under the common keys."""
    return {"statistic": t["F"], "df": t["df"], "p_value": t["p_value"], "F": t["F"],
            "reference": t["reference"]}


def nested(small: System, big: System) -> bool:
    """Whether ``small``'s terms are a proper subset of ``big``'s, with the same settings.

    Parameters
    ----------
    small, big : System

    Returns
    -------
    bool
    """
    if len(small.labels) >= len(big.labels):
        return False
    idx = {l: i for i, l in enumerate(big.labels)}
    for i, l in enumerate(small.labels):
        j = idx.get(l)
        if j is None or small.kinds[i] != big.kinds[j] or small.free[i] != big.free[j]:
            return False
        if not small.free[i] and small.fixed[i] != big.fixed[j]:
            return False
        if not (np.array_equal(small.b[i], big.b[j]) and np.array_equal(small.A[i], big.A[j])):
            return False
        if _nonlinear_key(small, i) != _nonlinear_key(big, j):
            return False
    return True


def _nonlinear_key(system: System, k: int):
    """What tells one term's nonlinear part from another's (None without one)."""
    part = dict(system.nonlinear).get(k)
    if part is None:
        return None
    return (part.r.tobytes(), part.length.tobytes(), part.proj.tobytes(), part.width_m,
            part.eps_m_s)
