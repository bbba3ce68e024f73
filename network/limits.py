"""Limits on what a scenario may ask for: sizes that are refused before anything is
allocated, and plausibility ranges of physical inputs.

Standard library only.  Every limit is stated in the message that refuses it, so a user
with a real need sees which number to change.  The ranges are wide engineering bounds
(common practice, no source): they exist to stop hostile or mistyped input (``1e300 W``,
a denormal thickness, a die a nanometre wide) from reaching the solvers, not to judge a
design.

Counts
    ``MAX_TABLE_ARRAY`` elements in one array of tables (layers, devices, probes ...),
    ``MAX_LIST`` items in a list of quantities (Foster terms, stagger intervals),
    ``MAX_NAMED`` named tables (waveforms), ``MAX_INT`` for whole numbers (burst pulses,
    line segments, warm-up periods: see ``INT_LIMITS``), ``MAX_STRING`` characters in a
    string, profile nesting ``MAX_PROFILE_DEPTH`` and expansion ``MAX_PROFILE_STRETCHES``.
"""
from __future__ import annotations

import math
import re

__all__ = ["MAX_TABLE_ARRAY", "MAX_LIST", "MAX_NAMED", "MAX_STRING", "INT_LIMITS",
           "MAX_PROFILE_DEPTH", "MAX_PROFILE_STRETCHES", "PLAUSIBLE", "plausible_range",
           "check_text", "MAX_FOSTER_TERMS", "MAX_LAYERS", "MAX_PERIODIC_WORK",
           "PERIODIC_WORK_CUTS"]

MAX_TABLE_ARRAY = 256
MAX_LAYERS = 64
MAX_FOSTER_TERMS = 64
MAX_LIST = 10_000
MAX_NAMED = 256
MAX_STRING = 1_000
MAX_PROFILE_DEPTH = 8
MAX_PROFILE_STRETCHES = 10_000
#: Largest work of one periodic solve, (probe nodes) x (nodes with heat capacity) x
#: (segments of the common period + ``PERIODIC_WORK_CUTS``): the exact extremes are
#: searched per probe node over every mode, in the period's segments and in about a
#: hundred graded cuts around each probe's best sample.  Measured on the termination
#: example, CPU time on one core (common practice, no source), 0.14-1.2 us per unit:
#: 28 x 110 x 2100 = 6.5e6 took 1.3 s, 101 x 402 x 300 = 1.2e7 14.7 s, 51 x 202 x 2100 =
#: 2.2e7 7.3 s, 301 x 1202 x 102 = 3.7e7 5.2 s, 601 x 2402 x 102 = 1.5e8 27 s, 28 x 110 x
#: 20100 = 6.2e7 45 s, 101 x 402 x 2100 = 8.5e7 134 s.  Above it a scenario is refused
#: before the solve (the message names the factors).
MAX_PERIODIC_WORK = 20_000_000
PERIODIC_WORK_CUTS = 100

#: Largest whole number per key (default ``INT_LIMITS[None]``).
INT_LIMITS: dict[str | None, int] = {
    "pulses": 100_000,        # pulses in one burst (the waveform benchmark compiles 10^5)
    "segments": 2_000,        # segments of one line
    "periods": 1_000,         # warm-up periods shown
    None: 1_000_000,
}

#: Plausible magnitude of each scenario quantity kind, SI: (smallest non-zero, largest).
#: Zero is left to each key's own check (``> 0`` or ``>= 0``).
PLAUSIBLE: dict[str, tuple[float, float, str, str]] = {
    # kind: (lo, hi, lo shown, hi shown)
    "length": (1e-7, 100.0, "0.1 um", "100 m"),
    "thickness": (1e-9, 1.0, "1 nm", "1 m"),
    "time": (1e-12, 1e9, "1 ps", "1e9 s"),
    "power": (1e-12, 1e8, "1 pW", "100 MW"),
    "temperature": (0.0, 5000.0, "0 K", "5000 K"),
    "difference": (1e-9, 5000.0, "1e-9 K", "5000 K"),
    "resistance": (1e-9, 1e9, "1e-9 K/W", "1e9 K/W"),
    "capacity": (1e-15, 1e9, "1e-15 J/K", "1e9 J/K"),
    "frequency": (1e-9, 1e13, "1e-9 Hz", "10 THz"),
    "impedance": (0.1, 1e4, "0.1 ohm", "10 kohm"),
    "h": (1e-6, 1e9, "1e-6 W/(m2 K)", "1e9 W/(m2 K)"),
    "area": (1e-18, 1e4, "1e-18 m2", "1e4 m2"),
    "area_resistance": (1e-15, 1.0, "1e-15 K m2/W", "1 K m2/W"),
    "angle": (1e-9, 90.0, "1e-9 deg", "90 deg"),
    "gain_tc": (1e-9, 1.0, "1e-9 dB/K", "1 dB/K"),
    "phase_tc": (1e-9, 10.0, "1e-9 deg/K", "10 deg/K"),
    "decibel": (1e-9, 100.0, "1e-9 dB", "100 dB"),
    "energy": (1e-24, 1e9, "1e-24 J", "1e9 J"),
}
#: Any other kind (added later): at least no overflow on the way to the solvers.
GENERIC_RANGE = (0.0, 1e15, "0", "1e15 (SI)")

#: Plausible plain numbers by key: (lo, hi) inclusive.
NUMBER_RANGES: dict[str, tuple[float, float]] = {
    "permittivity": (1.0, 1000.0),
    "loss_tangent": (0.0, 1.0),
}


def plausible_range(kind: str, value: float) -> str | None:
    """None when ``value`` (SI) is plausible for ``kind``; else the reason, with the range."""
    if value == 0.0:
        return None
    lo, hi, lo_s, hi_s = PLAUSIBLE.get(kind, GENERIC_RANGE)
    mag = abs(value)
    if not math.isfinite(mag) or mag > hi or (lo > 0 and mag < lo):
        return f"outside the plausible range {lo_s} .. {hi_s}"
    return None


#: Most parts of one dotted key (``a.b.c = 1`` has 3): the standard TOML reader takes time
#: quadratic in the parts (40,000 parts: 46 s), so longer keys are refused before it runs.
MAX_KEY_PARTS = 64
_KEY_PREFIX = r"[\w\-. \t\"'\[]*"     # compiled on first use (re's cache): rarely needed


def check_text(text: str, source: str | None) -> None:
    """Refuse, before the TOML reader sees it, scenario text longer than the file cap (text
    given directly, not read from a file) or a dotted key of more than ``MAX_KEY_PARTS``
    parts.  Linear in the text."""
    from .safe_io import MAX_SCENARIO_BYTES

    problem, line = None, None
    if len(text) > MAX_SCENARIO_BYTES:
        problem = (f"{len(text)} characters of scenario text; expected at most "
                   f"{MAX_SCENARIO_BYTES}")
    elif text.count(".") > MAX_KEY_PARTS:
        for no, raw in enumerate(text.splitlines(), start=1):
            if raw.count(".") > MAX_KEY_PARTS:
                head = re.match(_KEY_PREFIX, raw.lstrip())
                if head and head.group().count(".") > MAX_KEY_PARTS:
                    problem, line = (f"a dotted key of more than {MAX_KEY_PARTS} parts; "
                                     "expected a short key path"), no
                    break
    if problem:
        from .scenario import ScenarioError

        raise ScenarioError("", None, problem, line, source)
