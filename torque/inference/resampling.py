"""Uncertainty of fitted coefficients by resampling: bootstrap over plates, Monte Carlo over
the observed motions' uncertainties and over physics parameters given as distributions.

All draws come from ``numpy.random.default_rng(seed)``, so a run is reproducible. Each
member is refitted by the preferred fit (velocity space,
:func:`torque.inference.solvers.fit_velocity`,
started from the fit to the data; bootstrap and motion draws of a linear balance are
fitted together by :func:`torque.inference.solvers.fit_velocity_many`, 0.3 ms a member on the
demo, a quarter of one alone) unless ``fit="torque"`` asks for the linear torque-space fit,
whose regressors hold the noisy observed motions (errors in variables), so its spread is
biased.

With a free frame (``free_frame``) every member refits the frame's rotation with its
coefficients, as the fit did, so the members' spread holds the frame-coefficient
covariance; members are drawn and refitted with one covariance, the one the fit used
(the observations' plus any model error).
"""

from __future__ import annotations

import dataclasses

import numpy as np
from scipy import optimize, special

from .. import progress
from ..errors import InputError, TorqueError
from .covariance import jittered_cholesky
from .solvers import fit_torque, fit_velocity, fit_velocity_many, on_one_blas_thread
from .system import System, plate_weights

__all__ = ["PERCENTILES", "expanded_percentiles", "bootstrap", "monte_carlo_motions",
           "monte_carlo_physics"]

PERCENTILES = (2.5, 50.0, 97.5)


def expanded_percentiles(n: int, confidence: float = 0.95) -> tuple:
    """The percentiles of an expanded percentile interval from ``n`` resampled units.

    A bootstrap over ``n`` plates spreads like ``sqrt((n - 1) / n)`` times the estimate's
    own spread and its percentiles are normal ones, so its plain 2.5-97.5 percentile
    interval is too narrow for a few tens of plates. The expanded interval takes the
    percentiles ``100 Phi(-+ z')`` with ``z' = sqrt(n / (n - 1)) t_{n-1}``, ``t`` the
    Student quantile of the confidence (Hesterberg 2015, *The American Statistician* 69,
    371-386, sec. 3.3; ``scipy.special.stdtrit`` and ``ndtr``).

    Parameters
    ----------
    n : int
        Resampled units (plates), 2 or more.
    confidence : float

    Returns
    -------
    tuple of float
        The lower and upper percentiles (0-100).

    Examples
    --------
    >>> [round(p, 2) for p in expanded_percentiles(30)]
    [1.88, 98.12]
    """
    a = (1 - confidence) / 2
    z = np.sqrt(n / (n - 1)) * special.stdtrit(n - 1, 1 - a)
    low = 100 * special.ndtr(-z)
    return float(low), float(100 - low)


def _summary(system: System, samples: np.ndarray, n_failed: int = 0, interval=None,
             **extra) -> dict:
    """The members' spread: per free coefficient its mean, std, percentiles and the 95 %
    interval reported (``low``, ``high``: the percentiles ``interval``, default 2.5 and
    97.5)."""
    labels = [l for l, f in zip(system.labels, system.free) if f]
    interval = tuple(interval or (2.5, 97.5))
    out = {"members": int(len(samples)), "failed": int(n_failed), **extra,
           "interval_percentiles": list(interval), "coefficients": {}}
    for i, l in enumerate(labels):
        col = samples[:, i]
        pct = np.percentile(col, PERCENTILES) if len(col) else [np.nan] * 3
        ends = np.percentile(col, interval) if len(col) else [np.nan] * 2
        out["coefficients"][l] = {"mean": float(np.mean(col)) if len(col) else None,
                                  "std": float(np.std(col, ddof=1)) if len(col) > 1 else None,
                                  "p2_5": float(pct[0]), "median": float(pct[1]),
                                  "p97_5": float(pct[2]),
                                  "low": float(ends[0]), "high": float(ends[1])}
    return out


def _progress(n, desc):
    # shown on a terminal for long runs only; never in pipes or tests
    return progress.bar(n, desc, minimum=200)


@on_one_blas_thread
def _refit(system, omega_obs, weighting, fit, start, plates=None, obs_cov=None,
           free_frame=False):
    """The free coefficients refitted by ``fit`` ("velocity" or "torque")."""
    if fit == "torque":
        return fit_torque(system, omega_obs, weighting, plates=plates).values[system.free]
    if start is None:
        start = fit_torque(system, omega_obs, weighting)
    return fit_velocity(system, omega_obs, start, free_frame, plates=plates,
                        obs_cov=obs_cov).values[system.free]


@on_one_blas_thread
def _refit_many(system, omega_obs, start, plates, obs_cov, desc, block=250,
                free_frame=False):
    """Velocity-space refits of many members, together (:func:`fit_velocity_many`), a
    block at a time for the progress bar: (free coefficients (n, k), number failed)."""
    n = len(omega_obs) if np.ndim(omega_obs) == 3 else len(plates)
    rows = []
    with _progress(n, desc) as bar:
        for a in range(0, n, block):
            part = slice(a, min(a + block, n))
            got = fit_velocity_many(
                system, omega_obs[part] if np.ndim(omega_obs) == 3 else omega_obs, start,
                plates=None if plates is None else plates[part], obs_cov=obs_cov,
                free_frame=free_frame)
            rows.append(got[0] if free_frame else got)
            bar.update(part.stop - part.start)
    values = np.concatenate(rows)[:, system.free]
    ok = ~np.isnan(values).any(axis=1)
    return values[ok], int((~ok).sum())


def _start(system, omega_obs, weighting, fit, obs_cov=None, free_frame=False):
    """The fit to the data that velocity-space members start from (None for torque)."""
    if fit == "torque":
        if free_frame:
            raise ValueError("torque-space refits cannot fit a free frame: use velocity")
        return None
    if fit != "velocity":
        raise ValueError(f"fit must be 'velocity' or 'torque', got {fit!r}")
    return fit_velocity(system, omega_obs, fit_torque(system, omega_obs, weighting),
                        free_frame, obs_cov=obs_cov)


def bootstrap(system: System, omega_obs, n: int, seed: int = 0,
              weighting: str = "velocity", fit: str = "velocity", obs_cov=None,
              free_frame: bool = False) -> dict:
    """Refit on ``n`` sets of plates drawn with replacement.

    Parameters
    ----------
    system : System
    omega_obs : ndarray, shape (P, 3)
        Observed Euler vectors, rad/s.
    n : int
        Number of resamples.
    seed : int
    weighting : {"velocity", "area", "none"}
    fit : {"velocity", "torque"}
        How each member is refitted: the preferred velocity-space fit (default), or the
        faster torque-space fit.
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        The observations' covariance: velocity-space members then minimise the chi-square,
        as the fit they resample did.
    free_frame : bool
        Refit each member's frame rotation too (``omega_obs`` then in the frame of the
        observations as given); velocity-space refits only.

    Returns
    -------
    dict
        ``members``, ``failed``, ``method``, ``seed``, ``fit``, ``interval_percentiles``
        and, per free coefficient, ``mean``, ``std``, ``p2_5``, ``median``, ``p97_5`` and
        the 95 % interval ``low``, ``high``: the expanded percentile interval
        (:func:`expanded_percentiles`), since the plain one is too narrow for a few tens
        of plates.
    """
    rng = np.random.default_rng(seed)
    P = system.n_plates
    out, failed = [], 0
    start = _start(system, omega_obs, weighting, fit, obs_cov, free_frame)
    draws = [rng.integers(P, size=P) for _ in range(n)]
    if fit == "velocity":
        out, failed = _refit_many(system, omega_obs, start, draws, obs_cov, "bootstrap",
                                  free_frame=free_frame)
    else:
        with _progress(n, "bootstrap") as bar:
            for idx in draws:
                try:
                    out.append(_refit(system, omega_obs, weighting, fit, start, plates=idx,
                                      obs_cov=obs_cov))
                except TorqueError:       # a draw that cannot separate the coefficients
                    failed += 1
                bar.update()
    extra = ({"covariance": "each plate's own block of the full covariance (a plate drawn "
                            "twice cannot keep its correlations)"}
             if obs_cov is not None and np.ndim(obs_cov) == 2 else {})
    # a few tens of plates make the plain percentile interval too narrow: expand it
    return _summary(system, np.array(out).reshape(-1, system.n_free), failed,
                    interval=expanded_percentiles(P), method="bootstrap over plates",
                    seed=seed, fit=fit, free_frame=bool(free_frame),
                    interval_kind="expanded percentile (Hesterberg 2015)", **extra)


@on_one_blas_thread
def monte_carlo_motions(system: System, omega_obs, cov, n: int, seed: int = 0,
                        weighting: str = "velocity", fit: str = "velocity",
                        obs_cov=None, free_frame: bool = False) -> dict:
    """Refit for ``n`` draws of the observed Euler vectors from their covariance.

    Vectorised: the torque columns are linear in the motions, so every member's least
    squares problem is formed at once and solved by batched normal equations; members whose
    solution breaks a bound are refitted one by one with bounds.

    Parameters
    ----------
    system : System
    omega_obs : ndarray, shape (P, 3)
        Observed Euler vectors, rad/s.
    cov : ndarray, shape (P, 3, 3) or (3P, 3P)
        Covariance of each observed Euler vector, (rad/s)^2, or the full covariance with
        the correlations between plates.
    n : int
    seed : int
    weighting : {"velocity", "area", "none"}
    fit : {"velocity", "torque"}
        How each member is refitted: the preferred velocity-space fit (default), or the
        faster torque-space fit.
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        The observations' covariance: velocity-space members then minimise the chi-square,
        as the fit they resample did.
    free_frame : bool
        Refit each member's frame rotation too (``omega_obs`` then in the frame of the
        observations as given); velocity-space refits only.

    Returns
    -------
    dict
        ``members``, ``failed``, ``method``, ``seed``, ``fit``, ``interval_percentiles`` and,
        per free coefficient, ``mean``, ``std``, ``p2_5``, ``median``, ``p97_5`` and the
        95 % interval ``low``, ``high`` (the 2.5 and 97.5 percentiles).
    """
    if cov is None:
        raise InputError("a Monte Carlo over motions needs their covariance: add the cov_xx "
                         "... cov_zz columns to the motions file")
    rng = np.random.default_rng(seed)
    P = system.n_plates
    cov = np.asarray(cov, float)
    L = jittered_cholesky(cov)
    if cov.ndim == 2:
        # a full covariance: plates correlated with one another
        draws = omega_obs[None] + (rng.standard_normal((n, 3 * P)) @ L.T).reshape(n, P, 3)
    else:
        draws = omega_obs[None] + np.einsum("pij,npj->npi", L, rng.standard_normal((n, P, 3)))
    if fit != "torque":
        start = _start(system, omega_obs, weighting, fit, obs_cov, free_frame)
        out, failed = _refit_many(system, draws, start, None, obs_cov,
                                  "Monte Carlo over motions", free_frame=free_frame)
        return _summary(system, np.array(out).reshape(-1, system.n_free), failed,
                        method="Monte Carlo over motion uncertainties", seed=seed, fit=fit,
                        free_frame=bool(free_frame))
    if free_frame:
        raise ValueError("torque-space refits cannot fit a free frame: use velocity")
    W = plate_weights(system, weighting)
    # columns for every member: G_n = W (b + A w_n)
    K = len(system.labels)
    if system.nonlinear:
        G = np.stack([W @ system.columns(d) for d in draws])        # (n, 3P, K)
    else:
        Aw = (system.A.reshape(K * 3 * P, 3 * P) @ draws.reshape(n, 3 * P).T)
        G = (system.b.reshape(K * 3 * P, 1) + Aw).reshape(K, 3 * P, n)
        G = np.einsum("ij,kjn->nik", W, G)                           # (n, 3P, K)
    free = system.free
    h = -G[:, :, ~free] @ system.fixed[~free]
    Gf = G[:, :, free]
    scale = np.linalg.norm(Gf[0], axis=0)
    Gs = Gf / scale
    x = np.linalg.solve(np.einsum("nik,nil->nkl", Gs, Gs),
                        np.einsum("nik,ni->nk", Gs, h)[..., None])[..., 0] / scale
    lo, hi = system.bounds[free].T
    broke = np.nonzero(np.any((x < lo) | (x > hi), axis=1))[0]
    for i in broke:
        res = optimize.lsq_linear(Gs[i], h[i], bounds=(lo * scale, hi * scale), method="bvls")
        x[i] = res.x / scale
    return _summary(system, x, 0, method="Monte Carlo over motion uncertainties", seed=seed,
                    fit=fit, refitted_with_bounds=int(len(broke)))


@on_one_blas_thread
def monte_carlo_physics(build_system, physics, spread: dict, omega_obs, n: int,
                        seed: int = 0, weighting: str = "velocity",
                        fit: str = "velocity", obs_cov=None,
                        free_frame: bool = False) -> dict:
    """Refit for ``n`` draws of the physics parameters from their distributions.

    ``build_system(physics) -> System`` rebuilds the terms for one draw. Draws that are not
    physical (say, a negative thickness) are redrawn up to 10 times, then counted failed.

    Parameters
    ----------
    build_system : callable
        ``build_system(physics) -> System``.
    physics : Physics
        The central values.
    spread : dict
        From :func:`torque.hypothesis.parse_spread`.
    omega_obs : ndarray, shape (P, 3)
    n : int
    seed : int
    weighting : {"velocity", "area", "none"}
    fit : {"velocity", "torque"}
        How each member is refitted: the preferred velocity-space fit (default), or the
        faster torque-space fit.
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        The observations' covariance: velocity-space members then minimise the chi-square,
        as the fit they resample did.
    free_frame : bool
        Refit each member's frame rotation too (``omega_obs`` then in the frame of the
        observations as given); velocity-space refits only.

    Returns
    -------
    dict
        ``members``, ``failed``, ``method``, ``seed``, ``fit``, ``interval_percentiles`` and,
        per free coefficient, ``mean``, ``std``, ``p2_5``, ``median``, ``p97_5`` and the
        95 % interval ``low``, ``high`` (the 2.5 and 97.5 percentiles).
    """
    if not spread:
        raise InputError("a Monte Carlo over physics needs a [spread] table in the hypothesis")
    rng = np.random.default_rng(seed)
    out, failed = [], 0
    system = None
    # every member starts from the fit at the central physics (near every draw's optimum)
    start = _start(build_system(physics), omega_obs, weighting, fit, obs_cov, free_frame)
    with _progress(n, "physics Monte Carlo") as bar:
        for _ in range(n):
            for _try in range(10):
                kw = {}
                for key, (kind, val) in spread.items():
                    base = getattr(physics, key)
                    kw[key] = (base + val * rng.standard_normal() if kind == "normal"
                               else rng.uniform(*val))
                draw = dataclasses.replace(physics, **kw)
                try:
                    draw.validate()
                    break
                except TorqueError:
                    draw = None
            if draw is None:
                failed += 1
                bar.update()
                continue
            system = build_system(draw)
            try:
                out.append(_refit(system, omega_obs, weighting, fit, start, obs_cov=obs_cov,
                                  free_frame=free_frame))
            except TorqueError:
                failed += 1
            bar.update()
    if system is None:
        raise InputError("no physics draw was physical; check the [spread] table")
    return _summary(system, np.array(out).reshape(-1, system.n_free), failed,
                    method="Monte Carlo over physics parameters", seed=seed, fit=fit,
                    free_frame=bool(free_frame),
                    spread={k: list(v) if isinstance(v, tuple) else v
                            for k, v in spread.items()})
