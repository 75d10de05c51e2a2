"""How a hypothesis is fitted, ranked and resampled: :class:`FitOptions`, one object for
every caller, and the rules that tie its options together.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
import numpy as np
from ..errors import InputError, require_memory

__all__ = ["MISFITS", "RESAMPLE_FITS", "STANDARD_ERRORS", "FitOptions"]


MISFITS = ("area", "chi-square")
RESAMPLE_FITS = ("velocity", "torque")
#: The standard errors a fit leads with.
STANDARD_ERRORS = ("classical", "robust")


# ----------------------------------------------------------------------------------------
# options
# ----------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class FitOptions:
    """How a hypothesis is fitted, ranked and resampled: one object for every caller.

    Attributes
    ----------
    misfit : {"area", "chi-square"}
        What the velocity-space fit minimises: the area-integrated squared velocity
        misfit (plates weigh by their area; the variance is estimated from the residuals),
        or the chi-square with the observations' covariance (generalised least squares;
        the covariance is taken as known).
    covariance : str or Path, optional
        A full covariance file of the observed Euler vectors, used instead of the
        motions' ``cov_*`` columns.
    model_error_mm_yr : float, optional
        With the chi-square: a model error of this RMS velocity on each plate, added to
        the observations' covariance.
    weighting : {"velocity", "area", "none"}
        Of the torque-space fit's equations.
    free_frame : bool
        Fit the rotation of the motions' frame relative to the mantle.
    mantle_rotation : tuple of float, optional
        ``(lat, lon, rate_deg_myr)``: the mantle's rotation in the frame of the motions,
        known beforehand (not with ``free_frame``).
    seed : int
        Of every random draw.
    bootstrap, monte_carlo, physics_samples : int
        Resampled members: plates drawn with replacement, motions drawn from their
        covariance, physics drawn from the hypothesis' ``[spread]`` table.
    resample_fit : {"velocity", "torque"}
        How resampled and cross-validation members are refitted.
    profile : bool
        Profile-likelihood intervals of the free coefficients.
    variance : {"known", "estimated"}, optional
        With the chi-square: take the covariance's scale as known (the default: intervals
        unscaled, normal quantiles) or estimate it by the reduced chi-square (Student's t
        and F quantiles). The area misfit's variance is always estimated.
    standard_errors : {"classical", "robust"}, optional
        Which standard errors a fit leads with, propagates into the poles and adjusts its
        profile intervals to (both are reported): default classical with a covariance
        (it describes every plate's errors), robust (cluster-robust, a plate a cluster)
        for the area misfit, whose classical errors assume every plate's residuals of one
        variance (the calibration in docs/method.md).
    recommend : {"likelihood-ratio", "aic", "bic", "cross-validation"}, optional
        ``rank``'s rule (default likelihood-ratio with a covariance, cross-validation
        without; see :mod:`torque.inference.ranking`).
    """

    misfit: str = "area"
    covariance: str | Path | None = None
    model_error_mm_yr: float | None = None
    weighting: str = "velocity"
    free_frame: bool = False
    mantle_rotation: tuple | None = None
    seed: int = 0
    bootstrap: int = 0
    monte_carlo: int = 0
    physics_samples: int = 0
    resample_fit: str = "velocity"
    profile: bool = True
    variance: str | None = None
    standard_errors: str | None = None
    recommend: str | None = None

    def __post_init__(self):
        from ..inference.system import WEIGHTINGS
        for name, value, allowed in (("misfit", self.misfit, MISFITS),
                                     ("weighting", self.weighting, WEIGHTINGS),
                                     ("resample_fit", self.resample_fit, RESAMPLE_FITS)):
            if value not in allowed:
                raise InputError(f"{name} must be one of {', '.join(allowed)}, got {value!r}")
        from ..inference.covariance import VARIANCES
        from ..inference.ranking import RULES
        for name, value, allowed in (("variance", self.variance, VARIANCES),
                                     ("standard_errors", self.standard_errors,
                                      STANDARD_ERRORS),
                                     ("recommend", self.recommend, RULES)):
            if value is not None and value not in allowed:
                raise InputError(f"{name} must be one of {', '.join(allowed)}, got {value!r}")
        if self.variance == "known" and self.misfit != "chi-square":
            raise InputError("only a chi-square's variance can be known: the area misfit's "
                             "is estimated from the residuals",
                             hint="add --misfit chi-square, or leave out --variance")
        if self.recommend not in (None, "cross-validation") and self.misfit != "chi-square":
            raise InputError(f"the {self.recommend} rule needs the likelihood, and so the "
                             "observations' covariance",
                             hint="add --misfit chi-square, or recommend by cross-validation")
        if self.model_error_mm_yr is not None:
            if not (np.isfinite(self.model_error_mm_yr) and self.model_error_mm_yr >= 0):
                raise InputError(f"the model error must be a finite number of mm/yr, 0 or "
                                 f"more, got {self.model_error_mm_yr!r}")
            if self.misfit != "chi-square":
                raise InputError("a model error (--model-error) is part of the chi-square "
                                 "misfit",
                                 hint="add --misfit chi-square, or leave out --model-error")
        if self.free_frame and self.resample_fit == "torque" and (
                self.bootstrap or self.monte_carlo or self.physics_samples):
            raise InputError("torque-space refits cannot fit a free frame, and resampled "
                             "members refit what the fit fitted",
                             hint="leave out --resample-fit torque, or --free-frame")
        if self.free_frame and self.mantle_rotation is not None:
            raise InputError("the mantle's rotation is either fitted (free frame) or given, "
                             "not both", hint="leave out --free-frame or --mantle-rotation")
        if self.mantle_rotation is not None:
            lat, lon, rate = (float(x) for x in self.mantle_rotation)
            if not (np.isfinite([lat, lon, rate]).all() and -90 <= lat <= 90):
                raise InputError(f"mantle rotation {self.mantle_rotation}: the pole's "
                                 "latitude must be in [-90, 90] and every number finite")
        for name in ("seed", "bootstrap", "monte_carlo", "physics_samples"):
            if int(getattr(self, name)) < 0:
                raise InputError(f"{name} must be 0 or more, got {getattr(self, name)}")

    @property
    def errors(self) -> str:
        """The standard errors a fit leads with: as asked, else classical with a
        covariance and robust for the area misfit."""
        if self.standard_errors is not None:
            return self.standard_errors
        return "classical" if self.misfit == "chi-square" else "robust"

    @property
    def mantle_rotation_rad_s(self) -> np.ndarray | None:
        """The given mantle rotation as an Euler vector (rad/s), or None."""
        if self.mantle_rotation is None:
            return None
        from ..euler import pole_to_vector
        return pole_to_vector(*(float(x) for x in self.mantle_rotation))

    def require_sample_memory(self, system) -> None:
        """Refuse sample counts whose arrays cannot fit in memory, before any is drawn.

        Parameters
        ----------
        system : System
        """
        P, K = system.n_plates, len(system.labels)
        per_member = {
            # draws (3P), the torque columns of every member and their scaled copies
            "monte_carlo": 8 * 3 * P * (3 * K + 4),
            # one row of results per draw, with Python's overhead
            "bootstrap": 8 * K + 120,
            "physics_samples": 8 * K + 120,
        }
        for opt, per in per_member.items():
            n = getattr(self, opt)
            if n:
                require_memory(n * per, f"--{opt.replace('_', '-')} {n:,}",
                               hint="ask for fewer samples")
