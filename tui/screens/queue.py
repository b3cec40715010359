"""The work list: every queue item, most pressing first, with filters, search and counts.

Only one page of items is drawn at a time (`tui.data.PAGE_SIZE` rows), so a queue of any
length opens at once; filters and search are vectorised over the whole queue in
`tui.data.QueueData`. The state column fills in when the review store has been read, and the
flags column when the run index is built (both in workers, see `tui.app`).
"""

from __future__ import annotations

from dataclasses import replace

import math

from rich.text import Text
from textual.app import ComposeResult
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Input, Static

from tui.filters import ANY_FLAG, KINDS, STATES, QueueFilter, cycle
from tui.keys import bindings_for
from tui.widgets.counts_bar import CountsBar

STATE_STYLE = {"open": "", "decided": "#6cc4b4", "escalated": "bold #f07c6c",
               "awaiting_approval": "#c7a6f2", "reopened": "bold #f2b35e"}
KIND_STYLE = {"entity": "#8fb8de", "split": "#f2b35e", "household": "#6cc4b4", "group": "#f07c6c",
              "flagged": "#c7a6f2"}
SHOWN_IDS = 3


def _records_cell(text: str) -> str:
    ids = _s(text).split(";")
    return ", ".join(ids[:SHOWN_IDS]) + (f" +{len(ids) - SHOWN_IDS}" if len(ids) > SHOWN_IDS else "")


def _s(value) -> str:
    """Text of a cell value; '' for None, NA and NaN."""
    if value is None:
        return ""
    try:
        if value != value:          # NaN
            return ""
    except TypeError:               # pandas NA refuses comparison
        return ""
    return str(value)


def _clip(text: str, width: int) -> str:
    return text if len(text) <= width else text[:width - 1] + "…"


def _score(value) -> str:
    try:
        v = float(value)
    except (TypeError, ValueError):
        return ""
    return "" if math.isnan(v) else f"{v:.3f}"


class QueueScreen(Screen):
    """The prioritised work list."""

    BINDINGS = bindings_for("queue")

    def compose(self) -> ComposeResult:
        yield Static(id="queue-title", classes="title-bar")
        yield Static(id="queue-filters", classes="filter-line")
        yield Input(placeholder="find: a record ID or part of a name, then Enter (empty Enter clears)",
                    id="find")
        yield DataTable(id="items", cursor_type="row", zebra_stripes=True)
        yield CountsBar(id="counts")
        yield Footer()

    def on_mount(self) -> None:
        table = self.query_one("#items", DataTable)
        for label, key in (("kind", "kind"), ("size", "size"), ("score", "score"),
                           ("priority", "priority"), ("state", "state"), ("by", "by"),
                           ("flags", "flags"), ("records", "records"), ("detail", "detail")):
            table.add_column(Text(label, style="bold"), key=key)
        table.focus()
        self.redraw()

    # ------------------------------------------------------------------ drawing
    def redraw(self, keep_position: int | None = None) -> None:
        """Draw the current page of the work list from the app's state."""
        app = self.app
        self.query_one("#queue-title", Static).update(app.title_text("work list"))
        self.query_one("#queue-filters", Static).update(self._filter_text())
        table = self.query_one("#items", DataTable)
        table.clear()
        counts = self.query_one("#counts", CountsBar)
        if app.queue is None:
            counts.show(None, 0, app.filter, 0, app.page_size)
            return
        page = app.queue.page(app.selection, app.page, app.page_size)
        rows = [self._cells(r.kind, r.size, r.score, r.priority, r.state, r.decided_by, r.flags,
                            r.record_ids, r.detail) for r in page.itertuples(index=False)]
        for row, pos in zip(rows, page["position"].tolist()):
            table.add_row(*row, key=str(pos))
        if keep_position is not None and str(keep_position) in {str(p) for p in page["position"]}:
            table.move_cursor(row=table.get_row_index(str(keep_position)), animate=False)
        counts.show(app.queue, len(app.selection), app.filter, app.page, app.page_size)

    def draw_first_page(self, page) -> None:
        """Draw the first page read by `tui.firstpage` while the rest of the work list loads."""
        self.query_one("#queue-title", Static).update(self.app.title_text("work list"))
        table = self.query_one("#items", DataTable)
        table.clear()
        for pos, r in enumerate(page.rows):
            table.add_row(*self._cells(r.get("kind"), r.get("size"), r.get("score"), r.get("priority"),
                                       "open", "", "", r.get("record_ids"), r.get("detail")), key=str(pos))
        self.query_one("#counts", CountsBar).update(
            Text(f" {page.total:,} items · reading the rest of the work list…", style="italic"))

    @staticmethod
    def _cells(kind, size, score, priority, state, decided_by, flags, record_ids, detail) -> tuple:
        kind, state = _s(kind), _s(state)
        try:
            prio = f"{float(priority):.1f}"
        except (TypeError, ValueError):
            prio = ""
        return (Text(kind, style=KIND_STYLE.get(kind, "")), _s(size), _score(score), prio,
                Text(state.replace("_", " "), style=STATE_STYLE.get(state, "")), _s(decided_by),
                Text(_clip(_s(flags), 30), style="#c7a6f2"), _records_cell(_s(record_ids)),
                _clip(_s(detail).replace(";", ", "), 26))

    def _filter_text(self) -> Text:
        f = self.app.filter
        text = Text(no_wrap=True, overflow="ellipsis")
        for label, value, binding in (("kind", f.kind, "queue.kind"), ("flag", f.flag, "queue.flag"),
                                      ("state", f.state, "queue.state"),
                                      ("reviewer", f.reviewer, "queue.reviewer")):
            key = self.app.keymap_info.display_of(binding)
            text.append(f" {label} ", style="dim")
            text.append(f"[{key}]", style="dim")
            text.append(f" {value or 'all'} ", style="bold" if value else "")
        if f.search:
            text.append(" find ", style="dim")
            text.append(f"“{f.search}”", style="bold")
        return text

    def highlighted_position(self) -> int | None:
        """Queue position of the highlighted row, if any."""
        table = self.query_one("#items", DataTable)
        if table.row_count == 0:
            return None
        key = table.coordinate_to_cell_key(table.cursor_coordinate).row_key
        return int(key.value) if key is not None and key.value is not None else None

    # ------------------------------------------------------------------ actions
    def action_open_item(self) -> None:
        pos = self.highlighted_position()
        if pos is not None:
            self.app.open_cluster(pos)

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        if event.data_table.id == "items" and event.row_key.value is not None:
            self.app.open_cluster(int(event.row_key.value))

    def on_key(self, event) -> None:
        """Escape in the search box goes back to the list."""
        if event.key == "escape" and isinstance(self.focused, Input):
            self.query_one("#items", DataTable).focus()
            event.stop()

    def action_find(self) -> None:
        self.query_one("#find", Input).focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        text = event.value.strip()
        self.query_one("#items", DataTable).focus()
        self.app.find(text)

    def _refilter(self, **changes) -> None:
        self.app.set_filter(replace(self.app.filter, **changes))

    def action_cycle_kind(self) -> None:
        self._refilter(kind=cycle(list(KINDS), self.app.filter.kind))

    def action_cycle_flag(self) -> None:
        codes = self.app.queue.flag_codes if self.app.queue is not None else []
        self._refilter(flag=cycle([ANY_FLAG, *codes], self.app.filter.flag))

    def action_cycle_state(self) -> None:
        self._refilter(state=cycle(list(STATES), self.app.filter.state))

    def action_cycle_reviewer(self) -> None:
        others = self.app.queue.reviewers() if self.app.queue is not None else []
        names = [self.app.reviewer] + [r for r in others if r != self.app.reviewer]
        self._refilter(reviewer=cycle(names, self.app.filter.reviewer))

    def action_clear_filters(self) -> None:
        self.query_one("#find", Input).value = ""
        self.app.find("")
        self.app.set_filter(QueueFilter())

    def action_page(self, delta: int) -> None:
        self.app.turn_page(int(delta))

    def action_open_thresholds(self) -> None:
        self.app.open_thresholds()
