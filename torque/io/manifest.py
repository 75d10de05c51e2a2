"""The run manifest: what made an output, so that a figure in a paper can be traced back.

Every JSON output of a command carries it under the key ``run``, and the demo's report
shows it: the tool's version and commit (when it runs from a git checkout), Python's and
the main packages' versions, every input file with its size and SHA-256, the command
lines, the random seeds, when it started (UTC) and how long it took.
"""

from __future__ import annotations

import datetime as _dt
import functools
import hashlib
import importlib.metadata
import platform
import subprocess
import time
from pathlib import Path

__all__ = ["PACKAGES", "KEY", "sha256", "input_files", "run_manifest"]

#: The packages whose versions a manifest records (the dependencies in pyproject.toml).
PACKAGES = ("numpy", "scipy", "shapely", "pyproj", "cartopy", "matplotlib", "xarray",
            "h5netcdf", "h5py", "tqdm", "threadpoolctl")
#: The key under which every JSON output carries its manifest.
KEY = "run"


def sha256(path) -> str:
    """The SHA-256 of a file, read in blocks.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    str
        64 hexadecimal digits.
    """
    st = Path(path).stat()
    return _sha256(str(Path(path).resolve()), st.st_size, st.st_mtime_ns)


@functools.lru_cache(maxsize=256)
def _sha256(path, size, mtime_ns):
    # keyed by size and modification time too: a file changed since is read again
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


@functools.lru_cache(maxsize=1)
def _commit():
    """The git commit of the package's checkout, with ``-dirty`` when it has local changes;
    None when it is not a checkout or git is missing."""
    here = Path(__file__).resolve().parents[2]
    if not (here / ".git").exists():
        return None
    try:
        rev = subprocess.run(["git", "-C", str(here), "rev-parse", "HEAD"], capture_output=True,
                             text=True, timeout=5, check=True).stdout.strip()
        dirty = subprocess.run(["git", "-C", str(here), "status", "--porcelain",
                                "--untracked-files=no"], capture_output=True, text=True,
                               timeout=5, check=True).stdout.strip()
    except (OSError, subprocess.SubprocessError):
        return None
    return rev + ("-dirty" if dirty else "")


@functools.lru_cache(maxsize=None)
def _version(name):
    # the versions imported into this process do not change while it runs
    try:
        return importlib.metadata.version(name)
    except importlib.metadata.PackageNotFoundError:
        return None


def _tool_version():
    """This tool's version (its distribution is named ``plate-torque-balance``: the name
    ``torque`` on the package index is another project's)."""
    from .._version import __version__
    return __version__


def _versions() -> dict:
    return {name: _version(name) for name in PACKAGES}


def input_files(paths) -> list:
    """Each existing file once, in order, with its size and SHA-256.

    Parameters
    ----------
    paths : iterable of str or Path or None
        Files given to a command (None and missing ones are skipped).

    Returns
    -------
    list of dict
        ``path``, ``bytes``, ``sha256``.
    """
    seen, out = set(), []
    for p in paths:
        if p is None:
            continue
        p = Path(p)
        if not p.is_file() or p.resolve() in seen:
            continue
        seen.add(p.resolve())
        out.append({"path": str(p), "bytes": p.stat().st_size, "sha256": sha256(p)})
    return out


def run_manifest(commands, inputs=(), seeds=None, started=None) -> dict:
    """The manifest of a run.

    Parameters
    ----------
    commands : list of list of str
        The command lines run (without the leading ``torque``).
    inputs : iterable of path
        The input files (see :func:`input_files`).
    seeds : dict, optional
        Random seeds by what they seeded.
    started : float, optional
        ``time.time()`` at the start (the wall time is taken up to now).

    Returns
    -------
    dict
        ``tool``, ``version``, ``commit``, ``python``, ``platform``, ``packages``,
        ``commands``, ``inputs``, ``seeds``, ``started_utc``, ``wall_time_s``.

    Examples
    --------
    >>> m = run_manifest([["check", "polygons_demo/world.toml"]],
    ...                  ["polygons_demo/world.toml"])
    >>> m["tool"], m["commands"], len(m["inputs"][0]["sha256"])
    ('torque', ['torque check polygons_demo/world.toml'], 64)
    """
    now = time.time()
    started = now if started is None else started
    return {
        "tool": "torque", "version": _tool_version(), "commit": _commit(),
        "python": platform.python_version(), "platform": platform.platform(),
        "packages": _versions(),
        "commands": ["torque " + " ".join(map(str, c)) for c in commands],
        "inputs": input_files(inputs), "seeds": dict(seeds or {}),
        "started_utc": _dt.datetime.fromtimestamp(started, _dt.timezone.utc)
        .isoformat(timespec="seconds"),
        "wall_time_s": round(now - started, 3),
    }
