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

from .base import WaveformBase, check_power, check_time
from .canonical import Piecewise, WaveformError, as_piecewise

__all__ = ["Stretch", "Profile"]


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

    def piece(self) -> Piecewise:
        """This stretch alone as a single shot over [0, duration]."""
        p = as_piecewise(self.power, "Stretch.power")
        if p.minimum < 0:
            raise WaveformError(f"Stretch.power: minimum power {p.minimum!r} W; expected "
                                "powers >= 0 W")
        if p.is_constant:
            return Piecewise([0.0, self.duration], p.level[:1], periodic=False,
                             after=float(p.level[0]))
        return p.window(self.duration)

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
        pieces = [s.piece() for s in self.stretches]
        offsets = self.starts
        total = math.fsum(s.duration for s in self.stretches)
        edges = np.concatenate([p.edges[:-1] + off for p, off in zip(pieces, offsets)]
                               + [[total]])
        level = np.concatenate([p.level for p in pieces])
        slope = np.concatenate([p.slope for p in pieces])
        return Piecewise(edges, level, slope, self.periodic,
                         0.0 if self.periodic else self.after)

    def stretch_energies(self) -> np.ndarray:
        """Energy of each stretch, J (their sum is ``energy``)."""
        return np.array([s.energy for s in self.stretches])
