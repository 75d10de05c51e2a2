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


class ModelError(InputError):
    """A problem of the model itself, not of a file's format: a singular balance, a
    coefficient nothing constrains. A subclass of :class:`InputError`, so the command line
    reports it the same way (exit status 2, the hypothesis file named)."""


def _umask_mode() -> int:
    """Permissions a newly created file gets (mkstemp makes files private, 0600)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def check_input_file(path) -> Path:
    """``path`` as a Path, or InputError when it is missing or is a folder."""
    path = Path(path)
    if path.is_dir():
        raise InputError("is a directory, not a file", file=path)
    if not path.exists():
        raise InputError("file not found", file=path)
    return path


def read_text(path, encoding: str = "utf-8-sig") -> str:
    """The text of a file, or InputError naming it when it is missing or unreadable.

    A byte-order mark is accepted (``utf-8-sig``), as spreadsheet programs write one.
    """
    path = check_input_file(path)
    try:
        return path.read_text(encoding=encoding)
    except UnicodeDecodeError as exc:
        raise InputError(f"is not a UTF-8 text file (byte {exc.start} cannot be decoded; "
                         "a binary file?)", file=path) from None
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", file=path) from None


def read_csv_rows(path) -> list:
    """The non-blank rows of a CSV file (lists of strings), or InputError naming the file."""
    import csv
    import io
    text = read_text(path)
    if "\x00" in text:
        raise InputError("is not a CSV text file (it holds NUL bytes; a binary file?)",
                         file=path)
    try:
        return [r for r in csv.reader(io.StringIO(text, newline=""))
                if r and any(c.strip() for c in r)]
    except csv.Error as exc:
        raise InputError(f"is not a readable CSV file: {exc}", file=path) from None


def read_json(path):
    """Parse a JSON file, or InputError naming it and saying what is wrong."""
    import json
    text = read_text(path)
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"not valid JSON: {exc.msg} at line {exc.lineno}, column {exc.colno}",
                         file=path) from None
    except RecursionError:
        raise InputError("the JSON is nested too deeply to read", file=path) from None


def check_output_path(path) -> Path:
    """``path`` as a Path, or InputError when it cannot be written as a file.

    Refused: a path that is a folder, and a path under something that is not a folder.
    A missing parent folder is made when the file is written.
    """
    path = Path(path)
    if path.is_dir():
        raise InputError("is a directory; give a file name for the output", file=path)
    parent = path.parent
    while not parent.exists() and parent != parent.parent:
        parent = parent.parent
    if parent.exists() and not parent.is_dir():
        raise InputError(f"cannot write here: {parent} is a file, not a folder", file=path)
    return path


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


@contextmanager
def atomic_write(path, mode: str = "w", **kwargs):
    """Open a temporary file beside ``path`` and move it into place only on success.

    On any exception the temporary file is removed and ``path`` is untouched.
    """
    path = check_output_path(path)
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
        check_output_path(self.path)
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
