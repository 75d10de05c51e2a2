"""Basal drag over a mantle at rest: traction ``-C v`` on the base of the plate.

For a plate turning at ``omega`` the torque is ``-C R^4 D omega`` with ``D = int (I - r r^T)
dA`` over the region on the unit sphere, exact for the whole plate and for its oceanic or
continental part (continents clipped to plates exactly, :mod:`torque.continents`).
The coefficient C is in Pa s/m (for a channel of thickness h and viscosity eta, C = eta/h).

With ``coupling = "age"`` (oceanic drag only) the coupling varies with the sea floor's age:
a low-viscosity channel runs from the base of the thermal lithosphere, ``h_L(t) = 2.32
sqrt(kappa t)`` (Turcotte and Schubert 2002, eq. 4-127; capped at the plate thickness of
the plate model, and at 90 % of the channel's base), down to a fixed depth ``H``
(``channel_depth_km``, default 300), so ``C(t) = eta / (H - h_L(t))`` and the coefficient
is C at ``reference_age_myr`` (default 60): ``C(t) = C (H - h_L(t_ref)) / (H - h_L(t))``.
Old, thick lithosphere couples more. The drag tensor is then a sum over the age grid's
oceanic nodes, ``sum_i w(t_i) a_i (I - r_i r_i^T)`` (a discretisation: its error is that of
the grid near plate edges and margins, and it tends to the exact tensor as the weights
tend to 1, tested); with uniform coupling it stays the exact polygon tensor.

With ``coupling = "grid"`` the coupling is the world's ``drag_coupling`` grid (Pa s/m per
node, e.g. a channel viscosity over its thickness, C = eta / h), in any region, and the
coefficient is a dimensionless factor on it. The tensor is the grid sum ``sum_i C_i a_i
(I - r_i r_i^T)`` over the region's nodes of each plate; a uniform grid gives the exact
tensor times C to the grid's error at plate edges (tested: 0.028 % median, 0.057 % max
at 0.5 degree on the demo, 0.0075 % and 0.020 % at 0.25 degree).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..euler import MYR_S
from .base import ForceTerm, empty_term

__all__ = ["KIND", "UNIT", "GRID_UNIT", "KEYS", "CHOICES", "DEFAULTS", "POSITIVE",
           "LITHOSPHERE_FACTOR", "default_label", "resisting_blocks", "diagonal_blocks",
           "region_notes", "build", "age_weight", "weighted_tensor"]

KIND = "drag"
UNIT = "Pa s/m"
#: With coupling = "grid" the coefficient is a factor on the grid's coupling.
GRID_UNIT = "dimensionless"
KEYS = {"region": '"all" (default), "ocean" or "continent"',
        "coupling": '"uniform" (default, exact), "age" (oceanic drag weighted by sea-floor '
                    'age through a channel of fixed base; see the module) or "grid" (the '
                    "world's drag_coupling grid, Pa s/m; the coefficient a factor on it)",
        "channel_depth_km": "age coupling: depth of the channel's base, km (default 300)",
        "reference_age_myr": "age coupling: the age at which C is the coefficient, Myr "
                             "(default 60)"}
CHOICES = {"region": ("all", "ocean", "continent"), "coupling": ("uniform", "age", "grid")}
DEFAULTS = {"region": "all", "coupling": "uniform"}
POSITIVE = ("channel_depth_km", "reference_age_myr")
#: Thermal lithosphere thickness is this times sqrt(kappa t) (Turcotte and Schubert 2002,
#: eq. 4-127: the depth where the half-space temperature reaches 90 % of the contrast).
LITHOSPHERE_FACTOR = 2.32


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
    return f"{KIND}_{options.get('region', 'all')}"


def resisting_blocks(ctx, region) -> np.ndarray:
    """``-R^4 D`` on the diagonal blocks, shape (P, 3, P, 3).

    Parameters
    ----------
    ctx : Context
    region : {"all", "ocean", "continent"}

    Returns
    -------
    ndarray, shape (P, 3, P, 3)
    """
    return diagonal_blocks(ctx, ctx.drag_tensor(region))


def diagonal_blocks(ctx, D) -> np.ndarray:
    """``-R^4 D_p`` on the diagonal blocks of a resisting array, shape (P, 3, P, 3).

    Parameters
    ----------
    ctx : Context
    D : ndarray, shape (P, 3, 3)
        A drag tensor per plate on the unit sphere (exact, or a grid sum).

    Returns
    -------
    ndarray, shape (P, 3, P, 3)
    """
    P = D.shape[0]
    out = np.zeros((P, 3, P, 3))
    out[np.arange(P), :, np.arange(P), :] = -ctx.R ** 4 * D
    return out


def region_notes(ctx, spec) -> list:
    """What the user should know about the continent clipping behind a regional term.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
        The force entry, its options' defaults filled in.

    Returns
    -------
    list of str
    """
    if spec.options["region"] == "all":
        return []
    return [f"{spec.label}: {w}" for w in ctx.clip_warnings]


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
    extra = sorted(set(spec.options) & {"channel_depth_km", "reference_age_myr"})
    if spec.options["coupling"] == "age":
        return _age_coupled(ctx, spec)
    if extra:
        raise InputError(f"{spec.label}: {', '.join(map(repr, extra))} are for age coupling",
                         file=ctx.hypothesis.source, hint='add coupling = "age", or drop them')
    if spec.options["coupling"] == "grid":
        return _grid_coupled(ctx, spec)
    blocks = resisting_blocks(ctx, spec.options["region"])
    term = empty_term(ctx, spec, UNIT, region_notes(ctx, spec))
    term.resisting[:] = blocks
    return term


def age_weight(age_myr, physics, channel_depth_km=300.0, reference_age_myr=60.0):
    """Relative coupling ``C(t) / C(t_ref) = (H - h_L(t_ref)) / (H - h_L(t))``.

    Parameters
    ----------
    age_myr : array_like
    physics : Physics
        Its diffusivity, and the plate thickness of the plate model, set ``h_L``.
    channel_depth_km, reference_age_myr : float

    Returns
    -------
    ndarray
        Dimensionless, 1 at the reference age.

    Examples
    --------
    >>> from torque.lithosphere import Physics
    >>> w = age_weight([10.0, 60.0, 120.0], Physics())
    >>> [round(float(x), 3) for x in w]
    [0.796, 1.0, 1.022]
    """
    H = channel_depth_km * 1e3
    cap = 0.9 * H
    if physics.model == "plate":
        cap = min(cap, physics.plate_thickness_km * 1e3)

    def thickness(t):
        t = np.clip(np.asarray(t, float), 0.0, None) * MYR_S
        return np.minimum(LITHOSPHERE_FACTOR * np.sqrt(physics.diffusivity * t), cap)
    return (H - thickness(reference_age_myr)) / (H - thickness(age_myr))


def _age_coupled(ctx, spec) -> ForceTerm:
    """Oceanic drag with the age coupling, as a sum over the age grid's oceanic nodes."""
    if spec.options["region"] != "ocean":
        raise InputError(f"{spec.label}: age coupling weights oceanic drag by sea-floor age",
                         file=ctx.hypothesis.source, hint='use region = "ocean"')
    grid = ctx.age_grid_if_any()
    if grid is None:
        raise InputError(f"{spec.label}: age coupling needs sea-floor ages", file=ctx.hypothesis.source,
                         hint="give the world an age grid (or motions, to synthesise ages)")
    age = grid.age_myr
    ocean = np.isfinite(age) & ~ctx.node_continental(grid)
    H = float(spec.option("channel_depth_km", 300.0))
    t_ref = float(spec.option("reference_age_myr", 60.0))
    w = np.where(ocean, age_weight(np.nan_to_num(age), ctx.hypothesis.physics, H, t_ref), 0.0)
    D = weighted_tensor(ctx, grid, w)
    term = empty_term(ctx, spec, UNIT, [
        f"{spec.label}: coupling weighted by sea-floor age (channel base {H:g} km, C at "
        f"{t_ref:g} Myr; weights {w[ocean].min():.3g} to {w[ocean].max():.3g}), summed over "
        f"{int(ocean.sum()):,} oceanic nodes of {grid.source}"])
    term.resisting[:] = diagonal_blocks(ctx, D)
    return term


def weighted_tensor(ctx, grid, weight) -> np.ndarray:
    """``sum_i w_i a_i (I - r_i r_i^T)`` over the nodes of each plate, shape (P, 3, 3).

    Parameters
    ----------
    ctx : Context
    grid : RegularGrid
    weight : ndarray, shape (nlat, nlon)
        Per node (zero where the term does not act); ``a_i`` is the node's cell area on
        the unit sphere.

    Returns
    -------
    ndarray, shape (P, 3, 3)
        With weights 1 on every node, the grid's approximation of
        :meth:`Context.drag_tensor` ("all").
    """
    rr = ctx.node_xyz(grid).reshape(-1, 3)
    wa = (weight * grid.cell_areas()).ravel()
    plate = ctx.node_plates(grid).ravel()
    P = ctx.world.geometry.n_plates
    D = np.zeros((P, 3, 3))
    for i in range(3):
        for j in range(i, 3):
            # int (I - r r^T) dA, one component at a time (no (N, 3, 3) temporary)
            comp = (i == j) - rr[:, i] * rr[:, j]
            D[:, i, j] = D[:, j, i] = np.bincount(plate, weights=wa * comp, minlength=P)
    return D


def _grid_coupled(ctx, spec) -> ForceTerm:
    """Drag with the coupling of the world's grid (Pa s/m), the coefficient a factor."""
    grid = ctx.data.coupling
    if grid is None:
        raise InputError(f"{spec.label}: coupling = \"grid\" needs a drag coupling grid",
                         file=ctx.world.paths.get("world"),
                         hint="add 'drag_coupling' (a NetCDF grid of Pa s/m) to the world file")
    region = spec.options["region"]
    C = grid.coupling_pa_s_m
    if region != "all":
        if ctx.continents is None:
            ctx.drag_tensor(region)          # the clear error: the region needs continents
        cont = ctx.node_continental(grid)
        C = np.where(cont if region == "continent" else ~cont, C, 0.0)
    D = weighted_tensor(ctx, grid, C)
    P = D.shape[0]
    acting = C > 0
    low = C[acting].min() if acting.any() else 0.0
    term = empty_term(ctx, spec, GRID_UNIT, region_notes(ctx, spec) + [
        f"{spec.label}: coupling from {grid.source} ({low:.3g} to {C.max():.3g} Pa s/m), "
        f"summed over {int(acting.sum()):,} nodes; the coefficient is a factor on it"])
    term.resisting[np.arange(P), :, np.arange(P), :] = -ctx.R ** 4 * D
    return term
