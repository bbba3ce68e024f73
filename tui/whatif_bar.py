"""The what-if line: ``path = value`` changes one scenario field and runs again.

Up and Down walk through the lines entered before (input history); the focus stays in
the line after Enter, so letters typed next are text, never commands."""
from __future__ import annotations

from textual.binding import Binding
from textual.widgets import Input

from .app_messages import WhatIf

__all__ = ["WhatIfBar", "parse_whatif"]


def parse_whatif(text: str) -> tuple[str, str]:
    """Split ``mount.sink.resistance = 0.2 K/W`` into path and value.

    Raises ``ValueError`` naming the expected form.
    """
    path, sep, value = text.partition("=")
    path, value = path.strip(), value.strip()
    if not sep or not path or not value:
        raise ValueError(f"what-if {text!r}: expected 'key.path = value', "
                         "for example 'mount.sink.resistance = 0.2 K/W'")
    return path, value


class WhatIfBar(Input):
    """An input line; Enter posts :class:`WhatIf`; Up/Down recall earlier lines."""

    BINDINGS = [Binding("up", "history(-1)", show=False),
                Binding("down", "history(1)", show=False)]

    def __init__(self, **kwargs) -> None:
        super().__init__(placeholder="what if …  key.path = value, e.g. coolant = 30 degC "
                         "(Enter; up/down: history)", compact=True, **kwargs)
        self.history: list[str] = []
        self._at = 0

    def action_history(self, step: int) -> None:
        if not self.history:
            return
        self._at = min(len(self.history), max(0, self._at + step))
        self.value = self.history[self._at] if self._at < len(self.history) else ""
        self.cursor_position = len(self.value)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        try:
            path, value = parse_whatif(event.value)
        except ValueError as exc:
            self.app.notify(str(exc), severity="error")
            return
        if not self.history or self.history[-1] != event.value:
            self.history.append(event.value)
        self._at = len(self.history)
        self.value = ""
        self.post_message(WhatIf(path, value))
