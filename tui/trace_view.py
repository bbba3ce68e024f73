"""One period of the periodic steady state at the chosen probe, as a sparkline."""
from __future__ import annotations

from typing import Any

import numpy as np
from textual.app import ComposeResult
from textual.containers import Vertical
from textual.widgets import Label, Sparkline

__all__ = ["TraceView", "resample_max"]


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


class TraceView(Vertical):
    """Title line plus a sparkline of temperature over one period."""

    def compose(self) -> ComposeResult:
        yield Label("—", id="trace-title")
        yield Sparkline([], summary_function=max, id="trace-line")
        yield Label("", id="trace-scale")

    def show(self, result: Any, probe: str, width: int = 120) -> None:
        """Draw ``probe`` of a ``RunResult`` (its ``response`` holds one period)."""
        resp = result.response
        node = result.model.probes.get(probe, probe) if result.model is not None else probe
        t = np.asarray(resp.t)
        y = np.asarray(resp.T(node))
        data = resample_max(t, y, max(16, width))
        self.query_one("#trace-line", Sparkline).data = list(map(float, data))
        period = t[-1] - t[0]
        self.query_one("#trace-title", Label).update(
            f"{probe}: one period of {period * 1e3:.4g} ms in the periodic steady state")
        self.query_one("#trace-scale", Label).update(
            f"min {y.min():.2f} °C   max {y.max():.2f} °C   (each column: the hottest sample "
            f"in {period / data.size * 1e6:.3g} µs)")
