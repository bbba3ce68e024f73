"""A text plot that redraws itself to its size (see :mod:`pulsetherm.tui.textplot`)."""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.widgets import Static

from .textplot import Series, draw

__all__ = ["PlotView"]


class PlotView(Static):
    """Holds series and axis titles; draws them to fit whenever it is resized."""

    def __init__(self, **kwargs) -> None:
        super().__init__("", **kwargs)
        self.series: list[Series] = []
        self.opts: dict[str, Any] = {}
        self.note = ""

    def plot(self, series: list[Series], note: str = "", **opts: Any) -> None:
        self.series, self.opts, self.note = series, opts, note
        self._draw()

    def set_cursor(self, x: float | None) -> None:
        self.opts["cursor"] = x
        self._draw()

    def on_resize(self) -> None:
        self._draw()

    def _draw(self) -> None:
        w, h = self.content_size.width, self.content_size.height
        if w <= 0 or h <= 0:
            return
        rows = h - (1 if self.note else 0)
        lines = draw(self.series, w, rows, **self.opts) if rows >= 5 else []
        out = Text("\n").join(lines)
        if self.note:
            note = Text(self.note, style="dim")
            note.truncate(w, overflow="ellipsis")
            out = Text("\n").join([out, note]) if lines else note
        self.update(out)

    def text_lines(self) -> list[str]:
        """The plot as plain lines (for tests and captures)."""
        w, h = self.content_size.width, self.content_size.height
        return [t.plain for t in draw(self.series, w, h - (1 if self.note else 0),
                                      **self.opts)]
