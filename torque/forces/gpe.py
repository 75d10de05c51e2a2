"""Potential energy of continents: the line force at continental margins, and the body
force of a potential-energy gradient over continents.

A column's gravitational potential energy ``U`` (N/m) comes from its elevation and crust
(:mod:`torque.columns`); sea floor of age ``t`` has ``-F_rp(t)`` against a ridge, with
``F_rp`` the cooling model's ridge push, so the two share one zero. Without this term
every continent is treated as having the potential energy of the sea floor beside it
(see :mod:`torque.forces.ridge`).

``form = "margin"`` (default): at every continental margin (a continent edge inside a
plate) a line force of ``U_continent - U_ocean`` per metre acts on the plate, pushing
oceanward where the continent stands higher in potential energy (passive margins beside
old sea floor; Coblentz, Richardson and Sandiford 1994). The continent's elevation and
crust are read from the continental nodes of the world's topography grid 30 km inland
(or 1, 2, 3 grid steps where that reads sea floor), else they are the entry's
``elevation_m`` (default 0: a continent at sea level, crust by Airy isostasy); the sea
floor's age likewise seaward from the age field, else the entry's ``age_myr``, else the
cooling model's old-age limit.

``form = "distributed"`` (needs a topography grid): the margin force, plus the body force
``-grad U`` (N/m^2) over the continental nodes of the topography grid (orogens push
outward; Ghosh, Holt and Flesch 2009), summed on the grid like distributed ridge push:
the gradient is taken only between neighbouring continental nodes of one plate. By Stokes'
theorem on the sphere, the body force over a region equals the line force ``U`` along its
edge, ``int r x grad U dA = oint U dr``, which the tests check.

The coefficient is dimensionless (1: the forces as modelled). A continent edge that lies on
a plate boundary counts as a margin of the plate holding its midpoint: keep continent
edges off plate boundaries.

References
----------
Coblentz, D. D., Richardson, R. M. and Sandiford, M. (1994). On the gravitational potential
of the Earth's lithosphere. *Tectonics* 13, 929-945.
Ghosh, A., Holt, W. E. and Flesch, L. M. (2009). Contribution of gravitational potential
energy differences to the global stress field. *Geophys. J. Int.* 179, 787-812.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .. import sphere
from ..columns import ColumnModel
from ..errors import InputError
from .base import ForceTerm, empty_term
from .ridge import body_force_torque

__all__ = ["KIND", "UNIT", "KEYS", "CHOICES", "POSITIVE", "DEFAULTS", "PROBE_KM",
           "default_label", "column_model", "continental_gpe", "margin_force", "probe",
           "interior_torque", "build"]

KIND = "gpe"
UNIT = "dimensionless"
KEYS = {
    "form": '"margin" (line force at continental margins, default) or "distributed" '
            "(plus the body force -grad U over continents; needs a topography grid)",
    "crust_density": "kg/m3 (default 2800)",
    "reference_crust_km": "crust of a continent at sea level, km (default 35)",
    "sea_level_gpe_n_m": "potential energy of a sea-level continent minus a ridge's, N/m "
                         "(default 0)",
    "compensation_depth_km": "depth to which columns are integrated, km (default 100)",
    "elevation_m": "margin elevation where there is no topography grid, m (default 0)",
    "age_myr": "sea-floor age at margins where the age field gives none, Myr (default: "
               "the cooling model's old-age limit)",
}
CHOICES = {"form": ("margin", "distributed")}
POSITIVE = ("crust_density", "reference_crust_km", "compensation_depth_km", "age_myr")
DEFAULTS = {"form": "margin"}
#: Distance (km) inland and seaward of a margin at which elevation and age are read.
PROBE_KM = 30.0


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
    return KIND if options.get("form", "margin") == "margin" else f"{KIND}_distributed"


def column_model(ctx, spec) -> ColumnModel:
    """The column model of an entry: its options, with the hypothesis's mantle and water
    densities and gravity.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec

    Returns
    -------
    ColumnModel
    """
    ph = ctx.hypothesis.physics
    o = spec.options
    model = ColumnModel(
        crust_density=float(o.get("crust_density", 2800.0)),
        mantle_density=ph.mantle_density, water_density=ph.water_density,
        gravity=ph.gravity, reference_crust_m=float(o.get("reference_crust_km", 35.0)) * 1e3,
        compensation_depth_m=float(o.get("compensation_depth_km", 100.0)) * 1e3,
        sea_level_gpe_n_m=float(o.get("sea_level_gpe_n_m", 0.0)))
    if not model.crust_density < model.mantle_density:
        raise InputError(f"{spec.label}: crust_density ({model.crust_density:g}) must be "
                         f"below the mantle's ({model.mantle_density:g} kg/m3)",
                         file=ctx.hypothesis.source)
    return model


def continental_gpe(ctx, spec, model, elevation_m, crust_m, where) -> np.ndarray:
    """``model.continental_gpe`` with an InputError naming ``where`` for columns it cannot
    hold (no crust left, or crust below the compensation depth).

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
    model : ColumnModel
    elevation_m, crust_m : ndarray or None
    where : str
        What the columns are, for the message.

    Returns
    -------
    ndarray
        N/m.
    """
    try:
        return model.continental_gpe(elevation_m, crust_m)
    except ValueError as exc:
        raise InputError(f"{spec.label}: {where}: {exc}", file=ctx.hypothesis.source,
                         hint="deepen compensation_depth_km, or check the topography grid's "
                         "units (elevation in m, crust in km)") from None


def margin_force(ctx, spec, model, pcs) -> tuple[np.ndarray, list]:
    """``U_continent - U_ocean`` (N/m) on every margin piece, and notes.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
    model : ColumnModel
    pcs : Pieces
        Of the margins, ``n`` into the continent.

    Returns
    -------
    F : ndarray, shape (N,)
        N/m, positive oceanward.
    notes : list of str
    """
    notes = []
    topo = ctx.data.topography
    if topo is not None:
        # only continental nodes speak for the continent: a sample that mixes in sea floor
        # steps further inland
        cont = ctx.node_continental(topo)
        land = dataclasses.replace(
            topo, elevation_m=np.where(cont, topo.elevation_m, np.nan),
            crust_m=None if topo.crust_m is None else np.where(cont, topo.crust_m, np.nan))
        e = probe(ctx, lambda lon, lat: land.sample(lon, lat)[0], pcs, 1.0, topo)
        c = None if topo.crust_m is None else probe(
            ctx, lambda lon, lat: land.sample(lon, lat)[1], pcs, 1.0, topo)
        bare = ~np.isfinite(e)
        if bare.any():
            lon, lat = sphere.xyz_to_lonlat(pcs.mid)
            e0, c0 = topo.sample(lon, lat)
            e = np.where(bare, e0, e)
            c = None if c is None else np.where(bare, c0, c)
    else:
        e, c = np.full(len(pcs.theta), float(spec.options.get("elevation_m", 0.0))), None
    U_c = continental_gpe(ctx, spec, model, e, c, "a continental margin")
    age = np.full(len(pcs.theta), np.nan)
    grid = ctx.age_grid_if_any()
    if grid is not None:
        age = probe(ctx, grid.sample, pcs, -1.0, grid)
    need = ~np.isfinite(age)
    F_ocean = ctx.cooling.ridge_push_lookup(np.nan_to_num(age))
    if need.any():
        if "age_myr" in spec.options:
            fill, said = ctx.cooling.ridge_push_lookup(float(spec.options["age_myr"])), \
                f"the entry's {float(spec.options['age_myr']):g} Myr"
        else:
            fill, said = ctx.cooling.ridge_push_limit_n_m(), "the cooling model's old-age limit"
        F_ocean = np.where(need, fill, F_ocean)
        notes.append(f"{spec.label}: {int(need.sum())} of {len(age)} margin pieces have no "
                     f"sea-floor age within 3 grid steps seaward; they take {said}")
    where = "topography grid" if topo is not None else \
        f"elevation {float(spec.options.get('elevation_m', 0.0)):g} m"
    notes.append(f"{spec.label}: margin force from {where}, {len(pcs.theta)} pieces, "
                 f"{np.min(U_c + F_ocean):.3g} to {np.max(U_c + F_ocean):.3g} N/m oceanward")
    # sea floor of age t has U = -F_rp(t) against a ridge
    return U_c + F_ocean, notes


def probe(ctx, sample, pcs, side, grid) -> np.ndarray:
    """A grid's value off each margin piece: :data:`PROBE_KM` into the continent (``side``
    +1) or the sea (-1), else 1, 2 and 3 grid steps out where that sample is NaN.

    Parameters
    ----------
    ctx : Context
    sample : callable
        ``sample(lon, lat) -> values`` (NaN for no data).
    pcs : Pieces
        Of the margins, ``n`` into the continent.
    side : float
    grid : RegularGrid
        Its step sets the further distances.

    Returns
    -------
    ndarray, shape (N,)
        NaN where every distance reads no data.
    """
    step_km = np.radians(abs(grid.lat[1] - grid.lat[0])) * ctx.R / 1e3
    out = np.full(len(pcs.theta), np.nan)
    for km in (PROBE_KM, step_km, 2 * step_km, 3 * step_km):
        need = ~np.isfinite(out)
        if not need.any():
            break
        xyz = sphere.step_toward(pcs.mid[need], side * pcs.n[need], km * 1e3 / ctx.R)
        out[need] = sample(*sphere.xyz_to_lonlat(xyz))
    return out


def interior_torque(ctx, spec, model) -> tuple[np.ndarray, str]:
    """Torque (P, 3) of the body force ``-grad U`` over the continental nodes of the
    topography grid, and a note.

    Parameters
    ----------
    ctx : Context
    spec : ForceSpec
    model : ColumnModel

    Returns
    -------
    torque : ndarray, shape (P, 3)
        N m.
    note : str
    """
    topo = ctx.data.topography
    if topo is None:
        raise InputError(f"{spec.label}: form = \"distributed\" needs a topography grid",
                         file=ctx.world.paths.get("world"),
                         hint="add 'topography' (NetCDF elevation_m, optionally crust_km) to "
                         'the world file, or use form = "margin"')
    cont = ctx.node_continental(topo)
    e = np.where(cont, topo.elevation_m, 0.0)
    c = None if topo.crust_m is None else np.where(cont, topo.crust_m, model.reference_crust_m)
    U = np.where(cont, continental_gpe(ctx, spec, model, e, c, f"the topography grid "
                                       f"({topo.source})"), 0.0)
    tq = body_force_torque(topo, -U, ctx.node_plates(topo), cont,
                           ctx.world.geometry.n_plates, ctx.R)
    return tq, (f"{spec.label}: body force -grad U over {int(cont.sum()):,} continental "
                f"nodes of {topo.source} (U {U[cont].min():.3g} to {U[cont].max():.3g} N/m)"
                if cont.any() else f"{spec.label}: no continental node in {topo.source}")


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
    model = column_model(ctx, spec)
    notes = []
    drv = np.zeros((ctx.world.geometry.n_plates, 3))
    if spec.options["form"] == "distributed":
        tq, note = interior_torque(ctx, spec, model)
        drv += tq
        notes.append(note)
    pcs, plate = ctx.margin_pieces()
    if len(pcs.theta):
        F, more = margin_force(ctx, spec, model, pcs)
        notes += more
        # n points into the continent: the force pushes along -n, oceanward
        drv += ctx.line_force_torque(pcs, F, -1.0, plate)
    else:
        notes.append(f"{spec.label}: no continental margin lies inside a plate")
    term = empty_term(ctx, spec, UNIT, notes)
    term.driving[:] = drv
    return term
