"""Thermal cycling of the junction and the attach: rainflow counting, cycles per hour by
range, Coffin-Manson relative damage and Arrhenius acceleration factors.

Relative figures only.  They compare operating conditions (a cooling design against
another, a waveform against another) and never promise a lifetime: follow the device
maker's reliability data; engineering estimates, verify by measurement.

Rainflow counting
-----------------
ASTM E1049-85 (reapproved 2017), *Standard Practices for Cycle Counting in Fatigue
Analysis*, §5.4.4 "Rainflow Counting": from the sequence of peaks and valleys (reversals),
with S the starting point,

1. read the next reversal (none left: step 6);
2. with fewer than three points go to 1; X = range of the latest two points, Y = the range
   before it;
3. X < Y: go to 1;
4. Y contains S: go to 5; else count Y as one cycle, discard its two points, go to 2;
5. count Y as one half cycle, discard its first point, S moves to its second; go to 2;
6. count every range left as one half cycle.

:func:`rainflow` is our implementation of these steps (checked in the tests against the
standard's worked example and against the ``rainflow`` package on random sequences).
For a periodic history the sequence is turned to start at its highest point and closed
there (one period from the highest peak to the highest peak), so every cycle closes and the
counts are whole cycles per period (S. D. Downing and D. F. Socie, "Simple rainflow
counting algorithms", Int. J. Fatigue 4(1), 1982, 31-40: start at the largest peak).

Damage and acceleration
-----------------------
* Coffin-Manson: cycles to failure N_f ∝ ΔT^(−n) (L. F. Coffin Jr., "A study of the effects
  of cyclic thermal stresses on a ductile metal", Trans. ASME 76, 1954, 931-950;
  S. S. Manson, "Behavior of materials under conditions of thermal stress", NACA TN 2933,
  1953), summed over the counted cycles with Miner's rule (M. A. Miner, "Cumulative damage
  in fatigue", J. Appl. Mech. 12, 1945, A159-A164).  The relative damage per hour is the
  number of reference cycles (range ΔT_ref) that do the same damage,
  D = Σ_i n_i·(ΔT_i/ΔT_ref)^n, with n_i the cycles per hour of range ΔT_i.
* Arrhenius: AF = exp[(E_a/k_B)(1/T_ref − 1/T)] (S. Arrhenius, Z. Phys. Chem. 4, 1889,
  226-248), T and T_ref absolute; AF > 1 when T runs hotter than the reference.  Physics
  brief §9: 0.7 eV, 55 → 125 degC gives 77.6.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np

__all__ = ["CyclingError", "reversals", "rainflow", "rainflow_periodic", "Cycles",
           "count_by_range", "coffin_manson_damage", "arrhenius_factor", "CyclingSettings",
           "CyclingFigures", "cycling_figures", "K_B", "RANGE_BINS_K"]

#: Boltzmann constant, J/K (exact in the SI since 2019).
K_B = 1.380649e-23
#: One electronvolt, J (exact in the SI since 2019).
EV = 1.602176634e-19
#: Bin edges of the cycles-per-hour table, K (the last bin is open).
RANGE_BINS_K = (0.0, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, math.inf)


class CyclingError(ValueError):
    """Bad cycling input; the message names the field, the value and what is expected."""


def _series(x, name: str = "series") -> np.ndarray:
    a = np.asarray(x, dtype=np.float64).reshape(-1)
    if a.size and not np.all(np.isfinite(a)):
        i = int(np.flatnonzero(~np.isfinite(a))[0])
        raise CyclingError(f"{name}[{i}] = {a[i]!r}: expected finite values")
    return a


def reversals(x) -> tuple[np.ndarray, np.ndarray]:
    """Peaks and valleys of a sequence (first and last points kept; repeated values and
    points on a monotone run dropped): values and their indices in ``x``."""
    x = _series(x)
    if x.size == 0:
        return x, np.zeros(0, dtype=np.int64)
    keep = np.concatenate([[True], np.diff(x) != 0])
    idx = np.flatnonzero(keep)
    y = x[idx]
    if y.size < 3:
        return y, idx
    d = np.diff(y)
    turn = np.flatnonzero(np.sign(d[1:]) != np.sign(d[:-1])) + 1
    sel = np.concatenate([[0], turn, [y.size - 1]])
    return y[sel], idx[sel]


@dataclass(frozen=True)
class Cycles:
    """Counted cycles: range (K), mean (K or degC, as the input), count (0.5 or 1 per
    entry), and the indices of their first and second point in the input."""

    range: np.ndarray
    mean: np.ndarray
    count: np.ndarray
    i_start: np.ndarray
    i_end: np.ndarray

    @property
    def total(self) -> float:
        return float(self.count.sum())

    def by_range(self) -> dict[float, float]:
        """Range -> total count (equal ranges merged)."""
        out: dict[float, float] = {}
        for r, c in zip(self.range.tolist(), self.count.tolist()):
            out[r] = out.get(r, 0.0) + c
        return dict(sorted(out.items()))

    def above(self, gate: float) -> "Cycles":
        """The cycles whose range exceeds ``gate``."""
        k = self.range > gate
        return Cycles(self.range[k], self.mean[k], self.count[k], self.i_start[k],
                      self.i_end[k])


def rainflow(x) -> Cycles:
    """ASTM E1049-85 §5.4.4 rainflow count of a sequence (module docstring)."""
    y, idx = reversals(x)
    rng, mean, cnt, i0, i1 = [], [], [], [], []
    stack: list[int] = []            # positions in y

    def emit(a: int, b: int, c: float) -> None:
        rng.append(abs(y[b] - y[a]))
        mean.append(0.5 * (y[a] + y[b]))
        cnt.append(c)
        i0.append(idx[a])
        i1.append(idx[b])

    for k in range(y.size):
        stack.append(k)                                       # step 1
        while len(stack) >= 3:                                # step 2
            X = abs(y[stack[-1]] - y[stack[-2]])
            Y = abs(y[stack[-2]] - y[stack[-3]])
            if X < Y:                                         # step 3
                break
            if len(stack) == 3:                               # step 5: Y holds S
                emit(stack[0], stack[1], 0.5)
                stack.pop(0)
            else:                                             # step 4
                emit(stack[-3], stack[-2], 1.0)
                del stack[-3:-1]
    for a, b in zip(stack[:-1], stack[1:]):                   # step 6
        emit(a, b, 0.5)
    f = lambda v, t=np.float64: np.array(v, dtype=t)  # noqa: E731
    return Cycles(f(rng), f(mean), f(cnt), f(i0, np.int64), f(i1, np.int64))


def rainflow_periodic(x) -> Cycles:
    """Rainflow count of one period of a periodic history (``x`` in time order over one
    period; its wrap from the last point to the first is part of the history): turned to
    start at the highest point and closed there, so the counts are whole cycles per
    period (module docstring).  Indices refer to ``x``."""
    x = _series(x)
    if x.size < 2:
        return rainflow(x)
    k = int(np.argmax(x))
    order = np.concatenate([np.arange(k, x.size), np.arange(0, k), [k]])
    c = rainflow(x[order])
    return Cycles(c.range, c.mean, c.count, order[c.i_start], order[c.i_end])


def count_by_range(cycles: Cycles, per_hour: float,
                   bins: Sequence[float] = RANGE_BINS_K) -> list[dict[str, float]]:
    """Cycles per hour in range bins: rows ``{"from_K", "to_K", "per_hour"}`` (the last
    bin open, ``to_K`` = None); ``per_hour`` = periods per hour."""
    edges = np.asarray(bins, dtype=np.float64)
    rows = []
    for lo, hi in zip(edges[:-1], edges[1:]):
        k = (cycles.range > lo) & (cycles.range <= hi)
        rows.append({"from_K": float(lo), "to_K": float(hi) if math.isfinite(hi) else None,
                     "per_hour": float(cycles.count[k].sum() * per_hour)})
    return rows


def coffin_manson_damage(cycles: Cycles, per_hour: float, reference_K: float,
                         exponent: float) -> float:
    """Reference cycles per hour that do the damage of the counted cycles:
    D = Σ_i n_i (ΔT_i/ΔT_ref)^n (Coffin 1954, Manson 1953, Miner 1945; module docstring)."""
    if not (reference_K > 0 and math.isfinite(reference_K)):
        raise CyclingError(f"reference_range = {reference_K!r} K: expected a range > 0 K")
    if not (exponent > 0 and math.isfinite(exponent)):
        raise CyclingError(f"exponent = {exponent!r}: expected a number > 0")
    return float(per_hour * np.sum(cycles.count * (cycles.range / reference_K) ** exponent))


def arrhenius_factor(T_K: float, T_ref_K: float, Ea_J: float) -> float:
    """AF = exp[(E_a/k_B)(1/T_ref − 1/T)], temperatures in K, E_a in J (Arrhenius 1889;
    module docstring)."""
    for name, v in (("temperature", T_K), ("reference_temperature", T_ref_K)):
        if not (v > 0 and math.isfinite(v)):
            raise CyclingError(f"{name} = {v!r} K: expected an absolute temperature > 0 K")
    if not (Ea_J >= 0 and math.isfinite(Ea_J)):
        raise CyclingError(f"activation_energy = {Ea_J!r} J: expected an energy >= 0")
    return math.exp(Ea_J / K_B * (1.0 / T_ref_K - 1.0 / T_K))


@dataclass(frozen=True)
class CyclingSettings:
    """Reference cycle range ΔT_ref (K), Coffin-Manson exponent n, activation energy E_a
    (J) and Arrhenius reference temperature (K).  Defaults (value from memory, for
    comparisons only; use the maker's reliability data): 100 K, n = 2 (solder, physics
    brief §9), 0.7 eV, 150 degC."""

    reference_range_K: float = 100.0
    exponent: float = 2.0
    activation_energy_J: float = 0.7 * EV
    reference_temperature_K: float = 150.0 + 273.15

    def __post_init__(self) -> None:
        if not (self.reference_range_K > 0 and math.isfinite(self.reference_range_K)):
            raise CyclingError(f"reference_range = {self.reference_range_K!r} K: expected a "
                               "range > 0 K")
        if not (self.exponent > 0 and math.isfinite(self.exponent)):
            raise CyclingError(f"exponent = {self.exponent!r}: expected a number > 0")
        if not (self.activation_energy_J >= 0 and math.isfinite(self.activation_energy_J)):
            raise CyclingError(f"activation_energy = {self.activation_energy_J!r} J: "
                               "expected an energy >= 0")
        if not (self.reference_temperature_K > 0
                and math.isfinite(self.reference_temperature_K)):
            raise CyclingError(f"reference_temperature = {self.reference_temperature_K!r} "
                               "K: expected an absolute temperature > 0 K")


@dataclass(frozen=True)
class CyclingFigures:
    """Cycling of one node over the periodic state (relative figures; module docstring)."""

    node: str
    role: str                       # "junction" or "attach"
    period_s: float
    cycles: Cycles
    per_hour: float                 # periods per hour
    bins: list[dict[str, float]]
    damage_per_hour: float          # reference cycles per hour
    mean_C: float
    peak_C: float
    af_mean: float
    af_peak: float
    settings: CyclingSettings = field(repr=False)

    @property
    def cycles_per_hour(self) -> float:
        return self.cycles.total * self.per_hour

    @property
    def largest_range_K(self) -> float:
        return float(self.cycles.range.max()) if self.cycles.range.size else 0.0

    def to_dict(self) -> dict[str, Any]:
        s = self.settings
        return {"node": self.node, "role": self.role, "period_s": self.period_s,
                "cycles_per_period": self.cycles.total,
                "cycles_per_hour": self.cycles_per_hour,
                "largest_range_K": self.largest_range_K,
                "by_range_per_hour": list(self.bins),
                "damage_ref_cycles_per_hour": self.damage_per_hour,
                "mean_C": self.mean_C, "peak_C": self.peak_C,
                "arrhenius_af_mean": self.af_mean, "arrhenius_af_peak": self.af_peak,
                "reference_range_K": s.reference_range_K, "exponent": s.exponent,
                "activation_energy_eV": s.activation_energy_J / EV,
                "reference_temperature_C": s.reference_temperature_K - 273.15,
                "cycles": [{"range_K": float(r), "mean_C": float(m), "count": float(c)}
                           for r, m, c in zip(self.cycles.range, self.cycles.mean,
                                              self.cycles.count)]}


def cycling_figures(trace, settings: CyclingSettings, role: str = "junction",
                    gate: float = 1e-9) -> CyclingFigures:
    """Rainflow count of a node's exact periodic response
    (:class:`~pulsetherm.network.pulse_effects.NodeTrace`: every segment edge and every
    turning point), cycles per hour by range, Coffin-Manson damage and Arrhenius factors
    at the exact mean and peak.  Cycles smaller than ``gate`` times the swing over the
    period are dropped (round-off flicker on flat stretches)."""
    _, v = trace.sequence()
    temp_C = v + trace.ambient_K - 273.15
    c = rainflow_periodic(temp_C)
    swing = float(v.max() - v.min()) if v.size else 0.0
    c = c.above(gate * swing) if swing > 0 else c.above(math.inf)
    per_hour = 3600.0 / trace.period
    mean_K = trace.mean + trace.ambient_K
    peak_K = float(v.max()) + trace.ambient_K
    s = settings
    return CyclingFigures(
        trace.node, role, trace.period, c, per_hour, count_by_range(c, per_hour),
        coffin_manson_damage(c, per_hour, s.reference_range_K, s.exponent),
        mean_K - 273.15, peak_K - 273.15,
        arrhenius_factor(mean_K, s.reference_temperature_K, s.activation_energy_J),
        arrhenius_factor(peak_K, s.reference_temperature_K, s.activation_energy_J), s)
