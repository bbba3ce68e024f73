"""pulsetherm.waveforms: heat waveforms (pulse trains, bursts, stagger, profiles, tables) and
RF-to-heat conversions.  Depends on numpy only.

Every waveform compiles exactly (no sampling) to :class:`Piecewise`, the canonical
piecewise-linear form the thermal solvers consume.
"""
# Names are imported on first use (PEP 562 module __getattr__), so importing one module
# (``pulsetherm.waveforms.canonical``) does not load the others.
import importlib as _importlib

#: exported name -> module
_EXPORTS = {
    "Delayed": "algebra", "Scaled": "algebra", "Sum": "algebra", "Piecewise": "canonical",
    "Waveform": "canonical", "WaveformError": "canonical", "align": "canonical",
    "as_piecewise": "canonical", "common_period": "canonical", "Profile": "profile",
    "Stretch": "profile", "Burst": "pulses", "Constant": "pulses", "PulseTrain": "pulses",
    "Stagger": "pulses", "PassiveLoss": "rf", "PowerBalance": "rf", "PulsedAmplifier": "rf",
    "RFHeat": "rf", "amplifier_from_efficiency": "rf", "amplifier_from_pae": "rf",
    "dbm_to_w": "rf", "passive_loss": "rf", "quiescent": "rf", "w_to_dbm": "rf", "Table": "table",
}


def __getattr__(name: str):
    if name in _EXPORTS:
        value = getattr(_importlib.import_module(f"{__name__}.{_EXPORTS[name]}"), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(_EXPORTS))


__all__ = [
    "Burst", "Constant", "Delayed", "PassiveLoss", "Piecewise", "PowerBalance", "Profile",
    "PulseTrain", "PulsedAmplifier", "RFHeat", "Scaled", "Stagger", "Stretch", "Sum", "Table",
    "Waveform", "WaveformError", "align", "amplifier_from_efficiency", "amplifier_from_pae",
    "as_piecewise", "common_period", "dbm_to_w", "passive_loss", "quiescent", "w_to_dbm",
]
