"""A yes/no question in a small box (quitting or reloading with unsaved changes)."""
from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Static

__all__ = ["ConfirmScreen"]


class ConfirmScreen(ModalScreen[str]):
    """Dismisses with the id of the button pressed (``yes``, ``save``, ``no``)."""

    BINDINGS = [Binding("escape", "dismiss('no')", "back")]

    def __init__(self, question: str, yes: str = "quit without saving",
                 save: str | None = "save, then quit", no: str = "stay") -> None:
        super().__init__()
        self.question, self.labels = question, (yes, save, no)

    def compose(self) -> ComposeResult:
        yes, save, no = self.labels
        with Vertical(id="confirm-box"):
            yield Static(self.question, id="confirm-text")
            with Horizontal(id="confirm-buttons"):
                yield Button(no, id="no", variant="primary", compact=True)
                if save:
                    yield Button(save, id="save", compact=True)
                yield Button(yes, id="yes", variant="error", compact=True)

    def on_mount(self) -> None:
        self.query_one("#no", Button).focus()

    def on_button_pressed(self, event: Button.Pressed) -> None:
        event.stop()
        self.dismiss(event.button.id or "no")
