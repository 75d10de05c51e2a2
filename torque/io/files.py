"""Files at the edge: guarded readers and atomic writers.

Every input file is read through :func:`read_text` (or :func:`read_json`,
:func:`read_toml`, :func:`read_csv_rows`, or :func:`check_input_file` before a binary
reader), so that a missing file, a folder, a binary file or a byte-order mark gets one
clear :class:`~torque.errors.InputError`. Every output goes through :func:`atomic_write` or
:func:`atomic_path`: a temporary file beside the target, renamed into place only when
complete, so that nothing is left half-written.
"""

from __future__ import annotations

import csv
import io
import json
import os
import tempfile
import tomllib
from contextlib import contextmanager
from pathlib import Path

from ..errors import InputError

__all__ = ["check_input_file", "read_text", "read_csv_rows", "read_json",
           "check_output_path", "output_folder", "atomic_write", "atomic_path", "read_toml",
           "output_suffix"]


def _umask_mode() -> int:
    """Permissions a newly created file gets (mkstemp makes files private, 0600)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def check_input_file(path) -> Path:
    """``path`` as a Path, or InputError when it is missing or is a folder.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    Path
    """
    path = Path(path)
    if path.is_dir():
        raise InputError("is a directory, not a file", file=path)
    if not path.exists():
        raise InputError("file not found", file=path)
    return path


def read_text(path, encoding: str = "utf-8-sig") -> str:
    """The text of a file, or InputError naming it when it is missing or unreadable.

    A byte-order mark is accepted (``utf-8-sig``), as spreadsheet programs write one.

    Parameters
    ----------
    path : str or Path
    encoding : str

    Returns
    -------
    str
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
    """The non-blank rows of a CSV file (lists of strings), or InputError naming the file.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    list of list of str
    """
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
    """Parse a JSON file, or InputError naming it and saying what is wrong.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    object
        The parsed document.
    """
    text = read_text(path)
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"not valid JSON: {exc.msg} at line {exc.lineno}, column {exc.colno}",
                         file=path) from None
    except RecursionError:
        raise InputError("the JSON is nested too deeply to read", file=path) from None


def output_folder(outdir, command: str, force: bool = False, make: bool = True) -> Path:
    """An output folder for a command that writes many files, made; InputError when it is a
    file, lies under one, or already holds files (unless ``force``: then the command's own
    output names are overwritten, and nothing is ever deleted).

    Parameters
    ----------
    outdir : str or Path
    command : str
        The command, named in the message.
    force : bool
    make : bool
        Make the folder (False: only check, before a long computation).

    Returns
    -------
    Path
    """
    outdir = Path(outdir)
    if outdir.exists() and not outdir.is_dir():
        raise InputError("exists and is not a folder", file=outdir)
    check_output_path(outdir / "report.html")     # refuses a folder under a file
    if outdir.is_dir() and any(outdir.iterdir()) and not force:
        raise InputError(f"the folder holds other files; torque {command} writes only into an "
                         "empty folder", file=outdir,
                         hint="choose a new folder, or pass --force to overwrite torque's own "
                         "output names there (nothing is ever deleted)")
    if make:
        outdir.mkdir(parents=True, exist_ok=True)
    return outdir


def check_output_path(path) -> Path:
    """``path`` as a Path, or InputError when it cannot be written as a file.

    Refused: a path that is a folder, and a path under something that is not a folder.
    A missing parent folder is made when the file is written.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    Path
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


@contextmanager
def atomic_write(path, mode: str = "w", **kwargs):
    """Open a temporary file beside ``path`` and move it into place only on success.

    On any exception the temporary file is removed and ``path`` is untouched.

    Parameters
    ----------
    path : str or Path
        The file to write (its folder is made if missing).
    mode : str
        As for :func:`open` (``"w"`` or ``"wb"``).
    **kwargs
        Passed to :func:`open` (``newline``, ``encoding``).

    Yields
    ------
    file object
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
    """Context manager yielding a temporary *path* (for writers that want a file name).

    Parameters
    ----------
    path : str or Path
        The file to write.

    Returns
    -------
    context manager
        Yields the temporary path, renamed to ``path`` when the block ends without error.
    """
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


def read_toml(path) -> dict:
    """Parse a TOML file, or InputError naming the file and the line.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    dict
    """
    path = Path(path)
    text = read_text(path)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML: {exc}", file=path) from None
    except RecursionError:
        raise InputError("the TOML is nested too deeply to read", file=path) from None


def output_suffix(path, allowed) -> str:
    """The lower-case suffix of an output path, checked before any work.

    Parameters
    ----------
    path : str or Path
        The output file.
    allowed : sequence of str
        Accepted suffixes, lower case with the dot (``(".csv", ".nc")``).

    Returns
    -------
    str
        The suffix.

    Raises
    ------
    InputError
        If the suffix is not allowed, or the path cannot be written (a folder, or a path
        under a file).
    """
    check_output_path(path)
    suffix = Path(path).suffix.lower()
    if suffix not in allowed:
        raise InputError(f"cannot write {suffix or 'a file without a suffix'}",
                         file=path, hint=f"use one of {', '.join(allowed)}")
    return suffix
