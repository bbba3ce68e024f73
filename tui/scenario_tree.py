"""The scenario as a tree: board layers, mount, devices and their stacks, lines, heaters,
waveforms, probes.  Choosing a node posts :class:`ItemChosen` with its key path."""
from __future__ import annotations

from typing import Any

from textual.widgets import Tree

from .app_messages import ItemChosen

__all__ = ["ScenarioTree", "tree_items"]

#: (array path, label, child arrays) shown in this order.
_ARRAYS = (("devices", "devices", ("stack",)), ("lines", "lines", ()),
           ("heaters", "heaters", ()), ("probes", "probes", ()),
           ("elements", "elements", ()))


def _label(item: Any, i: int) -> str:
    if isinstance(item, dict):
        name = item.get("name") or item.get("material") or item.get("kind")
        if name:
            return str(name)
    return f"#{i + 1}"


def tree_items(data: dict[str, Any]) -> list[tuple[int, str, str | None, str | None, int | None]]:
    """Rows ``(depth, label, path, array, index)`` of the tree in display order; ``path``
    None for a heading."""
    out: list[tuple[int, str, str | None, str | None, int | None]] = []
    out.append((0, "scenario", "", None, None))
    out.append((1, "model", "model", None, None))  # editable even when not written
    wav = data.get("waveforms") or {}
    out.append((0, "waveforms", None, None, None))
    for name in wav:
        out.append((1, name, f"waveforms.{name}", None, None))
    board = data.get("board")
    if board is not None:
        out.append((0, "board", "board", None, None))
        for i, lay in enumerate(board.get("layers") or []):
            out.append((1, _label(lay, i), f"board.layers[{i}]", "board.layers", i))
            if isinstance(lay, dict) and "vias" in lay:
                out.append((2, "vias", f"board.layers[{i}].vias", None, None))
    mount = data.get("mount") or {}
    out.append((0, "mount", None, None, None))
    for i, lay in enumerate(mount.get("interface") or []):
        out.append((1, _label(lay, i), f"mount.interface[{i}]", "mount.interface", i))
    if "sink" in mount:
        out.append((1, f"sink ({mount['sink'].get('kind', '?')})", "mount.sink", None, None))
    for arr, label, children in _ARRAYS:
        items = data.get(arr) or []
        if not items and arr not in ("devices",):
            continue
        out.append((0, label, None, None, None))
        for i, item in enumerate(items):
            out.append((1, _label(item, i), f"{arr}[{i}]", arr, i))
            for child in children:
                for j, lay in enumerate(item.get(child) or []):
                    out.append((2, _label(lay, j), f"{arr}[{i}].{child}[{j}]",
                                f"{arr}[{i}].{child}", j))
            if isinstance(item, dict) and isinstance(item.get("foster"), dict):
                out.append((2, "foster", f"{arr}[{i}].foster", None, None))
    return out


class ScenarioTree(Tree):
    """Tree of the scenario's tables; the node data is ``(path, array, index)``."""

    def __init__(self, **kwargs) -> None:
        super().__init__("scenario", **kwargs)
        self.show_root = False
        self.guide_depth = 2

    def show(self, data: dict[str, Any], select: str | None = None) -> None:
        """Rebuild from the plain dict; keep the cursor on ``select`` (a path) if given."""
        self.clear()
        stack = [self.root]
        chosen = None
        rows = tree_items(data)
        for k, (depth, label, path, array, index) in enumerate(rows):
            parent = stack[min(depth, len(stack) - 1)]
            has_children = k + 1 < len(rows) and rows[k + 1][0] > depth
            if has_children:
                node = parent.add(label, data=(path, array, index), expand=True)
            else:
                node = parent.add_leaf(label, data=(path, array, index))
            del stack[depth + 1:]
            stack.append(node)
            if path is not None and path == select:
                chosen = node
        self.root.expand_all()
        if chosen is not None:
            self.call_after_refresh(self.move_cursor, chosen)

    def on_tree_node_highlighted(self, event: Tree.NodeHighlighted) -> None:
        event.stop()
        if event.node.data is None:
            return
        path, array, index = event.node.data
        self.post_message(ItemChosen(path, array, index))
