"""The data model of a plate model: plates, boundaries, their geometry, the world.

A :class:`World` is the plate model of one planet: plate polygons on the unit sphere
(concatenated rings, see :mod:`torque.sphere`), boundary lines with their kinds, the radius,
and the paths of the optional data files. Problems found while reading (a malformed ring,
a boundary that names an unknown plate) are kept in ``World.problems`` so that
``torque check`` can list them all; :func:`torque.validate.require_valid` turns them into an
error for commands that need a sound world.

This module reads no file: :mod:`torque.io` builds worlds from files (and from rings in
memory, :func:`torque.io.world_from_rings`), with the repairs and the derived boundaries of
:mod:`torque.rings`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from . import sphere

from . import polygons
from .errors import InputError
from .locate import cached as cached_locator

__all__ = ["EARTH_RADIUS_KM", "BOUNDARY_KINDS", "SAME_VERTEX_RAD", "Problem", "Plate",
           "Boundary", "BoundarySet", "PlateGeometry", "World"]

EARTH_RADIUS_KM = 6371.0
BOUNDARY_KINDS = ("ridge", "subduction", "transform", "collision", "unclassified")
#: Two vertices closer than this (radians, about 6 mm on the Earth) are the same vertex, for
#: worlds built without a stated tolerance (world files state one in metres).
SAME_VERTEX_RAD = 1e-9


@dataclass(frozen=True)
class Problem:
    """One thing wrong (``severity="error"``) or doubtful (``"warning"``) in a world.

    Attributes
    ----------
    severity : {"error", "warning"}
    message : str
    file : str, optional
        The file it is in.
    feature : int, optional
        The feature's index in the file.
    plate : str, optional
    lon, lat : float, optional
        Roughly where, degrees.
    """

    severity: str
    message: str
    file: str | None = None
    feature: int | None = None
    plate: str | None = None
    lon: float | None = None
    lat: float | None = None

    def as_dict(self) -> dict:
        """The fields that are set, as a dict (for JSON).
        """
        return {k: v for k, v in self.__dict__.items() if v is not None}

    def __str__(self) -> str:
        where = []
        if self.file:
            where.append(self.file)
        if self.feature is not None:
            where.append(f"feature {self.feature}")
        if self.plate:
            where.append(f"plate {self.plate!r}")
        at = (f" near lon {self.lon:.3f}, lat {self.lat:.3f}"
              if self.lon is not None and self.lat is not None else "")
        head = f"{', '.join(where)}: " if where else ""
        return f"{self.severity}: {head}{self.message}{at}"


@dataclass(frozen=True)
class Plate:
    """A plate: its name, position in the world and the feature it came from.

    Attributes
    ----------
    name : str
    index : int
        Its position in ``World.plates`` (and in every (P, ...) array).
    feature : int
        The feature of the plates file it came from.
    """

    name: str
    index: int
    feature: int


@dataclass(frozen=True, eq=False)
class Boundary:
    """A boundary line between two plates.

    ``xyz`` holds the polyline's unit vectors ``(K, 3)``; ``left`` and ``right`` are the
    plates on either side as the line is walked, seen from outside the sphere.
    ``properties`` keeps the feature's other numeric properties (per-boundary overrides
    such as ``slab_depth_km``).

    Attributes
    ----------
    kind : str
        ``ridge``, ``subduction``, ``transform``, ``collision`` or ``unclassified``.
    left, right : str
        Plate names.
    xyz : ndarray, shape (K, 3)
        Unit vectors of the polyline's vertices.
    feature : int, optional
        The feature of the boundaries file it came from.
    subducting : str, optional
        The sinking plate of a subduction zone.
    properties : dict
        Numeric per-line overrides.
    """

    kind: str
    left: str
    right: str
    xyz: np.ndarray
    feature: int | None = None
    subducting: str | None = None
    properties: dict = field(default_factory=dict)

    @property
    def length(self) -> float:
        """Length on the unit sphere (radians)."""
        return float(sphere.angle_between(self.xyz[:-1], self.xyz[1:]).sum())


@dataclass(frozen=True, eq=False)
class BoundarySet:
    """Boundary lines as columns: one row per great-circle arc, computed once per world.

    Attributes
    ----------
    a, b : ndarray, shape (E, 3)
        Start and end of each arc (unit vectors), in the order the lines are walked.
    line : ndarray of int, shape (E,)
        The line each arc belongs to (index into ``World.boundaries``).
    left, right : ndarray of int, shape (L,)
        Plate index on either side of each line (-1 for a name that is not a plate).
    kind : ndarray of str, shape (L,)
        Kind of each line.

    The arcs' poles and lengths (:attr:`pole`, :attr:`theta`) are computed on first use
    and kept.
    """

    a: np.ndarray
    b: np.ndarray
    line: np.ndarray
    left: np.ndarray
    right: np.ndarray
    kind: np.ndarray

    def __repr__(self) -> str:
        return f"BoundarySet({len(self.kind)} lines, {len(self.line)} arcs)"

    @classmethod
    def from_boundaries(cls, boundaries, plate_index: dict) -> "BoundarySet":
        """Columns of a sequence of :class:`Boundary` (``plate_index``: name -> index).

        Parameters
        ----------
        boundaries : sequence of Boundary
        plate_index : dict
            ``{name: index}``; a name not in it gets index -1.

        Returns
        -------
        BoundarySet
        """
        if not boundaries:
            return cls(np.zeros((0, 3)), np.zeros((0, 3)), np.zeros(0, np.int64),
                       np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0, str))
        return cls(np.concatenate([x.xyz[:-1] for x in boundaries]),
                   np.concatenate([x.xyz[1:] for x in boundaries]),
                   np.repeat(np.arange(len(boundaries)),
                             [len(x.xyz) - 1 for x in boundaries]),
                   np.array([plate_index.get(x.left, -1) for x in boundaries], np.int64),
                   np.array([plate_index.get(x.right, -1) for x in boundaries], np.int64),
                   np.array([x.kind for x in boundaries]))

    def of_kind(self, kind: str) -> "BoundarySet":
        """The arcs of the lines of one kind (``line`` still indexes all the lines).

        Parameters
        ----------
        kind : str
            A boundary kind.

        Returns
        -------
        BoundarySet
        """
        keep = self.kind[self.line] == kind
        return BoundarySet(self.a[keep], self.b[keep], self.line[keep], self.left,
                           self.right, self.kind)

    @cached_property
    def pole(self) -> np.ndarray:
        """Unit pole of each arc (pointing into its left plate), shape (E, 3)."""
        return sphere.arc_pole(self.a, self.b)[0]

    @cached_property
    def theta(self) -> np.ndarray:
        """Length of each arc on the unit sphere (radians), shape (E,)."""
        return sphere.arc_pole(self.a, self.b)[1]

    @property
    def arc_left(self) -> np.ndarray:
        """Plate index on the left of each arc, shape (E,)."""
        return self.left[self.line]

    @property
    def arc_right(self) -> np.ndarray:
        """Plate index on the right of each arc, shape (E,)."""
        return self.right[self.line]

    def length(self) -> np.ndarray:
        """Length of each line on the unit sphere (radians), shape (L,)."""
        return np.bincount(self.line, weights=self.theta, minlength=len(self.kind))


@dataclass(frozen=True, eq=False)
class PlateGeometry:
    """All rings of all plates, concatenated, each with its plate on the left.

    Attributes
    ----------
    xyz : ndarray, shape (V, 3)
    ring_start : ndarray of int, shape (R + 1,)
    ring_plate : ndarray of int, shape (R,)
    ring_is_hole : ndarray of bool, shape (R,)
    ring_polygon : ndarray of int, shape (R,)
        Polygon part of each ring, numbered across the world.
    ring_reversed : ndarray of bool, shape (R,), optional
        Rings that ``winding = "auto"`` walks the other way from the file (None: unknown,
        or none reversed). Kept so that a failed tiling can say whether the rings as
        written would have tiled.
    spike_xyz : ndarray, shape (K, 3), optional
        Vertices of zero-width spikes removed from the outlines (see
        :func:`remove_spikes`), so that boundary lines along them can be trimmed.
    """

    xyz: np.ndarray
    ring_start: np.ndarray
    ring_plate: np.ndarray
    ring_is_hole: np.ndarray
    ring_polygon: np.ndarray
    n_plates: int
    ring_reversed: np.ndarray | None = None
    spike_xyz: np.ndarray | None = None

    def __repr__(self) -> str:
        return (f"PlateGeometry({self.n_plates} plates, {len(self.ring_start) - 1} rings, "
                f"{len(self.xyz)} vertices)")

    @cached_property
    def edges(self):
        """Start, end and plate of every edge: ``(a, b, plate)``."""
        nxt = polygons.ring_next(self.ring_start)
        return self.xyz, self.xyz[nxt], self.ring_plate[polygons.ring_index(self.ring_start)]

    @cached_property
    def moments(self):
        """Exact ``(area, first, second)`` moments per plate on the unit sphere."""
        return polygons.region_moments(self.xyz, self.ring_start, self.ring_plate,
                                     self.ring_is_hole, self.n_plates)

    @cached_property
    def locator(self):
        return cached_locator(self.xyz, self.ring_start, self.ring_plate, self.ring_is_hole,
                            self.n_plates)


@dataclass(frozen=True, eq=False)
class World:
    """The plate model of one planet.

    Use :func:`load_world` to read one from a world file, or :func:`world_from_rings` to
    build one in code.

    Attributes
    ----------
    plates : tuple of Plate
    geometry : PlateGeometry
        Every ring of every plate, plate on the left.
    boundaries : tuple of Boundary
    radius_m : float
    boundaries_derived : bool
        Whether the boundaries are the plates' shared edges (no boundaries file).
    paths : dict
        Resolved paths of the world file (``world``) and of its data files, by key.
    problems : tuple of Problem
        What reading found wrong or doubtful.
    name : str
    winding : {"auto", "strict"}
    tolerance_rad : float
        Vertices closer than this (radians) are one vertex (the world file's
        ``vertex_tolerance_m`` over the radius).
    """

    plates: tuple
    geometry: PlateGeometry
    boundaries: tuple
    radius_m: float = EARTH_RADIUS_KM * 1e3
    boundaries_derived: bool = False
    paths: dict = field(default_factory=dict)
    problems: tuple = ()
    name: str = "world"
    winding: str = "auto"
    tolerance_rad: float = SAME_VERTEX_RAD

    def __repr__(self) -> str:
        return (f"World({self.name!r}, {len(self.plates)} plates, {len(self.boundaries)} "
                f"boundary lines, radius {self.radius_m / 1e3:g} km)")

    # -- lookups --------------------------------------------------------------------------
    @cached_property
    def plate_index(self) -> dict:
        return {p.name: p.index for p in self.plates}

    @cached_property
    def boundary_set(self) -> BoundarySet:
        """The boundary lines as columns of arcs (:class:`BoundarySet`)."""
        return BoundarySet.from_boundaries(self.boundaries, self.plate_index)

    @property
    def plate_names(self) -> list:
        return [p.name for p in self.plates]

    def plate(self, name: str) -> Plate:
        """The plate of a name; InputError listing the plates if there is none.

        Parameters
        ----------
        name : str

        Returns
        -------
        Plate
        """
        try:
            return self.plates[self.plate_index[name]]
        except KeyError:
            raise InputError(f"no plate named {name!r}",
                             hint=f"plates are: {', '.join(self.plate_names)}") from None

    # -- exact geometry, in SI units ------------------------------------------------------
    @property
    def area_m2(self) -> np.ndarray:
        """Area of each plate in m^2, shape (P,)."""
        return self.geometry.moments[0] * self.radius_m ** 2

    @property
    def first_moment(self) -> np.ndarray:
        """``int r dA`` on the unit sphere per plate, shape (P, 3)."""
        return self.geometry.moments[1]

    @property
    def second_moment(self) -> np.ndarray:
        """``int r r^T dA`` on the unit sphere per plate, shape (P, 3, 3)."""
        return self.geometry.moments[2]

    @cached_property
    def drag_tensor(self) -> np.ndarray:
        """``int (I - r r^T) dA`` per plate on the unit sphere, shape (P, 3, 3)."""
        area, _, second = self.geometry.moments
        return polygons.drag_tensor(area, second)

    @property
    def drag_tensor_m2(self) -> np.ndarray:
        """``R^2 int (I - r r^T) dA`` per plate, m^2, shape (P, 3, 3).

        The basal drag torque of a plate turning at ``omega`` (rad/s) over a mantle at rest,
        with traction ``-C v``, is ``-C R^2 D omega`` with ``D`` this tensor.
        """
        return self.drag_tensor * self.radius_m ** 2

    def locate(self, lon_deg, lat_deg) -> np.ndarray:
        """Plate index holding each point (lon/lat in degrees).

        Parameters
        ----------
        lon_deg, lat_deg : array_like, shape (N,)

        Returns
        -------
        ndarray of int, shape (N,)
            Index into ``plates`` (-1 where no plate holds the point).
        """
        return self.geometry.locator.locate_lonlat(lon_deg, lat_deg)

    def plate_at(self, lon_deg, lat_deg) -> np.ndarray:
        """The name of the plate holding each point (lon/lat in degrees): :meth:`locate`
        as names.

        Parameters
        ----------
        lon_deg, lat_deg : array_like, shape (N,)

        Returns
        -------
        ndarray of str, shape (N,)
            ``""`` where no plate holds the point.

        Examples
        --------
        >>> import torque
        >>> world = torque.Inputs.load("polygons_demo/world.toml").world
        >>> names = world.plate_at([0.0, 120.0], [10.0, -40.0])
        >>> [str(n) in world.plate_names for n in names]
        [True, True]
        """
        idx = self.locate(np.atleast_1d(lon_deg), np.atleast_1d(lat_deg))
        names = np.array(list(self.plate_names) + [""], dtype=object)
        return names[np.where(idx >= 0, idx, len(self.plate_names))].astype(str)

    def locate_xyz(self, xyz) -> np.ndarray:
        """Plate index holding each unit vector ``(N, 3)``.

        Parameters
        ----------
        xyz : array_like, shape (N, 3)
            Unit vectors.

        Returns
        -------
        ndarray of int, shape (N,)
        """
        return self.geometry.locator.locate(xyz)

    # -- validity -------------------------------------------------------------------------
    @property
    def errors(self) -> list:
        return [p for p in self.problems if p.severity == "error"]
