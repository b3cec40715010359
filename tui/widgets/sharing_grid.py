"""The identifier-sharing grid: which record carries which identifier value.

Records are rows and identifier values are columns (national IDs masked); a mark shows that a
record carries the value. Values carried by several records come first, because shared values
are what joins records (and what a ring of fabricated identities has in common).
"""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static

from tui.widgets.text_table import text_table

MAX_VALUES = 14
CARRIES = "●"
KIND_SHORT = {"phone": "tel", "email": "mail", "national_id": "id", "address": "addr"}
SHARED_STYLE = "bold #6cc4b4"
PLACEHOLDER_STYLE = "#7d8fa0"


def _short(kind: str, key: str) -> str:
    if kind == "address":
        key = key.split("|")[0] + "|" + key.split("|")[1] if "|" in key else key
    if kind == "national_id" and ":" in key:
        key = key.split(":", 1)[1]
    if len(key) > 13:
        key = key[:12] + "…"
    return f"{KIND_SHORT.get(kind, kind)} {key}"


def sharing_table(identifiers: list[dict], record_ids: list[str]) -> tuple[list[dict], set]:
    """(values, marks): the distinct (kind, key) values, shared ones first, each with the
    number of records carrying it and its status; and the set of (record_id, kind, key)."""
    seen: dict[tuple[str, str], dict] = {}
    marks = set()
    for row in identifiers:
        if not row["key"] or row["record_id"] not in record_ids:
            continue
        value = seen.setdefault((row["kind"], row["key"]), {"kind": row["kind"], "key": row["key"],
                                                            "records": set(), "status": row["status"]})
        value["records"].add(row["record_id"])
        marks.add((row["record_id"], row["kind"], row["key"]))
    values = [dict(v, records=len(v["records"])) for v in seen.values()]
    values.sort(key=lambda v: (-v["records"], v["kind"], v["key"]))
    return values, marks


class SharingGrid(Static):
    """Records x identifier values, a mark where the record carries the value."""

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.rows: list[list[str]] = []

    def show(self, identifiers: list[dict], record_ids: list[str]) -> None:
        values, marks = sharing_table(identifiers, record_ids)
        shown = values[:MAX_VALUES]
        header = [Text("record")]
        for v in shown:
            style = SHARED_STYLE if v["records"] > 1 else ("" if v["status"] == "valid" else PLACEHOLDER_STYLE)
            label = _short(v["kind"], v["key"]) + ("" if v["status"] == "valid" else f" ({v['status']})")
            header.append(Text(label, style=style))
        rows = []
        for rid in record_ids:
            cells = [Text(CARRIES, style=SHARED_STYLE if v["records"] > 1 else "")
                     if (rid, v["kind"], v["key"]) in marks else Text("") for v in shown]
            rows.append([Text(rid, style="bold"), *cells])
        if len(values) > MAX_VALUES:
            rows.append([Text(f"+{len(values) - MAX_VALUES} more values", style="dim")])
        self.rows = [[c.plain for c in r] for r in rows]
        if not shown:
            self.update(Text("No identifiers on these records.", style="dim"))
            return
        self.update(text_table(header, rows, max_width=24).text)
