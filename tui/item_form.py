"""The form for the table chosen in the tree: one labelled field per key of its kind.

Enter in a field posts :class:`FieldEdited`; Escape puts the stored value back.  A bad
value gets its message right under the field (the scenario keeps its last good value).
A ``kind`` choice (waveform, sink) posts :class:`KindSwitched` so the form's fields are
swapped for those of the new kind.  Elements of arrays get buttons to add, remove, move
and duplicate; material fields a button that opens the material picker.
"""
from __future__ import annotations

from typing import Any

from textual.app import ComposeResult
from textual.containers import Horizontal, VerticalScroll
from textual.widgets import Button, Input, Label, Select, Static

from .app_messages import FieldEdited, KindSwitched, MaterialWanted, StructureEdit
from .fields import FieldSpec, form_fields, show_value

__all__ = ["ItemForm"]

_MATERIAL_KEYS = ("material", "fill", "dielectric")


class ItemForm(VerticalScroll):
    """Fields of one table of the scenario (``path``)."""

    can_focus = False

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.path: str | None = None
        self.array: str | None = None
        self.index: int | None = None
        self.fields: list[FieldSpec] = []
        self.errors: dict[str, str] = {}

    # -- state -------------------------------------------------------------------------
    def show(self, data: dict[str, Any], path: str | None, array: str | None = None,
             index: int | None = None) -> None:
        """Show the fields of the table at ``path`` of the plain dict ``data``."""
        self.path, self.array, self.index = path, array, index
        try:
            self.fields = form_fields(data, path) if path is not None else []
        except (KeyError, ValueError):
            self.fields = []
        self.errors.clear()
        self.refresh(recompose=True)

    def update_values(self, data: dict[str, Any]) -> bool:
        """New stored values after an edit, keeping the widgets (and the focus) when the
        same keys are shown; recomposes (and returns True) when the keys changed."""
        try:
            new = form_fields(data, self.path) if self.path is not None else []
        except (KeyError, ValueError):
            new = []
        if [f.path for f in new] == [f.path for f in self.fields]:
            self.fields = new
            boxes = {w.id: w for w in self.query(Input)}
            for i, f in enumerate(new):
                box = boxes.get(f"f-{i}")
                if box is not None and not box.has_focus:
                    box.value = show_value(f.value)
            return False
        self.fields = new
        self.errors.clear()
        self.refresh(recompose=True)
        return True

    def spec(self, path: str) -> FieldSpec | None:
        return next((f for f in self.fields if f.path == path), None)

    def input_for(self, path: str) -> Input | None:
        for i, f in enumerate(self.fields):
            if f.path == path:
                found = self.query(f"#f-{i}")
                return found.first() if found else None
        return None

    def show_error(self, path: str, text: str) -> bool:
        """Put ``text`` under the field of ``path``; False if the form has no such field."""
        for i, f in enumerate(self.fields):
            if f.path == path:
                text = text.removeprefix(f"{path} = ").removeprefix(f"{path}: ")
                self.errors[path] = text
                msg = self.query(f"#e-{i}")
                if msg:
                    msg.first().update(text)
                    msg.first().set_class(True, "-shown")
                box = self.query(f"#f-{i}")
                if box:
                    box.first().set_class(True, "-bad")
                return True
        return False

    def clear_error(self, path: str) -> None:
        for i, f in enumerate(self.fields):
            if f.path == path:
                self.errors.pop(path, None)
                for sel, cls in ((f"#e-{i}", "-shown"), (f"#f-{i}", "-bad")):
                    found = self.query(sel)
                    if found:
                        found.first().set_class(False, cls)
                msg = self.query(f"#e-{i}")
                if msg:
                    msg.first().update("")

    # -- layout ------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        if self.path is None:
            yield Static("Choose an item in the tree to edit it.", classes="form-note")
            return
        yield Static(self.path or "scenario", classes="form-title")
        for i, f in enumerate(self.fields):
            with Horizontal(classes="form-row"):
                yield Label(f.key, classes="form-key")
                if f.tag == "choice":
                    options = [(c, c) for c in f.choices]
                    yield Select(options, value=f.value if f.value in f.choices else
                                 Select.NULL, allow_blank=not f.required, id=f"f-{i}",
                                 compact=True)
                else:
                    box = Input(show_value(f.value), placeholder=f.placeholder, id=f"f-{i}",
                                compact=True, select_on_focus=True)
                    box.tooltip = f"{f.path}: {f.hint}, e.g. {f.example}" + (
                        f" — {f.doc}" if f.doc else "")
                    yield box
                if f.key in _MATERIAL_KEYS:
                    yield Button("lib", id=f"m-{i}", classes="pick", compact=True,
                                 tooltip="choose from the material library")
            yield Static("", id=f"e-{i}", classes="form-error")
        if self.array is not None:
            with Horizontal(classes="form-buttons"):
                what = "layer" if "layers" in self.array or "stack" in self.array \
                    or "interface" in self.array else "copy"
                if what == "layer":
                    yield Button("+ layer", id="b-add", compact=True)
                else:
                    yield Button("duplicate", id="b-dup", compact=True)
                yield Button("remove", id="b-del", compact=True)
                yield Button("up", id="b-up", compact=True)
                yield Button("down", id="b-down", compact=True)

    # -- events ------------------------------------------------------------------------
    def _index_of(self, widget_id: str | None) -> FieldSpec | None:
        if not widget_id or "-" not in widget_id:
            return None
        try:
            return self.fields[int(widget_id.split("-", 1)[1])]
        except (ValueError, IndexError):
            return None

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        f = self._index_of(event.input.id)
        if f is not None:
            self.post_message(FieldEdited(f.path, event.value))

    def on_select_changed(self, event: Select.Changed) -> None:
        event.stop()
        f = self._index_of(event.select.id)
        if f is None or event.value == f.value:
            return
        value = "" if event.value is Select.NULL else str(event.value)
        if f.key == "kind":
            if value:
                self.post_message(KindSwitched(self.path or "", value))
        else:
            self.post_message(FieldEdited(f.path, value))

    def on_button_pressed(self, event: Button.Pressed) -> None:
        event.stop()
        bid = event.button.id or ""
        if bid.startswith("m-"):
            f = self._index_of(bid)
            if f is not None:
                self.post_message(MaterialWanted(f.path))
            return
        op = {"b-add": "add", "b-dup": "duplicate", "b-del": "remove", "b-up": "up",
              "b-down": "down"}.get(bid)
        if op and self.array is not None and self.index is not None:
            self.post_message(StructureEdit(op, self.array, self.index))

    def on_key(self, event) -> None:
        if event.key == "escape" and isinstance(self.app.focused, Input):
            f = self._index_of(self.app.focused.id)
            if f is not None:
                self.app.focused.value = show_value(f.value)
                self.clear_error(f.path)
                event.stop()
