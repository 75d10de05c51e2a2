"""CSV tables: one reader with line-numbered errors, one writer.

Every CSV the tool reads (motions, point lists, age grids as CSV) goes through
:func:`read_table`: a header row, named columns, numbers parsed a column at a time, and a
message naming the file, the line and the column for anything that is not a number.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError
from .files import atomic_write, read_csv_rows

__all__ = ["Table", "read_table", "read_points", "write_csv"]


@dataclass(frozen=True, eq=False)
class Table:
    """The rows of a CSV file under its header.

    Attributes
    ----------
    path : Path
        The file, named in messages.
    header : list of str
        Column names, stripped and lower-cased.
    rows : list of list of str
        The data rows, as text (blank rows and, if asked, ``#`` comments dropped).
    """

    path: Path
    header: list
    rows: list

    def __repr__(self) -> str:
        return f"Table({str(self.path)!r}, {len(self.rows)} rows, columns {self.header})"

    def __len__(self) -> int:
        return len(self.rows)

    def has(self, *names) -> bool:
        """Whether the header names every one of ``names``.

        Parameters
        ----------
        *names : str

        Returns
        -------
        bool
        """
        return all(n in self.header for n in names)

    @staticmethod
    def line(i: int) -> int:
        """The line number of data row ``i`` (the header is line 1).

        Parameters
        ----------
        i : int

        Returns
        -------
        int
        """
        return i + 2

    def text(self, name: str) -> list:
        """The column ``name`` as stripped strings (``""`` where a row is short).

        Parameters
        ----------
        name : str
            A column of the header.

        Returns
        -------
        list of str
        """
        c = self.header.index(name)
        return [r[c].strip() if c < len(r) else "" for r in self.rows]

    def numbers(self, name: str, *, blank=None, where=None, message=None) -> np.ndarray:
        """The column ``name`` as floats, shape (N,).

        Parameters
        ----------
        name : str
            A column of the header.
        blank : float, optional
            The value of an empty cell; without it an empty cell is an error.
        where : callable, optional
            ``where(i) -> str`` names row ``i`` in a message (default: its line).
        message : str, optional
            The message for a cell that is not a number (default: ``"NAME is 'X', not a
            number"``).
        """
        cells = self.text(name)
        out = np.empty(len(cells))
        try:
            out[:] = [float(c) if c or blank is None else blank for c in cells]
            return out
        except ValueError:
            pass
        for i, c in enumerate(cells):     # find the first bad cell, for the message
            if c == "" and blank is not None:
                continue
            try:
                float(c)
            except ValueError:
                raise InputError(message or f"{name} is {c!r}, not a number", file=self.path,
                                 where=where(i) if where else f"line {self.line(i)}") from None
        raise AssertionError("unreachable")  # pragma: no cover


def read_table(path, required, *, comments: bool = False, empty: str | None = None,
               hint: str | None = None) -> Table:
    """Read a CSV file with a header naming at least the ``required`` columns.

    Parameters
    ----------
    path : str or Path
    required : sequence of str
        Column names the header must have (compared lower-case).
    comments : bool
        Drop rows whose first cell starts with ``#``.
    empty : str, optional
        The message for a file with no header.
    hint : str, optional
        How to fix a missing column.

    Returns
    -------
    Table

    Raises
    ------
    InputError
        Naming the file: missing or unreadable, no header, or a required column missing.
    """
    path = Path(path)
    rows = read_csv_rows(path)
    if comments:
        rows = [r for r in rows if not r[0].startswith("#")]
    if not rows:
        raise InputError(empty or f"the file is empty; expected a header {','.join(required)}",
                         file=path)
    header = [h.strip().lower() for h in rows[0]]
    for need in required:
        if need not in header:
            raise InputError(f"the header has no column {need!r}", file=path, hint=hint)
    return Table(path, header, rows[1:])


def read_points(path):
    """Read a CSV with columns ``lon,lat`` (degrees).

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    lon, lat : ndarray, shape (N,)
        In file order.
    """
    table = read_table(path, ("lon", "lat"), empty="the file is empty; expected a header "
                       "lon,lat", hint="the header must name columns 'lon' and 'lat'")
    if not len(table):
        raise InputError("no points after the header", file=path)
    lon, lat = table.numbers("lon"), table.numbers("lat")
    bad = ~(np.isfinite(lon) & np.isfinite(lat)) | (np.abs(lat) > 90) | (lon < -180) | (
        lon > 360)
    if bad.any():
        k = int(np.nonzero(bad)[0][0])
        raise InputError(f"point ({lon[k]:g}, {lat[k]:g}) is out of range (lon in "
                         "[-180, 360], lat in [-90, 90])", file=path,
                         where=f"line {Table.line(k)}")
    return lon, lat


def _csv_text(column) -> np.ndarray:
    """Text values escaped for CSV, done once per distinct value."""
    uniq, inverse = np.unique(column.astype(str), return_inverse=True)
    esc = np.array(['"' + u.replace('"', '""') + '"' if any(ch in u for ch in ',"\n\r')
                    else u for u in uniq], dtype=object)
    return esc[inverse.ravel()]


def write_csv(path, columns: dict) -> None:
    """Write equal-length columns as CSV, atomically.

    Parameters
    ----------
    path : str or Path
    columns : dict
        ``{name: array}``, in column order. Floats are written to 10 significant digits,
        integers as integers, anything else as text, quoted as CSV requires.
    """
    names = list(columns)
    cols = [np.asarray(columns[n]) for n in names]
    fmts = []
    for c in cols:
        if c.dtype.kind == "f":
            fmts.append("%.10g")
        elif c.dtype.kind in "iu":
            fmts.append("%d")
        else:
            fmts.append("%s")
    line = ",".join(fmts) + "\n"
    text_cols = [(_csv_text(c) if f == "%s" else c).tolist() for c, f in zip(cols, fmts)]
    with atomic_write(path, newline="") as fh:
        fh.write(",".join(names) + "\n")
        fh.writelines(line % row for row in zip(*text_cols))
