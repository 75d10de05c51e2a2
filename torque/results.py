"""Typed results: what the fits, rankings and series report, as small frozen records.

:class:`PlateResult` (with its :class:`Pole` s) is one plate's results of a fit;
:class:`TorqueTable` holds every term's torque on every plate at stated coefficients, in
the units researchers compare them in; :class:`SeriesResult` is what ``torque stages``
reports; :class:`RankRow` is one hypothesis in a ranking.

:class:`FitResult` is what ``torque fit`` reports (coefficients, per-plate diagnostics,
misfit, resampled uncertainty, the mantle frame); ``predict``, ``map``, the report and
the demo read it back from the fit JSON (:func:`torque.io.read_fit`).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import sphere
from .errors import InputError
from .euler import RAD_S_PER_DEG_MYR
from .tabular import html_table, number

__all__ = ["PREFERRED_FIT", "CAUTION", "WHY_VELOCITY", "Coefficient", "Pole", "PlateResult",
           "FitResult", "RankRow", "SeriesResult", "TORQUE_UNIT_NM", "SOURCES", "TorqueTable"]

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
    classical_stderr, robust_stderr : float, optional
        Both standard errors: classical (``s^2 (J^T J)^-1``) and cluster-robust (a plate
        a cluster); ``stderr`` is the one the fit leads with.
    quantile : float, optional
        The multiple of ``stderr`` a 95 % interval spans each side (normal, or Student's t
        where a variance was estimated).
    profile_low_at_bound, profile_high_at_bound : bool
        Whether that end of the profile interval is the coefficient's bound (a one-sided
        interval).
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
    classical_stderr: float | None = None
    robust_stderr: float | None = None
    quantile: float | None = None
    profile_low_at_bound: bool = False
    profile_high_at_bound: bool = False


@dataclass(frozen=True)
class Pole:
    """An Euler pole as reported: latitude and longitude (degrees), rate (deg/Myr, >= 0).

    Attributes
    ----------
    lat, lon, rate : float
    """

    lat: float
    lon: float
    rate: float

    def as_dict(self) -> dict:
        """``{"lat", "lon", "rate"}``, as the fit JSON holds it."""
        return {"lat": self.lat, "lon": self.lon, "rate": self.rate}

    @classmethod
    def from_dict(cls, d) -> "Pole":
        """The pole of a ``{"lat", "lon", "rate"}`` mapping (NaN where a number is missing).

        Parameters
        ----------
        d : dict or None

        Returns
        -------
        Pole
        """
        d = d if isinstance(d, dict) else {}
        return cls(*(float(d[k]) if isinstance(d.get(k), (int, float)) else float("nan")
                     for k in ("lat", "lon", "rate")))


@dataclass(frozen=True)
class PlateResult:
    """One plate's results of a fit, as reported.

    Attributes
    ----------
    plate : str
    observed, predicted : Pole
        The observed pole (in the fit's mantle frame) and the predicted one.
    pole_distance_deg : float
    rate_ratio : float or None
        Predicted over observed rate (None for a plate observed at rest).
    rms_velocity_mm_yr : float
        RMS velocity misfit over the plate.
    residual_torque_nm : tuple of float
        The balance's residual torque on the plate (3 numbers, N m).
    budget : dict
        ``{label: share}`` of the plate's driving torque (None where it has none).
    pole_ellipse : dict or None
        The predicted pole's 95 % ellipse from the coefficients' covariance
        (``major_deg``, ``minor_deg``, ``azimuth_deg``, ...).
    observed_pole_ellipse, prediction_ellipse : dict or None
        With the observations' covariance: the observed pole's ellipse, and where the
        observed pole should lie if the model is right (coefficients and observations).
    """

    plate: str
    observed: Pole
    predicted: Pole
    pole_distance_deg: float = float("nan")
    rate_ratio: float | None = None
    rms_velocity_mm_yr: float = float("nan")
    residual_torque_nm: tuple = ()
    budget: dict = field(default_factory=dict)
    pole_ellipse: dict | None = None
    observed_pole_ellipse: dict | None = None
    prediction_ellipse: dict | None = None

    #: The ellipses, written only where present.
    ELLIPSES = ("pole_ellipse", "observed_pole_ellipse", "prediction_ellipse")

    def as_dict(self) -> dict:
        """The plate's entry of the fit JSON.

        Returns
        -------
        dict
        """
        d = {"plate": self.plate, "observed": self.observed.as_dict(),
             "predicted": self.predicted.as_dict(),
             "pole_distance_deg": self.pole_distance_deg, "rate_ratio": self.rate_ratio,
             "rms_velocity_mm_yr": self.rms_velocity_mm_yr,
             "residual_torque_nm": list(self.residual_torque_nm), "budget": dict(self.budget)}
        d.update({k: getattr(self, k) for k in self.ELLIPSES if getattr(self, k) is not None})
        return d

    @classmethod
    def from_dict(cls, d: dict) -> "PlateResult":
        """A plate's entry of a fit JSON (missing numbers as NaN or None).

        Parameters
        ----------
        d : dict
            With at least ``plate``.

        Returns
        -------
        PlateResult
        """
        def num(key):
            x = d.get(key)
            return float(x) if isinstance(x, (int, float)) and not isinstance(x, bool) \
                else float("nan")
        ratio = d.get("rate_ratio")
        return cls(str(d["plate"]), Pole.from_dict(d.get("observed")),
                   Pole.from_dict(d.get("predicted")), num("pole_distance_deg"),
                   float(ratio) if isinstance(ratio, (int, float)) else None,
                   num("rms_velocity_mm_yr"), tuple(d.get("residual_torque_nm") or ()),
                   dict(d.get("budget") or {}),
                   *(d.get(k) if isinstance(d.get(k), dict) else None for k in cls.ELLIPSES))


@dataclass(frozen=True)
class FitResult:
    """The results of ``torque fit``: what the fit JSON holds, as one record.

    Attributes
    ----------
    hypothesis : str
    coefficients : dict
        ``{label: Coefficient}``, in the hypothesis' order.
    plates : tuple of PlateResult
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
    >>> from torque.io import fit_from_dict
    >>> fit_from_dict(r.as_dict()) == r
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
        return [p.plate for p in self.plates]

    @property
    def mantle_rotation_rad_s(self) -> np.ndarray:
        """The mantle's rotation in the frame of the fitted motions (rad/s), shape (3,):
        fitted (free frame) or given; zero where the motions were taken to be in the
        mantle's frame. A plate moving at ``w`` in the motions' frame moves at
        ``w - mantle_rotation_rad_s`` relative to the mantle."""
        v = (self.frame or {}).get("vector_deg_myr")
        return np.zeros(3) if v is None else np.asarray(v, float) * RAD_S_PER_DEG_MYR

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
            row = {f"{k}_{x}": getattr(getattr(p, k), x) for k in ("observed", "predicted")
                   for x in ("lat", "lon", "rate")}
            row.update({k: getattr(p, k) for k in ("pole_distance_deg", "rate_ratio",
                                                    "rms_velocity_mm_yr")})
            row.update({f"budget_{l}": v for l, v in p.budget.items()})
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
        """The fit JSON (see docs/outputs.md): plain numbers, lists and dicts."""
        out = {
            "hypothesis": self.hypothesis,
            "caution": CAUTION,
            "preferred_fit": self.preferred_fit,
            "why": WHY_VELOCITY,
            "coefficients": {l: dict(c.__dict__) for l, c in self.coefficients.items()},
            "plates": [p.as_dict() for p in self.plates],
            "misfit": dict(self.misfit),
            "uncertainty": self.uncertainty,
        }
        out["notes"] = list(self.notes)
        if self.frame is not None:
            out["frame"] = self.frame
        return out


# ----------------------------------------------------------------------------------------
# rankings and series
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class RankRow:
    """One hypothesis in a ranking.

    Attributes
    ----------
    name : str
    rms_velocity_mm_yr : float
        RMS velocity misfit of the preferred fit over all plates.
    variance_reduction : float
        1 - misfit / observed, both area-integrated squared velocities.
    free : int
        Number of free coefficients.
    aic, aicc, bic : float
        From the effective numbers of observations and parameters (see the module).
    cv_rms_mm_yr : float
        Leave-one-plate-out cross-validation error.
    coefficients : dict
        ``{label: value}`` of the free coefficients.
    cv_stderr_mm_yr : float
        Standard error of ``cv_rms_mm_yr`` from its spread over plates.
    cv_excess_se : float
        How far this hypothesis' cross-validation error lies above the best one's, in
        standard errors of the paired per-plate difference (0 for the best).
    within_one_se : bool
        Whether its cross-validation error lies within one standard error of the best
        one's, that standard error being the best model's own (the one-standard-error
        rule, :func:`torque.inference.ranking.within_one_se`); the same rule as a stage
        series' ranking.
    effective_observations, effective_parameters : int
    chi_square : float, optional
        With the observations' covariance.
    cv_chi_square, cv_chi_square_se : float, optional
        With the observations' covariance: the mean chi-square of a left-out plate (its own
        3x3 block of the covariance) and its standard error over plates.
    recommended : bool
        Whether the ranking's rule recommends this hypothesis
        (:func:`torque.inference.ranking.rank`).
    """

    name: str
    rms_velocity_mm_yr: float
    variance_reduction: float
    free: int
    aic: float
    aicc: float
    bic: float
    cv_rms_mm_yr: float
    coefficients: dict
    cv_stderr_mm_yr: float = float("nan")
    cv_excess_se: float = 0.0
    within_one_se: bool = True
    effective_observations: int = 0
    effective_parameters: int = 0
    chi_square: float | None = None
    cv_chi_square: float | None = None
    cv_chi_square_se: float | None = None
    recommended: bool = False


@dataclass(frozen=True, eq=False)
class SeriesResult:
    """Everything ``torque stages`` reports.

    Attributes
    ----------
    series : SeriesFile
        The series file as read (:func:`torque.io.series.read_series`).
    stages : list of Stage
        The hypothesis on every stage.
    fit : JointFit
    ranking : list of dict
        One row per hypothesis (the series' and its ``compare`` ones), best first by
        leave-one-plate-out cross-validation: ``name``, ``rms_mm_yr``, ``cv_rms_mm_yr``,
        ``cv_stderr_mm_yr``, ``within_one_se``, ``recommended`` (see ``recommendation``),
        ``aic``, ``bic``, ``k``, ``n``, ``stage_rms_mm_yr``.
    monte_carlo : dict or None
        ``draws`` (n, k) of the parameters, ``failed``, ``seed``, ``sd``, ``low``,
        ``high`` (2.5 and 97.5 percentiles).
    executor : str
        Where the tasks ran.
    recommendation : dict
        ``rule``, ``recommended``, ``reason`` and the nested ``tests``: the rule ``rank``
        uses for the series' misfit (:func:`torque.workflows.series.recommend_series`).
    """

    series: object
    stages: list
    fit: object
    ranking: list
    monte_carlo: dict | None
    executor: str
    recommendation: dict = field(default_factory=dict)

    def __repr__(self) -> str:
        return (f"SeriesResult({self.hypothesis_name!r}, {len(self.stages)} stages, "
                f"{len(self.ranking)} hypotheses)")

    @property
    def hypothesis_name(self) -> str:
        """The name of the series' own hypothesis (the one fitted and reported)."""
        return next(r["name"] for r in self.ranking if r["file"] == self.series.hypothesis)


# ----------------------------------------------------------------------------------------
# torques
# ----------------------------------------------------------------------------------------
#: The unit torques are reported in.
TORQUE_UNIT_NM = 1e25
SOURCES = ("fixed", "fitted", "unit")


@dataclass(frozen=True, eq=False)
class TorqueTable:
    """Torques of every term on every plate at stated coefficients.

    Attributes
    ----------
    plates : tuple of str
        P plates.
    labels : tuple of str
        K terms.
    coefficients : ndarray, shape (K,)
        The coefficient each term's torque is taken at.
    sources : tuple of str
        Per term: ``"fixed"`` (the hypothesis' value), ``"fitted"`` (from a fit) or
        ``"unit"`` (a free coefficient with no fit: the torque at coefficient 1).
    torque_nm : ndarray, shape (P, K, 3)
        N m, Earth-centred Cartesian axes.
    centroid : ndarray, shape (P, 3)
        Unit vectors to the plates' centroids.
    radius_m : float
    with_motions : bool
        Whether motion-dependent terms were evaluated at given motions.

    Notes
    -----
    A :class:`TorqueTable` holds the torques (N m) of a hypothesis' terms at stated
    coefficients (fixed, fitted, or 1 for a free coefficient with no fit) and gives what a
    reader needs from them: magnitudes in 10^25 N m, the torque's pole (where the torque
    vector pierces the sphere: the pole about which it would turn the plate), each plate's
    total (with motions, the residual of the balance: zero for a plate in balance), the terms
    ranked by size on each plate, and an equivalent force at the plate's centroid.

    The **equivalent force** is the one force, tangent at the plate's centroid ``c`` (unit
    vector), that exerts the same torque about the planet's centre: ``F = (tau x c) / R``. It
    reproduces the torque's component perpendicular to ``c``; the component along ``c`` (a
    spin about the centroid) no force at the centroid can make. It is a way of reading a torque
    as a force in newtons, meaningful for plates over which the sphere's curvature is modest,
    not a net force in three dimensions (that of a body force spread over a curved plate points
    partly into the planet and exerts no torque).
    """

    plates: tuple
    labels: tuple
    coefficients: np.ndarray
    sources: tuple
    torque_nm: np.ndarray
    centroid: np.ndarray
    radius_m: float
    with_motions: bool = False

    def __repr__(self) -> str:
        return (f"TorqueTable({len(self.plates)} plates, terms {list(self.labels)}, "
                f"coefficients {sorted(set(self.sources))})")

    @classmethod
    def from_terms(cls, world, terms, coefficients=None, omega=None, sources=None):
        """The table of ``terms`` on ``world``.

        Parameters
        ----------
        world : World
        terms : list of ForceTerm
        coefficients : sequence of float, optional
            One per term (default: the fixed value, or 1 for a free one).
        omega : ndarray, shape (P, 3), optional
            Motions (rad/s) for the motion-dependent terms.
        sources : sequence of str, optional
            One of :data:`SOURCES` per term (default ``"fixed"`` or ``"unit"``).

        Returns
        -------
        TorqueTable

        Examples
        --------
        >>> import torque
        >>> inputs = torque.Inputs.load("polygons_demo/world.toml")
        >>> hyp = torque.load_hypothesis("polygons_demo/hypotheses/ridge_drag.toml")
        >>> terms = torque.compute_torques(inputs, hyp)
        >>> table = TorqueTable.from_terms(inputs.world, terms[:1])
        >>> table.magnitude.shape, table.sources
        ((14, 1), ('fixed',))
        """
        if coefficients is None:
            coefficients = [1.0 if t.spec.free else t.spec.coefficient for t in terms]
        if sources is None:
            sources = ["unit" if t.spec.free else "fixed" for t in terms]
        c = np.asarray(coefficients, float)
        tq = np.stack([ci * t.torque(omega) for ci, t in zip(c, terms)], axis=1)
        first = world.geometry.moments[1]
        centroid = sphere.normalize(first)
        return cls(tuple(world.plate_names), tuple(t.label for t in terms), c, tuple(sources),
                   tq, centroid, float(world.radius_m), omega is not None)

    # -- what is read off it -------------------------------------------------------------
    @property
    def magnitude(self) -> np.ndarray:
        """|torque| in 10^25 N m, shape (P, K)."""
        return np.linalg.norm(self.torque_nm, axis=-1) / TORQUE_UNIT_NM

    @property
    def pole(self):
        """The torque's pole: latitude and longitude (degrees), each (P, K); NaN for zero."""
        lon, lat = sphere.xyz_to_lonlat(self.torque_nm)
        zero = ~np.any(self.torque_nm, axis=-1)
        return np.where(zero, np.nan, lat), np.where(zero, np.nan, lon)

    @property
    def total_nm(self) -> np.ndarray:
        """Sum over terms per plate (N m), shape (P, 3): with motions and every coefficient
        known, the residual of the balance."""
        return self.torque_nm.sum(axis=1)

    @property
    def complete(self) -> bool:
        """Whether the total means something: every coefficient known, and motions given
        (or no term needs them)."""
        return "unit" not in self.sources

    def equivalent_force_n(self, torque_nm=None) -> np.ndarray:
        """The force at each plate's centroid with the same torque: east and north, N.

        Parameters
        ----------
        torque_nm : ndarray, shape (P, ..., 3), optional
            Default: every term's torque, (P, K, 3).

        Returns
        -------
        ndarray, shape (P, ..., 2)
        """
        t = self.torque_nm if torque_nm is None else np.asarray(torque_nm, float)
        c = self.centroid.reshape((len(self.centroid),) + (1,) * (t.ndim - 2) + (3,))
        F = np.cross(t, c) / self.radius_m
        east, north = sphere.east_north(self.centroid)
        shape = (len(self.centroid),) + (1,) * (t.ndim - 2) + (3,)
        return np.stack([np.sum(F * east.reshape(shape), -1),
                         np.sum(F * north.reshape(shape), -1)], axis=-1)

    def largest(self, n: int = 3) -> list:
        """Per plate, its ``n`` largest terms: a list of ``[(label, |torque| 1e25 N m)]``.

        Parameters
        ----------
        n : int

        Returns
        -------
        list of list of (str, float)
        """
        mag = self.magnitude
        order = np.argsort(-mag, axis=1)[:, :n]
        return [[(self.labels[k], float(mag[p, k])) for k in row if mag[p, k] > 0]
                for p, row in enumerate(order)]

    # -- notebooks -------------------------------------------------------------------------
    def _repr_html_(self) -> str:
        rows = [[p, *map(float, m)] for p, m in zip(self.plates, self.magnitude)]
        return html_table(["plate", *self.labels], rows,
                          "|torque| in 10^25 N m, by plate and term")

    def to_dataframe(self):
        """The table as a pandas DataFrame: one row per term and plate, then the totals
        (the columns of :meth:`columns`).

        Returns
        -------
        pandas.DataFrame
        """
        import pandas as pd
        return pd.DataFrame(self.columns())

    def to_dataset(self):
        """The table as an xarray Dataset, dimensions ``plate``, ``term`` and ``axis``.

        Returns
        -------
        xarray.Dataset
            ``torque_nm`` (plate, term, axis), ``magnitude_1e25_nm``, ``pole_lat``,
            ``pole_lon`` (plate, term), ``coefficient`` and ``coefficient_source`` (term),
            ``total_nm`` (plate, axis).
        """
        import xarray as xr
        lat, lon = self.pole
        return xr.Dataset(
            {"torque_nm": (("plate", "term", "axis"), self.torque_nm),
             "magnitude_1e25_nm": (("plate", "term"), self.magnitude),
             "pole_lat": (("plate", "term"), lat), "pole_lon": (("plate", "term"), lon),
             "coefficient": ("term", self.coefficients),
             "coefficient_source": ("term", list(self.sources)),
             "total_nm": (("plate", "axis"), self.total_nm)},
            coords={"plate": list(self.plates), "term": list(self.labels),
                    "axis": ["x", "y", "z"]},
            attrs={"units": "N m (torque_nm, total_nm), 1e25 N m (magnitude), degrees "
                            "(poles)", "radius_m": self.radius_m})

    def columns(self) -> dict:
        """The table as CSV columns: one row per term and plate (term by term), then per
        plate a ``total`` row when :attr:`complete`.

        Returns
        -------
        dict
            ``plate, term, coefficient, tx_nm, ty_nm, tz_nm`` (the contract's, in its
            order), then ``coefficient_source, magnitude_1e25_nm, pole_lat, pole_lon,
            force_east_n, force_north_n``.
        """
        P, K = self.torque_nm.shape[:2]
        # term by term, every plate within a term (the order the command always wrote)
        plates = np.tile(np.array(self.plates, dtype=object), K)
        terms = np.repeat(np.array(self.labels, dtype=object), P)
        coef = np.repeat(self.coefficients, P)
        src = np.repeat(np.array(self.sources, dtype=object), P)
        tq = self.torque_nm.transpose(1, 0, 2).reshape(-1, 3)
        lat, lon = (a.T.ravel() for a in self.pole)
        force = self.equivalent_force_n().transpose(1, 0, 2).reshape(-1, 2)
        if self.complete:
            tot = self.total_nm
            tlon, tlat = sphere.xyz_to_lonlat(tot)
            zero = ~np.any(tot, axis=-1)
            plates = np.r_[plates, np.array(self.plates, dtype=object)]
            terms = np.r_[terms, np.array(["total"] * P, dtype=object)]
            coef = np.r_[coef, np.full(P, np.nan)]
            src = np.r_[src, np.array(["sum"] * P, dtype=object)]
            tq = np.r_[tq, tot]
            lat = np.r_[lat, np.where(zero, np.nan, tlat)]
            lon = np.r_[lon, np.where(zero, np.nan, tlon)]
            force = np.r_[force, self.equivalent_force_n(tot[:, None, :])[:, 0]]
        return {"plate": plates, "term": terms, "coefficient": coef,
                "tx_nm": tq[:, 0], "ty_nm": tq[:, 1], "tz_nm": tq[:, 2],
                "coefficient_source": src,
                "magnitude_1e25_nm": np.linalg.norm(tq, axis=1) / TORQUE_UNIT_NM,
                "pole_lat": lat, "pole_lon": lon,
                "force_east_n": force[:, 0], "force_north_n": force[:, 1]}
