"""What a fit means, in numbers: velocity misfits, pole covariances and ellipses, force
budgets, residual torques, information criteria, F- and likelihood-ratio tests.

References
----------
.. [1] Burnham, K. P. and Anderson, D. R. (2002). *Model Selection and Multimodel
   Inference*, 2nd ed. Springer, sec. 2.2 (AIC for least squares: n ln(RSS/n) + 2k).
.. [2] Schwarz, G. (1978). Estimating the dimension of a model. *Ann. Stat.* 6, 461-464.
.. [3] Draper, N. R. and Smith, H. (1998). *Applied Regression Analysis*, 3rd ed. Wiley
   (extra sum of squares F-test for nested linear models; covariance of estimates).
.. [4] Wilks, S. S. (1938). The large-sample distribution of the likelihood ratio for
   testing composite hypotheses. *Ann. Math. Stat.* 9, 60-62.
"""

from __future__ import annotations

import numpy as np
from scipy import special

from ..euler import M_S_TO_MM_YR, RAD_S_PER_DEG_MYR
from .system import System

__all__ = ["CONFIDENCE", "velocity_misfit", "pole_covariance", "pole_ellipse",
           "force_budget", "residual_torque", "pole_distance_deg",
           "information_criteria", "information_criteria_chi_square", "f_test",
           "likelihood_ratio_test"]

CONFIDENCE = 0.95


def velocity_misfit(system: System, omega_pred, omega_obs):
    """Per-plate RMS velocity misfit (mm/yr) and the global misfit numbers (exact).

    Parameters
    ----------
    system : System
    omega_pred, omega_obs : array_like, shape (P, 3)
        rad/s.

    Returns
    -------
    rms : ndarray, shape (P,)
        mm/yr per plate.
    global : dict
        ``rms_velocity_mm_yr``, ``variance_reduction``, ``velocity_rss_m4_s2``.
    """
    dw = np.asarray(omega_pred) - np.asarray(omega_obs)
    R = system.radius_m
    per = np.einsum("pi,pij,pj->p", dw, system.D, dw)               # int |dw x r|^2 dA
    obs = np.einsum("pi,pij,pj->p", omega_obs, system.D, omega_obs)
    rms = R * np.sqrt(per / system.area) * M_S_TO_MM_YR
    total_rms = R * np.sqrt(per.sum() / system.area.sum()) * M_S_TO_MM_YR
    vr = 1.0 - per.sum() / obs.sum() if obs.sum() > 0 else np.nan
    return rms, {"rms_velocity_mm_yr": float(total_rms),
                 "variance_reduction": float(vr),
                 "velocity_rss_m4_s2": float(per.sum() * R ** 4)}


def pole_covariance(system: System, coefficients, cov_free, omega_pred) -> np.ndarray:
    """Covariance (rad/s)^2 of each predicted Euler vector, shape (P, 3, 3), from the
    covariance of the free coefficients by linear propagation.

    Parameters
    ----------
    system : System
    coefficients : array_like, shape (K,)
    cov_free : ndarray, shape (k, k)
        Covariance of the free coefficients.
    omega_pred : array_like, shape (P, 3)
        The prediction at ``coefficients``.

    Returns
    -------
    ndarray, shape (P, 3, 3)
    """
    c = np.asarray(coefficients, float)
    M = system.balance_jacobian(c, omega_pred)
    rhs = system.columns(omega_pred)[:, system.free]
    J = -np.linalg.solve(M, rhs)                                     # (3P, k)
    full = J @ cov_free @ J.T
    P = system.n_plates
    return full.reshape(P, 3, P, 3)[np.arange(P), :, np.arange(P), :]


def _chi2_ppf(q, df):
    """The chi-square quantile, as ``scipy.stats.chi2.ppf`` computes it."""
    return 2 * special.gammaincinv(df / 2, q)


def pole_ellipse(omega, cov, confidence: float = CONFIDENCE) -> dict:
    """Confidence ellipse of a pole and the rate's standard error from a 3x3 covariance.

    The pole direction ``u = w/|w|`` varies as ``du = (I - u u^T) dw / |w|``; its 2-D
    covariance in the tangent plane gives the ellipse, scaled by the chi-square quantile
    with 2 degrees of freedom (``scipy.stats.chi2.ppf``, through the regularised incomplete
    gamma function it uses: ``scipy.stats`` itself takes half a second to import).

    Parameters
    ----------
    omega : array_like, shape (3,)
        rad/s.
    cov : array_like, shape (3, 3)
        (rad/s)^2.
    confidence : float

    Returns
    -------
    dict
        ``major_deg``, ``minor_deg`` (semi-axes), ``azimuth_deg`` of the major axis,
        ``rate_stderr_deg_myr``, ``confidence``; None where the rate is 0.
    """
    omega = np.asarray(omega, float)
    rate = np.linalg.norm(omega)
    if rate == 0 or not np.all(np.isfinite(cov)):
        return {"major_deg": None, "minor_deg": None, "azimuth_deg": None,
                "rate_stderr_deg_myr": None, "confidence": confidence}
    u = omega / rate
    east = np.cross([0.0, 0.0, 1.0], u)
    east = east / np.linalg.norm(east) if np.linalg.norm(east) > 1e-12 else np.array([0, 1.0,
                                                                                        0])
    north = np.cross(u, east)
    T = np.stack([east, north]) / rate                                # (2, 3)
    c2 = T @ cov @ T.T
    vals, vecs = np.linalg.eigh(c2)
    # A covariance of rank below 3 (fewer coefficients than pole and rate) gives axes that
    # are rounding noise of the largest variance (1e-8 degrees, say): they are 0, and a
    # circle's azimuth, undefined, is 0, so that the numbers do not change with the order
    # of a sum.
    floor = 1e-12 * max(np.linalg.eigvalsh(np.asarray(cov, float))[-1], 0.0) / rate ** 2
    vals = np.where(vals > floor, vals, 0.0)
    k = np.sqrt(_chi2_ppf(confidence, 2))
    major = np.degrees(k * np.sqrt(vals[1]))
    minor = np.degrees(k * np.sqrt(vals[0]))
    az = (np.degrees(np.arctan2(vecs[0, 1], vecs[1, 1])) % 180.0
          if vals[1] - vals[0] > floor else 0.0)
    rate_se = np.sqrt(max(u @ cov @ u, 0)) / RAD_S_PER_DEG_MYR
    return {"major_deg": float(major), "minor_deg": float(minor), "azimuth_deg": float(az),
            "rate_stderr_deg_myr": float(rate_se), "confidence": confidence}


def force_budget(system: System, coefficients, omega) -> np.ndarray:
    """Share of each term in each plate's driving torque, shape (P, K).

    The driving torque of a plate is the sum of the motion-independent torques of all terms
    (at their coefficients). A term's share is its torque (at the motions ``omega``)
    projected on the driving torque's direction and divided by its magnitude: driving
    terms' shares add to 1, resisting terms' come out negative (near -1 in all if the
    plate is balanced).

    Parameters
    ----------
    system : System
    coefficients : array_like, shape (K,)
    omega : array_like, shape (P, 3)
        rad/s.

    Returns
    -------
    ndarray, shape (P, K)
        NaN for a plate with no driving torque.
    """
    c = np.asarray(coefficients, float)
    P = system.n_plates
    G = system.columns(omega).reshape(P, 3, -1) * c                   # (P, 3, K)
    drive = (c[:, None] * system.b).sum(0).reshape(P, 3)
    mag2 = np.einsum("pi,pi->p", drive, drive)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(mag2[:, None] > 0, np.einsum("pik,pi->pk", G, drive) / mag2[:, None],
                        np.nan)


def residual_torque(system: System, coefficients, omega) -> np.ndarray:
    """Sum of all terms' torques (N m) at the observed motions, per plate (P, 3).

    Parameters
    ----------
    system : System
    coefficients : array_like, shape (K,)
    omega : array_like, shape (P, 3)

    Returns
    -------
    ndarray, shape (P, 3)
    """
    return (system.columns(omega) @ np.asarray(coefficients, float)).reshape(-1, 3)


def pole_distance_deg(w1, w2) -> np.ndarray:
    """Angle (degrees) between the poles of two sets of Euler vectors (P, 3).

    Parameters
    ----------
    w1, w2 : array_like, shape (P, 3)

    Returns
    -------
    ndarray, shape (P,)
    """
    n = np.linalg.norm(np.cross(w1, w2), axis=-1)
    return np.degrees(np.arctan2(n, np.einsum("pi,pi->p", w1, w2)))


def information_criteria(rss: float, n: int, k: int) -> dict:
    """AIC, AICc and BIC for a least-squares fit with Gaussian errors [1]_ [2]_.

    ``AIC = n ln(RSS/n) + 2k``, ``AICc = AIC + 2k(k+1)/(n-k-1)``, ``BIC = n ln(RSS/n) +
    k ln(n)`` (constants common to all models dropped).

    Parameters
    ----------
    rss : float
        Residual sum of squares.
    n : int
        Number of equations.
    k : int
        Number of free coefficients.

    Returns
    -------
    dict
        ``aic``, ``aicc``, ``bic``.
    """
    base = n * np.log(max(rss, 1e-300) / n)
    aic = base + 2 * k
    aicc = aic + (2 * k * (k + 1) / (n - k - 1) if n - k - 1 > 0 else np.inf)
    return {"aic": float(aic), "aicc": float(aicc), "bic": float(base + k * np.log(n))}


def information_criteria_chi_square(chi_square: float, n: int, k: int) -> dict:
    """AIC, AICc and BIC when the errors' covariance is known [1]_ [2]_.

    With known variances the log-likelihood is ``-chi^2 / 2`` up to a constant, so
    ``AIC = chi^2 + 2k``, ``AICc = AIC + 2k(k+1)/(n-k-1)``, ``BIC = chi^2 + k ln(n)``; they
    assume the covariance is right (a reduced chi-square near 1).

    Parameters
    ----------
    chi_square : float
    n : int
        Number of observations (3 per plate).
    k : int
        Number of fitted parameters.

    Returns
    -------
    dict
        ``aic``, ``aicc``, ``bic``.
    """
    aic = chi_square + 2 * k
    aicc = aic + (2 * k * (k + 1) / (n - k - 1) if n - k - 1 > 0 else np.inf)
    return {"aic": float(aic), "aicc": float(aicc), "bic": float(chi_square + k * np.log(n))}


def f_test(rss_small: float, k_small: int, rss_big: float, k_big: int, n: int) -> dict:
    """Extra-sum-of-squares F-test of a nested model against a bigger one [3]_.

    ``F = ((RSS_s - RSS_b)/(k_b - k_s)) / (RSS_b/(n - k_b))``, p-value from
    ``scipy.stats.f`` (its survival function, ``scipy.special.fdtrc``).

    Parameters
    ----------
    rss_small, rss_big : float
        Residual sums of squares of the nested and the bigger model.
    k_small, k_big : int
        Their numbers of free coefficients.
    n : int
        Number of equations.

    Returns
    -------
    dict
        ``F``, ``p_value`` (None when undefined) and ``df``.
    """
    df1, df2 = k_big - k_small, n - k_big
    if df1 <= 0 or df2 <= 0 or rss_big <= 0:
        return {"F": None, "p_value": None, "df": [df1, df2]}
    F = ((rss_small - rss_big) / df1) / (rss_big / df2)
    return {"F": float(F), "p_value": float(special.fdtrc(df1, df2, F)), "df": [df1, df2]}


def likelihood_ratio_test(chi2_small: float, k_small: int, chi2_big: float,
                          k_big: int) -> dict:
    """Likelihood-ratio test of a nested model with known observation covariance [4]_.

    With known variances ``-2 ln L = chi^2 + const``, so the likelihood-ratio statistic is
    ``chi2_small - chi2_big``, asymptotically chi-square distributed with
    ``k_big - k_small`` degrees of freedom when the smaller model is true; p-value from
    ``scipy.stats.chi2`` (its survival function, ``scipy.special.chdtrc``). It is only as
    right as the covariance (a reduced chi-square near 1).

    Parameters
    ----------
    chi2_small, chi2_big : float
        The chi-squares of the nested and the bigger model.
    k_small, k_big : int
        Their numbers of fitted parameters.

    Returns
    -------
    dict
        ``statistic``, ``p_value`` (None when undefined) and ``df``.
    """
    df = k_big - k_small
    if df <= 0:
        return {"statistic": None, "p_value": None, "df": df}
    lr = max(chi2_small - chi2_big, 0.0)
    return {"statistic": float(lr), "p_value": float(special.chdtrc(df, lr)), "df": df}
