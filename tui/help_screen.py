"""The help screen: keys, and the key paths the form and the what-if line can edit."""
from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

__all__ = ["HelpScreen", "KEYS_TEXT", "editable_paths"]

KEYS_TEXT = """\
Keys (letters act only while no text field has the focus; Esc leaves a field)
  ctrl+s  save (in place, comments kept; the demo: a new file with the change list)
  ctrl+z  undo the last edit        ctrl+y  redo
  ctrl+r  reload the file (asks when there are unsaved changes)
  ctrl+q  quit (asks when there are unsaved changes; never waits for a solve)
  ctrl+p  command palette (the commands here, save as a new file, JSON report)
  Esc     cancel the running solve / leave a text field
  f1 ?    this help
  tab     next pane           shift+tab  previous pane
  1 .. 6  result tabs: probes, warm-up, held up, waveforms, Zth, network
  p       play the warm-up (time cursor); + and - change its speed
  w       the what-if line (type key.path = value; up/down: history)
  z       size or sweep one value
  In the tree: arrows move, Enter opens the form.  In the form: Enter applies a
  field, Esc puts its stored value back; a bare number keeps the field's unit.
"""


def editable_paths(data: dict, prefix: str = "") -> list[str]:
    """Every key path of the scenario's plain dict (what the what-if line accepts)."""
    out: list[str] = []
    for key, value in data.items():
        path = f"{prefix}.{key}" if prefix else str(key)
        if isinstance(value, dict):
            out += editable_paths(value, path)
        elif isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
            for i, item in enumerate(value):
                out += editable_paths(item, f"{path}[{i}]")
        else:
            out.append(path)
    return out


class HelpScreen(ModalScreen[None]):
    BINDINGS = [Binding("escape,q,f1,question_mark", "dismiss(None)", "close")]

    def __init__(self, paths: list[str]) -> None:
        super().__init__()
        self.paths = paths

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="help-box"):
            yield Static(KEYS_TEXT)
            yield Static("Editable key paths of this scenario:\n  " + "\n  ".join(self.paths))
