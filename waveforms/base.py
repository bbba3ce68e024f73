"""Shared behaviour of the waveform classes: cached compilation, figures, operators.

Every waveform class (:class:`~pulsetherm.waveforms.pulses.PulseTrain`, ``Burst``,
``Stagger``, ``Profile``, ``Table``, ``Sum``, ...) is a frozen dataclass that inherits
:class:`WaveformBase` and implements ``_build() -> Piecewise``.  ``compile()`` caches the
result; the figures (mean, peak, energy, ...) delegate to the compiled form, so they are
the exact integrals of the canonical piecewise-linear power.

Also here: small validation helpers that raise :class:`WaveformError` naming the field, the
value and the expected form, and :func:`merge_segments`, which joins neighbouring segments
that continue each other exactly.
"""
from __future__ import annotations

import math
from functools import cached_property
from numbers import Real

import numpy as np

from .canonical import TIME_RTOL, Piecewise, WaveformError

__all__ = ["WaveformBase", "merge_segments", "from_ends", "check_power", "check_time",
           "check_fraction"]


def _number(field: str, value, unit: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (Real, np.floating, np.integer)):
        raise WaveformError(f"{field} = {value!r}: expected a number in {unit}")
    v = float(value)
    if not math.isfinite(v):
        raise WaveformError(f"{field} = {value!r}: expected a finite number in {unit}")
    return v


def check_power(field: str, value) -> float:
    """A finite, non-negative power in W."""
    v = _number(field, value, "W")
    if v < 0:
        raise WaveformError(f"{field} = {value!r} W: expected a power >= 0 W")
    return v


def check_time(field: str, value, *, positive: bool = True) -> float:
    """A finite time in s, > 0 (``positive``) or >= 0."""
    v = _number(field, value, "s")
    if positive and v <= 0:
        raise WaveformError(f"{field} = {value!r} s: expected a time > 0 s")
    if not positive and v < 0:
        raise WaveformError(f"{field} = {value!r} s: expected a time >= 0 s")
    return v


def check_fraction(field: str, value) -> float:
    """A number in the half-open interval (0, 1]."""
    v = _number(field, value, "(0, 1]")
    if not 0.0 < v <= 1.0:
        raise WaveformError(f"{field} = {value!r}: expected a fraction in (0, 1]")
    return v


def merge_segments(pw: Piecewise) -> Piecewise:
    """Join neighbouring segments that continue each other exactly.

    Segment ``k+1`` is absorbed into segment ``k`` when both have the same slope and the
    power at the end of ``k`` equals the power at the start of ``k+1`` (bit for bit, so the
    canonical form describes the same function and the same energy).
    """
    if pw.n_segments < 2:
        return pw
    same = (pw.slope[1:] == pw.slope[:-1]) & (pw.level[1:] == pw.end_level[:-1])
    if not same.any():
        return pw
    keep = np.concatenate([[True], ~same])
    edges = pw.edges[np.concatenate([keep, [True]])]
    return Piecewise(edges, pw.level[keep], pw.slope[keep], pw.periodic, pw.after)


def from_ends(edges: np.ndarray, level: np.ndarray, end: np.ndarray, periodic: bool = True,
              after: float = 0.0) -> Piecewise:
    """A canonical form from absolute edges and each segment's start and end power.

    Used when pieces are laid end to end at large absolute times: the slopes are recomputed
    from the actual (rounded) edge spacing, so every segment still ends at its stated power
    (to rounding), and segments no longer than the time resolution ``TIME_RTOL * span``
    are absorbed, split at their midpoint between their neighbours.  Steps
    (``end == level``) keep slope 0 exactly.  Raises :class:`WaveformError` when that
    would change the energy noticeably (a whole pulse below the resolution).

    Parameters
    ----------
    edges
        (n+1,) s, non-decreasing, ``edges[0] == 0``.
    level, end
        (n,) W, power just after the start and just before the end of each segment.
    """
    edges = np.asarray(edges, dtype=np.float64)
    level = np.asarray(level, dtype=np.float64)
    end = np.asarray(end, dtype=np.float64)
    w = np.diff(edges)
    keep = w > TIME_RTOL * edges[-1]
    e = edges
    if not keep.all():
        if not keep.any():
            keep[int(np.argmax(w))] = True
        e_before = float(np.sum(0.5 * (level + end) * w))
        # a dropped sliver is split at its midpoint between its neighbours (a sliver of
        # ramp becomes a step there, which keeps its energy)
        back = np.concatenate([[0.0], np.where(keep[:-1], 0.0, 0.5 * w[:-1])])
        e = np.append((edges[:-1] - back)[keep], edges[-1])
        e[0] = 0.0
        level, end = level[keep], end[keep]
        e_after = float(np.sum(0.5 * (level + end) * np.diff(e)))
        scale = max(abs(e_before), float(np.abs(level).max(initial=0.0)) * edges[-1] * 1e-6,
                    1e-300)
        if abs(e_after - e_before) > 1e-9 * scale:
            i = int(np.flatnonzero(~keep)[0])
            raise WaveformError(
                f"segment at t = {float(edges[i])!r} s lasting {float(w[i])!r} s is below the "
                f"time resolution {TIME_RTOL * float(edges[-1])!r} s of a "
                f"{float(edges[-1])!r} s pattern (relative {TIME_RTOL}); dropping it would "
                "change the energy.  Expected a shorter pattern or longer pulses")
    slope = np.zeros(level.size)
    ramp = end != level
    slope[ramp] = (end[ramp] - level[ramp]) / np.diff(e)[ramp]
    return Piecewise(e, level, slope, periodic, after)


class _Figure:
    """Read-only figure taken from the compiled form.

    A non-data descriptor: a dataclass field of the same name in a subclass (``PulseTrain.peak``,
    ``Burst.period``) is stored in the instance and wins.  Access on the class raises
    AttributeError so that ``dataclasses`` does not take the descriptor for a field default.
    """

    def __set_name__(self, owner, name: str) -> None:
        self.name = name

    def __get__(self, obj, owner=None):
        if obj is None:
            raise AttributeError(self.name)
        return getattr(obj.compile(), self.name)


class WaveformBase:
    """Mixin for the waveform dataclasses: ``compile()``, figures and algebra.

    Subclasses implement ``_build() -> Piecewise``; ``compile()`` caches it.

    Figures (read-only, exact integrals of the canonical form; a subclass field of the same
    name takes precedence, with the same meaning):

    ``mean``     average power over one period (single shot: over the span), W
    ``peak``     largest power, W;  ``minimum`` smallest power, W
    ``energy``   energy per period (single shot: over the span), J
    ``period``   repetition period, s, or None for a single shot;  ``span`` pattern length, s
    ``periodic`` whether the pattern repeats
    ``duty``     fraction of the period above the minimum power (``Piecewise.duty``); the
                 pulse classes override it with the nominal duty, width/period

    Operators: ``a + b`` (a :class:`~pulsetherm.waveforms.algebra.Sum`; numbers count as
    constant powers in W), ``k * a`` and ``a * k`` (a ``Scaled``, k >= 0).
    """

    def _build(self) -> Piecewise:  # pragma: no cover - every subclass overrides
        raise NotImplementedError

    @cached_property
    def _compiled(self) -> Piecewise:
        out = self._build()
        if not isinstance(out, Piecewise):  # pragma: no cover - programming error
            raise TypeError(f"{type(self).__name__}._build returned {type(out).__name__}")
        return out

    def compile(self) -> Piecewise:
        """The exact canonical form (cached)."""
        return self._compiled

    # -- figures, all exact integrals of the canonical form (see the class docstring) -------
    mean = _Figure()
    peak = _Figure()
    minimum = _Figure()
    energy = _Figure()
    period = _Figure()
    span = _Figure()
    periodic = _Figure()
    duty = _Figure()

    def value(self, t) -> np.ndarray:
        """Power at times ``t`` (s), W, right-continuous at edges."""
        return self._compiled.value(t)

    def delayed(self, delay: float):
        """This waveform shifted later by ``delay`` s (see :class:`Delayed`)."""
        from .algebra import Delayed
        return Delayed(self, delay)

    # -- algebra --------------------------------------------------------------------------
    def __add__(self, other):
        from .algebra import Sum, _is_operand
        if not _is_operand(other):
            return NotImplemented
        return Sum((self, other))

    def __radd__(self, other):
        from .algebra import Sum, _is_operand
        if not _is_operand(other):
            return NotImplemented
        return Sum((other, self))

    def __mul__(self, factor):
        from .algebra import Scaled
        if isinstance(factor, bool) or not isinstance(factor, (Real, np.floating, np.integer)):
            return NotImplemented
        return Scaled(self, factor)

    __rmul__ = __mul__
