"""The :class:`Context` the force modules share: world, physics, motions, derived data."""

from __future__ import annotations

from functools import cached_property

import numpy as np

from .. import sphere
from ..errors import InputError
from ..lithosphere import Cooling
from .base import Pieces


class Context:
    """What the force modules share: the world, physics, motions and derived data."""

    #: spacing of the pieces along boundaries where a force varies along them (km)
    PIECE_KM = 50.0
    #: resolution of synthesised age grids (degrees)
    SYNTH_STEP_DEG = 0.5
    #: distance into the subducting plate at which the trench age is read (km)
    TRENCH_PROBE_KM = 30.0

    def __init__(self, world, hypothesis, omega=None, ages=None, continents=None,
                 flow=None):
        self.world = world
        self.hypothesis = hypothesis
        self.physics = hypothesis.physics
        self.cooling = Cooling(hypothesis.physics)
        self.omega = omega
        self._ages = ages
        self._continents = continents
        self._flow = flow
        self.R = world.radius_m

    # -- data files -----------------------------------------------------------------------
    @cached_property
    def continents(self):
        if self._continents is not None:
            return self._continents
        if "continents" not in self.world.paths:
            return None
        from ..continents import read_continents
        return read_continents(self.world.paths["continents"], self.world.winding)

    clip_warnings: tuple = ()

    @cached_property
    def continent_moments(self):
        """Exact (area, first, second) of the continental part of each plate (zeros if none)."""
        P = self.world.geometry.n_plates
        if self.continents is None:
            return np.zeros(P), np.zeros((P, 3)), np.zeros((P, 3, 3))
        from ..continents import clip_moments
        area, first, second, warnings = clip_moments(self.world, self.continents)
        self.clip_warnings = tuple(warnings)
        return area, first, second

    def drag_tensor(self, region: str) -> np.ndarray:
        """``int (I - r r^T) dA`` over the region of each plate (unit sphere), (P, 3, 3)."""
        area, _, second = self.world.geometry.moments
        D = area[:, None, None] * np.eye(3) - second
        if region == "all":
            return D
        if self.continents is None:
            raise InputError(f"region {region!r} needs continents: add a 'continents' file to "
                             "the world", file=self.world.paths.get("world"))
        ca, _, cs = self.continent_moments
        Dc = ca[:, None, None] * np.eye(3) - cs
        return Dc if region == "continent" else D - Dc

    @cached_property
    def ages(self):
        """``(AgeGrid, synthesised)``: the world's grid, else one made from ridges and rates."""
        self.age_notes = ()
        if self._ages is not None:
            return self._ages, False
        if "ages" in self.world.paths:
            from ..grids import read_ages
            grid = read_ages(self.world.paths["ages"])
            self._check_ages(grid)
            return grid, False
        from .ages_synth import synthesise_ages
        grid, self.age_notes = synthesise_ages(self)
        return grid, True

    def _check_ages(self, grid):
        if not grid.covers_sphere():
            raise InputError("the age grid does not cover the plates (it must span all "
                             f"longitudes and reach within a grid step of both poles; it spans "
                             f"lon {grid.lon[0]:g} to {grid.lon[-1]:g}, lat {grid.lat[0]:g} to "
                             f"{grid.lat[-1]:g})", file=grid.source)
        if self.continents is None:
            return
        plate = self.node_plates(grid)
        cont = self.node_continental(grid)
        nan = ~np.isfinite(grid.age_myr) & ~cont
        if nan.any():
            j, i = np.argwhere(nan)[0]
            name = self.world.plates[int(plate[j, i])].name
            raise InputError(f"{int(nan.sum())} age node(s) are NaN outside the continents, "
                             f"the first in plate {name!r} at lon {grid.lon[i]:g}, lat "
                             f"{grid.lat[j]:g}", file=grid.source,
                             hint="give every oceanic node an age, or extend the continents")

    @cached_property
    def flow(self):
        if self._flow is not None:
            return self._flow
        if "mantle_flow" not in self.world.paths:
            raise InputError("a 'mantle' force needs a mantle flow grid: add 'mantle_flow' to "
                             "the world file", file=self.world.paths.get("world"))
        from ..grids import read_flow
        grid = read_flow(self.world.paths["mantle_flow"])
        if not grid.covers_sphere():
            # outside the grid the mantle would silently be taken at rest
            raise InputError("the mantle flow grid does not cover the plates (it must span "
                             "all longitudes and reach within a grid step of both poles; it "
                             f"spans lon {grid.lon[0]:g} to {grid.lon[-1]:g}, lat "
                             f"{grid.lat[0]:g} to {grid.lat[-1]:g})", file=grid.source)
        return grid

    def age_grid_if_any(self):
        """The age field if there is one (a grid, or ages that can be synthesised)."""
        if (self._ages is not None or "ages" in self.world.paths
                or (self.omega is not None and self.lines("ridge"))):
            return self.ages[0]
        return None

    # -- grids ----------------------------------------------------------------------------
    def node_xyz(self, grid):
        LON, LAT = np.meshgrid(grid.lon, grid.lat)
        return sphere.lonlat_to_xyz(LON, LAT)

    def node_plates(self, grid) -> np.ndarray:
        """Plate index of every grid node, shape (nlat, nlon) (cached per grid)."""
        cache = self.__dict__.setdefault("_node_plates", {})
        if id(grid) not in cache:
            cache[id(grid)] = self.world.geometry.locator.locate_grid(grid.lon, grid.lat)
        return cache[id(grid)]

    def node_continental(self, grid) -> np.ndarray:
        """Whether each grid node lies on a continent (all False without continents)."""
        if self.continents is None:
            return np.zeros((len(grid.lat), len(grid.lon)), bool)
        cache = self.__dict__.setdefault("_node_cont", {})
        if id(grid) not in cache:
            cache[id(grid)] = self.continents.locator.locate_grid(grid.lon, grid.lat) == 0
        return cache[id(grid)]

    # -- boundaries -----------------------------------------------------------------------
    def lines(self, kind: str) -> list:
        return [k for k, b in enumerate(self.world.boundaries) if b.kind == kind]

    def pieces(self, kind: str, spacing_km: float | None = None) -> Pieces:
        """Pieces of the boundaries of a kind, no longer than ``spacing_km``."""
        lines = self.lines(kind)
        bnd = self.world.boundaries
        a = np.concatenate([bnd[k].xyz[:-1] for k in lines])
        b = np.concatenate([bnd[k].xyz[1:] for k in lines])
        owner = np.concatenate([np.full(len(bnd[k].xyz) - 1, k) for k in lines])
        step = (spacing_km or self.PIECE_KM) * 1e3 / self.R
        pa, pb, piece = sphere.densify_arcs(a, b, step)
        n, theta = sphere.arc_pole(pa, pb)
        return Pieces(pa, pb, owner[piece], n, sphere.arc_first_moment(pa, pb), theta,
                      sphere.slerp_points(pa, pb, 0.5))

    def require_lines(self, kind: str, term: str):
        if not self.lines(kind):
            raise InputError(f"the {term!r} term needs {kind} boundaries, and the world has "
                             "none", file=self.world.paths.get("world"),
                             hint="classify boundaries (torque boundaries --classify) or drop "
                             "the term")

    def plate_ids(self, names) -> np.ndarray:
        idx = self.world.plate_index
        return np.array([idx[n] for n in names], dtype=np.int64)

    def line_force_torque(self, pieces: Pieces, force_n_m, sign, plate) -> np.ndarray:
        """Torques (P, 3) of line forces ``force_n_m * sign * n`` on the given plates.

        The torque of a force per unit length ``f`` (constant along a piece) is
        ``R^2 int r x f ds = R^2 m x f`` on the unit sphere.
        """
        P = self.world.geometry.n_plates
        f = (force_n_m * sign)[:, None] * pieces.n
        tq = self.R ** 2 * np.cross(pieces.m, f)
        out = np.zeros((P, 3))
        np.add.at(out, plate, tq)
        return out
