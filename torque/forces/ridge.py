"""Ridge push.

``form = "edge"``: a line force normal to every ridge, pushing into each of its two plates,
of magnitude ``force_per_length`` if given, else the cooling model's ridge push at the
entry's ``age_myr`` (or a ridge's own ``ridge_age_myr`` property), else its old-age limit.

``form = "distributed"`` (default): the body force ``grad F(t)`` (N/m^2), with ``F`` the
ridge push of the cooling model at the local sea-floor age ``t``, over the oceanic part of
each plate [1]_ (sec. 6-20). By Stokes' theorem on the sphere its torque is a line integral
round the oceanic region ``Omega`` of each plate,

    R^2 int_Omega r x grad F dA = R^2 oint_{d Omega} F dr,

which ``quadrature = "boundary"`` (default) evaluates along the exact great-circle arcs of
the region's edge: the plate's edges outside continents and the continental margins inside
it (the continents clipped to plates exactly, :mod:`torque.continents`), by Gauss-Legendre
quadrature on pieces no longer than the age grid's step. ``F`` at each quadrature point is
read from the grid one-sided, from the oceanic nodes of that plate only (a plane fitted by
weighted least squares to the nodes of the 4 x 4 stencil around the point, second order),
so the jump in age across a plate boundary or a margin makes no force, and whatever
varies inside the plate (fracture zones included) is counted as the continuum body force
would count it. Its error is that of the grid's ages along the edge, not of cells cut by
the edge: against the exact line integral of an analytic age field it is more than ten
times smaller than the grid sum's at the same step (``scripts/bench_ridge.py``).
``quadrature = "grid"`` keeps the sum over the age grid's nodes (the gradient between
neighbouring oceanic nodes of one plate; first order, from cells cut by edges), which is
also what is used when continents come from the age grid's no-data nodes (their edges are
cell edges). Oceanic nodes without an age (gaps in the grid) are bridged by the fit in the
boundary form; the grid sum gives them no force. At a continental margin ridge push adds no
line force: without a ``gpe`` term the continent's potential energy is taken to balance
that of the old sea floor beside it.

.. [1] Turcotte, D. L. and Schubert, G. (2002). *Geodynamics*, 2nd ed., sec. 6-20.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .. import sphere
from .base import ForceTerm, empty_term

__all__ = ["KIND", "UNIT", "KEYS", "CHOICES", "POSITIVE", "DEFAULTS", "default_label",
           "edge_force_per_length", "build", "ocean_edges", "GAUSS_POINTS", "STENCIL",
           "boundary_torque", "BoundaryMap", "boundary_map", "KNOT_MAP_MAX_SIZE",
           "BASIS", "CHUNK", "body_force_torque"]

KIND = "ridge"
UNIT = "dimensionless"
KEYS = {
    "form": '"distributed" (body force from the age field, default) or "edge" (line force)',
    "quadrature": 'distributed form: "boundary" (default: Stokes line integral along exact '
                  'edges) or "grid" (sum over the age grid\'s nodes)',
    "force_per_length": "N/m, edge form: overrides the cooling model",
    "age_myr": "Myr, edge form: age at which the cooling model's ridge push is taken",
}
CHOICES = {"form": ("distributed", "edge"), "quadrature": ("boundary", "grid")}
POSITIVE = ("force_per_length", "age_myr")
DEFAULTS = {"form": "distributed"}


def default_label(options) -> str:
    """The term's label when the entry gives none (the kind protocol, see :mod:`torque.forces`).

    Parameters
    ----------
    options : dict
        The entry's options.

    Returns
    -------
    str
    """
    return KIND


def edge_force_per_length(ctx, spec, line) -> float:
    """Ridge push (N/m) of one ridge line in the edge form: the entry's
    ``force_per_length``, else the cooling model at the line's ``ridge_age_myr`` or the
    entry's ``age_myr``, else its old-age limit.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
        The force entry, its options' defaults filled in.
    line : int
        Index into ``ctx.world.boundaries``.

    Returns
    -------
    float
    """
    props = ctx.world.boundaries[line].properties
    if "force_per_length" in spec.options:
        return float(spec.options["force_per_length"])
    age = props.get("ridge_age_myr", spec.options.get("age_myr"))
    if age is not None:
        return float(ctx.cooling.ridge_push_n_m(float(age)))
    return ctx.cooling.ridge_push_limit_n_m()


def build(ctx, spec) -> ForceTerm:
    """The :class:`~torque.forces.base.ForceTerm` of one force entry of this kind.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
        The force entry, its options' defaults filled in.

    Returns
    -------
    ForceTerm
    """
    if spec.options["form"] == "edge":
        return _edge(ctx, spec)
    return _distributed(ctx, spec)


def _edge(ctx, spec) -> ForceTerm:
    ctx.require_lines("ridge", spec.label)
    pcs = ctx.pieces("ridge")
    bnd = ctx.world.boundaries
    F = np.array([edge_force_per_length(ctx, spec, k) for k in range(len(bnd))])[pcs.line]
    bs = ctx.world.boundary_set
    left, right = bs.left[pcs.line], bs.right[pcs.line]
    # n points into the left plate: push +n on the left plate, -n on the right one
    drv = (ctx.line_force_torque(pcs, F, 1.0, left)
           + ctx.line_force_torque(pcs, F, -1.0, right))
    term = empty_term(ctx, spec, UNIT)
    term.driving[:] = drv
    return term


def _distributed(ctx, spec) -> ForceTerm:
    from ..continents import MaskContinents
    grid, notes = ctx.ages
    notes = list(notes)
    P = ctx.world.geometry.n_plates
    if (spec.options.get("quadrature", "boundary") == "grid"
            or isinstance(ctx.continents, MaskContinents)):
        F = ctx.cooling.ridge_push_lookup(np.nan_to_num(grid.age_myr, nan=0.0))
        plate = ctx.node_plates(grid)
        ocean = np.isfinite(grid.age_myr) & ~ctx.node_continental(grid)
        drv = body_force_torque(grid, F, plate, ocean, P, ctx.R)
        if spec.options.get("quadrature", "boundary") != "grid":
            notes.append(f"{spec.label}: summed over the age grid's nodes (continents from "
                         "its no-data nodes have cell edges, not margins)")
    else:
        a, b, owner = ocean_edges(ctx)
        drv = boundary_torque(ctx, grid, a, b, owner)
    term = empty_term(ctx, spec, UNIT, notes)
    term.driving[:] = drv
    return term


def ocean_edges(ctx):
    """The edges of every plate's oceanic region, ocean on the left: ``(a, b, plate)``.

    The plate's own edges outside continents, and the continental margins inside it
    walked with the continent on the right.

    Parameters
    ----------
    ctx : Context

    Returns
    -------
    a, b : ndarray, shape (E, 3)
    plate : ndarray of int, shape (E,)
    """
    if ctx.continents is None:
        return ctx.world.geometry.edges
    clip = ctx.data.margins
    mid = sphere.normalize(clip.plate_a + clip.plate_b)
    sea = ~ctx.continents.contains(mid)
    return (np.concatenate([clip.plate_a[sea], clip.margin_b]),
            np.concatenate([clip.plate_b[sea], clip.margin_a]),
            np.concatenate([clip.plate_owner[sea], clip.margin_plate]))


#: Gauss-Legendre points per piece of edge (pieces no longer than the grid step).
GAUSS_POINTS = 3
#: Nodes per side of the stencil round each point whose oceanic nodes of the plate are fitted.
STENCIL = 6


def boundary_torque(ctx, grid, a, b, owner) -> np.ndarray:
    """``R^2 oint F dr`` round each plate's oceanic region, ``F`` read one-sided from the
    grid (see the module), shape (P, 3), N m.

    The integral is linear in ``F`` at the grid's nodes, so it is kept as a map (built
    once per world and grid, :class:`BoundaryMap`) and applied to the ridge push of each
    physics.

    Parameters
    ----------
    ctx : Context
    grid : AgeGrid
    a, b : ndarray, shape (E, 3)
        The region's edges, ocean on the left.
    owner : ndarray of int, shape (E,)
        The plate of each edge.

    Returns
    -------
    ndarray, shape (P, 3)
    """
    m = ctx.data.derived(("ridge boundary map", id(grid)),
                         lambda: boundary_map(ctx, grid, a, b, owner))
    # a small map is composed once with the cooling lookups' spline, so that every
    # physics (rank, a Monte Carlo draw) costs a product with its 400 knot values; a large
    # one reads the lookup at its nodes (composing would cost more than it saves). Which
    # one depends on the map alone, so the numbers do not depend on the order of calls.
    if m.size <= KNOT_MAP_MAX_SIZE:
        return m.torque_from_knots(ctx.cooling.knot_values[0])
    return m.torque(ctx.cooling.ridge_push_lookup)


@dataclass(frozen=True, eq=False)
class BoundaryMap:
    """The ridge push line integral as a linear map of ``F`` at grid nodes.

    Attributes
    ----------
    parts : tuple of (ages, G, plate)
        ``ages`` (U,): the age (Myr; 0 where the grid has none) of each node a part reads;
        ``G`` (U, 3): the torque (N m) per N/m of ridge push at the node, summed over the
        cells whose fits read it; ``plate`` (U,): the plate that torque acts on. A node
        may appear in more than one part.
    n_plates : int
    """

    parts: tuple
    n_plates: int

    @property
    def size(self) -> int:
        """Entries of the map's torque arrays (its cost to apply)."""
        return int(sum(G.size for _, G, _ in self.parts))

    @cached_property
    def knot_map(self) -> np.ndarray:
        """The torque per unit ridge push at each knot of the cooling lookups' spline,
        shape (P, 3, LOOKUP_NODES), so that a physics needs only its knot values (a Monte
        Carlo draw: 3P x 400 numbers, not the grid).

        The spline is piecewise cubic, ``F(s) = sum_p c_pj (s - s_j)^(3 - p)`` on interval
        j, with coefficients ``c`` linear in the knot values (``c = C y``, fixed by the
        knots): the map sums each node's weight times ``(s - s_j)^(3 - p)`` into its
        interval, then applies ``C``.
        """
        from scipy.interpolate import CubicSpline

        from ..lithosphere import Cooling, lookup_knots
        knots = lookup_knots()
        C = CubicSpline(knots, np.eye(len(knots))).c          # (4, J, knots)
        J = C.shape[1]
        GE = np.zeros((self.n_plates * 3, 4 * J))
        for ages, G, plate in self.parts:
            x = Cooling._root_age(ages)
            j = np.clip(np.searchsorted(knots, x, side="right") - 1, 0, J - 1)
            dx = x - knots[j]
            rows = 3 * plate[:, None] + np.arange(3)[None, :]                    # (U, 3)
            for p in range(4):
                key = (rows * (4 * J) + (4 * j + p)[:, None]).ravel()
                GE += np.bincount(key, (G * (dx ** (3 - p))[:, None]).ravel(),
                                  GE.size).reshape(GE.shape)
        # (3P, 4J) @ (4J, knots), with C's (p, j) order matching 4 j + p
        return (GE @ np.transpose(C, (1, 0, 2)).reshape(4 * J, -1)).reshape(
            self.n_plates, 3, -1)

    def torque_from_knots(self, knot_values) -> np.ndarray:
        """Torque (N m, shape (P, 3)) for ridge push given at the lookups' knots.

        Parameters
        ----------
        knot_values : ndarray, shape (LOOKUP_NODES,)
            :attr:`torque.lithosphere.Cooling.knot_values` (its first).

        Returns
        -------
        ndarray, shape (P, 3)
        """
        return self.knot_map @ knot_values

    def torque(self, ridge_push) -> np.ndarray:
        """Torque (N m, shape (P, 3)) for a ridge push law.

        Parameters
        ----------
        ridge_push : callable
            ``ridge_push(age_myr) -> N/m`` (a cooling model's lookup).

        Returns
        -------
        ndarray, shape (P, 3)
        """
        out = np.zeros((self.n_plates, 3))
        for ages, G, plate in self.parts:
            t = G * ridge_push(ages)[:, None]
            out += np.stack([np.bincount(plate, t[:, i], self.n_plates) for i in range(3)],
                            axis=1)
        return out


def boundary_map(ctx, grid, a, b, owner) -> BoundaryMap:
    """Build the :class:`BoundaryMap` of the oceanic edges ``a -> b`` of plates ``owner``.

    Edges longer than half the grid step are cut into pieces no longer than the step, each
    integrated by :data:`GAUSS_POINTS`-point Gauss-Legendre, shorter ones by their
    midpoint. For every grid cell that holds points of a plate, a quadratic surface about
    the cell's centre is fitted by weighted least squares (weights ``exp(-(d/h)^2)``) to
    ``F`` at the plate's oceanic nodes of the :data:`STENCIL` x :data:`STENCIL` stencil
    round the cell and evaluated at its points; a plane where fewer than six nodes are
    valid or they do not hold a quadratic; their weighted mean where fewer than three. A
    cell whose stencil has no valid node (an oceanic sliver narrower than the grid step)
    takes a stencil twice as wide, then the oceanic nodes of any plate.

    Parameters
    ----------
    ctx : Context
    grid : AgeGrid
    a, b : ndarray, shape (E, 3)
    owner : ndarray of int, shape (E,)

    Returns
    -------
    BoundaryMap
    """
    step = np.radians(min(abs(grid.lat[1] - grid.lat[0]), abs(grid.lon[1] - grid.lon[0])))
    pa, pb, piece = sphere.densify_arcs(a, b, step)
    n, theta = sphere.arc_pole(pa, pb)
    keep = theta > 1e-15
    pa, n, theta, piece = pa[keep], n[keep], theta[keep], piece[keep]
    u = np.cross(n, pa)                                    # along the arc, at its start
    pts, drs, plates = [], [], []
    long = theta > 0.5 * step
    for sel, k in ((long, GAUSS_POINTS), (~long, 1)):
        x, wq = np.polynomial.legendre.leggauss(k)
        t = 0.5 * (x + 1)[None, :] * theta[sel, None]                      # (N, k)
        ct, st = np.cos(t)[..., None], np.sin(t)[..., None]
        pts.append((ct * pa[sel, None] + st * u[sel, None]).reshape(-1, 3))
        d = (-st * pa[sel, None] + ct * u[sel, None]) * (0.5 * theta[sel, None] * wq)[..., None]
        # the rule's weights made to integrate dr exactly (to b - a), so that a uniform F
        # makes no torque round a closed edge
        exact = np.cos(theta[sel])[:, None] * pa[sel] + np.sin(theta[sel])[:, None] * u[sel] \
            - pa[sel]
        d += ((exact - d.sum(axis=1)) / k)[:, None, :]
        drs.append(d.reshape(-1, 3))
        plates.append(np.repeat(owner[piece[sel]], k))
    xyz, dr, plate = np.concatenate(pts), np.concatenate(drs), np.concatenate(plates)
    P = ctx.world.geometry.n_plates
    if not len(xyz):
        return BoundaryMap((), P)
    lon, lat = sphere.xyz_to_lonlat(xyz)
    dlon, dlat = grid.lon[1] - grid.lon[0], grid.lat[1] - grid.lat[0]
    fi = (np.mod(lon - grid.lon[0], 360.0) if grid.global_lon else lon - grid.lon[0]) / dlon
    fj = (lat - grid.lat[0]) / dlat
    ci, cj = np.floor(fi).astype(np.int64), np.floor(fj).astype(np.int64)
    # cells in grid order (row, column, then plate), so that a chunk of them reads a band
    # of rows
    key = ((cj + 1) * (len(grid.lon) + 2) + (ci + 1)) * P + plate.astype(np.int64)
    cells, member = np.unique(key, return_inverse=True)
    first = np.zeros(len(cells), np.int64)
    first[member[::-1]] = np.arange(len(member))[::-1]
    cplate, cci, ccj = plate[first], ci[first], cj[first]
    clon = grid.lon[0] + (cci + 0.5) * dlon
    clat = grid.lat[0] + (ccj + 0.5) * dlat
    # each point's offset (grid steps, east and north) from its cell's centre, and the
    # cell's sum of dr times the surface's terms there: D (cells, 3, 6)
    ex = (np.mod(lon - clon[member] + 180.0, 360.0) - 180.0) / abs(dlat) \
        * np.cos(np.radians(clat[member]))
    ey = (lat - clat[member]) / abs(dlat)
    D = np.empty((len(cells), 3, len(BASIS)))
    for j, (a_, b_) in enumerate(BASIS):
        term = ex ** a_ * ey ** b_
        for i in range(3):
            D[:, i, j] = np.bincount(member, dr[:, i] * term, len(cells))
    D *= ctx.R ** 2
    parts = []
    left = np.arange(len(cells))
    for m, same in ((STENCIL, True), (2 * STENCIL, True), (2 * STENCIL, False)):
        if not len(left):
            break
        done = np.zeros(len(left), bool)
        for c in range(0, len(left), CHUNK):
            sel = left[c:c + CHUNK]
            part, done[c:c + CHUNK] = _stencil_map(ctx, grid, cci[sel], ccj[sel], clat[sel],
                                                   cplate[sel], m, same, D[sel])
            parts.append(part)
        left = left[~done]
    return BoundaryMap(tuple(parts), P)


def _unique(flat):
    """The distinct values of ``flat`` (non-negative ints, in no particular order) and each
    entry's index into them: :func:`numpy.unique` without its sort, by marks in a scratch
    array over the values' range (for a chunk of cells in grid order, a band of rows)."""
    flat = flat.ravel()
    base = flat.min()
    local = flat - base
    mark = np.empty(int(local.max()) + 1, np.int32)
    entry = np.arange(flat.size, dtype=np.int32)
    mark[local] = entry                        # one entry of each value is written last...
    first = local[mark[local] == entry]        # ...and stands for it, whichever it is
    mark[first] = np.arange(len(first), dtype=np.int32)
    return first + base, mark[local]


#: Boundary maps up to this many entries are composed with the cooling spline (the demo's:
#: 88,000; the 100k-vertex benchmark world's at 0.1 degree: 910,000, which reads its 300,000
#: nodes' ridge push in 9 ms, a fifth of what composing costs).
KNOT_MAP_MAX_SIZE = 250_000
#: The fitted surface's terms, as powers of (x, y): a quadratic, whose first three are
#: the plane.
BASIS = ((0, 0), (1, 0), (0, 1), (2, 0), (1, 1), (0, 2))
#: Cells fitted at a time: their scratch arrays stay near 2 MB, which the allocator reuses
#: chunk after chunk (10,000 cells at a time took 10 % longer and 40 MB more on the
#: 100k-vertex world at 0.1 degree, from memory touched for the first time).
CHUNK = 2500


def _stencil_map(ctx, grid, ci, cj, clat, plate, m, same_plate, D):
    """For cells ``(ci, cj)`` of plates ``plate``: the part ``(ages, G, plate)`` of the
    :class:`BoundaryMap` that their m x m stencils' fits make, and whether each cell's
    stencil had a valid node (n,).

    With ``c = A^-1 X^T W F`` the fitted surface's coefficients and ``D`` (n, 3, 6) each
    cell's sum of ``dr`` times the surface's terms, the torque per unit ``F`` at the
    stencil's nodes is ``K = D A^-1 X^T W``, computed as ``(A^-1 D^T)^T X^T W`` (three
    right-hand sides, not k), and summed per node into ``G``."""
    nlat, nlon = len(grid.lat), len(grid.lon)
    di = np.arange(m) - (m // 2 - 1)
    I = ci[:, None, None] + di[None, None, :]                              # (n, m, m)
    J = cj[:, None, None] + di[None, :, None]
    I = np.mod(I, nlon) if grid.global_lon else np.clip(I, 0, nlon - 1)
    I, J = np.broadcast_arrays(I, J)
    inside = (J >= 0) & (J < nlat)
    J = np.clip(J, 0, nlat - 1)
    flat = (J * nlon + I).reshape(len(ci), m * m)
    nodes, inverse = _unique(flat)
    inverse = inverse.reshape(flat.shape)
    node_age = grid.age_myr.ravel()[nodes]
    # the grid's nodes are located once per grid (plates and continents), each stencil
    # reads its own
    node_ok = np.isfinite(node_age) & ~ctx.node_continental(grid).ravel()[nodes]
    n, k = len(ci), m * m
    ok = node_ok[inverse] & inside.reshape(n, k)
    node_plate = ctx.node_plates(grid).ravel()[nodes]
    if same_plate:
        ok &= node_plate[inverse] == plate[:, None]
    # offsets (in grid steps) of the nodes from the cells' centres: x east (scaled by the
    # cosine of the cell's latitude), y north
    dlat = grid.lat[1] - grid.lat[0]
    x0 = np.broadcast_to(((di - 0.5) * (grid.lon[1] - grid.lon[0]) / abs(dlat))[None, :],
                         (m, m)).ravel()
    y0 = np.broadcast_to(((di - 0.5) * np.sign(dlat))[:, None], (m, m)).ravel()
    c = np.cos(np.radians(clat))
    w = np.where(ok, np.exp(-((c[:, None] * x0) ** 2 + y0 ** 2)), 0.0)
    count = ok.sum(axis=1)
    # the normal equations from moments: sum_k w x^a y^b (a + b <= 4) for every cell in one
    # product, then scaled by cos(lat)^a (x = cos(lat) x0)
    powers = [(a_, b_) for a_ in range(5) for b_ in range(5 - a_)]
    col = {p: i for i, p in enumerate(powers)}
    S = w @ np.stack([x0 ** a_ * y0 ** b_ for a_, b_ in powers], axis=1)     # (n, 15)
    if same_plate:
        # every node a cell reads is its own plate's: G by node
        slot, g_age, g_plate = inverse, node_age, node_plate
    else:
        # cells may read other plates' nodes: G by (plate, node)
        u = len(nodes)
        key, slot = np.unique(plate[:, None] * u + inverse, return_inverse=True)
        slot = slot.reshape(inverse.shape)
        g_age, g_plate = node_age[key % u], key // u
    G = np.zeros((len(g_age), 3))

    def add(cells, K):
        # K (s, 3, k) of these cells into G
        idx = slot[cells].ravel()
        for i in range(3):
            G[:, i] += np.bincount(idx, K[:, i, :].ravel(), len(G))

    todo = count > 0
    for q, need in ((6, 6), (3, 3)):
        sel = np.nonzero(todo & (count >= need))[0]
        if not len(sel):
            continue
        basis = BASIS[:q]
        cs = c[sel]
        # A_ij = S[(a_i + a_j, b_i + b_j)] cos^(a_i + a_j), all entries at once
        moment = np.array([[col[(ai + aj, bi + bj)] for aj, bj in basis] for ai, bi in basis])
        power = np.array([[ai + aj for aj, _ in basis] for ai, _ in basis])
        A = S[sel][:, moment] * cs[:, None, None] ** power
        # well posed (the nodes hold the surface): the Cholesky factor's diagonal keeps
        # its range, with a relative jitter so that a singular matrix factorises too
        jitter = 1e-12 * np.einsum("nii->n", A)[:, None, None] * np.eye(q)
        L = np.linalg.cholesky(A + jitter)
        d = np.einsum("nii->ni", L) ** 2
        fine = d.min(axis=1) > 1e-6 * d.max(axis=1)
        idx = sel[fine]
        if len(idx):
            Y = np.linalg.solve(A[fine], np.swapaxes(D[idx, :, :q], 1, 2))     # (s, q, 3)
            # X^T (q, k) is cos(lat)^a times the fixed x0^a y0^b: fold cos into Y, and
            # make one (3s, q) x (q, k) product, not s small ones
            ca = np.stack([c[idx] ** ai for ai, _ in basis], axis=1)         # (s, q)
            P0 = np.stack([x0 ** ai * y0 ** bi for ai, bi in basis])          # (q, k)
            Yt = np.swapaxes(Y * ca[:, :, None], 1, 2).reshape(-1, q)
            add(idx, (Yt @ P0).reshape(len(idx), 3, k) * w[idx, None, :])
            todo[idx] = False
    mean = np.nonzero(todo & (count > 0))[0]
    if len(mean):
        add(mean, D[mean, :, 0, None]
            * (w[mean] / w[mean].sum(axis=1, keepdims=True))[:, None, :])
    used = np.flatnonzero(np.any(G != 0, axis=1))
    return (np.nan_to_num(g_age[used]), G[used], g_plate[used]), count > 0
def _gradient(F, ok_p, ok_m, step):
    """dF/dx along axis 1: central where both neighbours count, one-sided where one does."""
    Fp = np.roll(F, -1, axis=1)
    Fm = np.roll(F, 1, axis=1)
    central = (Fp - Fm) / (2 * step)
    fwd = (Fp - F) / step
    bwd = (F - Fm) / step
    return np.where(ok_p & ok_m, central, np.where(ok_p, fwd, np.where(ok_m, bwd, 0.0)))


def body_force_torque(grid, F, plate, ocean, n_plates, radius_m) -> np.ndarray:
    """Torque (P, 3) of the body force ``grad F`` over the ``ocean`` nodes of a grid.

    ``r x grad F dA = (F_lambda n_hat / cos(phi) - F_phi e_hat) dA_cell`` on the unit sphere
    (``e_hat``, ``n_hat`` east and north), times ``R^2`` for the physical torque.

    Parameters
    ----------
    grid : AgeGrid
        The nodes' grid.
    F : ndarray, shape (nlat, nlon)
        Ridge push (N/m) at each node.
    plate : ndarray of int, shape (nlat, nlon)
    ocean : ndarray of bool, shape (nlat, nlon)
        Nodes that carry the force.
    n_plates : int
    radius_m : float

    Returns
    -------
    ndarray, shape (P, 3)
        N m.
    """
    lam = np.radians(grid.lon)
    phi = np.radians(grid.lat)
    dlam = np.radians(np.diff(grid.lon).mean())
    dphi = np.radians(np.diff(grid.lat).mean())
    valid = ocean

    def neighbours(axis, shift, wrap):
        v = np.roll(valid, shift, axis=axis) & (np.roll(plate, shift, axis=axis) == plate)
        if not wrap:
            edge = [slice(None)] * 2
            edge[axis] = -1 if shift == -1 else 0
            v[tuple(edge)] = False
        return v & valid

    e_ok = neighbours(1, -1, grid.global_lon)
    w_ok = neighbours(1, 1, grid.global_lon)
    dF_dlam = _gradient(F, e_ok, w_ok, dlam)
    n_ok = neighbours(0, -1, False)
    s_ok = neighbours(0, 1, False)
    dF_dphi = _gradient(F.T, n_ok.T, s_ok.T, dphi).T

    area = grid.cell_areas()
    cos_phi = np.cos(phi)[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        b = np.where(cos_phi > 1e-12, dF_dlam / cos_phi, 0.0) * area   # along n_hat
    a = -dF_dphi * area                                                  # along e_hat
    a = np.where(valid, a, 0.0)
    b = np.where(valid, b, 0.0)
    sl, cl = np.sin(lam)[None, :], np.cos(lam)[None, :]
    sp, cp = np.sin(phi)[:, None], np.cos(phi)[:, None]
    # e_hat = (-sin l, cos l, 0); n_hat = (-sin p cos l, -sin p sin l, cos p)
    tx = -a * sl - b * sp * cl
    ty = a * cl - b * sp * sl
    tz = b * cp
    idx = plate.ravel()
    out = np.stack([np.bincount(idx, weights=t.ravel(), minlength=n_plates)
                    for t in (tx, ty, tz)], axis=1)
    return out * radius_m ** 2
