"""The key list: every binding by screen, with its key, label, tooltip and id (for remapping).

It also carries the cautions every reviewer should keep in mind.
"""

from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from tui.keys import bindings_for

SCREEN_NAMES = {"app": "everywhere", "queue": "work list", "cluster": "cluster view",
                "split": "split", "note": "note", "confirm": "confirm",
                "thresholds": "thresholds", "keys": "this list"}
CAUTIONS = (
    "A flag or a link is a lead for human review, not a finding about a person. "
    "Take no adverse action on a flag alone; follow your institution's procedures and local law. "
    "National IDs are masked to their last four characters; revealing one is written to the audit log.")


class KeysScreen(Screen):
    """Every key binding in force, grouped by screen."""

    BINDINGS = bindings_for("keys")

    def compose(self) -> ComposeResult:
        yield Static(id="keys-title", classes="title-bar")
        yield Static(CAUTIONS, id="keys-cautions", classes="caution")
        yield DataTable(id="key-list", cursor_type="row", zebra_stripes=True)
        yield Static("Remap a key by its id in <project>/keys.toml or ~/.config/resolve/keys.toml, "
                     'e.g.  [keys]  "cluster.accept" = "ctrl+y"', classes="status-line")
        yield Footer()

    def on_mount(self) -> None:
        self.query_one("#keys-title", Static).update(self.app.title_text("keys"))
        table = self.query_one("#key-list", DataTable)
        for label in ("where", "key", "does", "what it does", "id"):
            table.add_column(Text(label, style="bold"), key=label)
        keys = self.app.keymap_info
        for screen in SCREEN_NAMES:
            for spec in keys.for_screen(screen):
                table.add_row(SCREEN_NAMES[screen], Text(keys.display_of(spec.id), style="bold"),
                              spec.label, spec.tooltip, Text(spec.id, style="dim"), key=spec.id)
        table.focus()

    def action_close(self) -> None:
        self.app.pop_screen()
