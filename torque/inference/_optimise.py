"""The bounded least-squares optimiser behind the velocity-space fits: Gauss-Newton steps
(many members at once where the balance is linear), scipy's trust-region method where a
step would leave the bounds, and coefficients held on a bound where the Karush-Kuhn-Tucker
conditions say so (Nocedal and Wright 2006, *Numerical Optimization*, secs. 10.3 and 12.3).
"""

from __future__ import annotations

import numpy as np
from scipy import optimize

from .system import System

#: Gauss-Newton stops when its step is below this fraction of every parameter's scale.
GAUSS_NEWTON_STEP = 1e-11
GAUSS_NEWTON_MAX_STEPS = 50
#: ``Fit.status`` of a fit that Gauss-Newton finished (the others carry scipy's
#: ``least_squares`` status, 1 to 4).
GAUSS_NEWTON_STATUS = 5


def _velocity_gauss_newton(system: System, W, target, frame_cols, scale, x, lo, hi,
                           keep=None):
    """Gauss-Newton on many velocity-space misfits of one linear balance at once.

    Member ``m`` minimises ``|W_m w(c) + F_m f - t_m|^2`` over its coefficients
    ``c = x[:k] * scale`` (with the system's fixed ones) and frame ``f = x[k:]``, where
    ``w(c) = -M(c)^-1 d(c)`` solves the balance; ``dw/dc_k = -M^-1 (A_k w + b_k)``. A step
    that raises the misfit is halved, except near the minimum (steps below 1e-6 of the
    scales), where the misfit changes below its rounding. Members are stacked, so each
    step is a few batched solves (scipy's least squares takes one problem at a time).

    Parameters
    ----------
    system : System
        Linear: no nonlinear part may have a non-zero coefficient.
    W : ndarray, shape (B, N, N)
        Whitening of each member's misfit (see :func:`misfit_whitening`).
    target : ndarray, shape (B, N)
        ``W_m`` times the member's observed motions.
    frame_cols : ndarray, shape (B, N, 3), or None
        The frame's columns (already scaled), when a frame is fitted.
    scale : ndarray, shape (k,)
    x : ndarray, shape (B, k) or (B, k + 3)
        Starting points, in units of ``scale``.
    lo, hi : ndarray, shape (k,) or (k + 3,)
        Bounds in the same units.
    keep : ndarray of bool, shape like ``lo``, optional
        The parameters fitted (default all); the others stay at their starting values.

    Returns
    -------
    x : ndarray, shape like ``x``
    done : ndarray of bool, shape (B,)
        Members that converged (a full step below :data:`GAUSS_NEWTON_STEP`) inside the
        bounds; the others are left where they stopped, for a bounded method to finish.
    evaluations : ndarray of int, shape (B,)
        Balances solved for each member.
    """
    free = system.free
    k = int(free.sum())
    K, N = system.b.shape
    A_flat = system.A.reshape(K, N * N)
    A_free, b_free = system.A[free], system.b[free]
    fixed = np.where(free, 0.0, system.fixed)

    P = N // 3
    if system.block_diagonal:
        # each plate balances on its own: (K, P * 9), one 3x3 block per plate
        A_flat = system.A.reshape(K, P, 3, P, 3)[:, np.arange(P), :, np.arange(P), :]
        A_flat = A_flat.transpose(1, 0, 2, 3).reshape(K, P * 9)

    def solve(C, rhs):
        # two batched solves cost less than one batched inverse (LU against Gauss-Jordan)
        if system.block_diagonal:
            M = (C @ A_flat).reshape(-1, P, 3, 3)
            return np.linalg.solve(M, rhs.reshape(len(C), P, 3, -1)).reshape(rhs.shape)
        return np.linalg.solve((C @ A_flat).reshape(-1, N, N), rhs)

    def evaluate(x, m):
        # residuals and Jacobians of members m at their points x
        C = fixed + np.zeros((len(x), 1))
        C[:, free] = x[:, :k] * scale
        w = -solve(C, (C @ system.b)[..., None])[..., 0]
        cols = np.einsum("kij,bj->bik", A_free, w) + b_free.T          # (B, N, k)
        Jw = -solve(C, cols) * scale
        r = np.einsum("bij,bj->bi", W[m], w) - target[m]
        J = np.matmul(W[m], Jw)
        if frame_cols is not None:
            r = r + np.einsum("bij,bj->bi", frame_cols[m], x[:, k:])
            J = np.concatenate([J, frame_cols[m]], axis=2)
        return r, J

    x = np.array(x, float)
    B, n = x.shape
    keep = np.ones(n, bool) if keep is None else np.asarray(keep, bool)
    done = np.zeros(B, bool)
    live = np.ones(B, bool)
    t = np.ones(B)
    evaluations = np.ones(B, int)
    try:
        r, J = evaluate(x, np.arange(B))
    except np.linalg.LinAlgError:
        return x, done, evaluations
    rss = np.einsum("bi,bi->b", r, r)
    for _ in range(GAUSS_NEWTON_MAX_STEPS):
        idx = np.flatnonzero(live)
        if not len(idx):
            break
        Ji, ri = J[idx][:, :, keep], r[idx]
        try:
            full = np.zeros((len(idx), n))
            full[:, keep] = -np.linalg.solve(np.einsum("bik,bil->bkl", Ji, Ji),
                                             np.einsum("bik,bi->bk", Ji, ri)[..., None])[..., 0]
        except np.linalg.LinAlgError:
            break
        step = full * t[idx, None]
        x_new = x[idx] + step
        outside = np.any((x_new < lo) | (x_new > hi), axis=1)
        # a converged step is below 1e-6 of the scales, so it is taken whatever the misfit
        # does there: its end needs no evaluation (the caller evaluates the fit)
        finish = ~outside & (np.abs(full).max(axis=1) <= GAUSS_NEWTON_STEP)
        x[idx[finish]] = x_new[finish]
        done[idx[finish]] = True
        live[idx[finish | outside]] = False
        go = ~finish & ~outside
        if not go.any():
            continue
        g = idx[go]
        try:
            r_new, J_new = evaluate(x_new[go], g)
        except np.linalg.LinAlgError:
            break
        evaluations[g] += 1
        rss_new = np.einsum("bi,bi->b", r_new, r_new)
        better = (rss_new <= rss[g]) | (np.abs(step[go]).max(axis=1) <= 1e-6)
        take = g[better]
        x[take], r[take], J[take], rss[take] = (x_new[go][better], r_new[better],
                                                J_new[better], rss_new[better])
        t[take] = 1.0
        t[g[~better]] /= 2
        live[g[t[g] < 1e-6]] = False
    return x, done, evaluations


def _gauss_newton(residual, jacobian, x, keep, lo, hi):
    """Gauss-Newton on one misfit given by its residual and Jacobian functions (a nonlinear
    balance, solved by Newton's method at each point): the parameters ``keep`` from ``x``,
    the others held. (x, evaluations), x None where a step would leave the bounds or it
    does not converge (a full step below :data:`GAUSS_NEWTON_STEP`)."""
    x = np.array(x, float)
    r = residual(x)
    rss, evaluations, t = float(r @ r), 1, 1.0
    J = jacobian(x)[:, keep]
    for _ in range(GAUSS_NEWTON_MAX_STEPS):
        full = np.zeros(len(x))
        full[keep] = np.linalg.lstsq(J, -r, rcond=None)[0]
        step = t * full
        x_new = x + step
        if np.any((x_new < lo) | (x_new > hi)):
            return None, evaluations
        if np.abs(full).max() <= GAUSS_NEWTON_STEP:
            return x_new, evaluations      # taken whatever the misfit does: no evaluation
        r_new = residual(x_new)
        evaluations += 1
        rss_new = float(r_new @ r_new)
        # near the minimum the misfit changes below its rounding: take the step there
        if rss_new <= rss or np.abs(step).max() <= 1e-6:
            x, r, rss, t = x_new, r_new, rss_new, 1.0
            J = jacobian(x)[:, keep]
        else:
            t /= 2
            if t < 1e-6:
                break
    return None, evaluations


def _least_squares(residual, jacobian, x_init, keep, lo, hi):
    """scipy's bounded trust-region least squares over the parameters ``keep``, the others
    held at ``x_init``: (x, evaluations, status, at-bound mask)."""
    if not keep.any():
        return x_init.copy(), 1, 1, np.zeros(len(x_init), bool)

    def embed(y):
        x = x_init.copy()
        x[keep] = y
        return x
    res = optimize.least_squares(lambda y: residual(embed(y)), x_init[keep],
                                 jac=lambda y: jacobian(embed(y))[:, keep],
                                 bounds=(lo[keep], hi[keep]), method="trf", x_scale="jac",
                                 xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=200)
    active = np.zeros(len(x_init), bool)
    active[np.flatnonzero(keep)[res.active_mask != 0]] = True
    return embed(res.x), int(res.nfev), int(res.status), active


def _minimise_bounded(residual, jacobian, x_start, lo, hi, k_free, gauss_newton):
    """The bounded least-squares minimum, with the parameters at a bound held exactly there.

    The trust-region method keeps its iterates strictly inside the bounds, so a parameter
    whose minimum lies on a bound only approaches it, a fixed fraction of the remaining
    distance per step: dozens of steps to reach 1e-300 of its scale, never the bound itself.
    Instead the parameters (of the first ``k_free``) that start on a bound, or that the
    optimiser finds at one, are held on it and the others refitted; that point is kept if it
    satisfies the Karush-Kuhn-Tucker conditions (the misfit's gradient points out of the
    feasible box in every held parameter; Nocedal and Wright 2006, Numerical Optimization,
    sec. 12.3), else every parameter is fitted freely within the bounds.

    ``gauss_newton(x, keep)`` (x, evaluations) fits the parameters ``keep`` from ``x`` by
    Gauss-Newton, or returns x None where it does not apply (a nonlinear balance) or does
    not converge inside the bounds; it is tried before the trust-region method on each
    subproblem, and after it to go on from where the misfit stops falling (to rounding,
    up to ~1e-8 from the minimum) to where its gradient vanishes.

    Returns
    -------
    x : ndarray
    evaluations, status : int
        Residual evaluations and scipy's status of the last solve.
    held : ndarray of bool
        The parameters on a bound.
    """
    n = len(x_start)
    coef = np.arange(n) < k_free

    def kkt(x, held):
        # d(|r|^2)/dx = 2 J^T r: >= 0 at a lower bound, <= 0 at an upper one (to rounding)
        J, r = jacobian(x), residual(x)
        g = J.T @ r
        tol = 1e-10 * np.linalg.norm(J, axis=0) * np.linalg.norm(r)
        at_lo = held & (x == lo)
        return bool(np.all(g[at_lo] >= -tol[at_lo]) and np.all(g[held & ~at_lo]
                                                             <= tol[held & ~at_lo]))

    evaluations = 0

    def fit(x_init, keep):
        # Gauss-Newton where it serves, else the trust-region method and then Gauss-Newton
        nonlocal evaluations
        x, nfev = gauss_newton(x_init, keep)
        evaluations += nfev
        if x is not None:
            return x, GAUSS_NEWTON_STATUS, np.zeros(n, bool)
        x, nfev, status, active = _least_squares(residual, jacobian, x_init, keep, lo, hi)
        evaluations += nfev
        if not (active & coef).any():
            y, nfev = gauss_newton(x, keep)
            evaluations += nfev
            if y is not None:
                return y, GAUSS_NEWTON_STATUS, active
        return x, status, active

    held = coef & ((x_start == lo) | (x_start == hi))
    if held.any():
        x, status, more = fit(x_start, ~held)
        if not more.any() and kkt(x, held):
            return x, evaluations, status, held
        x_start = x
    x, status, active = fit(x_start, np.ones(n, bool))
    active &= coef
    if active.any():
        # put the parameters the optimiser left next to a bound on it, and refit the rest
        x_on = np.where(active & (np.abs(x - lo) <= np.abs(x - hi)), lo,
                        np.where(active, hi, x))
        y, status_on, more = fit(x_on, ~active)
        r_y, r_x = residual(y), residual(x)
        if not more.any() and kkt(y, active) and r_y @ r_y <= r_x @ r_x * (1 + 1e-12):
            return y, evaluations, status_on, active
    return x, evaluations, status, active
