"""Where the heat is held up: each layer's share of its part's mean rise."""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.widgets import DataTable

from .fit import ellipsize

__all__ = ["BudgetTable"]


class BudgetTable(DataTable):
    """Rows ``part, layer, share %, rise K`` with a bar for the share."""

    def __init__(self, **kwargs) -> None:
        super().__init__(cursor_type="row", **kwargs)
        self._rows: list[dict[str, Any]] = []

    def show(self, budget: list[dict[str, Any]]) -> None:
        self._rows = list(budget)
        self._fill()

    def on_resize(self) -> None:
        self._fill()

    def _fill(self) -> None:
        avail = max(20, self.size.width - 2)
        self.clear(columns=True)
        part_w = min(10, max([4] + [len(str(r["part"])) for r in self._rows]))
        layer_w = min(16, max([5] + [len(str(r["layer"])) for r in self._rows]))
        bar_w = max(0, avail - part_w - layer_w - 7 - 8 - 10)
        self.add_column("part", width=part_w)
        self.add_column("layer", width=layer_w)
        self.add_column("share", width=7)
        self.add_column("rise K", width=8)
        if bar_w >= 4:
            self.add_column("", width=bar_w)
        for row in self._rows:
            share = float(row["share"])
            cells = [Text(ellipsize(str(row["part"]), part_w)),
                     Text(ellipsize(str(row["layer"]), layer_w)),
                     Text(f"{100 * share:.1f} %", justify="right"),
                     Text(f"{row['rise_K']:.2f}", justify="right")]
            if bar_w >= 4:
                cells.append(Text("█" * max(0, min(bar_w, round(share * bar_w))),
                                  style="cyan"))
            self.add_row(*cells)
