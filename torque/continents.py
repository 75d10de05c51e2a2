"""Continental regions and their exact intersection with plates.

The moments of ``continent ∩ plate`` are boundary integrals over the boundary of the
intersection, which is made of (i) the pieces of continent edges that lie inside the plate
and (ii) the pieces of the plate's edges that lie inside a continent. Edges are split at
their exact crossing points (great-circle intersections), each piece is assigned by a point
location of its midpoint, and the first and second moments are summed from the same
closed-form arc terms as in :mod:`torque.sphere`. The area, which has no reference-free
arc formula, comes from the signed solid angles of the pieces seen from one reference
point, which sum to the enclosed area modulo 4 pi.

Exactness: to rounding, as long as no continent edge runs *along* a plate edge. Where one
does (collinear overlap), which side the shared stretch is counted on depends on rounding;
such stretches are reported so that the user can move the continent edge off the plate
boundary.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from . import sphere

from . import polygons
from .locate import PlateLocator, cached

__all__ = ["Continents", "clip_moments", "moments_of_clip", "ClippedEdges",
           "clip_edges", "MIN_CONTINENT_NODES", "MaskContinents"]


@dataclass(frozen=True, eq=False)
class Continents:
    """Continental regions: rings with the continent on the left (see :mod:`torque.sphere`).

    Attributes
    ----------
    xyz : ndarray, shape (V, 3)
    ring_start : ndarray of int, shape (R + 1,)
    ring_is_hole : ndarray of bool, shape (R,)
    ring_polygon : ndarray of int, shape (R,)
    source : str
    """

    xyz: np.ndarray
    ring_start: np.ndarray
    ring_is_hole: np.ndarray
    ring_polygon: np.ndarray
    source: str = "<memory>"

    @cached_property
    def locator(self) -> PlateLocator:
        """Tells continent (0) from ocean (1); the ocean's rings are the continents' reversed."""
        rs = self.ring_start
        rings = [self.xyz[rs[i]:rs[i + 1]] for i in range(len(rs) - 1)]
        xyz = np.concatenate(rings + [r[::-1] for r in rings])
        start = np.r_[0, np.cumsum([len(r) for r in rings + rings])]
        n = len(rings)
        # A point is in the ocean iff it is left of all reversed exterior rings and of
        # all reversed holes but one... in counts: the locator counts "rings left of minus
        # rings flagged as holes", which for the ocean must be 1 - (continent count); that
        # holds when (number of exterior rings - 1) reversed rings are flagged.
        n_outer = int((~self.ring_is_hole).sum())
        ocean_hole = np.arange(n) < n_outer - 1
        plate = np.r_[np.zeros(n, int), np.ones(n, int)]
        is_hole = np.r_[self.ring_is_hole, ocean_hole]
        return cached(xyz, start, plate, is_hole, 2)

    def contains(self, xyz) -> np.ndarray:
        """Whether each unit vector ``(N, 3)`` lies on a continent.

        Parameters
        ----------
        xyz : array_like, shape (N, 3)

        Returns
        -------
        ndarray of bool, shape (N,)
        """
        return self.locator.locate(xyz) == 0


def clip_moments(world, continents: Continents):
    """Exact area, first and second moments of the continental part of every plate.

    Parameters
    ----------
    world : World
    continents : Continents

    Returns
    -------
    area : ndarray, shape (P,)
    first : ndarray, shape (P, 3)
    second : ndarray, shape (P, 3, 3)
        On the unit sphere, as :func:`torque.polygons.region_moments`.
    warnings : list of str
        Stretches where a continent edge runs along a plate edge.
    """
    return moments_of_clip(world, continents, clip_edges(world, continents))


def moments_of_clip(world, continents, clip):
    """:func:`clip_moments` from edges already clipped (:func:`clip_edges`).

    Parameters
    ----------
    world : World
    continents : Continents
    clip : ClippedEdges

    Returns
    -------
    area, first, second, warnings
        As :func:`clip_moments`.
    """
    mid_p = sphere.normalize(clip.plate_a + clip.plate_b)
    inside = continents.contains(mid_p)
    arcs_a = np.concatenate([clip.margin_a, clip.plate_a[inside]])
    arcs_b = np.concatenate([clip.margin_b, clip.plate_b[inside]])
    owner = np.concatenate([clip.margin_plate, clip.plate_owner[inside]])
    return (*_open_arc_moments(arcs_a, arcs_b, owner, world.geometry.n_plates),
            list(clip.warnings))


@dataclass(frozen=True, eq=False)
class ClippedEdges:
    """Continent and plate edges split where they cross.

    Attributes
    ----------
    margin_a, margin_b : ndarray, shape (M, 3)
        Pieces of continent edges, each inside one plate, continent on the left: the
        continental margins (the edge between continent and ocean within a plate).
    margin_plate : ndarray of int, shape (M,)
        The plate that holds each margin piece.
    plate_a, plate_b : ndarray, shape (E, 3)
        Pieces of plate edges.
    plate_owner : ndarray of int, shape (E,)
        The plate each piece bounds.
    warnings : tuple of str
    """

    margin_a: np.ndarray
    margin_b: np.ndarray
    margin_plate: np.ndarray
    plate_a: np.ndarray
    plate_b: np.ndarray
    plate_owner: np.ndarray
    warnings: tuple = ()


def clip_edges(world, continents: Continents) -> ClippedEdges:
    """Split continent and plate edges at their exact crossings (great-circle intersections)
    and assign each continent piece to the plate that holds it.

    Parameters
    ----------
    world : World
    continents : Continents

    Returns
    -------
    ClippedEdges
    """
    g = world.geometry
    pa, pb, pplate = g.edges
    nxt = polygons.ring_next(continents.ring_start)
    ca, cb = continents.xyz, continents.xyz[nxt]
    keep_c = np.any(ca != cb, axis=1)
    ca, cb = ca[keep_c], cb[keep_c]

    # candidate crossings from the plate locator's cells, then exact tests
    ic, ip = g.locator.edges_near(ca, cb)
    hit = sphere.arcs_cross(ca[ic], cb[ic], pa[ip], pb[ip])
    n1 = np.cross(ca[ic], cb[ic])
    n2 = np.cross(pa[ip], pb[ip])
    tiny = 1e-12
    collinear = ((np.abs(sphere.dot(sphere.normalize(n1), pa[ip])) < tiny)
                 & (np.abs(sphere.dot(sphere.normalize(n1), pb[ip])) < tiny))
    warnings = []
    if collinear.any():
        lon, lat = sphere.xyz_to_lonlat(ca[ic[collinear][0]])
        warnings.append(f"{int(collinear.sum())} continent edge(s) run along plate edges "
                        f"(first near lon {float(lon):.3f}, lat {float(lat):.3f}); the "
                        "clipping there depends on rounding")
    # where a vertex of one set touches the interior of an edge of the other, that edge
    # must be split there too (the strict crossing test does not see a touch)
    c_on_p = _touches(ca[ic], pa[ip], pb[ip], n2)
    p_on_c = _touches(pa[ip], ca[ic], cb[ic], n1)
    x = sphere.normalize(np.cross(n1[hit], n2[hit]))
    x *= np.sign(sphere.dot(x, ca[ic[hit]] + cb[ic[hit]]))[:, None]
    c_split = np.concatenate([ic[hit], ic[p_on_c]])
    c_pts = np.concatenate([x, pa[ip[p_on_c]]])
    p_split = np.concatenate([ip[hit], ip[c_on_p]])
    p_pts = np.concatenate([x, ca[ic[c_on_p]]])

    c0, c1, c_own = _split_arcs(ca, cb, c_split, c_pts)
    p0, p1, p_own = _split_arcs(pa, pb, p_split, p_pts)

    # continent pieces go to the plate that holds them
    plate_of_c = world.locate_xyz(sphere.normalize(c0 + c1))
    return ClippedEdges(c0, c1, plate_of_c, p0, p1, pplate[p_own], tuple(warnings))


def _touches(v, a, b, n, tol=1e-12):
    """Whether points ``v`` lie on the interior of arcs ``a -> b`` (unnormalised poles n)."""
    nu = sphere.normalize(n)
    on_circle = np.abs(sphere.dot(nu, v)) < tol
    inside = (sphere.angle_between(a, v) > tol) & (sphere.angle_between(v, b) > tol) & (
        sphere.dot(np.cross(a, v), nu) > 0) & (sphere.dot(np.cross(v, b), nu) > 0)
    return on_circle & inside


def _split_arcs(a, b, owner, x):
    """Split arcs ``a -> b`` at points ``x`` lying on arc ``owner``; returns pieces and owner."""
    n = len(a)
    t = sphere.angle_between(a[owner], x) if len(owner) else np.zeros(0)
    order = np.lexsort((t, owner))
    ow, xs = owner[order], x[order]
    counts = np.bincount(ow, minlength=n)
    size = counts + 1                              # pieces per arc
    piece_owner = np.repeat(np.arange(n), size)
    start_of = np.cumsum(size) - size              # first piece of each arc
    # points in order along each arc: a, splits..., b
    pts = np.empty((len(piece_owner) + n, 3))
    pt_start = start_of + np.arange(n)             # each arc has size + 1 points
    pts[pt_start] = a
    pts[pt_start + size] = b
    rank = np.arange(len(ow)) - (np.cumsum(counts) - counts)[ow]
    pts[pt_start[ow] + 1 + rank] = xs
    k = np.arange(len(piece_owner))
    idx = k + piece_owner                          # skip one point per earlier arc
    return pts[idx], pts[idx + 1], piece_owner


def _open_arc_moments(a, b, owner, n_owner):
    """Moments of regions given their boundary as unordered arcs (closed loops in total)."""
    n, theta = sphere.arc_pole(a, b)
    m = sphere.arc_first_moment(a, b)
    first = np.zeros((n_owner, 3))
    np.add.at(first, owner, 0.5 * theta[:, None] * n)
    sym = np.einsum("ei,ej->eij", n, m)
    second = np.zeros((n_owner, 3, 3))
    np.add.at(second, owner, (sym + np.swapaxes(sym, 1, 2)) / 6.0)
    # area: signed solid angles from a reference point q, summed per region, modulo 4 pi
    q = _reference_point(a)
    triple = sphere.dot(q, np.cross(a, b))
    denom = 1.0 + sphere.dot(q, a) + sphere.dot(a, b) + sphere.dot(q, b)
    omega = 2.0 * np.arctan2(triple, denom)
    fan = np.bincount(owner, weights=omega, minlength=n_owner)
    area = np.mod(fan, sphere.FOUR_PI)
    area = np.where(area > sphere.FOUR_PI - 1e-9, area - sphere.FOUR_PI, area)
    area = np.where(np.bincount(owner, minlength=n_owner) == 0, 0.0, area)
    second += area[:, None, None] / 3.0 * np.eye(3)
    return area, first, second


def _reference_point(pts):
    """A direction kept well away from the antipodes of all given points."""
    for k in range(40):
        q = sphere.normalize(np.array([np.cos(1.3 * k + 0.2), np.sin(0.7 * k + 1.1),
                                       np.cos(0.37 * k + 2.3)]))
        if len(pts) == 0 or sphere.dot(pts, -q).max() < np.cos(1e-3):
            return q
    return q


#: Groups of no-data nodes smaller than this (nodes, neighbours along lon and lat) are gaps
#: in the ocean's ages, not continents.
MIN_CONTINENT_NODES = 4


@dataclass(frozen=True, eq=False)
class MaskContinents:
    """Continental regions as the no-data nodes of an age grid (``continents =
    "from-ages"``): where the grid has no sea-floor age there is no oceanic lithosphere.

    Groups of fewer than :data:`MIN_CONTINENT_NODES` neighbouring no-data nodes are gaps in
    the ocean, not continents: they get no force (the age check counts them). The moments of
    a plate's continental part are sums over the grid's cells (a discretisation, first order
    in the grid step), unlike the exact clipping of continent polygons.

    Attributes
    ----------
    grid : AgeGrid
    mask : ndarray of bool, shape (nlat, nlon)
        Continental nodes.
    source : str
    """

    grid: object
    mask: np.ndarray
    source: str = "from-ages"

    def __repr__(self) -> str:
        return (f"MaskContinents({self.source!r}, {int(self.mask.sum()):,} of "
                f"{self.mask.size:,} nodes)")

    @classmethod
    def from_ages(cls, grid) -> "MaskContinents":
        """The continental mask of an age grid.

        Parameters
        ----------
        grid : AgeGrid

        Returns
        -------
        MaskContinents
        """
        from scipy import ndimage
        nodata = ~np.isfinite(grid.age_myr)
        labels, n = ndimage.label(nodata)
        if grid.global_lon and n:                  # a group across the antimeridian is one
            for a, b in set(zip(labels[:, 0][nodata[:, 0] & nodata[:, -1]],
                                labels[:, -1][nodata[:, 0] & nodata[:, -1]])):
                labels[labels == b] = a
        sizes = np.bincount(labels.ravel())
        big = sizes >= MIN_CONTINENT_NODES
        big[0] = False
        return cls(grid, big[labels], f"no-data nodes of {grid.source}")

    def on_grid(self, lon_deg, lat_deg) -> np.ndarray:
        """Whether the nodes of a regular grid lie on a continent (the nearest age node's).

        Parameters
        ----------
        lon_deg, lat_deg : ndarray
            The grid's axes, degrees.

        Returns
        -------
        ndarray of bool, shape (nlat, nlon)
        """
        g = self.grid
        i = _nearest(g.lon, np.asarray(lon_deg, float), wrap=g.global_lon)
        j = _nearest(g.lat, np.asarray(lat_deg, float), wrap=False)
        return self.mask[np.ix_(j, i)]

    def contains(self, xyz) -> np.ndarray:
        """Whether each unit vector ``(N, 3)`` lies on a continent (nearest node).

        Parameters
        ----------
        xyz : array_like, shape (N, 3)

        Returns
        -------
        ndarray of bool, shape (N,)
        """
        lon, lat = sphere.xyz_to_lonlat(np.asarray(xyz, float))
        g = self.grid
        return self.mask[_nearest(g.lat, lat, False), _nearest(g.lon, lon, g.global_lon)]

    def moments(self, node_plates, n_plates: int):
        """Area, first and second moments of each plate's continental part: sums over the
        cells of the continental nodes.

        Parameters
        ----------
        node_plates : ndarray of int, shape (nlat, nlon)
            The plate of every node of the age grid.
        n_plates : int

        Returns
        -------
        area : ndarray, shape (P,)
        first : ndarray, shape (P, 3)
        second : ndarray, shape (P, 3, 3)
        """
        g = self.grid
        LON, LAT = np.meshgrid(g.lon, g.lat)
        r = sphere.lonlat_to_xyz(LON[self.mask], LAT[self.mask])
        dA = g.cell_areas()[self.mask]
        p = node_plates[self.mask]
        area = np.bincount(p, weights=dA, minlength=n_plates)
        first = np.stack([np.bincount(p, weights=dA * r[:, k], minlength=n_plates)
                          for k in range(3)], axis=1)
        rr = np.einsum("ni,nj->nij", r, r) * dA[:, None, None]
        second = np.stack([np.bincount(p, weights=rr[:, i, j], minlength=n_plates)
                           for i in range(3) for j in range(3)], axis=1).reshape(-1, 3, 3)
        return area, first, second


def _nearest(axis, x, wrap: bool) -> np.ndarray:
    """Index of the nearest node of an evenly spaced, increasing axis (longitudes wrapped)."""
    step = axis[1] - axis[0]
    k = np.rint((x - axis[0]) / step).astype(np.int64)
    return np.mod(k, len(axis)) if wrap else np.clip(k, 0, len(axis) - 1)
