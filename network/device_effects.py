"""A scenario's signal and cycling figures per device: the ``[devices.rf]`` and
``[devices.cycling]`` tables turned into :class:`~pulsetherm.network.pulse_effects.RFEffects`
and :class:`~pulsetherm.network.cycling.CyclingFigures` from the exact periodic response,
and the check rows of their limits (droop, stability, pulse-to-pulse phase).

The maths lives in :mod:`pulsetherm.network.pulse_effects` and
:mod:`pulsetherm.network.cycling`; this module only finds the nodes (the junction probe;
the attach: the top face of the stack layer named by ``attach``, by default the layer
under the die or the data-sheet device) and the inputs, and maps errors to scenario keys.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from .scenario import ScenarioError

__all__ = ["DeviceEffects", "device_effects", "RF_CAUTION", "CYCLING_CAUTION", "check_rows"]

#: Caution shown with any signal figure or limit.
RF_CAUTION = ("signal figures (droop, pulse-to-pulse gain and phase) are first-order "
              "estimates from the given temperature coefficients at the junction; the true "
              "channel runs hotter than any average junction figure; verify by measurement")
#: Caution shown with any cycling figure.
CYCLING_CAUTION = ("cycling figures are relative (Coffin-Manson against a reference cycle, "
                   "Arrhenius against a reference temperature) and promise no lifetime; "
                   "follow the device maker's reliability data")


@dataclass(eq=False)
class DeviceEffects:
    """Per device: RF figures (device -> RFEffects) and cycling figures (device -> list of
    CyclingFigures, junction first, then the attach), with the limits of ``[devices.rf]``."""

    rf: dict[str, Any] = field(default_factory=dict)
    cycling: dict[str, list] = field(default_factory=dict)
    limits: dict[str, dict[str, float]] = field(default_factory=dict)

    @property
    def cautions(self) -> list[str]:
        out = []
        if self.rf:
            out.append(RF_CAUTION)
        if self.cycling:
            out.append(CYCLING_CAUTION)
        return out

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        if self.rf:
            out["rf"] = {n: {**e.to_dict(), "limits": dict(self.limits.get(n, {}))}
                         for n, e in self.rf.items()}
        if self.cycling:
            out["cycling"] = {n: [c.to_dict() for c in figs]
                              for n, figs in self.cycling.items()}
        return out

    def limit_rows(self) -> list[tuple[str, float | None, float, str]]:
        """(name, value, limit, unit) of every RF limit: ``<device>.droop`` (|worst droop|,
        dB), ``<device>.stability`` (dB; None: no pulse-to-pulse variation, holds),
        ``<device>.phase_pp`` (deg).  A value at or under its limit holds."""
        rows = []
        for name, e in self.rf.items():
            lim = self.limits.get(name, {})
            if "droop_dB" in lim:
                rows.append((f"{name}.droop", abs(e.worst_droop_dB), lim["droop_dB"], "dB"))
            if "stability_dB" in lim:
                rows.append((f"{name}.stability", e.stability_dB, lim["stability_dB"], "dB"))
            if "phase_pp_deg" in lim:
                rows.append((f"{name}.phase_pp", e.phase_pp_deg, lim["phase_pp_deg"], "deg"))
        return rows

    def slack(self) -> list[tuple[float, str, float | None, float, str]]:
        """(limit − value, name, value, limit, unit) per RF limit (a stability of None,
        no variation, has infinite slack)."""
        out = []
        for name, v, lim, unit in self.limit_rows():
            out.append((float("inf") if v is None else lim - v, name, v, lim, unit))
        return out


def check_rows(effects: DeviceEffects | None) -> list:
    """:class:`~pulsetherm.network.checks.CheckRow` objects of the RF limits (units dB or
    deg; the required temperature margin does not apply to them)."""
    if effects is None:
        return []
    from .checks import BROKEN, OK, CheckRow

    rows = []
    for slack, name, v, lim, unit in effects.slack():
        rows.append(CheckRow(name, v, lim, None if v is None else slack,
                             OK if slack >= 0 else BROKEN, unit))
    return rows


def _attach_node(model, i: int, dev, col) -> str | None:
    want = dev.cycling.attach if dev.cycling is not None else None
    layers = list(col.layers)
    if want is not None:
        for lay in layers:
            if lay.name == want and lay.nodes:
                return lay.nodes[0]
        names = [lay.name for lay in layers if lay.group in ("part", "device")]
        raise ScenarioError(f"devices[{i}].cycling.attach", want,
                            f"a layer of the device's stack ({', '.join(names) or 'none'})")
    if len(layers) > 1 and layers[1].group == "part" and layers[1].nodes:
        return layers[1].nodes[0]
    return None


def device_effects(model) -> DeviceEffects | None:
    """The RF and cycling figures of every device with ``rf`` or ``cycling`` (None when no
    device has either)."""
    scn = model.scenario
    devs = [(i, d) for i, d in enumerate(scn.devices or ()) if d.rf or d.cycling]
    if not devs:
        return None
    from .cycling import CyclingError, CyclingSettings, cycling_figures
    from .pulse_effects import PulseEffectsError, pulse_set, rf_effects, trace_node

    net = model.network
    sys_ = net.system()
    out = DeviceEffects()
    for i, d in devs:
        path = f"devices[{i}]"
        node = model.probes.get(f"{d.name}.junction")
        if node is None:
            continue
        inp = model.built.inputs.get(d.name, d.name) if model.built is not None else d.name
        key = "rf" if d.rf is not None else "cycling"
        try:
            trace = trace_node(net, model.waveforms, node)
            if d.rf is not None:
                rf = d.rf
                ps = pulse_set(trace, sys_.input_index(inp))
                if ps.count == 0:
                    raise ScenarioError(f"{path}.power", None, "a pulsed waveform for "
                                        "[devices.rf] (droop and pulse-to-pulse figures need "
                                        "pulses; this power is constant)")
                out.rf[d.name] = rf_effects(
                    ps, 0.0 if rf.gain_tc is None else rf.gain_tc.value,
                    0.0 if rf.phase_tc is None else rf.phase_tc.value, d.name)
                lim = {}
                if rf.droop_limit is not None:
                    lim["droop_dB"] = rf.droop_limit.value
                if rf.stability_limit is not None:
                    lim["stability_dB"] = rf.stability_limit.value
                if rf.phase_limit is not None:
                    lim["phase_pp_deg"] = rf.phase_limit.value
                out.limits[d.name] = lim
            if d.cycling is not None:
                key = "cycling"
                c = d.cycling
                kw = {}
                if c.reference_range is not None:
                    kw["reference_range_K"] = c.reference_range.value
                if c.exponent is not None:
                    kw["exponent"] = float(c.exponent)
                if c.activation_energy is not None:
                    kw["activation_energy_J"] = c.activation_energy.value
                if c.reference_temperature is not None:
                    kw["reference_temperature_K"] = c.reference_temperature.value
                settings = CyclingSettings(**kw)
                figs = [cycling_figures(trace, settings, "junction")]
                col = model.built.columns.get(d.name) if model.built is not None else None
                attach = _attach_node(model, i, d, col) if col is not None else None
                if attach is not None and attach in sys_.node_names:
                    figs.append(cycling_figures(trace_node(net, model.waveforms, attach),
                                                settings, "attach"))
                out.cycling[d.name] = figs
        except (PulseEffectsError, CyclingError) as exc:
            raise ScenarioError(f"{path}.{key}", None, " ".join(str(exc).split())) from None
    return out if (out.rf or out.cycling) else None
