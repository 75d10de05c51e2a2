"""Small HTML tables for results shown in a notebook (``_repr_html_``).

pandas and xarray conversions live with each result (``to_dataframe``, ``to_dataset``);
this module only writes the short table a notebook shows when a result is the last
expression of a cell.
"""

from __future__ import annotations

import html

__all__ = ["number", "html_table"]


def number(v, digits: int = 4) -> str:
    """A number as a table shows it: ``digits`` significant digits, "-" for None or NaN.

    Parameters
    ----------
    v : float or None
    digits : int

    Returns
    -------
    str
    """
    if v is None or (isinstance(v, float) and v != v):
        return "-"
    if isinstance(v, str):
        return v
    return f"{v:.{digits}g}"


def html_table(header, rows, caption=None, max_rows: int = 20) -> str:
    """An HTML table: text left-aligned, numbers right-aligned, at most ``max_rows`` rows
    (the rest counted in a last row).

    Parameters
    ----------
    header : sequence of str
    rows : sequence of sequence
        Cells: str, or numbers (shown with :func:`number`).
    caption : str, optional
    max_rows : int

    Returns
    -------
    str

    Examples
    --------
    >>> print(html_table(["plate", "rate"], [["A", 0.51234]]))  # doctest: +ELLIPSIS
    <table>...<td style="text-align:left">A</td><td style="text-align:right">0.5123</td>...
    """
    e = html.escape
    out = ["<table>"]
    if caption:
        out.append(f"<caption style=\"text-align:left\">{e(caption)}</caption>")
    out.append("<tr>" + "".join(f"<th>{e(str(h))}</th>" for h in header) + "</tr>")
    for r in list(rows)[:max_rows]:
        cells = []
        for c in r:
            align = "left" if isinstance(c, str) else "right"
            cells.append(f"<td style=\"text-align:{align}\">{e(number(c))}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    if len(rows) > max_rows:
        out.append(f"<tr><td colspan=\"{len(header)}\">... {len(rows) - max_rows} more</td>"
                   "</tr>")
    out.append("</table>")
    return "".join(out)
