"""The what-if line: ``path = value`` changes one scenario field and runs again."""
from __future__ import annotations

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
    """An input line; Enter posts :class:`WhatIf`."""

    def __init__(self, **kwargs) -> None:
        super().__init__(placeholder="what if …  e.g. mount.sink.resistance = 0.2 K/W   (Enter)",
                         **kwargs)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        try:
            path, value = parse_whatif(event.value)
        except ValueError as exc:
            self.app.notify(str(exc), severity="error")
            return
        self.post_message(WhatIf(path, value))
