"""Figures and the demo: ``map`` (maps and charts) and ``demo`` (the whole job)."""

from __future__ import annotations

from ..errors import InputError
from .common import EXIT_OK, inputs, motions_for


def add_parser(sub, main) -> None:
    """Add the ``map`` and ``demo`` commands to the subparsers ``sub``; ``main`` is the
    command line's entry point, which the demo runs its steps through.

    Parameters
    ----------
    sub : argparse subparsers
    main : callable
        :func:`torque.cli.main`.
    """
    from ..present.maps import KINDS
    p = sub.add_parser("map", help="maps and charts",
                       description="Draw a map or chart (PNG, SVG or PDF). Kinds: "
                       + "; ".join(f"{k}: {v.shows}" for k, v in KINDS.items()) + ".")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("--kind", required=True, choices=list(KINDS))
    p.add_argument("--motions", help="observed motions CSV")
    p.add_argument("--predicted", help="predicted motions CSV (from torque predict)")
    p.add_argument("--fit", help="output of torque fit")
    p.add_argument("--hypothesis", help="hypothesis file (TOML)")
    p.add_argument("-o", "--output", required=True, help="output file (.png, .svg, .pdf)")
    p.set_defaults(func=run_map)

    p = sub.add_parser("demo", help="the whole job on the bundled demo planet",
                       description="Run check, cooling, torques, fits of every hypothesis, "
                       "ranking, prediction, velocity field, boundary motion, maps and the "
                       "report on the bundled invented planet (synthetic data), into OUTDIR.")
    p.add_argument("outdir", nargs="?", default="torque-demo",
                   help="output folder (default torque-demo); must be empty")
    p.add_argument("--force", action="store_true",
                   help="write into a folder that holds other files (never deletes any)")
    p.set_defaults(func=lambda args: run_demo(args, main))


def run_map(args) -> int:
    """Run ``torque map``: check the inputs against the kind's needs, read them, draw.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        The exit status (0).
    """
    from .. import progress
    from ..io import load_hypothesis, output_suffix, read_fit
    from ..present.maps import KINDS, MapInputs
    output_suffix(args.output, (".png", ".svg", ".pdf"))
    kind = KINDS[args.kind]
    given = {k for k in ("motions", "predicted", "fit", "hypothesis") if getattr(args, k)}
    missing = [k for k in kind.needs if k not in given]
    if missing:
        raise InputError(f"a {args.kind} map needs {', '.join('--' + m for m in missing)}")
    extra = sorted(given - set(kind.allows))
    if extra:
        raise InputError(f"{', '.join('--' + e for e in extra)} make(s) no sense for a "
                         f"{args.kind} map", hint=f"a {args.kind} map shows {kind.shows}")
    data = inputs(args)
    world = data.world
    given_inputs = MapInputs(
        data,
        motions_for(args.motions, world)[1] if args.motions else None,
        motions_for(args.predicted, world)[1] if args.predicted else None,
        read_fit(args.fit, world.plate_names) if args.fit else None, args.fit,
        load_hypothesis(args.hypothesis) if args.hypothesis else None)
    with progress.task(f"drawing the {args.kind} map"):
        kind.draw(given_inputs, args.output)
    print(f"wrote {args.output}")
    return EXIT_OK


def run_demo(args, main) -> int:
    """Run ``torque demo``.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.
    main : callable
        :func:`torque.cli.main`.

    Returns
    -------
    int
        The exit status (0).
    """
    from ..demo import run
    run(main, args.outdir, force=args.force)
    return EXIT_OK
