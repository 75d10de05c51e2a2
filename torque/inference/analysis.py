"""One fit run as a computation: :func:`analyse` runs every fit method of
:data:`torque.inference.methods.FIT_METHODS` on a :class:`~torque.inference.system.System`,
predicts the Euler vectors at the preferred coefficients and propagates their uncertainty
(:class:`Report`); :meth:`Report.result` is the :class:`~torque.results.FitResult`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..euler import RAD_S_PER_DEG_MYR, net_rotation, vector_to_pole
from ..results import Coefficient, FitResult, PlateResult, Pole
from .covariance import covariance_blocks
from .methods import FIT_METHODS, PREFERRED_FIT
from .solvers import Fit, on_one_blas_thread, predict
from .statistics import (
    chi_square_check,
    force_budget,
    information_criteria,
    information_criteria_chi_square,
    pole_covariance,
    pole_distance_deg,
    pole_ellipse,
    residual_torque,
    velocity_misfit,
)
from .system import System, rigid_constraint

__all__ = ["ERRORS", "Report", "analyse"]

#: The standard errors a report can lead with: classical or cluster-robust.
ERRORS = ("classical", "robust")


@dataclass(frozen=True, eq=False)
class Report:
    """A fitted hypothesis: every fit method's result, the prediction at the preferred
    coefficients and its uncertainty. :meth:`result` gives what is reported.

    Attributes
    ----------
    system : System
    fits : dict
        ``{method: Fit}`` for every method run (see
        :data:`torque.inference.methods.FIT_METHODS`).
    omega_obs, omega_pred : ndarray, shape (P, 3)
        Observed and predicted Euler vectors (rad/s).
    pole_cov : ndarray, shape (P, 3, 3)
        Covariance of each predicted Euler vector, (rad/s)^2.
    uncertainty : dict
        Resampled spreads (see :mod:`torque.inference.resampling`).
    preferred_fit : str
    frame : dict, optional
        With a free frame: ``rotation`` (3,) rad/s, the mantle's rotation in the frame of
        the observations; its ``cov`` (3, 3); and the observations as given
        (``observed_frame``). ``omega_obs`` is then in the mantle's frame.
    profile : dict, optional
        Profile-likelihood intervals of the preferred fit's free coefficients (see
        :func:`torque.inference.profile.profile_intervals`).
    constraint : str, optional
        The rigid-rotation constraint the observations satisfy (see
        :func:`torque.inference.system.rigid_constraint`): three degrees of freedom fewer.
    errors : {"classical", "robust"}
        Which standard errors lead (see :func:`analyse`).
    """

    system: System
    fits: dict
    omega_obs: np.ndarray
    omega_pred: np.ndarray
    pole_cov: np.ndarray
    uncertainty: dict = field(default_factory=dict)
    preferred_fit: str = PREFERRED_FIT
    frame: dict | None = None
    profile: dict | None = None
    constraint: str | None = None
    errors: str = "classical"

    def __repr__(self) -> str:
        return (f"Report({self.system.name!r}, {self.system.n_plates} plates, "
                f"preferred {self.preferred!r})")

    @property
    def preferred(self) -> Fit:
        """The fit whose values are reported (velocity space)."""
        return self.fits[self.preferred_fit]

    @property
    def torque_fit(self) -> Fit:
        """The torque-space fit."""
        return self.fits["torque"]

    @property
    def velocity_fit(self) -> Fit:
        """The velocity-space fit."""
        return self.fits["velocity"]

    def misfit(self):
        """Per-plate RMS velocity misfit (mm/yr) and the global numbers (see
        :func:`velocity_misfit`)."""
        return velocity_misfit(self.system, self.omega_pred, self.omega_obs)

    def as_dict(self) -> dict:
        """The fit JSON: ``self.result().as_dict()``."""
        return self.result().as_dict()

    def result(self, notes=(), observed_cov=None, model_cov=None) -> FitResult:
        """What is reported of this fit, with ``notes`` on how the terms were made.

        Parameters
        ----------
        notes : sequence of str
        observed_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
            The observed Euler vectors' covariance, (rad/s)^2: each plate then also gets
            the confidence ellipse of its observed pole (``observed_pole_ellipse``) and
            the ellipse of where it should lie if the model is right
            (``prediction_ellipse``: the predicted pole's covariance plus this one).
        model_cov : ndarray, shape (P, 3, 3), optional
            A model-error covariance
            (:func:`torque.inference.covariance.model_error_covariance`),
            added to ``observed_cov`` in the prediction ellipse.

        Returns
        -------
        FitResult
        """
        s = self.system
        pref = self.preferred
        tf = self.torque_fit
        prof = self.profile or {}
        coefs = {}
        for i, l in enumerate(s.labels):
            p = prof.get(l, {})
            robust = self.errors == "robust" and pref.robust_stderr is not None
            classical = float(pref.stderr[i])
            rse = None if pref.robust_stderr is None else float(pref.robust_stderr[i])
            coefs[l] = {"value": float(pref.values[i]),
                        "stderr": rse if robust else classical,
                        "free": bool(s.free[i]), "unit": s.units[i],
                        "torque_space_value": float(tf.values[i]),
                        "torque_space_stderr": float(tf.stderr[i]),
                        "profile_low": p.get("low"), "profile_high": p.get("high"),
                        "classical_stderr": classical, "robust_stderr": rse,
                        "quantile": float(pref.robust_quantiles[i] if robust
                                          else pref.quantile),
                        "profile_low_at_bound": bool(p.get("low_at_bound", False)),
                        "profile_high_at_bound": bool(p.get("high_at_bound", False)),
                        "at_bound": (p.get("at_bound") if p else
                                     ("lower" if l in pref.active_bounds
                                      and pref.values[i] <= s.bounds[i][0] else
                                      "upper" if l in pref.active_bounds else None))}
        obs_blocks = None if observed_cov is None else covariance_blocks(observed_cov)
        pred_blocks = None
        if obs_blocks is not None or model_cov is not None:
            pred_blocks = self.pole_cov + (0 if obs_blocks is None else obs_blocks) + \
                (0 if model_cov is None else np.asarray(model_cov))
        rms, glob = self.misfit()
        ang = pole_distance_deg(self.omega_obs, self.omega_pred)
        budget = force_budget(s, pref.values, self.omega_obs)
        resid = residual_torque(s, pref.values, self.omega_obs)
        olat, olon, orate = vector_to_pole(self.omega_obs)
        plat, plon, prate = vector_to_pole(self.omega_pred)
        plates = []
        for p, name in enumerate(s.plates):
            plates.append(PlateResult(
                name, Pole(float(olat[p]), float(olon[p]), float(orate[p])),
                Pole(float(plat[p]), float(plon[p]), float(prate[p])), float(ang[p]),
                float(prate[p] / orate[p]) if orate[p] > 0 else None, float(rms[p]),
                tuple(resid[p].tolist()),
                {l: (None if not np.isfinite(budget[p, k]) else float(budget[p, k]))
                 for k, l in enumerate(s.labels)},
                pole_ellipse(self.omega_pred[p], self.pole_cov[p]),
                (pole_ellipse(self.omega_obs[p], obs_blocks[p])
                 if obs_blocks is not None else None),
                (pole_ellipse(self.omega_pred[p], pred_blocks[p])
                 if pred_blocks is not None else None)))
        misfit = self._misfit_record(glob)
        return FitResult(s.name, {l: Coefficient(**c) for l, c in coefs.items()},
                         tuple(plates), misfit, self.uncertainty, tuple(notes),
                         self.preferred_fit, self._frame_dict())

    def _misfit_record(self, glob) -> dict:
        """The fit's misfit numbers: what was minimised, the effective counts, the
        information criteria and both fits' sums of squares."""
        s, pref, tf = self.system, self.preferred, self.torque_fit
        k = s.n_free
        # a free frame is three more parameters (a given one none)
        n_frame = 3 if self.frame is not None and not self.frame.get("given") else 0
        # observations that satisfy a rigid constraint (NNR, a fixed plate) count 3 fewer;
        # a free frame fits the same three directions, so they are not counted twice
        lost = 3 if self.constraint else 0
        n = 3 * s.n_plates - lost
        k_eff = k + max(n_frame, lost) - lost
        chi = pref.misfit == "chi-square"
        ic = (information_criteria_chi_square(pref.chi_square, n, k_eff) if chi
              else information_criteria(glob["velocity_rss_m4_s2"], n, k_eff))
        extra = {"frame_parameters": n_frame,
                 "observations_constraint": self.constraint,
                 "effective_observations": n, "effective_parameters": k_eff,
                 "dof": pref.dof,
                 "misfit_measure": (
                     "chi-square with the observations' covariance" if chi else
                     "area-integrated squared velocity misfit (no observation covariance "
                     "used: plates weigh by their area)")}
        extra["variance"] = "known" if pref.known_variance else "estimated"
        extra["standard_errors"] = self.errors
        if chi:
            check = chi_square_check(pref.chi_square, pref.dof)
            extra.update(chi_square=pref.chi_square,
                         reduced_chi_square=pref.reduced_chi_square,
                         chi_square_p_high=check["p_high"], chi_square_p_low=check["p_low"],
                         chi_square_warning=check["message"])
        misfit = {**glob, "n": n, "free_coefficients": k, **extra, **ic,
                  "torque_space_rss": tf.rss,
                  "torque_space_weighting": tf.weighting,
                  "active_bounds": list(pref.active_bounds)}
        return misfit

    def _frame_dict(self):
        """The mantle frame (fitted, given, or assumed) and the net rotations, as
        reported."""
        s = self.system

        def pole(v):
            lat, lon, rate = vector_to_pole(v)
            return {"lat": float(lat), "lon": float(lon), "rate": float(rate)}

        nets = {"net_rotation_observed": pole(net_rotation(s.D, self.omega_obs)),
                "net_rotation_predicted": pole(net_rotation(s.D, self.omega_pred))}
        if self.frame is None:
            return {"free": False, "given": False, "rotation": None,
                    "vector_deg_myr": None, "stderr_deg_myr": None,
                    "means": "the observed motions taken to be in the mantle's frame (no "
                             "rotation fitted or given)", **nets}
        w = np.asarray(self.frame["rotation"], float)
        se = np.sqrt(np.clip(np.diag(self.frame["cov"]), 0, None))
        given = bool(self.frame.get("given", False))
        return {"free": not given, "given": given,
                "rotation": pole(w),
                "vector_deg_myr": (w / RAD_S_PER_DEG_MYR).tolist(),
                "stderr_deg_myr": (se / RAD_S_PER_DEG_MYR).tolist(),
                "means": "the mantle's rotation in the frame of the observed motions"
                         + (", as given" if given else ", fitted"), **nets}


@on_one_blas_thread
def analyse(system: System, omega_obs, weighting: str = "velocity",
            methods=None, free_frame: bool = False, obs_cov=None,
            mantle_rotation=None, profile: bool = False, variance: str | None = None,
            errors: str = "classical") -> Report:
    """Fit a hypothesis by every fit method, predict, and propagate the uncertainty.

    Parameters
    ----------
    system : System
    omega_obs : ndarray, shape (P, 3)
        Observed Euler vectors (rad/s), in the frame where the mantle is at rest.
    weighting : {"velocity", "area", "none"}
        Weighting of the torque-space fit (see :func:`torque.inference.system.plate_weights`).
    methods : sequence of str, optional
        Names in :data:`torque.inference.methods.FIT_METHODS` to run, in registry order (default
        all); the preferred one must be among them.
    free_frame : bool
        Estimate the rotation of the observations' frame relative to the mantle together
        with the coefficients (three more parameters), rather than take the observations
        to be in the mantle's frame. The report's ``omega_obs`` is then in the mantle's
        frame, and ``frame`` holds the rotation and its covariance.
    obs_cov : ndarray, shape (P, 3, 3) or (3P, 3P), optional
        The observations' covariance, (rad/s)^2, per plate or full: the methods that can
        (the velocity-space fit) then minimise the chi-square (generalised least squares).
    mantle_rotation : array_like, shape (3,), optional
        A known rotation of the mantle in the frame of the observations (rad/s), say an
        absolute reference frame: it is removed from the observations before fitting, and
        reported in ``frame`` (not with ``free_frame``).
    profile : bool
        Also find the profile-likelihood interval of every free coefficient
        (:func:`torque.inference.profile.profile_intervals`; some tens of refits each).
    variance : {"known", "estimated"}, optional
        With ``obs_cov``: take its scale as known (default) or estimate it by the reduced
        chi-square (see :func:`torque.inference.solvers.fit_velocity`).
    errors : {"classical", "robust"}
        Which standard errors the report leads with (``stderr``), propagates into the
        poles' covariances and adjusts the profile intervals to: the classical
        ``s^2 (J^T J)^-1`` or the cluster-robust sandwich (a plate a cluster; both are
        always reported).

    Notes
    -----
    Observations that satisfy a rigid-rotation constraint (moved to the no-net-rotation
    frame, or relative to a fixed plate; :func:`torque.inference.system.rigid_constraint`) count
    three observations fewer in the degrees of freedom and the information criteria.

    Returns
    -------
    Report
        ``report.result()`` is the :class:`FitResult` that ``torque fit`` writes.

    Examples
    --------
    >>> import torque
    >>> inputs = torque.Inputs.load("polygons_demo/world.toml")
    >>> hyp = torque.load_hypothesis("polygons_demo/hypotheses/continental_drag.toml")
    >>> omega = torque.read_motions("polygons_demo/motions.csv").for_world(inputs.world)
    >>> system = torque.assemble(inputs.world, hyp, torque.compute_torques(inputs, hyp, omega))
    >>> report = analyse(system, omega)
    >>> round(report.result().coefficients["slab"].value, 3)
    0.05
    """
    omega_obs = np.asarray(omega_obs, float)
    constraint = rigid_constraint(system, omega_obs)
    names = list(FIT_METHODS) if methods is None else [m for m in FIT_METHODS
                                                       if m in methods]
    given_frame = None
    if mantle_rotation is not None:
        if free_frame:
            raise ValueError("give the mantle's rotation, or fit it (free_frame), not both")
        w = np.asarray(mantle_rotation, float).reshape(3)
        given_frame = {"rotation": w, "cov": np.zeros((3, 3)), "observed_frame": omega_obs,
                       "given": True}
        omega_obs = omega_obs - w
    if free_frame and not FIT_METHODS[PREFERRED_FIT].frames:
        raise ValueError(f"the preferred fit {PREFERRED_FIT!r} cannot fit a free frame")
    fits = {}
    for name in names:
        extra = {"free_frame": True} if free_frame and FIT_METHODS[name].frames else {}
        if obs_cov is not None and FIT_METHODS[name].covariance:
            extra["obs_cov"] = obs_cov
            extra["variance"] = variance
        if constraint and FIT_METHODS[name].counts_dof:
            extra["lost_dof"] = 3
        fits[name] = FIT_METHODS[name].run(system, omega_obs, fits, weighting, **extra)
    frame = None
    if free_frame:
        # the observations in the mantle's frame; the methods that cannot fit a frame run
        # again there, so that every fit reports coefficients of the same balance
        pref = fits[PREFERRED_FIT]
        frame = {"rotation": pref.frame_rotation, "cov": pref.frame_cov,
                 "observed_frame": omega_obs}
        omega_obs = omega_obs - pref.frame_rotation
        for name in names:
            if not FIT_METHODS[name].frames:
                fits[name] = FIT_METHODS[name].run(system, omega_obs, fits, weighting)
    if errors not in ERRORS:
        raise ValueError(f"errors must be one of {', '.join(ERRORS)}, got {errors!r}")
    pref = fits[PREFERRED_FIT]
    pred = predict(system, pref.values)
    lead = pref.robust_cov if errors == "robust" and pref.robust_cov is not None else pref.cov
    cov = pole_covariance(system, pref.values, lead, pred)
    intervals = None
    if profile:
        from .profile import profile_intervals
        observed = frame["observed_frame"] if frame else omega_obs
        intervals = profile_intervals(pref, observed, free_frame, obs_cov, errors=errors)
    return Report(system, fits, omega_obs, pred, cov, frame=frame or given_frame,
                  profile=intervals, constraint=constraint, errors=errors)
