"""The review workbench application and the factory that builds it (`make_app`).

Start-up is ordered for speed: the work list (queue table only) is read first in a worker and
drawn as soon as it arrives; then, also in workers, the run's tables are indexed for the
cluster view and search (`IndexBuilt`) and the review store is read for item states
(`StatesLoaded`). The interface stays live throughout; anything that needs a table not yet
indexed says so and fills in when it arrives.

The app holds the shared state (work list, filters, selection, page, run index, reviewer,
key map) and the screens draw from it. Decisions are recorded through `tui.actions` only.
pandas, numpy and the library's table code are imported in the workers, not here, so that
the first screen is drawn while they load.
"""

from __future__ import annotations

import threading
import time
from dataclasses import replace
from pathlib import Path
from typing import Callable

from typing import TYPE_CHECKING

from rich.text import Text
from textual import work
from textual.app import App

from resolve.errors import ResolveError
from tui.filters import PAGE_SIZE, QueueFilter, reviewer_name
from tui.keys import KeyMap, bindings_for
from tui.messages import (DecisionRecorded, DecisionRefused, FirstPageRead, IndexBuilt, LoadFailed,
                          QueueLoaded, SearchFinished, StatesLoaded)
from tui.screens.cluster import ClusterScreen
from tui.screens.help import KeysScreen
from tui.screens.queue import QueueScreen
from tui.screens.thresholds import ThresholdsScreen

if TYPE_CHECKING:
    from tui.actions import ReviewActions
    from tui.data import QueueData, ReviewData
    from tui.index import RunIndex


class Workbench(App):
    """The resolve review workbench."""

    CSS_PATH = "workbench.tcss"
    TITLE = "resolve"
    SUB_TITLE = "review workbench"
    BINDINGS = bindings_for("app")
    ENABLE_COMMAND_PALETTE = False

    def __init__(self, project_dir: str | Path, reviewer: str | None = None, *,
                 keys_file: str | Path | None = None, personal_keys: bool = True,
                 clock: Callable[[], str] | None = None, page_size: int = PAGE_SIZE,
                 load_states: bool = True) -> None:
        super().__init__()
        self.project_dir = Path(project_dir)
        self.data: "ReviewData | None" = None
        self.reviewer = reviewer_name(self.project_dir, reviewer)
        self.keymap_info = KeyMap.load(self.project_dir, keys_file, personal_keys)
        self._clock = clock
        self._actions: "ReviewActions | None" = None
        self.page_size = int(page_size)
        self.want_states = load_states
        self.queue: "QueueData | None" = None
        self.index: "RunIndex | None" = None
        self.model: dict = {}
        self.filter = QueueFilter()
        self.found = None
        self.selection = ()
        self.first_run_id = "…"
        self._first_painted = threading.Event()
        self.page = 0
        self.queue_screen = QueueScreen()
        self.timings: dict[str, list[float]] = {}

    @property
    def actions(self) -> "ReviewActions":
        """The door to the decisions layer (opened on first use, in a worker)."""
        if self._actions is None:
            from tui.actions import ReviewActions

            self._actions = ReviewActions(self.project_dir, self.reviewer, self._clock)
        return self._actions

    # ------------------------------------------------------------------ start-up
    def on_mount(self) -> None:
        if self.keymap_info.overrides:
            self.set_keymap(self.keymap_info.overrides)
        for warning in self.keymap_info.warnings:
            self.notify(warning, severity="warning", timeout=10)
        self.push_screen(self.queue_screen)
        self.load_queue()

    @work(thread=True, exclusive=True, group="queue")
    def load_queue(self) -> None:
        try:
            from tui.firstpage import first_page

            page = first_page(self.project_dir, self.page_size)
            if page is not None:
                self.post_message(FirstPageRead(page))
                # let the page reach the screen before pandas loads and takes the interpreter
                self._first_painted.wait(0.5)
            from tui.data import ReviewData

            self.data = ReviewData.open(self.project_dir)
            queue = self.data.queue()
        except (ResolveError, OSError) as exc:
            self.post_message(LoadFailed("work list", str(exc)))
            return
        self.post_message(QueueLoaded(queue))

    def on_first_page_read(self, message: FirstPageRead) -> None:
        if self.queue is None and self.queue_screen.is_mounted:
            self.first_run_id = message.page.run_id
            self.queue_screen.draw_first_page(message.page)
            self.call_after_refresh(self._queue_painted)

    def on_queue_loaded(self, message: QueueLoaded) -> None:
        self.queue = message.queue
        self._reselect()
        if "queue_painted_at" not in self.timings:
            self.call_after_refresh(self._queue_painted)
        self.build_index()
        if self.want_states:
            self.load_states()

    def _queue_painted(self) -> None:
        """Note when the work list first reached the screen (see bench/tui_speed.py)."""
        if "queue_painted_at" not in self.timings:
            self.timings["queue_painted_at"] = [time.perf_counter()]
            self.timings["queue_painted_cpu"] = [time.process_time()]
        self._first_painted.set()

    @work(thread=True, exclusive=True, group="index")
    def build_index(self) -> None:
        try:
            from tui.index import RunIndex

            began = time.perf_counter()
            index = RunIndex(self.data.run)
            index.attach(self.queue)
            model = self.data.model()
            self.timings.setdefault("index", []).append(time.perf_counter() - began)
        except (ResolveError, OSError) as exc:
            self.post_message(LoadFailed("run tables", str(exc)))
            return
        self.post_message(IndexBuilt(index, model))

    def on_index_built(self, message: IndexBuilt) -> None:
        self.index = message.index
        self.model = message.model
        self.warm_decisions()
        self._reselect(keep=True)
        for screen in self.screen_stack:
            if hasattr(screen, "index_ready"):
                screen.index_ready()

    @work(thread=True, exclusive=True, group="warm")
    def warm_decisions(self) -> None:
        """Let the decisions layer read its run tables now, so the first decision is quick."""
        try:
            self.actions.warm()
        except (ResolveError, OSError):
            pass                        # the first decision will read them, or say what is wrong

    @work(thread=True, exclusive=True, group="states")
    def load_states(self) -> None:
        try:
            states = self.actions.states()
        except (ResolveError, OSError) as exc:
            self.post_message(LoadFailed("review states", str(exc)))
            return
        self.post_message(StatesLoaded(states))

    def on_states_loaded(self, message: StatesLoaded) -> None:
        if self.queue is not None:
            self.queue.set_states(message.states)
            self._reselect(keep=True)

    def on_load_failed(self, message: LoadFailed) -> None:
        if self.queue is None and message.what == "work list":
            self.exit(return_code=1, message=Text(message.reason, no_wrap=True, overflow="ignore"))
            return
        self.notify(f"Could not read the {message.what}: {message.reason}", severity="error", timeout=15)

    # ------------------------------------------------------------------ work list state
    def title_text(self, where: str, brief: bool = False) -> Text:
        """The title line every screen starts with (``brief`` leaves out project and run)."""
        text = Text(no_wrap=True, overflow="ellipsis")
        text.append(" resolve ", style="bold reverse")
        text.append(f" {where} ", style="bold")
        if not brief:
            run_id = self.data.run.run_id if self.data is not None else self.first_run_id
            text.append(f"· {self.project_dir.name} · {run_id} · reviewer {self.reviewer} ",
                        style="dim")
        return text

    def set_filter(self, filt: QueueFilter) -> None:
        self.filter = filt
        self.page = 0
        self._reselect()

    def _reselect(self, keep: bool = False) -> None:
        if self.queue is None:
            return
        current = self.queue_screen.highlighted_position() if keep and self.queue_screen.is_mounted else None
        self.selection = self.queue.select(self.filter, self.found)
        pages = max(1, -(-len(self.selection) // self.page_size))
        self.page = min(self.page, pages - 1)
        if self.queue_screen.is_mounted:
            self.queue_screen.redraw(keep_position=current)

    def turn_page(self, delta: int) -> None:
        pages = max(1, -(-len(self.selection) // self.page_size))
        new = min(max(self.page + delta, 0), pages - 1)
        if new != self.page:
            self.page = new
            self.queue_screen.redraw()

    def find(self, text: str) -> None:
        """Search by record ID or name (in a worker); empty text clears the search."""
        if not text:
            self.found = None
            self.set_filter(replace(self.filter, search=None))
            return
        if self.index is None:
            self.notify("Search is ready once the run tables are indexed; try again in a moment.")
            return
        self.run_search(text)

    @work(thread=True, exclusive=True, group="search")
    def run_search(self, text: str) -> None:
        self.post_message(SearchFinished(text, self.index.search(text)))

    def on_search_finished(self, message: SearchFinished) -> None:
        self.found = message.positions
        self.set_filter(replace(self.filter, search=message.text))
        if len(message.positions) == 0:
            self.notify(f"No item holds a record matching “{message.text}”.")

    def step_from(self, position: int, delta: int) -> int | None:
        """The queue position ``delta`` items away within the current selection."""
        import numpy as np

        sel = self.selection
        if len(sel) == 0:
            return None
        if delta > 0:
            i = int(np.searchsorted(sel, position, side="right")) + delta - 1
        else:
            i = int(np.searchsorted(sel, position, side="left")) + delta
        return int(sel[i]) if 0 <= i < len(sel) else None

    def queue_moved_to(self, position: int) -> None:
        """After the cluster view closes, show the page holding ``position`` with it highlighted."""
        place = self.queue.place_of(self.selection, position) if self.queue is not None else None
        if place:
            self.page = (place - 1) // self.page_size
        self.queue_screen.redraw(keep_position=position)

    # ------------------------------------------------------------------ screens
    def open_cluster(self, position: int) -> None:
        if self.queue is None:
            return
        self.push_screen(ClusterScreen(position))

    def open_thresholds(self) -> None:
        self.push_screen(ThresholdsScreen())

    def action_show_keys(self) -> None:
        if not isinstance(self.screen, KeysScreen):
            self.push_screen(KeysScreen())

    # ------------------------------------------------------------------ decisions
    def on_decision_recorded(self, message: DecisionRecorded) -> None:
        outcome = message.outcome
        if self.queue is not None and outcome.state:
            decided_by = "" if outcome.state == "open" else outcome.decision.reviewer
            self.queue.set_state_of(message.cluster_key, outcome.state, decided_by)
            self._reselect(keep=True)
        self.notify(outcome.message)
        if outcome.decision.action == "undo" and self.want_states:
            self.load_states()          # an older decision may stand again: ask the library
        for screen in self.screen_stack:
            if isinstance(screen, ClusterScreen):
                screen.decision_recorded(message)

    def on_decision_refused(self, message: DecisionRefused) -> None:
        self.notify(f"Not recorded: {message.reason}", severity="error", timeout=10)

    def on_unmount(self) -> None:
        if self._actions is not None:
            self._actions.close()


def make_app(project_dir: str | Path, reviewer: str | None = None, **opts) -> Workbench:
    """Build the workbench for a project folder.

    ``reviewer`` defaults to project.toml ``[review] reviewer``, then the OS user. Options:
    ``keys_file`` (an extra key remap file), ``personal_keys`` (read ~/.config/resolve/keys.toml,
    default True), ``clock`` (time source for decisions, for tests), ``page_size`` (work-list
    rows drawn at once), ``load_states`` (read item states from the review store, default True).
    A folder that is not a project, or holds no finished run, makes the app exit at once
    with return code 1 and the library's one-line message.
    """
    return Workbench(project_dir, reviewer, **opts)
