"""The torque of every term on every plate, in the units researchers compare them in.

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

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import sphere
from .tabular import html_table

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
