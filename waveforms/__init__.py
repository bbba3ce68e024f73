"""pulsetherm.waveforms: heat waveforms (pulse trains, bursts, stagger, profiles, tables) and
RF-to-heat conversions.  Depends on numpy only.

Every waveform compiles exactly (no sampling) to :class:`Piecewise`, the canonical
piecewise-linear form the thermal solvers consume.
"""
from .algebra import Delayed, Scaled, Sum
from .canonical import Piecewise, Waveform, WaveformError, align, as_piecewise, common_period
from .profile import Profile, Stretch
from .pulses import Burst, Constant, PulseTrain, Stagger
from .rf import (PassiveLoss, PowerBalance, PulsedAmplifier, RFHeat, amplifier_from_efficiency,
                 amplifier_from_pae, dbm_to_w, passive_loss, quiescent, w_to_dbm)
from .table import Table

__all__ = [
    "Burst", "Constant", "Delayed", "PassiveLoss", "Piecewise", "PowerBalance", "Profile",
    "PulseTrain", "PulsedAmplifier", "RFHeat", "Scaled", "Stagger", "Stretch", "Sum", "Table",
    "Waveform", "WaveformError", "align", "amplifier_from_efficiency", "amplifier_from_pae",
    "as_piecewise", "common_period", "dbm_to_w", "passive_loss", "quiescent", "w_to_dbm",
]
