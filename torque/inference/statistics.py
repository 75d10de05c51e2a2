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
.. [5] Self, S. G. and Liang, K.-Y. (1987). Asymptotic properties of maximum likelihood
   estimators and likelihood ratio tests under nonstandard conditions. *J. Am. Stat.
   Assoc.* 82, 605-610 (the chi-bar-square mixture of a parameter on its bound).
.. [6] Hurvich, C. M. and Tsai, C.-L. (1989). Regression and time series model selection
   in small samples. *Biometrika* 76, 297-307 (AICc, with the variance a parameter).
"""

from __future__ import annotations

import numpy as np
from scipy import special

from ..euler import M_S_TO_MM_YR, RAD_S_PER_DEG_MYR
from .system import System

__all__ = ["CONFIDENCE", "velocity_misfit", "pole_covariance", "pole_ellipse",
           "force_budget", "residual_torque", "pole_distance_deg",
           "information_criteria", "information_criteria_chi_square",
           "chi_bar_square_weights", "f_test", "likelihood_ratio_test",
           "chi_square_check"]

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
    """AIC, AICc and BIC for a least-squares fit with Gaussian errors [1]_ [2]_ [6]_.

    ``AIC = n ln(RSS/n) + 2k``, ``BIC = n ln(RSS/n) + k ln(n)`` (constants common to all
    models dropped, among them the variance's own parameter), and the small-sample
    correction with the variance counted, ``K = k + 1`` parameters in all:
    ``AICc = AIC + 2K(K+1)/(n-K-1)`` (Hurvich and Tsai 1989).

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
    K = k + 1                                       # the variance is estimated too
    aicc = aic + (2 * K * (K + 1) / (n - K - 1) if n - K - 1 > 0 else np.inf)
    return {"aic": float(aic), "aicc": float(aicc), "bic": float(base + k * np.log(n))}


def information_criteria_chi_square(chi_square: float, n: int, k: int) -> dict:
    """AIC, AICc and BIC when the errors' covariance is known [1]_ [2]_.

    With known variances the log-likelihood is ``-chi^2 / 2`` up to a constant, so
    ``AIC = chi^2 + 2k`` and ``BIC = chi^2 + k ln(n)``; they assume the covariance is right
    (a reduced chi-square near 1). AICc is AIC: its small-sample term corrects for an
    estimated variance (Hurvich and Tsai 1989), and with the variance known AIC is already
    unbiased for a linear Gaussian model (Burnham and Anderson 2002, sec. 2.4).

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
    return {"aic": float(aic), "aicc": float(aic), "bic": float(chi_square + k * np.log(n))}


def chi_bar_square_weights(cov, bounded, draws: int = 20_000, seed: int = 0) -> np.ndarray:
    """Weights of the chi-bar-square distribution of a likelihood-ratio statistic whose
    null value lies on the bound of some of the tested coefficients [5]_.

    The smaller hypothesis leaves the terms out, so its value of their coefficients is 0;
    where 0 is a bound of a coefficient (a resistance in ``[0, inf)``), the bigger fit
    cannot go below it and the statistic is a mixture ``sum_j w_j chi2_j`` of chi-squares
    with ``j`` degrees of freedom, ``w_j`` the probability that the projection of a
    normal draw (the coefficients' covariance) onto the cone they may take has ``j``
    coordinates off the bound. One bounded coefficient alone gives the 50:50 mixture of
    chi2_0 and chi2_1 exactly; for more, the projections of ``draws`` normal draws (seeded:
    the weights are reproducible) are found face by face (the cone's ``2^b`` faces, ``b``
    bounded coefficients).

    Parameters
    ----------
    cov : ndarray, shape (d, d)
        Covariance of the tested coefficients in the bigger fit (any common scale).
    bounded : array_like of bool, shape (d,)
        Which coefficients have their null value 0 on a bound (their sign fixed).
    draws : int
    seed : int

    Returns
    -------
    ndarray, shape (d + 1,)
        ``w_0 ... w_d``; ``w_d = 1`` when no coefficient is bounded (the plain chi-square).

    Examples
    --------
    >>> chi_bar_square_weights(np.eye(1), [True]).tolist()
    [0.5, 0.5]
    >>> np.round(chi_bar_square_weights(np.eye(2), [True, True], draws=40_000), 2).tolist()
    [0.25, 0.5, 0.25]
    """
    bounded = np.asarray(bounded, bool)
    d = len(bounded)
    w = np.zeros(d + 1)
    b = int(bounded.sum())
    if b == 0:
        w[d] = 1.0
        return w
    cov = np.asarray(cov, float)
    if d == 1:
        return np.array([0.5, 0.5])
    if not np.all(np.isfinite(cov)):
        # no information on the correlations: independent coefficients (binomial weights)
        from math import comb
        for j in range(b + 1):
            w[d - b + j] = comb(b, j) / 2.0 ** b
        return w
    scale = np.sqrt(np.clip(np.diag(cov), 1e-300, None))
    V = cov / np.outer(scale, scale)
    z = np.random.default_rng(seed).multivariate_normal(np.zeros(d), V, size=draws,
                                                        method="cholesky")
    Q = np.linalg.pinv(V)
    idx = np.flatnonzero(bounded)
    best = np.full(draws, np.inf)
    dim = np.zeros(draws, int)
    for mask in range(2 ** b):
        held = np.zeros(d, bool)
        held[idx[[(mask >> i) & 1 == 1 for i in range(b)]]] = True
        F, A = ~held, held
        x = z.copy()
        if A.any():
            x[:, A] = 0.0
            if F.any():
                # the nearest point of the face (in the metric V^-1): x_F = z_F + Q_FF^-1
                # Q_FA z_A, at distance^2 z_A^T V_AA^-1 z_A
                x[:, F] = z[:, F] + z[:, A] @ np.linalg.solve(Q[np.ix_(F, F)],
                                                              Q[np.ix_(F, A)]).T
            dist = np.einsum("ni,ij,nj->n", z[:, A], np.linalg.pinv(V[np.ix_(A, A)]),
                             z[:, A])
        else:
            dist = np.zeros(draws)
        ok = np.all(x[:, bounded] >= 0, axis=1) & (dist < best)
        best[ok], dim[ok] = dist[ok], int(F.sum())
    w += np.bincount(dim, minlength=d + 1) / draws
    return w


def _mixture_sf(statistic, weights, sf):
    """``P(T >= statistic)`` for a mixture ``sum_j w_j T_j``, ``sf(j, x)`` the survival
    function of ``T_j`` (j >= 1; ``T_0`` is 0)."""
    if statistic <= 0:
        return 1.0
    return float(sum(w * sf(j, statistic) for j, w in enumerate(weights) if j and w))


def f_test(rss_small: float, k_small: int, rss_big: float, k_big: int, n: int,
           weights=None) -> dict:
    """Extra-sum-of-squares F-test of a nested model against a bigger one [3]_.

    ``F = ((RSS_s - RSS_b)/(k_b - k_s)) / (RSS_b/(n - k_b))``, p-value from
    ``scipy.stats.f`` (its survival function, ``scipy.special.fdtrc``). With ``weights``
    (:func:`chi_bar_square_weights`, a tested coefficient on its bound) the reference is
    the mixture ``sum_j w_j P(F_{j, n-k_b} >= q F / j)``, ``q = k_b - k_s``.

    Parameters
    ----------
    rss_small, rss_big : float
        Residual sums of squares of the nested and the bigger model.
    k_small, k_big : int
        Their numbers of free coefficients.
    n : int
        Number of equations.
    weights : array_like, optional
        Chi-bar-square weights ``w_0 ... w_q``.

    Returns
    -------
    dict
        ``F``, ``p_value`` (None when undefined), ``df`` and ``reference``.
    """
    df1, df2 = k_big - k_small, n - k_big
    if df1 <= 0 or df2 <= 0 or rss_big <= 0:
        return {"F": None, "p_value": None, "df": [df1, df2], "reference": None}
    F = ((rss_small - rss_big) / df1) / (rss_big / df2)
    if weights is None or weights[-1] == 1:
        return {"F": float(F), "p_value": float(special.fdtrc(df1, df2, F)),
                "df": [df1, df2], "reference": f"F({df1}, {df2})"}
    p = _mixture_sf(df1 * F, weights, lambda j, t: special.fdtrc(j, df2, t / j))
    return {"F": float(F), "p_value": p, "df": [df1, df2],
            "reference": _mixture_name(weights, f"F(j, {df2})")}


def _mixture_name(weights, kind):
    """How a mixture reference is printed: its weights."""
    terms = ", ".join(f"{w:.3g} x j={j}" for j, w in enumerate(weights) if w)
    return f"chi-bar-square mixture of {kind} ({terms}; a coefficient on its bound)"


def likelihood_ratio_test(chi2_small: float, k_small: int, chi2_big: float,
                          k_big: int, weights=None) -> dict:
    """Likelihood-ratio test of a nested model with known observation covariance [4]_ [5]_.

    With known variances ``-2 ln L = chi^2 + const``, so the likelihood-ratio statistic is
    ``chi2_small - chi2_big``, asymptotically chi-square distributed with
    ``q = k_big - k_small`` degrees of freedom when the smaller model is true; p-value from
    ``scipy.stats.chi2`` (its survival function, ``scipy.special.chdtrc``). Where the
    smaller model's value of a tested coefficient (0) lies on that coefficient's bound,
    the reference is the chi-bar-square mixture ``sum_j w_j chi2_j`` (Self and Liang 1987;
    ``weights`` from :func:`chi_bar_square_weights`): for one coefficient, half the plain
    chi-square's p-value. It is only as right as the covariance (a reduced chi-square near
    1).

    Parameters
    ----------
    chi2_small, chi2_big : float
        The chi-squares of the nested and the bigger model.
    k_small, k_big : int
        Their numbers of fitted parameters.
    weights : array_like, optional
        Chi-bar-square weights ``w_0 ... w_q`` (default: the plain chi-square).

    Returns
    -------
    dict
        ``statistic``, ``p_value`` (None when undefined), ``df`` and ``reference``.

    Examples
    --------
    A statistic of 2.706 is the 10 % point of chi2_1, and the 5 % point of the 50:50
    mixture of a coefficient on its bound:

    >>> round(likelihood_ratio_test(12.706, 2, 10.0, 3)["p_value"], 3)
    0.1
    >>> round(likelihood_ratio_test(12.706, 2, 10.0, 3, weights=[0.5, 0.5])["p_value"], 3)
    0.05
    """
    df = k_big - k_small
    if df <= 0:
        return {"statistic": None, "p_value": None, "df": df, "reference": None}
    lr = max(chi2_small - chi2_big, 0.0)
    if weights is None or weights[-1] == 1:
        return {"statistic": float(lr), "p_value": float(special.chdtrc(df, lr)), "df": df,
                "reference": f"chi-square({df})"}
    return {"statistic": float(lr), "p_value": _mixture_sf(lr, weights, special.chdtrc),
            "df": df, "reference": _mixture_name(weights, "chi-square(j)")}


#: A reduced chi-square whose two-sided p-value under the stated covariance falls below
#: this is reported as a sign that the covariance is not right.
CHI_SQUARE_ALARM = 0.01


def chi_square_check(chi_square: float, dof: int) -> dict:
    """Whether a chi-square is what the covariance it was computed with predicts.

    Under a right covariance the minimised chi-square follows chi2 with ``dof`` degrees of
    freedom (``scipy.stats.chi2``: ``scipy.special.chdtr`` and ``chdtrc``). Too large, the
    covariance (or the model) leaves out error; too small, the covariance overstates it;
    either way intervals that take it as known are wrong by about ``sqrt(reduced)``.

    Parameters
    ----------
    chi_square : float
    dof : int

    Returns
    -------
    dict
        ``reduced``, ``p_high`` (``P(chi2_dof >= chi_square)``), ``p_low``, ``tail``
        (``"high"``, ``"low"`` or None when both exceed :data:`CHI_SQUARE_ALARM` / 2) and a
        ``message`` (None when ``tail`` is).

    Examples
    --------
    >>> chi_square_check(40.0, 40)["tail"] is None, chi_square_check(80.0, 40)["tail"]
    (True, 'high')
    """
    dof = max(int(dof), 1)
    high = float(special.chdtrc(dof, chi_square))
    low = float(special.chdtr(dof, chi_square))
    reduced = float(chi_square) / dof
    tail = ("high" if high < CHI_SQUARE_ALARM / 2 else
            "low" if low < CHI_SQUARE_ALARM / 2 else None)
    message = None
    if tail == "high":
        message = (f"reduced chi-square {reduced:.3g} on {dof} degrees of freedom lies in "
                   f"the upper tail (p = {high:.2g}): the covariance leaves out error, and "
                   f"intervals that take it as known are too narrow by about "
                   f"{np.sqrt(reduced):.2g}x; add a model error (--model-error) or scale by "
                   "the reduced chi-square (--variance estimated)")
    elif tail == "low":
        message = (f"reduced chi-square {reduced:.3g} on {dof} degrees of freedom lies in "
                   f"the lower tail (p = {low:.2g}): the covariance overstates the errors, "
                   "and intervals that take it as known are too wide; check its units")
    return {"reduced": reduced, "p_high": high, "p_low": low, "tail": tail,
            "message": message}
