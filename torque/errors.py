"""Errors for bad input, and writing files so that nothing is left half-written."""

from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager
from pathlib import Path


class InputError(Exception):
    """Bad input from the user: a file, a feature or a plate that cannot be used.

    The command-line layer prints ``str(error)`` and exits with status 2; it never shows a
    traceback for this class.

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


def _umask_mode() -> int:
    """Permissions a newly created file gets (mkstemp makes files private, 0600)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def read_text(path, encoding: str = "utf-8") -> str:
    """The text of a file, or InputError naming it when it is missing or unreadable."""
    path = Path(path)
    try:
        return path.read_text(encoding=encoding)
    except FileNotFoundError:
        raise InputError("file not found", file=path) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the file: {exc}", file=path) from None


@contextmanager
def atomic_write(path, mode: str = "w", **kwargs):
    """Open a temporary file beside ``path`` and move it into place only on success.

    On any exception the temporary file is removed and ``path`` is untouched.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, mode, **kwargs) as fh:
            yield fh
        os.chmod(tmp, _umask_mode())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def atomic_path(path):
    """Context manager yielding a temporary *path* (for writers that want a file name)."""
    return _AtomicPath(Path(path))


class _AtomicPath:
    def __init__(self, path: Path):
        self.path = path

    def __enter__(self) -> Path:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{self.path.name}.", suffix=self.path.suffix,
                                   dir=self.path.parent)
        os.close(fd)
        self.tmp = Path(tmp)
        return self.tmp

    def __exit__(self, exc_type, exc, tb):
        if exc_type is None:
            os.chmod(self.tmp, _umask_mode())
            os.replace(self.tmp, self.path)
        else:
            self.tmp.unlink(missing_ok=True)
        return False
