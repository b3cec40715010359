"""A yes-or-no question before anything that withdraws or separates (reject, split, undo)."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Footer, Static

from tui.keys import bindings_for


class ConfirmScreen(ModalScreen[bool]):
    """Asks one question; dismisses with True (yes) or False (no)."""

    BINDINGS = bindings_for("confirm")

    def __init__(self, question: str) -> None:
        super().__init__()
        self.question = question

    def compose(self) -> ComposeResult:
        keys = self.app.keymap_info
        with Vertical(classes="dialog"):
            yield Static("Please confirm", classes="dialog-title")
            yield Static(self.question, id="question")
            yield Static(f"{keys.display_of('confirm.yes')} yes    {keys.display_of('confirm.no')} no",
                         classes="dialog-keys")
        yield Footer()

    def action_answer(self, yes: bool) -> None:
        self.dismiss(bool(yes))
