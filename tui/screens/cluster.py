"""The cluster view: one work-list item with all its evidence, and the decision keys.

The records side by side (fields aligned, differences highlighted), who carries which
identifier, the scored pairs with the field-by-field evidence of the highlighted pair, the
flags with their sentences and the suggested split. Gathering an item runs in a worker over
the run index (`tui.index.RunIndex.cluster`) and reports back with `ClusterLoaded`; decisions
go through `tui.actions` in workers and report back to the app with `DecisionRecorded`.

A revealed national ID stays on screen only while its record is highlighted: moving to
another record, another item or another screen masks it again.
"""

from __future__ import annotations

import time
from typing import TYPE_CHECKING

from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.containers import Horizontal, ScrollableContainer, Vertical
from textual.screen import Screen
from textual.widgets import Footer, Static

from resolve.errors import ResolveError
from tui.keys import bindings_for
from tui.messages import ClusterLoaded, DecisionRecorded, DecisionRefused, IdentifiersRevealed
from tui.screens.confirm import ConfirmScreen
from tui.screens.note import NoteScreen
from tui.screens.split import SplitScreen
from tui.widgets.evidence import EvidenceTable
from tui.widgets.flags import FlagList
from tui.widgets.pair_list import PairList
from tui.widgets.records_side_by_side import RecordsSideBySide
from tui.widgets.sharing_grid import SharingGrid
from tui.widgets.split_preview import SplitPreview

if TYPE_CHECKING:
    from tui.index import ClusterView

ASKS_FIRST = {"reject": "Record that these {n} records are NOT one person?"}


class ClusterScreen(Screen):
    """One item of the work list, its evidence, and the keys that decide it."""

    BINDINGS = bindings_for("cluster")

    def __init__(self, position: int) -> None:
        super().__init__()
        self.position = int(position)
        self.view: "ClusterView | None" = None
        self.revealed: dict[str, dict[str, str]] = {}
        self.last_message = ""
        self._asked_at: float | None = None

    def compose(self) -> ComposeResult:
        yield Static(id="cluster-title", classes="title-bar")
        yield Static(id="cluster-context", classes="context-line")
        with Horizontal(id="cluster-top", classes="cluster-row"):
            with Vertical(classes="wide-pane"):
                with ScrollableContainer(id="records-box", can_focus=False):
                    yield RecordsSideBySide(id="records")
            with Vertical(classes="narrow-pane"):
                yield Static("pairs in this item, weakest first", classes="pane-label")
                with ScrollableContainer(id="pairs-box", can_focus=False):
                    yield PairList(id="pairs")
        with Horizontal(id="cluster-middle", classes="cluster-row"):
            with Vertical(classes="wide-pane"):
                yield Static("evidence for the selected pair", classes="pane-label")
                with ScrollableContainer(id="evidence-box", can_focus=False):
                    yield EvidenceTable(id="evidence")
            with Vertical(classes="narrow-pane"):
                yield Static("who carries which identifier", classes="pane-label")
                with ScrollableContainer(id="sharing-box", can_focus=False):
                    yield SharingGrid(id="sharing")
        with Horizontal(id="cluster-lower"):
            yield FlagList(id="flags")
            yield SplitPreview(id="split")
        yield Static(id="cluster-status", classes="status-line")
        yield Footer()

    def on_mount(self) -> None:
        self.load(self.position)

    # ------------------------------------------------------------------ loading
    def load(self, position: int) -> None:
        """Show the item at queue ``position`` (gathered in a worker)."""
        self._asked_at = time.perf_counter()
        self.hide_revealed()
        self.position = int(position)
        self._title()
        if self.app.index is None:
            self.query_one("#cluster-context", Static).update("indexing the run tables…")
            return
        self.gather(self.position)

    @work(thread=True, exclusive=True, group="cluster")
    def gather(self, position: int) -> None:
        item = self.app.queue.item(position)
        view = self.app.index.cluster(item)
        self.post_message(ClusterLoaded(position, view))

    def on_cluster_loaded(self, message: ClusterLoaded) -> None:
        if message.position != self.position:
            return
        self.view = message.view
        self.revealed = {}
        self.draw()

    def index_ready(self) -> None:
        """Called by the app when the run index becomes available."""
        if self.view is None:
            self.gather(self.position)

    def draw(self) -> None:
        view = self.view
        if view is None:
            return
        self._title()
        context = list(view.context)
        if view.missing:
            context.append(f"{len(view.missing)} record(s) not in this run: {', '.join(view.missing[:4])}")
        if len(view.record_ids) > len(view.shown) + len(view.missing):
            context.append(f"showing {len(view.shown)} of {len(view.record_ids)} records")
        self.query_one("#cluster-context", Static).update(" · ".join(context) or " ", layout=False)
        self.query_one("#records", RecordsSideBySide).show(view.shown, view.fields, view.values,
                                                           self.revealed)
        self.query_one("#sharing", SharingGrid).show(view.identifiers, view.shown)
        pairs = self.query_one("#pairs", PairList)
        pairs.show(view.pairs, view.pairs_total)
        self.show_evidence(0)
        self.query_one("#flags", FlagList).show(view.flags)
        self.query_one("#split", SplitPreview).show(view.split)
        self._status()
        if self._asked_at is not None:
            self.call_after_refresh(self._painted, self._asked_at)
            self._asked_at = None

    def _painted(self, asked_at: float) -> None:
        """Note how long the item took from the request to the screen (see bench/tui_speed.py)."""
        self.app.timings.setdefault("cluster", []).append(time.perf_counter() - asked_at)

    def show_evidence(self, row: int) -> None:
        table = self.query_one("#evidence", EvidenceTable)
        pair = self.query_one("#pairs", PairList).pair_at(row)
        if pair is None or self.app.index is None:
            table.show(None)
            return
        table.show(self.app.index.evidence(pair, self.app.model, self.view), pair["record_id_a"],
                   pair["record_id_b"])

    def action_pick_pair(self, delta: int) -> None:
        pairs = self.query_one("#pairs", PairList)
        if pairs.move(int(delta)) is not None:
            self.show_evidence(pairs.cursor)
            self._keep_visible(self.query_one("#pairs-box"), None, pairs.cursor + 1)

    def action_pick_record(self, delta: int) -> None:
        records = self.query_one("#records", RecordsSideBySide)
        current = records.move(int(delta))
        if self.revealed and current not in self.revealed:
            self.hide_revealed(keep=current)
        if records.record_ids:
            i = records.selected + 1
            self._keep_visible(self.query_one("#records-box"), (records.column_starts[i], 0), None)

    @staticmethod
    def _keep_visible(box, column: tuple[int, int] | None, row: int | None) -> None:
        """Scroll ``box`` so the cursor's column start (or row) is in view."""
        if column is not None:
            x = column[0]
            if x < box.scroll_x or x >= box.scroll_x + box.size.width - 8:
                box.scroll_to(x=max(0, x - 20), animate=False)
        if row is not None and (row < box.scroll_y or row >= box.scroll_y + box.size.height):
            box.scroll_to(y=max(0, row - box.size.height // 2), animate=False)

    def hide_revealed(self, keep: str | None = None) -> None:
        """Mask again every revealed national ID."""
        if not self.revealed or self.view is None:
            return
        self.revealed = {}
        view = self.view
        self.query_one("#records", RecordsSideBySide).show(view.shown, view.fields, view.values, {},
                                                           keep_record=keep)

    def on_screen_suspend(self) -> None:
        self.hide_revealed()

    def _title(self) -> None:
        app = self.app
        item = app.queue.item(self.position)
        sel = app.selection
        where = app.queue.place_of(sel, self.position)
        place = f"item {where:,} of {len(sel):,}" if where else "outside the filter"
        text = app.title_text("cluster", brief=True)
        text.append(f"{item['cluster_key']} ", style="bold")
        text.append(f"· {item['kind']} · {item['size']} records · ")
        score = item.get("score")
        if score is not None and score == score:
            text.append(f"score {float(score):.3f} · ")
        text.append(f"priority {float(item['priority']):.1f} · {place} · ")
        text.append(f"reviewer {app.reviewer}", style="dim")
        self.query_one("#cluster-title", Static).update(text, layout=False)

    def _status(self) -> None:
        item = self.app.queue.item(self.position)
        text = Text(no_wrap=True, overflow="ellipsis")
        state = str(item["state"])
        text.append(f" {state.replace('_', ' ')} ", style="reverse bold")
        if item.get("decided_by"):
            text.append(f" last decided by {item['decided_by']}")
        if item.get("detail"):
            text.append(f" · {str(item['detail']).replace(';', ', ')}", style="dim")
        if self.last_message:
            text.append(f" · {self.last_message}", style="bold")
        self.query_one("#cluster-status", Static).update(text, layout=False)

    # ------------------------------------------------------------------ moving
    def action_step(self, delta: int) -> None:
        target = self.app.step_from(self.position, int(delta))
        if target is None:
            self.notify("No more items in this direction (with the filters in force).")
            return
        self.last_message = ""
        self.load(target)

    def action_close(self) -> None:
        self.hide_revealed()
        self.app.pop_screen()
        self.app.queue_moved_to(self.position)

    # ------------------------------------------------------------------ deciding
    @property
    def ready(self) -> bool:
        """True when the item on screen is the one the title names (not still loading)."""
        return self.view is not None and self.view.item.get("position") == self.position

    def action_decide(self, action: str) -> None:
        if not self.ready:
            return
        n = len(self.view.record_ids)
        if action == "escalate":
            self.app.push_screen(NoteScreen("Escalate: what should the investigator look at?"),
                                 lambda note: note and self.record("escalate", note=note))
            return
        if action in ASKS_FIRST:
            self.app.push_screen(ConfirmScreen(ASKS_FIRST[action].format(n=n)),
                                 lambda yes: yes and self.record(action))
            return
        self.record(action)

    def action_note(self) -> None:
        if self.ready:
            self.app.push_screen(NoteScreen("Note on this item (saved with your name and the time)"),
                                 lambda note: note and self.record("note", note=note))

    def action_split(self) -> None:
        view = self.view
        if not self.ready:
            return
        if len(view.record_ids) > len(view.shown) or view.missing:
            self.notify("This item has more records than the screen shows; split it with "
                        "'resolve decide --action split --groups ...'.", severity="warning")
            return
        names = [" ".join(str(view.value(c, rid)) for c in ("given_name", "family_name", "full_name")
                          if c in view.values and view.value(c, rid))
                 for rid in view.shown]
        births = view.values.get("birth_date")
        self.app.push_screen(SplitScreen(view.shown, names, births, view.split), self._split_chosen)

    def _split_chosen(self, groups: list[list[str]] | None) -> None:
        if not groups:
            return
        question = f"Record a split into {len(groups)} groups: " + " | ".join(", ".join(g) for g in groups) + "?"
        self.app.push_screen(ConfirmScreen(question), lambda yes: yes and self.record("split", groups=groups))

    def action_undo(self) -> None:
        if not self.ready:
            return
        self.app.push_screen(ConfirmScreen("Withdraw the latest standing decision on this item? "
                                           "(It stays in the audit log.)"),
                             lambda yes: yes and self.record("undo"))

    @work(thread=True, group="decide")
    def record(self, action: str, groups: list[list[str]] | None = None, note: str | None = None) -> None:
        """Record a decision through the decisions layer (never exclusive: none is dropped)."""
        key = self.view.key
        began = time.perf_counter()
        try:
            if action == "undo":
                outcome = self.app.actions.undo(key)
            else:
                outcome = self.app.actions.decide(action, key, groups=groups, note=note)
        except ResolveError as exc:
            self.app.post_message(DecisionRefused(key, action, str(exc)))
            return
        except Exception as exc:  # keep the workbench open; the reviewer must see it failed
            self.app.post_message(DecisionRefused(key, action, f"unexpected error ({type(exc).__name__}: "
                                                  f"{exc}); check the item before trying again."))
            return
        self.app.timings.setdefault("decision", []).append(time.perf_counter() - began)
        self.app.post_message(DecisionRecorded(key, outcome))

    def decision_recorded(self, message: DecisionRecorded) -> None:
        """Called by the app after it has updated the work list."""
        if self.view is not None and message.cluster_key == self.view.key:
            self.last_message = message.outcome.message
            self._status()

    # ------------------------------------------------------------------ reveal
    def action_reveal(self) -> None:
        if not self.ready:
            return
        record = self.query_one("#records", RecordsSideBySide).selected_record
        if record is None:
            self.notify("There is no record to reveal.")
            return
        if not self.app.index.national_id_columns:
            self.notify("These records hold no national IDs.")
            return
        self.reveal(record)

    @work(thread=True, exclusive=True, group="reveal")
    def reveal(self, record_id: str) -> None:
        try:
            values = self.app.actions.reveal(record_id)
        except ResolveError as exc:
            self.app.call_from_thread(self.notify, str(exc), severity="error")
            return
        self.post_message(IdentifiersRevealed(record_id, values))

    def on_identifiers_revealed(self, message: IdentifiersRevealed) -> None:
        records = self.query_one("#records", RecordsSideBySide)
        if self.view is None or records.selected_record != message.record_id:
            return
        if not message.values:
            self.notify(f"{message.record_id} holds no national ID.")
            return
        self.revealed = {message.record_id: message.values}
        view = self.view
        records.show(view.shown, view.fields, view.values, self.revealed, keep_record=message.record_id)
        self.last_message = f"national ID of {message.record_id} shown (reveal logged)"
        self._status()
