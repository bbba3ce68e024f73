"""Messages of the terminal workbench: small classes that travel up the widget tree."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from textual.message import Message

__all__ = ["RunFinished", "RunFailed", "ExtrasFinished", "WhatIf", "ProbeChosen",
           "ItemChosen", "FieldEdited", "StructureEdit", "KindSwitched", "MaterialWanted",
           "StudyProgress", "StudyFinished"]


class RunFinished(Message):
    """A scenario run ended; ``result`` is a :class:`~pulsetherm.network.simulate.RunResult`,
    ``seq`` the number of the request, ``elapsed`` the seconds it took."""

    def __init__(self, result: Any, label: str, seq: int = 0, elapsed: float = 0.0) -> None:
        super().__init__()
        self.result = result
        self.label = label
        self.seq = seq
        self.elapsed = elapsed


class RunFailed(Message):
    """A scenario could not be built or solved; ``text`` is the user-facing reason and
    ``path`` the scenario key it names (when it names one)."""

    def __init__(self, text: str, seq: int = 0, path: str | None = None) -> None:
        super().__init__()
        self.text = text
        self.seq = seq
        self.path = path


class ExtrasFinished(Message):
    """The slower views of one run: warm-up from a cold start and the Zth of a probe."""

    def __init__(self, seq: int, warmup: Any, zth: Any, zth_probe: str | None) -> None:
        super().__init__()
        self.seq = seq
        self.warmup = warmup
        self.zth = zth
        self.zth_probe = zth_probe


@dataclass
class WhatIf(Message):
    """The user asked to change one scenario field (``path = value``) and run again."""

    path: str
    value: str


@dataclass
class ProbeChosen(Message):
    """A probe row was selected in the table."""

    probe: str


@dataclass
class ItemChosen(Message):
    """A table of the scenario was chosen in the tree (``path`` as ``devices[0].stack[1]``;
    ``array`` and ``index`` when it is an element of an array of tables)."""

    path: str | None
    array: str | None = None
    index: int | None = None


@dataclass
class FieldEdited(Message):
    """A form field was submitted: the key path and the text typed."""

    path: str
    text: str


@dataclass
class StructureEdit(Message):
    """Add / remove / move / duplicate an element of an array of tables."""

    op: str
    array: str
    index: int


@dataclass
class KindSwitched(Message):
    """The ``kind`` of a waveform or a sink was changed in the form."""

    path: str
    kind: str


@dataclass
class MaterialWanted(Message):
    """The user asked to pick a material for the field at ``path``."""

    path: str


@dataclass
class StudyProgress(Message):
    done: int
    total: int
    text: str


@dataclass
class StudyFinished(Message):
    text: str
    ok: bool = True
