"""Table of probe figures: peak, mean, minimum, ripple, limit, margin and the change of
the peak against the file as written.

A broken limit is marked by text ("OVER" after the margin, "!" before the name), not by
colour alone, so it shows in the selected row too.  The columns fit the widget's width:
the least needed go first (min, ripple, mean, limit, change, peak), the margin last; long
probe names end in "…".
"""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.widgets import DataTable

from .app_messages import ProbeChosen
from .fit import ellipsize, fit_columns

__all__ = ["ProbeTable", "probe_rows", "COLUMNS"]

COLUMNS = ("probe", "peak °C", "mean °C", "min °C", "ripple K", "limit °C", "vs file K",
           "margin K")
#: Columns dropped first when the table is narrow (indices into COLUMNS).
DROP_ORDER = [3, 4, 2, 5, 6, 1]


def _num(x: float | None, fmt: str = "{:.2f}") -> str:
    return "—" if x is None else fmt.format(x)


def probe_rows(result: Any, base: Any = None) -> list[tuple[str, list[str], bool]]:
    """Rows ``(name, cells, broken)`` of a RunResult; ``base`` is the run of the file as
    written (for the change of the peak)."""
    rows = []
    for name, p in result.probes.items():
        broken = p.margin_K is not None and p.margin_K < 0
        change = None
        if base is not None and name in base.probes:
            change = p.peak_C - base.probes[name].peak_C
            change = 0.0 if abs(change) < 0.005 else change  # no "-0.00"
        margin = _num(p.margin_K, "{:+.1f}") + (" OVER" if broken else "")
        cells = [("! " if broken else "") + name, _num(p.peak_C), _num(p.mean_C),
                 _num(p.min_C), _num(p.ripple_K), _num(p.limit_C, "{:.0f}"),
                 _num(change, "{:+.2f}"), margin]
        rows.append((name, cells, broken))
    return rows


class ProbeTable(DataTable):
    """One row per probe; fits its width (see the module docstring)."""

    def __init__(self, **kwargs) -> None:
        super().__init__(cursor_type="row", zebra_stripes=True, **kwargs)
        self._rows: list[tuple[str, list[str], bool]] = []
        self._shown_width = -1
        self.selected: str | None = None

    def show(self, result: Any, base: Any = None) -> None:
        """Fill the table from a ``RunResult`` (and the file's run for the change)."""
        self._rows = probe_rows(result, base)
        self._fill()

    def on_resize(self) -> None:
        if self.size.width != self._shown_width:
            self._fill()

    def _fill(self) -> None:
        avail = max(10, self.size.width - 2)
        self._shown_width = self.size.width
        widths = [max([len(COLUMNS[c])] + [len(r[1][c]) for r in self._rows])
                  for c in range(len(COLUMNS))]
        # names keep up to 14 cells before a figure column is given up
        keep, name_w = fit_columns(widths, DROP_ORDER, avail, first_min=min(widths[0], 14))
        cursor = self.cursor_row
        self.clear(columns=True)
        for c in keep:
            w = name_w if c == 0 else widths[c]
            self.add_column(ellipsize(COLUMNS[c], w), width=w, key=str(c))
        for name, cells, broken in self._rows:
            row = []
            for c in keep:
                w = name_w if c == 0 else widths[c]
                t = Text(ellipsize(cells[c], w), justify="left" if c == 0 else "right")
                if c == 7 and broken:
                    t.stylize("bold red")
                elif c == 7 and cells[c] != "—":
                    t.stylize("green")
                if c == 0 and broken:
                    t.stylize("bold red")
                row.append(t)
            self.add_row(*row, key=name)
        if self._rows:
            self.move_cursor(row=min(max(cursor, 0), len(self._rows) - 1))

    def on_data_table_row_highlighted(self, event: DataTable.RowHighlighted) -> None:
        event.stop()
        if event.row_key is not None and event.row_key.value is not None:
            self.selected = str(event.row_key.value)
            self.post_message(ProbeChosen(self.selected))
