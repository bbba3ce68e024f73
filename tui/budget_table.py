"""Where the heat is held up: each layer's share of its part's mean rise."""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.widgets import DataTable

__all__ = ["BudgetTable"]


class BudgetTable(DataTable):
    """Rows ``part, layer, share %, rise K`` with a bar for the share."""

    def on_mount(self) -> None:
        self.cursor_type = "none"
        self.add_columns("part", "layer", "share", "rise K", "")

    def show(self, budget: list[dict[str, Any]]) -> None:
        self.clear()
        for row in budget:
            share = float(row["share"])
            bar = "█" * max(0, min(20, round(share * 20)))
            self.add_row(Text(str(row["part"])), Text(str(row["layer"])),
                         Text(f"{100 * share:.1f} %", justify="right"),
                         Text(f"{row['rise_K']:.2f}", justify="right"), Text(bar, style="cyan"))
