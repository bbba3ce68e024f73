"""Preview of the heat waveforms: power against time over one period of the scenario."""
from __future__ import annotations

from typing import Any

import numpy as np

from .plot_view import PlotView
from .textplot import Series
from .trace_view import STYLES

__all__ = ["WaveformView", "waveform_points"]


def waveform_points(wave: Any, period: float) -> tuple[np.ndarray, np.ndarray]:
    """Corner points of a waveform over ``[0, period]`` (the exact piecewise-linear form)."""
    from pulsetherm.waveforms.canonical import as_piecewise

    pw = as_piecewise(wave)
    edges = np.asarray(pw.edges, float)
    level = np.asarray(pw.level, float)
    slope = np.zeros_like(level) if pw.slope is None else np.asarray(pw.slope, float)
    span = edges[-1] if edges[-1] > 0 else period
    reps = max(1, int(round(period / span))) if span < period else 1
    xs, ys = [], []
    for r in range(min(reps, 50)):
        for k in range(len(level)):
            a, b = edges[k], edges[k + 1]
            xs += [r * span + a, r * span + b]
            ys += [level[k], level[k] + slope[k] * (b - a)]
    return np.asarray(xs), np.asarray(ys)


class WaveformView(PlotView):
    def show(self, model: Any, period: float) -> None:
        series = []
        for k, (name, wave) in enumerate(model.waveforms.items()):
            try:
                x, y = waveform_points(wave, period)
            except (ValueError, AttributeError, TypeError):
                continue
            series.append(Series(name, x, y, STYLES[k % len(STYLES)]))
        self.plot(series, y_title="W", x_title="time",
                  note="heat of each source over one period")
