"""RF power to dissipated heat: amplifiers, passive losses, quiescent bias.

Every conversion returns a :class:`PowerBalance` (P_dc, P_in, P_out, P_diss in W) whose
figures satisfy the energy balance of a part at one operating point

    P_dc + P_in = P_out + P_diss

(first law for a part in steady operation; ``PowerBalance.residual`` is the left side minus
the right side).  Definitions used (D. M. Pozar, *Microwave Engineering*, 4th ed., 2012,
§12.5, power amplifiers; cited from memory):

* drain (collector) efficiency  eta = P_out / P_dc
* power-added efficiency        PAE = (P_out - P_in) / P_dc
* insertion loss of a passive part  IL = 10 log10(P_in / P_out)  dB

so that

* amplifier, drain efficiency:  P_diss = P_out (1/eta - 1) + P_in     (P_in = 0 by default)
* amplifier, PAE:               P_diss = (P_out - P_in)(1/PAE - 1)
* line / passive part:          P_diss = P_in (1 - 10^(-IL/10))
* quiescent bias:               P_diss = P_dc = V I

Powers may be given in W (default) or dBm (``unit="dBm"``; P = 1 mW·10^(dBm/10)).

:class:`PulsedAmplifier` turns an RF output-power envelope (any waveform) into a heat
waveform; :class:`PassiveLoss` does the same for a line fed with an input envelope.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from numbers import Real

import numpy as np

from .base import WaveformBase, check_power
from .canonical import Piecewise, WaveformError, as_piecewise

__all__ = ["PowerBalance", "dbm_to_w", "w_to_dbm", "amplifier_from_efficiency",
           "amplifier_from_pae", "passive_loss", "quiescent", "PulsedAmplifier",
           "PassiveLoss", "RFHeat"]

_POWER_UNITS = ("W", "dBm")


def dbm_to_w(dbm):
    """Power in W from dBm: P = 1 mW · 10^(dBm/10)."""
    arr = np.asarray(dbm, dtype=np.float64)
    if not np.all(np.isfinite(arr)):
        raise WaveformError(f"dBm = {dbm!r}: expected finite levels in dBm")
    out = 1e-3 * np.power(10.0, arr / 10.0)
    return float(out) if out.ndim == 0 else out


def w_to_dbm(watts):
    """Power in dBm from W (> 0): 10 log10(P / 1 mW)."""
    arr = np.asarray(watts, dtype=np.float64)
    if not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise WaveformError(f"power = {watts!r} W: expected finite powers > 0 W (0 W has no "
                            "dBm value)")
    out = 10.0 * np.log10(arr / 1e-3)
    return float(out) if out.ndim == 0 else out


def _power(field: str, value, unit: str) -> float:
    if unit not in _POWER_UNITS:
        raise WaveformError(f"unit = {unit!r}: expected 'W' or 'dBm'")
    if isinstance(value, bool) or not isinstance(value, (Real, np.floating, np.integer)):
        raise WaveformError(f"{field} = {value!r}: expected a number in {unit}")
    v = float(value)
    if not math.isfinite(v):
        raise WaveformError(f"{field} = {value!r} {unit}: expected a finite power")
    if unit == "dBm":
        return dbm_to_w(v)
    return check_power(field, v)


def _efficiency(field: str, value) -> float:
    if isinstance(value, bool) or not isinstance(value, (Real, np.floating, np.integer)):
        raise WaveformError(f"{field} = {value!r}: expected a number in (0, 1]")
    v = float(value)
    if not (math.isfinite(v) and 0.0 < v <= 1.0):
        raise WaveformError(f"{field} = {value!r}: expected an efficiency in (0, 1] "
                            "(a fraction, not a percentage)")
    return v


def _gain(gain_db) -> float:
    if isinstance(gain_db, bool) or not isinstance(gain_db, (Real, np.floating, np.integer)) \
            or not math.isfinite(float(gain_db)):
        raise WaveformError(f"gain_db = {gain_db!r}: expected a finite gain in dB")
    return 10.0 ** (float(gain_db) / 10.0)


@dataclass(frozen=True)
class PowerBalance:
    """Power flows of a part at one operating point, W (all finite, >= 0).

    Parameters
    ----------
    p_dc
        Power drawn from the supply.
    p_in
        RF power into the part.
    p_out
        RF power out of the part.
    p_diss
        Heat dissipated in the part.
    """

    p_dc: float
    p_in: float
    p_out: float
    p_diss: float

    def __post_init__(self) -> None:
        for name in ("p_dc", "p_in", "p_out", "p_diss"):
            object.__setattr__(self, name, check_power(f"PowerBalance.{name}",
                                                       getattr(self, name)))

    @property
    def residual(self) -> float:
        """P_dc + P_in - P_out - P_diss, W (zero up to rounding)."""
        return math.fsum([self.p_dc, self.p_in, -self.p_out, -self.p_diss])

    @property
    def drain_efficiency(self) -> float | None:
        """P_out / P_dc, or None without a supply."""
        return self.p_out / self.p_dc if self.p_dc > 0 else None

    @property
    def pae(self) -> float | None:
        """(P_out - P_in) / P_dc, or None without a supply."""
        return (self.p_out - self.p_in) / self.p_dc if self.p_dc > 0 else None

    @property
    def gain_db(self) -> float | None:
        """10 log10(P_out / P_in), or None when either is zero."""
        if self.p_in > 0 and self.p_out > 0:
            return 10.0 * math.log10(self.p_out / self.p_in)
        return None


def amplifier_from_efficiency(p_out, efficiency, p_in=None, unit: str = "W") -> PowerBalance:
    """Amplifier balance from output power and drain efficiency.

    P_dc = P_out / eta,  P_diss = P_out (1/eta - 1) + P_in  (Pozar 2012, §12.5, from memory).
    Without ``p_in`` (no drive given, P_in = 0) this is the usual P_diss = P_out (1/eta - 1);
    a given drive power (same unit as ``p_out``) ends up as heat in the device too.
    """
    po = _power("p_out", p_out, unit)
    pi = 0.0 if p_in is None else _power("p_in", p_in, unit)
    eta = _efficiency("efficiency", efficiency)
    p_dc = po / eta
    return PowerBalance(p_dc, pi, po, po * (1.0 / eta - 1.0) + pi)


def amplifier_from_pae(p_out, pae, p_in=None, gain_db=None, unit: str = "W") -> PowerBalance:
    """Amplifier balance from output power and power-added efficiency.

    Give the drive as ``p_in`` (same unit as ``p_out``) or ``gain_db`` (P_in = P_out/G).
    P_dc = (P_out - P_in)/PAE,  P_diss = (P_out - P_in)(1/PAE - 1)  (Pozar 2012, §12.5).
    """
    po = _power("p_out", p_out, unit)
    eff = _efficiency("pae", pae)
    if (p_in is None) == (gain_db is None):
        raise WaveformError(f"amplifier_from_pae: got p_in = {p_in!r}, gain_db = {gain_db!r}: "
                            "expected exactly one (the drive power, or the gain in dB)")
    pi = _power("p_in", p_in, unit) if p_in is not None else po / _gain(gain_db)
    if not pi < po:
        raise WaveformError(f"p_in = {pi!r} W: expected less than p_out = {po!r} W (PAE "
                            "describes an amplifier with gain > 0 dB)")
    added = po - pi
    return PowerBalance(added / eff, pi, po, added * (1.0 / eff - 1.0))


def passive_loss(p_in, loss_db, unit: str = "W") -> PowerBalance:
    """Line or passive part with insertion loss IL (dB >= 0).

    P_out = P_in 10^(-IL/10),  P_diss = P_in (1 - 10^(-IL/10)).
    """
    pi = _power("p_in", p_in, unit)
    frac = _loss_fraction(loss_db)
    diss = pi * frac
    return PowerBalance(0.0, pi, pi - diss, diss)


def quiescent(voltage, current) -> PowerBalance:
    """Quiescent bias without RF: P_dc = P_diss = V I (V, A >= 0)."""
    for name, v in (("voltage", voltage), ("current", current)):
        if isinstance(v, bool) or not isinstance(v, (Real, np.floating, np.integer)) \
                or not math.isfinite(float(v)) or float(v) < 0:
            raise WaveformError(f"{name} = {v!r}: expected a finite value >= 0 "
                                f"({'V' if name == 'voltage' else 'A'})")
    p = float(voltage) * float(current)
    return PowerBalance(p, 0.0, 0.0, p)


def _loss_fraction(loss_db) -> float:
    """Fraction of the input dissipated: 1 - 10^(-IL/10), computed without cancellation."""
    if isinstance(loss_db, bool) or not isinstance(loss_db, (Real, np.floating, np.integer)) \
            or not math.isfinite(float(loss_db)) or float(loss_db) < 0:
        raise WaveformError(f"loss_db = {loss_db!r}: expected a finite insertion loss >= 0 dB")
    # 1 - 10^(-x/10) = -expm1(-x ln10 / 10): accurate for small losses
    return -math.expm1(-float(loss_db) * math.log(10.0) / 10.0)


_KEYING = ("drain", "gate")


@dataclass(frozen=True)
class PulsedAmplifier:
    """How a pulsed amplifier turns its RF output envelope into heat.

    Parameters
    ----------
    efficiency
        Drain efficiency during the pulse, (0, 1].  Give exactly one of ``efficiency`` and
        ``pae``.
    pae
        Power-added efficiency during the pulse, (0, 1]; needs ``gain_db``.
    gain_db
        Power gain, dB.  With ``efficiency`` it is optional and adds the drive power
        P_in = P_out/G to the heat.
    keying
        "drain": the drain supply is switched off between pulses, no heat there.
        "gate": the drain stays at ``drain_voltage`` between pulses and draws
        ``idle_current`` (the off-state leakage when the gate is pinched off, or the
        quiescent current when the bias stays on and only the drive is keyed).
    drain_voltage, idle_current
        V and A (>= 0), used with ``keying="gate"``.

    Notes
    -----
    The efficiency is taken as constant across the envelope, so the heat during RF is
    ``k * P_out(t)`` with ``k = 1/eta - 1 (+ 1/G)`` or ``k = (1 - 1/G)(1/PAE - 1)``; the off
    state (RF envelope exactly zero) dissipates ``drain_voltage * idle_current``.  At backed-
    off drive real efficiencies are lower: give a measured heat table when that matters.
    """

    efficiency: float | None = None
    pae: float | None = None
    gain_db: float | None = None
    keying: str = "drain"
    drain_voltage: float = 0.0
    idle_current: float = 0.0

    def __post_init__(self) -> None:
        if (self.efficiency is None) == (self.pae is None):
            raise WaveformError(f"PulsedAmplifier: got efficiency = {self.efficiency!r}, "
                                f"pae = {self.pae!r}: expected exactly one")
        if self.efficiency is not None:
            object.__setattr__(self, "efficiency", _efficiency("PulsedAmplifier.efficiency",
                                                               self.efficiency))
        else:
            object.__setattr__(self, "pae", _efficiency("PulsedAmplifier.pae", self.pae))
            if self.gain_db is None:
                raise WaveformError("PulsedAmplifier.gain_db = None: expected a gain in dB "
                                    "with pae (PAE needs the drive power)")
        if self.gain_db is not None:
            g = _gain(self.gain_db)
            if self.pae is not None and g <= 1.0:
                raise WaveformError(f"PulsedAmplifier.gain_db = {self.gain_db!r}: expected a "
                                    "gain > 0 dB with pae")
            object.__setattr__(self, "gain_db", float(self.gain_db))
        if self.keying not in _KEYING:
            raise WaveformError(f"PulsedAmplifier.keying = {self.keying!r}: expected one of "
                                f"{_KEYING}")
        q = quiescent(self.drain_voltage, self.idle_current)  # validates V and I
        if self.keying == "drain" and q.p_diss > 0:
            raise WaveformError(
                f"PulsedAmplifier.idle_current = {self.idle_current!r} A with keying='drain': "
                "expected 0 (a drain-pulsed amplifier has no supply between pulses); use "
                "keying='gate' for heat between pulses")
        object.__setattr__(self, "drain_voltage", float(self.drain_voltage))
        object.__setattr__(self, "idle_current", float(self.idle_current))

    @property
    def heat_per_output_watt(self) -> float:
        """k: heat per W of RF output during the pulse, W/W."""
        if self.pae is not None:
            return (1.0 - 1.0 / _gain(self.gain_db)) * (1.0 / self.pae - 1.0)
        k = 1.0 / self.efficiency - 1.0
        return k + (1.0 / _gain(self.gain_db) if self.gain_db is not None else 0.0)

    @property
    def idle_heat(self) -> float:
        """Heat between pulses, W: V I for gate keying, 0 for drain keying."""
        return self.drain_voltage * self.idle_current if self.keying == "gate" else 0.0

    def balance(self, p_out, unit: str = "W") -> PowerBalance:
        """The balance at RF output ``p_out`` (W or dBm)."""
        if self.pae is not None:
            return amplifier_from_pae(p_out, self.pae, gain_db=self.gain_db, unit=unit)
        po = _power("p_out", p_out, unit)
        pi = po / _gain(self.gain_db) if self.gain_db is not None else None
        return amplifier_from_efficiency(po, self.efficiency, pi)

    def idle_balance(self) -> PowerBalance:
        """The balance between pulses (no RF)."""
        return quiescent(self.drain_voltage, self.idle_current) if self.keying == "gate" \
            else PowerBalance(0.0, 0.0, 0.0, 0.0)

    def heat(self, envelope) -> "RFHeat":
        """Heat waveform for an RF output-power envelope (W), e.g. a PulseTrain of P_out."""
        return RFHeat(envelope, self)


@dataclass(frozen=True)
class PassiveLoss:
    """A line or passive part with insertion loss ``loss_db`` (dB >= 0).

    ``heat(envelope)`` gives the dissipation for an input-power envelope:
    P_diss(t) = P_in(t)(1 - 10^(-IL/10)).
    """

    loss_db: float

    def __post_init__(self) -> None:
        _loss_fraction(self.loss_db)
        object.__setattr__(self, "loss_db", float(self.loss_db))

    @classmethod
    def from_attenuation(cls, db_per_m: float, length_m: float) -> "PassiveLoss":
        """IL = alpha (dB/m) * length (m)."""
        for name, v in (("db_per_m", db_per_m), ("length_m", length_m)):
            if not (isinstance(v, (Real, np.floating, np.integer)) and math.isfinite(float(v))
                    and float(v) >= 0) or isinstance(v, bool):
                raise WaveformError(f"{name} = {v!r}: expected a finite number >= 0")
        return cls(float(db_per_m) * float(length_m))

    @property
    def fraction(self) -> float:
        """Fraction of the input power dissipated."""
        return _loss_fraction(self.loss_db)

    def balance(self, p_in, unit: str = "W") -> PowerBalance:
        return passive_loss(p_in, self.loss_db, unit)

    def heat(self, envelope):
        """Heat waveform for an input-power envelope (a Scaled waveform)."""
        from .algebra import Scaled
        return Scaled(envelope, self.fraction)


@dataclass(frozen=True)
class RFHeat(WaveformBase):
    """Heat dissipated by a :class:`PulsedAmplifier` driven to an RF output envelope.

    Exact on the envelope's canonical form: level and slope scale by k during RF; segments
    where the envelope is exactly zero carry the idle heat instead.
    """

    envelope: object
    amplifier: PulsedAmplifier

    def __post_init__(self) -> None:
        if not isinstance(self.amplifier, PulsedAmplifier):
            raise WaveformError(f"RFHeat.amplifier = {self.amplifier!r}: expected a "
                                "PulsedAmplifier")
        if not (isinstance(self.envelope, (Piecewise, Real))
                or callable(getattr(self.envelope, "compile", None))):
            raise WaveformError(f"RFHeat.envelope = {self.envelope!r}: expected a waveform of "
                                "RF output power in W")

    def _build(self) -> Piecewise:
        env = as_piecewise(self.envelope, "RFHeat.envelope")
        if env.minimum < 0:
            raise WaveformError(f"RFHeat.envelope: minimum {env.minimum!r} W; expected RF "
                                "powers >= 0 W")
        k = self.amplifier.heat_per_output_watt
        idle = self.amplifier.idle_heat
        off = (env.level == 0.0) & (env.slope == 0.0)
        level = k * env.level + np.where(off, idle, 0.0)
        if env.periodic:
            after = 0.0
        else:
            after = k * env.after if env.after > 0 else idle
        return Piecewise(env.edges, level, k * env.slope, env.periodic, after)

    @property
    def rf_mean(self) -> float:
        """Average RF output power, W."""
        return as_piecewise(self.envelope).mean
