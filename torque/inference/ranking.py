"""Comparing driving-force hypotheses on the same world and motions.

The headline is **leave-one-plate-out cross-validation**: for every plate, the coefficients
are refitted (velocity space by default) without that plate's misfit, all plates are
predicted, and the left-out plate's RMS velocity misfit is kept; the error is the
area-weighted RMS of these. It asks what the data can check, how well each hypothesis
predicts a plate it was not fitted to, and it needs no assumption about the errors'
independence or variance. Rows are sorted by it, best first. Its standard error comes from
the spread over plates. A hypothesis whose error lies within one standard error of the
best one's error (that standard error: the best model's own) cannot be told apart from it
by cross-validation, and the simplest of those is the rule's choice (the
one-standard-error rule of Hastie, Tibshirani and Friedman 2009, sec. 7.10; a row's
``within_one_se``). How far each lies above the best in standard errors of the paired
per-plate difference is reported beside it (``cv_excess_se``), and is what compares two
nested hypotheses without a covariance.

Information criteria (AIC, AICc, BIC) come from :meth:`torque.inference.analysis.Report.result`,
with the effective numbers of observations and parameters (a free frame's three
parameters, and the three degrees of freedom that motions in the no-net-rotation frame or
relative to a fixed plate lost). With the area-integrated misfit they assume independent
residuals of equal variance, which the area weighting and spatial correlation break, so
they are printed but not ranked by; with ``--misfit chi-square`` they follow from the
chi-square (known variances) and are as good as the covariance.

Nested pairs (one hypothesis' terms a subset of another's, with equal settings) get the
comparison their assumptions allow:

* with the observations' covariance (chi-square): the likelihood-ratio test, ``chi2_s -
  chi2_b`` against the chi-square distribution with ``k_b - k_s`` degrees of freedom
  (covariance known: Wilks 1938), and the extra-sum-of-squares F-test (covariance known up
  to a common factor: Draper and Smith 1998, sec. 6.1);
* without it: no p-value, whose assumptions fail there, but the paired cross-validation
  difference and its standard error over plates.

References
----------
.. [1] Hastie, T., Tibshirani, R. and Friedman, J. (2009). *The Elements of Statistical
   Learning*, 2nd ed. Springer, sec. 7.10 (cross-validation, the one-standard-error rule).
.. [2] Wilks, S. S. (1938). The large-sample distribution of the likelihood ratio for
   testing composite hypotheses. *Ann. Math. Stat.* 9, 60-62.
.. [3] Draper, N. R. and Smith, H. (1998). *Applied Regression Analysis*, 3rd ed. Wiley.
"""

from __future__ import annotations

import numpy as np

from .. import progress
from ..errors import TorqueError
from ..results import RankRow
from ..tabular import html_table
from .analysis import analyse
from .solvers import (
    fit_torque,
    fit_velocity,
    fit_velocity_many,
    on_one_blas_thread,
    predict,
)
from .statistics import f_test, likelihood_ratio_test, velocity_misfit
from .system import System

__all__ = ["Ranking", "cross_validation_errors", "cross_validation", "within_one_se",
           "rank"]


class Ranking(list):
    """The rows of a ranking (a list of :class:`~torque.results.RankRow`, best first) that a notebook shows as
    a table and pandas or xarray can take."""

    def _repr_html_(self) -> str:
        rows = [[r.name, r.cv_rms_mm_yr, r.cv_stderr_mm_yr,
                 "yes" if r.within_one_se else "no", r.rms_velocity_mm_yr, r.free,
                 round(r.aic, 1), round(r.bic, 1)] for r in self]
        return html_table(["hypothesis", "CV mm/yr", "± se", "within 1 se of best",
                           "RMS mm/yr", "free", "AIC", "BIC"], rows,
                          "hypotheses, best first by leave-one-plate-out cross-validation")

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


def cross_validation_errors(system: System, omega_obs, weighting="velocity",
                            fit: str = "velocity", obs_cov=None) -> np.ndarray:
    """Each plate's squared RMS velocity misfit when left out of the fit, (mm/yr)^2.

    Parameters
    ----------
    system : System
    omega_obs : array_like, shape (P, 3)
    weighting : {"velocity", "area", "none"}
    fit : {"velocity", "torque"}
        How the coefficients are refitted without each plate: the preferred velocity-space
        fit (default, warm-started) or the faster torque-space fit.
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        With it, the velocity-space refits minimise the chi-square of the plates kept
        (a full covariance marginalised to them).

    Returns
    -------
    ndarray, shape (P,)
        NaN everywhere if a refit fails.
    """
    P = system.n_plates
    keeps = [np.r_[0:p, p + 1:P] for p in range(P)]
    try:
        # the torque-space refits, which also refuse what the data cannot separate
        values = np.array([fit_torque(system, omega_obs, weighting, plates=k).values
                           for k in keeps])
        if fit == "velocity":
            start = fit_velocity(system, omega_obs, fit_torque(system, omega_obs, weighting),
                                 obs_cov=obs_cov)
            values = fit_velocity_many(system, omega_obs, start, plates=keeps,
                                       obs_cov=obs_cov)
            if np.isnan(values).any():
                return np.full(P, np.nan)
        out = np.empty(P)
        for p in range(P):
            rms, _ = velocity_misfit(system, predict(system, values[p]), omega_obs)
            out[p] = rms[p] ** 2
    except TorqueError:
        return np.full(P, np.nan)
    return out


def cross_validation(system: System, omega_obs, weighting="velocity",
                     fit: str = "velocity", obs_cov=None) -> float:
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

    Returns
    -------
    float
        mm/yr; NaN if a refit fails.
    """
    e = cross_validation_errors(system, omega_obs, weighting, fit, obs_cov)
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


@on_one_blas_thread
def rank(systems, omega_obs, weighting="velocity", free_frame: bool = False,
         fit: str = "velocity", obs_cov=None):
    """Fit every hypothesis and rank them by cross-validation.

    Parameters
    ----------
    systems : sequence of System
        One per hypothesis, on the same world, with different names.
    omega_obs : ndarray, shape (P, 3)
        Observed Euler vectors (rad/s), mantle at rest.
    weighting : {"velocity", "area", "none"}
        Of the torque-space fits.
    free_frame : bool
        Fit the rotation of the observations' frame relative to the mantle with each
        hypothesis (three more parameters in the information criteria; see
        :func:`torque.inference.analysis.analyse`).
    fit : {"velocity", "torque"}
        How cross-validation refits (see :func:`cross_validation`).
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        The observations' covariance: each hypothesis is then fitted by its chi-square, the
        information criteria come from the chi-square (known variances), and nested pairs
        get likelihood-ratio and F-tests.

    Returns
    -------
    rows : Ranking
        A list of :class:`~torque.results.RankRow`, sorted by cross-validation error,
        lowest first.
    tests : list of dict
        Comparisons of the nested pairs: ``smaller``, ``bigger``, ``test``
        (``"likelihood-ratio"``, ``"F"`` or ``"cross-validation"``) and its numbers
        (``statistic``, ``df`` and ``p_value`` for the tests; ``cv_difference_mm_yr``,
        ``excess_se`` for cross-validation).
    """
    fitted, errors = [], {}
    with progress.bar(len(systems), "fitting and cross-validating hypotheses") as b:
        for s in systems:
            b.set_postfix_str(s.name, refresh=False)
            rep = analyse(s, omega_obs, weighting, free_frame=free_frame, obs_cov=obs_cov)
            # with a free frame, cross-validate in the mantle frame the full fit found
            errors[s.name] = cross_validation_errors(s, rep.omega_obs, weighting, fit,
                                                     obs_cov)
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
        rows.append(RankRow(s.name, m["rms_velocity_mm_yr"], m["variance_reduction"], s.n_free,
                        m["aic"], m["aicc"], m["bic"], rms, coefs,
                        cv_stderr_mm_yr=rms_stderr,
                        cv_excess_se=float(excess),
                        within_one_se=within_one_se(rms, best_rms, best_se),
                        effective_observations=m["effective_observations"],
                        effective_parameters=m["effective_parameters"],
                        chi_square=m.get("chi_square")))
    rows = Ranking(sorted(rows, key=lambda r: (np.isnan(r.cv_rms_mm_yr), r.cv_rms_mm_yr)))
    by_name = {s.name: (s, m) for s, _, m in fitted}
    tests = []
    for a in systems:
        for b in systems:
            if a is not b and _nested(a, b):
                tests += _compare(a.name, by_name[a.name][1], b.name, by_name[b.name][1],
                                  errors, area)
    return rows, tests


def _compare(small, m_small, big, m_big, errors, area) -> list:
    """The comparisons a nested pair allows (see the module notes)."""
    pair = {"smaller": small, "bigger": big}
    if "chi_square" in m_small:
        k_s, k_b = m_small["effective_parameters"], m_big["effective_parameters"]
        n = m_big["effective_observations"]
        return [{**pair, "test": "likelihood-ratio",
                 **likelihood_ratio_test(m_small["chi_square"], k_s, m_big["chi_square"], k_b),
                 "reduced_chi_square_bigger": m_big["reduced_chi_square"]},
                {**pair, "test": "F",
                 **_f(f_test(m_small["chi_square"], k_s, m_big["chi_square"], k_b, n))}]
    d, d_se = _weighted_mean_se(errors[small] - errors[big], area)
    cv_s, cv_b = (np.sqrt(_weighted_mean_se(errors[n], area)[0]) for n in (small, big))
    return [{**pair, "test": "cross-validation", "cv_difference_mm_yr": float(cv_s - cv_b),
             "excess_se": float(d / d_se) if d_se > 0 else None}]


def _f(t):
    """An F-test's result under the common keys."""
    return {"statistic": t["F"], "df": t["df"], "p_value": t["p_value"], "F": t["F"]}


def _nested(small: System, big: System) -> bool:
    """Whether ``small``'s terms are a proper subset of ``big``'s, with the same settings."""
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
