"""Physics commands: ``cooling`` (the lithosphere cooling model against age) and ``torques``
(the torque of every force term on every plate)."""

from __future__ import annotations

import sys

import numpy as np

from ..errors import InputError
from ..present import text
from .balance import add_fit_option
from .common import EXIT_OK, inputs, manifest

__all__ = ["add_parser", "parse_ages", "run_cooling", "run_torques"]



def add_parser(sub) -> None:
    """Add the ``cooling`` and ``torques`` commands to the subparsers ``sub``.

    Parameters
    ----------
    sub : argparse subparsers
    """
    p = sub.add_parser("cooling", help="table of the lithosphere cooling model",
                       description="Sea-floor depth, surface heat flow, ridge push and slab "
                       "pull (per metre of trench, for the hypothesis' slab depth or 660 km) "
                       "against age, for the physics of a hypothesis file or the defaults.")
    p.add_argument("--physics", metavar="HYP.toml", help="hypothesis file whose [physics] "
                   "table to use")
    p.add_argument("--ages", metavar="A,B,...", help="ages in Myr (default 1 to 200)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("-o", "--output", help="also write the table as CSV")
    p.set_defaults(func=run_cooling)

    p = sub.add_parser("torques", help="torque of each force term on each plate",
                       description="Torque about the planet's centre of every force term of "
                       "a hypothesis on every plate: at the fitted coefficients with "
                       "--fit FIT.json (motions in its mantle frame), else at the term's "
                       "fixed coefficient or at 1 "
                       "for a free one (each row says which). Magnitudes in 10^25 N m, the "
                       "torque's pole, an equivalent force at the plate's centroid, and per "
                       "plate the total (with motions, the residual of the balance). "
                       "Velocity-dependent terms (drag, resistance) need --motions.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("hypothesis", help="hypothesis file (TOML)")
    p.add_argument("--motions", help="motions CSV (plate,lat,lon,rate)")
    add_fit_option(p, "torques at its fitted coefficients")
    p.add_argument("-o", "--output", required=True, help="output CSV")
    p.set_defaults(func=run_torques)


def parse_ages(text_: str) -> list:
    """``--ages A,B,...``: ages in Myr, each in (0, 300].

    Parameters
    ----------
    text_ : str

    Returns
    -------
    list of float
    """
    try:
        ages = [float(a) for a in text_.split(",") if a.strip()]
    except ValueError:
        raise InputError(f"--ages must be numbers separated by commas, got {text_!r}") \
            from None
    bad = [a for a in ages if not (0 < a <= 300)]
    if not ages or bad:
        raise InputError(f"--ages must lie in (0, 300] Myr; got {bad or text_!r}")
    return ages


def run_cooling(args) -> int:
    """Run ``torque cooling``.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        The exit status (0).
    """
    from ..io import dumps, output_suffix, write_csv
    from ..workflows import cooling
    if args.output:
        output_suffix(args.output, (".csv",))
    rows, depth, hyp = cooling(args.physics, parse_ages(args.ages) if args.ages else None)
    p = hyp.physics
    if args.json:
        print(dumps({"model": p.model, "physics": p.__dict__, "slab_depth_km": depth,
                     "rows": rows, "run": manifest(args)}))
    else:
        print(text.cooling(p, depth, rows))
    if args.output:
        write_csv(args.output, {k: np.array([r[k] for r in rows]) for k in rows[0]})
    return EXIT_OK


def run_torques(args) -> int:
    """Run ``torque torques``.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        The exit status (0).
    """
    from ..io import output_suffix, write_csv
    from ..workflows import input_warnings, torque_table

    output_suffix(args.output, (".csv",))
    data = inputs(args)
    table, pb = torque_table(data, args.hypothesis, args.motions, args.fit)
    for w in input_warnings(data, pb.motions):
        print(f"warning: {w}", file=sys.stderr)
    columns = table.columns()
    write_csv(args.output, columns)
    print(text.torques(table, pb.terms, args.fit, args.verbose))
    print(f"wrote {args.output} ({len(columns['plate'])} rows)")
    return EXIT_OK
