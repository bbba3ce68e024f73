"""Mission profiles: stretches of operation in sequence, optionally repeating.

A :class:`Profile` is a list of :class:`Stretch` records (duration + a constant power or a
waveform), for example 10 min standby at the quiescent power, then 5 min of bursts.  Each
stretch plays its waveform from the waveform's own t = 0 (a periodic waveform is tiled and
cut at the stretch's end, even mid-pulse; a single-shot one holds its ``after`` power once
it is over).  The profile's energy is the sum of the stretches' energies, exactly.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from numbers import Real

import numpy as np

from .base import WaveformBase, check_power, check_time, from_ends
from .canonical import TIME_RTOL, Piecewise, WaveformError, as_piecewise

__all__ = ["Stretch", "Profile", "MAX_STRETCH_SEGMENTS"]

#: Most exact segments one stretch may tile (a periodic waveform repeated over a long
#: stretch is held in memory segment by segment).
MAX_STRETCH_SEGMENTS = 2_000_000


@dataclass(frozen=True)
class Stretch:
    """One stretch of a mission profile.

    Parameters
    ----------
    duration
        s, > 0.
    power
        A constant power in W (>= 0) or a waveform (anything with ``compile()``, or a
        Piecewise).
    label
        Free text for reports ("standby", "transmit").
    """

    duration: float
    power: object
    label: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "duration", check_time("Stretch.duration", self.duration))
        p = self.power
        if isinstance(p, (Real, np.floating, np.integer)) and not isinstance(p, bool):
            object.__setattr__(self, "power", check_power("Stretch.power", p))
        elif not (isinstance(p, Piecewise) or callable(getattr(p, "compile", None))):
            raise WaveformError(f"Stretch.power = {p!r}: expected a constant power in W or a "
                                "waveform (PulseTrain, Burst, ...)")
        if not isinstance(self.label, str):
            raise WaveformError(f"Stretch.label = {self.label!r}: expected text")

    def segments(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
        """This stretch over [0, duration]: (edges, start power, end power, power after).

        A periodic source is tiled from its own t = 0 and cut at ``duration`` (inside a
        segment if need be: the cut segment ends at its value there); a single shot holds
        its ``after`` power once it is over.
        """
        p = as_piecewise(self.power, "Stretch.power")
        if p.minimum < 0:
            raise WaveformError(f"Stretch.power: minimum power {p.minimum!r} W; expected "
                                "powers >= 0 W")
        d = self.duration
        if p.is_constant:
            lv = p.level[:1]
            return np.array([0.0, d]), lv, lv, float(lv[0])
        span, n = p.span, p.n_segments
        if p.periodic:
            reps = max(1, math.ceil(d / span * (1 - TIME_RTOL)))
            if reps * n > MAX_STRETCH_SEGMENTS:
                raise WaveformError(
                    f"Stretch.duration = {d!r} s: plays {reps} periods of a {span!r} s "
                    f"waveform ({reps * n} segments); expected at most "
                    f"{MAX_STRETCH_SEGMENTS} segments per stretch (for a long stretch use a "
                    "constant power at the waveform's mean, or a shorter stretch)")
            starts = np.tile(p.edges[:-1], reps) + np.repeat(np.arange(reps) * span, n)
            level = np.tile(p.level, reps)
            end = np.tile(p.end_level, reps)
            slope = np.tile(p.slope, reps)
            natural = np.append(starts[1:], reps * span)
            after = float(p.level[0])
        else:
            starts, level, end, slope = p.edges[:-1], p.level, p.end_level, p.slope
            natural = p.edges[1:]
            after = p.after
            if d > span * (1 + TIME_RTOL):  # the source is over: hold its 'after' power
                starts = np.append(starts, span)
                level, end = np.append(level, after), np.append(end, after)
                slope = np.append(slope, 0.0)
                natural = np.append(natural, d)
        k = max(int(np.searchsorted(starts, d * (1 - TIME_RTOL), side="left")), 1)
        starts, level, end = starts[:k], level[:k], end[:k].copy()
        if d < natural[k - 1] * (1 - TIME_RTOL):  # cut inside the last segment
            end[-1] = level[-1] + slope[k - 1] * (d - starts[-1])
        return np.append(starts, d), level, end, after

    def piece(self) -> Piecewise:
        """This stretch alone as a single shot over [0, duration]."""
        edges, level, end, after = self.segments()
        return from_ends(edges, level, end, periodic=False, after=after)

    @property
    def energy(self) -> float:
        """Energy delivered during the stretch, J."""
        return self.piece().energy


def _stretch(i: int, s) -> Stretch:
    if isinstance(s, Stretch):
        return s
    if isinstance(s, (tuple, list)) and len(s) in (2, 3):
        return Stretch(*s)
    raise WaveformError(f"Profile.stretches[{i}] = {s!r}: expected a Stretch or a "
                        "(duration_s, power_W_or_waveform[, label]) tuple")


@dataclass(frozen=True)
class Profile(WaveformBase):
    """Stretches in sequence, repeating (``periodic=True``) or once.

    Parameters
    ----------
    stretches
        Stretch records, or ``(duration, power_or_waveform[, label])`` tuples.
    periodic
        True: the whole sequence repeats with period sum(durations).  False: a single shot.
    after
        Single shot only: the constant power after the last stretch, W.

    Examples
    --------
    >>> from pulsetherm.waveforms.pulses import PulseTrain, Burst
    >>> tx = Burst(PulseTrain(peak=40.0, width=20e-6, prf=2e3), pulses=16, gap=5e-3)
    >>> day = Profile([Stretch(600.0, 0.5, "standby"), Stretch(300.0, tx, "transmit")])
    >>> round(day.period)
    900
    """

    stretches: tuple
    periodic: bool = True
    after: float = 0.0

    def __post_init__(self) -> None:
        raw = self.stretches
        if isinstance(raw, (Stretch, str)) or not hasattr(raw, "__iter__"):
            raise WaveformError(f"Profile.stretches = {raw!r}: expected a sequence of Stretch")
        items = tuple(_stretch(i, s) for i, s in enumerate(raw))
        if not items:
            raise WaveformError("Profile.stretches = (): expected at least one stretch")
        if not isinstance(self.periodic, (bool, np.bool_)):
            raise WaveformError(f"Profile.periodic = {self.periodic!r}: expected True or False")
        after = check_power("Profile.after", self.after)
        if self.periodic and after != 0.0:
            raise WaveformError(f"Profile.after = {self.after!r} W: only a single-shot profile "
                                "(periodic=False) has an 'after' power; expected 0")
        object.__setattr__(self, "stretches", items)
        object.__setattr__(self, "periodic", bool(self.periodic))
        object.__setattr__(self, "after", after)

    @property
    def starts(self) -> np.ndarray:
        """Start time of each stretch, s."""
        d = np.array([s.duration for s in self.stretches])
        return np.concatenate([[0.0], np.cumsum(d)[:-1]])

    def _build(self) -> Piecewise:
        parts = [s.segments() for s in self.stretches]
        offsets = self.starts
        total = math.fsum(s.duration for s in self.stretches)
        edges = np.concatenate([e[:-1] + off for (e, _, _, _), off in zip(parts, offsets)]
                               + [[total]])
        level = np.concatenate([lv for _, lv, _, _ in parts])
        end = np.concatenate([en for _, _, en, _ in parts])
        return from_ends(edges, level, end, self.periodic, 0.0 if self.periodic else self.after)

    def stretch_energies(self) -> np.ndarray:
        """Energy of each stretch, J (their sum is ``energy``)."""
        return np.array([s.energy for s in self.stretches])
