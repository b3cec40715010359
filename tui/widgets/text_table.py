"""A light table drawn as styled text: aligned columns, an optional highlighted row or column.

The cluster view redraws its tables on every move between clusters, and a full data-table
widget renders each cell through several layers of styling, which costs far more than the
look-up behind it. These tables are drawn as one Rich `Text` instead, columns padded to their
widest cell (up to a limit); the cluster screen moves its own record and pair cursors.
"""

from __future__ import annotations

from dataclasses import dataclass

from rich.cells import cell_len
from rich.text import Text

HEADER = "bold"
GAP = 2
STRIPE = "on #19232b"
CURSOR = "on #35607a"


@dataclass
class Laid:
    """A laid-out table: the text, and where each column starts and how wide it is."""

    text: Text
    starts: list[int]
    widths: list[int]


def _fit(cell: Text, width: int) -> Text:
    if cell.cell_len > width:
        cell = cell.copy()
        cell.truncate(max(width - 1, 0))
        cell.append("…")
    return cell


def text_table(header: list[Text | str], rows: list[list[Text | str]], max_width: int = 28,
               stripe: str | None = STRIPE, cursor_row: int | None = None,
               cursor_column: int | None = None) -> Laid:
    """Lay out ``rows`` under ``header`` as aligned text (cells may be styled `Text`).

    ``cursor_row`` (index into ``rows``) or ``cursor_column`` (index into the columns) is
    drawn on the cursor colour.
    """
    as_text = [[c if isinstance(c, Text) else Text(str(c)) for c in row] for row in [header, *rows]]
    n = max(len(r) for r in as_text)
    widths = [min(max_width, max((cell_len(r[i].plain) for r in as_text if i < len(r)), default=0))
              for i in range(n)]
    starts = []
    pos = 0
    for w in widths:
        starts.append(pos)
        pos += w + GAP
    out = Text(no_wrap=True, overflow="crop")
    for r, row in enumerate(as_text):
        line = Text(no_wrap=True)
        for i in range(n):
            cell = _fit(row[i], widths[i]) if i < len(row) else Text("")
            if r == 0:
                cell.stylize(HEADER)
            pad = widths[i] - cell.cell_len
            if i == cursor_column:
                cell = cell.copy()
                cell.append(" " * pad)
                cell.stylize(CURSOR)
                line.append_text(cell)
                line.append(" " * (GAP if i < n - 1 else 0))
            else:
                line.append_text(cell)
                line.append(" " * (pad + (GAP if i < n - 1 else 0)))
        if r > 0 and cursor_row is not None and r - 1 == cursor_row:
            line.stylize(CURSOR)
        elif stripe and r > 0 and r % 2 == 0:
            line.stylize_before(stripe)
        out.append_text(line)
        if r < len(as_text) - 1:
            out.append("\n")
    return Laid(out, starts, widths)
