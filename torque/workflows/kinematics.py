"""Recipes that need no fit: checking a world, the cooling table, reference frames,
velocity fields and the relative motion along boundaries.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ..errors import InputError, require_memory
from .cases import as_hypothesis, as_motions

#: The cooling table's default ages, Myr.
DEFAULT_COOLING_AGES = (1, 2, 5, 10, 20, 30, 40, 50, 60, 80, 100, 120, 150, 200)

#: Boundary classification's settings, for the command line's help (the same objects as
#: :mod:`torque.margins`').
from ..margins import MIN_RUN_KM, TRANSFORM_WITHIN_DEG  # noqa: E402

__all__ = ["DEFAULT_COOLING_AGES", "MIN_RUN_KM", "TRANSFORM_WITHIN_DEG", "check", "cooling",
           "net_rotation_on", "change_frame", "velocity_field", "BoundaryMotion",
           "boundary_motion"]


def check(inputs):
    """Every check of a world and its data (:func:`torque.validate.run_checks`).

    Parameters
    ----------
    inputs : Inputs
        Read without refusing errors (``load_inputs(path, valid=False)``).

    Returns
    -------
    CheckReport
    """
    from ..validate import run_checks
    return run_checks(inputs)


def cooling(physics=None, ages_myr=None) -> tuple:
    """The cooling model's table: depth, heat flow, ridge push and slab pull by age.

    Parameters
    ----------
    physics : Hypothesis or str or Path, optional
        A hypothesis whose ``[physics]`` to use (default: the documented defaults).
    ages_myr : sequence of float, optional
        Ages in Myr (default :data:`DEFAULT_COOLING_AGES`).

    Returns
    -------
    rows : list of dict
        ``age_myr``, ``depth_m``, ``heat_flow_mw_m2``, ``ridge_push_n_m``,
        ``slab_pull_n_m``.
    slab_depth_km : float
        The slab depth the slab pull is computed for.
    hypothesis : Hypothesis
    """
    from ..hypothesis import Hypothesis, cooling_table, slab_depth_km
    from ..lithosphere import Physics
    hyp = as_hypothesis(physics) if physics is not None else Hypothesis("defaults",
                                                                         Physics(), ())
    ages = DEFAULT_COOLING_AGES if ages_myr is None else ages_myr
    return cooling_table(hyp, ages), slab_depth_km(hyp), hyp


def net_rotation_on(world, omega) -> np.ndarray:
    """The net rotation (rad/s) of motions on a world (:func:`torque.euler.net_rotation`).

    Parameters
    ----------
    world : World
    omega : ndarray, shape (P, 3)
        rad/s, world plate order.

    Returns
    -------
    ndarray, shape (3,)
    """
    from ..euler import net_rotation as net
    return net(world.drag_tensor, omega)


def change_frame(inputs, motions, target: str):
    """Motions in another frame: ``"nnr"``, ``"plate:NAME"`` or ``"mantle:FIT.json"``.

    Parameters
    ----------
    inputs : Inputs
    motions : Motions or str or Path
        Of every plate of the world.
    target : str
        The no-net-rotation frame (covariance carried through), a plate held fixed (its
        uncertainty passed to the others), or the frame where a fit's mantle is at rest
        (its fitted or given mantle rotation removed; the motions' covariance kept, the
        fit's own uncertainty in the frame not added).

    Returns
    -------
    moved : Motions
    net_before, net_after : ndarray, shape (3,)
        The net rotation before and after, rad/s.
    """
    from ..euler import to_no_net_rotation
    from ..io import read_fit
    from .fitting import in_fit_frame
    world = inputs.world
    motions = as_motions(motions)
    omega = motions.for_world(world)
    before = net_rotation_on(world, omega)
    if target == "nnr":
        out, _ = to_no_net_rotation(world, motions)
    elif target.startswith("plate:"):
        name = target[len("plate:"):]
        if name not in world.plate_index:
            raise InputError(f"--to {target}: no plate named {name!r}", file=inputs.path,
                             hint=f"plates are {', '.join(world.plate_names)}")
        out = motions.relative_to(name)
    elif target.startswith("mantle:"):
        fit = read_fit(target[len("mantle:"):], world.plate_names)
        moved = in_fit_frame(omega, fit)
        order = [world.plate_index[p] for p in motions.plates]
        out = motions.with_omega(moved[order], motions.cov)
    else:
        raise InputError(f"--to {target!r} is not a frame",
                         hint="use --to nnr, --to plate:NAME or --to mantle:FIT.json")
    return out, before, net_rotation_on(world, out.for_world(world))


def velocity_field(inputs, motions, step_deg: float = 1.0, points=None) -> dict:
    """The velocity of the plate under each point, east and north, mm/yr.

    Parameters
    ----------
    inputs : Inputs
    motions : Motions or str or Path
    step_deg : float
        A cell-centred lon/lat grid of this step (ignored with ``points``).
    points : tuple of ndarray, optional
        ``(lon, lat)`` in degrees.

    Returns
    -------
    dict
        ``lon``, ``lat``, ``plate`` (index), ``names``, ``ve_mm_yr``, ``vn_mm_yr``,
        ``speed_mm_yr``, ``azimuth_deg``, and ``grid`` (``(lon, lat)`` axes, or None).
    """
    from ..euler import grid_lonlat, speed_azimuth
    from ..euler import velocity_field as field
    world = inputs.world
    omega = as_motions(motions).for_world(world)
    if points is not None:
        lon, lat = (np.asarray(a, float) for a in points)
        grid = None
    else:
        n = int(np.ceil(360 / step_deg)) * int(np.ceil(180 / step_deg))
        # coordinates, unit vectors, plate, velocities and the text of every row
        require_memory(n * 200.0, f"a velocity field at --step {step_deg:g} ({n:,} points)",
                       hint="use a larger --step")
        glon, glat = grid_lonlat(step_deg)
        LON, LAT = np.meshgrid(glon, glat)
        lon, lat = LON.ravel(), LAT.ravel()
        grid = (glon, glat)
    plate, ve, vn = field(world, omega, lon, lat)
    speed, azimuth = speed_azimuth(ve, vn)
    return {"lon": lon, "lat": lat, "plate": plate,
            "names": np.array(world.plate_names, dtype=object)[plate], "ve_mm_yr": ve,
            "vn_mm_yr": vn, "speed_mm_yr": speed, "azimuth_deg": azimuth, "grid": grid}


@dataclasses.dataclass(frozen=True, eq=False)
class BoundaryMotion:
    """Relative motion sampled along every boundary.

    Attributes
    ----------
    columns : dict
        One entry per sample: ``lon``, ``lat``, ``feature`` (the boundaries file's
        feature, -1 for a line derived from the plates), ``line`` (the line after any
        splitting), ``left``, ``right``, ``kind``, ``subducting``, ``opening_mm_yr``,
        ``along_mm_yr``, ``obliquity_deg``.
    boundaries : list of Boundary
        The lines the samples lie on (classified and split, with ``classify``).
    unresolved : list of int
        Convergent lines whose sinking plate could not be told.
    synthesised : bool
        Whether sea-floor ages were synthesised for the classification.
    """

    columns: dict
    boundaries: list
    unresolved: list
    synthesised: bool = False

    def __repr__(self) -> str:
        return (f"BoundaryMotion({len(self.columns['lon'])} samples on "
                f"{len(self.boundaries)} lines)")

    def for_geojson(self) -> list:
        """The lines to write as GeoJSON: a convergent stretch whose sinking plate is
        unresolved is no valid subduction zone, so it goes as ``unclassified``, with what
        is known, and ``torque check`` accepts the file.

        Returns
        -------
        list of Boundary
        """
        from ..world import Boundary
        return [Boundary("unclassified", b.left, b.right, b.xyz, b.feature, None,
                         {**b.properties, "motion": "convergent, sinking plate unresolved"})
                if k in self.unresolved else b for k, b in enumerate(self.boundaries)]


def boundary_motion(inputs, motions, spacing_km: float = 50.0, classify: bool = False,
                    min_run_km: float | None = None) -> BoundaryMotion:
    """Sample every boundary and give the right plate's velocity relative to the left one.

    Parameters
    ----------
    inputs : Inputs
    motions : Motions or str or Path
    spacing_km : float
    classify : bool
        Give unclassified lines kinds from their motion, piece by piece, splitting a line
        where its kind changes.
    min_run_km : float, optional
        With ``classify``: shorter stretches take their neighbours' kind (default
        :data:`torque.margins.MIN_RUN_KM`).

    Returns
    -------
    BoundaryMotion
    """
    from ..margins import MIN_RUN_KM, classify_pieces, sample_boundaries
    from ..margins import boundary_motion as motion_at
    from ..sphere import xyz_to_lonlat
    if not spacing_km > 0:
        raise InputError(f"--spacing-km must be positive, got {spacing_km:g}")
    world = inputs.world
    if not world.boundaries:
        raise InputError("the world has no boundaries", file=inputs.path)
    omega = as_motions(motions).for_world(world)
    length_m = float(world.boundary_set.length().sum()) * world.radius_m
    n = length_m / (spacing_km * 1e3)
    # points, poles, velocities and the text of every row
    require_memory(n * 400.0, f"--spacing-km {spacing_km:g} ({n:,.0f} samples)",
                   hint="use a larger --spacing-km")
    samples = sample_boundaries(world.boundaries, spacing_km * 1e3 / world.radius_m)
    motion = motion_at(world, omega, samples)
    boundaries, line = list(world.boundaries), samples.line
    unresolved, synthesised = [], False
    if classify:
        ages = inputs.ages
        if ages is None:
            ages, synthesised = _ages_for_classification(inputs, motion, omega), True
        boundaries, line = classify_pieces(world, motion, ages,
                                           MIN_RUN_KM if min_run_km is None else min_run_km)
        unresolved = [k for k, b in enumerate(boundaries)
                      if b.kind == "subduction" and b.subducting is None]
    lon, lat = xyz_to_lonlat(samples.xyz)
    columns = {
        # the feature of the boundaries file each sample lies on (-1 for lines the world
        # derived from the plates' shared edges), beside its line in the world's list
        "lon": lon, "lat": lat,
        "feature": np.array([-1 if b.feature is None else b.feature for b in boundaries],
                            np.int64)[line],
        "line": line,
        "left": np.array([b.left for b in boundaries], dtype=object)[line],
        "right": np.array([b.right for b in boundaries], dtype=object)[line],
        "kind": np.array([b.kind for b in boundaries], dtype=object)[line],
        "subducting": np.array([b.subducting or ("unresolved" if k in unresolved else "")
                                for k, b in enumerate(boundaries)], dtype=object)[line],
        "opening_mm_yr": motion.opening_mm_yr, "along_mm_yr": motion.along_mm_yr,
        "obliquity_deg": motion.obliquity_deg}
    return BoundaryMotion(columns, boundaries, unresolved, synthesised)


def _ages_for_classification(data, motion, omega):
    """Ages synthesised from the ridges a first classification finds (no age grid): the
    sinking plate of a convergent boundary is then the one with the older sea floor."""
    from ..data import WorldData
    from ..forces.context import Context
    from ..hypothesis import Hypothesis
    from ..lithosphere import Physics
    from ..margins import classify_pieces
    first, _ = classify_pieces(data.world, motion)
    world = dataclasses.replace(data.world, boundaries=tuple(first), boundaries_derived=False)
    if not any(b.kind == "ridge" for b in first):
        return None
    ctx = Context(WorldData(world, continents=data.continents),
                  Hypothesis("classification", Physics(), ()), omega)
    return ctx.ages[0]
