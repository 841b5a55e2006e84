"""Plain-text tables for the command line and reports."""
from __future__ import annotations

__all__ = ["format_table"]


def format_table(headers, rows) -> str:
    """Align ``rows`` (sequences of already formatted strings) under ``headers``.

    Parameters
    ----------
    headers : sequence of str
        Column titles.
    rows : sequence of sequence of str
        Table body; every row has one entry per header.

    Returns
    -------
    str
        The table, columns separated by two spaces, first column left-aligned and the others
        right-aligned, with a dashed rule under the headers.
    """
    rows = [list(map(str, row)) for row in rows]
    widths = [max(len(str(h)), *(len(r[i]) for r in rows)) if rows else len(str(h))
              for i, h in enumerate(headers)]

    def line(cells):
        return "  ".join(c.ljust(w) if i == 0 else c.rjust(w)
                         for i, (c, w) in enumerate(zip(cells, widths))).rstrip()

    rule = "  ".join("-" * w for w in widths)
    return "\n".join([line(list(map(str, headers))), rule, *(line(r) for r in rows)])
