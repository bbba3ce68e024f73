"""Temperature against time over one period of the periodic steady state, several probes
overlaid, with the run of the file as written drawn dimmed for before/after."""
from __future__ import annotations

from typing import Any

import numpy as np

from .plot_view import PlotView
from .textplot import Series

__all__ = ["TraceView", "resample_max", "STYLES"]

STYLES = ("cyan", "magenta", "green", "yellow", "blue", "red")


def resample_max(t: np.ndarray, y: np.ndarray, bins: int) -> np.ndarray:
    """Largest value of ``y`` in each of ``bins`` equal time bins (so no peak is lost).

    Empty bins (finer than the samples) take the value at the nearest earlier sample.
    """
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    if t.size == 0:
        return np.zeros(0)
    span = t[-1] - t[0]
    if span <= 0:
        return np.full(bins, y.max())
    k = np.minimum(((t - t[0]) / span * bins).astype(int), bins - 1)
    out = np.full(bins, -np.inf)
    np.maximum.at(out, k, y)
    idx = np.searchsorted(t, t[0] + (np.arange(bins) + 0.5) * span / bins, side="right") - 1
    fill = y[np.clip(idx, 0, y.size - 1)]
    return np.where(np.isfinite(out), out, fill)


def probe_series(result: Any, probes: list[str], tag: str = "", dim: bool = False):
    """One period of each probe as :class:`Series` (time from the start of the period)."""
    resp = result.response
    t = np.asarray(resp.t, float)
    out = []
    for k, name in enumerate(probes):
        node = result.model.probes.get(name) if result.model is not None else None
        if node is None:
            continue
        style = "grey50" if dim else STYLES[k % len(STYLES)]
        out.append(Series(name + tag, t - t[0], np.asarray(resp.T(node), float), style))
    return out


class TraceView(PlotView):
    """One period at the chosen probes (the selected one first), before/after."""

    def show(self, result: Any, probes: list[str], base: Any = None) -> None:
        series = []
        if base is not None and base is not result and probes and \
                probes[0] in base.probes:
            series += probe_series(base, probes[:1], " (file)", dim=True)
        series += probe_series(result, probes)
        t = np.asarray(result.response.t)
        self.plot(series, note=f"one period of {1e3 * (t[-1] - t[0]):.4g} ms in the "
                  "periodic steady state", x_title="time in the period")
