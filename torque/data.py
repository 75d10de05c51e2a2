"""A world with its data, and what every force term derives from them once.

:class:`WorldData` holds a :class:`~torque.world.World` and its optional continents, sea-floor
age grid and mantle flow grid, and computes, once, what every force term of every
hypothesis shares: the plate and the continental flag of each grid node, the exact moments
of the continental part of each plate, the drag tensor of a region, the age grid checked
against the plates, and sea-floor ages synthesised from ridges. ``torque rank`` fits many
hypotheses to one world, and each one's :class:`~torque.forces.context.Context` draws on
the same ``WorldData``, so nothing is located, clipped or synthesised twice.

It reads no file: :class:`torque.io.Inputs` is a ``WorldData`` that reads the world's data
files on first use.
"""

from __future__ import annotations

import contextlib

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from . import progress

from . import polygons
from .continents import MaskContinents, clip_edges, moments_of_clip
from .errors import InputError

__all__ = ["LARGE_GRID", "ContinentalPart", "WorldData"]

#: Grids of at least this many nodes show progress while they are located.
LARGE_GRID = 1_000_000


@dataclass(frozen=True, eq=False)
class ContinentalPart:
    """Exact moments of the continental part of each plate, on the unit sphere.

    Attributes
    ----------
    area : ndarray, shape (P,)
    first : ndarray, shape (P, 3)
        ``int r dA``.
    second : ndarray, shape (P, 3, 3)
        ``int r r^T dA``.
    warnings : tuple of str
        Where the clipping is inexact (a continent edge along a plate edge).
    """

    area: np.ndarray
    first: np.ndarray
    second: np.ndarray
    warnings: tuple = ()

    def __repr__(self) -> str:
        return f"ContinentalPart({len(self.area)} plates, {len(self.warnings)} warnings)"


class WorldData:
    """A world, its optional data, and the data derived from them once.

    Parameters
    ----------
    world : World
    continents : Continents, optional
    ages : AgeGrid, optional
        Sea-floor ages; checked against the plates on first use.
    flow : FlowGrid, optional
        Mantle flow; checked to cover the sphere on first use.
    coupling : CouplingGrid, optional
        Basal drag coupling (Pa s/m); checked to cover the sphere on first use.
    topography : TopographyGrid, optional
        Elevation and crustal thickness; checked to cover the sphere on first use.

    Examples
    --------
    >>> from torque.io import world_from_rings
    >>> w = world_from_rings({"Upper": [[(0, 0), (120, 0), (240, 0)]],
    ...                       "Lower": [[(0, 0), (240, 0), (120, 0)]]}, winding="strict")
    >>> data = WorldData(w)
    >>> D = data.drag_tensor("all")        # (2, 3, 3), unit sphere
    >>> # a hemisphere: int r r^T dA = (2 pi / 3) I, so D = (2 pi - 2 pi / 3) I = (4 pi / 3) I
    >>> [round(float(x), 6) for x in D[0].diagonal() / np.pi]
    [1.333333, 1.333333, 1.333333]
    """

    #: data key -> world file key
    FILE_KEYS = {"continents": "continents", "ages": "ages", "flow": "mantle_flow",
                 "coupling": "drag_coupling", "topography": "topography"}

    def __init__(self, world, *, continents=None, ages=None, flow=None, coupling=None,
                 topography=None):
        self.world = world
        self._given = {"continents": continents, "ages": ages, "flow": flow,
                       "coupling": coupling, "topography": topography}
        self._node_cache: dict = {}
        self._loaded: dict = {}
        self._synth_cache: dict = {}

    def __repr__(self) -> str:
        have = [k for k, f in self.FILE_KEYS.items()
                if self._given[k] is not None or f in self.world.paths]
        return f"{type(self).__name__}({self.world!r}, data: {', '.join(have) or 'none'})"

    def _read(self, key: str):
        """The world's data file of ``key`` read, or None (this class reads no file)."""
        return None

    def _data(self, key: str):
        """The data of ``key``: given, else read (once)."""
        if key not in self._loaded:
            given = self._given[key]
            self._loaded[key] = given if given is not None else self._read(key)
        return self._loaded[key]

    # -- the data -------------------------------------------------------------------------
    @cached_property
    def continents(self):
        """Continental regions (:class:`~torque.continents.Continents`), or None."""
        return self._data("continents")

    @property
    def ages(self):
        """The sea-floor age grid (:class:`~torque.grids.AgeGrid`) checked against the
        plates, or None.

        Raises
        ------
        InputError
            If the grid does not cover the sphere.
        """
        return self.checked_ages[0]

    @cached_property
    def checked_ages(self):
        """``(AgeGrid or None, notes)``: the age grid checked once, with notes on what a
        user should know (nodes without an age outside the continents get no force)."""
        grid = self._data("ages")
        return (grid, self._check_ages(grid)) if grid is not None else (None, ())

    @cached_property
    def flow(self):
        """The mantle flow grid (:class:`~torque.grids.FlowGrid`), checked to cover the
        sphere, or None."""
        grid = self._data("flow")
        if grid is not None and not grid.covers_sphere():
            # outside the grid the mantle would silently be taken at rest
            raise InputError("the mantle flow grid does not cover the plates (it must span "
                             "all longitudes and reach within a grid step of both poles; it "
                             f"spans lon {grid.lon[0]:g} to {grid.lon[-1]:g}, lat "
                             f"{grid.lat[0]:g} to {grid.lat[-1]:g})", file=grid.source)
        return grid

    @cached_property
    def coupling(self):
        """The basal drag coupling grid (:class:`~torque.grids.CouplingGrid`), checked to
        cover the sphere, or None."""
        return self._covering(self._data("coupling"), "drag coupling grid")

    @cached_property
    def topography(self):
        """The topography grid (:class:`~torque.grids.TopographyGrid`), checked to cover
        the sphere, or None."""
        return self._covering(self._data("topography"), "topography grid")

    @staticmethod
    def _covering(grid, what):
        if grid is not None and not grid.covers_sphere():
            raise InputError(f"the {what} does not cover the plates (it must span all "
                             "longitudes and reach within a grid step of both poles; it "
                             f"spans lon {grid.lon[0]:g} to {grid.lon[-1]:g}, lat "
                             f"{grid.lat[0]:g} to {grid.lat[-1]:g})", file=grid.source)
        return grid

    def _check_ages(self, grid) -> tuple:
        if not grid.covers_sphere():
            raise InputError("the age grid does not cover the plates (it must span all "
                             f"longitudes and reach within a grid step of both poles; it spans "
                             f"lon {grid.lon[0]:g} to {grid.lon[-1]:g}, lat {grid.lat[0]:g} to "
                             f"{grid.lat[-1]:g})", file=grid.source)
        if self.continents is None:
            return ()
        nan = ~np.isfinite(grid.age_myr)
        if not nan.any():
            return ()
        nan = nan & ~self.node_continental(grid)
        if not nan.any():
            return ()
        # no-data nodes in the ocean (a gap in the grid, or land the continents file does
        # not hold): they get no force, and the user is told how many and where
        plate = self.node_plates(grid)
        j, i = np.argwhere(nan)[0]
        name = self.world.plates[int(plate[j, i])].name
        share = float((grid.cell_areas() * nan).sum() / (4 * np.pi))
        return (f"{int(nan.sum())} age node(s) outside the continents have no age "
                f"({100 * share:.2g} % of the sphere), the first in plate {name!r} at lon "
                f"{grid.lon[i]:g}, lat {grid.lat[j]:g}: no ridge push acts there "
                f"({grid.source})",)

    # -- derived once ---------------------------------------------------------------------
    def node_plates(self, grid) -> np.ndarray:
        """Plate index of every node of a regular grid, shape (nlat, nlon), located once
        per grid.

        Parameters
        ----------
        grid : RegularGrid

        Returns
        -------
        ndarray of int, shape (nlat, nlon)
        """
        key = ("plates", id(grid))
        if key not in self._node_cache:
            size = len(grid.lon) * len(grid.lat)
            with (progress.task(f"locating {size:,} grid nodes") if size >= LARGE_GRID
                  else contextlib.nullcontext()):
                self._node_cache[key] = (grid, self.world.geometry.locator.locate_grid(
                    grid.lon, grid.lat))
        return self._node_cache[key][1]

    def node_continental(self, grid) -> np.ndarray:
        """Whether each node of a regular grid lies on a continent, shape (nlat, nlon)
        (all False without continents).

        Parameters
        ----------
        grid : RegularGrid

        Returns
        -------
        ndarray of bool, shape (nlat, nlon)
        """
        if self.continents is None:
            return np.zeros((len(grid.lat), len(grid.lon)), bool)
        key = ("continental", id(grid))
        if key not in self._node_cache:
            c = self.continents
            self._node_cache[key] = (grid, c.on_grid(grid.lon, grid.lat)
                                     if isinstance(c, MaskContinents)
                                     else c.locator.locate_grid(grid.lon, grid.lat, region=0))
        return self._node_cache[key][1]

    @cached_property
    def continental_part(self) -> ContinentalPart:
        """Exact moments of the continental part of each plate (zeros without continents)."""
        P = self.world.geometry.n_plates
        if self.continents is None:
            return ContinentalPart(np.zeros(P), np.zeros((P, 3)), np.zeros((P, 3, 3)))
        if isinstance(self.continents, MaskContinents):
            c = self.continents
            area, first, second = c.moments(self.node_plates(c.grid), P)
            return ContinentalPart(area, first, second, (
                f"continents are the no-data nodes of the age grid ({c.source}): the "
                "continental and oceanic parts of plates are sums over its cells",))
        area, first, second, warnings = moments_of_clip(self.world, self.continents,
                                                        self.margins)
        return ContinentalPart(area, first, second, tuple(warnings))

    @cached_property
    def margins(self):
        """The continental margins: continent edges inside plates
        (:class:`~torque.continents.ClippedEdges`), from continent polygons.

        Raises
        ------
        InputError
            Without continents, or with continents taken from an age grid's no-data nodes
            (their edges are grid cell edges, not margins).
        """
        c = self.continents
        if c is None or isinstance(c, MaskContinents):
            raise InputError("continental margins need continent polygons: add a "
                             "'continents' GeoJSON file to the world"
                             + (' (continents = "from-ages" has no margin lines)'
                                if c is not None else ""),
                             file=self.world.paths.get("world"))
        return clip_edges(self.world, c)

    def drag_tensor(self, region: str) -> np.ndarray:
        """``int (I - r r^T) dA`` over a region of each plate, unit sphere, shape (P, 3, 3).

        Parameters
        ----------
        region : {"all", "ocean", "continent"}

        Raises
        ------
        InputError
            For "ocean" or "continent" when the world has no continents.
        """
        area, _, second = self.world.geometry.moments
        D = polygons.drag_tensor(area, second)
        if region == "all":
            return D
        if self.continents is None:
            raise InputError(f"region {region!r} needs continents: add a 'continents' file to "
                             "the world", file=self.world.paths.get("world"))
        part = self.continental_part
        Dc = polygons.drag_tensor(part.area, part.second)
        return Dc if region == "continent" else D - Dc

    def synthesised(self, key, make):
        """``make()`` the first time for ``key``, then the same result (synthesised ages
        depend only on the world, the motions and the grid step, not on the hypothesis).

        Parameters
        ----------
        key : hashable
        make : callable
            ``make()`` gives the result.

        Returns
        -------
        object
        """
        if key not in self._synth_cache:
            self._synth_cache[key] = make()
        return self._synth_cache[key]

    def derived(self, key, make):
        """``make()`` the first time for ``key``, then the same result: for what a term
        derives from the world's data alone, whatever the physics (the ridge push's
        boundary map, say), so that every hypothesis and every physics draw shares it.

        Parameters
        ----------
        key : hashable
        make : callable

        Returns
        -------
        object
        """
        key = ("derived",) + tuple(key)
        if key not in self._node_cache:
            self._node_cache[key] = make()
        return self._node_cache[key]

    @property
    def used_synthesised_ages(self) -> bool:
        """Whether a force term used sea-floor ages synthesised from the motions (no age
        grid): fitting those motions is then partly circular."""
        return any(k[0] == "ages" for k in self._synth_cache)
