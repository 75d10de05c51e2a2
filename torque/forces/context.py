"""The :class:`Context` the force modules share: one hypothesis on one world's data."""

from __future__ import annotations

from functools import cached_property

import numpy as np

from .. import sphere
from ..data import WorldData
from ..errors import InputError
from ..lithosphere import Cooling
from .base import Pieces

__all__ = ["Context"]


class Context:
    """What the force modules share: the world's data, the physics and the motions.

    A context reads no file and leaves nothing behind: everything derived from the world
    alone (node labels, continental moments, checked grids, synthesised ages) comes from
    its :class:`~torque.data.WorldData`, shared by every hypothesis on the same world, and
    what a user should know about how a term was made is returned in the term's ``notes``.

    Parameters
    ----------
    data : WorldData or World
        The world and its data; a bare :class:`~torque.world.World` is wrapped together
        with ``ages``, ``continents`` and ``flow``.
    hypothesis : Hypothesis
    omega : ndarray, shape (P, 3), optional
        Angular velocities (rad/s) in world plate order: needed to synthesise ages when the
        world has none.
    ages, continents, flow, coupling, topography : optional
        Data objects in memory, used only when ``data`` is a bare world.
    """

    #: spacing of the pieces along boundaries where a force varies along them (km)
    PIECE_KM = 50.0
    #: resolution of synthesised age grids (degrees)
    SYNTH_STEP_DEG = 0.5
    #: distance into the subducting plate at which the trench age is read (km)
    TRENCH_PROBE_KM = 30.0

    def __init__(self, data, hypothesis, omega=None, *, ages=None, continents=None,
                 flow=None, coupling=None, topography=None):
        if not isinstance(data, WorldData):
            data = WorldData(data, ages=ages, continents=continents, flow=flow,
                             coupling=coupling, topography=topography)
        self.data = data
        self.world = data.world
        self.hypothesis = hypothesis
        self.physics = hypothesis.physics
        self.cooling = Cooling(hypothesis.physics)
        self.omega = omega
        self.R = self.world.radius_m

    def __repr__(self) -> str:
        return f"Context({self.world.name!r}, hypothesis {self.hypothesis.name!r})"

    # -- data -----------------------------------------------------------------------------
    @property
    def continents(self):
        """The world's continents, or None."""
        return self.data.continents

    @property
    def flow(self):
        """The mantle flow grid; InputError if the world has none."""
        grid = self.data.flow
        if grid is None:
            raise InputError("a 'mantle' force needs a mantle flow grid: add 'mantle_flow' to "
                             "the world file", file=self.world.paths.get("world"))
        return grid

    def drag_tensor(self, region: str) -> np.ndarray:
        """``int (I - r r^T) dA`` over the region of each plate (unit sphere), (P, 3, 3).

        Parameters
        ----------
        region : {"all", "ocean", "continent"}

        Returns
        -------
        ndarray, shape (P, 3, 3)
        """
        return self.data.drag_tensor(region)

    @property
    def clip_warnings(self) -> tuple:
        """Where clipping continents to plates is inexact (for a term's notes)."""
        return self.data.continental_part.warnings if self.continents is not None else ()

    @cached_property
    def ages(self):
        """``(AgeGrid, notes)``: the world's grid, else one synthesised from ridges and
        spreading rates (with notes saying how)."""
        grid, notes = self.data.checked_ages
        if grid is not None:
            return grid, notes
        from .ages_synth import synthesise_ages
        key = ("ages", None if self.omega is None else np.asarray(self.omega).tobytes(),
               self.SYNTH_STEP_DEG)
        return self.data.synthesised(key, lambda: synthesise_ages(self))

    def age_grid_if_any(self):
        """The age field if there is one (a grid, or ages that can be synthesised)."""
        if (self.data.ages is not None
                or (self.omega is not None and self.lines("ridge"))):
            return self.ages[0]
        return None

    # -- grids ----------------------------------------------------------------------------
    def node_xyz(self, grid):
        """Unit vectors of the nodes of a regular grid, shape (nlat, nlon, 3).

        Parameters
        ----------
        grid : RegularGrid

        Returns
        -------
        ndarray, shape (nlat, nlon, 3)
        """
        LON, LAT = np.meshgrid(grid.lon, grid.lat)
        return sphere.lonlat_to_xyz(LON, LAT)

    def node_plates(self, grid) -> np.ndarray:
        """Plate index of every grid node, shape (nlat, nlon).

        Parameters
        ----------
        grid : RegularGrid

        Returns
        -------
        ndarray of int, shape (nlat, nlon)
        """
        return self.data.node_plates(grid)

    def node_continental(self, grid) -> np.ndarray:
        """Whether each grid node lies on a continent (all False without continents).

        Parameters
        ----------
        grid : RegularGrid

        Returns
        -------
        ndarray of bool, shape (nlat, nlon)
        """
        return self.data.node_continental(grid)

    # -- boundaries -----------------------------------------------------------------------
    def lines(self, kind: str) -> list:
        """Indices of the world's boundary lines of a kind.

        Parameters
        ----------
        kind : str

        Returns
        -------
        list of int
        """
        return [k for k, b in enumerate(self.world.boundaries) if b.kind == kind]

    def pieces(self, kind: str, spacing_km: float | None = None) -> Pieces:
        """Pieces of the boundaries of a kind, no longer than ``spacing_km``.

        Parameters
        ----------
        kind : str
        spacing_km : float, optional
            Default :attr:`PIECE_KM`.

        Returns
        -------
        Pieces
        """
        step = (spacing_km or self.PIECE_KM) * 1e3 / self.R

        def make():
            arcs = self.world.boundary_set.of_kind(kind)
            pa, pb, piece = sphere.densify_arcs(arcs.a, arcs.b, step)
            n, theta = sphere.arc_pole(pa, pb)
            return Pieces(pa, pb, arcs.line[piece], n, sphere.arc_first_moment(pa, pb),
                          theta, sphere.slerp_points(pa, pb, 0.5))
        # the world's geometry alone: shared by every hypothesis and physics draw
        return self.data.derived(("pieces", kind, step), make)

    def margin_pieces(self, spacing_km: float | None = None):
        """Pieces of the continental margins (continent edges inside plates), no longer
        than ``spacing_km``.

        Parameters
        ----------
        spacing_km : float, optional
            Default :attr:`PIECE_KM`.

        Returns
        -------
        pieces : Pieces
            ``n`` points into the continent; ``line`` indexes the margin arcs.
        plate : ndarray of int, shape (N,)
            The plate that holds each piece.
        """
        clip = self.data.margins
        step = (spacing_km or self.PIECE_KM) * 1e3 / self.R
        pa, pb, piece = sphere.densify_arcs(clip.margin_a, clip.margin_b, step)
        n, theta = sphere.arc_pole(pa, pb)
        keep = theta > 1e-14                  # splits at a vertex leave empty pieces
        pa, pb, piece, n, theta = pa[keep], pb[keep], piece[keep], n[keep], theta[keep]
        return (Pieces(pa, pb, piece, n, sphere.arc_first_moment(pa, pb), theta,
                       sphere.slerp_points(pa, pb, 0.5)), clip.margin_plate[piece])

    def require_lines(self, kind: str, term: str):
        """InputError unless the world has boundaries of ``kind`` (for term ``term``).

        Parameters
        ----------
        kind : str
            A boundary kind.
        term : str
            The term's label, for the message.
        """
        if not self.lines(kind):
            raise InputError(f"the {term!r} term needs {kind} boundaries, and the world has "
                             "none", file=self.world.paths.get("world"),
                             hint="classify boundaries (torque boundaries --classify) or drop "
                             "the term")

    def plate_ids(self, names) -> np.ndarray:
        """Plate indices of plate names.

        Parameters
        ----------
        names : sequence of str

        Returns
        -------
        ndarray of int
        """
        idx = self.world.plate_index
        return np.array([idx[n] for n in names], dtype=np.int64)

    def line_force_torque(self, pieces: Pieces, force_n_m, sign, plate) -> np.ndarray:
        """Torques (P, 3) of line forces ``force_n_m * sign * n`` on the given plates.

        The torque of a force per unit length ``f`` (constant along a piece) is
        ``R^2 int r x f ds = R^2 m x f`` on the unit sphere.

        Parameters
        ----------
        pieces : Pieces
        force_n_m : ndarray, shape (N,)
            Force per metre of each piece, N/m.
        sign : float or ndarray, shape (N,)
            +1 along the piece's pole (into its left plate), -1 against.
        plate : ndarray of int, shape (N,)
            The plate each force acts on.

        Returns
        -------
        ndarray, shape (P, 3)
            N m.
        """
        P = self.world.geometry.n_plates
        f = (force_n_m * sign)[:, None] * pieces.n
        tq = self.R ** 2 * np.cross(pieces.m, f)
        out = np.zeros((P, 3))
        np.add.at(out, plate, tq)
        return out
