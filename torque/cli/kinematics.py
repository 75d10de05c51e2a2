"""Kinematics commands: ``frame`` (reference frames), ``field`` (velocity fields) and
``boundaries`` (relative motion along boundaries)."""

from __future__ import annotations

import argparse


from ..errors import InputError
from ..present import text
from .common import EXIT_OK, inputs, positive

__all__ = ["FIELD_SUFFIXES", "add_parser", "run_frame", "run_field", "run_boundaries"]

FIELD_SUFFIXES = (".csv", ".geojson", ".json", ".nc")


def add_parser(sub) -> None:
    """Add the ``frame``, ``field`` and ``boundaries`` commands to the subparsers ``sub``.

    Parameters
    ----------
    sub : argparse subparsers
    """
    from ..workflows import MIN_RUN_KM
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
    from ..io import output_suffix, write_motions
    from ..workflows import change_frame
    if args.old_world is not None or args.motions is None:
        motions = args.world if args.old_world is not None else "MOTIONS"
        world = args.old_world or args.world
        raise InputError("the world file comes first: torque frame "
                         f"{world} {motions} --to {args.to} -o {args.output}")
    output_suffix(args.output, (".csv",))
    data = inputs(args)
    out, before, after = change_frame(data, args.motions, args.to)
    write_motions(args.output, out, data.world.plate_names)
    print(f"net rotation of {args.motions}: {text.pole(before)}")
    print(f"net rotation in the new frame: {text.pole(after)}")
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
    from ..io import output_suffix, read_points, write_csv, write_field, write_points_geojson
    from ..workflows import velocity_field
    suffix = output_suffix(args.output, FIELD_SUFFIXES)
    data = inputs(args)
    f = velocity_field(data, args.motions, args.step,
                       read_points(args.points) if args.points else None)
    lon, lat, names, ve, vn = f["lon"], f["lat"], f["names"], f["ve_mm_yr"], f["vn_mm_yr"]
    speed, azimuth = f["speed_mm_yr"], f["azimuth_deg"]
    if suffix == ".csv":
        write_csv(args.output, {"lon": lon, "lat": lat, "plate": names, "ve_mm_yr": ve,
                                "vn_mm_yr": vn, "speed_mm_yr": speed, "azimuth_deg": azimuth})
    elif suffix in (".geojson", ".json"):
        write_points_geojson(args.output, lon, lat, {
            "plate": names, "ve_mm_yr": ve, "vn_mm_yr": vn, "speed_mm_yr": speed,
            "azimuth_deg": azimuth})
    else:
        write_field(args.output, data.world, lon, lat, f["plate"], ve, vn, f["grid"])
    print(f"velocity at {len(lon):,} points: speed {speed.min():.2f} to {speed.max():.2f} "
          f"mm/yr, mean {speed.mean():.2f} mm/yr; wrote {args.output}")
    return EXIT_OK


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
    from ..workflows import TRANSFORM_WITHIN_DEG, boundary_motion
    output_suffix(args.output, (".csv",))
    if args.geojson:
        output_suffix(args.geojson, (".geojson", ".json"))
    bm = boundary_motion(inputs(args), args.motions, args.spacing_km, args.classify,
                         args.min_run_km)
    boundaries, unresolved, synthesised = bm.boundaries, bm.unresolved, bm.synthesised
    lon = bm.columns["lon"]
    write_csv(args.output, bm.columns)
    if args.geojson:
        write_boundaries_geojson(args.geojson, bm.for_geojson())
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
