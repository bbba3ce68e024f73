"""The workbench's editing session: one scenario document, its edits, undo/redo, save.

The document is the user's TOML text parsed with ``tomlkit`` (a TOML-preserving reader and
writer), so an edit changes one value and keeps every comment, key order and blank line of
the file; saving in place writes that text through the project's atomic writer (a failed
write leaves the old file as it was).  A scenario with no file (the built-in demo) is saved
to a new file whose header lists the changes and the source.

Every edit is validated as a whole scenario before it is kept: a bad value raises
:class:`~pulsetherm.network.scenario.ScenarioError` and leaves the document unchanged.
Undo and redo keep whole-document snapshots (scenario files are a few kB).
"""
from __future__ import annotations

import copy
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Callable

import tomlkit

__all__ = ["Session", "Snapshot", "unique_name", "free_path"]


def free_path(path: Path, suffix: str) -> Path:
    """``name.<suffix>`` beside ``path``, numbered so that no existing file is replaced."""
    stem = path.name.removesuffix(".toml")
    cand = path.with_name(f"{stem}.{suffix}")
    k = 2
    while cand.exists():
        cand = path.with_name(f"{stem}.{suffix.replace('.', f'-{k}.', 1)}")
        k += 1
    return cand


@dataclass
class Snapshot:
    """One undo step: the label of the edit and the document text before it."""

    label: str
    text: str


def unique_name(base: str, taken: set[str]) -> str:
    """``base-2``, ``base-3``, ... : the first name not in ``taken``."""
    stem = base
    k = 2
    while f"{stem}-{k}" in taken:
        k += 1
    return f"{stem}-{k}"


@dataclass
class Session:
    """The edited scenario.  ``path`` is None for the built-in demo (save asks no path: it
    writes a new numbered file in ``save_dir``)."""

    text_as_read: str
    path: Path | None = None
    save_dir: Path = field(default_factory=Path.cwd)
    doc: Any = None
    saved_text: str = ""
    undo_stack: list[Snapshot] = field(default_factory=list)
    redo_stack: list[Snapshot] = field(default_factory=list)
    changes: list[str] = field(default_factory=list)
    #: (text, scenario) of the last edit, so the solve need not read the text again
    validated: tuple[str, Any] = ("", None)

    def __post_init__(self) -> None:
        self.doc = tomlkit.parse(self.text_as_read)
        self.saved_text = self.text_as_read

    # -- opening -----------------------------------------------------------------------
    @classmethod
    def open(cls, path: str | Path) -> "Session":
        p = Path(path)
        return cls(p.read_text(encoding="utf-8"), p, p.parent)

    @classmethod
    def demo(cls, save_dir: str | Path | None = None) -> "Session":
        from .demo import DEMO_TEXT

        return cls(DEMO_TEXT, None, Path(save_dir) if save_dir else Path.cwd())

    # -- reading -----------------------------------------------------------------------
    @property
    def source(self) -> str:
        return str(self.path) if self.path is not None else "built-in demo"

    def text(self) -> str:
        """The document as TOML text (the file with every edit applied)."""
        return tomlkit.dumps(self.doc)

    def data(self) -> dict[str, Any]:
        """Plain dict of the current document."""
        return self.doc.unwrap()

    def scenario(self, text: str | None = None):
        """The current scenario (validated); errors name the user's file and line."""
        from pulsetherm.network.scenario import loads

        return loads(self.text() if text is None else text, source=self.source)

    def scenario_as_saved(self):
        return self.scenario(self.saved_text)

    def get(self, path: str) -> Any:
        from pulsetherm.network.scenario import get_path

        value = get_path(self.doc, path)
        return value.unwrap() if hasattr(value, "unwrap") else value

    @property
    def dirty(self) -> bool:
        return self.text() != self.saved_text

    # -- editing -----------------------------------------------------------------------
    def edit(self, label: str, change: Callable[[Any], None]):
        """Apply ``change(doc_copy)``; keep it only if the scenario still validates.

        Returns the new scenario; raises ScenarioError (document unchanged) otherwise."""
        before = self.text()
        try:  # changed in place (a parse per edit is the slow part); restored on failure
            change(self.doc)
            text = tomlkit.dumps(self.doc)
            scn = self.scenario(text)
        except BaseException:
            self.doc = tomlkit.parse(before)
            raise
        self.validated = (text, scn)
        if text == before:
            return scn
        self.undo_stack.append(Snapshot(label, before))
        self.redo_stack.clear()
        self.changes.append(label)
        return scn

    def set_value(self, path: str, value: Any):
        """Set one value (``board.layers[1].thickness = "0.8 mm"``)."""
        from pulsetherm.network.scenario import set_path

        shown = value if isinstance(value, str) else tomlkit.item(value).as_string()
        return self.edit(f"{path} = {shown}", lambda d: set_path(d, path, value))

    def delete_key(self, path: str):
        """Remove an optional key (``devices[0].limit``)."""
        from pulsetherm.network.scenario import get_path

        head, _, last = path.rpartition(".")

        def change(d):
            table = get_path(d, head) if head else d
            if last in table:
                del table[last]
        return self.edit(f"{path} removed", change)

    def replace_table(self, path: str, values: dict[str, Any], label: str):
        """Replace the keys of the table at ``path`` (a kind switch swaps its fields)."""
        from pulsetherm.network.scenario import get_path

        def change(d):
            table = get_path(d, path)
            for key in [k for k in table if k not in values]:
                del table[key]
            for key, v in values.items():
                table[key] = v
        return self.edit(label, change)

    def _array(self, doc: Any, path: str):
        from pulsetherm.network.scenario import get_path

        return get_path(doc, path)

    def insert_item(self, array: str, index: int, item: dict[str, Any], label: str):
        return self.edit(label, lambda d: self._array(d, array).insert(index, item))

    def remove_item(self, array: str, index: int):
        def change(d):
            del self._array(d, array)[index]
        return self.edit(f"{array}[{index}] removed", change)

    def move_item(self, array: str, index: int, step: int):
        """Move element ``index`` of ``array`` by ``step`` places (layer order)."""
        def change(d):
            arr = self._array(d, array)
            j = index + step
            if not 0 <= j < len(arr):
                return
            item = copy.deepcopy(arr[index].unwrap())
            del arr[index]
            arr.insert(j, item)
        return self.edit(f"{array}[{index}] moved {'up' if step < 0 else 'down'}", change)

    def duplicate_item(self, array: str, index: int):
        """A copy of element ``index`` right after it, with a fresh unique ``name``."""
        def change(d):
            arr = self._array(d, array)
            item = copy.deepcopy(arr[index].unwrap())
            if "name" in item:
                taken = {str(x.get("name")) for x in arr}
                item["name"] = unique_name(str(item["name"]), taken)
            arr.insert(index + 1, item)
        return self.edit(f"{array}[{index}] duplicated", change)

    # -- undo / redo -------------------------------------------------------------------
    def undo(self) -> str | None:
        """Step back one edit; the edit's label, or None when there is nothing to undo."""
        if not self.undo_stack:
            return None
        snap = self.undo_stack.pop()
        self.redo_stack.append(Snapshot(snap.label, self.text()))
        self.doc = tomlkit.parse(snap.text)
        if self.changes:
            self.changes.pop()
        return snap.label

    def redo(self) -> str | None:
        if not self.redo_stack:
            return None
        snap = self.redo_stack.pop()
        self.undo_stack.append(Snapshot(snap.label, self.text()))
        self.doc = tomlkit.parse(snap.text)
        self.changes.append(snap.label)
        return snap.label

    # -- save / reload -----------------------------------------------------------------
    def header(self) -> str:
        """Comment block of a new file: when, from what, and the changes."""
        stamp = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
        lines = [f"# Written by pulsetherm ui on {stamp} from {self.source}.",
                 "# Changes:" if self.changes else "# No changes."]
        lines += [f"#   - {c}" for c in self.changes]
        return "\n".join(lines) + "\n\n"

    def save(self, new_file: bool = False) -> Path:
        """Write the scenario; returns the path written.

        In place (the default for a scenario read from a file): the document text with
        comments kept, written atomically.  ``new_file`` (always for the demo): a new,
        numbered file beside the original (or in ``save_dir``) headed by the change list.
        A failed write raises OSError and changes nothing on disk."""
        from pulsetherm.network.scenario import atomic_open

        text = self.text()
        self.scenario(text)  # never write a scenario that does not load
        if new_file or self.path is None:
            base = self.path if self.path is not None else self.save_dir / "demo.toml"
            target = free_path(base, "edited.toml")
            body = self.header() + text
        else:
            target = self.path
            body = text
        with atomic_open(target) as fh:
            fh.write(body)
        self.path = target
        self.saved_text = body
        self.text_as_read = body
        self.doc = tomlkit.parse(body)
        self.changes.clear()
        return target

    def reload(self) -> None:
        """Read the file again (the demo: start over); history is cleared."""
        text = self.path.read_text(encoding="utf-8") if self.path is not None else \
            self.text_as_read
        doc = tomlkit.parse(text)
        self.scenario(text)
        self.doc = doc
        self.text_as_read = self.saved_text = text
        self.undo_stack.clear()
        self.redo_stack.clear()
        self.changes.clear()
