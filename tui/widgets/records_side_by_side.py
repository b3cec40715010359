"""The cluster's records side by side: one column per record, one row per field.

Fields line up across records so a reviewer reads across a row. Within a row, the value most
records share is drawn plain and every value that differs from it is highlighted, so
agreement and disagreement show at a glance. Values are compared after dropping case, spaces
and punctuation (``(503) 403-1692`` agrees with ``503-403-1692``). National IDs arrive
masked; a revealed one is drawn in its own style until the reviewer moves on. One record is
selected (the record cursor, moved by the cluster screen); reveal acts on it.
"""

from __future__ import annotations

import re

from rich.text import Text
from textual.widgets import Static

from tui.widgets.text_table import text_table

MAX_WIDTH = 30
DIFFERS = "bold #f2b35e"
MISSING = "·"
REVEALED = "bold #c7a6f2"
_PUNCT = re.compile(r"[\W_]+")


def field_label(column: str) -> str:
    """``phone_2`` -> ``phone 2``; ``given_name`` -> ``given name``."""
    return column.replace("_", " ")


def comparable(value) -> str | None:
    """A value reduced for comparison: case-folded, without spaces and punctuation."""
    if value is None:
        return None
    key = _PUNCT.sub("", str(value).casefold())
    return key or None


def row_styles(values: list) -> list[str]:
    """Style per value: '' where it agrees with the most common value, DIFFERS elsewhere.

    Missing values are never highlighted. Ties go to the value seen first.
    """
    keys = [comparable(v) for v in values]
    counts: dict[str, int] = {}
    for k in keys:
        if k is not None:
            counts[k] = counts.get(k, 0) + 1
    if len(counts) <= 1:
        return [""] * len(values)
    common = max(counts, key=lambda k: (counts[k], -keys.index(k)))
    return ["" if k is None or k == common else DIFFERS for k in keys]


def _cell(value, style: str) -> Text:
    if value is None or str(value).strip() == "":
        return Text(MISSING, style="dim")
    return Text(str(value), style=style)


class RecordsSideBySide(Static):
    """Fields as rows, records as columns, the selected record on the cursor colour."""

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.record_ids: list[str] = []
        self.fields: list[str] = []
        self.values: dict[str, list] = {}
        self.revealed: dict[str, dict[str, str]] = {}
        self.selected = 0
        self.rows: list[list[str]] = []
        self.cell_styles: list[list[str]] = []
        self.column_starts: list[int] = []

    def show(self, record_ids: list[str], fields: list[str], values: dict[str, list],
             revealed: dict[str, dict[str, str]] | None = None, keep_record: str | None = None) -> None:
        """Draw the records; ``values`` maps field -> one value per record (None = missing);
        ``revealed`` maps record -> field -> full value shown instead of the masked one."""
        self.record_ids, self.fields, self.values = list(record_ids), list(fields), values
        self.revealed = revealed or {}
        self.selected = self.record_ids.index(keep_record) if keep_record in self.record_ids else 0
        self.redraw()

    def redraw(self) -> None:
        header = [Text("field")] + [Text(r) for r in self.record_ids]
        rows = []
        self.cell_styles = []
        for column in self.fields:
            row = self.values[column]
            cells = [Text(field_label(column), style="bold dim")]
            styles = row_styles(row)
            self.cell_styles.append(styles)
            for rid, value, style in zip(self.record_ids, row, styles):
                shown = self.revealed.get(rid, {}).get(column)
                cells.append(Text(shown, style=REVEALED) if shown else _cell(value, style))
            rows.append(cells)
        self.rows = [[c.plain for c in r] for r in rows]
        laid = text_table(header, rows, max_width=MAX_WIDTH,
                          cursor_column=self.selected + 1 if self.record_ids else None)
        self.column_starts = laid.starts
        self.update(laid.text)

    def move(self, delta: int) -> str | None:
        """Move the record cursor; returns the newly selected record."""
        if not self.record_ids:
            return None
        self.selected = min(max(self.selected + delta, 0), len(self.record_ids) - 1)
        self.redraw()
        return self.selected_record

    @property
    def selected_record(self) -> str | None:
        """The record under the cursor (None when there is none)."""
        return self.record_ids[self.selected] if self.record_ids else None
