"""Messages of the terminal app: small dataclasses that travel up the widget tree."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from textual.message import Message

__all__ = ["RunFinished", "RunFailed", "WhatIf", "ProbeChosen"]


class RunFinished(Message):
    """A scenario run ended; ``result`` is a :class:`~pulsetherm.network.simulate.RunResult`."""

    def __init__(self, result: Any, label: str) -> None:
        super().__init__()
        self.result = result
        self.label = label


class RunFailed(Message):
    """A scenario could not be built or solved; ``text`` is the user-facing reason."""

    def __init__(self, text: str) -> None:
        super().__init__()
        self.text = text


@dataclass
class WhatIf(Message):
    """The user asked to change one scenario field (``path = value``) and run again."""

    path: str
    value: str


@dataclass
class ProbeChosen(Message):
    """A probe row was selected in the table."""

    probe: str
