"""Ridge push.

``form = "edge"``: a line force normal to every ridge, pushing into each of its two plates,
of magnitude ``force_per_length`` if given, else the cooling model's ridge push at the
entry's ``age_myr`` (or a ridge's own ``ridge_age_myr`` property), else its old-age limit.

``form = "distributed"`` (default): the body force ``grad F(t)`` (N/m^2), with ``F`` the
ridge push of the cooling model at the local sea-floor age ``t``, over the oceanic part of
each plate [1]_ (sec. 6-20). It is integrated on the nodes of the age grid (a
discretisation: the error falls with the grid step, see the tests); the gradient is taken
only between neighbouring nodes of the same plate that are both oceanic, so that a jump in
age across a plate boundary or a continental margin makes no force. At a continental margin
no line force is added: this treats the continent's potential energy as balancing that of
the old sea floor next to it, since continental potential energy needs a crustal model this
tool does not have. For a plate with no continent the integral equals the line integral
``R^2 oint F dr`` round the plate (Stokes' theorem on the sphere), which the tests use.

.. [1] Turcotte, D. L. and Schubert, G. (2002). *Geodynamics*, 2nd ed., sec. 6-20.
"""

from __future__ import annotations

import numpy as np

from .base import ForceTerm, empty_term

KIND = "ridge"
UNIT = "dimensionless"
KEYS = {
    "form": '"distributed" (body force from the age field, default) or "edge" (line force)',
    "force_per_length": "N/m, edge form: overrides the cooling model",
    "age_myr": "Myr, edge form: age at which the cooling model's ridge push is taken",
}
CHOICES = {"form": ("distributed", "edge")}
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
    grid, notes = ctx.ages
    notes = list(notes)
    F = ctx.cooling.ridge_push_lookup(np.nan_to_num(grid.age_myr, nan=0.0))
    plate = ctx.node_plates(grid)
    ocean = np.isfinite(grid.age_myr) & ~ctx.node_continental(grid)
    drv = body_force_torque(grid, F, plate, ocean, ctx.world.geometry.n_plates, ctx.R)
    term = empty_term(ctx, spec, UNIT, notes)
    term.driving[:] = drv
    return term


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
