"""Keyed power: constant level, pulse trains, bursts of pulses, staggered repetition intervals.

Pulse shape and timing conventions (all classes here)
-----------------------------------------------------
* A pulse is trapezoidal: it leaves the ``idle`` (quiescent) power at the start of its
  repetition interval, ramps linearly to ``peak`` in ``rise`` seconds, stays there, ramps
  back to ``idle`` in ``fall`` seconds, and stays at ``idle`` until the next pulse.
* ``width`` is measured between the half-amplitude points of the two ramps (the usual way
  of stating a pulse duration; common practice, no source).  The flat top therefore lasts
  ``width - (rise + fall)/2`` and the whole pulse ``width + (rise + fall)/2``.  With this
  convention the energy of a pulse above idle is exactly ``(peak - idle)*width`` whatever
  the ramps, so every average below is exact:

      P_avg = peak*D + idle*(1 - D),   D = width/period = width*PRF

  (radar duty cycle D = tau*PRF and P_avg = P_peak*tau*PRF: M. I. Skolnik, *Introduction
  to Radar Systems*, ch. 1.)
* All times in s, powers in W (SI floats; unit strings are parsed elsewhere).

Compilation is vectorised: one pulse is four candidate segments (rise, top, fall, idle);
all pulses of a period are laid out at once with numpy, zero-length segments dropped.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from numbers import Integral, Real

import numpy as np

from .base import WaveformBase, check_fraction, check_power, check_time, merge_segments
from .canonical import TIME_RTOL, Piecewise, WaveformError
from .fieldwise import FieldMethods

__all__ = ["Constant", "PulseTrain", "Burst", "Stagger", "pulse_segments"]


def pulse_segments(starts: np.ndarray, ends: np.ndarray, widths: np.ndarray, *, peak: float,
                   idle: float, rise: float, fall: float, span: float) -> Piecewise:
    """Lay trapezoidal pulses into one periodic canonical form (vectorised).

    Parameters
    ----------
    starts
        (n,) s, start of each pulse's repetition interval; ``starts[0] == 0``, increasing.
    ends
        (n,) s, end of each interval (the next start; the last one is ``span``).
    widths
        (n,) s, half-amplitude width of each pulse.
    peak, idle, rise, fall
        Pulse top and quiescent power (W) and ramp times (s), shared by all pulses.
    span
        The period, s.

    Returns
    -------
    Piecewise
        Periodic, at most ``4 n`` segments.  Callers validate that every pulse fits its
        interval (``widths + (rise + fall)/2 <= ends - starts``) beforehand.
    """
    if starts.size == 1 and starts[0] == 0.0:
        return _one_pulse(float(ends[0]), float(widths[0]), peak, idle, rise, fall, span)
    return _pulses(starts, ends, widths, peak=peak, idle=idle, rise=rise, fall=fall, span=span)


def _pulses(starts: np.ndarray, ends: np.ndarray, widths: np.ndarray, *, peak: float,
            idle: float, rise: float, fall: float, span: float) -> Piecewise:
    """:func:`pulse_segments` for any number of pulses (vectorised)."""
    n = starts.size
    half = 0.5 * (rise + fall)
    flat = widths - half
    off = (ends - starts) - widths - half
    lengths = np.empty((n, 4))
    lengths[:, 0] = rise
    lengths[:, 1] = flat
    lengths[:, 2] = fall
    lengths[:, 3] = off
    # offsets of the four candidate segments inside each interval
    offs = np.zeros((n, 4))
    offs[:, 1] = rise
    offs[:, 2] = rise + flat
    offs[:, 3] = rise + flat + fall
    seg_start = starts[:, None] + offs
    level = np.broadcast_to(np.array([idle, peak, peak, idle]), (n, 4))
    up = (peak - idle) / rise if rise > 0 else 0.0
    down = (idle - peak) / fall if fall > 0 else 0.0
    slope = np.broadcast_to(np.array([up, 0.0, down, 0.0]), (n, 4))
    # Segments shorter than the time resolution are dropped (their neighbours absorb them).
    # A dropped ramp becomes a step at its midpoint, which keeps the pulse energy exact.
    tol = TIME_RTOL * span
    if np.any(widths <= tol):
        raise _too_narrow(float(widths[np.flatnonzero(widths <= tol)[0]]), tol, span)
    keep = lengths > tol
    if 0 < rise <= tol:
        offs[:, 1] -= 0.5 * rise
        seg_start[:, 1] -= 0.5 * rise
    if 0 < fall <= tol:
        offs[:, 3] -= 0.5 * fall
        seg_start[:, 3] -= 0.5 * fall
    edges = np.append(seg_start[keep], span)
    edges[0] = 0.0
    level = level[keep]
    slope = slope[keep].copy()
    kind = np.broadcast_to(np.arange(4), (n, 4))[keep]
    ramp = (kind == 0) | (kind == 2)
    if ramp.any():
        # Ramp slopes from the actual edge spacing (absolute times carry rounding), then
        # nudged toward zero until the ramp ends inside [idle, peak]: the form never
        # overshoots the peak nor dips below idle.
        w = np.diff(edges)[ramp]
        target = np.where(kind[ramp] == 0, peak, idle)
        s = (target - level[ramp]) / w
        for _ in range(4):
            end = level[ramp] + s * w
            out = (end > peak) | (end < idle)
            if not out.any():
                break
            s[out] = np.nextafter(s[out], 0.0)
        slope[ramp] = s
    return merge_segments(Piecewise(edges, level, slope, True))


def _too_narrow(width: float, tol: float, span: float) -> WaveformError:
    """The error for a pulse no wider than the time resolution ``tol`` of its period."""
    return WaveformError(
        f"pulse width {width!r} s is below the time resolution {tol!r} s of a {span!r} s "
        f"period (relative {TIME_RTOL}); expected a wider pulse or a shorter period")


def _one_pulse(end: float, width: float, peak: float, idle: float, rise: float, fall: float,
               span: float) -> Piecewise:
    """:func:`pulse_segments` of one pulse starting at 0 (a pulse train's period), with
    the same operations on plain floats (numpy's per-call cost dominates at n = 1)."""
    half = 0.5 * (rise + fall)
    flat = width - half
    off = end - width - half
    tol = TIME_RTOL * span
    if width <= tol:
        raise _too_narrow(width, tol, span)
    starts = [0.0, rise, rise + flat, rise + flat + fall]
    if 0 < rise <= tol:
        starts[1] -= 0.5 * rise
    if 0 < fall <= tol:
        starts[3] -= 0.5 * fall
    up = (peak - idle) / rise if rise > 0 else 0.0
    down = (idle - peak) / fall if fall > 0 else 0.0
    segs = [(k, st, lv, sl) for k, (length, st, lv, sl) in
            enumerate(zip((rise, flat, fall, off), starts, (idle, peak, peak, idle),
                          (up, 0.0, down, 0.0))) if length > tol]
    edges = [st for _, st, _, _ in segs] + [span]
    edges[0] = 0.0
    level = [lv for _, _, lv, _ in segs]
    slope = [sl for _, _, _, sl in segs]
    for i, (k, _, lv, _) in enumerate(segs):
        if k in (0, 2):              # a ramp: its slope from the edge spacing, nudged
            w = edges[i + 1] - edges[i]
            s = ((peak if k == 0 else idle) - lv) / w
            for _ in range(4):
                e = lv + s * w
                if not (e > peak or e < idle):
                    break
                s = math.nextafter(s, 0.0)
            slope[i] = s
    return merge_segments(Piecewise(np.array(edges), np.array(level), np.array(slope), True))


def _check_ramps(owner: str, rise: float, fall: float, widths: np.ndarray,
                 field: str = "width") -> None:
    """Ramps must fit inside the half-amplitude width: (rise + fall)/2 <= width."""
    half = 0.5 * (rise + fall)
    short = widths < half * (1 - 1e-12)
    if short.any():
        i = int(np.flatnonzero(short)[0])
        name = field if widths.size == 1 else f"{field}[{i}]"
        raise WaveformError(
            f"{owner}.{name} = {float(widths[i])!r} s: expected at least (rise + fall)/2 = {half!r} s "
            "(width is measured at half amplitude, so the ramps must fit inside it)")


def _check_fit(owner: str, intervals: np.ndarray, widths: np.ndarray, half: float,
               field: str) -> None:
    """Each pulse (width + ramps/2) must fit its repetition interval."""
    need = widths + half
    over = intervals < need - TIME_RTOL * 10 * float(intervals.sum())
    if over.any():
        i = int(np.flatnonzero(over)[0])
        name = field if intervals.size == 1 else f"{field}[{i}]"
        wname = "width" if widths.size == 1 else f"widths[{i}]"
        raise WaveformError(
            f"{owner}.{name} = {float(intervals[i])!r} s: expected at least {wname} + (rise + fall)/2 "
            f"= {float(need[i])!r} s (the pulse is longer than its repetition interval)")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class Constant(WaveformBase, FieldMethods):
    """A constant power.

    Parameters
    ----------
    power
        W, finite, >= 0.
    period
        Optional nominal period, s.  A constant fits any period (``Piecewise.is_constant``);
        without one it compiles with a 1 s placeholder and ``period`` reads None.
    """

    power: float
    period: float | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "power", check_power("Constant.power", self.power))
        if self.period is not None:
            object.__setattr__(self, "period", check_time("Constant.period", self.period))

    def _build(self) -> Piecewise:
        return Piecewise([0.0, 1.0 if self.period is None else self.period], [self.power])

    @property
    def duty(self) -> float:
        """1 when the power is above zero, else 0."""
        return 1.0 if self.power > 0 else 0.0


@dataclass(frozen=True, init=False, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class PulseTrain(WaveformBase, FieldMethods):
    """A periodic train of identical pulses.

    Parameters
    ----------
    peak
        Power at the pulse top, W (finite, >= idle).
    width
        Pulse width at half amplitude, s (> 0).
    period
        Pulse repetition interval, s.  Give exactly one of ``period``, ``prf`` (Hz) and
        ``duty`` (in (0, 1]; period = width/duty).  The result is stored as ``period``;
        ``prf`` and ``duty`` are then read-only attributes.  ``dataclasses.replace`` keeps
        the period (``replace(train, width=2e-6)`` changes the duty); to change the PRF
        pass ``period=1/prf``.
    idle
        Quiescent power between pulses, W (>= 0).
    rise, fall
        Linear ramp times, s (>= 0); ``(rise + fall)/2 <= width`` and
        ``width + (rise + fall)/2 <= period``.

    Notes
    -----
    ``duty`` is the nominal duty D = width/period = width·PRF, and
    ``mean == peak*D + idle*(1 - D)`` exactly, ramps or not (Skolnik, *Introduction to
    Radar Systems*, ch. 1, for D = τ·PRF and P_avg = P_peak·τ·PRF).
    """

    peak: float
    width: float
    period: float | None = None
    idle: float = 0.0
    rise: float = 0.0
    fall: float = 0.0
    # derived, read-only (not constructor fields, so dataclasses.replace leaves them out)
    prf: float = field(init=False, repr=False, compare=False)
    duty: float = field(init=False, repr=False, compare=False)

    def __init__(self, peak: float, width: float, period: float | None = None, *,
                 prf: float | None = None, duty: float | None = None, idle: float = 0.0,
                 rise: float = 0.0, fall: float = 0.0) -> None:
        for name, v in (("peak", peak), ("width", width), ("period", period), ("idle", idle),
                        ("rise", rise), ("fall", fall)):
            object.__setattr__(self, name, v)
        self._validate(prf, duty)

    def _validate(self, prf, duty) -> None:
        peak = check_power("PulseTrain.peak", self.peak)
        idle = check_power("PulseTrain.idle", self.idle)
        if idle > peak:
            raise WaveformError(f"PulseTrain.idle = {self.idle!r} W: expected at most "
                                f"peak = {peak!r} W")
        width = check_time("PulseTrain.width", self.width)
        rise = check_time("PulseTrain.rise", self.rise, positive=False)
        fall = check_time("PulseTrain.fall", self.fall, positive=False)
        given = [k for k, v in (("period", self.period), ("prf", prf), ("duty", duty))
                 if v is not None]
        if len(given) != 1:
            raise WaveformError(
                f"PulseTrain: got {given or 'none'} of period/prf/duty: expected exactly one "
                "(period in s, prf in Hz, or duty in (0, 1] with the width)")
        if self.period is not None:
            period = check_time("PulseTrain.period", self.period)
        elif prf is not None:
            period = 1.0 / check_time("PulseTrain.prf", prf)  # positive number, here in Hz
            if not math.isfinite(period):
                raise WaveformError(f"PulseTrain.prf = {prf!r} Hz: expected a finite PRF > 0")
        else:
            period = width / check_fraction("PulseTrain.duty", duty)
        if width > period * (1 + 1e-12):
            raise WaveformError(f"PulseTrain.width = {width!r} s: expected at most the "
                                f"period = {period!r} s (duty <= 1)")
        _check_ramps("PulseTrain", rise, fall, np.array([width]))
        _check_fit("PulseTrain", np.array([period]), np.array([width]), 0.5 * (rise + fall),
                   "period")
        for name, v in (("peak", peak), ("idle", idle), ("width", width), ("rise", rise),
                        ("fall", fall), ("period", period)):
            object.__setattr__(self, name, v)
        object.__setattr__(self, "prf", 1.0 / period)
        object.__setattr__(self, "duty", min(width / period, 1.0))

    def _build(self) -> Piecewise:
        return pulse_segments(np.zeros(1), np.array([self.period]), np.array([self.width]),
                              peak=self.peak, idle=self.idle, rise=self.rise, fall=self.fall,
                              span=self.period)

    @property
    def pulse_energy(self) -> float:
        """Energy of one pulse above idle, J: (peak - idle)*width."""
        return (self.peak - self.idle) * self.width


#: Most pulses in one burst: each pulse is a few exact segments held in memory and walked
#: by the solvers; a longer burst is better written as a profile (a stretch at its mean).
MAX_BURST_PULSES = 200_000


def _whole(field: str, value, low: int = 1) -> int:
    if isinstance(value, bool) or not isinstance(value, (Integral, np.integer)):
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        else:
            raise WaveformError(f"{field} = {value!r}: expected a whole number >= {low}")
    if value < low:
        raise WaveformError(f"{field} = {value!r}: expected a whole number >= {low}"
                            + (" (a burst needs at least one pulse)" if low == 1 else ""))
    return int(value)


@dataclass(frozen=True, init=False, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class Burst(WaveformBase, FieldMethods):
    """``pulses`` pulses of ``train``, repeated every burst ``period``.

    Parameters
    ----------
    train
        The pulse shape and repetition interval inside the burst.
    pulses
        Number of pulses in a burst, N >= 1.
    period
        Burst repetition period, s.  Give exactly one of ``period`` and ``gap``.
    gap
        Idle time from the end of the N-th pulse (the end of its fall ramp) to the start of
        the next burst, s (>= 0):  ``period = (N - 1)*T + width + (rise + fall)/2 + gap``,
        T the train's period.  Stored as ``period``; ``gap`` is then a read-only attribute
        (``dataclasses.replace`` keeps the burst period).

    Notes
    -----
    Nominal duty D = N*width/period and ``mean == peak*D + idle*(1 - D)`` exactly.
    """

    train: PulseTrain
    pulses: int
    period: float | None = None
    # derived, read-only (not a constructor field, so dataclasses.replace leaves it out)
    gap: float = field(init=False, repr=False, compare=False)

    def __init__(self, train: PulseTrain, pulses: int, period: float | None = None, *,
                 gap: float | None = None) -> None:
        object.__setattr__(self, "train", train)
        object.__setattr__(self, "pulses", pulses)
        object.__setattr__(self, "period", period)
        self._validate(gap)

    def _validate(self, gap) -> None:
        if not isinstance(self.train, PulseTrain):
            raise WaveformError(f"Burst.train = {self.train!r}: expected a PulseTrain")
        n = _whole("Burst.pulses", self.pulses)
        if n > MAX_BURST_PULSES:
            raise WaveformError(f"Burst.pulses = {n!r}: expected at most {MAX_BURST_PULSES} "
                                "pulses per burst (every pulse is held as exact segments); "
                                "for a longer burst use a profile stretch at its mean power")
        tr = self.train
        last_end = (n - 1) * tr.period + tr.width + 0.5 * (tr.rise + tr.fall)
        if (self.period is None) == (gap is None):
            raise WaveformError("Burst: expected exactly one of period (burst period, s) and "
                                f"gap (idle time after the last pulse, s); got period = "
                                f"{self.period!r}, gap = {gap!r}")
        if gap is not None:
            period = last_end + check_time("Burst.gap", gap, positive=False)
        else:
            period = check_time("Burst.period", self.period)
            if period < last_end * (1 - 1e-12):
                raise WaveformError(
                    f"Burst.period = {self.period!r} s: expected at least {last_end!r} s, the "
                    f"end of the last of {n} pulses ((N - 1)*T + width + (rise + fall)/2)")
        object.__setattr__(self, "pulses", n)
        object.__setattr__(self, "period", period)
        object.__setattr__(self, "gap", max(period - last_end, 0.0))

    def _build(self) -> Piecewise:
        tr, n = self.train, self.pulses
        starts = np.arange(n) * tr.period
        ends = np.append(starts[1:], self.period)
        return pulse_segments(starts, ends, np.full(n, tr.width), peak=tr.peak, idle=tr.idle,
                              rise=tr.rise, fall=tr.fall, span=self.period)

    @property
    def duty(self) -> float:
        """Nominal duty N*width/period."""
        return min(self.pulses * self.train.width / self.period, 1.0)


def _tuple(field: str, values) -> tuple[float, ...]:
    """A 1-D sequence of numbers as a tuple of floats (finiteness checked by the caller)."""
    if isinstance(values, (str, bytes)) or not hasattr(values, "__len__"):
        raise WaveformError(f"{field} = {values!r}: expected a sequence of numbers")
    arr = np.asarray(values)
    if arr.ndim != 1:
        raise WaveformError(f"{field}: expected a 1-D sequence of numbers, got shape "
                            f"{arr.shape}")
    if arr.size and arr.dtype.kind not in "iuf":
        for i, v in enumerate(values):
            if isinstance(v, bool) or not isinstance(v, (Real, np.integer, np.floating)):
                raise WaveformError(f"{field}[{i}] = {v!r}: expected a number")
    return tuple(arr.astype(np.float64).tolist())


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class Stagger(WaveformBase, FieldMethods):
    """A repeating cycle of different pulse repetition intervals (staggered PRF).

    Parameters
    ----------
    peak
        Pulse top power, W.
    intervals
        Repetition intervals of one cycle, s; pulse k starts at sum(intervals[:k]) and the
        period is sum(intervals).
    widths
        Half-amplitude pulse width, s: one number for all pulses or one per interval.
    idle, rise, fall
        As for :class:`PulseTrain`.

    Notes
    -----
    Nominal duty D = sum(widths)/period and ``mean == peak*D + idle*(1 - D)`` exactly.
    """

    peak: float
    intervals: tuple[float, ...]
    widths: float | tuple[float, ...]
    idle: float = 0.0
    rise: float = 0.0
    fall: float = 0.0

    def __post_init__(self) -> None:
        peak = check_power("Stagger.peak", self.peak)
        idle = check_power("Stagger.idle", self.idle)
        if idle > peak:
            raise WaveformError(f"Stagger.idle = {self.idle!r} W: expected at most "
                                f"peak = {peak!r} W")
        rise = check_time("Stagger.rise", self.rise, positive=False)
        fall = check_time("Stagger.fall", self.fall, positive=False)
        intervals = _tuple("Stagger.intervals", self.intervals)
        iv = np.array(intervals)
        if iv.size == 0:
            raise WaveformError("Stagger.intervals = (): expected at least one repetition "
                                "interval in s")
        bad = ~np.isfinite(iv) | (iv <= 0)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise WaveformError(f"Stagger.intervals[{i}] = {float(iv[i])!r}: expected a finite "
                                "time > 0 s")
        if np.ndim(self.widths) == 0:
            widths = check_time("Stagger.widths", self.widths)
            wv = np.full(iv.size, widths)
        else:
            widths = _tuple("Stagger.widths", self.widths)
            wv = np.array(widths)
            if wv.size != iv.size:
                raise WaveformError(f"Stagger.widths: expected one width or {iv.size} widths "
                                    f"(one per interval), got {wv.size}")
            bad = ~np.isfinite(wv) | (wv <= 0)
            if bad.any():
                i = int(np.flatnonzero(bad)[0])
                raise WaveformError(f"Stagger.widths[{i}] = {float(wv[i])!r}: expected a finite "
                                    "time > 0 s")
        _check_ramps("Stagger", rise, fall, wv if np.ndim(widths) else wv[:1], "widths")
        _check_fit("Stagger", iv, wv, 0.5 * (rise + fall), "intervals")
        for name, v in (("peak", peak), ("idle", idle), ("rise", rise), ("fall", fall),
                        ("intervals", intervals), ("widths", widths)):
            object.__setattr__(self, name, v)

    def _arrays(self) -> tuple[np.ndarray, np.ndarray]:
        iv = np.array(self.intervals)
        wv = np.full(iv.size, self.widths) if np.ndim(self.widths) == 0 else np.array(self.widths)
        return iv, wv

    def _build(self) -> Piecewise:
        iv, wv = self._arrays()
        ends = np.cumsum(iv)
        span = float(ends[-1])
        starts = np.concatenate([[0.0], ends[:-1]])
        ends[-1] = span
        return pulse_segments(starts, ends, wv, peak=self.peak, idle=self.idle,
                              rise=self.rise, fall=self.fall, span=span)

    @property
    def duty(self) -> float:
        """Nominal duty sum(widths)/period."""
        iv, wv = self._arrays()
        return min(float(wv.sum() / iv.sum()), 1.0)
