"""``torque check``: read a world, run every check, summarise its plates."""

from __future__ import annotations

import sys

from ..present import text
from .common import EXIT_BAD_INPUT, EXIT_OK, inputs, manifest

__all__ = ["add_parser", "run_check"]


def add_parser(sub) -> None:
    """Add the ``check`` command to the subparsers ``sub``.

    Parameters
    ----------
    sub : argparse subparsers
    """
    p = sub.add_parser("check", help="validate a world and summarise its plates",
                       description="Read a world file, check that its plates tile the sphere "
                       "and that its rings and boundaries are sound, and summarise each plate. "
                       "Exit status 2 if any error is found.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("--json", action="store_true", help="print the report as JSON")
    p.set_defaults(func=run_check)


def run_check(args) -> int:
    """Run ``torque check``; exit status 2 when the world has errors.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.

    Returns
    -------
    int
        0, or 2 when the world has errors.
    """
    from ..io import dumps
    from ..workflows import check
    data = inputs(args, valid=False)
    report = check(data)
    print(dumps({**report.as_dict(), "run": manifest(args, data)}) if args.json
          else text.check(report))
    if not report.ok:
        n = sum(p.severity == "error" for p in report.problems)
        print(f"torque check: {args.world}: {n} error(s); the world cannot be used as it is",
              file=sys.stderr)
        return EXIT_BAD_INPUT
    return EXIT_OK
