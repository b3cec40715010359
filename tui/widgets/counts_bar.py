"""The counts bar: how much work there is, by kind and state, always in view."""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static

from typing import TYPE_CHECKING

from tui.filters import KINDS, QueueFilter

if TYPE_CHECKING:
    from tui.data import QueueData


STATE_STYLE = {"open": "bold #e8b04b", "decided": "#6cc4b4", "escalated": "#f07c6c",
               "awaiting_approval": "#b59be0", "reopened": "#e8b04b"}


def _n(value: int) -> str:
    return f"{value:,}"


class CountsBar(Static):
    """One line of counts under the work list (and the filters in force)."""

    DEFAULT_CLASSES = "counts-bar"

    def show(self, queue: "QueueData | None", shown: int, filt: QueueFilter, page: int,
             page_size: int) -> None:
        """Redraw from the queue, the number of items passing the filters and the page."""
        text = Text(no_wrap=True, overflow="ellipsis")
        if queue is None:
            text.append("reading the work list…", style="italic")
            self.update(text)
            return
        counts = queue.counts()
        text.append(f" {_n(len(queue))} items ", style="bold")
        for state in ("open", "decided", "escalated", "awaiting_approval", "reopened"):
            n = int((queue.state == state).sum())
            if n or state in ("open", "decided"):
                text.append(f" {state.replace('_', ' ')} {_n(n)} ", style=STATE_STYLE.get(state, ""))
        text.append(" │ ", style="dim")
        text.append("  ".join(f"{k} {_n(counts['kind'][k])}" for k in KINDS))
        text.append(" │ ", style="dim")
        if shown:
            first = page * page_size + 1
            last = min(shown, (page + 1) * page_size)
            text.append(f"showing {_n(first)}–{_n(last)} of {_n(shown)}")
        else:
            text.append("nothing matches")
        if filt != QueueFilter():
            text.append(f" ({filt.describe()})", style="italic")
        self.update(text)
