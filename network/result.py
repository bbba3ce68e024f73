"""One result object for transient and periodic thermal responses.

:class:`Response` carries the sample times (s), the probe temperatures (degC), exact per-probe
figures (peak, minimum, mean over the period or run, ripple, warm-up time), the energy
balance check and the solver's work counters; it exports to a dict and to CSV.  No plotting.

Energy balance over the run (or one period)::

    ∫ P dt = ΔE_stored + ∫ Σ_b Gb·(T − T_b) dt,    ΔE_stored = Σ C·(T_end − T_start),

the last term from the exact time-average temperatures.  ``energy_error`` is the imbalance
relative to the largest of the three terms.
"""
from __future__ import annotations

import csv
import io
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from pulsetherm.waveforms.canonical import Piecewise

from .solvers import RawResponse
from .system import KELVIN_OFFSET, ThermalSystem

__all__ = ["Response", "energy_of", "energy_balance", "ResultError", "check_invariants"]


class ResultError(ValueError):
    """A result that breaks a physical invariant (non-finite, at or below 0 K, a mean outside
    [minimum, peak]); it is refused rather than printed.  Seen only for inputs far outside
    what the model resolves (or a bug): the message says which probe and what broke."""


#: Hottest temperature a result may show, K (as the plausibility limit on input
#: temperatures, network/limits.py): beyond it every material has melted or burnt.
MAX_RESULT_K = 5000.0


def check_invariants(theta_K: np.ndarray, mean_K: np.ndarray, probes: tuple[str, ...]) -> None:
    """Refuse a response whose numbers cannot be physical.

    For every probe: every temperature finite, above 0 K and at most ``MAX_RESULT_K``, and
    minimum <= mean <= peak
    within rounding (1e-6 of the largest temperature swing, plus 1e-9 of the absolute
    temperature).  ``theta_K`` (k, p) and ``mean_K`` (p,) in kelvin.  Raises
    :class:`ResultError` naming the probe.  Vectorised: a few passes over the samples.
    """
    theta = np.asarray(theta_K, dtype=float)
    mean = np.asarray(mean_K, dtype=float).reshape(-1)
    if theta.ndim != 2 or theta.shape[1] != mean.size or theta.shape[0] == 0:
        return
    finite = np.isfinite(theta).all(axis=0) & np.isfinite(mean)
    hint = ("the inputs are outside what the model resolves; check the powers, sizes and "
            "materials (if they are plausible, please report it)")
    if not finite.all():
        j = int(np.flatnonzero(~finite)[0])
        raise ResultError(f"probe {probes[j]!r}: a temperature that is not a finite number; "
                          f"{hint}")
    lo, hi = theta.min(axis=0), theta.max(axis=0)
    cold = (lo <= 0.0) | (mean <= 0.0)
    if cold.any():
        j = int(np.flatnonzero(cold)[0])
        raise ResultError(f"probe {probes[j]!r}: a temperature at or below 0 K "
                          f"({min(lo[j], mean[j]) - KELVIN_OFFSET:.6g} degC); {hint}")
    hot = hi > MAX_RESULT_K
    if hot.any():
        j = int(np.flatnonzero(hot)[0])
        raise ResultError(f"probe {probes[j]!r}: peak {hi[j] - KELVIN_OFFSET:.6g} degC, above "
                          f"{MAX_RESULT_K:g} K where no part survives and the model's "
                          f"linear physics means nothing; {hint}")
    tol = 1e-6 * np.maximum(hi - lo, np.abs(mean - lo)) + 1e-9 * np.abs(hi)
    bad = (mean < lo - tol) | (mean > hi + tol)
    if bad.any():
        j = int(np.flatnonzero(bad)[0])
        raise ResultError(f"probe {probes[j]!r}: mean {mean[j] - KELVIN_OFFSET:.9g} degC "
                          f"outside [minimum {lo[j] - KELVIN_OFFSET:.9g}, peak "
                          f"{hi[j] - KELVIN_OFFSET:.9g}] degC; {hint}")


def energy_of(p: Piecewise, duration: float) -> float:
    """∫₀^duration P dt, J, for one waveform (periodic ones counted period by period)."""
    if p.periodic:
        n = math.floor(duration / p.span * (1 + 1e-12))
        rest = duration - n * p.span
        e = n * p.energy
        if rest > 1e-12 * duration:
            e += p.window(rest).energy
        return e
    return p.window(duration).energy


def energy_balance(system: ThermalSystem, energy_in: float, duration: float,
                   state_start: np.ndarray, state_end: np.ndarray,
                   mean_full: np.ndarray) -> tuple[float, dict]:
    """Relative energy imbalance and its terms (J): input, stored, to boundaries."""
    stored = float(np.sum(system.C * (state_end - state_start)))
    # heat to the boundaries: Σ over free-boundary conductances g·(T̄_i − T_b), taken
    # from the edge list (the entries of Gb) rather than sparse products
    n = system.n
    fb = system.edge_j >= n
    flow = system.edge_g[fb] * (mean_full[system.edge_i[fb]]
                                - system.T_boundary[system.edge_j[fb] - n])
    to_bnd = float(duration * np.sum(flow))
    scale = max(abs(energy_in), abs(stored), abs(to_bnd))
    err = abs(energy_in - stored - to_bnd) / scale if scale > 0 else 0.0
    return err, {"input_J": energy_in, "stored_J": stored, "to_boundaries_J": to_bnd}


@dataclass
class Response:
    """Thermal response at the probe nodes.

    Attributes
    ----------
    t
        Sample times, s, shape (k,).  Every segment end is a sample; extremes are located
        exactly and added as samples.
    temperatures
        Probe temperatures, degC, shape (k, p).
    probes
        Probe node names (columns of ``temperatures``).
    means
        Exact time-average per probe over the period (periodic) or the run, degC, (p,).
    ambient
        Zero-power static temperature per probe, degC, (p,) (NaN for adiabatic parts).
    periodic
        True for a periodic steady state over one period ``span``.
    span
        The period (periodic) or the run duration, s.
    warmup_s
        Probe -> time to reach 99 % of the periodic-steady-state peak rise from ambient, s
        (periodic responses; ``None`` otherwise).  A mapping computed per probe on first
        access (``warmup_fn(probe)``).
    energy_error
        Relative energy imbalance (NaN when the solver gave no full-state mean, or for a
        nonlinear system whose solver does not balance the energy itself).
    energy
        Its terms, J.
    """

    t: np.ndarray
    temperatures: np.ndarray
    probes: tuple[str, ...]
    means: np.ndarray
    ambient: np.ndarray
    periodic: bool
    span: float
    method: str
    energy_error: float = math.nan
    energy: dict = field(default_factory=dict)
    warmup_fn: object = field(default=None, repr=False)
    success: bool = True
    message: str = ""
    info: dict = field(default_factory=dict)
    state_start: np.ndarray | None = None
    state_end: np.ndarray | None = None

    # -- construction -----------------------------------------------------------------
    @classmethod
    def from_raw(cls, raw: RawResponse, system: ThermalSystem, rows: np.ndarray, *,
                 periodic: bool, method: str, energy_in: float, span: float,
                 ambient_K: np.ndarray | None = None) -> "Response":
        """Response (degC) from a solver's raw response (K), with the energy balance of the
        module docstring (the solver's own for a nonlinear system; NaN when neither is
        available).  ``rows`` (p,) probe rows, ``span`` the period or run length, s."""
        info = dict(raw.info)
        mean_full = info.pop("mean_full", None)
        if "energy_error" in info:
            # the solver balanced the energy itself (e.g. with temperature-dependent k)
            err = float(info.pop("energy_error"))
            terms = {"input_J": energy_in, **info.pop("energy_J", {})}
        elif mean_full is not None and system.is_linear:
            # linear conductances: heat to the boundaries from the exact mean temperatures;
            # periodic: the stored term is the periodicity defect C·(T(T) − T(0)), so a
            # start state that is not periodic shows up here
            err, terms = energy_balance(system, energy_in, span, raw.state_start,
                                        raw.state_end, np.asarray(mean_full))
        else:
            err, terms = math.nan, {"input_J": energy_in}
        amb = (np.full(len(rows), np.nan) if ambient_K is None else ambient_K[rows]) - KELVIN_OFFSET
        check_invariants(raw.theta, raw.mean, tuple(system.node_names[i] for i in rows))
        return cls(t=raw.t, temperatures=raw.theta - KELVIN_OFFSET,
                   probes=tuple(system.node_names[i] for i in rows),
                   means=raw.mean - KELVIN_OFFSET, ambient=amb, periodic=periodic, span=span,
                   method=method, energy_error=err, energy=terms,
                   success=bool(info.pop("success", True)),
                   message=str(info.pop("message", "")), info=info,
                   state_start=raw.state_start - KELVIN_OFFSET,
                   state_end=raw.state_end - KELVIN_OFFSET)

    # -- access -----------------------------------------------------------------------
    @property
    def warmup_s(self) -> dict | None:
        """Probe -> warm-up time, s (periodic responses), computed once on first access."""
        if self.warmup_fn is None:
            return None
        if not hasattr(self, "_warmup"):
            self._warmup = _LazyWarmup(self.probes, self.warmup_fn)
        return self._warmup

    def _col(self, name: str) -> int:
        try:
            return self.probes.index(name)
        except ValueError:
            raise KeyError(f"{name!r} is not a probe of this response (probes: "
                           f"{', '.join(self.probes[:12])}{', ...' if len(self.probes) > 12 else ''}"
                           "); pass probes=[...] to the analysis") from None

    def T(self, name: str) -> np.ndarray:
        """Temperature of probe ``name`` at ``t``, degC, (k,)."""
        return self.temperatures[:, self._col(name)]

    def peak(self, name: str) -> float:
        """Highest temperature of the probe, degC (located exactly, not sampled)."""
        return float(self.T(name).max())

    def min(self, name: str) -> float:
        """Lowest temperature of the probe, degC."""
        return float(self.T(name).min())

    def mean(self, name: str) -> float:
        """Exact time average over the period (or the run), degC."""
        return float(self.means[self._col(name)])

    def ripple(self, name: str) -> float:
        """Peak minus minimum, K."""
        return self.peak(name) - self.min(name)

    def rise(self, name: str) -> np.ndarray:
        """Temperature over the zero-power static field at the probe, K, (k,)."""
        return self.T(name) - self.ambient[self._col(name)]

    def peak_time(self, name: str) -> float:
        """Time of the peak, s."""
        return float(self.t[int(np.argmax(self.T(name)))])

    def warmup(self, name: str) -> float:
        """Warm-up time of the probe, s (periodic responses)."""
        if self.warmup_s is None:
            raise ValueError("warm-up time: only a periodic response has one")
        self._col(name)
        return float(self.warmup_s[name])

    # -- export -----------------------------------------------------------------------
    def to_dict(self) -> dict:
        """Plain-Python dict (lists and floats) of everything in the response."""
        out = {
            "method": self.method, "periodic": self.periodic, "span_s": self.span,
            "success": self.success, "message": self.message,
            "t_s": self.t.tolist(), "probes": list(self.probes),
            "temperatures_degC": {p: self.temperatures[:, i].tolist()
                                  for i, p in enumerate(self.probes)},
            "peak_degC": {p: self.peak(p) for p in self.probes},
            "min_degC": {p: self.min(p) for p in self.probes},
            "mean_degC": {p: self.mean(p) for p in self.probes},
            "ripple_K": {p: self.ripple(p) for p in self.probes},
            "ambient_degC": {p: float(a) for p, a in zip(self.probes, self.ambient)},
            "energy_error": self.energy_error, "energy_J": dict(self.energy),
            "info": {k: (v.tolist() if isinstance(v, np.ndarray) else v)
                     for k, v in self.info.items()},
        }
        if self.warmup_s is not None:
            out["warmup_s"] = dict(self.warmup_s)
        return out

    def to_csv(self, path_or_buffer=None) -> str | None:
        """Write ``t_s`` and one ``<probe>_degC`` column per probe.  With no argument the
        CSV text is returned."""
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(["t_s", *[f"{p}_degC" for p in self.probes]])
        for k in range(self.t.size):
            w.writerow([repr(float(self.t[k])), *[repr(float(x)) for x in self.temperatures[k]]])
        text = buf.getvalue()
        if path_or_buffer is None:
            return text
        if isinstance(path_or_buffer, (str, Path)):
            Path(path_or_buffer).write_text(text)
        else:
            path_or_buffer.write(text)
        return None

    def summary(self) -> str:
        """Text table of the per-probe figures."""
        kind = "periodic steady state" if self.periodic else "transient"
        head = (f"{kind} over {self.span:.6g} s, method {self.method}, "
                f"{self.t.size} samples, energy balance error {self.energy_error:.2e}")
        cols = ["probe", "peak degC", "min degC", "mean degC", "ripple K"]
        if self.warmup_s is not None:
            cols.append("warm-up s")
        rows = []
        for p in self.probes:
            r = [p, f"{self.peak(p):.4f}", f"{self.min(p):.4f}", f"{self.mean(p):.4f}",
                 f"{self.ripple(p):.4f}"]
            if self.warmup_s is not None:
                r.append(f"{self.warmup_s[p]:.4g}")
            rows.append(r)
        width = [max(len(c), *(len(r[i]) for r in rows)) for i, c in enumerate(cols)]
        lines = [head, "  ".join(c.ljust(width[i]) for i, c in enumerate(cols))]
        lines += ["  ".join(x.ljust(width[i]) for i, x in enumerate(r)) for r in rows]
        if not self.success:
            lines.append(f"NOT CONVERGED: {self.message}")
        return "\n".join(lines)

    def __repr__(self) -> str:
        kind = "periodic" if self.periodic else "transient"
        return (f"<Response {kind} {self.span:.4g} s, probes {list(self.probes)[:4]}"
                f"{'...' if len(self.probes) > 4 else ''}, {self.t.size} samples>")


class _LazyWarmup(Mapping):
    """Probe -> warm-up time, s: each computed on first access by ``fn(probe)`` (a sweep
    needs only the hottest probe's)."""

    def __init__(self, probes, fn) -> None:
        self._probes = tuple(dict.fromkeys(probes))
        self._fn = fn
        self._done: dict[str, float] = {}

    def __getitem__(self, name: str) -> float:
        if name not in self._done:
            if name not in self._probes:
                raise KeyError(name)
            self._done[name] = float(self._fn(name))
        return self._done[name]

    def __iter__(self):
        return iter(self._probes)

    def __len__(self) -> int:
        return len(self._probes)

    def __repr__(self) -> str:
        return repr(dict(self))
