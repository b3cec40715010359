"""Writing a note (or the reason for an escalation) to go with a decision."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Footer, Input, Static

from tui.keys import bindings_for

MAX_LENGTH = 5000


class NoteScreen(ModalScreen[str | None]):
    """One line of text; dismisses with the text, or None when left empty or cancelled."""

    BINDINGS = bindings_for("note")

    def __init__(self, prompt: str) -> None:
        super().__init__()
        self.prompt = prompt

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(self.prompt, classes="dialog-title")
            yield Input(placeholder="type the note, then Enter", max_length=MAX_LENGTH, id="note-text")
            yield Static("Notes are kept in the review store and the audit log. Avoid writing "
                         "national IDs or other personal data you do not need.", classes="dialog-hint")
        yield Footer()

    def on_mount(self) -> None:
        self.query_one("#note-text", Input).focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.action_save()

    def action_save(self) -> None:
        text = self.query_one("#note-text", Input).value.strip()
        if not text:
            self.notify("The note is empty; type something or press Escape.", severity="warning")
            return
        self.dismiss(text)

    def action_cancel(self) -> None:
        self.dismiss(None)
