"""Kinematics commands: ``frame`` (reference frames), ``field`` (velocity fields) and
``boundaries`` (relative motion along boundaries)."""

from __future__ import annotations

import argparse
import dataclasses

import numpy as np

from ..errors import InputError, require_memory
from . import text
from .common import EXIT_OK, inputs, motions_for, positive

FIELD_SUFFIXES = (".csv", ".geojson", ".json", ".nc")


def add_parser(sub) -> None:
    """Add the ``frame``, ``field`` and ``boundaries`` commands to the subparsers ``sub``.

    Parameters
    ----------
    sub : argparse subparsers
    """
    from ..margins import MIN_RUN_KM
    p = sub.add_parser("frame", help="change the reference frame of a set of motions",
                       description="Express plate motions in the no-net-rotation frame (the "
                       "frame in which the surface integral of r x v vanishes, computed "
                       "exactly from the plates' drag tensors), with one plate fixed, or "
                       "in the frame where a fit's mantle is at rest (its fitted or given "
                       "mantle rotation removed). Prints the net rotation before and after.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("motions", nargs="?", help="motions CSV (plate,lat,lon,rate)")
    # the order before the world came first: refused with the command in the new order
    p.add_argument("--world", dest="old_world", help=argparse.SUPPRESS)
    p.add_argument("--to", required=True, metavar="FRAME",
                   help="nnr, plate:NAME, or mantle:FIT.json (a torque fit output)")
    p.add_argument("-o", "--output", required=True, help="output motions CSV")
    p.set_defaults(func=run_frame)

    p = sub.add_parser("field", help="velocity field on a grid or at points",
                       description="Velocity of the plate under each point, east and north "
                       "in mm/yr. Output by suffix: .csv, .geojson (points) or .nc "
                       "(NetCDF, CF-style; a lat x lon grid for --step).")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("motions", help="motions CSV (plate,lat,lon,rate)")
    g = p.add_mutually_exclusive_group()
    g.add_argument("--step", type=positive, default=1.0, metavar="DEG",
                   help="cell-centred lon/lat grid step in degrees (default 1)")
    g.add_argument("--points", metavar="FILE", help="CSV of points with columns lon,lat")
    p.add_argument("-o", "--output", required=True, help="output file (.csv, .geojson, .nc)")
    p.set_defaults(func=run_field)

    p = sub.add_parser("boundaries", help="relative motion along every boundary",
                       description="Sample every boundary and give the velocity of the right "
                       "plate relative to the left one: boundary-normal (opening positive), "
                       "along-strike, and obliquity (0 opening, 90 strike-slip, 180 closing).")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("motions", help="motions CSV (plate,lat,lon,rate)")
    p.add_argument("--spacing-km", type=positive, default=50.0,
                   help="sample spacing along the lines, km (default 50)")
    p.add_argument("--classify", action="store_true",
                   help="give 'unclassified' lines kinds from their motion, piece by piece, "
                   "splitting a line where its kind changes (the output's 'line' then "
                   "numbers the lines after splitting; 'feature' still names the "
                   "boundaries file's feature)")
    p.add_argument("--min-run-km", type=positive, default=MIN_RUN_KM, metavar="KM",
                   help=f"with --classify: stretches shorter than this take their "
                   f"neighbours' kind (default {MIN_RUN_KM:g})")
    p.add_argument("--geojson", metavar="FILE",
                   help="also write the (classified) boundaries as GeoJSON")
    p.add_argument("-o", "--output", required=True, help="output CSV")
    p.set_defaults(func=run_boundaries)


def run_frame(args) -> int:
    """Run ``torque frame``.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        The exit status (0).
    """
    from ..euler import net_rotation, to_no_net_rotation
    from ..io import output_suffix, read_fit, read_motions, write_motions
    from ..workflows import in_fit_frame
    if args.old_world is not None or args.motions is None:
        motions = args.world if args.old_world is not None else "MOTIONS"
        world = args.old_world or args.world
        raise InputError("the world file comes first: torque frame "
                         f"{world} {motions} --to {args.to} -o {args.output}")
    output_suffix(args.output, (".csv",))
    world = inputs(args, args.world).world
    motions = read_motions(args.motions)
    omega = motions.for_world(world)
    target = args.to
    if target == "nnr":
        out, w_net = to_no_net_rotation(world, motions)
    elif target.startswith("plate:"):
        w_net = net_rotation(world.drag_tensor, omega)
        name = target[len("plate:"):]
        if name not in world.plate_index:
            raise InputError(f"--to {target}: no plate named {name!r}",
                             file=args.world, hint=f"plates are {', '.join(world.plate_names)}")
        out = motions.relative_to(name)
    elif target.startswith("mantle:"):
        w_net = net_rotation(world.drag_tensor, omega)
        fit = read_fit(target[len("mantle:"):], world.plate_names)
        moved = in_fit_frame(omega, fit)
        order = [world.plate_index[p] for p in motions.plates]
        # a rotation of the frame leaves the motions' covariance as it is (the fit's own
        # uncertainty in the frame is not added)
        out = motions.with_omega(moved[order], motions.cov)
    else:
        raise InputError(f"--to {target!r} is not a frame",
                         hint="use --to nnr, --to plate:NAME or --to mantle:FIT.json")
    write_motions(args.output, out, world.plate_names)
    new_net = net_rotation(world.drag_tensor, out.for_world(world))
    print(f"net rotation of {args.motions}: {text.pole(w_net)}")
    print(f"net rotation in the new frame: {text.pole(new_net)}")
    print(f"wrote {args.output}")
    return EXIT_OK


def run_field(args) -> int:
    """Run ``torque field``.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        The exit status (0).
    """
    from ..euler import grid_lonlat, speed_azimuth, velocity_field
    from ..io import output_suffix, read_points, write_csv, write_field, write_points_geojson
    suffix = output_suffix(args.output, FIELD_SUFFIXES)
    world = inputs(args).world
    _, omega = motions_for(args.motions, world)
    if args.points:
        lon, lat = read_points(args.points)
        grid = None
    else:
        n = int(np.ceil(360 / args.step)) * int(np.ceil(180 / args.step))
        # coordinates, unit vectors, plate, velocities and the text of every row
        require_memory(n * 200.0, f"a velocity field at --step {args.step:g} ({n:,} points)",
                       hint="use a larger --step")
        glon, glat = grid_lonlat(args.step)
        LON, LAT = np.meshgrid(glon, glat)
        lon, lat = LON.ravel(), LAT.ravel()
        grid = (glon, glat)
    plate, ve, vn = velocity_field(world, omega, lon, lat)
    speed, azimuth = speed_azimuth(ve, vn)
    names = np.array(world.plate_names, dtype=object)[plate]
    if suffix == ".csv":
        write_csv(args.output, {"lon": lon, "lat": lat, "plate": names, "ve_mm_yr": ve,
                                "vn_mm_yr": vn, "speed_mm_yr": speed, "azimuth_deg": azimuth})
    elif suffix in (".geojson", ".json"):
        write_points_geojson(args.output, lon, lat, {
            "plate": names, "ve_mm_yr": ve, "vn_mm_yr": vn, "speed_mm_yr": speed,
            "azimuth_deg": azimuth})
    else:
        write_field(args.output, world, lon, lat, plate, ve, vn, grid)
    print(f"velocity at {len(lon):,} points: speed {speed.min():.2f} to {speed.max():.2f} "
          f"mm/yr, mean {speed.mean():.2f} mm/yr; wrote {args.output}")
    return EXIT_OK


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


def run_boundaries(args) -> int:
    """Run ``torque boundaries``.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        The exit status (0).
    """
    from ..io import output_suffix, write_boundaries_geojson, write_csv
    from ..margins import (TRANSFORM_WITHIN_DEG, boundary_motion, classify_pieces,
                           sample_boundaries)
    from ..sphere import xyz_to_lonlat
    from ..world import Boundary
    output_suffix(args.output, (".csv",))
    if args.geojson:
        output_suffix(args.geojson, (".geojson", ".json"))
    if not args.spacing_km > 0:
        raise InputError(f"--spacing-km must be positive, got {args.spacing_km:g}")
    data = inputs(args)
    world = data.world
    if not world.boundaries:
        raise InputError("the world has no boundaries", file=args.world)
    _, omega = motions_for(args.motions, world)
    length_m = float(world.boundary_set.length().sum()) * world.radius_m
    n = length_m / (args.spacing_km * 1e3)
    # points, poles, velocities and the text of every row
    require_memory(n * 400.0, f"--spacing-km {args.spacing_km:g} ({n:,.0f} samples)",
                   hint="use a larger --spacing-km")
    samples = sample_boundaries(world.boundaries, args.spacing_km * 1e3 / world.radius_m)
    motion = boundary_motion(world, omega, samples)
    boundaries = list(world.boundaries)
    line = samples.line
    unresolved, synthesised = [], False
    if args.classify:
        ages = data.ages
        if ages is None:
            ages, synthesised = _ages_for_classification(data, motion, omega), True
        boundaries, line = classify_pieces(world, motion, ages, args.min_run_km)
        unresolved = [k for k, b in enumerate(boundaries)
                      if b.kind == "subduction" and b.subducting is None]
    lon, lat = xyz_to_lonlat(samples.xyz)
    write_csv(args.output, {
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
        "obliquity_deg": motion.obliquity_deg})
    if args.geojson:
        # a convergent stretch whose sinking plate is unresolved is no valid subduction
        # zone: it is written unclassified, with what is known, so that check accepts it
        write_boundaries_geojson(args.geojson, [
            Boundary("unclassified", b.left, b.right, b.xyz, b.feature, None,
                     {**b.properties, "motion": "convergent, sinking plate unresolved"})
            if k in unresolved else b for k, b in enumerate(boundaries)])
    kinds = {}
    for b in boundaries:
        kinds[b.kind] = kinds.get(b.kind, 0) + 1
    print(f"{len(lon):,} samples on {len(boundaries)} lines; kinds: "
          + ", ".join(f"{k} {n}" for k, n in sorted(kinds.items())))
    if args.classify:
        print(f"classified piece by piece ({args.spacing_km:g} km) and split where the kind "
              f"changes (runs under {args.min_run_km:g} km take their neighbours' kind): transform "
              f"within {TRANSFORM_WITHIN_DEG:g} deg of pure strike-slip, else ridge (opening), "
              "subduction (closing, the older sea floor sinks) or collision (closing, no sea "
              "floor on either side)" + ("; sea-floor ages synthesised from the ridges found "
                                         "and the motions" if synthesised else ""))
        if unresolved:
            print(f"sinking plate unresolved (no sea-floor ages, or sea floor of one age, on "
                  f"both sides) for {len(unresolved)} convergent line(s): "
                  f"{', '.join(map(str, unresolved))}; give the world an age grid, or set "
                  "'subducting' by hand" + ("; --geojson writes them 'unclassified'"
                                            if args.geojson else ""))
    print(f"wrote {args.output}" + (f" and {args.geojson}" if args.geojson else ""))
    return EXIT_OK
