"""Typed results: what the fits, rankings and series report, as small frozen records.

:class:`FitResult` is what ``torque fit`` reports (coefficients, per-plate diagnostics,
misfit, resampled uncertainty, the mantle frame); ``predict``, ``map``, the report and
the demo read it back from the fit JSON (:func:`torque.io.read_fit`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import InputError
from .tabular import html_table, number

#: The fit method whose values are reported as the coefficients' values (the registry of
#: methods, :data:`torque.inference.methods.FIT_METHODS`, names it too).
PREFERRED_FIT = "velocity"
CAUTION = "model-dependent research estimate; not for hazard or engineering use"
WHY_VELOCITY = ("the velocity-space fit measures misfit in the observed plate velocities and "
                "does not depend on how torques are weighted; the torque-space fit is linear "
                "and serves as its start and for resampling")


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
        The profile-likelihood 95 % interval (:mod:`torque.inference.profile`); None where not
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
