"""Which plate holds each point: exact and vectorised.

The method, in the words of the code below:

1. Work in a fixed, generic rotated frame chosen so that no vertex and no arc comes near the
   frame's poles; longitude is then monotone along every arc and no arc passes over a pole.
2. Cover the sphere with a regular lon/lat grid of cells. Split every plate edge into pieces
   no longer than a cell and list each piece in every cell that its exact lon/lat box
   (latitude extremes included) touches, padded by a small margin.
3. Label the centre ("anchor") of every cell exactly by ray casting down the meridian
   through the cell centres: going south, crossing an arc walked westward enters the plate
   on its left, crossing one walked eastward leaves it. The plate of an anchor is the plate
   entered at the nearest crossing above it.
4. A point in a cell that no edge touches belongs to the anchor's plate. In a touched cell,
   the short arc from the anchor to the point crosses only edges listed in that cell; the
   point belongs to the plate on whose side it lies of the crossing nearest to it, or to the
   anchor's plate when nothing is crossed.

Every step is an exact sign test on great-circle arcs; there is no tolerance except for
points that lie on a plate edge to rounding error (either plate is then a right answer).

5. The nodes of a regular grid go row by row: where each edge piece crosses a row's
   parallel comes in closed form, with a bound on its rounding; the nodes between two
   crossings lie in one plate, so step 4 labels one node of each run, and the nodes within
   a crossing's bound one by one. The labels are those of step 4 node for node.
"""

from __future__ import annotations

from functools import cached_property

import numpy as np

from . import sphere

from . import polygons

__all__ = ["default_cell_deg", "cached", "PlateLocator"]

_POLE_CLEARANCE = 1e-3  # radians kept between any vertex or arc and the grid's poles


def _candidate_frames():
    # Fixed, deterministic generic rotations; the first that clears the poles is used.
    for k in range(1, 25):
        from scipy.spatial.transform import Rotation
        yield Rotation.from_euler(
            "zyz", [17.3 * k + 0.37, 31.1 + 7.7 * k, 5.9 * k + 1.3], degrees=True
        ).as_matrix()


def default_cell_deg(n_vertices: int) -> float:
    """Cell size (degrees) of a locator for rings of ``n_vertices`` vertices: fine cells
    only where there are many edges to sort into them (set-up grows with the number of
    cells, queries with the edges per cell).

    Parameters
    ----------
    n_vertices : int

    Returns
    -------
    float
        0.25 from 20,000 vertices, 0.5 from 2,000, else 1.

    Examples
    --------
    >>> default_cell_deg(100_000), default_cell_deg(5_000), default_cell_deg(300)
    (0.25, 0.5, 1.0)
    """
    return 0.25 if n_vertices >= 20_000 else 0.5 if n_vertices >= 2_000 else 1.0


#: Locators built in this process, by the content of their rings (see :func:`cached`).
_CACHE: dict = {}
_CACHE_SIZE = 8


def cached(xyz, ring_start, ring_plate, ring_is_hole, n_plates: int) -> "PlateLocator":
    """The locator of these rings, built once per process: a world read again (another
    command of the same run, another stage with the same plates) reuses it.

    Parameters
    ----------
    xyz, ring_start, ring_plate, ring_is_hole, n_plates
        As :class:`PlateLocator`.

    Returns
    -------
    PlateLocator
    """
    import hashlib
    h = hashlib.blake2b(digest_size=16)
    for a in (xyz, ring_start, ring_plate, ring_is_hole):
        a = np.ascontiguousarray(a)
        h.update(str(a.dtype).encode() + str(a.shape).encode())
        h.update(a.tobytes())
    key = (h.hexdigest(), int(n_plates))
    loc = _CACHE.pop(key, None)
    if loc is None:
        loc = PlateLocator(xyz, ring_start, ring_plate, ring_is_hole, n_plates)
    _CACHE[key] = loc                           # most recent last
    while len(_CACHE) > _CACHE_SIZE:
        _CACHE.pop(next(iter(_CACHE)))
    return loc


class PlateLocator:
    """Assign points on the unit sphere to the plates of a tiling.

    Parameters
    ----------
    xyz : ndarray, shape (V, 3)
        Ring vertices (unit vectors), rings concatenated, each oriented with its plate on the
        left (see :mod:`torque.sphere`).
    ring_start : ndarray of int, shape (R + 1,)
    ring_plate : ndarray of int, shape (R,)
        Plate of each ring.
    ring_is_hole : ndarray of bool, shape (R,)
    n_plates : int
    cell_deg : float, optional
        Size of the grid cells in degrees. Smaller cells cost memory and set-up time, and save
        time per point near boundaries. Default :func:`default_cell_deg` of the vertex count.

    Examples
    --------
    Two hemispheres split by the equator:

    >>> import numpy as np
    >>> from torque.sphere import lonlat_to_xyz
    >>> eq = lonlat_to_xyz([0.0, 120.0, 240.0], [0.0, 0.0, 0.0])
    >>> xyz = np.concatenate([eq, eq[::-1]])
    >>> loc = PlateLocator(xyz, [0, 3, 6], [0, 1], [False, False], 2)
    >>> loc.locate(lonlat_to_xyz([10.0, -50.0], [45.0, -3.0]))
    array([0, 1])
    """

    def __init__(self, xyz, ring_start, ring_plate, ring_is_hole, n_plates: int, *,
                 cell_deg: float | None = None):
        xyz = np.asarray(xyz, dtype=float)
        ring_start = np.asarray(ring_start, dtype=np.int64)
        ring_plate = np.asarray(ring_plate, dtype=np.int64)
        ring_is_hole = np.asarray(ring_is_hole, dtype=bool)
        self.n_plates = int(n_plates)
        cell_deg = float(cell_deg if cell_deg is not None else default_cell_deg(len(xyz)))
        self.cell_deg = cell_deg
        self.ncol = int(round(360.0 / cell_deg))
        self.nrow = int(round(180.0 / cell_deg))
        if abs(self.ncol * cell_deg - 360.0) > 1e-9 or abs(self.nrow * cell_deg - 180.0) > 1e-9:
            raise ValueError("cell_deg must divide 180 evenly")

        nxt = polygons.ring_next(ring_start)
        a, b = xyz, xyz[nxt]
        plate = ring_plate[polygons.ring_index(ring_start)]
        keep = np.any(a != b, axis=1)
        a, b, plate = a[keep], b[keep], plate[keep]

        self.frame = self._choose_frame(a, b)
        a = a @ self.frame.T
        b = b @ self.frame.T
        rxyz = xyz @ self.frame.T

        cell_rad = np.radians(cell_deg)
        pa, pb, owner = sphere.densify_arcs(a, b, cell_rad)
        self._pa, self._pb = pa, pb
        self._pole, _ = sphere.arc_pole(pa, pb)
        self._plate = plate[owner]
        self._piece_edge = np.flatnonzero(keep)[owner]     # the ring edge of each piece
        self._n_edges = len(xyz)

        lo, hi, dlon, lat_lo, lat_hi = sphere.arc_lonlat_box(pa, pb, self._pole)

        self._build_cells(lo, hi, lat_lo, lat_hi)
        self._rings = (rxyz, ring_start, ring_plate, ring_is_hole)
        self._label_anchors(lo, hi, dlon)

    @property
    def label_dtype(self):
        """The integer type of :meth:`locate_grid`'s labels: int16 for fewer than 32,767
        plates, else int32."""
        return np.int16 if self.n_plates < np.iinfo(np.int16).max else np.int32

    # -- set-up ---------------------------------------------------------------------------
    @staticmethod
    def _choose_frame(a, b):
        # only an arc whose end lies within its own length (plus the clearance) of a pole
        # can come near it: the exact latitude range is needed for those alone
        theta = sphere.angle_between(a, b)
        for q in _candidate_frames():
            colat = np.arccos(np.clip(np.maximum(np.abs(a @ q[2]), np.abs(b @ q[2])), 0, 1))
            near = colat < theta + 2 * _POLE_CLEARANCE
            if not near.any():
                return q
            lat_lo, lat_hi = sphere.arc_lat_range(a[near] @ q.T, b[near] @ q.T)
            if (np.max(np.abs(np.concatenate([lat_lo, lat_hi])))
                    < np.pi / 2 - _POLE_CLEARANCE):
                return q
        raise ValueError("no rotated frame clears the poles; the rings look degenerate")

    def _box_cells(self, lo, hi, lat_lo, lat_hi):
        # (piece, cell) for every cell that each piece's lon/lat box (in the frame) touches,
        # padded by the bulge of an anchor-to-point arc beyond its cell (< d^2/16 radians)
        d = self.cell_deg
        pad = np.degrees(np.radians(d) ** 2 / 4.0) + 1e-9
        c0 = np.floor((lo - pad + 180.0) / d).astype(np.int64)
        c1 = np.floor((hi + pad + 180.0) / d).astype(np.int64)
        nc = np.minimum(c1 - c0 + 1, self.ncol)
        r0 = np.clip(np.floor((lat_lo - pad + 90.0) / d).astype(np.int64), 0, self.nrow - 1)
        r1 = np.clip(np.floor((lat_hi + pad + 90.0) / d).astype(np.int64), 0, self.nrow - 1)
        nr = r1 - r0 + 1
        count = nc * nr
        piece = np.repeat(np.arange(len(lo)), count)
        k = np.arange(piece.size) - np.repeat(np.cumsum(count) - count, count)
        col = np.mod(c0[piece] + k % nc[piece], self.ncol)
        row = r0[piece] + k // nc[piece]
        return piece, row * self.ncol + col

    def _build_cells(self, lo, hi, lat_lo, lat_hi):
        piece, cell = self._box_cells(lo, hi, lat_lo, lat_hi)
        order = np.argsort(cell, kind="stable")
        self._cell_pieces = piece[order]
        cell = cell[order]
        self._cell_start = np.zeros(self.ncol * self.nrow + 1, np.int32 if len(cell) < 2**31
                                    else np.int64)
        np.cumsum(np.bincount(cell, minlength=self.ncol * self.nrow), out=self._cell_start[1:])
        # the first of the crossing tests, the anchor's side of each listed piece's circle,
        # is fixed by the cell: kept per entry
        self._piece_n = sphere.cross(self._pa, self._pb)
        row, col = np.divmod(cell, self.ncol)
        self._entry_anchor_side = sphere.dot(self._piece_n[self._cell_pieces],
                                             self._anchor_xyz(col, row))

    def _plates_holding_north(self, rxyz, ring_start, ring_plate, ring_is_hole):
        north = np.array([[0.0, 0.0, 1.0]])
        left = polygons.points_left_of_rings(north, rxyz, ring_start)[0]
        # In a polygon iff left of all its rings: sum(left) - holes counts 1 inside, else 0.
        per_plate = (np.bincount(ring_plate, weights=left, minlength=self.n_plates)
                     - np.bincount(ring_plate, weights=ring_is_hole, minlength=self.n_plates))
        return np.rint(per_plate).astype(np.int64)

    @cached_property
    def _north_count(self):
        # how many plates hold the frame's north pole, per plate (asked for only where a
        # column has no crossing, and by the checks)
        return self._plates_holding_north(*self._rings)

    def _label_anchors(self, lo, hi, dlon):
        d = self.cell_deg
        # columns whose centre meridian lies in [lo, hi) of each piece
        first = np.ceil((lo + 180.0) / d - 0.5).astype(np.int64)
        last = np.ceil((hi + 180.0) / d - 0.5).astype(np.int64) - 1
        count = np.maximum(last - first + 1, 0)
        piece = np.repeat(np.arange(len(lo)), count)
        k = np.arange(piece.size) - np.repeat(np.cumsum(count) - count, count)
        col_unwrapped = first[piece] + k
        lam = np.radians(-180.0 + (col_unwrapped + 0.5) * d)
        col = np.mod(col_unwrapped, self.ncol)
        n = self._pole[piece]
        lat = np.degrees(np.arctan2(-(n[:, 0] * np.cos(lam) + n[:, 1] * np.sin(lam))
                                    * np.sign(n[:, 2]), np.abs(n[:, 2])))
        west = dlon[piece] < 0
        key = col * 1000.0 + (lat + 90.0)
        plate_of = self._plate[piece]

        # Per column, anchors (row r, key akey_r increasing with r) and crossings: a crossing
        # is north of anchor r when key > akey_r. Its slot, the number of the column's
        # anchors below it, comes from those same comparisons (first guessed from the
        # latitude, then corrected), so that ties fall as in a search over the keys.
        nrow, ncol = self.nrow, self.ncol
        anchor_off = -90.0 + (np.arange(nrow) + 0.5) * d + 90.0
        base = col * 1000.0

        def slots(strict):
            r = np.clip(np.floor((lat + 90.0) / d - 0.5).astype(np.int64) + 1, 0, nrow)
            for _ in range(2):
                below = base + anchor_off[np.clip(r - 1, 0, nrow - 1)]
                r = np.where((r > 0) & ((below >= key) if strict else (below > key)), r - 1, r)
                at = base + anchor_off[np.clip(r, 0, nrow - 1)]
                r = np.where((r < nrow) & ((at < key) if strict else (at <= key)), r + 1, r)
            return r

        # westward crossings: the nearest one north of an anchor (smallest key, the first
        # of equal keys in key order) gives its plate; eastward: the nearest one south
        # (largest key, the last of equal keys), the plate the anchor is in when no
        # westward crossing lies north of it
        # Each as one number per slot, slot * M + its rank in key order, so that one running
        # minimum (north to south) or maximum (south to north) down every column finds it.
        M = 1 << int(len(key)).bit_length()              # a power of 2 above the ranks
        picked, self._slots = {}, {}
        for name, sel, strict in (("w", west, True), ("e", ~west, False)):
            order = np.argsort(key[sel])
            s_ = slots(strict)[sel][order]
            flat = s_ * ncol + col[sel][order]
            val = s_ * M + np.arange(len(flat))
            if name == "w":
                V = np.full((nrow + 1) * ncol, np.iinfo(np.int64).max)
                V[flat[::-1]] = val[::-1]                   # the first of each slot
                # slots s > r of anchor r: the running minimum from the north, one row on
                V = np.minimum.accumulate(V.reshape(nrow + 1, ncol)[::-1], axis=0)[::-1][1:]
                found = V < np.iinfo(np.int64).max
            else:
                V = np.full((nrow + 1) * ncol, -1, np.int64)
                V[flat] = val                               # the last of each slot
                V = np.maximum.accumulate(V.reshape(nrow + 1, ncol), axis=0)[:nrow]
                found = V >= 0
            plates = plate_of[sel][order]
            picked[name] = (found, plates[np.where(found, V & (M - 1), 0)] if len(plates)
                            else None)
            self._slots[name] = flat

        plate = np.empty((nrow, ncol), dtype=np.int32)
        for name in ("e", "w"):                            # a westward crossing wins
            found, plates = picked[name]
            if plates is not None:
                plate[found] = plates[found]
        # A column that no edge crosses lies wholly in the plate holding the north pole.
        alone = ~(picked["e"][0] | picked["w"][0])
        if alone.any():
            north = self._north_count
            plate[alone] = int(np.argmax(north)) if north.max() > 0 else -1
        self._cell_plate = plate.ravel()

    @cached_property
    def _cell_coverage(self):
        # How many plates hold each anchor (1 everywhere for a tiling): the north pole's,
        # plus the plates entered (westward crossings north of it), less those left
        # (eastward crossings north of it). Only the checks of a tiling ask.
        size = (self.nrow + 1) * self.ncol
        north = {k: np.cumsum(np.bincount(v, minlength=size).reshape(self.nrow + 1, self.ncol)
                              [::-1], axis=0)[::-1][1:] for k, v in self._slots.items()}
        return (int(self._north_count.sum()) + north["w"] - north["e"]).astype(np.int32).ravel()

    # -- queries --------------------------------------------------------------------------
    def _cells(self, rxyz):
        lon, lat = sphere.xyz_to_lonlat(rxyz)
        d = self.cell_deg
        col = np.mod(np.floor((lon + 180.0) / d).astype(np.int64), self.ncol)
        row = np.clip(np.floor((lat + 90.0) / d).astype(np.int64), 0, self.nrow - 1)
        return row * self.ncol + col, col, row

    def _anchor_xyz(self, col, row):
        d = self.cell_deg
        return sphere.lonlat_to_xyz(-180.0 + (col + 0.5) * d, -90.0 + (row + 0.5) * d)

    def locate(self, xyz) -> np.ndarray:
        """Plate index of each point.

        Parameters
        ----------
        xyz : array_like, shape (N, 3)
            Unit vectors.

        Returns
        -------
        plate : ndarray of int, shape (N,)
        """
        xyz = np.asarray(xyz, dtype=float).reshape(-1, 3)
        r = xyz @ self.frame.T
        cell, col, row = self._cells(r)
        plate = self._cell_plate[cell].astype(np.int64)
        start = self._cell_start[cell]
        count = self._cell_start[cell + 1] - start
        busy = np.nonzero(count > 0)[0]
        if busy.size == 0:
            return plate
        # point-piece pairs in touched cells; the tests of sphere.arcs_cross (anchor -> point
        # against each piece), cheapest first: the point's side of the piece's circle
        # against the anchor's (kept per cell entry), then the piece's ends against the
        # anchor-to-point circle, then which of the two circles' meetings they share
        cnt = count[busy]
        local = np.repeat(np.arange(busy.size), cnt)
        entry = (np.arange(local.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
                 + start[busy][local])
        pc = self._cell_pieces[entry]
        p = r[busy]
        s_p = sphere.dot(self._piece_n[pc], p[local])
        s_anchor = self._entry_anchor_side[entry]
        keep = (s_anchor * s_p < 0) & (sphere.dot(self._pole[pc], p[local]) > 0)
        local, pc = local[keep], pc[keep]
        anchor = self._anchor_xyz(col[busy], row[busy])
        n1 = sphere.cross(anchor, p)
        ea, eb = self._pa[pc], self._pb[pc]
        keep = sphere.dot(n1[local], ea) * sphere.dot(n1[local], eb) < 0
        local, pc, ea, eb = local[keep], pc[keep], ea[keep], eb[keep]
        x = sphere.cross(n1[local], self._piece_n[pc])
        hit = np.sign(sphere.dot(x, anchor[local] + p[local])) == np.sign(sphere.dot(x, ea + eb))
        if not hit.any():
            return plate
        local, pc = local[hit], pc[hit]
        a_, p_, en = anchor[local], p[local], self._pole[pc]
        x = sphere.cross(sphere.cross(a_, p_), en)
        x *= np.sign(sphere.dot(x, a_ + p_))[:, None]
        nearness = sphere.dot(sphere.normalize(x), p_)
        order = np.lexsort((nearness, local))
        last = np.r_[local[order][1:] != local[order][:-1], True]
        chosen = order[last]
        plate[busy[local[chosen]]] = self._plate[pc[chosen]]
        return plate

    def locate_lonlat(self, lon_deg, lat_deg) -> np.ndarray:
        """:meth:`locate` for longitudes and latitudes in degrees (any matching shapes).

        Parameters
        ----------
        lon_deg, lat_deg : array_like, shape (N,)

        Returns
        -------
        ndarray of int, shape (N,)
        """
        shape = np.broadcast(np.asarray(lon_deg), np.asarray(lat_deg)).shape
        return self.locate(sphere.lonlat_to_xyz(lon_deg, lat_deg).reshape(-1, 3)).reshape(shape)

    def locate_grid(self, lon_deg, lat_deg, region: int | None = None) -> np.ndarray:
        """Plate index of every node of a regular lon/lat grid, shape (nlat, nlon).

        Exact, like :meth:`locate` (it gives the same index node for node), and much
        faster on fine grids: each row of nodes is a parallel, and the plate edges cross
        it at longitudes found in closed form (:meth:`_row_bands`, each with a bound on
        its rounding). Between two crossings the row lies in one plate, so one node,
        located by :meth:`locate`, labels the whole run; the nodes within a crossing's
        bound are located one by one.

        Parameters
        ----------
        lon_deg : ndarray, shape (nlon,)
            Evenly spaced, increasing.
        lat_deg : ndarray, shape (nlat,)
            Evenly spaced, increasing.
        region : int, optional
            Return only whether each node lies in this plate (a boolean grid, without the
            labels' memory).

        Returns
        -------
        ndarray of :attr:`label_dtype`, shape (nlat, nlon)
            -1 where no plate holds the node; of bool with ``region``.

        Notes
        -----
        The work is :meth:`locate` for about one node per crossing and one pass to write
        the labels: on a 0.1 degree grid of a 100,000-vertex world, 40,000 crossings for
        6.5 M nodes.
        """
        lon = np.asarray(lon_deg, float)
        lat = np.asarray(lat_deg, float)
        nlon, nlat = len(lon), len(lat)
        if nlon < 2 or nlat < 2:
            LON, LAT = np.meshgrid(lon, lat)
            out = self.locate_lonlat(LON, LAT)
            return out if region is None else out == region
        dlon = (lon[-1] - lon[0]) / (nlon - 1)
        row, lo, hi = self._row_bands(lat)
        # each band as a range of node columns, copied a turn to the west so that a band
        # near the grid's east end also covers the nodes it wraps onto
        lo0 = lo - 360.0 * np.floor((lo - lon[0]) / 360.0)
        hi0 = hi + (lo0 - lo)
        full = hi - lo >= 360.0 - dlon
        row = np.concatenate([row, row])
        # the nodes inside a band (its bound has a margin of 1e-9 degrees over the
        # rounding of a node's index, about 1e-13 degrees): mostly none
        i0 = np.ceil((np.concatenate([lo0, lo0 - 360.0]) - lon[0]) / dlon).astype(np.int64)
        i1 = np.floor((np.concatenate([hi0, hi0 - 360.0]) - lon[0]) / dlon).astype(np.int64)
        full = np.concatenate([full, full])
        i0, i1 = np.where(full, 0, i0), np.where(full, nlon - 1, i1)
        # the grid, flattened, cut into segments where a band starts and ends and round
        # every node inside one, so that the runs between hold no crossing; each segment
        # takes the plate of its first node
        c0 = row * nlon + np.clip(i0, 0, nlon)
        c1 = row * nlon + np.clip(i1 + 1, 0, nlon)
        length = np.maximum(c1 - c0, 0)
        node = np.repeat(c0 - np.cumsum(length) + length, length) + np.arange(length.sum())
        cuts = np.unique(np.concatenate([np.arange(nlat + 1) * nlon, c0, c1, node, node + 1]))
        jj, ii = np.divmod(cuts[:-1], nlon)
        plate = self.locate_lonlat(lon[ii], lat[jj])
        # labels in the smallest type that holds them (a 2-arcmin grid has 58 M nodes)
        plate = plate.astype(self.label_dtype) if region is None else plate == region
        return np.repeat(plate, np.diff(cuts)).reshape(nlat, nlon)

    def _row_bands(self, lat_deg):
        """Where the plate edges may cross the parallels ``lat_deg``: ``(row, lo, hi)``,
        one longitude band (degrees, world frame, ``lo`` to ``hi`` eastward, not wrapped)
        per crossing of a piece and a parallel, that holds the exact crossing.

        On a piece ``x(t) = a cos t + u sin t`` (``0 <= t <= theta``) the height is
        ``z = R cos(t - t0)``, so it meets the parallel ``z = sin(phi)`` at ``t = t0 +/-
        arccos(sin(phi) / R)``. The band's half-width bounds that root's rounding: with
        ``c = sin(phi)/R`` known to ``eps``, ``|dt| <= min(eps / sqrt(1 - c^2),
        sqrt(2 eps))``, which is large only where the piece runs along the parallel, and a
        step ``dt`` along the arc moves the longitude by at most ``dt / cos(phi)``.
        Pieces that run along the parallel over their whole length (an equatorial arc, a
        tangent) or pass within a degree of a pole get a band as wide as the row.

        Parameters
        ----------
        lat_deg : ndarray, shape (nlat,)
            Increasing.

        Returns
        -------
        row : ndarray of int, shape (B,)
        lo, hi : ndarray, shape (B,)
        """
        a, u, theta, R, t0, lat_lo, lat_hi, polar = self._world_pieces
        lat = np.asarray(lat_deg, float)
        nlat = len(lat)
        pad = 1e-9
        j0 = np.searchsorted(lat, lat_lo - pad, side="left")
        j1 = np.searchsorted(lat, lat_hi + pad, side="right")
        cnt = np.maximum(j1 - j0, 0)
        piece = np.repeat(np.arange(len(a)), cnt)
        row = np.repeat(j0, cnt) + np.arange(piece.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
        row = np.minimum(row, nlat - 1)
        phi = np.radians(lat[row])
        Rp = R[piece]
        flat = Rp < 1e-9
        with np.errstate(divide="ignore", invalid="ignore"):
            c = np.where(flat, 0.0, np.sin(phi) / np.where(flat, 1.0, Rp))
        over = np.maximum(np.abs(c) - 1.0, 0.0)
        cc = np.clip(c, -1.0, 1.0)
        eps = 1e-15 / np.maximum(Rp, 1e-300) + 1e-13
        s = np.sqrt(1.0 - cc * cc)
        with np.errstate(divide="ignore"):
            dt = np.minimum(eps / s, np.sqrt(2 * eps)) + np.sqrt(2 * over) + 1e-12
        wide = flat | polar[piece] | (dt >= 0.5 * theta[piece]) | (over > 1e-9)
        cphi = np.cos(phi)
        with np.errstate(divide="ignore"):
            half = np.degrees(dt / cphi) + 1e-9
        half = np.where(wide | (cphi < 1e-6), 360.0, half)
        acs = np.arccos(cc)
        rows, los, his = [row[wide]], [np.full(wide.sum(), -180.0)], [np.full(wide.sum(), 540.0)]
        th = theta[piece]
        for sign in (1.0, -1.0):
            t = np.mod(t0[piece] + sign * acs + np.pi, 2 * np.pi) - np.pi
            ok = ~wide & (t >= -dt) & (t <= th + dt)
            tc = np.clip(t[ok], 0.0, th[ok])
            p = piece[ok]
            x = np.cos(tc)[:, None] * a[p] + np.sin(tc)[:, None] * u[p]
            lam = np.degrees(np.arctan2(x[:, 1], x[:, 0]))
            rows.append(row[ok])
            los.append(lam - half[ok])
            his.append(lam + half[ok])
        return np.concatenate(rows), np.concatenate(los), np.concatenate(his)

    @cached_property
    def _world_pieces(self):
        # the pieces back in the world frame, each as x(t) = a cos t + u sin t, with its
        # height's amplitude and phase (z = R cos(t - t0)) and latitude range (degrees)
        a, b = self._pa @ self.frame, self._pb @ self.frame
        n, theta = sphere.arc_pole(a, b)
        u = sphere.cross(n, a)
        R = np.hypot(a[:, 2], u[:, 2])
        t0 = np.arctan2(u[:, 2], a[:, 2])
        lat_lo, lat_hi = (np.degrees(x) for x in sphere.arc_lat_range(a, b, n))
        polar = np.maximum(np.abs(lat_lo), np.abs(lat_hi)) > 89.0
        return a, u, theta, R, t0, lat_lo, lat_hi, polar

    def edges_near(self, a, b):
        """Candidate pairs of arcs ``a -> b`` and the rings' edges that may cross or touch
        them: every such pair is among them (both pass through a common cell).

        Parameters
        ----------
        a, b : ndarray, shape (N, 3)
            Unit vectors, world frame.

        Returns
        -------
        arc, edge : ndarray of int, shape (K,)
            Each pair once; ``edge`` indexes the rings' vertices (edge ``e`` runs from
            vertex ``e`` to the next of its ring).
        """
        ra, rb = np.asarray(a, float) @ self.frame.T, np.asarray(b, float) @ self.frame.T
        pa, pb, owner = sphere.densify_arcs(ra, rb, np.radians(self.cell_deg))
        n, _ = sphere.arc_pole(pa, pb)
        lo, hi, _, lat_lo, lat_hi = sphere.arc_lonlat_box(pa, pb, n)
        piece, cell = self._box_cells(lo, hi, lat_lo, lat_hi)
        start = self._cell_start[cell]
        cnt = self._cell_start[cell + 1] - start
        arc = np.repeat(owner[piece], cnt)
        entry = np.repeat(start - np.cumsum(cnt) + cnt, cnt) + np.arange(cnt.sum())
        edge = self._piece_edge[self._cell_pieces[entry]]
        key = np.unique(arc * np.int64(self._n_edges) + edge)
        return np.divmod(key, self._n_edges)

    def overlaps(self) -> np.ndarray:
        """Cell centres (world frame, shape (K, 3)) held by more than one region.

        Meaningful for any set of rings, tiling or not: the coverage of a cell is the
        number of regions holding its centre.
        """
        bad = np.nonzero(self._cell_coverage > 1)[0]
        row, col = np.divmod(bad, self.ncol)
        return self._anchor_xyz(col, row) @ self.frame

    def coverage_problems(self):
        """Cell centres held by no plate or by more than one (gaps and overlaps).

        Returns
        -------
        xyz : ndarray, shape (K, 3)
            The cell centres, in the world's frame.
        coverage : ndarray of int, shape (K,)
            How many plates hold each of them.
        """
        bad = np.nonzero(self._cell_coverage != 1)[0]
        row, col = np.divmod(bad, self.ncol)
        return self._anchor_xyz(col, row) @ self.frame, self._cell_coverage[bad]
