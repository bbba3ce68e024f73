"""Choose a material from the library by typing part of its name or description."""
from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, OptionList, Static
from textual.widgets.option_list import Option

__all__ = ["MaterialPicker", "material_choices", "search_materials"]


def material_choices() -> list[tuple[str, str]]:
    """(name, one-line description) of every material of the library."""
    from pulsetherm.network.materials import default_library

    lib = default_library()
    out = []
    for name in lib.names:
        m = lib.get(name)
        desc = getattr(m, "description", "") or ""
        k = getattr(m, "k", None)
        kt = f"k {float(k):.3g} W/(m·K)" if isinstance(k, (int, float)) else ""
        out.append((name, " ".join(x for x in (kt, desc) if x)))
    return out


def search_materials(choices: list[tuple[str, str]], text: str) -> list[tuple[str, str]]:
    """Materials whose name or description holds every word of ``text``."""
    words = text.lower().split()
    return [c for c in choices if all(w in (c[0] + " " + c[1]).lower() for w in words)]


class MaterialPicker(ModalScreen[str | None]):
    BINDINGS = [Binding("escape", "dismiss(None)", "back")]

    def __init__(self, current: str | None = None) -> None:
        super().__init__()
        self.current = current
        self.choices = material_choices()

    def compose(self) -> ComposeResult:
        with Vertical(id="picker-box"):
            yield Static("material: type to search, Enter or click to choose, Esc to go back")
            yield Input(placeholder="search, e.g. copper, laminate, solder", id="picker-q")
            yield OptionList(id="picker-list")

    def on_mount(self) -> None:
        self._fill("")
        self.query_one("#picker-q", Input).focus()

    def _fill(self, text: str) -> None:
        ol = self.query_one("#picker-list", OptionList)
        ol.clear_options()
        for name, desc in search_materials(self.choices, text):
            ol.add_option(Option(f"{name}  {desc}", id=name))
        if ol.option_count:
            ol.highlighted = 0

    def on_input_changed(self, event: Input.Changed) -> None:
        event.stop()
        self._fill(event.value)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        ol = self.query_one("#picker-list", OptionList)
        if ol.highlighted is not None and ol.option_count:
            self.dismiss(ol.get_option_at_index(ol.highlighted).id)

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        event.stop()
        self.dismiss(event.option.id)
