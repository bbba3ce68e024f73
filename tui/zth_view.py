"""Pulsed thermal impedance at a probe: Zth against pulse width, one line per duty cycle
(single pulse at duty 0), on a log width axis."""
from __future__ import annotations

from typing import Any

import numpy as np

from .plot_view import PlotView
from .textplot import Series
from .trace_view import STYLES

__all__ = ["ZthView"]


class ZthView(PlotView):
    def show(self, zth: Any, probe: str, duties: tuple[float, ...] = (0.0, 0.1, 0.5)) -> None:
        p = zth.pulsed
        widths = np.atleast_1d(np.asarray(p.widths, float))
        all_d = [float(d) for d in np.atleast_1d(p.duties)]
        Z = np.asarray(p.K_per_W, float)
        if Z.shape[0] != len(all_d):
            Z = Z.T
        series = []
        for k, d in enumerate(all_d):
            if any(abs(d - want) < 1e-12 for want in duties):
                name = "single pulse" if d == 0 else f"duty {d:g}"
                series.append(Series(name, widths, Z[k], STYLES[k % len(STYLES)]))
        self.plot(series, y_title="Zth K/W", x_title="pulse width", xlog=True,
                  note=f"{probe} from its own heat input {zth.input}; "
                       f"R_th {zth.R_th:.3g} K/W")
