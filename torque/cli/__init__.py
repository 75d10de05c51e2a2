"""The ``torque`` command: a thin layer over the library.

One module per group of commands, each with an ``add_parser(sub)`` that declares its
commands and a ``run_*`` function per command: :mod:`~torque.cli.world` (check),
:mod:`~torque.cli.kinematics` (frame, field, boundaries), :mod:`~torque.cli.physics`
(cooling, torques), :mod:`~torque.cli.balance` (fit, predict, rank),
:mod:`~torque.cli.stages` (stages),
:mod:`~torque.cli.figures` (map, demo). Terminal tables are in :mod:`torque.present.text`.
Every command reads its inputs through :mod:`torque.io`, calls the library, and writes its
outputs atomically. Bad input raises :class:`torque.errors.InputError`, which ends here as
one message on stderr and exit status 2.
"""

from __future__ import annotations

import argparse
import functools
import os
import signal
import sys
import time

from .. import progress
from ..errors import TorqueError
from . import balance, figures, kinematics, physics, stages, world
from .common import EXIT_BAD_INPUT, EXIT_BROKEN_PIPE, EXIT_OK, Parser

__all__ = ["EXIT_BAD_INPUT", "EXIT_BROKEN_PIPE", "EXIT_OK", "build_parser", "main"]


def build_parser() -> Parser:
    """The argument parser of every command."""
    parser = Parser(prog="torque", description=(
        "Plate torques and Euler-pole prediction on a sphere. Results are model-dependent "
        "research estimates, not inputs to hazard or engineering decisions."))
    parser.add_argument("-q", "--quiet", action="store_true", help=QUIET)
    parser.add_argument("-v", "--verbose", action="store_true", help=VERBOSE)
    parser.add_argument("--version", action="version", version=f"torque {_version()}")
    sub = parser.add_subparsers(dest="command", required=True, parser_class=Parser)
    world.add_parser(sub)
    kinematics.add_parser(sub)
    physics.add_parser(sub)
    balance.add_parser(sub)
    stages.add_parser(sub)
    figures.add_parser(sub, main)
    for p in sub.choices.values():
        # after the command too; SUPPRESS keeps a "torque -q fit" from being undone
        p.add_argument("-q", "--quiet", action="store_true", default=argparse.SUPPRESS,
                       help=QUIET)
        p.add_argument("-v", "--verbose", action="store_true", default=argparse.SUPPRESS,
                       help=VERBOSE)
    return parser


def _version() -> str:
    from .._version import __version__
    return __version__


VERBOSE = ("every note on its own line (notes of one kind on many plates are otherwise "
           "summarised in one line; a fit's JSON keeps them all)")
QUIET = ("no progress bars (they show on stderr only when it is a terminal, for work that "
         "takes more than a moment)")


def _terminate(signum, frame):
    # Raising unwinds the stack, so atomic writers remove their temporary files.
    raise SystemExit(128 + signum)


@functools.lru_cache(maxsize=1)
def _parser() -> Parser:
    # built once per process: parsing leaves it as it was (the demo runs 17 commands)
    return build_parser()


def main(argv=None) -> int:
    """Run the ``torque`` command; returns the exit status.

    A world read by one command is read again by the next only if one of its files changed
    (:func:`torque.workflows.load_inputs`), so many commands in one process (the demo, a
    notebook) read and check it once.

    Parameters
    ----------
    argv : list of str, optional
        The arguments (default ``sys.argv[1:]``).

    Returns
    -------
    int
        0 on success; 2 on bad input or usage, with one message on stderr naming the file
        and what is wrong; 141 (quietly) when the reader of standard output goes away
        (``torque cooling --json | head``). SIGTERM removes partly written outputs.
    """
    parser = _parser()
    argv = list(sys.argv[1:] if argv is None else argv)
    args = parser.parse_args(argv)
    args.argv, args.started = argv, time.time()        # for the run manifest
    was_quiet = progress.is_quiet()
    progress.set_quiet(was_quiet or args.quiet)
    try:
        previous = signal.signal(signal.SIGTERM, _terminate)
    except ValueError:          # not the main thread: leave the handler alone
        previous = None
    try:
        return args.func(args)
    except TorqueError as exc:
        print(f"torque {args.command}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except BrokenPipeError:
        _silence_stdout()
        return EXIT_BROKEN_PIPE
    except MemoryError:
        print(f"torque {args.command}: not enough memory for this work; use a coarser grid "
              "step or fewer samples", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as exc:
        # a file that cannot be read or written (permissions, a full disk, ...)
        where = exc.filename or "a file"
        print(f"torque {args.command}: {where}: {exc.strerror or exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    finally:
        progress.set_quiet(was_quiet)
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


def _silence_stdout():
    """Point stdout at /dev/null so that the interpreter's final flush does not fail."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
