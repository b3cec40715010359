"""The thresholds screen: the match-weight distribution, and what moves if the thresholds move.

The two markers (review, auto-merge) slide in half-bit or tenth-of-a-bit steps of match
weight. Each move re-counts, over the whole probability array, how many pairs would change
band and how many entities hold such a pair (`tui.retune`). Re-clustering with the new
thresholds runs in a worker and reports back with `ThresholdsApplied`; nothing is written to
the run. To keep new thresholds, re-run the pipeline with them (the screen says how).
"""

from __future__ import annotations

from rich.table import Table
from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.screen import Screen
from textual.widgets import Footer, Static

from resolve.errors import ResolveError
from tui.keys import bindings_for
from tui.messages import ThresholdsApplied
from tui.widgets.histogram import WeightHistogram, fmt_prob, fmt_weight

BINS = 80


class ThresholdsScreen(Screen):
    """Slide the review and auto-merge thresholds and see what would move."""

    BINDINGS = bindings_for("thresholds")

    def __init__(self) -> None:
        super().__init__()
        self.active = "review"
        self.original: dict[str, float] = {}
        self.proposed: dict[str, float] = {}
        self.weights: dict[str, float] = {}
        self.prob = None
        self.hist = None
        self.applying = False

    def compose(self) -> ComposeResult:
        yield Static(id="th-title", classes="title-bar")
        yield WeightHistogram(id="histogram")
        yield Static(id="th-numbers")
        yield Static(id="th-result", classes="status-line")
        yield Footer()

    def on_mount(self) -> None:
        from tui.retune import to_weight

        self.query_one("#th-title", Static).update(self.app.title_text("thresholds"))
        self.original = dict(self.app.data.thresholds())
        self.proposed = dict(self.original)
        self.weights = {k: to_weight(v) for k, v in self.original.items()}
        self.query_one("#th-result", Static).update(
            "Nothing is changed until you re-cluster, and re-clustering changes nothing on disk.")
        self.index_ready()

    def index_ready(self) -> None:
        """Take the pair weights from the run index (called again when it arrives)."""
        import numpy as np

        from tui.retune import weight_histogram

        index = self.app.index
        if index is None or index.pairs is None:
            self.query_one("#th-numbers", Static).update("indexing the run tables…")
            return
        self.prob = index.pair_prob
        self.hist = weight_histogram(index.pairs.column("weight").to_numpy().astype(np.float64), BINS)
        self.redraw()

    def redraw(self) -> None:
        self.query_one("#histogram", WeightHistogram).show(
            self.hist, self.weights["review"], self.weights["auto"], self.active)
        self.query_one("#th-numbers", Static).update(self._numbers())

    def _numbers(self) -> Table:
        import numpy as np

        from tui.retune import BANDS, band_moves, entities_touched

        index = self.app.index
        moves = band_moves(self.prob, self.original, self.proposed)
        touched = entities_touched(self.prob, index.pair_a, index.pair_b,
                                   index.entity_code, self.original, self.proposed)
        grid = Table.grid(padding=(0, 3))
        grid.add_column()
        grid.add_column()
        marks = Table(box=None, show_header=True, header_style="bold", padding=(0, 1))
        for col in ("threshold", "run", "now", "weight"):
            marks.add_column(col, justify="right" if col != "threshold" else "left")
        for name, label in (("review", "review (R)"), ("auto", "auto-merge (A)")):
            style = "reverse bold" if name == self.active else ""
            marks.add_row(Text(label, style=style), fmt_prob(self.original[name]),
                          fmt_prob(self.proposed[name]), fmt_weight(self.weights[name]))
        moved = Table(box=None, show_header=True, header_style="bold", padding=(0, 1))
        moved.add_column("pairs: run → now")
        for band in BANDS:
            moved.add_column(band, justify="right")
        moved.add_column("total", justify="right")
        for i, band in enumerate(BANDS):
            cells = [Text(f"{int(moves[i, j]):,}", style="" if i == j or moves[i, j] == 0 else "bold #f2b35e")
                     for j in range(3)]
            moved.add_row(band, *cells, f"{int(moves[i].sum()):,}")
        changing = int(moves.sum() - np.trace(moves))
        summary = Text(f"{changing:,} pair{'s' if changing != 1 else ''} change{'' if changing != 1 else 's'} "
                       f"band; {touched:,} entit{'ies' if touched != 1 else 'y'} hold{'' if touched != 1 else 's'} "
                       f"{'one of them' if changing != 1 else 'it'}.",
                       style="bold" if changing else "")
        grid.add_row(marks, moved)
        outer = Table.grid()
        outer.add_row(grid)
        outer.add_row(summary)
        return outer

    # ------------------------------------------------------------------ actions
    def action_switch_marker(self) -> None:
        self.active = "auto" if self.active == "review" else "review"
        self.redraw()

    def action_move(self, step: float) -> None:
        from tui.retune import to_probability

        if self.hist is None:
            return
        w = self.weights[self.active] + float(step)
        if self.active == "review":
            w = min(w, self.weights["auto"])
        else:
            w = max(w, self.weights["review"])
        self.weights[self.active] = round(w, 3)
        self.proposed[self.active] = to_probability(self.weights[self.active])
        self.redraw()

    def action_reset(self) -> None:
        from tui.retune import to_weight

        self.proposed = dict(self.original)
        self.weights = {k: to_weight(v) for k, v in self.original.items()}
        self.redraw()

    def action_apply(self) -> None:
        if self.applying or self.hist is None:
            return
        self.applying = True
        self.query_one("#th-result", Static).update("re-clustering with the thresholds shown…")
        self.run_recluster(dict(self.proposed))

    @work(thread=True, exclusive=True, group="recluster")
    def run_recluster(self, thresholds: dict) -> None:
        from tui.retune import recluster

        try:
            must, cannot = self.app.actions.constraints()
            result = recluster(self.app.data.run, thresholds, must, cannot)
            self.app.actions.save_thresholds(thresholds)
        except ResolveError as exc:
            result = exc
        self.post_message(ThresholdsApplied(result))

    def on_thresholds_applied(self, message: ThresholdsApplied) -> None:
        self.applying = False
        out = self.query_one("#th-result", Static)
        result = message.result
        if isinstance(result, Exception):
            out.update(Text(f"Re-clustering failed: {result}", style="bold #f07c6c"))
            return
        b, a = result.before, result.after
        text = Text()
        text.append("Re-clustered (stored results unchanged): ", style="bold")
        text.append(f"entities {b['entities']:,} → {a['entities']:,}; "
                    f"multi-record {b['multi_record_entities']:,} → {a['multi_record_entities']:,}; "
                    f"largest {b['largest_entity']:,} → {a['largest_entity']:,}; "
                    f"review links {b['review_links']:,} → {a['review_links']:,}.\n")
        t = result.thresholds
        text.append(f"Saved for the next 'resolve run' (review {t['review']:.6g}, auto "
                    f"{t['auto']:.6g}; audited); re-run to apply them to the stored results.",
                    style="dim")
        out.update(text)

    def action_close(self) -> None:
        self.app.pop_screen()
