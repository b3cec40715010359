"""Splitting a cluster: put each record in a numbered group, then record the split.

Groups start from the diagnostics' suggestion when there is one (else every record in group
1). Digits 1-9 move the highlighted record; saving needs two or more non-empty groups, and
the cluster screen asks for confirmation before the split is recorded.
"""

from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import DataTable, Footer, Static

from tui.keys import bindings_for

GROUP_STYLE = ("", "bold #6cc4b4", "bold #f2b35e", "bold #8fb8de", "bold #c7a6f2", "bold #f07c6c",
               "bold #a8d08d", "bold #e0a3c8", "bold #d9c27a", "bold #9fb4c2")


def initial_groups(record_ids: list[str], suggestion: dict | None) -> dict[str, int]:
    """Group number per record: from the suggestion where it names the record, else 1."""
    groups = {r: 1 for r in record_ids}
    if suggestion:
        for number, members in enumerate(suggestion.get("groups", []), start=1):
            for r in members:
                if r in groups and number <= 9:
                    groups[r] = number
    return groups


def as_partition(groups: dict[str, int]) -> list[list[str]]:
    """The non-empty groups as sorted lists, in group-number order."""
    out = []
    for number in sorted(set(groups.values())):
        out.append(sorted(r for r, g in groups.items() if g == number))
    return out


class SplitScreen(ModalScreen[list[list[str]] | None]):
    """Assign records to groups; dismisses with the partition or None."""

    BINDINGS = bindings_for("split")

    def __init__(self, record_ids: list[str], names: list[str], births: list | None,
                 suggestion: dict | None) -> None:
        super().__init__()
        self.record_ids = record_ids
        self.names = names
        self.births = births or [""] * len(record_ids)
        self.groups = initial_groups(record_ids, suggestion)
        self.suggested = bool(suggestion)

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog wide"):
            yield Static("Split: each group is one person", classes="dialog-title")
            yield Static(("Groups start from the suggested split. " if self.suggested else "")
                         + "Press a digit to move the highlighted record to that group.",
                         classes="dialog-hint")
            yield DataTable(id="split-records", cursor_type="row", zebra_stripes=True)
            yield Static(id="split-summary")
        yield Footer()

    def on_mount(self) -> None:
        table = self.query_one("#split-records", DataTable)
        table.add_column("group", key="group")
        table.add_column("record", key="record")
        table.add_column("name", key="name")
        table.add_column("birth date", key="birth")
        for rid, name, birth in zip(self.record_ids, self.names, self.births):
            table.add_row(self._group_cell(rid), rid, str(name or ""), str(birth or ""), key=rid)
        table.focus()
        self._summary()

    def _group_cell(self, rid: str) -> Text:
        g = self.groups[rid]
        return Text(f" {g} ", style=GROUP_STYLE[g % len(GROUP_STYLE)])

    def _summary(self) -> None:
        parts = as_partition(self.groups)
        self.query_one("#split-summary", Static).update(
            f"{len(parts)} group(s): " + " | ".join(", ".join(p) for p in parts))

    def action_assign(self, number: int) -> None:
        table = self.query_one("#split-records", DataTable)
        if table.row_count == 0:
            return
        rid = self.record_ids[table.cursor_row]
        self.groups[rid] = int(number)
        table.update_cell(rid, "group", self._group_cell(rid))
        if table.cursor_row < table.row_count - 1:
            table.move_cursor(row=table.cursor_row + 1)
        self._summary()

    def action_save(self) -> None:
        parts = as_partition(self.groups)
        if len(parts) < 2:
            self.notify("A split needs at least two groups; move a record with a digit key.",
                        severity="warning")
            return
        self.dismiss(parts)

    def action_cancel(self) -> None:
        self.dismiss(None)
