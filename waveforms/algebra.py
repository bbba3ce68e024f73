"""Waveform algebra: sums, non-negative scaling and time shifts, all exact.

* :class:`Sum` adds waveforms point by point.  Periodic terms are laid on their common
  period (``canonical.common_period``: periods with a small common multiple, for example
  1 ms and 1.5 ms give 3 ms); the error says why when there is none.  Single-shot terms are
  added over the longest span, each holding its ``after`` power beyond its own span;
  constants fit either kind.  A single-shot term cannot be added to a varying periodic one
  (the result would be neither): window the periodic one first.
* :class:`Scaled` multiplies by a factor k >= 0 (heat is never negative here).
* :class:`Delayed` shifts a waveform later by ``delay`` (periodic: rotated within its period;
  single shot: zero power before the delay).

Averages commute with both operations: mean(a + b) = mean(a) + mean(b) over the common
period, mean(k a) = k mean(a) (linearity of the integral).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from numbers import Real

import numpy as np

from .base import WaveformBase, check_time, from_ends, merge_segments
from .canonical import TIME_RTOL, Piecewise, WaveformError, align, as_piecewise

__all__ = ["Sum", "Scaled", "Delayed", "rotate"]


def _is_operand(obj) -> bool:
    """Numbers (constant powers), Piecewise and anything with ``compile()``."""
    if isinstance(obj, bool):
        return False
    return isinstance(obj, (Real, np.floating, np.integer, Piecewise)) or callable(
        getattr(obj, "compile", None))


def _single_shot(p: Piecewise) -> Piecewise:
    """A constant periodic piece as a single shot holding its level for ever."""
    if p.periodic and p.is_constant:
        return Piecewise([0.0, p.span], p.level[:1], periodic=False, after=float(p.level[0]))
    return p


def _ends(pieces: list[Piecewise], edges: np.ndarray) -> np.ndarray:
    """Sum of the pieces' powers just before each common edge ``edges[1:]``.

    Where a common edge is a piece's own segment end (within the time resolution) the
    piece's stated end power is used, so ramps tiled to late times still end exactly where
    they should (no rounding overshoot below idle or above peak).
    """
    period = float(edges[-1])
    tol = TIME_RTOL * period
    stops = edges[1:]
    mids = 0.5 * (edges[:-1] + edges[1:])
    total = np.zeros(stops.size)
    for p in pieces:
        if p.is_constant:
            total += p.level[0]
            continue
        span = p.span
        local = np.mod(mids, span)
        k = np.clip(np.searchsorted(p.edges, local, side="right") - 1, 0, p.n_segments - 1)
        seg_end = p.edges[k + 1] + (mids - local)  # absolute end of that piece segment
        at_end = np.abs(stops - seg_end) <= tol
        t_in = stops - (p.edges[k] + (mids - local))
        total += np.where(at_end, p.end_level[k], p.level[k] + p.slope[k] * t_in)
    return total


@dataclass(frozen=True)
class Sum(WaveformBase):
    """Point-by-point sum of waveforms (numbers are constant powers, W).

    Parameters
    ----------
    terms
        Two or more waveforms, Piecewise forms or constant powers.

    Notes
    -----
    Exact: the canonical forms are put on one set of edges (``canonical.align``) and their
    levels and slopes added.  Nested sums are flattened.
    """

    terms: tuple

    def __post_init__(self) -> None:
        terms = tuple(self.terms) if not isinstance(self.terms, tuple) else self.terms
        if len(terms) < 1:
            raise WaveformError("Sum.terms = (): expected at least one waveform")
        flat: list = []
        for i, t in enumerate(terms):
            if not _is_operand(t):
                raise WaveformError(f"Sum.terms[{i}] = {t!r}: expected a waveform, a Piecewise "
                                    "or a constant power in W")
            if isinstance(t, Sum):
                flat.extend(t.terms)
            else:
                flat.append(t)
        object.__setattr__(self, "terms", tuple(flat))

    def _build(self) -> Piecewise:
        pieces = [as_piecewise(t, f"Sum.terms[{i}]") for i, t in enumerate(self.terms)]
        for i, p in enumerate(pieces):
            if p.minimum < 0:
                raise WaveformError(f"Sum.terms[{i}]: minimum power {p.minimum!r} W; expected "
                                    "powers >= 0 W")
        if len(pieces) == 1:
            return pieces[0]
        if all(p.periodic for p in pieces):
            try:
                edges, level, slope = align(pieces)
            except WaveformError as err:
                periods = [p.span for p in pieces if not p.is_constant]
                raise WaveformError(f"Sum: cannot add waveforms with periods {periods} s: "
                                    f"{err}") from None
            end = _ends(pieces, edges)
            return merge_segments(from_ends(edges, level.sum(axis=1), end, True))
        varying = [i for i, p in enumerate(pieces) if p.periodic and not p.is_constant]
        if varying:
            i = varying[0]
            shot = next(j for j, p in enumerate(pieces) if not p.periodic)
            raise WaveformError(
                f"Sum: terms[{shot}] is single-shot (span {pieces[shot].span!r} s) and "
                f"terms[{i}] is periodic (period {pieces[i].span!r} s); their sum is neither. "
                f"Expected all periodic, or all single-shot: use "
                f"as_piecewise(terms[{i}]).window(duration) for a single shot")
        shots = [_single_shot(p) for p in pieces]
        duration = max(p.span for p in shots)
        edges, level, slope = align(shots, duration=duration)
        after = math.fsum(p.after for p in shots)
        return merge_segments(Piecewise(edges, level.sum(axis=1), slope.sum(axis=1), False,
                                        after))


@dataclass(frozen=True)
class Scaled(WaveformBase):
    """A waveform times a factor.

    Parameters
    ----------
    waveform
        Any waveform, Piecewise or constant power.
    factor
        Finite, >= 0 (powers stay non-negative).
    """

    waveform: object
    factor: float

    def __post_init__(self) -> None:
        if not _is_operand(self.waveform):
            raise WaveformError(f"Scaled.waveform = {self.waveform!r}: expected a waveform, a "
                                "Piecewise or a constant power in W")
        f = self.factor
        if isinstance(f, bool) or not isinstance(f, (Real, np.floating, np.integer)) \
                or not math.isfinite(float(f)) or float(f) < 0:
            raise WaveformError(f"Scaled.factor = {f!r}: expected a finite number >= 0 "
                                "(powers cannot become negative)")
        object.__setattr__(self, "factor", float(f))

    def _build(self) -> Piecewise:
        return as_piecewise(self.waveform, "Scaled.waveform").scaled(self.factor)


def delay_phase(delay: float, period: float) -> float:
    """``delay`` modulo ``period``, s, in [0, period).

    Both numbers are taken as the shortest decimals that round-trip to them (what was
    written: ``100 s`` and ``1 ms``) and reduced exactly with rational arithmetic, so a
    delay of a whole number of periods is no delay at all; ``math.fmod`` on the binary
    values would leave a sliver (100 mod 0.001 = 0.000999999999998 in binary) that the
    solvers and the ladder builder then resolve as a feature of 2e-15 s.
    """
    d, p = float(delay), float(period)
    if d < p:
        return d
    return float(Fraction(repr(d)) % Fraction(repr(p)))


def rotate(pw: Piecewise, delay: float) -> Piecewise:
    """Shift a canonical form later by ``delay`` s.

    Periodic: ``q(t) = p(t - delay)`` with the pattern wrapped within its period (the
    segment crossing the wrap point is split, so the result is exact).  The delay is taken
    modulo the period (:func:`delay_phase`), so ``delay`` and ``delay + k·period`` give the
    same form.  Single shot: zero power on ``[0, delay)``, then the pattern.
    """
    d = check_time("delay", delay, positive=False)
    if d == 0:
        return pw
    if not pw.periodic:
        edges = np.concatenate([[0.0], pw.edges + d])
        return Piecewise(edges, np.concatenate([[0.0], pw.level]),
                         np.concatenate([[0.0], pw.slope]), False, pw.after)
    span = pw.span
    d = delay_phase(d, span)
    # times within the rounding of the delay itself (a few ulp of d) are one time
    tol = max(TIME_RTOL * span, 8.0 * math.ulp(float(delay)))
    if d <= tol or span - d <= tol:
        return pw
    cut = span - d  # the old time that moves to t = 0
    e, lv, sl = pw.edges, pw.level, pw.slope
    k = int(np.searchsorted(e, cut, side="right")) - 1  # e[k] <= cut < e[k+1]
    if cut - e[k] <= tol or e[k + 1] - cut <= tol:
        j = k if cut - e[k] <= tol else k + 1  # the cut falls on an existing edge
        c = float(e[j])
    else:
        # split segment k at the cut: the second part starts at the ramp's value there
        j, c = k + 1, cut
        e = np.insert(e, j, cut)
        lv = np.insert(lv, j, lv[k] + sl[k] * (cut - e[k]))
        sl = np.insert(sl, j, sl[k])
    edges = np.concatenate([e[j:-1] - c, e[:j] + (span - c), [span]])
    edges[0] = 0.0
    return Piecewise(edges, np.concatenate([lv[j:], lv[:j]]),
                     np.concatenate([sl[j:], sl[:j]]), True)


@dataclass(frozen=True)
class Delayed(WaveformBase):
    """A waveform shifted later by ``delay`` s (see :func:`rotate`).

    Use it to key several sources in sequence, for example two amplifiers alternating
    within one period: ``a + b.delayed(T/2)``.
    """

    waveform: object
    delay: float

    def __post_init__(self) -> None:
        if not _is_operand(self.waveform):
            raise WaveformError(f"Delayed.waveform = {self.waveform!r}: expected a waveform, "
                                "a Piecewise or a constant power in W")
        object.__setattr__(self, "delay", check_time("Delayed.delay", self.delay,
                                                     positive=False))

    def _build(self) -> Piecewise:
        return rotate(as_piecewise(self.waveform, "Delayed.waveform"), self.delay)
