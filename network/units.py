"""Quantities with units at the input edge: text such as ``"0.508 mm"`` to SI floats.

A small parser of our own over one closed table of units.  Every unit has a factor to SI
and a dimension over (m, kg, s, K, rad, Np); the caller names the *kind* of quantity it
expects and anything of another dimension is refused with a message that names the field,
the text and an example of what is expected.

Unit expressions
----------------
* products with ``·``, ``*``, ``.``, ``-`` or a space; quotients with ``/`` — everything after a
  ``/`` is in the denominator (``W/m·K`` = ``W/(m·K)``, ``J/kg/K`` = ``J/(kg·K)``);
  parentheses group;
* powers as ``^2``, ``^-1``, ``²``, ``³`` or a digit right after the symbol (``m2``, ``cm3``);
* ``µ``/``μ``/``u`` for micro; ``°C``/``degC``/``℃`` for degrees Celsius; ``°``/``deg``
  for angle degrees;
* an unknown run of letters that is exactly two known symbols reads as their product, so
  the trade's ``W/mK`` and ``W/m2K`` are W/(m·K) and W/(m²·K) (there is no millikelvin).

Special units
-------------
* ``degC`` alone is an absolute temperature (kind ``temperature``, +273.15 K); inside a
  compound (``°C/W``, ``W/(m·°C)``) it is a kelvin-sized step.  A bare ``degC`` is refused
  for a temperature *difference*: differences are written in K.
* ``dBm`` and ``dBW`` are powers (``46 dBm`` = 39.8 W).
* ``oz`` is copper weight, 35 µm per ounce (per square foot), common practice; only the
  kind ``copper_thickness`` accepts it.
* ``dB`` and ``Np``: kind ``decibel`` returns dB; attenuation ``dB/m`` returns Np/m
  (1 Np = 8.686 dB).
* ``%`` = 0.01 and ``ppm`` = 1e-6 for dimensionless kinds.

A plain number (a Python number, or text with no unit) is read in ``default_unit`` — by
default the SI unit of the kind, except absolute temperatures, where a bare number is
refused unless ``default_unit`` is given (25 could be degC or K).

Sweeps (:func:`parse_range`)
----------------------------
* ``"1 mm..3 mm:5"`` or ``"1..3 mm:5"``: 5 values evenly spaced, ends included;
  ``"1 kHz..1 MHz:4 log"``: geometric spacing;
* ``"1..3 mm step 0.5 mm"``: from the start in steps, the end included when reached;
* ``"[1, 2, 3] mm"``: a list with one unit; ``"1 mm, 20 mil"`` or ``"[1 mm, 20 mil]"``:
  each value with its own unit (a value without unit takes the next unit written after
  it: ``"1, 2 mm"`` is 1 mm and 2 mm).
"""
from __future__ import annotations

import difflib
import math
import numbers
import re
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from pulsetherm.waveforms.fieldwise import FieldMethods

__all__ = ["UnitError", "parse_quantity", "parse_range", "format_quantity", "KINDS",
           "UNITS", "OZ_COPPER_M", "unit_factor"]

# Dimension exponents over the base (m, kg, s, K, rad, Np).
_Dim = tuple[int, int, int, int, int, int]
_NONE: _Dim = (0, 0, 0, 0, 0, 0)
_M: _Dim = (1, 0, 0, 0, 0, 0)
_KG: _Dim = (0, 1, 0, 0, 0, 0)
_S: _Dim = (0, 0, 1, 0, 0, 0)
_K: _Dim = (0, 0, 0, 1, 0, 0)
_RAD: _Dim = (0, 0, 0, 0, 1, 0)
_NP: _Dim = (0, 0, 0, 0, 0, 1)


def _mul(*dims: _Dim, power: int = 1) -> _Dim:
    out = [0] * 6
    for d in dims:
        for i, e in enumerate(d):
            out[i] += e
    return tuple(e * power for e in out)  # type: ignore[return-value]


def _inv(d: _Dim) -> _Dim:
    return tuple(-e for e in d)  # type: ignore[return-value]


_W = _mul(_KG, _M, _M, _inv(_S), _inv(_S), _inv(_S))      # kg·m²/s³
_J = _mul(_W, _S)

#: Copper foil thickness per ounce (per square foot), m: 35 µm, common practice.
OZ_COPPER_M = 35e-6
_NP_PER_DB = math.log(10.0) / 20.0      # 1 dB = 0.1151 Np (1 Np = 8.686 dB)

#: The closed unit table: symbol -> (factor to SI, dimension).
UNITS: dict[str, tuple[float, _Dim]] = {
    # length
    "m": (1.0, _M), "km": (1e3, _M), "cm": (1e-2, _M), "mm": (1e-3, _M),
    "um": (1e-6, _M), "nm": (1e-9, _M), "mil": (25.4e-6, _M), "thou": (25.4e-6, _M),
    "in": (25.4e-3, _M), "inch": (25.4e-3, _M), "ft": (0.3048, _M),
    "oz": (OZ_COPPER_M, _M),                       # copper weight: copper_thickness only
    # mass
    "kg": (1.0, _KG), "g": (1e-3, _KG), "mg": (1e-6, _KG),
    # time
    "s": (1.0, _S), "ms": (1e-3, _S), "us": (1e-6, _S), "ns": (1e-9, _S),
    "ps": (1e-12, _S), "min": (60.0, _S), "h": (3600.0, _S),
    # frequency
    "Hz": (1.0, _inv(_S)), "kHz": (1e3, _inv(_S)), "MHz": (1e6, _inv(_S)),
    "GHz": (1e9, _inv(_S)), "THz": (1e12, _inv(_S)),
    # power and energy
    "W": (1.0, _W), "mW": (1e-3, _W), "uW": (1e-6, _W), "kW": (1e3, _W),
    "J": (1.0, _J), "mJ": (1e-3, _J), "uJ": (1e-6, _J), "kJ": (1e3, _J),
    "eV": (1.602176634e-19, _J),                   # electronvolt (exact, SI 2019)
    # temperature (kelvin-sized steps; degC alone is handled as absolute)
    "K": (1.0, _K), "degC": (1.0, _K),
    # angle
    "rad": (1.0, _RAD), "deg": (math.pi / 180.0, _RAD),
    # logarithmic ratios
    "Np": (1.0, _NP), "dB": (_NP_PER_DB, _NP),
    # dimensionless
    "%": (1e-2, _NONE), "ppm": (1e-6, _NONE),
}

# Spellings folded onto table symbols before lookup.
_SPELLINGS = {"µ": "u", "μ": "u", "℃": "degC", "°C": "degC", "°": "deg", "−": "-",
              "·": "*", "⋅": "*", "×": "*", "\u2009": " ", "\u202f": " ", "\xa0": " "}
_SUPERSCRIPTS = {"⁻": "-", "¹": "1", "²": "2", "³": "3", "⁴": "4"}


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class Kind(FieldMethods):
    """A kind of quantity: its dimension, the SI unit returned, an example for messages
    and the units used for display (largest first)."""

    dim: _Dim
    si: str
    example: str
    display: tuple[str, ...]
    out_factor: float = 1.0      # value returned = SI value / out_factor


#: Every kind ``parse_quantity`` understands.
KINDS: dict[str, Kind] = {
    "length": Kind(_M, "m", "a length such as '0.5 mm' or '20 mil'", ("m", "mm", "um", "nm")),
    "copper_thickness": Kind(_M, "m", "a copper thickness such as '35 um' or '1 oz'",
                             ("mm", "um")),
    "area": Kind(_mul(_M, _M), "m²", "an area such as '4 mm²' or '1 cm2'",
                 ("m^2", "cm^2", "mm^2", "um^2")),
    "time": Kind(_S, "s", "a time such as '100 us' or '1.5 ms'",
                 ("s", "ms", "us", "ns", "ps")),
    "frequency": Kind(_inv(_S), "Hz", "a frequency such as '2.5 GHz' or '1 kHz'",
                      ("GHz", "MHz", "kHz", "Hz")),
    "power": Kind(_W, "W", "a power such as '42 W' or '46 dBm'", ("kW", "W", "mW", "uW")),
    "energy": Kind(_J, "J", "an energy such as '2 mJ'", ("kJ", "J", "mJ", "uJ")),
    "temperature": Kind(_K, "K", "an absolute temperature such as '45 degC' or '318 K'",
                        ("degC",)),
    "temperature_difference": Kind(_K, "K", "a temperature difference in K such as '10 K'",
                                   ("K",)),
    "thermal_resistance": Kind(_mul(_K, _inv(_W)), "K/W",
                               "a thermal resistance such as '0.35 K/W'", ("K/W",)),
    "conductance": Kind(_mul(_W, _inv(_K)), "W/K", "a thermal conductance such as '2 W/K'",
                        ("W/K",)),
    "conductivity": Kind(_mul(_W, _inv(_M), _inv(_K)), "W/(m·K)",
                         "a conductivity such as '390 W/(m·K)' or '0.3 W/mK'",
                         ("W/(m*K)",)),
    "film_coefficient": Kind(_mul(_W, _inv(_M), _inv(_M), _inv(_K)), "W/(m²·K)",
                             "a film coefficient such as '1e4 W/(m²·K)' or '25 W/m2K'",
                             ("W/(m^2*K)",)),
    "area_resistance": Kind(_mul(_K, _M, _M, _inv(_W)), "K·m²/W",
                            "an area-specific resistance such as '10 K·mm²/W'",
                            ("K*mm^2/W",)),
    "capacity": Kind(_mul(_J, _inv(_K)), "J/K", "a heat capacity such as '0.02 J/K'",
                     ("J/K", "mJ/K")),
    "specific_heat": Kind(_mul(_J, _inv(_KG), _inv(_K)), "J/(kg·K)",
                          "a specific heat such as '385 J/(kg·K)'", ("J/(kg*K)",)),
    "density": Kind(_mul(_KG, _inv(_M), _inv(_M), _inv(_M)), "kg/m³",
                    "a density such as '8933 kg/m3' or '8.9 g/cm3'", ("kg/m^3",)),
    "heat_flux": Kind(_mul(_W, _inv(_M), _inv(_M)), "W/m²", "a heat flux such as '50 W/cm2'",
                      ("W/m^2", "W/cm^2", "W/mm^2")),
    "angle": Kind(_RAD, "rad", "an angle such as '45 deg' or '0.785 rad'", ("deg",)),
    "decibel": Kind(_NP, "dB", "a level in dB such as '3 dB'", ("dB",),
                    out_factor=_NP_PER_DB),
    "gain_tempco": Kind(_mul(_NP, _inv(_K)), "dB/K",
                        "a gain temperature coefficient such as '-0.015 dB/K'", ("dB/K",),
                        out_factor=_NP_PER_DB),
    "phase_tempco": Kind(_mul(_RAD, _inv(_K)), "deg/K",
                         "a phase temperature coefficient such as '0.1 deg/K'", ("deg/K",),
                         out_factor=math.pi / 180.0),
    "attenuation": Kind(_mul(_NP, _inv(_M)), "Np/m",
                        "an attenuation such as '0.5 dB/m' or '0.02 dB/mm'",
                        ("dB/m",)),
    "dimensionless": Kind(_NONE, "", "a plain number such as '0.5' or '50 %'", ("",)),
}
_KIND_ALIASES = {"ratio": "dimensionless", "percent": "dimensionless",
                 "thickness": "length", "duration": "time"}


class UnitError(ValueError):
    """Text that is not a quantity of the expected kind; the message names the field, the
    text and what is expected."""


# -- unit expression parser ---------------------------------------------------------------
_NUMBER = re.compile(r"""\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)
                         (?:\s*/\s*(\d+)(?![\w.]))?""", re.VERBOSE)
_SYMBOL = re.compile(r"[A-Za-z%]+")
_POWER = re.compile(r"\^?(-?\d+)")


def _normalise(text: str) -> str:
    for old, new in _SPELLINGS.items():
        text = text.replace(old, new)
    # superscript powers become ^n ('m⁻¹' -> 'm^-1')
    out: list[str] = []
    in_power = False
    for ch in text:
        if ch in _SUPERSCRIPTS:
            if not in_power:
                out.append("^")
            out.append(_SUPERSCRIPTS[ch])
            in_power = True
        else:
            out.append(ch)
            in_power = False
    return "".join(out).strip()


#: Word-like symbols whose plural ('mils', 'inches') is a slip, not a product of units.
_NO_PLURAL = frozenset({"mil", "thou", "inch", "min", "deg", "rad", "oz", "ft"})

#: Usual words and symbols that are not unit symbols here -> the symbols meant (a 'C' is a
#: temperature in degC or, in a compound such as 'C/W', a kelvin-sized difference).
_SLIPS = {"c": ["degC", "K"], "celsius": ["degC"], "kelvin": ["K"], "ounce": ["oz"],
          "ounces": ["oz"], "watt": ["W"], "watts": ["W"], "micron": ["um"],
          "microns": ["um"], "sec": ["s"], "secs": ["s"]}

#: Longest quantity text read (characters), and the largest power of a unit symbol: the
#: parser is linear, and these bounds keep hostile text (a 2000-digit number, ``kW^200``)
#: from costing time or overflowing.
MAX_TEXT = 200
MAX_POWER = 12


def _lookup(sym: str) -> list[tuple[float, _Dim, str]]:
    """Factors for a run of letters: one known symbol, or exactly two known symbols."""
    if sym in UNITS:
        f, d = UNITS[sym]
        return [(f, d, sym)]
    if sym.endswith("s") and sym[:-1] in _NO_PLURAL:
        raise _Bad(f"unknown unit '{sym}'; did you mean '{sym[:-1]}'? (unit symbols take no "
                   "plural 's')")
    if sym.endswith("es") and sym[:-2] in _NO_PLURAL:
        raise _Bad(f"unknown unit '{sym}'; did you mean '{sym[:-2]}'? (unit symbols take no "
                   "plural)")
    splits = [(sym[:i], sym[i:]) for i in range(1, len(sym))
              if sym[:i] in UNITS and sym[i:] in UNITS]
    if len(splits) == 1:
        a, b = splits[0]
        return [(*UNITS[a], a), (*UNITS[b], b)]
    if len(splits) > 1:
        opts = " or ".join(f"{a}·{b}" for a, b in splits)
        raise _Bad(f"unit '{sym}' is ambiguous ({opts}); separate the symbols with '·'")
    # a slip of case ('w', 'uS': a microsiemens), a usual word, else the nearest spellings
    close = [u for u in UNITS if u.lower() == sym.lower()] or _SLIPS.get(sym.lower(), [])
    if not close:
        close = difflib.get_close_matches(sym, list(UNITS), n=2, cutoff=0.6)
    hint = f"; did you mean {' or '.join(repr(c) for c in close)}?" if close else ""
    raise _Bad(f"unknown unit '{sym}'{hint}")


class _Bad(Exception):
    """Internal: parse failure detail, turned into a UnitError with the field."""


class _UnitParser:
    def __init__(self, text: str) -> None:
        self.s = text
        self.i = 0
        self.used: list[str] = []

    def peek(self) -> str:
        while self.i < len(self.s) and self.s[self.i] == " ":
            self.i += 1
        return self.s[self.i] if self.i < len(self.s) else ""

    def parse(self) -> tuple[float, _Dim]:
        f, d = self.expr()
        if self.peek():
            raise _Bad(f"unexpected '{self.s[self.i:]}' in the unit")
        return f, d

    def expr(self) -> tuple[float, _Dim]:
        if self.peek() == "/":                 # '/s' = 1/s
            f, d = 1.0, _NONE
        else:
            f, d = self.term()
        while self.peek() == "/":
            self.i += 1
            g, e = self.term()
            f, d = f / g, _mul(d, _inv(e))
        return f, d

    def term(self) -> tuple[float, _Dim]:
        f, d = self.factor()
        while True:
            c = self.peek()
            if not c:
                return f, d
            if c in ("*", ".", "-"):
                self.i += 1
                nxt = self.peek()
                if not nxt or not (nxt.isalpha() or nxt in "(%"):
                    raise _Bad(f"expected a unit after '{c}'")
            elif not (c.isalpha() or c in "(%"):
                return f, d
            g, e = self.factor()
            f, d = f * g, _mul(d, e)

    def factor(self) -> tuple[float, _Dim]:
        c = self.peek()
        if c == "(":
            self.i += 1
            f, d = self.expr()
            if self.peek() != ")":
                raise _Bad("missing ')' in the unit")
            self.i += 1
            items = [(f, d, "")]
        else:
            m = _SYMBOL.match(self.s, self.i)
            if not m:
                raise _Bad("expected a unit symbol" + (f" at '{self.s[self.i:]}'"
                                                        if self.i < len(self.s) else ""))
            self.i = m.end()
            items = _lookup(m.group())
            self.used += [name for _, _, name in items]
        p = self.power()
        f, d = 1.0, _NONE
        # A power binds to the last symbol only ('Km2' = K·m²).
        for j, (g, e, _) in enumerate(items):
            q = p if j == len(items) - 1 else 1
            f, d = f * g ** q, _mul(d, _mul(e, power=q))
        return f, d

    def power(self) -> int:
        m = _POWER.match(self.s, self.i)
        if not m:
            return 1
        self.i = m.end()
        digits = m.group(1).lstrip("-")
        if len(digits) > 2 or int(digits) > MAX_POWER:
            raise _Bad(f"exponent '{m.group(1)[:12]}' out of range; expected an exponent of "
                       f"at most {MAX_POWER}")
        return int(m.group(1))


def unit_factor(unit: str) -> tuple[float, _Dim]:
    """Factor to SI and dimension of a unit expression (no absolute-temperature offset)."""
    try:
        return _UnitParser(_normalise(unit)).parse()
    except _Bad as exc:
        raise UnitError(f"unit {unit!r}: {exc}") from None


# -- quantities ---------------------------------------------------------------------------
def _kind(kind: str) -> tuple[str, Kind]:
    name = _KIND_ALIASES.get(kind, kind)
    if name not in KINDS:
        raise UnitError(f"kind = {kind!r}: expected one of {', '.join(KINDS)}")
    return name, KINDS[name]


def _fail(field: str, text: object, spec: Kind, why: str = "") -> UnitError:
    lead = f"{field} = {text!r}: " if field else f"{text!r}: "
    return UnitError(f"{lead}{why + '; ' if why else ''}expected {spec.example}")


def _split_number(text: str) -> tuple[float, str] | None:
    m = _NUMBER.match(text)
    if not m:
        return None
    value = float(m.group(1))
    if m.group(2):
        if len(m.group(2)) > 15:
            return None
        den = int(m.group(2))
        if den == 0:
            return None
        value /= den
    return value, text[m.end():].strip()


def parse_quantity(text: str | float, kind: str = "dimensionless", field: str = "",
                   default_unit: str | None = None) -> float:
    """Read a quantity and return it in SI units as a float.

    Parameters
    ----------
    text
        ``"0.508 mm"``, ``"46 dBm"``, ``"45 °C"``, ``"390 W/mK"`` ...; or a number.
    kind
        What is expected: one of :data:`KINDS` (``"length"``, ``"time"``, ``"power"``,
        ``"temperature"`` (absolute, returned in K), ``"temperature_difference"`` (K only),
        ``"conductivity"``, ``"film_coefficient"``, ``"copper_thickness"`` ...).
    field
        Where the text came from (``"devices[0].stack[2].thickness"``), for messages.
    default_unit
        Unit of a plain number; default the SI unit of the kind (none for absolute
        temperatures: a bare number is then refused).

    Returns
    -------
    float
        The value in the SI unit of the kind (``KINDS[kind].si``).

    Raises
    ------
    UnitError
        Unknown unit, wrong dimension, non-finite value; the message names ``field``, the
        text and an example of what is expected.
    """
    name, spec = _kind(kind)
    if isinstance(text, bool):
        raise _fail(field, text, spec, "a true/false value is not a quantity")
    if isinstance(text, numbers.Real):
        value, unit = float(text), ""
    elif isinstance(text, str):
        if len(text) > MAX_TEXT:
            raise _fail(field, text[:40] + "...", spec,
                        f"{len(text)} characters; expected at most {MAX_TEXT}")
        norm = _normalise(text)
        split = _split_number(norm)
        if split is None:
            raise _fail(field, text, spec, "no number found")
        value, unit = split
    else:
        raise _fail(field, text, spec, f"got {type(text).__name__}")
    if not math.isfinite(value):
        raise _fail(field, text, spec, "not a finite number")
    if not unit:
        if default_unit is None:
            if name == "temperature":
                raise _fail(field, text, spec, "a plain number is ambiguous (degC or K?)")
            if isinstance(text, str) and name != "dimensionless":
                # '0.76' read as 0.76 m gave a board 0.76 m thick: text carries its unit
                raise _fail(field, text, spec, "a number without a unit")
            return value
        unit = _normalise(default_unit)
    return _convert(value, unit, name, spec, field, text)


def _convert(value: float, unit: str, name: str, spec: Kind, field: str,
             text: object) -> float:
    bare = unit.replace(" ", "")
    # Logarithmic powers and absolute Celsius are not plain factors.
    if bare in ("dBm", "dBW"):
        if name != "power":
            raise _fail(field, text, spec, f"'{bare}' is a power level")
        if value > 300.0:   # 10^30 W: beyond any plausible power, and 10**(v/10) overflows
            raise _fail(field, text, spec, f"{value:g} {bare} is out of range (at most 300)")
        return 10.0 ** (value / 10.0) * (1e-3 if bare == "dBm" else 1.0)
    if bare == "degC":
        if name == "temperature":
            return _absolute(value + 273.15, field, text, spec)
        if name == "temperature_difference":
            raise _fail(field, text, spec, "degC is for absolute temperatures; a difference "
                                           f"of {value:g} degC is {value:g} K, write it in K")
    if bare == "oz" and name != "copper_thickness":
        raise _fail(field, text, spec, "'oz' is a copper weight (35 um per oz), accepted "
                                       "only for copper thickness")
    try:
        parser = _UnitParser(unit)
        factor, dim = parser.parse()
    except _Bad as exc:
        raise _fail(field, text, spec, str(exc)) from None
    if "oz" in parser.used and bare != "oz":
        raise _fail(field, text, spec, "'oz' may only stand alone, as a copper weight")
    if dim != spec.dim:
        raise _fail(field, text, spec, f"'{unit}' is {_describe(dim)}")
    out = _scale(value, factor) / spec.out_factor
    if not math.isfinite(out):
        raise _fail(field, text, spec, "out of the range of a floating-point number")
    if name == "temperature":
        return _absolute(out, field, text, spec)
    return out


def _scale(value: float, factor: float) -> float:
    """value·factor, dividing by the integer 1/factor when there is one (so '100 us' gives
    exactly 1e-4, not 9.999999999999999e-05)."""
    if 0.0 < factor < 1.0:
        inv = 1.0 / factor
        r = round(inv)
        if abs(inv - r) <= 1e-9 * inv:
            return value / r
    return value * factor


def _number(x: float, digits: int) -> str:
    if x == 0 or 1e-3 <= abs(x) < 1e6:
        return np.format_float_positional(x, precision=digits, unique=False,
                                          fractional=False, trim="-")
    return f"{x:.{digits}g}"


def _absolute(kelvin: float, field: str, text: object, spec: Kind) -> float:
    if kelvin < 0:
        raise _fail(field, text, spec, "below absolute zero")
    return kelvin


def _describe(dim: _Dim) -> str:
    for kname, k in KINDS.items():
        if k.dim == dim:
            name = kname.replace("_", " ")
            return f"{'an' if name[0] in 'aeiou' else 'a'} {name} unit"
    names = ("m", "kg", "s", "K", "rad", "Np")
    parts = [f"{n}^{e}" if e != 1 else n for n, e in zip(names, dim) if e]
    return "of dimension " + ("·".join(parts) if parts else "1 (dimensionless)")


# -- display ------------------------------------------------------------------------------
_PRETTY = {"um": "µm", "uW": "µW", "uJ": "µJ", "us": "µs", "degC": "°C", "deg": "°",
           "^2": "²", "^3": "³", "*": "·"}


def _pretty(unit: str) -> str:
    for old, new in _PRETTY.items():
        unit = unit.replace(old, new)
    return unit


def format_quantity(value: float, kind: str, digits: int = 4, ascii: bool = False) -> str:
    """Text for an SI value of the given kind, in a readable unit.

    ``format_quantity(5.08e-4, "length")`` -> ``'508 µm'``; temperatures (K) show in °C.
    ``digits`` significant digits; ``ascii=True`` writes ``um``, ``degC``, ``^2``.
    """
    name, spec = _kind(kind)
    v = float(value)
    if not math.isfinite(v):
        return f"{v} {spec.si}".strip()
    if name == "temperature":
        unit, shown = "degC", v - 273.15
    elif name == "decibel":
        unit, shown = "dB", v
    elif name == "attenuation":
        unit, shown = "dB/m", v / _NP_PER_DB
    else:
        unit, shown = spec.display[-1], None
        for cand in spec.display:
            f = unit_factor(cand)[0] if cand else 1.0
            if v == 0 or abs(v) / f >= 1.0 - 1e-12:
                unit = cand
                break
        f = unit_factor(unit)[0] if unit else 1.0
        shown = _scale(v, 1.0 / f) if f > 1.0 else v / f
    number = _number(shown, digits)
    if not unit:
        return number
    return f"{number} {unit if ascii else _pretty(unit)}"


# -- sweeps -------------------------------------------------------------------------------
# parse_range only (sweeps): compiled on first use through re's cache, not at every import
_STEP = r"\s+step\s+"
_COUNT = r":\s*(\d+)\s*(log)?\s*$"


def _has_unit(text: str) -> bool:
    s = _split_number(_normalise(text))
    return s is not None and bool(s[1])


def _unit_of(text: str) -> str:
    s = _split_number(_normalise(text))
    return s[1] if s else ""


def parse_range(text: str | Sequence, kind: str = "dimensionless", field: str = "",
                default_unit: str | None = None) -> np.ndarray:
    """Values of a sweep, SI, shape (n,).

    Syntax (see the module notes): ``"a..b:n"`` (linear, ends included), ``"a..b:n log"``
    (geometric), ``"a..b step s"``, ``"[x, y, z] unit"``, ``"x unit, y unit"``; a value
    without unit takes the unit written after it (``"1..3 mm:5"``).  A Python sequence is
    parsed item by item.
    """
    name, spec = _kind(kind)

    def one(item, unit_hint: str | None, where: str) -> float:
        if isinstance(item, str) and not _has_unit(item) and unit_hint:
            return parse_quantity(f"{item.strip()} {unit_hint}", name, where)
        return parse_quantity(item, name, where, default_unit)

    if not isinstance(text, str):
        try:
            items = list(text)
        except TypeError:
            raise _fail(field, text, spec, "expected a sweep text or a list") from None
        if not items:
            raise _fail(field, text, spec, "empty sweep")
        return np.array([one(x, None, f"{field}[{i}]") for i, x in enumerate(items)])

    src = _normalise(text)
    if ".." in src:
        return _parse_span(src, text, name, spec, field, default_unit, one)
    # list forms
    unit = ""
    body = src
    if body.startswith("["):
        close = body.find("]")
        if close < 0:
            raise _fail(field, text, spec, "missing ']'")
        unit = body[close + 1:].strip()
        body = body[1:close]
    parts = [p.strip() for p in body.split(",")]
    if not parts or any(not p for p in parts):
        raise _fail(field, text, spec, "empty item in the list")
    values = []
    hint = unit or None
    # a value without unit takes the unit of the next value that has one (or the list's)
    for i in range(len(parts) - 1, -1, -1):
        if _has_unit(parts[i]):
            hint = _unit_of(parts[i])
        values.append(one(parts[i], hint, f"{field}[{i}]"))
    return np.array(values[::-1])


def _parse_span(src, text, name, spec, field, default_unit, one) -> np.ndarray:
    count = re.search(_COUNT, src, re.IGNORECASE)
    step_text = None
    if count:
        src_main = src[:count.start()]
    else:
        src_main = src
    pieces = re.split(_STEP, src_main, flags=re.IGNORECASE)
    if len(pieces) == 2:
        src_main, step_text = pieces
    elif len(pieces) > 2:
        raise _fail(field, text, spec, "more than one 'step'")
    if (count is None) == (step_text is None) or ":" in src_main:
        raise _fail(field, text, spec, "a range needs either ':n' (number of values) or "
                                       "'step s', for example '1..3 mm:5' or "
                                       "'1..3 mm step 0.5 mm'")
    ends = src_main.split("..")
    if len(ends) != 2 or not ends[0].strip() or not ends[1].strip():
        raise _fail(field, text, spec, "a range is 'start..stop'")
    lo_t, hi_t = ends[0].strip(), ends[1].strip()
    hint = _unit_of(hi_t) or _unit_of(lo_t) or None
    lo = one(lo_t, hint, f"{field}.start")
    hi = one(hi_t, _unit_of(lo_t) or hint, f"{field}.stop")
    if count is not None:
        n = int(count.group(1))
        if n < 1:
            raise _fail(field, text, spec, "':n' needs n >= 1")
        if n == 1:
            if lo != hi:
                raise _fail(field, text, spec, "one value (':1') needs start == stop")
            return np.array([lo])
        if count.group(2):
            if lo <= 0 or hi <= 0:
                raise _fail(field, text, spec, "'log' spacing needs positive ends")
            return np.geomspace(lo, hi, n)
        return np.linspace(lo, hi, n)
    step_kind = "temperature_difference" if name == "temperature" else name
    st = step_text.strip()
    if name == "temperature" and _unit_of(st).replace(" ", "") == "degC":
        st = f"{_split_number(st)[0]!r} K"       # a step of 1 degC is 1 K
    if not _has_unit(st) and hint:
        st = f"{st} {'K' if name == 'temperature' else hint}"
    step = parse_quantity(st, step_kind, f"{field}.step", default_unit
                          if name != "temperature" else None)
    if step <= 0 or hi < lo:
        raise _fail(field, text, spec, "'step' needs a positive step and start <= stop")
    n = int(math.floor((hi - lo) / step * (1 + 1e-12) + 1e-9)) + 1
    if n > 100_000:
        raise _fail(field, text, spec, f"{n} values is too many for a sweep")
    return lo + step * np.arange(n)
