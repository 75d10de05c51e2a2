"""Profile-likelihood intervals of fitted coefficients, and which coefficients sit at a bound.

The standard error of a coefficient comes from the curvature of the misfit at its minimum,
which says nothing true where the minimum lies on a bound (a drag coefficient or a slab
fraction held at 0) or where the misfit is far from quadratic. The profile instead fixes
the coefficient at a trial value, refits everything else (the other free coefficients and,
with a free frame, the mantle's rotation), and keeps the values whose misfit stays within
the threshold of the best:

    S_profile(c_j) <= S_min + s^2 q,   q = z^2,

with ``s^2`` the fit's variance factor: 1 for a chi-square with a known covariance (``z``
the normal quantile, 1.96: ``q = chi2_1(0.95)``), ``S_min / dof`` for the area misfit or
a chi-square whose scale is estimated (``z`` Student's t with ``dof`` degrees of freedom:
``q = F(1, dof)(0.95)``; :func:`torque.inference.covariance.variance_factor`), so that, for
a model linear in its coefficients and far from any bound, the interval is exactly
``value +- z stderr`` (Draper and Smith 1998, sec. 24.5; Venzon and Moolgavkar
1988): the threshold and the standard errors use the same ``s^2``, so the two agree where
both are valid. Each end is
found by bracketing, then ``scipy.optimize.brentq`` on ``sqrt(S - S_min) - z s`` (the same
root, and nearly linear in the coefficient, so it takes fewer refits); an end that reaches
the bound before the threshold is the bound itself, and is flagged.

References
----------
.. [1] Draper, N. R. and Smith, H. (1998). *Applied Regression Analysis*, 3rd ed. Wiley
   (confidence regions of nonlinear least squares from the sum of squares).
.. [2] Venzon, D. J. and Moolgavkar, S. H. (1988). A method for computing
   profile-likelihood-based confidence intervals. *Applied Statistics* 37, 87-94.
.. [3] Chandler, R. E. and Bate, S. (2007). Inference for clustered data using the
   independence loglikelihood. *Biometrika* 94, 167-183 (the adjusted profile of
   ``errors="robust"``).
"""

from __future__ import annotations

import dataclasses

import numpy as np
from scipy import optimize

from ..errors import TorqueError
from .covariance import misfit_whitening
from .solvers import Z95, fit_velocity, on_one_blas_thread, predict
from .system import System

__all__ = ["Z95", "fixed_at", "profile_intervals"]



def fixed_at(system: System, label: str, value: float) -> System:
    """The same balance with coefficient ``label`` fixed at ``value``.

    Parameters
    ----------
    system : System
    label : str
    value : float

    Returns
    -------
    System
    """
    i = system.labels.index(label)
    free = system.free.copy()
    fixed = system.fixed.copy()
    free[i] = False
    fixed[i] = value
    return dataclasses.replace(system, free=free, fixed=fixed)


def _misfit_at(system, omega_obs, free_frame, obs_cov, start):
    """The least misfit of ``system`` over its free coefficients (and the frame), and the
    refit (None when nothing is left free)."""
    if system.free.any():
        refit = fit_velocity(system, omega_obs, start, free_frame, obs_cov=obs_cov)
        return refit.rss, refit
    # nothing left free: the prediction is fixed; the frame, if free, enters linearly
    W, _ = misfit_whitening(system, obs_cov)
    r = W @ (predict(system, system.fixed) - omega_obs).ravel()
    if free_frame:
        F = W @ np.tile(np.eye(3), (system.n_plates, 1))
        r = r - F @ np.linalg.lstsq(F, r, rcond=None)[0]
    return float(r @ r), None


@on_one_blas_thread
def profile_intervals(fit, omega_obs, free_frame: bool = False, obs_cov=None,
                      confidence_z: float | None = None, errors: str = "classical") -> dict:
    """Profile-likelihood interval of every free coefficient of a velocity-space fit.

    Parameters
    ----------
    fit : Fit
        A velocity-space fit (:func:`torque.inference.solvers.fit_velocity`) made with the same
        ``free_frame`` and ``obs_cov``.
    omega_obs : array_like, shape (P, 3)
        The observations it was fitted to, rad/s.
    free_frame : bool
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
    confidence_z : float, optional
        The interval is where the misfit rises by at most ``z^2 s^2``; default the fit's
        95 % quantile (:attr:`Fit.quantile`: 1.96 with a known variance, Student's t
        with the fit's degrees of freedom when it is estimated, so that the threshold is
        the F(1, dof) quantile).
    errors : {"classical", "robust"}
        ``"robust"``: the rise allowed for each coefficient is scaled by the ratio of its
        cluster-robust to its classical variance, and ``z`` is its robust quantile
        (:attr:`Fit.robust_quantiles`): the profile likelihood adjusted for errors whose
        variance differs from plate to plate, which for a linear model gives exactly
        ``value +- z robust_stderr`` (the adjusted likelihood ratio of Chandler and Bate
        2007, *Biometrika* 94, for a scalar parameter).

    Returns
    -------
    dict
        ``{label: {"low", "high", "at_bound", "low_at_bound", "high_at_bound"}}``:
        ``at_bound`` is ``"lower"``, ``"upper"`` or None for the estimate itself, the
        other two say whether an end of the interval is a bound. An end that cannot be
        found (the refit fails there) is None.

    Examples
    --------
    Far from its bound, the profile interval of the demo's slab fraction is the standard
    error interval, to well within its width:

    >>> import torque
    >>> from torque.inference.solvers import fit_velocity
    >>> inputs = torque.Inputs.load("polygons_demo/world.toml")
    >>> hyp = torque.load_hypothesis("polygons_demo/hypotheses/ridge_slab_drag.toml")
    >>> omega = torque.read_motions("polygons_demo/motions.csv").for_world(inputs.world)
    >>> system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, omega))
    >>> fit = fit_velocity(system, omega)
    >>> p = profile_intervals(fit, omega)["slab"]
    >>> i = system.labels.index("slab")
    >>> z = fit.quantile                      # Student's t: the area misfit's variance is estimated
    >>> se_low, se_high = fit.values[i] - z * fit.stderr[i], fit.values[i] + z * fit.stderr[i]
    >>> bool(abs(p["low"] - se_low) < 0.05 * (se_high - se_low))
    True
    """
    system = fit.system
    omega_obs = np.asarray(omega_obs, float)
    if errors not in ("classical", "robust"):
        raise ValueError(f"errors must be 'classical' or 'robust', got {errors!r}")
    robust = errors == "robust" and fit.robust_stderr is not None
    out = {}
    for i in np.nonzero(system.free)[0]:
        label = system.labels[i]
        value, se = float(fit.values[i]), float(fit.stderr[i])
        ratio = (fit.robust_stderr[i] / se) ** 2 if robust and se > 0 else 1.0
        z = confidence_z if confidence_z is not None else (
            fit.robust_quantiles[i] if robust else fit.quantile)
        rise = z * np.sqrt(fit.variance_factor * ratio)                 # z s
        lo, hi = (float(b) for b in system.bounds[i])
        step = se if se > 0 else max(abs(value), 1e-300) * 0.1

        seen, refits = {}, {}

        def excess(c):
            # brentq evaluates its bracket's ends again: each refit is made once, started
            # from the refit nearest to it (the coefficients move little between them)
            if c not in seen:
                near = min(refits, key=lambda b: abs(b - c), default=None)
                rss, refit = _misfit_at(fixed_at(system, label, c), omega_obs, free_frame,
                                        obs_cov, fit if near is None else refits[near])
                # the square root of the misfit's rise, nearly linear in c on each side
                # (exactly, for a model linear in it): brentq's interpolation fits it well
                seen[c] = np.sqrt(max(rss - fit.rss, 0.0)) - rise
                if refit is not None:
                    refits[c] = refit
            return seen[c]

        seen[value] = -rise                         # the estimate itself
        tol = 1e-9 * max(abs(value), 1.0)
        ends = {}
        for side, bound in (("low", lo), ("high", hi)):
            ends[side], ends[f"{side}_at_bound"] = _end(excess, value, step, side, bound,
                                                        tol)
        at = ("lower" if np.isclose(value, lo, rtol=0, atol=1e-9 * max(step, abs(value)))
              else "upper" if np.isclose(value, hi, rtol=0,
                                         atol=1e-9 * max(step, abs(value))) else None)
        out[label] = {"low": ends["low"], "high": ends["high"], "at_bound": at,
                      "low_at_bound": ends["low_at_bound"],
                      "high_at_bound": ends["high_at_bound"]}
    return out


def _end(excess, value, step, side, bound, tol, max_steps=12):
    """One end of the interval: (value, whether it is the bound), or (None, False)."""
    sign = -1.0 if side == "low" else 1.0
    inside = value
    try:
        for n in range(max_steps):
            trial = value + sign * step * 2.0 ** n
            if (trial - bound) * sign >= 0:         # reached or passed the bound
                if excess(bound) <= 0:
                    return float(bound), True
                trial = bound
            if excess(trial) > 0:
                a, b = sorted((inside, trial))
                return float(optimize.brentq(excess, a, b, xtol=tol * 1e-3 + 1e-12 * abs(b),
                                             rtol=1e-10)), False
            inside = trial
    except (TorqueError, ValueError, np.linalg.LinAlgError):
        pass
    return None, False
