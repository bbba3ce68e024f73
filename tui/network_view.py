"""What the builder made: nodes grouped by part and layer, with each group's heat
capacity C, the resistance R through it (the series sum along its node chain) and
tau = R*C; under each group its nodes (named without the group's prefix) with C, the
resistance to the next node and tau."""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.widgets import DataTable

from .fit import ellipsize

__all__ = ["NetworkView", "network_rows"]


def _eng(x: float, unit: str) -> str:
    if x == 0 or x != x:
        return f"0 {unit}"
    for f, p in ((1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n")):
        if abs(x) >= f:
            return f"{x / f:.3g} {p}{unit}"
    return f"{x:.2e} {unit}"


def _common_prefix(nodes: list[str]) -> str:
    """The dotted prefix the group's node names share (``final.die.``)."""
    if len(nodes) < 2:
        return nodes[0].rpartition(".")[0] + "." if nodes and "." in nodes[0] else ""
    head = nodes[0]
    for n in nodes[1:]:
        while not n.startswith(head):
            head = head[:-1]
    return head[: head.rfind(".") + 1]


def network_rows(model: Any) -> list[tuple[int, str, str, str, str]]:
    """Rows ``(depth, name, C, R, tau)``: a heading per part/layer group, then its nodes."""
    net = model.network
    g = net.graph
    groups: dict[str, list[str]] = {}
    for n in net.nodes:
        if g.nodes[n].get("boundary"):
            continue
        groups.setdefault(str(g.nodes[n].get("label") or n.split(".")[0]), []).append(n)
    rows = []
    for label, nodes in groups.items():
        C = sum(float(g.nodes[n].get("capacity", 0.0)) for n in nodes)
        R = 0.0
        for a, b in zip(nodes, nodes[1:]):
            if g.has_edge(a, b):
                R += 1.0 / float(g.edges[a, b]["conductance"])
        rows.append((0, f"{label} ({len(nodes)} nodes)", _eng(C, "J/K"),
                     _eng(R, "K/W") if R else "—", _eng(R * C, "s") if R and C else "—"))
        prefix = _common_prefix(nodes)
        for a, b in zip(nodes, nodes[1:] + [None]):
            c = float(g.nodes[a].get("capacity", 0.0))
            short = a[len(prefix):] or a
            if b is not None and g.has_edge(a, b):
                r = 1.0 / float(g.edges[a, b]["conductance"])
                rows.append((1, short, _eng(c, "J/K"), _eng(r, "K/W"),
                             _eng(r * c, "s") if c else "—"))
            else:
                rows.append((1, short, _eng(c, "J/K"), "—", "—"))
    for b in net.boundaries:
        rows.append((0, f"{b} (fixed temperature)", "—", "—", "—"))
    return rows


class NetworkView(DataTable):
    def __init__(self, **kwargs) -> None:
        super().__init__(cursor_type="row", **kwargs)
        self._rows: list[tuple[int, str, str, str, str]] = []

    def show(self, model: Any) -> None:
        self._rows = network_rows(model)
        self._fill()

    def on_resize(self) -> None:
        self._fill()

    def _fill(self) -> None:
        avail = max(30, self.size.width - 2)
        name_w = max(10, min(40, avail - 3 * 9 - 8))
        self.clear(columns=True)
        self.add_column(ellipsize("group / node", name_w), width=name_w)
        self.add_column("C", width=9)
        self.add_column("R to next", width=9)
        self.add_column("tau", width=9)
        for depth, name, c, r, tau in self._rows:
            label = Text(ellipsize(("  " * depth) + name, name_w),
                         style="bold" if depth == 0 else "")
            self.add_row(label, Text(c, justify="right"), Text(r, justify="right"),
                         Text(tau, justify="right"))
