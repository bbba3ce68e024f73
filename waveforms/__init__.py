"""pulsetherm.waveforms: heat waveforms (pulse trains, bursts, profiles, tables) and RF-to-heat
conversions.  Depends on numpy only."""
from .canonical import Piecewise, Waveform, WaveformError, align, as_piecewise, common_period

__all__ = ["Piecewise", "Waveform", "WaveformError", "align", "as_piecewise", "common_period"]
