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
"""

from __future__ import annotations

import numpy as np
import shapely

from . import sphere

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

        nxt = sphere.ring_next(ring_start)
        a, b = xyz, xyz[nxt]
        plate = ring_plate[sphere.ring_index(ring_start)]
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

        lo, hi, dlon, lat_lo, lat_hi = sphere.arc_lonlat_box(pa, pb)

        self._build_cells(lo, hi, lat_lo, lat_hi)
        north_count = self._plates_holding_north(rxyz, ring_start, ring_plate, ring_is_hole)
        self._label_anchors(lo, hi, dlon, north_count)

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

    def _build_cells(self, lo, hi, lat_lo, lat_hi):
        d = self.cell_deg
        # Margin for the bulge of an anchor-to-point arc beyond its cell (< d^2/16 radians).
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
        cell = row * self.ncol + col
        order = np.argsort(cell, kind="stable")
        self._cell_pieces = piece[order]
        self._cell_start = np.searchsorted(cell[order], np.arange(self.ncol * self.nrow + 1))

    def _plates_holding_north(self, rxyz, ring_start, ring_plate, ring_is_hole):
        north = np.array([[0.0, 0.0, 1.0]])
        left = sphere.points_left_of_rings(north, rxyz, ring_start)[0]
        # In a polygon iff left of all its rings: sum(left) - holes counts 1 inside, else 0.
        per_plate = (np.bincount(ring_plate, weights=left, minlength=self.n_plates)
                     - np.bincount(ring_plate, weights=ring_is_hole, minlength=self.n_plates))
        return np.rint(per_plate).astype(np.int64)

    def _label_anchors(self, lo, hi, dlon, north_count):
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

        rows = np.arange(self.nrow)
        cols = np.arange(self.ncol)
        anchor_lat = -90.0 + (rows + 0.5) * d
        akey = (cols[None, :] * 1000.0 + (anchor_lat[:, None] + 90.0)).ravel()  # row-major
        acol = np.broadcast_to(cols[None, :], (self.nrow, self.ncol)).ravel()

        kw, pw = key[west], self._plate[piece][west]
        ow = np.argsort(kw)
        kw, pw = kw[ow], pw[ow]
        ke, pe = key[~west], self._plate[piece][~west]
        oe = np.argsort(ke)
        ke, pe = ke[oe], pe[oe]

        # anchors column by column (keys increasing) for the searches, then back to rows
        by_col = np.arange(akey.size).reshape(self.nrow, self.ncol).T.ravel()
        iw = np.empty(akey.size, np.int64)
        ie = np.empty(akey.size, np.int64)
        iw[by_col] = np.searchsorted(kw, akey[by_col], side="right")
        ie[by_col] = np.searchsorted(ke, akey[by_col], side="left") - 1
        # where each column's keys end (and the eastward ones start): once per column
        col_end_w = np.searchsorted(kw, (cols + 1) * 1000.0)[acol]
        col_end_e = np.searchsorted(ke, (cols + 1) * 1000.0)[acol]
        ok_w = (iw < col_end_w)
        ok_e = (ie >= 0) & (ie >= np.searchsorted(ke, cols * 1000.0)[acol])

        # A column that no edge crosses lies wholly in the plate holding the north pole.
        north_plate = int(np.argmax(north_count)) if north_count.max() > 0 else -1
        plate = np.full(akey.shape, north_plate, dtype=np.int64)
        plate = np.where(ok_e, pe[np.clip(ie, 0, max(len(pe) - 1, 0))] if len(pe) else -1,
                         plate)
        plate = np.where(ok_w, pw[np.clip(iw, 0, max(len(pw) - 1, 0))] if len(pw) else -1,
                         plate)
        self._cell_plate = plate.astype(np.int32)
        # How many plates hold each anchor (1 everywhere for a tiling).
        coverage = (north_count.sum() + (col_end_w - iw) - (col_end_e - (ie + 1)))
        self._cell_coverage = coverage.astype(np.int32)

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
        # point-piece pairs in touched cells
        cnt = count[busy]
        pt = np.repeat(busy, cnt)
        k = np.arange(pt.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
        pc = self._cell_pieces[start[pt] + k]
        anchor = self._anchor_xyz(col[pt], row[pt])
        p = r[pt]
        ea, eb, en = self._pa[pc], self._pb[pc], self._pole[pc]
        hit = sphere.arcs_cross(anchor, p, ea, eb) & (sphere.dot(en, p) > 0)
        if not hit.any():
            return plate
        pt, anchor, p, en, pc = pt[hit], anchor[hit], p[hit], en[hit], pc[hit]
        x = np.cross(np.cross(anchor, p), en)
        x *= np.sign(sphere.dot(x, anchor + p))[:, None]
        nearness = sphere.dot(sphere.normalize(x), p)
        order = np.lexsort((nearness, pt))
        last = np.r_[pt[order][1:] != pt[order][:-1], True]
        chosen = order[last]
        plate[pt[chosen]] = self._plate[pc[chosen]]
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

    def locate_grid(self, lon_deg, lat_deg, block: int = 8) -> np.ndarray:
        """Plate index of every node of a regular lon/lat grid, shape (nlat, nlon).

        Exact, like :meth:`locate`, and much faster on fine grids: the nodes are grouped in
        blocks of ``block x block``; a block whose lon/lat rectangle no plate edge's box
        touches lies wholly in one plate, so one located node labels all of it. Only the
        blocks that edges touch are located node by node.

        Parameters
        ----------
        lon_deg : ndarray, shape (nlon,)
            Evenly spaced, increasing.
        lat_deg : ndarray, shape (nlat,)
            Evenly spaced, increasing.
        """
        lon = np.asarray(lon_deg, float)
        lat = np.asarray(lat_deg, float)
        nlon, nlat = len(lon), len(lat)
        if nlon < 2 or nlat < 2:
            LON, LAT = np.meshgrid(lon, lat)
            return self.locate_lonlat(LON, LAT)
        dlon = (lon[-1] - lon[0]) / (nlon - 1)
        dlat = (lat[-1] - lat[0]) / (nlat - 1)
        k = int(block)
        nbi, nbj = -(-nlon // k), -(-nlat // k)
        touched = np.zeros((nbj, nbi), bool)

        # edge pieces back in the world frame, with exact lon/lat boxes
        a, b = self._pa @ self.frame, self._pb @ self.frame
        lo_a, _, dl, lat_lo, lat_hi = sphere.arc_lonlat_box(a, b)
        _, lat_a = sphere.xyz_to_lonlat(a)
        _, lat_b = sphere.xyz_to_lonlat(b)
        # near a pole longitude means little: such pieces touch every column
        polar = (np.abs(lat_a) > 90 - 1e-7) | (np.abs(lat_b) > 90 - 1e-7) | (
            np.maximum(np.abs(lat_lo), np.abs(lat_hi)) > 90 - 1e-7) | (np.abs(dl) > 179.0)
        pad = 1e-7
        lo = np.where(polar, 0.0, np.mod(lo_a - lon[0] - pad, 360.0))
        width = np.where(polar, 360.0, np.abs(dl) + 2 * pad)
        # block rows: blocks whose node-lat span [lat[jk], lat[jk+k-1]] meets the box
        j0 = np.ceil(((lat_lo - pad - lat[0]) / dlat - (k - 1)) / k).astype(np.int64)
        j1 = np.floor(((lat_hi + pad - lat[0]) / dlat) / k).astype(np.int64)
        j0, j1 = np.clip(j0, 0, nbj - 1), np.clip(j1, 0, nbj - 1)
        span_lon = nlon * dlon if abs(nlon * dlon - 360.0) < 1e-6 else 720.0
        for start, wid in ((lo, width), (lo - span_lon, width)):
            i0 = np.ceil(((start) / dlon - (k - 1)) / k).astype(np.int64)
            i1 = np.floor(((start + wid) / dlon) / k).astype(np.int64)
            i0, i1 = np.clip(i0, 0, nbi - 1), np.clip(i1, -1, nbi - 1)
            full = wid >= 359.0
            i0, i1 = np.where(full, 0, i0), np.where(full, nbi - 1, i1)
            ok = (i1 >= i0) & (j1 >= j0)
            ni, nj = (i1 - i0 + 1) * ok, (j1 - j0 + 1) * ok
            cnt = ni * nj
            piece = np.repeat(np.arange(len(lo)), cnt)
            q = np.arange(piece.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
            touched[j0[piece] + q // ni[piece], i0[piece] + q % ni[piece]] = True

        out = np.empty((nlat, nlon), np.int64)
        # one node per untouched block
        bj, bi = np.nonzero(~touched)
        rep = self.locate_lonlat(lon[bi * k], lat[bj * k])
        block_plate = np.full((nbj, nbi), -1, np.int64)
        block_plate[bj, bi] = rep
        out[:] = np.repeat(np.repeat(block_plate, k, axis=0), k, axis=1)[:nlat, :nlon]
        # every node of a touched block
        mask = np.repeat(np.repeat(touched, k, axis=0), k, axis=1)[:nlat, :nlon]
        jj, ii = np.nonzero(mask)
        out[jj, ii] = self.locate_lonlat(lon[ii], lat[jj])
        return out

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


def arc_boxes(a, b):
    """Shapely lon/lat boxes (degrees) of arcs, split at the antimeridian.

    Use in a frame that keeps arcs off the poles (``PlateLocator.frame``). Returns the boxes
    and the arc each belongs to.

    Parameters
    ----------
    a, b : ndarray, shape (E, 3)
        Unit vectors, in the frame of the boxes.

    Returns
    -------
    boxes : ndarray of shapely Polygon
    owner : ndarray of int
    """
    lo, hi, _, la, lb = sphere.arc_lonlat_box(a, b)
    owner = np.arange(len(a))
    # pieces that run past +/-180 get a second box on the other side
    wrap_lo, wrap_hi = lo < -180.0, hi > 180.0
    boxes = [shapely.box(np.maximum(lo, -180.0), la, np.minimum(hi, 180.0), lb)]
    owners = [owner]
    if wrap_lo.any():
        boxes.append(shapely.box(lo[wrap_lo] + 360.0, la[wrap_lo], 180.0, lb[wrap_lo]))
        owners.append(owner[wrap_lo])
    if wrap_hi.any():
        boxes.append(shapely.box(-180.0, la[wrap_hi], hi[wrap_hi] - 360.0, lb[wrap_hi]))
        owners.append(owner[wrap_hi])
    return np.concatenate(boxes), np.concatenate(owners)


class ArcIndex:
    """Great-circle arcs split into short pieces, with a k-d tree of the pieces' midpoints,
    to find the arcs near points quickly; distances are then exact point-to-arc distances.

    Parameters
    ----------
    a, b : ndarray, shape (E, 3)
        Unit vectors: the arcs' ends.
    step_rad : float
        Longest piece (radians).

    Attributes
    ----------
    pa, pb : ndarray, shape (K, 3)
        The pieces' ends.
    owner : ndarray of int, shape (K,)
        The arc of each piece.
    """

    def __init__(self, a, b, step_rad: float = np.radians(0.1)):
        self.pa, self.pb, self.owner = sphere.densify_arcs(a, b, step_rad)
        self.half = 0.5 * np.linalg.norm(self.pa - self.pb, axis=1).max() if len(
            self.pa) else 0.0
        from scipy.spatial import cKDTree
        self.tree = cKDTree(sphere.normalize(self.pa + self.pb)) if len(self.pa) else None

    def __repr__(self) -> str:
        return f"ArcIndex({len(self.pa)} pieces of {len(np.unique(self.owner))} arcs)"

    def pairs(self, points, reach: float):
        """Candidate (point, piece) pairs: every piece that may lie within ``reach``.

        Parameters
        ----------
        points : ndarray, shape (N, 3)
        reach : float
            Radians.

        Returns
        -------
        v, e : ndarray of int
            Point and piece indices of the pairs.
        """
        if self.tree is None or not len(points):
            return np.zeros(0, np.int64), np.zeros(0, np.int64)
        cand = self.tree.query_ball_point(points, r=2 * np.sin(reach / 2) + self.half + 1e-12)
        counts = np.array([len(c) for c in cand], dtype=np.int64)
        v = np.repeat(np.arange(len(points)), counts)
        e = (np.concatenate([np.asarray(c, dtype=np.int64) for c in cand]) if len(v)
             else np.zeros(0, np.int64))
        return v, e

    def distance(self, points, reach: float) -> np.ndarray:
        """Exact distance (radians) from each point to the nearest arc, ``inf`` beyond
        ``reach``.

        Parameters
        ----------
        points : ndarray, shape (N, 3)
        reach : float

        Returns
        -------
        ndarray, shape (N,)
        """
        v, e = self.pairs(points, reach)
        out = np.full(len(points), np.inf)
        np.minimum.at(out, v, sphere.point_arc_distance(points[v], self.pa[e], self.pb[e]))
        return out
