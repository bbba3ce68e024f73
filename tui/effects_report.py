"""Text tables of the signal (``[devices.rf]``) and cycling (``[devices.cycling]``) figures
of a run, from its ``--json`` form (:meth:`RunResult.to_dict` keys ``rf`` and ``cycling``).
Only the standard library is imported."""
from __future__ import annotations

from typing import Any

__all__ = ["effects_lines"]


def _db(v: Any) -> str:
    return "none (pulses alike)" if v is None else f"{v:.2f} dB"


def effects_lines(d: dict[str, Any]) -> list[str]:
    """Lines for the ``rf`` and ``cycling`` parts of a run's dict (empty when neither)."""
    from .report import table

    out: list[str] = []
    rf = d.get("rf") or {}
    if rf:
        out += ["", "signal from the junction temperature (gain and phase coefficients "
                "given; per pulse in the period):"]
        rows = []
        for name, e in rf.items():
            lim = e.get("limits", {})
            rows.append([name, e["pulses"], e["droop_dB"], e["phase_drift_deg"],
                         e["gain_pp_dB"], e["phase_pp_deg"], e["phase_rms_deg"],
                         _db(e["stability_dB"]),
                         ", ".join(f"{k} {v:g}" for k, v in lim.items()) or "-"])
        out.append(table(["device", "pulses", "droop dB", "drift deg", "gain p-p dB",
                          "phase p-p deg", "phase rms deg", "stability", "limits"], rows,
                         align="lrrrrrrrl"))
    cyc = d.get("cycling") or {}
    if cyc:
        out += ["", "thermal cycling (rainflow, ASTM E1049-85; relative figures):"]
        rows = []
        for name, figs in cyc.items():
            for c in figs:
                rows.append([f"{name} {c['role']}", c["node"], c["cycles_per_hour"],
                             c["largest_range_K"], c["damage_ref_cycles_per_hour"],
                             c["arrhenius_af_mean"], c["arrhenius_af_peak"]])
        out.append(table(["where", "node", "cycles/h", "largest K", "ref cycles/h",
                          "AF mean", "AF peak"], rows, align="llrrrrr"))
        s = next(iter(cyc.values()))[0]
        out.append(f"(reference cycle {s['reference_range_K']:g} K, Coffin-Manson exponent "
                   f"{s['exponent']:g}; Arrhenius {s['activation_energy_eV']:g} eV against "
                   f"{s['reference_temperature_C']:g} degC)")
    return out
