"""Table of probe figures: peak, mean, minimum, ripple, limit and margin."""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.widgets import DataTable

from .app_messages import ProbeChosen

__all__ = ["ProbeTable"]

COLUMNS = ("probe", "peak °C", "mean °C", "min °C", "ripple K", "limit °C", "margin K")


def _num(x: float | None, fmt: str = "{:.2f}") -> Text:
    return Text("—" if x is None else fmt.format(x), justify="right")


class ProbeTable(DataTable):
    """One row per probe; a negative margin is shown in the error style."""

    def on_mount(self) -> None:
        self.cursor_type = "row"
        self.zebra_stripes = True
        self.add_columns(*COLUMNS)

    def show(self, result: Any) -> None:
        """Fill the table from a ``RunResult`` (probe name -> ProbeStats)."""
        self.clear()
        for name, p in result.probes.items():
            margin = _num(p.margin_K, "{:+.1f}")
            if p.margin_K is not None and p.margin_K < 0:
                margin.stylize("bold red")
            elif p.margin_K is not None:
                margin.stylize("green")
            self.add_row(Text(name), _num(p.peak_C), _num(p.mean_C), _num(p.min_C),
                         _num(p.ripple_K), _num(p.limit_C, "{:.0f}"), margin, key=name)

    def on_data_table_row_highlighted(self, event: DataTable.RowHighlighted) -> None:
        if event.row_key is not None and event.row_key.value is not None:
            self.post_message(ProbeChosen(str(event.row_key.value)))
