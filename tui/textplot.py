"""Line plots drawn with text: braille dots (2 x 4 per character) inside labelled axes.

:func:`draw` returns the lines of a plot (Rich ``Text``): a title line with the legend,
the plot rows with the temperature (or any) ticks on the left, the time axis with its
ticks and its title.  Each column keeps the lowest and the highest sample that fall in it,
so a short spike is never lost.  A log time axis is used for warm-ups from a cold start.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from itertools import groupby

import numpy as np
from rich.text import Text

__all__ = ["Series", "draw", "time_unit", "nice_ticks"]

_BITS = np.array([[0x01, 0x08], [0x02, 0x10], [0x04, 0x20], [0x40, 0x80]], dtype=np.uint8)


@dataclass
class Series:
    """One line: name (legend), x and y (same length), a Rich style."""

    name: str
    x: np.ndarray
    y: np.ndarray
    style: str = "cyan"


def time_unit(span_s: float) -> tuple[str, float]:
    """A readable time unit for a span in seconds: (name, seconds per unit)."""
    for name, f in (("s", 1.0), ("ms", 1e-3), ("µs", 1e-6), ("ns", 1e-9)):
        if span_s >= 2 * f or name == "ns":
            return name, f
    return "s", 1.0  # pragma: no cover


def nice_ticks(lo: float, hi: float, n: int = 4) -> list[float]:
    """About ``n`` round numbers between ``lo`` and ``hi`` (1, 2, 5 steps)."""
    if not hi > lo:
        return [lo]
    raw = (hi - lo) / max(n, 1)
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 5, 10) if m * mag >= raw)
    first = math.ceil(lo / step - 1e-9) * step
    out = []
    v = first
    while v <= hi + 1e-9 * step:
        out.append(0.0 if abs(v) < 1e-12 * step else v)
        v += step
    return out


def _fmt(v: float) -> str:
    return f"{v:.4g}"


def _columns(x: np.ndarray, y: np.ndarray, x0: float, x1: float, cols: int):
    """Lowest and highest y in each of ``cols`` pixel columns (gaps joined)."""
    k = np.clip(((x - x0) / (x1 - x0) * cols).astype(int), 0, cols - 1)
    lo = np.full(cols, np.inf)
    hi = np.full(cols, -np.inf)
    np.minimum.at(lo, k, y)
    np.maximum.at(hi, k, y)
    edges = x0 + (x1 - x0) * np.arange(cols + 1) / cols
    at_edge = np.interp(edges, x, y)
    inside = (edges[:-1] >= x[0]) & (edges[1:] <= x[-1])
    lo = np.where(inside, np.minimum(lo, np.minimum(at_edge[:-1], at_edge[1:])), lo)
    hi = np.where(inside, np.maximum(hi, np.maximum(at_edge[:-1], at_edge[1:])), hi)
    return lo, hi


def draw(series: list[Series], width: int, height: int, *, x_title: str = "time",
         y_title: str = "°C", xlog: bool = False, cursor: float | None = None,
         x_unit: tuple[str, float] | None = None) -> list[Text]:
    """The plot as ``height`` lines of at most ``width`` cells.

    ``x`` values are seconds (shown in :func:`time_unit` units unless ``x_unit`` is
    given); with ``xlog`` the x axis is logarithmic (x must be > 0).  ``cursor`` draws a
    vertical line at that x."""
    series = [s for s in series if len(s.x) > 1]
    legend = _legend(series, y_title, x_title, width)
    if not series or width < 20 or height < 5:
        return [legend] + [Text("(no data)" if not series else "(too small)")]
    xs = [np.log10(np.asarray(s.x, float)) if xlog else np.asarray(s.x, float) for s in series]
    x0 = min(float(x[0]) for x in xs)
    x1 = max(float(x[-1]) for x in xs)
    ys = [np.asarray(s.y, float) for s in series]
    y0 = min(float(y.min()) for y in ys)
    y1 = max(float(y.max()) for y in ys)
    if not y1 > y0:
        y0, y1 = y0 - 0.5, y1 + 0.5
    pad = 0.04 * (y1 - y0)
    y0, y1 = (max(0.0, y0 - pad) if y0 >= 0 else y0 - pad), y1 + pad
    if not x1 > x0:
        x1 = x0 + 1.0
    H = height - 3
    y_ticks = {0: _fmt(y1), H - 1: _fmt(y0)}
    if H >= 5:
        y_ticks[(H - 1) // 2] = _fmt(y1 - (y1 - y0) * ((H - 1) // 2) / (H - 1))
    gutter = max(len(v) for v in y_ticks.values()) + 1
    W = width - gutter - 1
    px, py = 2 * W, 4 * H
    bits = np.zeros((H, W), dtype=np.uint8)
    owner = np.full((H, W), -1, dtype=int)
    for idx, (x, y) in enumerate(zip(xs, ys)):
        lo, hi = _columns(x, y, x0, x1, px)
        ok = np.isfinite(lo)
        r_lo = np.clip(((y1 - hi) / (y1 - y0) * (py - 1)).round().astype(int), 0, py - 1)
        r_hi = np.clip(((y1 - lo) / (y1 - y0) * (py - 1)).round().astype(int), 0, py - 1)
        r = np.arange(py)[:, None]
        dots = (r >= r_lo[None, :]) & (r <= r_hi[None, :]) & ok[None, :]  # (py, px)
        mine = (dots.reshape(H, 4, W, 2) * _BITS[None, :, None, :]).sum(axis=(1, 3))
        mine = mine.astype(np.uint8)
        bits |= mine
        owner[mine > 0] = idx
    cur_col = None
    if cursor is not None:
        cx = math.log10(cursor) if xlog and cursor > 0 else cursor
        if x0 <= cx <= x1:
            cur_col = min(W - 1, int((cx - x0) / (x1 - x0) * W))
    lines = [legend]
    for r in range(H):
        line = Text(y_ticks.get(r, "").rjust(gutter - 1) + " ", style="dim")
        line.append("┤" if r in y_ticks else "│", style="dim")
        cells = []
        for c in range(W):
            b = int(bits[r, c])
            if c == cur_col:
                cells.append((chr(0x2800 + b) if b else "│", "bold yellow"))
            elif b:
                cells.append((chr(0x2800 + b), series[owner[r, c]].style))
            else:
                cells.append((" ", ""))
        for style, run in groupby(cells, key=lambda x: x[1]):  # one span per style run
            line.append("".join(ch for ch, _ in run), style=style or None)
        lines.append(line)
    # x axis
    if xlog:
        lo_d, hi_d = math.ceil(x0 - 1e-9), math.floor(x1 + 1e-9)
        ticks = [float(d) for d in range(lo_d, hi_d + 1)]
        if len(ticks) > max(2, W // 8):
            ticks = ticks[::math.ceil(len(ticks) / max(2, W // 8))]
        unit = x_unit or ("s", 1.0)
        label = [_tlabel(10 ** t) for t in ticks]
    else:
        unit = x_unit or time_unit(x1 - x0)
        ticks = nice_ticks(x0, x1, max(2, W // 12))
        label = [_fmt(t / unit[1]) for t in ticks]
    axis = [" "] * W
    under = [" "] * (W + gutter + 1)
    for t, lab in zip(ticks, label):
        c = min(W - 1, max(0, int(round((t - x0) / (x1 - x0) * (W - 1)))))
        axis[c] = "┬"
        start = max(0, min(gutter + 1 + c - len(lab) // 2, W + gutter + 1 - len(lab)))
        if all(ch == " " for ch in under[max(0, start - 1):start + len(lab) + 1]):
            under[start:start + len(lab)] = list(lab)
    title = f"{x_title} (log scale)" if xlog else f"{x_title}, {unit[0]}"
    lines[0] = _legend(series, y_title, title, width)
    tail = "".join(under).rstrip()
    lines.append(Text(" " * gutter + "└" + "".join(axis), style="dim"))
    lines.append(Text(tail[:width], style="dim"))
    return lines


def _legend(series: list[Series], y_title: str, x_title: str, width: int) -> Text:
    """Title line: what is plotted against what, then one coloured mark per series."""
    out = Text(y_title, style="bold")
    out.append(" vs ")
    out.append(x_title, style="bold")
    out.append("   ")
    for s in series:
        out.append("▬ ", style=s.style)
        out.append(s.name + "  ")
    out.rstrip()
    out.truncate(width, overflow="ellipsis")
    return out


def _tlabel(t: float) -> str:
    """A time on a log axis: 10 µs, 1 ms, 100 s."""
    name, f = time_unit(t / 1.999 if t >= 1e-9 else 1e-9)
    for n, ff in (("s", 1.0), ("ms", 1e-3), ("µs", 1e-6), ("ns", 1e-9)):
        if t >= ff * 0.999:
            return f"{t / ff:.3g} {n}"
    return f"{t / f:.3g} {name}"
