"""The registry of fit methods: :data:`FIT_METHODS`, in the order
:func:`torque.inference.analysis.analyse` runs them, and :data:`PREFERRED_FIT`.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..results import PREFERRED_FIT  # noqa: F401  (the registry names the preferred method)
from .solvers import fit_torque, fit_velocity

__all__ = ["FitMethod", "FIT_METHODS"]


# ----------------------------------------------------------------------------------------
# the registry of fit methods
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class FitMethod:
    """One way of estimating the free coefficients, as :func:`torque.inference.analysis.analyse`
    runs it.

    Attributes
    ----------
    name : str
        Its key in :data:`FIT_METHODS` and its ``Fit.method``.
    run : callable
        ``run(system, omega_obs, earlier, weighting) -> Fit``; ``earlier`` maps the names
        of the methods already run (in registry order) to their fits, so a method can
        start from another's result.
    describes : str
        One line for the documentation.
    frames : bool
        Whether ``run`` takes ``free_frame=True`` and then estimates the rotation of the
        observations' frame relative to the mantle (``Fit.frame_rotation``).
    covariance : bool
        Whether ``run`` takes ``obs_cov=`` (the observations' covariance, (P, 3, 3) or
        (3P, 3P)) and then minimises the chi-square, and ``variance=`` (``"known"`` or
        ``"estimated"``: how its scale is taken).
    counts_dof : bool
        Whether ``run`` takes ``lost_dof=`` (degrees of freedom the observations lost to a
        rigid constraint) into its degrees of freedom.
    """

    name: str
    run: object
    describes: str
    frames: bool = False
    covariance: bool = False
    counts_dof: bool = False


def _run_torque(system, omega_obs, earlier, weighting):
    return fit_torque(system, omega_obs, weighting)


def _run_velocity(system, omega_obs, earlier, weighting, free_frame=False, obs_cov=None,
                  lost_dof=0, variance=None):
    return fit_velocity(system, omega_obs, earlier.get("torque"), free_frame,
                        obs_cov=obs_cov, lost_dof=lost_dof, variance=variance)


#: Fit methods in the order :func:`torque.inference.analysis.analyse` runs them. A new method is
#: one entry here (its ``run`` may use the fits of the methods before it).
FIT_METHODS = {
    "torque": FitMethod("torque", _run_torque, "bounded linear least squares of the "
                        "weighted torque balance"),
    "velocity": FitMethod("velocity", _run_velocity, "nonlinear least squares of the "
                          "area-integrated velocity misfit, or of the chi-square with the "
                          "observations' covariance (preferred)", frames=True,
                          covariance=True, counts_dof=True),
}
