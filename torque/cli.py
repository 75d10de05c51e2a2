"""The ``torque`` command: a thin layer over the library.

Every command reads its inputs, calls the library, and writes its outputs through
:func:`torque.errors.atomic_write`. Bad input raises :class:`torque.errors.InputError`,
which ends here as one message on stderr and exit status 2.
"""

from __future__ import annotations

import argparse
import json
import sys

import numpy as np

from .errors import InputError

EXIT_OK, EXIT_BAD_INPUT = 0, 2


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # usage errors: exit 2 with a short message, no traceback
        self.print_usage(sys.stderr)
        self.exit(EXIT_BAD_INPUT, f"torque: error: {message}\n")


def _json_default(obj):
    if isinstance(obj, np.generic):
        return obj.item()
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    raise TypeError(type(obj).__name__)


def dumps(obj) -> str:
    return json.dumps(obj, indent=2, default=_json_default)


# ----------------------------------------------------------------------------------------
# check
# ----------------------------------------------------------------------------------------
def _cmd_check(args) -> int:
    from .validate import check_world
    from .world import load_world

    world = load_world(args.world)
    report = check_world(world)
    if args.json:
        print(dumps(report.as_dict()))
    else:
        print(format_check(report))
    if not report.ok:
        n = sum(p.severity == "error" for p in report.problems)
        print(f"torque check: {args.world}: {n} error(s); the world cannot be used as it is",
              file=sys.stderr)
        return EXIT_BAD_INPUT
    return EXIT_OK


def format_check(report) -> str:
    """Human summary of a :class:`torque.validate.CheckReport`."""
    d = report.as_dict()
    R = d["radius_m"]
    lines = [f"world {d['world']!r}: radius {R / 1e3:.1f} km, {len(d['plates'])} plates, "
             f"{d['boundaries']['count']} boundary lines"
             + (" (derived from shared edges)" if d["boundaries"]["derived"] else ""),
             f"total area {d['total_area_m2']:.6e} m2 = "
             f"{d['total_area_m2'] / d['sphere_area_m2']:.12f} of the sphere", ""]
    w = max(5, *(len(p["plate"]) for p in d["plates"]))
    lines.append(f"{'plate':<{w}}  {'area km2':>12}  {'share':>6}  {'centroid lon':>12}  "
                 f"{'lat':>7}  {'vertices':>8}  neighbours")
    for p in d["plates"]:
        lines.append(f"{p['plate']:<{w}}  {p['area_m2'] / 1e6:12.4e}  "
                     f"{100 * p['area_fraction']:5.2f}%  {p['centroid_lon']:12.3f}  "
                     f"{p['centroid_lat']:7.3f}  {p['vertices']:8d}  "
                     f"{', '.join(p['neighbours'])}")
    if d["boundaries"]["length_m_by_kind"]:
        lines.append("")
        lines.append("boundary length by kind: " + ", ".join(
            f"{k} {v / 1e3:,.0f} km" for k, v in sorted(d["boundaries"]["length_m_by_kind"]
                                                       .items())))
    lines.append("")
    if report.problems:
        lines += [str(p) for p in report.problems]
    else:
        lines.append("no problems found")
    return "\n".join(lines)


# ----------------------------------------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="torque", description=(
        "Plate torques and Euler-pole prediction on a sphere. Results are model-dependent "
        "research estimates, not inputs to hazard or engineering decisions."))
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    p = sub.add_parser("check", help="validate a world and summarise its plates",
                       description="Read a world file, check that its plates tile the sphere "
                       "and that its rings and boundaries are sound, and summarise each plate. "
                       "Exit status 2 if any error is found.")
    p.add_argument("world", help="world file (TOML)")
    p.add_argument("--json", action="store_true", help="print the report as JSON")
    p.set_defaults(func=_cmd_check)
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except InputError as exc:
        print(f"torque {args.command}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
