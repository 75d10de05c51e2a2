"""Progress on long work: bars on standard error, only where someone is watching.

Every step that can take over a second (loading and locating large grids, building terms,
fitting many hypotheses, resampling, drawing maps, the demo's steps) reports through
:func:`bar` or :func:`task`. They draw with tqdm on **stderr** (standard output stays the
command's result), and draw nothing when stderr is not a terminal (pipes, files, tests,
CI), when :func:`set_quiet` was called (``torque --quiet``, or ``-q`` on any command), or
when the work is small.
"""

from __future__ import annotations

import contextlib
import sys

__all__ = ["set_quiet", "is_quiet", "shown", "bar", "task"]

_state = {"quiet": False, "stream": None}


def set_quiet(quiet: bool = True) -> None:
    """Turn every progress bar off (or back on).

    Parameters
    ----------
    quiet : bool
    """
    _state["quiet"] = bool(quiet)


def is_quiet() -> bool:
    """Whether progress bars are off by :func:`set_quiet`.

    Returns
    -------
    bool
    """
    return _state["quiet"]


def _stream():
    return _state["stream"] or sys.stderr


def shown(total: float = 1, minimum: float = 1) -> bool:
    """Whether a bar of ``total`` steps would be drawn: not quiet, stderr a terminal, and
    at least ``minimum`` steps of work.

    Parameters
    ----------
    total, minimum : float

    Returns
    -------
    bool
    """
    stream = _stream()
    isatty = getattr(stream, "isatty", None)
    return (not _state["quiet"] and total >= minimum and callable(isatty) and bool(isatty()))


def bar(total: int, desc: str, minimum: int = 1):
    """A progress bar over ``total`` steps (a tqdm instance; ``update()`` after each).

    Parameters
    ----------
    total : int
    desc : str
        What is being done, in a few words.
    minimum : int
        Draw nothing below this many steps (short loops need no bar).

    Returns
    -------
    tqdm.tqdm
        Disabled (a no-op) unless :func:`shown`.
    """
    from tqdm import tqdm
    return tqdm(total=total, desc=desc, file=_stream(), leave=False,
                disable=not shown(total, minimum), dynamic_ncols=True)


@contextlib.contextmanager
def task(desc: str):
    """One named step of unknown length: its name while it runs, and its time after.

    Parameters
    ----------
    desc : str

    Yields
    ------
    None
    """
    with bar(1, desc) as b:
        yield
        b.update()
