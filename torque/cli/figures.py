"""Figures and the demo: ``map`` (maps and charts) and ``demo`` (the whole job)."""

from __future__ import annotations

from .common import EXIT_OK, inputs

__all__ = ["add_parser", "run_map", "run_demo"]


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
    p.add_argument("--fit", metavar="FIT.json",
                   help="output of torque fit (motions are drawn in its mantle frame)")
    p.add_argument("--frame", choices=("mantle", "motions"), default="mantle",
                   help="with --fit: draw motions in the frame where the fitted mantle is "
                   "at rest (default), or in the frame of the observed motions")
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
    from ..io import output_suffix
    from ..present.maps import KINDS
    from ..workflows import map_inputs
    output_suffix(args.output, (".png", ".svg", ".pdf"))
    given_inputs = map_inputs(inputs(args), args.kind, args.motions, args.predicted, args.fit,
                              args.hypothesis, args.frame)
    with progress.task(f"drawing the {args.kind} map"):
        KINDS[args.kind].draw(given_inputs, args.output)
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
