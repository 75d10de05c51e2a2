"""Comparing driving-force hypotheses on the same world and motions.

Each hypothesis is fitted (both fits, see :mod:`torque.balance`); the table gives its
velocity misfit, number of free coefficients, AIC, AICc and BIC (Gaussian errors, from
the velocity-space residual sum of squares over the 3P balance equations), and the
leave-one-plate-out cross-validation error: for every plate, the coefficients are refitted
(velocity space by default) without that plate's misfit, all plates are predicted, and the left-out
plate's RMS velocity misfit is kept; the error is the area-weighted RMS of these. Rows are
sorted by AIC, best (lowest) first. Nested pairs (one hypothesis' terms a subset of
another's, with equal settings) get an F-test.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .balance import System, fit_torque, fit_velocity, on_one_blas_thread, predict
from .diagnostics import (analyse, f_test, information_criteria,
                          information_criteria_chi_square, velocity_misfit)
from .errors import InputError


@dataclass(frozen=True)
class Row:
    """One hypothesis in a ranking.

    Attributes
    ----------
    name : str
    rms_velocity_mm_yr : float
        RMS velocity misfit of the preferred fit over all plates.
    variance_reduction : float
        1 - misfit / observed, both area-integrated squared velocities.
    free : int
        Number of free coefficients.
    aic, aicc, bic : float
    cv_rms_mm_yr : float
        Leave-one-plate-out cross-validation error.
    coefficients : dict
        ``{label: value}`` of the free coefficients.
    """

    name: str
    rms_velocity_mm_yr: float
    variance_reduction: float
    free: int
    aic: float
    aicc: float
    bic: float
    cv_rms_mm_yr: float
    coefficients: dict


def cross_validation(system: System, omega_obs, weighting="velocity",
                     fit: str = "velocity") -> float:
    """Leave-one-plate-out RMS velocity misfit (mm/yr), area-weighted over the plates.

    Parameters
    ----------
    system : System
    omega_obs : array_like, shape (P, 3)
    weighting : {"velocity", "area", "none"}
    fit : {"velocity", "torque"}
        How the coefficients are refitted without each plate: the preferred velocity-space
        fit (default, warm-started) or the faster torque-space fit.

    Returns
    -------
    float
        mm/yr; NaN if a refit fails.
    """
    P = system.n_plates
    sq, area = 0.0, 0.0
    start = None
    for p in range(P):
        keep = np.r_[0:p, p + 1:P]
        try:
            left_out = fit_torque(system, omega_obs, weighting, plates=keep)
            if fit == "velocity":
                if start is None:
                    start = fit_velocity(system, omega_obs,
                                         fit_torque(system, omega_obs, weighting))
                left_out = fit_velocity(system, omega_obs, start, plates=keep)
            pred = predict(system, left_out.values)
        except InputError:
            return float("nan")
        rms, _ = velocity_misfit(system, pred, omega_obs)
        sq += rms[p] ** 2 * system.area[p]
        area += system.area[p]
    return float(np.sqrt(sq / area))


@on_one_blas_thread
def rank(systems, omega_obs, weighting="velocity", free_frame: bool = False,
         fit: str = "velocity", obs_cov=None):
    """Fit every hypothesis and rank them.

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
        :func:`torque.diagnostics.analyse`).
    fit : {"velocity", "torque"}
        How cross-validation refits (see :func:`cross_validation`).
    obs_cov : ndarray, shape (P, 3, 3), optional
        The observations' covariance: each hypothesis is then fitted by its chi-square, and
        the information criteria come from the chi-square (known variances).

    Returns
    -------
    rows : list of Row
        Sorted by AIC, lowest first.
    tests : list of dict
        F-tests of the nested pairs: ``smaller``, ``bigger``, ``F``, ``p_value``, ``df``.
    """
    rows, rss, specs = [], {}, {}
    for s in systems:
        rep = analyse(s, omega_obs, weighting, free_frame=free_frame, obs_cov=obs_cov)
        _, glob = rep.misfit()
        n = 3 * s.n_plates
        k = s.n_free + (3 if free_frame else 0)
        ic = (information_criteria_chi_square(rep.preferred.info["chi_square"], n, k)
              if obs_cov is not None else
              information_criteria(glob["velocity_rss_m4_s2"], n, k))
        coefs = {l: float(v) for l, v, f in zip(s.labels, rep.preferred.values, s.free) if f}
        # with a free frame, cross-validate in the mantle frame the full fit found
        rows.append(Row(s.name, glob["rms_velocity_mm_yr"], glob["variance_reduction"],
                        s.n_free, ic["aic"], ic["aicc"], ic["bic"],
                        cross_validation(s, rep.omega_obs, weighting, fit), coefs))
        rss[s.name] = glob["velocity_rss_m4_s2"]
        specs[s.name] = s
    rows.sort(key=lambda r: r.aic)
    tests = []
    for a in systems:
        for b in systems:
            if a is not b and _nested(a, b):
                extra = 3 if free_frame else 0
                t = f_test(rss[a.name], a.n_free + extra, rss[b.name], b.n_free + extra,
                           3 * a.n_plates)
                tests.append({"smaller": a.name, "bigger": b.name, **t})
    return rows, tests


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
    return True
