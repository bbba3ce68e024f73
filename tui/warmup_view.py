"""Warm-up from ambient (a cold start) on a log time axis, with a play mode: a time cursor
runs along the warm-up and the note line gives each probe's temperature at the cursor."""
from __future__ import annotations

import math
from typing import Any

import numpy as np

from .plot_view import PlotView
from .textplot import Series
from .trace_view import STYLES

__all__ = ["WarmupView", "SPEEDS"]

#: Play speeds, decades of time per second of play.
SPEEDS = (0.25, 0.5, 1.0, 2.0, 4.0)


class WarmupView(PlotView):
    """Call :meth:`show` with a warm-up Response; :meth:`play` starts the cursor."""

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self.data: list[tuple[str, np.ndarray, np.ndarray]] = []
        self.cursor: float | None = None
        self.speed_index = 2
        self._timer = None
        self._autoplay = False

    @property
    def speed(self) -> float:
        return SPEEDS[self.speed_index]

    def show(self, warm: Any, probes: dict[str, str], names: list[str],
             period: float = 0.0) -> None:
        """``warm``: the warm-up Response; ``probes``: probe name -> node; ``period``: of
        the heat waveforms, s (the time axis starts at a thousandth of it)."""
        t = np.asarray(warm.t, float)
        keep = t > 1e-3 * period if period > 0 else t > 0  # a log axis from 1/1000 period
        self.data = []
        for name in names:
            node = probes.get(name)
            if node is None:
                continue
            self.data.append((name, t[keep], np.asarray(warm.T(node), float)[keep]))
        series = [Series(n, x, y, STYLES[k % len(STYLES)])
                  for k, (n, x, y) in enumerate(self.data)]
        self.plot(series, note=self.readout(), xlog=True, x_title="time from a cold start",
                  cursor=self.cursor)
        if self._autoplay and self.data:
            self._autoplay = False
            self.stop()
            self.play()

    def readout(self) -> str:
        if not self.data:
            return ""
        if self.cursor is None:
            return f"play: p   speed {self.speed:g} decades/s (+ / -)"
        vals = "  ".join(f"{n} {np.interp(self.cursor, x, y):.1f} °C" for n, x, y in self.data)
        return f"t = {self.cursor:.3g} s   {vals}"

    def waiting(self, elapsed: float) -> None:
        """Note that the warm-up of the newest result is still being computed."""
        self.note = f"computing the warm-up … {elapsed:.0f} s (Esc stops)"
        self._draw()

    # -- play ----------------------------------------------------------------------------
    def play(self) -> None:
        if not self.data:
            self._autoplay = True  # starts when the warm-up arrives
            return
        if self._timer is not None:
            self.stop()
            return
        self.cursor = float(self.data[0][1][0])
        self._timer = self.set_interval(0.05, self._step)

    def stop(self) -> None:
        if self._timer is not None:
            self._timer.stop()
            self._timer = None

    def faster(self, step: int) -> None:
        self.speed_index = min(len(SPEEDS) - 1, max(0, self.speed_index + step))
        self._redraw_note()

    def _redraw_note(self) -> None:
        self.note = self.readout()
        self.opts["cursor"] = self.cursor
        self._draw()

    def _step(self) -> None:
        end = float(self.data[0][1][-1])
        self.cursor = 10 ** (math.log10(self.cursor) + 0.05 * self.speed)
        if self.cursor >= end:
            self.cursor = end
            self.stop()
        self._redraw_note()
