"""Errors for bad input and for problems of the model, and the memory guard.

Reading and writing files (the guarded readers, atomic writes) is :mod:`torque.io.files`.
"""

from __future__ import annotations

import os

__all__ = ["TorqueError", "InputError", "ModelError", "available_memory_bytes",
           "require_memory"]


class TorqueError(Exception):
    """Base of the errors this package raises on purpose, with a message a user can act on.

    The command line prints ``str(error)`` and exits with status 2; it never shows a
    traceback for this family. Catch :class:`TorqueError` to handle both kinds below.

    Parameters
    ----------
    message : str
        What is wrong, in words a user can act on.
    file : str or Path, optional
        The file the problem is in.
    where : str, optional
        The feature, plate or key inside the file (e.g. ``"feature 3 (plate 'Vell')"``).
    hint : str, optional
        How to fix it.
    """

    def __init__(self, message: str, *, file=None, where: str | None = None,
                 hint: str | None = None):
        self.message = message
        self.file = None if file is None else str(file)
        self.where = where
        self.hint = hint
        super().__init__(self.__str__())

    def __str__(self) -> str:
        head = ": ".join(p for p in (self.file, self.where) if p)
        text = f"{head}: {self.message}" if head else self.message
        if self.hint:
            text += f" ({self.hint})"
        return text


class InputError(TorqueError, ValueError):
    """Bad input from the user: a file, a feature, a plate or an option value that cannot
    be used. Also a :class:`ValueError`, so that library callers who pass a bad value can
    catch it as one.

    Parameters
    ----------
    message : str
    file : str or Path, optional
    where : str, optional
    hint : str, optional
        See :class:`TorqueError`.
    """


class ModelError(TorqueError):
    """A problem of the model itself, not of a file's format: a singular balance, a
    coefficient nothing constrains, a balance that does not converge. A sibling of
    :class:`InputError` (the input was readable; the hypothesis cannot be solved), reported
    the same way by the command line (exit status 2, the hypothesis file named).

    Parameters
    ----------
    message : str
    file : str or Path, optional
    where : str, optional
    hint : str, optional
        See :class:`TorqueError`.
    """


def available_memory_bytes() -> int:
    """Memory that can be had now: MemAvailable of /proc/meminfo, else physical memory."""
    try:
        with open("/proc/meminfo") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (ValueError, OSError, AttributeError):
        return 8 * 2 ** 30


def require_memory(n_bytes: float, what: str, hint: str | None = None,
                   fraction: float = 0.5):
    """Refuse (InputError) work whose arrays would need more than ``fraction`` of the
    memory available, before allocating any of it.

    Parameters
    ----------
    n_bytes : float
        Estimated peak memory of the work, in bytes.
    what : str
        What the work is, for the message (e.g. ``"a velocity field at 0.001 degree"``).
    """
    limit = fraction * available_memory_bytes()
    if n_bytes > limit:
        raise InputError(f"{what} needs about {_gib(n_bytes)} of memory, more than the "
                         f"{_gib(limit)} this machine can give it", hint=hint)


def _gib(n: float) -> str:
    return f"{n / 2 ** 30:,.1f} GiB" if n >= 2 ** 28 else f"{n / 2 ** 20:,.0f} MiB"
