"""Canonical piecewise-linear power: the one form every solver consumes.

A waveform (pulse train, burst, profile, table, ...) compiles to :class:`Piecewise`:
sorted segment edges, the power at the start of each segment and its slope inside the
segment, and whether the pattern repeats.  The thermal solvers advance each segment in
closed form, so this description is exact: nothing is sampled.

Shapes
------
``edges`` (n+1,) s, ``edges[0] == 0``, strictly increasing.
``level`` (n,) W, power just after ``edges[k]``.
``slope`` (n,) W/s, dP/dt inside segment k (0 for a step waveform).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Protocol, runtime_checkable

import numpy as np

from .fieldwise import FieldMethods

__all__ = ["Piecewise", "Waveform", "as_piecewise", "align", "common_period",
           "WaveformError"]

#: Relative tolerance on times: edges closer than this (times the span) are the same edge.
TIME_RTOL = 1e-12
#: Largest number of base periods a common period may span before sums are refused.
MAX_PERIOD_MULTIPLE = 10_000


class WaveformError(ValueError):
    """Bad waveform input; the message names the field, the value and what is expected."""


@runtime_checkable
class Waveform(Protocol):
    """Anything that compiles to a :class:`Piecewise`."""

    def compile(self) -> "Piecewise": ...


def _array(name: str, values, n: int | None = None) -> np.ndarray:
    arr = np.array(values, dtype=np.float64, ndmin=1, copy=True)
    if arr.ndim != 1:
        raise WaveformError(f"{name}: expected a 1-D sequence, got shape {arr.shape}")
    if n is not None and arr.size != n:
        raise WaveformError(f"{name}: expected {n} values, got {arr.size}")
    bad = ~np.isfinite(arr)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise WaveformError(f"{name}[{i}] = {arr[i]!r}: expected a finite number")
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class Piecewise(FieldMethods):
    """Power against time as piecewise-linear segments.

    Parameters
    ----------
    edges
        Segment edges, s, shape (n+1,), starting at 0 and strictly increasing.
    level
        Power at the start of each segment, W, shape (n,).
    slope
        dP/dt inside each segment, W/s, shape (n,); zeros by default (steps).
    periodic
        True: the pattern repeats with period ``edges[-1]``.  False: single shot, after
        ``edges[-1]`` the power stays at ``after``.
    after
        Single shot only: the constant power after the last edge, W.
    """

    edges: np.ndarray
    level: np.ndarray
    slope: np.ndarray | None = None
    periodic: bool = True
    after: float = 0.0
    _checked: bool = field(default=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        edges = _array("edges", self.edges)
        if edges.size < 2:
            raise WaveformError("edges: expected at least two edges (one segment)")
        if edges[0] != 0.0:
            raise WaveformError(f"edges[0] = {edges[0]!r}: expected 0 (waveforms start at t = 0)")
        steps = np.diff(edges)
        if np.any(steps <= 0):
            i = int(np.flatnonzero(steps <= 0)[0])
            raise WaveformError(
                f"edges[{i + 1}] = {edges[i + 1]!r} s: expected times strictly after "
                f"edges[{i}] = {edges[i]!r} s")
        n = edges.size - 1
        level = _array("level", self.level, n)
        slope = np.zeros(n) if self.slope is None else _array("slope", self.slope, n)
        slope.setflags(write=False)
        after = float(self.after)
        if not math.isfinite(after):
            raise WaveformError(f"after = {after!r}: expected a finite power in W")
        object.__setattr__(self, "edges", edges)
        object.__setattr__(self, "level", level)
        object.__setattr__(self, "slope", slope)
        object.__setattr__(self, "after", after)
        object.__setattr__(self, "periodic", bool(self.periodic))

    # -- basic figures ----------------------------------------------------------------
    def compile(self) -> "Piecewise":
        return self

    @property
    def n_segments(self) -> int:
        return self.level.size

    @property
    def span(self) -> float:
        """Length of the described pattern, s (the period when periodic)."""
        return float(self.edges[-1])

    @property
    def period(self) -> float | None:
        """Repetition period, s, or None for a single shot."""
        return self.span if self.periodic else None

    @property
    def widths(self) -> np.ndarray:
        return np.diff(self.edges)

    @property
    def end_level(self) -> np.ndarray:
        """Power just before the end of each segment, W."""
        return self.level + self.slope * self.widths

    @property
    def is_constant(self) -> bool:
        """One level for all time (fits any period)."""
        lv = np.concatenate([self.level, self.end_level])
        const = bool(np.all(lv == lv[0]))
        return const and (self.periodic or self.after == lv[0])

    @property
    def energy(self) -> float:
        """Energy over the pattern (one period when periodic), J: sum of trapezoids."""
        return float(np.sum(0.5 * (self.level + self.end_level) * self.widths))

    @property
    def mean(self) -> float:
        """Average power over the pattern, W."""
        return self.energy / self.span

    @property
    def peak(self) -> float:
        """Largest power anywhere, W."""
        top = float(max(self.level.max(), self.end_level.max()))
        return top if self.periodic else max(top, self.after)

    @property
    def minimum(self) -> float:
        low = float(min(self.level.min(), self.end_level.min()))
        return low if self.periodic else min(low, self.after)

    @property
    def duty(self) -> float:
        """Fraction of the pattern during which power exceeds the minimum."""
        low = self.minimum
        on = (self.level > low) | (self.end_level > low)
        return float(np.sum(self.widths[on]) / self.span)

    def value(self, t) -> np.ndarray:
        """Power at times ``t`` (s), W.  Right-continuous at edges."""
        t = np.asarray(t, dtype=np.float64)
        if self.periodic:
            tt = np.mod(t, self.span)
        else:
            tt = t
        k = np.clip(np.searchsorted(self.edges, tt, side="right") - 1, 0, self.n_segments - 1)
        p = self.level[k] + self.slope[k] * (tt - self.edges[k])
        if not self.periodic:
            p = np.where(tt >= self.span, self.after, p)
            p = np.where(tt < 0, 0.0, p)
        return p

    # -- reshaping --------------------------------------------------------------------
    def scaled(self, factor: float) -> "Piecewise":
        f = float(factor)
        if not math.isfinite(f):
            raise WaveformError(f"factor = {factor!r}: expected a finite number")
        return Piecewise(self.edges, self.level * f, self.slope * f, self.periodic, self.after * f)

    def repeated(self, count: int) -> "Piecewise":
        """``count`` periods laid end to end (still periodic)."""
        if not self.periodic:
            raise WaveformError("repeated: a single-shot waveform has no period to repeat")
        count = int(count)
        if count < 1:
            raise WaveformError(f"count = {count}: expected a whole number >= 1")
        if count == 1:
            return self
        n = self.n_segments
        offs = np.repeat(np.arange(count) * self.span, n)
        edges = np.concatenate([np.tile(self.edges[:-1], count) + offs, [count * self.span]])
        return Piecewise(edges, np.tile(self.level, count), np.tile(self.slope, count), True)

    def window(self, duration: float) -> "Piecewise":
        """The waveform over [0, duration] as a single shot (periodic ones tiled)."""
        d = float(duration)
        if not (math.isfinite(d) and d > 0):
            raise WaveformError(f"duration = {duration!r}: expected a positive time in s")
        if self.periodic:
            reps = max(1, math.ceil(d / self.span * (1 - TIME_RTOL)))
            src = self.repeated(reps)
            after = 0.0
        else:
            src = self
            after = self.after
        e = src.edges
        if d > e[-1] * (1 + TIME_RTOL):
            edges = np.concatenate([e, [d]])
            return Piecewise(edges, np.concatenate([src.level, [after]]),
                             np.concatenate([src.slope, [0.0]]), False, after)
        keep = int(np.searchsorted(e, d * (1 - TIME_RTOL), side="left"))
        keep = max(keep, 1)
        edges = np.concatenate([e[:keep], [d]])
        return Piecewise(edges, src.level[:keep], src.slope[:keep], False, after=0.0
                         if self.periodic else after)


def as_piecewise(obj, name: str = "waveform") -> Piecewise:
    """Compile a waveform, a :class:`Piecewise` or a constant power (W)."""
    if isinstance(obj, Piecewise):
        return obj
    if isinstance(obj, (int, float, np.floating, np.integer)) and not isinstance(obj, bool):
        p = float(obj)
        if not math.isfinite(p):
            raise WaveformError(f"{name} = {obj!r}: expected a finite power in W")
        return Piecewise([0.0, 1.0], [p], periodic=True)
    compile_ = getattr(obj, "compile", None)
    if callable(compile_):
        out = compile_()
        if not isinstance(out, Piecewise):
            raise WaveformError(f"{name}: compile() returned {type(out).__name__}, expected Piecewise")
        return out
    raise WaveformError(f"{name} = {obj!r}: expected a waveform (PulseTrain, Burst, ...), "
                        "a Piecewise or a constant power in W")


def common_period(periods: list[float]) -> float:
    """Smallest common multiple of the periods, s.

    Periods must be commensurate to within ``TIME_RTOL``; the common period may span at
    most ``MAX_PERIOD_MULTIPLE`` of the longest one.  Raises :class:`WaveformError` saying
    why otherwise.
    """
    if not periods:
        raise WaveformError("periods: expected at least one period")
    base = max(periods)
    if 0 < base < math.inf and all(p == base for p in periods):
        return base                 # one period: what the search below gives, without it
    from fractions import Fraction  # (~1.5 ms of import, with decimal, for every run)

    total = Fraction(1)
    for p in periods:
        r = Fraction(p / base).limit_denominator(MAX_PERIOD_MULTIPLE)
        if abs(float(r) * base - p) > TIME_RTOL * 1e3 * base:
            raise WaveformError(
                f"periods {base!r} s and {p!r} s have no common multiple within "
                f"{MAX_PERIOD_MULTIPLE} periods; give periods with a simple ratio")
        # lcm of fractions in lowest terms: lcm(numerators) / gcd(denominators)
        total = Fraction(math.lcm(total.numerator, r.numerator),
                         math.gcd(total.denominator, r.denominator))
    mult = float(total)
    if mult > MAX_PERIOD_MULTIPLE:
        raise WaveformError(
            f"periods {sorted(set(periods))} s need a common period of {mult:.0f} times "
            f"{base!r} s (more than {MAX_PERIOD_MULTIPLE}); give periods with a simple ratio")
    return mult * base


#: Most segments of several periodic waveforms tiled onto their common period (memory and
#: time grow with it; a burst of 10^5 pulses against a period 10^4 times longer would
#: need 2x10^9).
MAX_ALIGNED_SEGMENTS = 4_000_000


def align(pieces: list[Piecewise], duration: float | None = None):
    """Put several waveforms on one set of edges.

    Periodic inputs (``duration is None``): every piece must be periodic; they are tiled to
    their common period.  Transient inputs: every piece is windowed to ``duration``.

    Returns
    -------
    edges : (n+1,) s
    level : (n, m) W, one column per piece
    slope : (n, m) W/s
    """
    if not pieces:
        raise WaveformError("align: expected at least one waveform")
    if duration is None and len(pieces) == 1:
        one = _align_one(pieces[0])
        if one is not None:
            return one
    return _align_general(pieces, duration)


def _align_one(p: Piecewise):
    """:func:`align` of one periodic waveform that starts at 0 with no edges closer than the
    resolution: its own edges, levels and slopes as they are (the values the general path
    gives: one tile, nothing to merge, each segment read at its own start), else None."""
    if (not p.periodic or p.edges[0] != 0.0 or p.n_segments > MAX_ALIGNED_SEGMENTS
            or p.is_constant):
        return None
    period = p.span
    if p.n_segments > 1 and not np.diff(p.edges).min() > TIME_RTOL * period:
        return None
    edges = p.edges.copy()
    edges[-1] = period
    return edges, p.level[:, None].copy(), p.slope[:, None].copy()


def _align_general(pieces: list[Piecewise], duration: float | None = None):
    """:func:`align` for any number of waveforms: tile to the common period (or window to
    ``duration``), merge the edges, and read each piece at the merged segments."""
    if duration is None:
        for i, p in enumerate(pieces):
            if not p.periodic:
                raise WaveformError(f"waveform {i}: a single-shot waveform has no periodic steady "
                                    "state; use a transient with a duration")
        varying = [p for p in pieces if not p.is_constant]
        period = common_period([p.span for p in varying]) if varying else pieces[0].span
        total = sum(int(round(period / p.span)) * p.n_segments for p in varying)
        if total > MAX_ALIGNED_SEGMENTS:     # refused before tiling allocates anything
            raise WaveformError(
                f"align: the common period {period!r} s holds {total} segments of the "
                f"waveforms together; expected at most {MAX_ALIGNED_SEGMENTS} (give periods "
                "with a simple ratio, or fewer pulses per period)")
        tiled = []
        for p in pieces:
            if p.is_constant:
                tiled.append(Piecewise([0.0, period], [p.level[0]], periodic=True))
            else:
                reps = int(round(period / p.span))
                q = p.repeated(reps)
                # snap the last edge onto the common period
                e = q.edges.copy()
                e[-1] = period
                tiled.append(Piecewise(e, q.level, q.slope, True))
    else:
        tiled = [p.window(duration) for p in pieces]
        period = float(duration)
    allk = np.unique(np.concatenate([p.edges for p in tiled]))
    # merge edges that differ only by rounding
    keep = np.concatenate([[True], np.diff(allk) > TIME_RTOL * period])
    edges = allk[keep]
    edges[-1] = period
    edges[0] = 0.0
    starts = edges[:-1]
    # Each merged segment takes its piece's segment at the midpoint: when edges closer than
    # the resolution were merged, the piece segment that covers most of the merged segment
    # (not a sub-resolution sliver, whose slope could be huge) sets level and slope.
    mids = 0.5 * (edges[:-1] + edges[1:])
    n, m = starts.size, len(tiled)
    level = np.empty((n, m))
    slope = np.empty((n, m))
    for j, p in enumerate(tiled):
        k = np.clip(np.searchsorted(p.edges, mids, side="right") - 1, 0, p.n_segments - 1)
        slope[:, j] = p.slope[k]
        level[:, j] = p.level[k] + p.slope[k] * (starts - p.edges[k])
    return edges, level, slope
