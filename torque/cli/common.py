"""What the command modules share: exit statuses, argument types, and loading inputs."""

from __future__ import annotations

import argparse
import sys
from typing import TYPE_CHECKING
from pathlib import Path

import numpy as np

__all__ = ["EXIT_BROKEN_PIPE", "Parser", "arg_type", "count", "positive", "inputs",
           "INPUT_ARGS", "manifest", "motions_for", "frame_warning"]

if TYPE_CHECKING:                       # imported when a command runs (fast --help)
    from ..io import Inputs


EXIT_OK, EXIT_BAD_INPUT = 0, 2
EXIT_BROKEN_PIPE = 141     # 128 + SIGPIPE, what a shell reports for a reader that went away


class Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors exit 2 with a short message, no traceback."""

    def error(self, message):
        """Print the usage and the message on stderr, and exit with status 2.

        Parameters
        ----------
        message : str
        """
        self.print_usage(sys.stderr)
        self.exit(EXIT_BAD_INPUT, f"torque: error: {message}\n")


def arg_type(convert, noun, ok, rule):
    """An argparse type: ``convert`` the text, then require ``ok`` of the value.

    Parameters
    ----------
    convert : callable
        Text to value (raising ValueError).
    noun : str
        What the value is, for the message ("a number").
    ok : callable
        ``ok(value) -> bool``.
    rule : str
        What is wrong when ``ok`` fails.

    Returns
    -------
    callable
    """
    def parse(text: str):
        try:
            value = convert(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not {noun}") from None
        if not ok(value):
            raise argparse.ArgumentTypeError(f"{text} {rule}")
        return value
    return parse


#: sample counts and seeds
count = arg_type(int, "a whole number", lambda n: n >= 0, "is negative; give 0 or more")
#: grid steps and spacings
positive = arg_type(float, "a number", lambda x: bool(np.isfinite(x) and x > 0),
                    "must be a finite number above 0")


def inputs(args, path=None, *, valid: bool = True) -> Inputs:
    """The inputs of the world named on the command line, read and checked once per
    process (:func:`torque.workflows.load_inputs`) and, with ``valid``, refused if it has
    errors (:func:`torque.validate.require_valid`).

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line.
    path : str or Path, optional
        The world file (default ``args.world``).
    valid : bool

    Returns
    -------
    Inputs
    """
    from ..workflows import load_inputs
    return load_inputs(Path(path if path is not None else args.world), valid=valid)


#: Arguments of any command that name input files.
INPUT_ARGS = ("world", "hypothesis", "motions", "coefficients", "covariance", "fit",
              "predicted", "points", "physics", "geojson")


def manifest(args, data=None) -> dict:
    """The run manifest of this command (see :mod:`torque.io.manifest`): its command line,
    every input file named on it and every data file of its world, its seed.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line (``torque.cli.main`` records ``argv`` and the start time
        on it).
    data : Inputs, optional
        The world read, whose data files are inputs too.

    Returns
    -------
    dict
    """
    from ..io.manifest import run_manifest
    files = [getattr(args, a, None) for a in INPUT_ARGS]
    files += list(getattr(args, "hypotheses", None) or [])
    if data is not None:
        files += [p for p in data.world.paths.values() if p is not None]
    resampled = any(getattr(args, a, 0) for a in ("bootstrap", "monte_carlo",
                                                  "physics_samples"))
    seeds = {"resampling": args.seed} if resampled else {}
    return run_manifest([getattr(args, "argv", [])], files, seeds,
                        getattr(args, "started", None))


def motions_for(path, world):
    """``(Motions, omega)``: a motions file and its angular velocities (rad/s) in world
    plate order.

    Parameters
    ----------
    path : str or Path
        A motions CSV.
    world : World

    Returns
    -------
    motions : Motions
    omega : ndarray, shape (P, 3)
    """
    from ..io import read_motions
    motions = read_motions(path)
    return motions, motions.for_world(world)


def frame_warning(motions) -> str | None:
    """A warning when observed motions are evidently relative to a fixed plate (one plate
    exactly at rest), since drag is taken relative to the mantle; None otherwise.

    Parameters
    ----------
    motions : Motions

    Returns
    -------
    str or None
    """
    rest = motions.plates_at_rest
    if len(rest) != 1:
        return None
    return (f"{motions.source}: plate {rest[0]!r} is exactly at rest, so these motions look "
            f"relative to it; drag acts relative to the mantle, so pass --free-frame to fit "
            f"the mantle's rotation in this frame (or --mantle-rotation if it is known); "
            f"moving the motions to no-net-rotation first is not neutral, since a hypothesis "
            f"with unequal drag predicts a net rotation of its own")
