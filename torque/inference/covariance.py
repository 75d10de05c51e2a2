"""Covariance algebra of observed Euler vectors and fitted coefficients: every misfit as one
whitening matrix, per-plate blocks, the model error, and the covariance of estimates.

A covariance of observed Euler vectors is either per plate, shape (P, 3, 3), or full,
shape (3P, 3P) (plate by plate, x, y, z), always in (rad/s)^2.
"""

from __future__ import annotations

import numpy as np
from scipy import linalg

from .system import System

__all__ = ["misfit_whitening", "covariance_blocks", "model_error_covariance",
           "add_covariances", "JITTER", "jittered_cholesky", "degrees_of_freedom",
           "variance_factor", "VARIANCES", "cluster_robust_covariance"]


def misfit_whitening(system: System, obs_cov=None, plates=None):
    """The matrix ``W`` (3P, 3P) whose residual ``W dw`` has the misfit as squared norm.

    * no covariance: blocks ``R^2 L_p^T`` with ``L_p L_p^T = D_p``, so that ``|W dw|^2 =
      R^4 sum_p dw_p^T D_p dw_p`` (m^4/s^2), the area-integrated squared velocity misfit;
    * a covariance ``C``, per plate (P, 3, 3) or full (3P, 3P): ``W^T W = C^-1``, so that
      ``|W dw|^2`` is the chi-square.

    With ``plates`` (plate indices, repeats allowed) each plate's rows count as often as
    it is drawn. A full covariance is then marginalised to the plates kept when none is
    repeated (leave-one-out); a draw with repeats (the bootstrap) takes each plate's own
    3x3 block, since a plate drawn twice cannot be correlated with itself as with
    another.

    Parameters
    ----------
    system : System
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        (rad/s)^2.
    plates : array of int, optional

    Returns
    -------
    W : ndarray, shape (3P, 3P)
    n : int
        Number of observations counted: 3 per plate, times its count.
    """
    P = system.n_plates
    count = (np.ones(P) if plates is None
             else np.bincount(np.asarray(plates), minlength=P).astype(float))
    C = None if obs_cov is None else np.asarray(obs_cov, float)
    if C is not None and C.ndim == 2:
        if plates is None or count.max() <= 1:
            rows = np.repeat(count > 0, 3)
            sub = C[np.ix_(rows, rows)]
            W = np.zeros((3 * P, 3 * P))
            # L^-1 with L L^T = C: |L^-1 dw|^2 = dw^T C^-1 dw
            W[np.ix_(rows, rows)] = linalg.solve_triangular(
                jittered_cholesky(sub), np.eye(len(sub)), lower=True)
            return W, int(rows.sum())
        C = covariance_blocks(C)
    blocks = (system.radius_m ** 2 * np.swapaxes(np.linalg.cholesky(system.D), 1, 2)
              if C is None else _whitening(C))
    blocks = blocks * np.sqrt(count)[:, None, None]
    W = np.zeros((P, 3, P, 3))
    W[np.arange(P), :, np.arange(P), :] = blocks
    return W.reshape(3 * P, 3 * P), 3 * int(count.sum())


def covariance_blocks(cov) -> np.ndarray:
    """Each plate's own 3x3 block of a covariance, shape (P, 3, 3).

    Parameters
    ----------
    cov : ndarray, shape (P, 3, 3) or (3P, 3P)

    Returns
    -------
    ndarray, shape (P, 3, 3)
    """
    C = np.asarray(cov, float)
    if C.ndim == 3:
        return C
    P = len(C) // 3
    return C.reshape(P, 3, P, 3)[np.arange(P), :, np.arange(P), :]


def model_error_covariance(system: System, floor_mm_yr: float) -> np.ndarray:
    """Covariance (rad/s)^2 of a model error of RMS velocity ``floor_mm_yr`` on each plate.

    The model error of plate p is taken as a random rigid rotation ``e_p``, independent
    between plates, whose velocity has mean square ``floor^2`` over the plate:
    ``E[R^2 e^T D_p e] / A_p = floor^2``. The isotropic choice (in the plate's own misfit
    measure) is ``C_p = floor^2 A_p / (3 R^2) D_p^-1``: a big plate's Euler vector is held
    more tightly, since the same error velocity needs a smaller rotation there. Added to
    the observations' covariance, it stands for what the physics leaves out (real misfits
    are mostly model error, not measurement error).

    Parameters
    ----------
    system : System
    floor_mm_yr : float
        RMS velocity of the model error over each plate, mm/yr (>= 0).

    Returns
    -------
    ndarray, shape (P, 3, 3)

    Examples
    --------
    The mean square velocity of such an error over a plate is the floor squared:

    >>> import torque
    >>> from torque.euler import M_S_TO_MM_YR
    >>> inputs = torque.Inputs.load("polygons_demo/world.toml")
    >>> hyp = torque.load_hypothesis("polygons_demo/hypotheses/ridge_drag.toml")
    >>> system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp))
    >>> C = model_error_covariance(system, 2.0)
    >>> ms = system.radius_m ** 2 * np.einsum("pij,pji->p", system.D, C) / system.area
    >>> np.allclose(np.sqrt(ms) * M_S_TO_MM_YR, 2.0)
    True
    """
    from ..euler import M_S_TO_MM_YR
    sigma = float(floor_mm_yr) / M_S_TO_MM_YR                           # m/s
    return (sigma ** 2 * system.area[:, None, None] / (3 * system.radius_m ** 2)
            * np.linalg.inv(system.D))


def add_covariances(cov, blocks) -> np.ndarray:
    """A covariance plus per-plate blocks, in the shape of ``cov``.

    Parameters
    ----------
    cov : ndarray, shape (P, 3, 3) or (3P, 3P), or None
    blocks : ndarray, shape (P, 3, 3)

    Returns
    -------
    ndarray
        (P, 3, 3), or (3P, 3P) when ``cov`` is full.
    """
    blocks = np.asarray(blocks, float)
    if cov is None:
        return blocks
    C = np.array(cov, float)
    if C.ndim == 3:
        return C + blocks
    P = len(blocks)
    C.reshape(P, 3, P, 3)[np.arange(P), :, np.arange(P), :] += blocks
    return C


def _whitening(obs_cov) -> np.ndarray:
    """Blocks ``L_p^-1`` (P, 3, 3) with ``L_p L_p^T = C_p``: ``|L^-1 dw|^2 = dw^T C^-1 dw``
    (:func:`jittered_cholesky`)."""
    return np.linalg.inv(jittered_cholesky(obs_cov))


#: The jitter added to each plate's diagonal before a Cholesky factorisation, relative to
#: that plate's mean variance: it keeps a singular (or vanishing) covariance factorisable
#: and moves a well-known plate's smallest eigenvalue by far less than its own size.
JITTER = 1e-12


def jittered_cholesky(cov) -> np.ndarray:
    """Lower Cholesky factor ``L`` (``L L^T = C``) of a covariance after a jitter scaled per
    plate: ``JITTER`` times each plate's mean variance ``tr(C_pp) / 3`` on its own
    diagonal (1e-300 for a plate with none). The one factorisation every misfit and every
    draw uses.

    Parameters
    ----------
    cov : ndarray, shape (P, 3, 3) or (3P, 3P)
        (rad/s)^2.

    Returns
    -------
    ndarray
        Of the shape of ``cov``: per-plate factors, or the full one.

    Examples
    --------
    A plate known far better than another keeps its own variances (a jitter scaled to the
    largest plate would add 4e-12 to its 1e-20):

    >>> C = np.diag([4.0, 4.0, 4.0, 1e-20, 1e-20, 1e-20])
    >>> L = jittered_cholesky(C)
    >>> bool(np.allclose(L @ L.T, C, rtol=1e-11, atol=0))
    True
    """
    C = np.asarray(cov, float)
    blocks = covariance_blocks(C)
    level = np.trace(blocks, axis1=1, axis2=2) / 3
    add = np.where(level > 0, JITTER * level, 1e-300)                  # (P,)
    if C.ndim == 3:
        return np.linalg.cholesky(C + add[:, None, None] * np.eye(3))
    return np.linalg.cholesky(C + np.diag(np.repeat(add, 3)))


def degrees_of_freedom(n_obs: int, k: int, free_frame: bool = False,
                       lost_dof: int = 0) -> int:
    """Degrees of freedom of a fit: observations less parameters, counted once.

    A free frame is three parameters; observations moved to the no-net-rotation frame or
    given relative to a fixed plate lost three degrees of freedom (``lost_dof``); both are
    the same three rigid rotations, so they count once:
    ``n_obs - k - max(3 * free_frame, lost_dof)``, at least 1. Every fit (``fit``, ``rank``,
    a stage series) counts them here.

    Parameters
    ----------
    n_obs : int
        Observations counted (3 per plate, times its count).
    k : int
        Free coefficients.
    free_frame : bool
    lost_dof : int

    Returns
    -------
    int

    Examples
    --------
    >>> degrees_of_freedom(42, 2), degrees_of_freedom(42, 2, True, 3)
    (40, 37)
    """
    return max(int(n_obs) - int(k) - max(3 * bool(free_frame), int(lost_dof)), 1)


#: How the scale of a chi-square fit's covariance is taken: as known (the default), or
#: estimated from the residuals (the reduced chi-square).
VARIANCES = ("known", "estimated")


def variance_factor(rss: float, dof: int, known: bool) -> float:
    """The factor ``s^2`` that scales ``(J^T J)^-1`` into the estimates' covariance.

    The one convention of every fit: with the observations' covariance (the chi-square)
    it is taken as known, ``s^2 = 1`` (intervals with normal quantiles); asked to, or
    without one (the area misfit), the residuals' variance is estimated from them,
    ``s^2 = rss / dof`` (intervals with Student's t quantiles; Draper and Smith 1998,
    *Applied Regression Analysis*, secs. 2.6 and 24.5). Profile intervals use the same
    ``s^2`` and quantile.

    Parameters
    ----------
    rss : float
        The minimised misfit (the chi-square, or the weighted sum of squares).
    dof : int
    known : bool
        Whether the misfit is a chi-square with a known covariance.

    Returns
    -------
    float
    """
    return 1.0 if known else float(rss) / max(int(dof), 1)


def cluster_robust_covariance(J, r, clusters=3):
    """The cluster-robust (sandwich) covariance of least-squares estimates, with the
    bias-reduced residuals of Bell and McCaffrey (CR2).

    ``V = B (sum_g J_g^T u_g u_g^T J_g) B`` with ``B = (J^T J)^-1`` and each cluster's
    residuals ``u_g = (I - H_gg)^-1/2 r_g`` (``H_gg = J_g B J_g^T``, the cluster's block of
    the hat matrix), which makes ``V`` unbiased when the errors are independent between
    clusters and of equal variance, and nearly so when their variance differs from cluster
    to cluster, as the classical ``s^2 B`` is not (Bell and McCaffrey 2002; Cameron and
    Miller 2015, sec. VI). Here a cluster is a plate: its three rows of the whitened
    residual, whose errors may then have any covariance of their own.

    Parameters
    ----------
    J : ndarray, shape (n, p)
        The whitened residual's Jacobian at the estimate.
    r : ndarray, shape (n,)
        The whitened residual.
    clusters : int
        Rows per cluster (3: one plate's x, y, z).

    Returns
    -------
    cov : ndarray, shape (p, p)
        NaN where ``J^T J`` is singular.
    dof : ndarray, shape (p,)
        Each parameter's degrees of freedom for Student's t quantiles of its interval, by
        Bell and McCaffrey's approximation (``(sum l)^2 / sum l^2`` over the eigenvalues
        ``l`` of ``G^T G``, ``G_g = (I - H)_g A_g J_g B e_j``; Imbens and Kolesar 2016): at
        most the number of clusters less one, fewer where a few clusters hold most of
        the information (a few big plates), where ``t(G - 1)`` would be too narrow.

    References
    ----------
    .. [1] Bell, R. M. and McCaffrey, D. F. (2002). Bias reduction in standard errors for
       linear regression with multi-stage samples. *Survey Methodology* 28, 169-181.
    .. [2] Cameron, A. C. and Miller, D. L. (2015). A practitioner's guide to
       cluster-robust inference. *J. Human Resources* 50, 317-372.
    .. [3] Imbens, G. W. and Kolesar, M. (2016). Robust standard errors in small samples:
       some practical advice. *Rev. Econ. Stat.* 98, 701-712.

    Examples
    --------
    With independent equal-variance errors the sandwich's expectation is the classical
    covariance; for one cluster of rows per observation (HC2) and the residuals of a line
    fit, it is ``B (sum_i x_i x_i^T r_i^2 / (1 - h_ii)) B``:

    >>> x = np.c_[np.ones(6), np.arange(6.0)]
    >>> r = np.array([0.1, -0.2, 0.05, 0.3, -0.1, -0.15])
    >>> V, dof = cluster_robust_covariance(x, r, clusters=1)
    >>> B = np.linalg.inv(x.T @ x); h = np.einsum("ij,jk,ik->i", x, B, x)
    >>> bool(np.allclose(V, B @ (x.T * r ** 2 / (1 - h)) @ x @ B)), bool(np.all(dof < 5))
    (True, True)
    """
    J, r = np.asarray(J, float), np.asarray(r, float)
    n, p = J.shape
    try:
        B = np.linalg.inv(J.T @ J)
    except np.linalg.LinAlgError:
        return np.full((p, p), np.nan), np.full(p, np.nan)
    G = n // clusters
    Jg = J.reshape(G, clusters, p)
    rg = r.reshape(G, clusters)
    counted = np.any(Jg != 0, axis=(1, 2)) | np.any(rg != 0, axis=1)
    H = np.einsum("gik,kl,gjl->gij", Jg, B, Jg)                        # (G, c, c)
    vals, vecs = np.linalg.eigh(np.eye(clusters) - H)
    # (I - H_gg)^-1/2; a cluster that alone fixes a parameter (an eigenvalue near 0)
    # keeps its raw residual there
    inv_sqrt = np.where(vals > 1e-10, 1.0 / np.sqrt(np.clip(vals, 1e-10, None)), 1.0)
    A = np.einsum("gij,gj,gkj->gik", vecs, inv_sqrt, vecs)             # (G, c, c)
    u = np.einsum("gik,gk->gi", A, rg)
    score = np.einsum("gik,gi->gk", Jg, u)                             # (G, p)
    # Bell and McCaffrey's degrees of freedom: G_g = (I - H)[:, g] A_g J_g B e_j, for the
    # clusters counted
    keep = np.repeat(counted, clusters)
    M = (np.eye(n) - J @ B @ J.T)[keep][:, keep].reshape(-1, int(counted.sum()), clusters)
    AJB = np.einsum("gij,gjk,kl->gil", A[counted], Jg[counted], B)     # (G', c, p)
    Gm = np.einsum("ngi,gip->png", M, AJB)                            # (p, n', G')
    GG = np.einsum("png,pnh->pgh", Gm, Gm)
    tr = np.einsum("pgg->p", GG)
    with np.errstate(invalid="ignore", divide="ignore"):
        dof = np.minimum(tr ** 2 / np.einsum("pgh,pgh->p", GG, GG),
                         max(int(counted.sum()) - 1, 1))
    return B @ (score.T @ score) @ B, dof


def _covariance(J, s2: float):
    """Covariance of least-squares estimates, ``s^2 (J^T J)^-1`` (NaN where singular)."""
    k = J.shape[1]
    try:
        return s2 * np.linalg.inv(J.T @ J)
    except np.linalg.LinAlgError:
        return np.full((k, k), np.nan)
