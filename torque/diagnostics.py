"""What a fit means: misfits, pole ellipses, force budgets, information criteria, and the
results of ``torque fit`` as one record that round-trips through JSON.

:func:`analyse` runs every fit method of :data:`torque.balance.FIT_METHODS` on a
:class:`~torque.balance.System`, predicts the Euler vectors at the preferred coefficients
and propagates their uncertainty (:class:`Report`, the computation). :class:`FitResult` is
what is reported: coefficients, per-plate diagnostics, misfit and resampled uncertainty,
with :meth:`FitResult.as_dict` / :meth:`FitResult.from_dict` for the fit JSON that
``predict``, ``map``, the report and the demo read back.

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

from dataclasses import dataclass, field

import numpy as np
from scipy import special

from .balance import (FIT_METHODS, PREFERRED_FIT, Fit, System, covariance_blocks,
                      on_one_blas_thread, predict, rigid_constraint)
from .errors import InputError
from .euler import M_S_TO_MM_YR, RAD_S_PER_DEG_MYR, vector_to_pole
from .tabular import html_table, number

CONFIDENCE = 0.95
CAUTION = "model-dependent research estimate; not for hazard or engineering use"
WHY_VELOCITY = ("the velocity-space fit measures misfit in the observed plate velocities and "
                "does not depend on how torques are weighted; the torque-space fit is linear "
                "and serves as its start and for resampling")


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


def fits_disagree(d: dict) -> list:
    """Free coefficients whose velocity-space and torque-space values differ by more than
    twice their combined standard error.

    Parameters
    ----------
    d : dict
        :meth:`torque.diagnostics.FitResult.as_dict`.

    Returns
    -------
    list of str
    """
    out = []
    for label, c in d["coefficients"].items():
        if not c["free"]:
            continue
        se = (c["stderr"] ** 2 + (c.get("torque_space_stderr") or 0.0) ** 2) ** 0.5
        gap = abs(c["value"] - c["torque_space_value"])
        if se > 0 and gap > 2 * se:
            out.append(f"{label}: the velocity-space ({c['value']:.4g}) and torque-space "
                       f"({c['torque_space_value']:.4g}) fits differ by {gap / se:.1f} times "
                       "their combined standard error; the velocity-space value is preferred")
    return out


def frame_summary(frame: dict) -> str:
    """One line on a fit's mantle frame and net rotations, for the terminal and the report.

    Parameters
    ----------
    frame : dict
        :attr:`FitResult.frame`.

    Returns
    -------
    str
        Lower case, no final stop.
    """
    o, p = frame["net_rotation_observed"], frame["net_rotation_predicted"]
    nets = (f"net rotation of the lithosphere relative to the mantle: observed "
            f"{o['rate']:.4f}, predicted {p['rate']:.4f} deg/Myr")
    r = frame.get("rotation")
    if not r:
        return f"motions taken to be in the mantle's frame (no rotation fitted or given); {nets}"
    se = frame.get("stderr_deg_myr")
    se = f" (standard error up to {max(se):.2g} per component)" if se else ""
    return (f"{'free' if frame['free'] else 'given'} mantle frame: the mantle turns about "
            f"{r['lat']:.2f} N, {r['lon']:.2f} E at {r['rate']:.4f} deg/Myr{se} in the frame "
            f"of the motions; {nets}")


def chi_square_summary(misfit: dict) -> str | None:
    """One line on a chi-square fit's chi-square and degrees of freedom (None otherwise).

    Parameters
    ----------
    misfit : dict
        :attr:`FitResult.misfit`.

    Returns
    -------
    str or None
        Lower case, no final stop.
    """
    if "chi_square" not in misfit:
        return None
    return (f"chi-square {misfit['chi_square']:.1f} on {misfit['dof']} degrees of freedom "
            f"({misfit['effective_observations']} effective observations, "
            f"{misfit['effective_parameters']} parameters; reduced chi-square "
            f"{misfit['reduced_chi_square']:.2f})")


# ----------------------------------------------------------------------------------------
# the reported result, and its JSON form
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Coefficient:
    """One coefficient as reported: the preferred fit's value and the torque-space one.

    Attributes
    ----------
    value, stderr : float
        The preferred (velocity-space) estimate and its standard error (0 when fixed).
    free : bool
    unit : str
    torque_space_value, torque_space_stderr : float
    profile_low, profile_high : float, optional
        The profile-likelihood 95 % interval (:mod:`torque.profile`); None where not
        computed or not found.
    at_bound : str, optional
        ``"lower"`` or ``"upper"`` when the estimate sits at that bound (its standard
        error then means little; the profile interval still does).
    """

    value: float
    stderr: float
    free: bool
    unit: str
    torque_space_value: float
    torque_space_stderr: float
    profile_low: float | None = None
    profile_high: float | None = None
    at_bound: str | None = None


@dataclass(frozen=True)
class FitResult:
    """The results of ``torque fit``: what the fit JSON holds, as one record.

    Attributes
    ----------
    hypothesis : str
    coefficients : dict
        ``{label: Coefficient}``, in the hypothesis' order.
    plates : tuple of dict
        Per plate: ``plate``, ``observed`` and ``predicted`` poles (``lat``, ``lon`` in
        degrees, ``rate`` in deg/Myr), ``pole_distance_deg``, ``rate_ratio``,
        ``rms_velocity_mm_yr``, ``residual_torque_nm`` (3 numbers), ``budget``
        (``{label: share}``), the predicted pole's ``pole_ellipse`` (from the
        coefficients' covariance) and, where the observations' covariance is known, the
        ``observed_pole_ellipse`` and the ``prediction_ellipse`` (coefficients and
        observations together: where the observed pole should lie if the model is right).
    misfit : dict
        What was minimised (``misfit_measure``), RMS velocity misfit (mm/yr), variance
        reduction, the effective numbers of observations and parameters and the degrees
        of freedom, AIC, AICc, BIC, and the fits' sums of squares.
    uncertainty : dict
        Resampled spreads by method (``bootstrap``, ``monte_carlo_motions``,
        ``monte_carlo_physics``), empty if none was asked for.
    notes : tuple of str
        How the terms were computed where a user should know.
    preferred_fit : str
        The method whose values are ``Coefficient.value``.
    frame : dict, optional
        The mantle's frame: ``free`` (fitted) or ``given``; the mantle's rotation in the
        frame of the observations (``rotation``: pole ``lat``, ``lon`` and ``rate``;
        ``vector_deg_myr`` and ``stderr_deg_myr``, Cartesian; None when the observations
        were taken to be in the mantle's frame), and the net rotation of the lithosphere
        relative to the mantle, observed and predicted (poles).

    Examples
    --------
    >>> r = FitResult("h", {"slab": Coefficient(0.05, 0.001, True, "1", 0.049, 0.002)},
    ...               plates=(), misfit={"rms_velocity_mm_yr": 1.5})
    >>> FitResult.from_dict(r.as_dict()) == r
    True
    >>> r.values(["slab"])
    [0.05]
    """

    hypothesis: str
    coefficients: dict
    plates: tuple = ()
    misfit: dict = field(default_factory=dict)
    uncertainty: dict = field(default_factory=dict)
    notes: tuple = ()
    preferred_fit: str = PREFERRED_FIT
    frame: dict | None = None

    def __repr__(self) -> str:
        free = [l for l, c in self.coefficients.items() if c.free]
        return (f"FitResult({self.hypothesis!r}, {len(self.plates)} plates, free "
                f"{free}, preferred {self.preferred_fit!r})")

    @property
    def plate_names(self) -> list:
        """The plates, in the order of :attr:`plates`."""
        return [p["plate"] for p in self.plates]

    # -- notebooks -------------------------------------------------------------------------
    def _repr_html_(self) -> str:
        rows = [[label, c.value, c.stderr if c.free else "fixed",
                 f"{number(c.profile_low)} to {number(c.profile_high)}"
                 if c.profile_high is not None else "", c.unit]
                for label, c in self.coefficients.items()]
        m = self.misfit
        cap = (f"{self.hypothesis}: RMS velocity misfit "
               f"{number(m.get('rms_velocity_mm_yr'))} mm/yr, {len(self.plates)} plates")
        return html_table(["term", "value", "std. error", "95 % profile interval", "unit"],
                          rows, cap)

    def to_dataframe(self, what: str = "plates"):
        """The per-plate results, or the coefficients, as a pandas DataFrame.

        Parameters
        ----------
        what : {"plates", "coefficients"}

        Returns
        -------
        pandas.DataFrame
            ``plates``: indexed by plate, columns ``observed_lat``, ``observed_lon``,
            ``observed_rate``, the same for ``predicted``, ``pole_distance_deg``,
            ``rate_ratio``, ``rms_velocity_mm_yr`` and ``budget_<term>``;
            ``coefficients``: indexed by term, the fields of :class:`Coefficient`.
        """
        import pandas as pd
        if what == "coefficients":
            return pd.DataFrame({l: dict(c.__dict__) for l, c in self.coefficients.items()}
                                ).T.infer_objects().rename_axis("term")
        if what != "plates":
            raise ValueError(f"what must be 'plates' or 'coefficients', got {what!r}")
        rows = []
        for p in self.plates:
            row = {f"{k}_{x}": p[k][x] for k in ("observed", "predicted")
                   for x in ("lat", "lon", "rate")}
            row.update({k: p.get(k) for k in ("pole_distance_deg", "rate_ratio",
                                               "rms_velocity_mm_yr")})
            row.update({f"budget_{l}": v for l, v in (p.get("budget") or {}).items()})
            rows.append(row)
        return pd.DataFrame(rows, index=pd.Index(self.plate_names, name="plate"))

    def to_dataset(self):
        """The results as an xarray Dataset with dimensions ``plate`` and ``term``.

        Returns
        -------
        xarray.Dataset
            Per plate the poles and misfits, per term the coefficients, per plate and term
            the force budget; the misfit numbers and the hypothesis as attributes.
        """
        import xarray as xr
        plates = self.to_dataframe("plates")
        coefs = self.to_dataframe("coefficients")
        budget = [c for c in plates.columns if c.startswith("budget_")]
        data = {c: ("plate", plates[c].to_numpy(float)) for c in plates.columns
                if c not in budget}
        data["budget"] = (("plate", "term"), plates[budget].to_numpy(float))
        for c in ("value", "stderr", "torque_space_value", "profile_low", "profile_high"):
            data[f"coefficient_{c}"] = ("term", coefs[c].to_numpy(float))
        attrs = {"hypothesis": self.hypothesis, "preferred_fit": self.preferred_fit,
                 **{k: v for k, v in self.misfit.items() if isinstance(v, (int, float, str))}}
        return xr.Dataset(data, coords={"plate": list(plates.index),
                                        "term": [b[len("budget_"):] for b in budget]},
                          attrs=attrs)

    def values(self, labels, file=None) -> list:
        """The value of each coefficient in ``labels``, in that order.

        Parameters
        ----------
        labels : sequence of str
        file : str or Path, optional
            Named in messages.

        Returns
        -------
        list of float

        Raises
        ------
        InputError
            Naming ``file`` when the fit has no coefficient of one of the labels.
        """
        missing = [x for x in labels if x not in self.coefficients]
        if missing:
            raise InputError(f"the fit is for another hypothesis: no coefficient for "
                             f"{', '.join(map(repr, missing))}", file=file,
                             hint="fit this hypothesis with torque fit first")
        return [self.coefficients[x].value for x in labels]

    def as_dict(self) -> dict:
        """The fit JSON (see the README): plain numbers, lists and dicts."""
        out = {
            "hypothesis": self.hypothesis,
            "caution": CAUTION,
            "preferred_fit": self.preferred_fit,
            "why": WHY_VELOCITY,
            "coefficients": {l: dict(c.__dict__) for l, c in self.coefficients.items()},
            "plates": [dict(p) for p in self.plates],
            "misfit": dict(self.misfit),
            "uncertainty": self.uncertainty,
        }
        out["notes"] = list(self.notes)
        if self.frame is not None:
            out["frame"] = self.frame
        return out

    @classmethod
    def from_dict(cls, doc, file=None) -> "FitResult":
        """The record of a fit JSON document, checked.

        Parameters
        ----------
        doc : dict
            As written by :meth:`as_dict` (``torque fit``).
        file : str or Path, optional
            Named in messages.

        Raises
        ------
        InputError
            If the document is not the output of ``torque fit``.
        """
        if not (isinstance(doc, dict) and isinstance(doc.get("coefficients"), dict)
                and isinstance(doc.get("plates"), list)
                and all(isinstance(p, dict) and "plate" in p for p in doc["plates"])):
            raise InputError("not the JSON output of torque fit (it needs 'coefficients' "
                             "and 'plates')", file=file)
        coefs = {}
        for label, c in doc["coefficients"].items():
            v = c.get("value") if isinstance(c, dict) else None
            if not isinstance(v, (int, float)) or isinstance(v, bool) or not np.isfinite(v):
                raise InputError(f"coefficient {label!r} has no numeric 'value'", file=file)

            def num(key, default=np.nan):
                x = c.get(key, default)
                return float(x) if isinstance(x, (int, float)) else np.nan
            def optional(key):
                x = c.get(key)
                return float(x) if isinstance(x, (int, float)) and not isinstance(x, bool) \
                    else None
            at = c.get("at_bound")
            coefs[label] = Coefficient(float(v), num("stderr", 0.0), bool(c.get("free", False)),
                                       str(c.get("unit", "")), num("torque_space_value"),
                                       num("torque_space_stderr"), optional("profile_low"),
                                       optional("profile_high"),
                                       at if at in ("lower", "upper") else None)
        return cls(str(doc.get("hypothesis", "")), coefs, tuple(doc["plates"]),
                   dict(doc.get("misfit") or {}), dict(doc.get("uncertainty") or {}),
                   tuple(doc.get("notes") or ()), str(doc.get("preferred_fit", PREFERRED_FIT)),
                   doc.get("frame") if isinstance(doc.get("frame"), dict) else None)


@dataclass(frozen=True, eq=False)
class Report:
    """A fitted hypothesis: every fit method's result, the prediction at the preferred
    coefficients and its uncertainty. :meth:`result` gives what is reported.

    Attributes
    ----------
    system : System
    fits : dict
        ``{method: Fit}`` for every method run (see :data:`torque.balance.FIT_METHODS`).
    omega_obs, omega_pred : ndarray, shape (P, 3)
        Observed and predicted Euler vectors (rad/s).
    pole_cov : ndarray, shape (P, 3, 3)
        Covariance of each predicted Euler vector, (rad/s)^2.
    uncertainty : dict
        Resampled spreads (see :mod:`torque.resample`).
    preferred_fit : str
    frame : dict, optional
        With a free frame: ``rotation`` (3,) rad/s, the mantle's rotation in the frame of
        the observations; its ``cov`` (3, 3); and the observations as given
        (``observed_frame``). ``omega_obs`` is then in the mantle's frame.
    profile : dict, optional
        Profile-likelihood intervals of the preferred fit's free coefficients (see
        :func:`torque.profile.profile_intervals`).
    constraint : str, optional
        The rigid-rotation constraint the observations satisfy (see
        :func:`torque.balance.rigid_constraint`): three degrees of freedom fewer.
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
            A model-error covariance (:func:`torque.balance.model_error_covariance`),
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
            coefs[l] = {"value": float(pref.values[i]), "stderr": float(pref.stderr[i]),
                        "free": bool(s.free[i]), "unit": s.units[i],
                        "torque_space_value": float(tf.values[i]),
                        "torque_space_stderr": float(tf.stderr[i]),
                        "profile_low": p.get("low"), "profile_high": p.get("high"),
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
            plates.append({
                "plate": name,
                "observed": {"lat": float(olat[p]), "lon": float(olon[p]),
                             "rate": float(orate[p])},
                "predicted": {"lat": float(plat[p]), "lon": float(plon[p]),
                              "rate": float(prate[p])},
                "pole_distance_deg": float(ang[p]),
                "rate_ratio": float(prate[p] / orate[p]) if orate[p] > 0 else None,
                "rms_velocity_mm_yr": float(rms[p]),
                "residual_torque_nm": resid[p].tolist(),
                "budget": {l: (None if not np.isfinite(budget[p, k]) else float(budget[p, k]))
                           for k, l in enumerate(s.labels)},
                "pole_ellipse": pole_ellipse(self.omega_pred[p], self.pole_cov[p]),
                **({"observed_pole_ellipse": pole_ellipse(self.omega_obs[p], obs_blocks[p])}
                   if obs_blocks is not None else {}),
                **({"prediction_ellipse": pole_ellipse(self.omega_pred[p], pred_blocks[p])}
                   if pred_blocks is not None else {}),
            })
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
        chi = pref.info.get("misfit") == "chi-square"
        ic = (information_criteria_chi_square(pref.info["chi_square"], n, k_eff) if chi
              else information_criteria(glob["velocity_rss_m4_s2"], n, k_eff))
        extra = {"frame_parameters": n_frame,
                 "observations_constraint": self.constraint,
                 "effective_observations": n, "effective_parameters": k_eff,
                 "dof": pref.dof,
                 "misfit_measure": (
                     "chi-square with the observations' covariance" if chi else
                     "area-integrated squared velocity misfit (no observation covariance "
                     "used: plates weigh by their area)")}
        if chi:
            extra.update(chi_square=pref.info["chi_square"],
                         reduced_chi_square=pref.info["reduced_chi_square"])
        misfit = {**glob, "n": n, "free_coefficients": k, **extra, **ic,
                  "torque_space_rss": tf.rss,
                  "torque_space_weighting": tf.info.get("weighting"),
                  "active_bounds": list(pref.active_bounds)}
        return misfit

    def _frame_dict(self):
        """The mantle frame (fitted, given, or assumed) and the net rotations, as
        reported."""
        s = self.system

        def pole(v):
            lat, lon, rate = vector_to_pole(v)
            return {"lat": float(lat), "lon": float(lon), "rate": float(rate)}

        def net(omega):          # the rotation whose removal zeroes int r x v dA
            return np.linalg.solve(s.D.sum(0), np.einsum("pij,pj->i", s.D, omega))
        nets = {"net_rotation_observed": pole(net(self.omega_obs)),
                "net_rotation_predicted": pole(net(self.omega_pred))}
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
            mantle_rotation=None, profile: bool = False) -> Report:
    """Fit a hypothesis by every fit method, predict, and propagate the uncertainty.

    Parameters
    ----------
    system : System
    omega_obs : ndarray, shape (P, 3)
        Observed Euler vectors (rad/s), in the frame where the mantle is at rest.
    weighting : {"velocity", "area", "none"}
        Weighting of the torque-space fit (see :func:`torque.balance.plate_weights`).
    methods : sequence of str, optional
        Names in :data:`torque.balance.FIT_METHODS` to run, in registry order (default
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
        (:func:`torque.profile.profile_intervals`; some tens of refits each).

    Notes
    -----
    Observations that satisfy a rigid-rotation constraint (moved to the no-net-rotation
    frame, or relative to a fixed plate; :func:`torque.balance.rigid_constraint`) count
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
        if constraint and FIT_METHODS[name].counts_dof:
            extra["lost_dof"] = 3
        fits[name] = FIT_METHODS[name].run(system, omega_obs, fits, weighting, **extra)
    frame = None
    if free_frame:
        # the observations in the mantle's frame; the methods that cannot fit a frame run
        # again there, so that every fit reports coefficients of the same balance
        info = fits[PREFERRED_FIT].info
        frame = {"rotation": info["frame_rotation"], "cov": info["frame_cov"],
                 "observed_frame": omega_obs}
        omega_obs = omega_obs - info["frame_rotation"]
        for name in names:
            if not FIT_METHODS[name].frames:
                fits[name] = FIT_METHODS[name].run(system, omega_obs, fits, weighting)
    pref = fits[PREFERRED_FIT]
    pred = predict(system, pref.values)
    cov = pole_covariance(system, pref.values, pref.cov, pred)
    intervals = None
    if profile:
        from .profile import profile_intervals
        observed = frame["observed_frame"] if frame else omega_obs
        intervals = profile_intervals(pref, observed, free_frame, obs_cov)
    return Report(system, fits, omega_obs, pred, cov, frame=frame or given_frame,
                  profile=intervals, constraint=constraint)
