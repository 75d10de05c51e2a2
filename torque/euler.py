"""Euler vectors: poles and rates, velocities, relative motion, finite rotations, frames.

Inside the code an angular velocity is a Cartesian vector in **rad/s** (Earth-centred axes,
see :mod:`torque.sphere`); at the edges it is a pole (lat, lon in degrees) and a rate in
**deg/Myr**, positive counter-clockwise seen from above the pole (right-hand rule).
Velocities come out in mm/yr. One Myr is the Julian million years, 3.15576e13 s.

References
----------
.. [1] Cox, A. and Hart, R. B. (1986). *Plate Tectonics: How It Works*. Blackwell, ch. 4-5
   (Euler poles, relative motion on a sphere, finite rotations).
.. [2] Fowler, C. M. R. (2005). *The Solid Earth*, 2nd ed., Cambridge Univ. Press, sec. 2.4
   (relative plate motion: ``v = omega R sin(Delta)``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import sphere
from .errors import InputError

__all__ = ["MYR_S", "YR_S", "RAD_S_PER_DEG_MYR", "M_S_TO_MM_YR", "COV_COLUMNS",
           "pole_to_vector", "vector_to_pole", "velocity_xyz", "velocity_en",
           "speed_azimuth", "relative", "finite_rotation", "rotation_pole", "compose",
           "Motions", "net_rotation", "to_no_net_rotation", "grid_lonlat",
           "velocity_field"]

MYR_S = 3.15576e13                               # s in a (Julian) million years
YR_S = MYR_S / 1e6
RAD_S_PER_DEG_MYR = np.pi / 180.0 / MYR_S
M_S_TO_MM_YR = 1e3 * YR_S
COV_COLUMNS = ("cov_xx", "cov_xy", "cov_xz", "cov_yy", "cov_yz", "cov_zz")


# ----------------------------------------------------------------------------------------
# poles <-> vectors
# ----------------------------------------------------------------------------------------
def pole_to_vector(lat_deg, lon_deg, rate_deg_myr) -> np.ndarray:
    """Angular velocity vectors (rad/s), shape ``(..., 3)``, from poles and rates.

    Parameters
    ----------
    lat_deg, lon_deg : array_like, shape (...)
        Pole position, degrees.
    rate_deg_myr : array_like, shape (...)
        Rotation rate, deg/Myr, counter-clockwise seen from above the pole.

    Returns
    -------
    ndarray, shape (..., 3)
        rad/s.

    Examples
    --------
    One degree per Myr about the north pole:

    >>> w = pole_to_vector(90.0, 0.0, 1.0)
    >>> float(w[2] / RAD_S_PER_DEG_MYR)
    1.0
    """
    u = sphere.lonlat_to_xyz(lon_deg, lat_deg)
    return u * (np.asarray(rate_deg_myr, dtype=float) * RAD_S_PER_DEG_MYR)[..., None]


def vector_to_pole(omega):
    """Pole latitude, longitude (degrees) and rate (deg/Myr, always >= 0) of vectors (rad/s).

    A zero vector gets the pole (90, 0) and rate 0.

    Parameters
    ----------
    omega : array_like, shape (..., 3)
        Angular velocities, rad/s.

    Returns
    -------
    lat_deg, lon_deg, rate_deg_myr : ndarray, shape (...)
    """
    omega = np.asarray(omega, dtype=float)
    rate = np.linalg.norm(omega, axis=-1)
    lon, lat = sphere.xyz_to_lonlat(omega)
    zero = rate == 0
    lat = np.where(zero, 90.0, lat)
    lon = np.where(zero, 0.0, lon)
    return lat, lon, rate / RAD_S_PER_DEG_MYR


def velocity_xyz(omega, xyz, radius_m: float) -> np.ndarray:
    """Velocity ``omega x (R r)`` in m/s at unit vectors ``xyz`` (broadcasting).

    Parameters
    ----------
    omega : array_like, shape (..., 3)
        Angular velocities, rad/s.
    xyz : array_like, shape (..., 3)
        Unit vectors of the points.
    radius_m : float

    Returns
    -------
    ndarray, shape (..., 3)
        m/s.
    """
    return np.cross(omega, xyz) * radius_m


def velocity_en(omega, xyz, radius_m: float):
    """East and north velocity components (mm/yr) of rotations ``omega`` at points ``xyz``.

    Parameters
    ----------
    omega : ndarray, shape (N, 3) or (3,)
        Angular velocity (rad/s) of the plate holding each point.
    xyz : ndarray, shape (N, 3)
        Unit vectors. At the poles east is taken along +y (longitude 90).
    radius_m : float

    Returns
    -------
    ve, vn : ndarray, shape (N,)
    """
    xyz = np.asarray(xyz, dtype=float)
    v = velocity_xyz(omega, xyz, radius_m)
    east, north = sphere.east_north(xyz)
    return sphere.dot(v, east) * M_S_TO_MM_YR, sphere.dot(v, north) * M_S_TO_MM_YR


def speed_azimuth(ve, vn):
    """Speed (same unit as the components) and azimuth (degrees clockwise from north).

    Parameters
    ----------
    ve, vn : array_like
        East and north components.

    Returns
    -------
    speed, azimuth_deg : ndarray
    """
    return np.hypot(ve, vn), np.mod(np.degrees(np.arctan2(ve, vn)), 360.0)


def relative(omega_a, omega_b) -> np.ndarray:
    """Angular velocity of plate A relative to plate B: ``omega_A - omega_B``.

    Parameters
    ----------
    omega_a, omega_b : array_like, shape (..., 3)
        rad/s.

    Returns
    -------
    ndarray, shape (..., 3)
    """
    return np.asarray(omega_a) - np.asarray(omega_b)


# ----------------------------------------------------------------------------------------
# finite rotations (scipy does the algebra)
# ----------------------------------------------------------------------------------------
def finite_rotation(lat_deg, lon_deg, angle_deg):
    """The finite rotation by ``angle_deg`` (counter-clockwise) about a pole.

    Parameters
    ----------
    lat_deg, lon_deg : float or array_like
        The pole, degrees.
    angle_deg : float or array_like
        Degrees, counter-clockwise seen from above the pole.

    Returns
    -------
    scipy.spatial.transform.Rotation
    """
    axis = sphere.lonlat_to_xyz(lon_deg, lat_deg)
    from scipy.spatial.transform import Rotation
    return Rotation.from_rotvec(axis * np.radians(np.asarray(angle_deg, float))[..., None])


def rotation_pole(rotation):
    """Pole latitude, longitude and angle (degrees, >= 0) of finite rotations.

    Parameters
    ----------
    rotation : scipy.spatial.transform.Rotation

    Returns
    -------
    lat_deg, lon_deg, angle_deg : ndarray
    """
    rv = rotation.as_rotvec()
    angle = np.degrees(np.linalg.norm(rv, axis=-1))
    lon, lat = sphere.xyz_to_lonlat(rv)
    return np.where(angle == 0, 90.0, lat), np.where(angle == 0, 0.0, lon), angle


def compose(first, then):
    """The rotation ``first`` followed by ``then``.

    Parameters
    ----------
    first, then : scipy.spatial.transform.Rotation

    Returns
    -------
    scipy.spatial.transform.Rotation
        ``then * first``: a point is rotated by ``first``, then by ``then``.
    """
    return then * first


# ----------------------------------------------------------------------------------------
# a set of plate motions
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Motions:
    """Euler vectors of named plates.

    Attributes
    ----------
    plates : tuple of str
    omega : ndarray, shape (P, 3)
        Angular velocities in rad/s.
    cov : ndarray, shape (P, 3, 3) or None
        Covariance of each Euler vector, (rad/s)^2, if known.
    extra : dict
        Other columns of the file they came from, ``{name: list of str}``.
    """

    plates: tuple
    omega: np.ndarray
    cov: np.ndarray | None = None
    extra: dict = field(default_factory=dict)
    source: str | None = None

    def __repr__(self) -> str:
        cov = ", with covariance" if self.cov is not None else ""
        src = f", from {self.source!r}" if self.source else ""
        return f"Motions({len(self.plates)} plates{cov}{src})"

    @classmethod
    def from_poles(cls, plates, lat_deg, lon_deg, rate_deg_myr, **kw):
        """Motions from pole latitudes, longitudes and rates.

        Parameters
        ----------
        plates : sequence of str
        lat_deg, lon_deg : array_like, shape (P,)
        rate_deg_myr : array_like, shape (P,)
        **kw
            ``cov``, ``extra``, ``source`` (see the class).

        Returns
        -------
        Motions
        """
        return cls(tuple(plates), pole_to_vector(lat_deg, lon_deg, rate_deg_myr), **kw)

    @property
    def poles(self):
        """``(lat_deg, lon_deg, rate_deg_myr)`` arrays, rate >= 0."""
        return vector_to_pole(self.omega)

    def _repr_html_(self) -> str:
        from .tabular import html_table
        lat, lon, rate = self.poles
        rows = [[p, float(a), float(o), float(r)] for p, a, o, r in zip(self.plates, lat, lon,
                                                                          rate)]
        return html_table(["plate", "pole lat", "pole lon", "rate deg/Myr"], rows,
                          f"Euler vectors of {len(self.plates)} plates")

    def to_dataframe(self):
        """The Euler vectors as a pandas DataFrame indexed by plate.

        Returns
        -------
        pandas.DataFrame
            ``lat``, ``lon`` (degrees), ``rate`` (deg/Myr, >= 0), the Cartesian
            ``wx_deg_myr``, ``wy_deg_myr``, ``wz_deg_myr``, and with a covariance its
            ``cov_*`` columns in (deg/Myr)^2.
        """
        import pandas as pd
        lat, lon, rate = self.poles
        w = self.omega / RAD_S_PER_DEG_MYR
        cols = {"lat": lat, "lon": lon, "rate": rate, "wx_deg_myr": w[:, 0],
                "wy_deg_myr": w[:, 1], "wz_deg_myr": w[:, 2]}
        if self.cov is not None:
            c = self.cov / RAD_S_PER_DEG_MYR ** 2
            for name, (a, b) in zip(COV_COLUMNS, ((0, 0), (0, 1), (0, 2), (1, 1), (1, 2),
                                                  (2, 2))):
                cols[name] = c[:, a, b]
        return pd.DataFrame(cols, index=pd.Index(list(self.plates), name="plate"))

    def to_dataset(self):
        """The Euler vectors as an xarray Dataset with dimensions ``plate`` and ``axis``.

        Returns
        -------
        xarray.Dataset
            ``omega_deg_myr`` (plate, axis), pole ``lat``, ``lon``, ``rate`` (plate), and
            ``cov_deg2_myr2`` (plate, axis, axis2) when known.
        """
        import xarray as xr
        lat, lon, rate = self.poles
        data = {"omega_deg_myr": (("plate", "axis"), self.omega / RAD_S_PER_DEG_MYR),
                "lat": ("plate", lat), "lon": ("plate", lon), "rate": ("plate", rate)}
        if self.cov is not None:
            data["cov_deg2_myr2"] = (("plate", "axis", "axis2"),
                                     self.cov / RAD_S_PER_DEG_MYR ** 2)
        return xr.Dataset(data, coords={"plate": list(self.plates), "axis": ["x", "y", "z"],
                                        **({"axis2": ["x", "y", "z"]} if self.cov is not None
                                           else {})},
                          attrs={"source": self.source or ""})

    def index(self) -> dict:
        """``{plate: row}`` of these motions.
        """
        return {p: i for i, p in enumerate(self.plates)}

    def for_world(self, world) -> np.ndarray:
        """Angular velocities (rad/s) in the order of ``world.plates``, shape (P, 3).

        Raises InputError naming the plates that are unknown to the world or missing here.

        Parameters
        ----------
        world : World

        Returns
        -------
        ndarray, shape (P, 3)
        """
        idx = self.index()
        names = world.plate_names
        unknown = [p for p in self.plates if p not in world.plate_index]
        missing = [p for p in names if p not in idx]
        where = self.source
        if unknown:
            raise InputError(f"motions given for plate(s) not in the world: "
                             f"{', '.join(map(repr, unknown))}", file=where,
                             hint=f"the world's plates are {', '.join(names)}")
        if missing:
            raise InputError(f"no motion for plate(s) {', '.join(map(repr, missing))}",
                             file=where, hint="give every plate of the world a row")
        return self.omega[[idx[p] for p in names]]

    def cov_for_world(self, world):
        """The covariance (rad/s)^2 in the order of ``world.plates``, or None.

        Parameters
        ----------
        world : World

        Returns
        -------
        ndarray, shape (P, 3, 3), or None
        """
        if self.cov is None:
            return None
        idx = self.index()
        return self.cov[[idx[p] for p in world.plate_names]]

    def with_omega(self, omega, cov=None) -> "Motions":
        """The same plates with other Euler vectors (and covariance).

        Parameters
        ----------
        omega : array_like, shape (P, 3)
            rad/s, in the order of ``plates``.
        cov : ndarray, shape (P, 3, 3), optional
            (rad/s)^2.

        Returns
        -------
        Motions
        """
        return Motions(self.plates, np.asarray(omega, float), cov, dict(self.extra),
                       self.source)

    # -- frames ---------------------------------------------------------------------------
    def add_rotation(self, omega) -> "Motions":
        """Every plate's Euler vector plus ``omega`` (rad/s): a change of reference frame.

        Parameters
        ----------
        omega : array_like, shape (3,)
            rad/s.

        Returns
        -------
        Motions
        """
        return self.with_omega(self.omega + np.asarray(omega, float), self.cov)

    def subtract_combination(self, weights) -> "Motions":
        """Every Euler vector less the same linear combination of all of them.

        ``w'_p = w_p - sum_q G_q w_q``, a change of frame by a rotation that is itself
        estimated from the motions (a fixed plate, the net rotation). The covariance is
        carried through the linear map exactly: with independent plates of covariance
        ``C_q``, ``C'_p = C_p - G_p C_p - C_p G_p^T + sum_q G_q C_q G_q^T``. The change
        correlates the plates; only these per-plate blocks are kept (the motions file has
        no cross-covariance columns).

        Parameters
        ----------
        weights : ndarray, shape (P, 3, 3)
            ``G_q`` for every plate, in the order of ``self.plates``.
        """
        G = np.asarray(weights, float)
        omega = self.omega - np.einsum("qij,qj->i", G, self.omega)
        cov = None
        if self.cov is not None:
            C = self.cov
            common = np.einsum("qij,qjk,qlk->il", G, C, G)
            GC = np.einsum("pij,pjk->pik", G, C)
            cov = C - GC - np.swapaxes(GC, 1, 2) + common
            cov = 0.5 * (cov + np.swapaxes(cov, 1, 2))
        return self.with_omega(omega, cov)

    @property
    def plates_at_rest(self) -> list:
        """Plates whose Euler vector is exactly zero: motions given relative to a fixed plate
        have one (a frame where the mantle is at rest almost never has)."""
        return [p for p, w in zip(self.plates, self.omega) if not np.any(w)]

    def relative_to(self, plate: str) -> "Motions":
        """Motions in the frame where ``plate`` is fixed.

        The fixed plate's own uncertainty passes to every other plate: ``C'_p = C_p +
        C_fixed``, and the fixed plate gets rate 0 with zero covariance.

        Parameters
        ----------
        plate : str
            One of ``plates``.

        Returns
        -------
        Motions
        """
        idx = self.index()
        if plate not in idx:
            raise InputError(f"no plate named {plate!r} in the motions",
                             file=self.source, hint=f"plates are {', '.join(self.plates)}")
        G = np.zeros((len(self.plates), 3, 3))
        G[idx[plate]] = np.eye(3)
        return self.subtract_combination(G)


def net_rotation(D, omega) -> np.ndarray:
    """Net rotation (rad/s) of plate motions over the whole surface, shape (3,).

    The net rotation is the single rotation ``w_net`` whose removal makes the surface
    integral of ``r x v`` vanish. Since ``int_plate r x (w x r) dA = D w`` with ``D`` the
    plate's drag tensor ``int (I - r r^T) dA``, it solves ``(sum D) w_net = sum D w``,
    exactly, from the plates' closed-form tensors. On a tiling ``sum D = (8 pi / 3) I``.
    This is the one place the formula is written.

    Parameters
    ----------
    D : ndarray, shape (P, 3, 3)
        The plates' drag tensors (``World.drag_tensor``, or ``System.D``), any common
        scale.
    omega : ndarray, shape (P, 3)
        Angular velocity of each plate, in the same plate order.

    Returns
    -------
    ndarray, shape (3,)

    Examples
    --------
    A rigid rotation of every plate together is its own net rotation:

    >>> import torque
    >>> world = torque.load_world("polygons_demo/world.toml")
    >>> w = np.array([1e-15, -2e-15, 3e-15])
    >>> bool(np.allclose(net_rotation(world.drag_tensor, np.tile(w, (len(world.plates), 1))), w,
    ...                  rtol=1e-12, atol=0))
    True
    """
    D = np.asarray(D, float)
    return np.linalg.solve(D.sum(axis=0), np.einsum("pij,pj->i", D, omega))


def to_no_net_rotation(world, motions: Motions) -> tuple[Motions, np.ndarray]:
    """Motions in the no-net-rotation frame, and the net rotation removed (rad/s).

    The net rotation is linear in the motions, ``w_net = sum_q S^-1 D_q w_q`` with
    ``S = sum_q D_q``, so the covariance is carried through that map
    (:meth:`Motions.subtract_combination`).

    Parameters
    ----------
    world : World
    motions : Motions
        Of every plate of the world.

    Returns
    -------
    motions : Motions
        In the no-net-rotation frame, with the covariance carried through.
    w_net : ndarray, shape (3,)
        The net rotation removed, rad/s.
    """
    omega = motions.for_world(world)
    D = world.drag_tensor
    G_world = np.linalg.solve(D.sum(axis=0), D)          # S^-1 D_q, world order
    w_net = np.einsum("qij,qj->i", G_world, omega)
    order = [world.plate_index[p] for p in motions.plates]
    return motions.subtract_combination(G_world[order]), w_net


# ----------------------------------------------------------------------------------------
# velocity fields
# ----------------------------------------------------------------------------------------
def grid_lonlat(step_deg: float):
    """Cell-centred regular grid (so no node sits on a pole): 1-D lon and lat, degrees.

    Parameters
    ----------
    step_deg : float
        Grid step, in (0, 90] degrees.

    Returns
    -------
    lon, lat : ndarray
        Cell centres, degrees, increasing.
    """
    if not (np.isfinite(step_deg) and 0 < step_deg <= 90):
        raise InputError(f"the grid step must be in (0, 90] degrees, got {step_deg:g}")
    lon = np.arange(-180.0 + step_deg / 2, 180.0, step_deg)
    lat = np.arange(-90.0 + step_deg / 2, 90.0, step_deg)
    return lon, lat


def velocity_field(world, omega, lon_deg, lat_deg):
    """Plate and velocity at points.

    Parameters
    ----------
    world : World
    omega : ndarray, shape (P, 3)
        Angular velocity (rad/s) of each plate, in world plate order.
    lon_deg, lat_deg : ndarray, shape (N,)

    Returns
    -------
    plate : ndarray of int, shape (N,)
        Index into ``world.plates``.
    ve, vn : ndarray, shape (N,)
        East and north velocity, mm/yr.
    """
    xyz = sphere.lonlat_to_xyz(np.ravel(lon_deg), np.ravel(lat_deg))
    plate = world.locate_xyz(xyz)
    if np.any(plate < 0):
        k = int(np.nonzero(plate < 0)[0][0])
        raise InputError(f"{int(np.sum(plate < 0))} point(s) lie in no plate, the first at "
                         f"lon {np.ravel(lon_deg)[k]:g}, lat {np.ravel(lat_deg)[k]:g}",
                         file=world.paths.get("world"),
                         hint="the plates do not tile the sphere; run 'torque check'")
    ve, vn = velocity_en(omega[plate], xyz, world.radius_m)
    return plate, ve, vn
