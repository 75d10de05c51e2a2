"""The inference layer: the torque balance as a system of equations, its fits, their
statistics and uncertainty, the ranking of hypotheses and the joint fit of a stage series.

Everything here is arrays in, arrays out (no file is read or written): the world and its
force terms come from below (:mod:`torque.forces`), files and commands from above
(:mod:`torque.io`, :mod:`torque.workflows`).

Modules
-------
system       :class:`System` (the balance's linear and nonlinear parts), assembly,
             weighting, identifiability and determinacy checks
solvers      :class:`Fit`, the torque-space and velocity-space fits, prediction, Newton's
             method on a nonlinear balance
_optimise    the bounded Gauss-Newton / trust-region optimiser behind the velocity fits
covariance   misfit whitening (every misfit as one matrix), covariance blocks, model error
methods      the registry of fit methods (:data:`FIT_METHODS`, :data:`PREFERRED_FIT`)
statistics   misfits, pole ellipses, budgets, information criteria, F and LR tests
analysis     :func:`analyse`: every fit method on one system, as a :class:`Report`
profile      profile-likelihood intervals
resampling   bootstrap, Monte Carlo over motions and over physics
ranking      cross-validation and information criteria over hypotheses
stages       stage Euler vectors from finite rotations and the joint fit of a series

Names of the submodules are importable from here, on first use (PEP 562).
"""

from .._lazy import lazy_exports

_EXPORTS = {
    "WEIGHTINGS": "system",
    "System": "system",
    "assemble": "system",
    "plate_weights": "system",
    "rigid_constraint": "system",
    "Fit": "solvers",
    "fit_torque": "solvers",
    "predict": "solvers",
    "NEWTON_TOL": "solvers",
    "NEWTON_MAX_STEPS": "solvers",
    "solve_balance": "solvers",
    "fit_velocity": "solvers",
    "fit_velocity_many": "solvers",
    "on_one_blas_thread": "solvers",
    "misfit_whitening": "covariance",
    "covariance_blocks": "covariance",
    "model_error_covariance": "covariance",
    "add_covariances": "covariance",
    "degrees_of_freedom": "covariance",
    "variance_factor": "covariance",
    "FitMethod": "methods",
    "FIT_METHODS": "methods",
    "CONFIDENCE": "statistics",
    "velocity_misfit": "statistics",
    "pole_covariance": "statistics",
    "pole_ellipse": "statistics",
    "force_budget": "statistics",
    "residual_torque": "statistics",
    "pole_distance_deg": "statistics",
    "information_criteria": "statistics",
    "information_criteria_chi_square": "statistics",
    "f_test": "statistics",
    "likelihood_ratio_test": "statistics",
    "Report": "analysis",
    "analyse": "analysis",
    "Z95": "profile",
    "fixed_at": "profile",
    "profile_intervals": "profile",
    "PERCENTILES": "resampling",
    "bootstrap": "resampling",
    "monte_carlo_motions": "resampling",
    "monte_carlo_physics": "resampling",
    "Ranking": "ranking",
    "cross_validation_errors": "ranking",
    "cross_validation": "ranking",
    "within_one_se": "ranking",
    "rank": "ranking",
    "recommend": "ranking",
    "chi_bar_square_weights": "statistics",
    "chi_square_check": "statistics",
    "cluster_robust_covariance": "covariance",
    "interpolate_rotations": "stages",
    "stage_euler_vector": "stages",
    "Stage": "stages",
    "JointFit": "stages",
    "fit_joint": "stages",
    "joint_information_criteria": "stages",
    "cross_validation_error": "stages",
    "draw_motions": "stages",
}

__getattr__, __dir__ = lazy_exports(__name__, globals(), _EXPORTS)
__all__ = sorted(_EXPORTS)
