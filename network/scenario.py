"""Scenario files: one TOML document describing a board, its mounting, its heat sources,
the waveforms that drive them, probes and limits.

The schema is ours.  Every physical quantity is a string with a unit (``"0.508 mm"``,
``"20 mil"``, ``"100 us"``, ``"42 W"``, ``"45 degC"``, ``"0.35 K/W"``); the loader keeps the
original text beside the SI value, so :func:`save` writes back exactly what was read.

Loading goes through one schema walk (:func:`_load_section`): every key is checked against the
dataclass fields (unknown keys get a did-you-mean hint), every quantity is parsed with its
expected kind, and every failure raises :class:`ScenarioError` carrying the key path
(``devices[0].stack[2].thickness``), the offending value, the expected form and, when the
TOML text is known, the line of the key.

A minimal file::

    name = "one pulsed device on a cold plate"
    coolant = "20 degC"

    [mount.sink]
    kind = "ideal"

    [waveforms.radar]
    kind = "pulses"
    peak = "40 W"
    width = "100 us"
    period = "1 ms"

    [[devices]]
    name = "pa"
    power = "radar"
    limit = "200 degC"
    foster = { R = ["0.2 K/W", "0.5 K/W", "1.3 K/W"], tau = ["10 us", "1 ms", "100 ms"] }
"""
from __future__ import annotations

import contextlib
import dataclasses
import difflib
import functools
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterator

from pulsetherm.waveforms.fieldwise import FieldMethods

__all__ = [
    "ScenarioError", "Quantity", "Scenario", "load", "loads", "save", "dumps",
    "dumps_toml", "find_line", "KELVIN_OFFSET", "atomic_open",
    "parse_literal",
]

#: 0 degC in kelvin (kept here so this module does not need numpy to import).
KELVIN_OFFSET = 273.15


# ======================================================================================
# Errors
# ======================================================================================
class ScenarioError(ValueError):
    """A scenario value that cannot be used.

    Attributes
    ----------
    path
        Key path in the scenario, e.g. ``devices[0].stack[2].thickness`` ("" for the file).
    value
        The offending value as written (or None when a key is missing).
    expected
        What would have been accepted.
    line
        1-based line of the key in the TOML text, or None when unknown.
    """

    def __init__(self, path: str, value: Any, expected: str, line: int | None = None,
                 source: str | None = None) -> None:
        self.path = path
        self.value = value
        self.expected = expected
        self.line = line
        self.source = source
        super().__init__(self._text())

    def _text(self) -> str:
        where = ""
        if self.source:
            where = f"{self.source}:{self.line}: " if self.line else f"{self.source}: "
        elif self.line:
            where = f"line {self.line}: "
        key = self.path
        if not key:
            return f"{where}{self.expected}"
        if self.value is None:
            return f"{where}{key}: {self.expected}"
        return f"{where}{key} = {self.value!r}: {self.expected}"

    def located(self, text: str | None, source: str | None = None) -> "ScenarioError":
        """The same error with the line found in ``text`` (and the file name) filled in."""
        line = self.line
        if line is None and text is not None and self.path:
            line = find_line(text, self.path)
        return ScenarioError(self.path, self.value, self.expected, line, source or self.source)


# ======================================================================================
# Finding the line of a key path in TOML text
# ======================================================================================
@functools.lru_cache(maxsize=None)
def _line_patterns() -> tuple[re.Pattern, re.Pattern]:
    """(table header, ``key =``) patterns of :func:`_key_lines`, compiled on first use: only
    an error's line is looked up, and compiling them took ~0.5 ms of every import."""
    return (re.compile(r"^\s*(\[\[?)([^\]]*)\]\]?\s*(#.*)?$"),   # linear: no lazy group
            re.compile(r"""^\s*((?:[A-Za-z0-9_\-]+|"[^"]*"|'[^']*')(?:\s*\.\s*(?:[A-Za-z0-9_\-]+|"[^"]*"|'[^']*'))*)\s*="""))


def _split_dotted(key: str) -> list[str]:
    parts = re.findall(r"""[A-Za-z0-9_\-]+|"[^"]*"|'[^']*'""", key)
    return [p[1:-1] if p[:1] in "\"'" else p for p in parts]


def _path_parts(path: str) -> list[str]:
    """``devices[0].stack[2].thickness`` -> ``['devices', '[0]', 'stack', '[2]', 'thickness']``."""
    out: list[str] = []
    for m in re.finditer(r"\[([^\]]+)\]|\"([^\"]*)\"|([^.\[\]]+)", path):
        if m.group(1) is not None:
            out.append(f"[{m.group(1)}]")
        else:
            out.append(m.group(2) if m.group(2) is not None else m.group(3))
    return out


def _key_lines(text: str) -> dict[str, int]:
    """Map every table header and ``key =`` line to its full key path (first line wins).

    Arrays of tables (``[[devices]]``) are counted, so the second ``[[devices]]`` block is
    ``devices[1]``; nested arrays (``[[devices.stack]]``) count per parent element.  Keys
    inside inline tables and multi-line arrays are not indexed (the caller falls back to
    the nearest enclosing key).
    """
    header, keyval = _line_patterns()
    found: dict[str, int] = {}
    counts: dict[str, int] = {}
    prefix: list[str] = []
    depth = 0  # open brackets of a multi-line value: skip its lines
    for no, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if len(line) > 4000:       # not a key line worth locating (and no regex time on it)
            continue
        if depth > 0:
            depth += _bracket_balance(line)
            continue
        if not line or line.startswith("#"):
            continue
        mh = header.match(line)
        if mh and not keyval.match(line):
            parts = _split_dotted(mh.group(2))
            # resolve every parent against the arrays of tables met so far
            resolved: list[str] = []
            for p in parts[:-1]:
                resolved.append(p)
                key = ".".join(resolved)
                if key in counts:
                    resolved.append(f"[{counts[key] - 1}]")
            resolved.append(parts[-1])
            key = ".".join(resolved)
            if mh.group(1) == "[[":
                found.setdefault(_norm(key), no)
                counts[key] = counts.get(key, 0) + 1
                # forget counts of arrays nested in the previous element
                for k in [k for k in counts if k.startswith(key + ".[")]:
                    del counts[k]
                resolved.append(f"[{counts[key] - 1}]")
            prefix = resolved
            found.setdefault(_norm(".".join(prefix)), no)
            continue
        mk = keyval.match(line)
        if mk:
            full = prefix + _split_dotted(mk.group(1))
            found.setdefault(_norm(".".join(full)), no)
            rest = line[mk.end():]
            depth = max(0, _bracket_balance(rest))
    return found


def _bracket_balance(s: str) -> int:
    s = re.sub(r'"(?:\\.|[^"\\])*"|\'[^\']*\'', "", s)
    s = s.split("#", 1)[0]
    return s.count("[") + s.count("{") - s.count("]") - s.count("}")


def _norm(path: str) -> str:
    return ".".join(_path_parts(path))


def find_line(text: str, path: str) -> int | None:
    """1-based line of the key ``path`` in TOML ``text``, or of its nearest enclosing key.

    Returns None when not even the first key of the path is in the text.
    """
    table = _key_lines(text)
    parts = _path_parts(path)
    while parts:
        got = table.get(".".join(parts))
        if got is not None:
            return got
        parts = parts[:-1]
    return None


# ======================================================================================
# A small TOML writer (the standard library reads TOML but does not write it)
# ======================================================================================
_BARE = re.compile(r"^[A-Za-z0-9_\-]+$")


def _toml_key(key: str) -> str:
    return key if _BARE.match(key) else _toml_str(key)


def _toml_str(s: str) -> str:
    out = ['"']
    for ch in s:
        if ch == '"':
            out.append('\\"')
        elif ch == "\\":
            out.append("\\\\")
        elif ch == "\n":
            out.append("\\n")
        elif ch == "\t":
            out.append("\\t")
        elif ch == "\r":
            out.append("\\r")
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _toml_value(v: Any, where: str) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        r = repr(v)
        return r if any(c in r for c in ".eEn") else r + ".0"
    if isinstance(v, str):
        return _toml_str(v)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_toml_value(x, f"{where}[{i}]") for i, x in enumerate(v)) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_toml_key(str(k))} = {_toml_value(x, f'{where}.{k}')}"
                               for k, x in v.items()) + "}"
    raise TypeError(f"{where}: cannot write {type(v).__name__} to TOML")


def _is_table_array(v: Any) -> bool:
    return isinstance(v, (list, tuple)) and len(v) > 0 and all(isinstance(x, dict) for x in v)


def dumps_toml(data: dict[str, Any]) -> str:
    """Write a nested dict as TOML text that :func:`tomllib.loads` reads back equal.

    Scalars, lists of scalars, tables and arrays of tables are supported (no dates).
    Simple keys come first, then sub-tables (``[a.b]``), then arrays of tables
    (``[[a.c]]``), so the output reads like a hand-written file.
    """
    lines: list[str] = []
    _dump_table(data, [], lines, header=None)
    text = "\n".join(lines).strip("\n")
    return text + "\n"


def _dump_table(data: dict[str, Any], path: list[str], out: list[str], header: str | None) -> None:
    simple = [(k, v) for k, v in data.items() if not isinstance(v, dict) and not _is_table_array(v)]
    tables = [(k, v) for k, v in data.items() if isinstance(v, dict)]
    arrays = [(k, v) for k, v in data.items() if _is_table_array(v)]
    if header is not None and (simple or not (tables or arrays)):
        out.append("")
        out.append(header)
    for k, v in simple:
        out.append(f"{_toml_key(str(k))} = {_toml_value(v, '.'.join(path + [str(k)]))}")
    for k, v in tables:
        sub = path + [_toml_key(str(k))]
        _dump_table(v, sub, out, header="[" + ".".join(sub) + "]")
    for k, v in arrays:
        sub = path + [_toml_key(str(k))]
        for item in v:
            out.append("")
            out.append("[[" + ".".join(sub) + "]]")
            _dump_table_body(item, sub, out)


def _dump_table_body(data: dict[str, Any], path: list[str], out: list[str]) -> None:
    """Body of one ``[[...]]`` element: its keys, then its own sub-tables and arrays."""
    simple = [(k, v) for k, v in data.items() if not isinstance(v, dict) and not _is_table_array(v)]
    for k, v in simple:
        out.append(f"{_toml_key(str(k))} = {_toml_value(v, '.'.join(path + [str(k)]))}")
    rest = {k: v for k, v in data.items() if isinstance(v, dict) or _is_table_array(v)}
    if rest:
        _dump_table(rest, path, out, header=None)


# ======================================================================================
# Quantities
# ======================================================================================
@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class Quantity(FieldMethods):
    """A value read from a scenario: the text as written and its SI value.

    ``value`` is SI (m, s, W, K/W, J/K, Hz, ...); temperatures are absolute kelvin
    (``degC`` gives degrees Celsius).
    """

    text: str
    value: float
    kind: str

    @property
    def degC(self) -> float:
        return self.value - KELVIN_OFFSET

    def __float__(self) -> float:
        return self.value


#: Scenario quantity kinds: (kind name of :func:`pulsetherm.network.units.parse_quantity`,
#: an example shown in error messages).
QUANTITY_KINDS: dict[str, tuple[str, str]] = {
    "length": ("length", "0.508 mm"),
    "thickness": ("copper_thickness", "0.508 mm"),   # a layer: also '1 oz' of copper
    "time": ("time", "100 us"),
    "power": ("power", "42 W"),
    "temperature": ("temperature", "45 degC"),
    "difference": ("temperature_difference", "10 K"),
    "resistance": ("thermal_resistance", "0.35 K/W"),
    "capacity": ("capacity", "12 J/K"),
    "frequency": ("frequency", "10 GHz"),
    "impedance": ("impedance", "50 ohm"),
    "h": ("film_coefficient", "1500 W/(m2 K)"),
    "area": ("area", "40 cm2"),
    "area_resistance": ("area_resistance", "10 K mm2/W"),
    "angle": ("angle", "45 deg"),
    "gain_tc": ("gain_tempco", "-0.015 dB/K"),
    "phase_tc": ("phase_tempco", "0.1 deg/K"),
    "decibel": ("decibel", "0.5 dB"),
    "energy": ("energy", "0.7 eV"),
}


#: Successful unit-string parses, (text, unit kind) -> SI value (sweeps re-read the same
#: scenario texts for every row).
_PARSED: dict[tuple[str, str], float] = {}


def parse_quantity(text: Any, kind: str, path: str) -> Quantity:
    """Parse a unit string of the scenario ``kind``; :class:`ScenarioError` otherwise.

    Uses :func:`pulsetherm.network.units.parse_quantity` (one unit table for the project).
    A bare number is refused: every quantity in a scenario carries its unit.
    """
    units_kind, example = QUANTITY_KINDS[kind]
    expected = f"a {kind.replace('_', ' ')} with its unit, e.g. {example!r}"
    if isinstance(text, bool) or not isinstance(text, str):
        if isinstance(text, (int, float)):
            raise ScenarioError(path, text, f"{expected} (a bare number has no unit)")
        raise ScenarioError(path, text, expected)
    if len(text) > 200:      # before any regex: hostile text costs no time
        raise ScenarioError(path, text[:40] + "...", f"{expected} (at most 200 characters)")
    key = (text, units_kind)
    value = _PARSED.get(key)
    if value is None:
        if _NUM_ONLY.match(text):
            # a quoted number ("0.76") is refused like a bare one: no silent SI metres
            raise ScenarioError(path, text, f"{expected} (a number without a unit)")
        try:
            value = float(_units_parse(units_kind)(text, kind=units_kind, field=path))
        except (ValueError, ArithmeticError) as exc:
            raise ScenarioError(path, text, f"{expected} ({_reason(exc, path)})") from None
        if len(_PARSED) > 8192:   # a sweep reuses a few texts; keep the cache small
            _PARSED.clear()
        _PARSED[key] = value
    if not math.isfinite(value):
        raise ScenarioError(path, text, f"{expected} (a finite value)")
    from .limits import plausible_range

    why = plausible_range(kind, value)
    if why:
        raise ScenarioError(path, text, f"{expected} ({why})")
    return Quantity(text, value, kind)


def _units_parse(kind: str):
    """The parser of a unit kind: the project's unit table
    (:func:`pulsetherm.network.units.parse_quantity`), except for line impedance (ohm),
    which that table does not hold."""
    if kind == "impedance":
        return _parse_ohm
    from .units import parse_quantity as units_parse

    if kind == "angle":  # the unit table returns radians; the stack-up takes degrees
        return lambda text, kind, field: math.degrees(units_parse(text, kind=kind,
                                                                   field=field))
    return units_parse


#: Text that is only a number (no unit), in linear time.
_NUM_ONLY = re.compile(r"\s*[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?\s*\Z")


def _parse_ohm(text: str, kind: str, field: str) -> float:
    m = _NUM.match(text)
    if not m or m.group(2) not in ("ohm", "Ohm", "ohms", "\u03a9", "\u2126"):
        raise ValueError(f"{field} = {text!r}: expected an impedance such as '50 ohm'")
    return float(m.group(1))


def _reason(exc: BaseException, path: str) -> str:
    """The part of a lower-level message that is not already said by the path."""
    msg = " ".join(str(exc).split())
    if msg.startswith(path):
        msg = msg[len(path):].lstrip(" :=")
    # the unit table's own "'text': why; expected an example" repeats what the caller says
    m = re.match(r"^'(?:[^'\\]|\\.)*': (.*?)(?:; expected [^;]*)?$", msg[:600])
    if m and m.group(1):
        msg = m.group(1)
    return msg


def parse_difference(text: str, option: str) -> float:
    """A temperature difference from the command line (``--margin 10 K``), K."""
    return parse_quantity(text, "difference", option).value


# ======================================================================================
# Schema helpers
# ======================================================================================
def _f(tag: str, *, required: bool = False, key: str | None = None, kind: str | None = None,
       cls: Any = None, check: str = "positive", choices: tuple[str, ...] = (),
       doc: str = "", alt: str | None = None) -> Any:
    """A schema field: default None (= not given), metadata describing how to read it.

    Tags: ``str``, ``bool``, ``int``, ``number``, ``choice``, ``q`` (quantity of ``kind``),
    ``qpair`` (two quantities, or one for a square), ``qlist`` (list of quantities),
    ``section`` (a table read as ``cls``), ``list`` (array of tables), ``map`` (table of
    named tables), ``wave`` (a waveform name or an inline waveform table), ``strpair``,
    ``raw`` (a table kept as it is).
    """
    return field(default=None, metadata={"tag": tag, "required": required, "key": key,
                                         "kind": kind, "cls": cls, "check": check,
                                         "choices": choices, "doc": doc, "alt": alt})


def _join(path: str, key: str | int) -> str:
    if isinstance(key, int):
        return f"{path}[{key}]"
    k = key if _BARE.match(key) else f'"{key}"'
    return f"{path}.{k}" if path else k


def _check_value(q: Quantity, check: str, path: str) -> Quantity:
    v = q.value
    if check == "positive" and not v > 0:
        raise ScenarioError(path, q.text, f"a {q.kind} > 0")
    if check == "nonneg" and not v >= 0:
        raise ScenarioError(path, q.text, f"a {q.kind} >= 0")
    if check == "kelvin" and not v > 0:
        raise ScenarioError(path, q.text, "a temperature above absolute zero")
    return q


def _convert(meta: dict, value: Any, path: str) -> Any:
    from . import limits

    tag = meta["tag"]
    if isinstance(value, list) and tag in ("qpair", "qlist", "list", "strpair") \
            and len(value) > limits.MAX_LIST:
        raise ScenarioError(path, None, f"{len(value)} items; expected at most "
                            f"{limits.MAX_LIST}")
    if tag == "str":
        if not isinstance(value, str) or not value.strip():
            raise ScenarioError(path, value, "a non-empty string")
        _check_text_value(value, path)
        return value
    if tag == "choice":
        if not isinstance(value, str) or value not in meta["choices"]:
            close = difflib.get_close_matches(str(value), meta["choices"], n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise ScenarioError(path, value, "one of " + ", ".join(repr(c) for c in meta["choices"])
                                + hint)
        return value
    if tag == "bool":
        if not isinstance(value, bool):
            raise ScenarioError(path, value, "true or false")
        return value
    if tag == "int":
        if isinstance(value, bool) or not isinstance(value, int) or value < 1:
            raise ScenarioError(path, value, "a whole number >= 1")
        top = limits.INT_LIMITS.get(path.rsplit(".", 1)[-1], limits.INT_LIMITS[None])
        if value > top:
            raise ScenarioError(path, value, f"a whole number from 1 to {top}")
        return value
    if tag == "number":
        if isinstance(value, str) and not isinstance(value, bool):
            value = _dimensionless(value, path)      # "10 %", "0.1", "500 ppm"
        if isinstance(value, bool) or not isinstance(value, (int, float)) \
                or not math.isfinite(value):
            raise ScenarioError(path, value, "a finite number")
        rng = limits.NUMBER_RANGES.get(path.rsplit(".", 1)[-1])
        if rng and not rng[0] <= value <= rng[1]:
            raise ScenarioError(path, value, f"a number from {rng[0]:g} to {rng[1]:g}")
        if meta["check"] == "fraction" and not 0 <= value < 1:
            raise ScenarioError(path, value, "a fraction in [0, 1)")
        if meta["check"] == "positive" and not value > 0:
            raise ScenarioError(path, value, "a number > 0")
        return value
    if tag == "q":
        return _check_value(parse_quantity(value, meta["kind"], path), meta["check"], path)
    if tag == "qpair":
        if isinstance(value, str):
            if meta.get("alt"):  # e.g. a via field: two sides, one side or an area
                try:
                    q = parse_quantity(value, meta["alt"], path)
                except ScenarioError:
                    pass
                else:
                    return (_check_value(q, meta["check"], path),) * 2
            q = _check_value(parse_quantity(value, meta["kind"], path), meta["check"], path)
            return (q, q)
        if not isinstance(value, list) or len(value) != 2:
            raise ScenarioError(path, value, f"two {meta['kind']}s [width, length] (or one "
                                "string for a square)")
        return tuple(_check_value(parse_quantity(v, meta["kind"], _join(path, i)),
                                  meta["check"], _join(path, i)) for i, v in enumerate(value))
    if tag == "qlist":
        if not isinstance(value, list) or not value:
            raise ScenarioError(path, value, f"a non-empty list of {meta['kind']}s")
        return tuple(_check_value(parse_quantity(v, meta["kind"], _join(path, i)),
                                  meta["check"], _join(path, i)) for i, v in enumerate(value))
    if tag == "strpair":
        if not (isinstance(value, list) and len(value) == 2
                and all(isinstance(v, str) and v.strip() for v in value)):
            raise ScenarioError(path, value, 'two node names, e.g. ["pa.junction", "sink"]')
        if value[0] == value[1]:
            raise ScenarioError(path, value, "two different node names")
        return tuple(value)
    if tag == "section":
        return _load_section(meta["cls"], value, path)
    if tag == "list":
        if isinstance(value, dict):
            value = [value]
        if not isinstance(value, list):
            raise ScenarioError(path, value, f"an array of tables ([[{path}]])")
        top = (limits.MAX_LAYERS if meta["cls"] is LayerSpec else limits.MAX_TABLE_ARRAY)
        if len(value) > top:
            raise ScenarioError(path, None, f"{len(value)} tables; expected at most {top}")
        return tuple(_load_section(meta["cls"], v, _join(path, i)) for i, v in enumerate(value))
    if tag == "map":
        if not isinstance(value, dict):
            raise ScenarioError(path, value, "a table of named tables")
        if len(value) > limits.MAX_NAMED:
            raise ScenarioError(path, None, f"{len(value)} named tables; expected at most "
                                f"{limits.MAX_NAMED}")
        out = {}
        for k, v in value.items():
            _check_name(k, _join(path, k))
            out[k] = _load_section(meta["cls"], v, _join(path, k))
        return out
    if tag == "wave":
        if isinstance(value, str):
            if not value.strip():
                raise ScenarioError(path, value, "a waveform name or an inline waveform table")
            return value
        if isinstance(value, dict):
            return _load_section(WaveformSpec, value, path)
        raise ScenarioError(path, value, "the name of a waveform in [waveforms] or an inline "
                            "waveform table, e.g. { kind = \"constant\", power = \"2 W\" }")
    if tag == "raw":
        if not isinstance(value, dict):
            raise ScenarioError(path, value, "a table")
        return value
    raise AssertionError(tag)  # pragma: no cover - schema programming error


def _check_text_value(value: str, path: str) -> None:
    """Names and labels are echoed to terminals and files: no control characters (escape
    codes), at most ``limits.MAX_STRING`` characters."""
    from .limits import MAX_STRING

    if len(value) > MAX_STRING:
        raise ScenarioError(path, value[:40] + "...", f"a string of at most {MAX_STRING} "
                            "characters")
    shown = value.replace("\n", "").replace("\t", "") if path == "description" else value
    if not shown.isprintable():
        raise ScenarioError(path, value, "text without control characters (escape codes; "
                            "tabs and line breaks only in the description)")


def _dimensionless(text: str, path: str) -> float:
    """A plain number written as text: ``"0.1"``, ``"10 %"``, ``"500 ppm"``."""
    from .units import parse_quantity as units_parse

    if len(text) > 200:
        raise ScenarioError(path, text[:40] + "...", "a number (at most 200 characters)")
    try:
        return float(units_parse(text, "dimensionless", path))
    except (ValueError, ArithmeticError) as exc:
        raise ScenarioError(path, text, f"a plain number or a percentage such as '10 %' "
                            f"({_reason(exc, path)})") from None


def _unconvert(meta: dict, value: Any) -> Any:
    tag = meta["tag"]
    if tag == "q":
        return value.text
    if tag == "qpair":
        return value[0].text if value[0] is value[1] else [v.text for v in value]
    if tag == "qlist":
        return [v.text for v in value]
    if tag == "strpair":
        return list(value)
    if tag == "section":
        return _dump_section(value)
    if tag == "list":
        return [_dump_section(v) for v in value]
    if tag == "map":
        return {k: _dump_section(v) for k, v in value.items()}
    if tag == "wave":
        return value if isinstance(value, str) else _dump_section(value)
    if tag == "raw":
        return dict(value)
    return value


def _check_name(name: Any, path: str) -> str:
    if not isinstance(name, str) or not re.fullmatch(r"[A-Za-z0-9_\-]+", name):
        raise ScenarioError(path, name, "a name of letters, digits, '_' or '-' (no dots or "
                            "spaces: names become node names such as 'pa.junction')")
    return name


@functools.lru_cache(maxsize=None)
def _schema(cls) -> dict[str, dataclasses.Field]:
    return {f.metadata.get("key") or f.name: f for f in dataclasses.fields(cls)
            if "tag" in f.metadata}


def _load_section(cls, data: Any, path: str):
    if not isinstance(data, dict):
        raise ScenarioError(path, data, f"a table of {cls._what} keys "
                            f"({', '.join(_schema(cls))})")
    schema = _schema(cls)
    for key in data:
        if key not in schema:
            close = difflib.get_close_matches(str(key), list(schema), n=1, cutoff=0.6)
            hint = f"did you mean {close[0]!r}? " if close else ""
            raise ScenarioError(_join(path, str(key)), None,
                                f"unknown key in {cls._what}; {hint}known keys: "
                                f"{', '.join(schema)}")
    kwargs = {}
    for key, f in schema.items():
        if key not in data:
            if f.metadata["required"]:
                raise ScenarioError(_join(path, key), None,
                                    f"missing; expected {_describe(f.metadata)}")
            continue
        kwargs[f.name] = _convert(f.metadata, data[key], _join(path, key))
    obj = cls(**kwargs)
    obj.check(path)
    return obj


def _describe(meta: dict) -> str:
    tag = meta["tag"]
    if tag == "q":
        return f"a {meta['kind']} with its unit, e.g. {QUANTITY_KINDS[meta['kind']][1]!r}"
    if tag == "qpair":
        ex = QUANTITY_KINDS[meta["kind"]][1]
        return f"[width, length], e.g. [{ex!r}, {ex!r}]"
    if tag == "qlist":
        return f"a list of {meta['kind']}s"
    if tag == "choice":
        return "one of " + ", ".join(repr(c) for c in meta["choices"])
    if tag in ("section", "map"):
        return f"a table ({meta['cls']._what})"
    if tag == "list":
        return f"an array of tables ({meta['cls']._what})"
    if tag == "wave":
        return "a waveform name from [waveforms] or an inline waveform table"
    return {"str": "a string", "bool": "true or false", "int": "a whole number",
            "number": "a number", "strpair": "two node names"}.get(tag, tag)


def _dump_section(obj) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, f in _schema(type(obj)).items():
        v = getattr(obj, f.name)
        if v is None:
            continue
        out[key] = _unconvert(f.metadata, v)
    return out


class _Section(FieldMethods):
    """Base of the schema dataclasses: cross-field checks and the dict form.

    The sections are declared ``@dataclass(frozen=True, eq=False, repr=False)`` and take
    ``==``, ``hash`` and ``repr`` from :class:`~pulsetherm.waveforms.fieldwise.FieldMethods`
    (the same as generated ones; generating them cost ~3 ms of each ``pulsetherm run``).
    """

    _what = "section"

    def check(self, path: str) -> None:
        """Cross-field rules; raise :class:`ScenarioError` naming the key."""

    def to_dict(self) -> dict[str, Any]:
        return _dump_section(self)

    def _one_of(self, path: str, names: tuple[str, ...], exactly: bool = True) -> None:
        given = [n for n in names if getattr(self, n.lower()) is not None]
        if len(given) > 1 or (exactly and not given):
            raise ScenarioError(path, None, f"expected {'exactly' if exactly else 'at most'} "
                                f"one of {', '.join(names)}; got "
                                f"{', '.join(given) if given else 'none'}")


# ======================================================================================
# Schema
# ======================================================================================
#: Keys each waveform kind accepts (besides ``kind`` and ``delay``).
WAVEFORM_KEYS: dict[str, tuple[str, ...]] = {
    "constant": ("power", "period"),
    "pulses": ("peak", "width", "period", "prf", "duty", "idle", "rise", "fall"),
    "burst": ("peak", "width", "pri", "prf", "pulses", "period", "gap", "idle", "rise",
              "fall"),
    "stagger": ("peak", "intervals", "widths", "idle", "rise", "fall"),
    "profile": ("stretches", "periodic", "after"),
    "table": ("file", "interp", "periodic", "period"),
}


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class StretchSpec(_Section):
    """One stretch of a profile: a duration with a constant power or a named waveform."""

    _what = "profile stretch"
    duration: Quantity = _f("q", kind="time", required=True)
    power: Any = _f("wave", required=True, doc="a waveform name, an inline waveform table, "
                    "or a constant power string such as '2 W'")
    label: str | None = _f("str")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class WaveformSpec(_Section):
    """A heat waveform: ``kind`` and the keys of that kind (see :data:`WAVEFORM_KEYS`)."""

    _what = "waveform"
    kind: str = _f("choice", required=True, choices=tuple(WAVEFORM_KEYS))
    power: Quantity = _f("q", kind="power", check="nonneg")
    peak: Quantity = _f("q", kind="power", check="nonneg")
    idle: Quantity = _f("q", kind="power", check="nonneg")
    after: Quantity = _f("q", kind="power", check="nonneg")
    width: Quantity = _f("q", kind="time")
    period: Quantity = _f("q", kind="time")
    pri: Quantity = _f("q", kind="time")
    prf: Quantity = _f("q", kind="frequency")
    duty: float = _f("number", check="positive")
    gap: Quantity = _f("q", kind="time", check="nonneg")
    rise: Quantity = _f("q", kind="time", check="nonneg")
    fall: Quantity = _f("q", kind="time", check="nonneg")
    delay: Quantity = _f("q", kind="time", check="nonneg")
    pulses: int = _f("int")
    intervals: tuple = _f("qlist", kind="time")
    widths: tuple = _f("qlist", kind="time")
    stretches: tuple = _f("list", cls=StretchSpec)
    periodic: bool = _f("bool")
    file: str | None = _f("str", doc="CSV power envelope, relative to the scenario file "
                          "(header with units, e.g. 'time_us,power_W')")
    interp: str | None = _f("choice", choices=("step", "linear"))

    def check(self, path: str) -> None:
        allowed = set(WAVEFORM_KEYS[self.kind]) | {"kind", "delay"}
        for key, f in _schema(type(self)).items():
            if getattr(self, f.name) is not None and key not in allowed:
                raise ScenarioError(_join(path, key), _unconvert(f.metadata, getattr(self, f.name)),
                                    f"not a key of a {self.kind!r} waveform; expected "
                                    f"{', '.join(sorted(allowed))}")
        need = {"constant": ("power",), "pulses": ("peak", "width"),
                "burst": ("peak", "width", "pulses"), "stagger": ("peak", "intervals", "widths"),
                "profile": ("stretches",), "table": ("file",)}[self.kind]
        for key in need:
            if getattr(self, key) is None:
                raise ScenarioError(_join(path, key), None,
                                    f"missing; a {self.kind!r} waveform needs "
                                    f"{', '.join(need)}")
        if self.stretches is not None and not self.stretches:
            raise ScenarioError(_join(path, "stretches"), [], "at least one stretch")
        if self.duty is not None and not self.duty <= 1:
            raise ScenarioError(_join(path, "duty"), self.duty, "a duty cycle in (0, 1]")


#: Waveform keys the scenario calls differently from the waveform classes.
_WAVE_FIELD = {"Burst.period": "period", "Burst.gap": "gap", "Burst.pulses": "pulses",
               "PulseTrain.period": "pri", "PulseTrain.prf": "prf"}


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class ViaSpec(_Section):
    """A field of thermal vias in a board laminate (under every part)."""

    _what = "via field"
    drill: Quantity = _f("q", kind="length", required=True)
    plating: Quantity = _f("q", kind="length", required=True)
    pitch: Quantity = _f("q", kind="length", required=True)
    fill: str | None = _f("str", doc="fill material (default: empty barrels)")
    pattern: str | None = _f("choice", choices=("square", "hex"))
    area: tuple | None = _f("qpair", kind="length", alt="area",
                            doc="size of the via field under each part: [width, length], "
                            "one side of a square, or an area ('200 mm2'); default: the "
                            "footprint of the part above it (its lowest sized stack layer, "
                            "else its footprint)")

    def check(self, path: str) -> None:
        if not self.plating.value < self.drill.value / 2:
            raise ScenarioError(_join(path, "plating"), self.plating.text,
                                f"a plating thinner than half the drill ({self.drill.text})")
        if not self.pitch.value > self.drill.value:
            raise ScenarioError(_join(path, "pitch"), self.pitch.text,
                                f"a pitch larger than the drill ({self.drill.text})")


def _is_copper_weight(text: str) -> bool:
    """True for a thickness written as a copper weight (``"1 oz"``, ``"0.5oz"``)."""
    return text.rstrip().endswith("oz")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class LayerSpec(_Section):
    """One layer (material and thickness) or a thin interface (``area_resistance``)."""

    _what = "layer"
    name: str | None = _f("str")
    material: str | None = _f("str")
    thickness: Quantity | None = _f("q", kind="thickness", doc="a length, or a copper weight "
                                    "('1 oz' = 35 um) on a copper-class layer")
    size: tuple | None = _f("qpair", kind="length")
    area_resistance: Quantity | None = _f("q", kind="area_resistance")
    spreading_angle: Quantity | None = _f("q", kind="angle", check="nonneg")
    void_fraction: float | None = _f("number", check="fraction")
    vias: ViaSpec | None = _f("section", cls=ViaSpec)

    def check(self, path: str) -> None:
        if self.name is not None:
            _check_name(self.name, _join(path, "name"))
        if self.area_resistance is not None:
            for key in ("material", "thickness", "size", "spreading_angle", "void_fraction",
                        "vias"):
                if getattr(self, key) is not None:
                    raise ScenarioError(_join(path, key), None,
                                        "not allowed with area_resistance (a thin interface "
                                        "has no material or thickness)")
            return
        for key in ("material", "thickness"):
            if getattr(self, key) is None:
                raise ScenarioError(_join(path, key), None,
                                    "missing; a layer needs material and thickness (or "
                                    "area_resistance for a thin interface)")
        if _is_copper_weight(self.thickness.text) and "copper" not in self.material.lower():
            raise ScenarioError(_join(path, "thickness"), self.thickness.text,
                                "a length such as '35 um': 'oz' is a copper weight (35 um "
                                f"per oz) and {self.material!r} is not a copper-class "
                                "material (one whose name contains 'copper')")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class BoardSpec(_Section):
    """The circuit board: its size and its layers, top first."""

    _what = "board"
    size: tuple = _f("qpair", kind="length", required=True)
    layers: tuple = _f("list", cls=LayerSpec, required=True)

    def check(self, path: str) -> None:
        if not self.layers:
            raise ScenarioError(_join(path, "layers"), [], "at least one layer")
        _unique([(lay.name or lay.material or "interface", _join(_join(path, "layers"), i))
                 for i, lay in enumerate(self.layers)], "layer name")


SINK_KEYS = {"fixed": (), "lumped": ("resistance", "capacity"),
             "film": ("h", "area", "capacity")}


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class SinkSpec(_Section):
    """Heat sink: ``fixed`` (ideal cold plate / fixed-temperature base at the coolant
    temperature), ``lumped`` (resistance and capacity to ambient) or ``film`` (film
    coefficient, optionally over a sink body of given wetted area)."""

    _what = "sink"
    kind: str = _f("choice", required=True, choices=tuple(SINK_KEYS))
    resistance: Quantity | None = _f("q", kind="resistance")
    capacity: Quantity | None = _f("q", kind="capacity", check="nonneg")
    h: Quantity | None = _f("q", kind="h")
    area: Quantity | None = _f("q", kind="area")

    def check(self, path: str) -> None:
        allowed = SINK_KEYS[self.kind]
        for key in ("resistance", "capacity", "h", "area"):
            if getattr(self, key) is not None and key not in allowed:
                raise ScenarioError(_join(path, key), getattr(self, key).text,
                                    f"not a key of a {self.kind!r} sink (expected "
                                    f"{', '.join(allowed) or 'no other key'})")
        need = {"lumped": "resistance", "film": "h"}.get(self.kind)
        if need and getattr(self, need) is None:
            raise ScenarioError(_join(path, need), None, f"missing; a {self.kind!r} sink needs {need}")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class MountSpec(_Section):
    """How the board meets the sink: interface layers (grease, pad) and the sink."""

    _what = "mount"
    interface: tuple | None = _f("list", cls=LayerSpec)
    sink: SinkSpec = _f("section", cls=SinkSpec, required=True)


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class FosterSpec(_Section):
    """Data-sheet Foster network, junction to case: R (K/W) and tau (s) per term."""

    _what = "Foster network"
    R: tuple = _f("qlist", kind="resistance", required=True)
    tau: tuple = _f("qlist", kind="time", required=True)

    def check(self, path: str) -> None:
        from .limits import MAX_FOSTER_TERMS

        if len(self.R) > MAX_FOSTER_TERMS:
            raise ScenarioError(_join(path, "R"), None, f"{len(self.R)} terms; expected at "
                                f"most {MAX_FOSTER_TERMS} (a data-sheet network has a few)")
        if len(self.R) != len(self.tau):
            raise ScenarioError(_join(path, "tau"), [q.text for q in self.tau],
                                f"as many time constants as resistances ({len(self.R)})")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class RFSpec(_Section):
    """A device's signal sensitivity to its junction temperature: gain (dB/K) and
    insertion-phase (deg/K) coefficients, and optional limits on the worst droop across a
    pulse (dB), the pulse-to-pulse stability ratio (dB) and the pulse-to-pulse phase
    peak-to-peak (deg); see :mod:`pulsetherm.network.pulse_effects`."""

    _what = "device rf"
    gain_tc: Quantity | None = _f("q", kind="gain_tc", check="any")
    phase_tc: Quantity | None = _f("q", kind="phase_tc", check="any")
    droop_limit: Quantity | None = _f("q", kind="decibel")
    stability_limit: Quantity | None = _f("q", kind="decibel", check="any")
    phase_limit: Quantity | None = _f("q", kind="angle")

    def check(self, path: str) -> None:
        if self.gain_tc is None and self.phase_tc is None:
            raise ScenarioError(_join(path, "gain_tc"), None, "missing; [devices.rf] needs "
                                "gain_tc (e.g. '-0.015 dB/K') or phase_tc (e.g. '0.1 deg/K')")
        if self.droop_limit is not None and self.gain_tc is None:
            raise ScenarioError(_join(path, "droop_limit"), self.droop_limit.text,
                                "a droop limit with gain_tc (the droop comes from it)")
        if self.phase_limit is not None and self.phase_tc is None:
            raise ScenarioError(_join(path, "phase_limit"), self.phase_limit.text,
                                "a phase limit with phase_tc (the phase comes from it)")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class CyclingSpec(_Section):
    """Thermal-cycling figures of a device (relative only; :mod:`pulsetherm.network.
    cycling`): reference cycle range, Coffin-Manson exponent, activation energy and
    Arrhenius reference temperature, and the stack layer whose top face is the attach."""

    _what = "device cycling"
    reference_range: Quantity | None = _f("q", kind="difference")
    exponent: float | None = _f("number", check="positive")
    activation_energy: Quantity | None = _f("q", kind="energy", check="nonneg")
    reference_temperature: Quantity | None = _f("q", kind="temperature", check="kelvin")
    attach: str | None = _f("str", doc="stack layer of the attach (default: the layer under "
                            "the die or the data-sheet device)")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class DeviceSpec(_Section):
    """A heated device: a die stack (``stack``) or a data-sheet device (``rth`` or
    ``foster``, junction to case, optionally on a ``stack`` of package/attach layers)."""

    _what = "device"
    name: str = _f("str", required=True)
    power: Any = _f("wave", required=True)
    footprint: tuple = _f("qpair", kind="length", required=True)
    position: tuple | None = _f("qpair", kind="length", check="any")
    limit: Quantity | None = _f("q", kind="temperature", check="kelvin")
    rth: Quantity | None = _f("q", kind="resistance")
    capacity: Quantity | None = _f("q", kind="capacity", check="nonneg",
                                   doc="junction-to-case heat capacity of an rth device "
                                       "(one stage: R = rth, C = capacity)")
    foster: FosterSpec | None = _f("section", cls=FosterSpec)
    stack: tuple | None = _f("list", cls=LayerSpec)
    rf: RFSpec | None = _f("section", cls=RFSpec, doc="gain/phase temperature coefficients "
                           "and droop or stability limits (network/pulse_effects.py)")
    cycling: CyclingSpec | None = _f("section", cls=CyclingSpec, doc="rainflow, Coffin-"
                                     "Manson and Arrhenius settings (network/cycling.py)")

    def check(self, path: str) -> None:
        _check_name(self.name, _join(path, "name"))
        self._one_of(path, ("rth", "foster"), exactly=False)
        if self.capacity is not None and self.rth is None:
            raise ScenarioError(_join(path, "capacity"), self.capacity.text,
                                "a capacity only with rth (a foster network carries its own "
                                "time constants; a die stack its own mass)")
        if self.rth is None and self.foster is None and not self.stack:
            raise ScenarioError(_join(path, "stack"), None,
                                "missing; a device needs a die stack, or rth/foster for a "
                                "data-sheet device")
        if self.stack:
            _unique([(lay.name or lay.material or "interface", _join(_join(path, "stack"), i))
                     for i, lay in enumerate(self.stack)], "layer name")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class LineSpec(_Section):
    """A microstrip line carrying RF power; its conductor and dielectric losses heat it."""

    _what = "line"
    name: str = _f("str", required=True)
    power: Any = _f("wave", required=True, doc="RF power carried (waveform)")
    length: Quantity = _f("q", kind="length", required=True)
    frequency: Quantity = _f("q", kind="frequency", required=True)
    width: Quantity | None = _f("q", kind="length")
    impedance: Quantity | None = _f("q", kind="impedance")
    dielectric: str | None = _f("str", doc="laminate material (default: the board laminate)")
    permittivity: float | None = _f("number", check="positive",
                                    doc="relative permittivity (default: the laminate's)")
    loss_tangent: float | None = _f("number", check="nonneg",
                                    doc="loss tangent (default: the laminate's)")
    conductor: Quantity | None = _f("q", kind="thickness", doc="conductor thickness "
                                    "(default: the board's top copper layer)")
    roughness: Quantity | None = _f("q", kind="length", check="nonneg")
    limit: Quantity | None = _f("q", kind="temperature", check="kelvin")
    segments: int | None = _f("int")

    def check(self, path: str) -> None:
        _check_name(self.name, _join(path, "name"))
        self._one_of(path, ("width", "impedance"))


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class HeaterSpec(_Section):
    """A point heat source at a named node (a chip termination, a bias resistor)."""

    _what = "heater"
    name: str = _f("str", required=True)
    power: Any = _f("wave", required=True)
    node: str | None = _f("str", doc="a node of the network")
    line: str | None = _f("str", doc="a line of the scenario (with position)")
    position: Quantity | None = _f("q", kind="length", check="nonneg",
                                   doc="centre along the line from its start")
    length: Quantity | None = _f("q", kind="length", check="nonneg",
                                 doc="footprint length along the line")
    resistance: Quantity | None = _f("q", kind="resistance",
                                     doc="from the part's own node to the line copper")
    capacity: Quantity | None = _f("q", kind="capacity", check="nonneg")
    limit: Quantity | None = _f("q", kind="temperature", check="kelvin")

    def check(self, path: str) -> None:
        _check_name(self.name, _join(path, "name"))
        self._one_of(path, ("node", "line"))
        if self.line is not None and self.position is None:
            raise ScenarioError(_join(path, "position"), None,
                                "missing; a heater on a line needs its position along it")
        if self.node is not None:
            for key in ("position", "length", "resistance", "capacity"):
                if getattr(self, key) is not None:
                    raise ScenarioError(_join(path, key), getattr(self, key).text,
                                        "only for a heater on a line (give line = ...)")
        if self.capacity is not None and self.capacity.value > 0 and self.resistance is None:
            raise ScenarioError(_join(path, "capacity"), self.capacity.text,
                                "a capacity needs a resistance to the line copper")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class ProbeSpec(_Section):
    """A named node whose temperature is reported, with an optional limit."""

    _what = "probe"
    name: str = _f("str", required=True)
    node: str | None = _f("str", doc="node name (default: the probe name)")
    limit: Quantity | None = _f("q", kind="temperature", check="kelvin")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class ElementSpec(_Section):
    """An extra lumped element: ``mass`` (a heat capacity joined to ``node`` through
    ``resistance``) or ``resistance`` (between two named nodes, e.g. a copper strap)."""

    _what = "element"
    kind: str = _f("choice", required=True, choices=("mass", "resistance"))
    name: str = _f("str", required=True)
    node: str | None = _f("str")
    between: tuple | None = _f("strpair")
    capacity: Quantity | None = _f("q", kind="capacity")
    resistance: Quantity | None = _f("q", kind="resistance")

    def check(self, path: str) -> None:
        _check_name(self.name, _join(path, "name"))
        need = {"mass": ("node", "capacity", "resistance"),
                "resistance": ("between", "resistance")}[self.kind]
        for key in ("node", "between", "capacity"):
            if getattr(self, key) is not None and key not in need:
                raise ScenarioError(_join(path, key), None,
                                    f"not a key of a {self.kind!r} element (expected "
                                    f"{', '.join(need)})")
        for key in need:
            if getattr(self, key) is None:
                raise ScenarioError(_join(path, key), None,
                                    f"missing; a {self.kind!r} element needs {', '.join(need)}")


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class ModelSpec(_Section):
    """How to model: ``fidelity`` ladder (columns of graded sub-layers) or axisymmetric;
    ``grading`` coarse/normal/fine; ``spreading`` calibrated (the default: each column
    matched to the exact layered spreading series), angle (a fixed frustum angle) or none;
    ``nonlinear`` k(T) of the materials; ``method`` solver name; ``periods`` shown in the
    warm-up plot."""

    _what = "model"
    fidelity: str | None = _f("choice", choices=("ladder", "axisymmetric"))
    grading: str | None = _f("choice", choices=("coarse", "normal", "fine"))
    spreading: str | None = _f("choice", choices=("angle", "calibrated", "none"))
    nonlinear: bool | None = _f("bool")
    method: str | None = _f("choice", choices=("auto", "modal", "sparse", "nonlinear"))
    periods: int | None = _f("int")


def _check_table_paths(scn: "Scenario") -> None:
    """Every table waveform's ``file`` inside the scenario's folder (or an allowed one),
    checked when the scenario is read, before anything is built; the file itself is read
    (regular files only, size capped) when the waveform is made."""
    from .safe_io import resolve_inside

    base = Path(scn.source).parent if scn.source else Path.cwd()

    def visit(spec: Any, path: str) -> None:
        if not isinstance(spec, WaveformSpec):
            return
        if spec.kind == "table" and spec.file is not None:
            try:
                resolve_inside(base, spec.file, scn.allow_paths)
            except (ValueError, OSError) as exc:
                raise ScenarioError(_join(path, "file"), spec.file, str(exc)) from None
        for i, st in enumerate(spec.stretches or ()):
            visit(st.power, f"{path}.stretches[{i}].power")

    for name, spec in (scn.waveforms or {}).items():
        visit(spec, f"waveforms.{name}")
    for sec, items in (("devices", scn.devices), ("lines", scn.lines),
                       ("heaters", scn.heaters)):
        for i, item in enumerate(items or ()):
            visit(item.power, f"{sec}[{i}].power")


#: Plausible material properties, SI (common practice, no source): conductivity from
#: aerogels to diamond, density from foams to tungsten, specific heat of solids.
_MATERIAL_RANGES = {"k": (1e-3, 1e4), "k_inplane": (1e-3, 1e4), "rho": (1.0, 1e5),
                    "c": (1.0, 1e5), "k_exponent": (-5.0, 5.0)}


def _check_materials(materials: dict | None) -> None:
    """Numbers of the scenario's own materials within :data:`_MATERIAL_RANGES` (a denormal
    conductivity divided by zero in the builder; 1e300 overflowed)."""
    from .units import parse_quantity as units_parse

    kinds = {"k": "conductivity", "k_inplane": "conductivity", "rho": "density",
             "c": "specific_heat", "k_exponent": "dimensionless"}
    for name, props in (materials or {}).items():
        where = _join("materials", str(name))
        _check_text_value(str(name), where)
        if not isinstance(props, dict):
            continue
        for key, (lo, hi) in _MATERIAL_RANGES.items():
            if key not in props:
                continue
            v = props[key]
            path = _join(where, key)
            try:
                if isinstance(v, bool) or not isinstance(v, (int, float, str)):
                    raise ValueError("not a number")
                x = float(units_parse(v, kinds[key], path) if isinstance(v, str) else v)
            except (ValueError, ArithmeticError):
                raise ScenarioError(path, v, f"a number in SI units from {lo:g} to {hi:g}") \
                    from None
            if not (math.isfinite(x) and lo <= x <= hi) and not (key == "k_exponent"
                                                                   and x == 0):
                raise ScenarioError(path, v, f"a plausible value from {lo:g} to {hi:g} (SI)")


def _check_profile_size(scn: "Scenario") -> None:
    """Profiles referring to named waveforms may nest and repeat (a profile of two stretches
    that both name the next profile doubles per level): refuse, before anything is built,
    nesting deeper than ``limits.MAX_PROFILE_DEPTH`` or more than
    ``limits.MAX_PROFILE_STRETCHES`` stretches once every reference is expanded.  Counted
    once per name (memoised), so the check itself is linear in the file."""
    from .limits import MAX_PROFILE_DEPTH, MAX_PROFILE_STRETCHES

    named = scn.waveforms or {}
    memo: dict[str, tuple[int, int]] = {}

    def size(spec: Any, path: str, stack: tuple[str, ...]) -> tuple[int, int]:
        """(depth, stretches after expansion) of a waveform spec or reference."""
        if isinstance(spec, str):
            if spec not in named:
                return 0, 1
            if spec in stack:
                raise ScenarioError(path, spec, "a waveform that does not refer to itself "
                                    f"(loop: {' -> '.join(stack + (spec,))})")
            if spec not in memo:
                memo[spec] = size(named[spec], f"waveforms.{spec}", stack + (spec,))
            return memo[spec]
        if not isinstance(spec, WaveformSpec) or not spec.stretches:
            return 0, 1
        depth, total = 0, 0
        for i, st in enumerate(spec.stretches):
            d, n = size(st.power, f"{path}.stretches[{i}].power", stack)
            depth, total = max(depth, d), total + n
        depth += 1
        if depth > MAX_PROFILE_DEPTH:
            raise ScenarioError(path, None, f"profiles nested {depth} deep; expected at most "
                                f"{MAX_PROFILE_DEPTH} levels")
        if total > MAX_PROFILE_STRETCHES:
            raise ScenarioError(path, None, f"a profile of {total} stretches once its named "
                                f"waveforms are expanded; expected at most "
                                f"{MAX_PROFILE_STRETCHES}")
        return depth, total

    for name in named:
        size(name, f"waveforms.{name}", ())
    for sec, items in (("devices", scn.devices), ("lines", scn.lines),
                       ("heaters", scn.heaters)):
        for i, item in enumerate(items or ()):
            size(item.power, f"{sec}[{i}].power", ())


def _unique(items: list[tuple[str, str]], what: str) -> None:
    seen: dict[str, str] = {}
    for name, path in items:
        if name in seen:
            raise ScenarioError(path, name, f"a unique {what} ({name!r} is also {seen[name]})")
        seen[name] = path


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class Scenario(_Section):
    """A whole scenario (see the module docstring).  Load with :func:`load` / :func:`loads`,
    change one value with :meth:`with_value`, write with :func:`save`."""

    _what = "scenario"
    name: str = _f("str", required=True)
    description: str | None = _f("str")
    ambient: Quantity | None = _f("q", kind="temperature", check="kelvin")
    coolant: Quantity | None = _f("q", kind="temperature", check="kelvin")
    model: ModelSpec | None = _f("section", cls=ModelSpec)
    board: BoardSpec | None = _f("section", cls=BoardSpec)
    mount: MountSpec = _f("section", cls=MountSpec, required=True)
    devices: tuple | None = _f("list", cls=DeviceSpec)
    lines: tuple | None = _f("list", cls=LineSpec)
    heaters: tuple | None = _f("list", cls=HeaterSpec)
    waveforms: dict | None = _f("map", cls=WaveformSpec)
    probes: tuple | None = _f("list", cls=ProbeSpec)
    elements: tuple | None = _f("list", cls=ElementSpec)
    materials: dict | None = _f("raw", doc="extra materials or overrides, SI numbers "
                                "(k, rho, c, ...) as in the material library")
    source: str | None = field(default=None, compare=False, repr=False)
    #: folders besides the scenario's own that table files may be read from (--allow-path)
    allow_paths: tuple = field(default=(), compare=False, repr=False)

    # -- checks across sections ---------------------------------------------------------
    def check(self, path: str) -> None:
        self._one_of(path or "ambient", ("ambient", "coolant"), exactly=False)
        sources = [*(self.devices or ()), *(self.lines or ()), *(self.heaters or ())]
        if not sources:
            raise ScenarioError("devices", None, "missing; a scenario needs at least one heat "
                                "source ([[devices]], [[lines]] or [[heaters]])")
        _unique([(d.name, f"devices[{i}].name") for i, d in enumerate(self.devices or ())]
                + [(d.name, f"lines[{i}].name") for i, d in enumerate(self.lines or ())]
                + [(d.name, f"heaters[{i}].name") for i, d in enumerate(self.heaters or ())]
                + [(d.name, f"elements[{i}].name") for i, d in enumerate(self.elements or ())],
                "name")
        _unique([(p.name, f"probes[{i}].name") for i, p in enumerate(self.probes or ())],
                "probe name")
        for sec, items in (("devices", self.devices), ("lines", self.lines),
                           ("heaters", self.heaters)):
            for i, item in enumerate(items or ()):
                self._check_wave_ref(item.power, f"{sec}[{i}].power")
        for name, w in (self.waveforms or {}).items():
            for i, s in enumerate(w.stretches or ()):
                self._check_wave_ref(s.power, f"waveforms.{name}.stretches[{i}].power",
                                     allow_power=True)
        lines = [ln.name for ln in self.lines or ()]
        for i, h in enumerate(self.heaters or ()):
            if h.line is not None and h.line not in lines:
                close = difflib.get_close_matches(h.line, lines, n=1)
                hint = f"did you mean {close[0]!r}? " if close else ""
                raise ScenarioError(f"heaters[{i}].line", h.line,
                                    f"a line of the scenario; {hint}lines: "
                                    f"{', '.join(lines) or 'none'}")
        if self.lines and self.board is None:
            raise ScenarioError("board", None, "missing; a line needs a board (its laminate "
                                "and ground plane)")
        _check_profile_size(self)
        _check_materials(self.materials)

    def _check_wave_ref(self, ref: Any, path: str, allow_power: bool = False) -> None:
        if not isinstance(ref, str):
            return
        names = list(self.waveforms or {})
        if ref in names:
            return
        if allow_power or re.match(r"^\s*[-+0-9.]", ref):
            try:
                parse_quantity(ref, "power", path)
                return
            except ScenarioError:
                if not allow_power:
                    raise
        close = difflib.get_close_matches(ref, names, n=1)
        hint = f"did you mean {close[0]!r}? " if close else ""
        raise ScenarioError(path, ref, f"a waveform defined in [waveforms] or a constant "
                            f"power such as '2 W'; {hint}defined: {', '.join(names) or 'none'}")

    # -- convenience --------------------------------------------------------------------
    @property
    def ambient_K(self) -> float:
        """Coolant (or ambient) temperature, K; 25 degC when neither is given."""
        q = self.coolant or self.ambient
        return q.value if q is not None else 25.0 + KELVIN_OFFSET

    @property
    def ambient_C(self) -> float:
        return self.ambient_K - KELVIN_OFFSET

    def to_dict(self) -> dict[str, Any]:
        """Plain dict of the scenario as written (unit strings kept)."""
        return _dump_section(self)

    @classmethod
    def from_dict(cls, data: dict[str, Any], source: str | None = None,
                  text: str | None = None, allow_paths: tuple = ()) -> "Scenario":
        """Read a scenario from a dict (as :func:`tomllib.loads` gives).  ``allow_paths``:
        folders besides the scenario's own that table files may be read from."""
        try:
            scn = _load_section(cls, data, "")
        except ScenarioError as exc:
            raise exc.located(text, source) from None
        object.__setattr__(scn, "source", source)
        object.__setattr__(scn, "allow_paths", tuple(str(p) for p in allow_paths))
        try:
            _check_table_paths(scn)
        except ScenarioError as exc:
            raise exc.located(text, source) from None
        return scn

    def with_value(self, path: str, value: Any) -> "Scenario":
        """A copy with the value at ``path`` replaced (``mount.sink.resistance``,
        ``devices[0].limit``, ``devices[pa].limit``, ``waveforms.radar.width``); the new
        scenario is validated like a loaded one."""
        try:
            new = _with_leaf(self, _path_parts(path), value, "")
            if new is not None:
                object.__setattr__(new, "source", self.source)
                object.__setattr__(new, "allow_paths", self.allow_paths)
                _check_table_paths(new)
        except ScenarioError as exc:
            raise exc.located(None, self.source) from None
        if new is None:             # not a plain key of a loaded table: the long way
            data = self.to_dict()
            set_path(data, path, value)
            return Scenario.from_dict(data, source=self.source, allow_paths=self.allow_paths)
        return new

    def get_value(self, path: str) -> Any:
        """The value at ``path`` as written (a unit string, a number, ...)."""
        return get_path(self.to_dict(), path)


def _with_leaf(obj: Any, parts: list[str], value: Any, where: str) -> Any:
    """``obj`` (a loaded section) with the key at ``parts`` set to ``value``, as loading
    the edited dict form would give it, or None when the key is not a key of a loaded
    table (an unknown key, a table not in the scenario, a name not in a list: the caller
    reloads the whole dict form, whose message names the problem).

    Only the tables on the path are rebuilt: the value is converted as the loader
    converts that key, and each rebuilt table runs its checks from the innermost out, in
    the order a full load runs them (the others were checked when the scenario was
    loaded and are unchanged).  Paths in messages are the loader's (list elements by
    index)."""
    schema = _schema(type(obj))
    f = schema.get(parts[0]) if parts else None
    if f is None:
        return None
    meta, here = f.metadata, _join(where, parts[0])
    if len(parts) == 1:
        new = _convert(meta, value, here)
    else:
        child = getattr(obj, f.name)
        tag = meta["tag"]
        if tag == "section" and child is not None:
            new = _with_leaf(child, parts[1:], value, here)
        elif tag == "list" and child and len(parts) > 2 and parts[1].startswith("["):
            key = parts[1][1:-1]
            names = [getattr(x, "name", None) for x in child]
            i = int(key) if key.isdigit() else names.index(key) if key in names else None
            if i is None or i >= len(child):
                return None
            item = _with_leaf(child[i], parts[2:], value, _join(here, i))
            new = None if item is None else child[:i] + (item,) + child[i + 1:]
        elif tag == "map" and child and parts[1] in child and len(parts) > 2:
            item = _with_leaf(child[parts[1]], parts[2:], value, _join(here, parts[1]))
            new = None if item is None else {**child, parts[1]: item}
        else:
            return None
        if new is None:
            return None
    out = dataclasses.replace(obj, **{f.name: new})
    out.check(where)
    return out


# ======================================================================================
# Paths into the dict form
# ======================================================================================
def _walk(data: dict, path: str, create: bool):
    parts = _path_parts(path)
    if not parts:
        raise ScenarioError(path, None, "a key path such as mount.sink.resistance")
    node: Any = data
    trail = ""
    for i, part in enumerate(parts[:-1]):
        node, trail = _step(node, part, trail, path, create)
    return node, parts[-1], trail


def _step(node: Any, part: str, trail: str, path: str, create: bool):
    if part.startswith("["):
        key = part[1:-1]
        if not isinstance(node, list):
            raise ScenarioError(path, None, f"{trail or 'the scenario'} is not an array")
        if key.isdigit():
            idx = int(key)
            if idx >= len(node):
                raise ScenarioError(path, None, f"{trail} has {len(node)} element(s); index "
                                    f"{idx} is out of range")
            return node[idx], f"{trail}[{idx}]"
        names = [x.get("name") for x in node if isinstance(x, dict)]
        if key not in names:
            raise ScenarioError(path, None, f"no element of {trail} is named {key!r} "
                                f"(names: {', '.join(map(str, names))})")
        return node[names.index(key)], f"{trail}[{key}]"
    if not isinstance(node, dict):
        raise ScenarioError(path, None, f"{trail} is not a table")
    if part not in node:
        if not create:
            raise ScenarioError(path, None, f"{_join(trail, part)} is not set in the scenario")
        node[part] = {}
    return node[part], _join(trail, part)


def get_path(data: dict, path: str) -> Any:
    node, last, trail = _walk(data, path, create=False)
    return _step(node, last, trail, path, create=False)[0]


def set_path(data: dict, path: str, value: Any) -> None:
    """Set ``value`` at ``path`` in the dict form, creating missing tables."""
    node, last, trail = _walk(data, path, create=True)
    if last.startswith("["):
        key = last[1:-1]
        if not (isinstance(node, list) and key.isdigit() and int(key) < len(node)):
            raise ScenarioError(path, None, f"{trail} has no element {last}")
        node[int(key)] = value
        return
    if not isinstance(node, dict):
        raise ScenarioError(path, None, f"{trail} is not a table")
    node[last] = value


# ======================================================================================
# Load and save
# ======================================================================================
def loads(text: str, source: str | None = None, allow_paths: tuple = ()) -> Scenario:
    """Read a scenario from TOML text; :class:`ScenarioError` with the line on failure.

    Hostile text is refused before it is parsed (:mod:`pulsetherm.network.limits`): more
    than ``MAX_SCENARIO_BYTES`` or brackets nested deeper than ``MAX_NESTING``."""
    from .limits import check_text

    text = text.lstrip("\ufeff")         # a UTF-8 byte-order mark read as text
    check_text(text, source)
    try:
        data = tomllib.loads(text)
    except RecursionError:
        raise ScenarioError("", None, "values nested too deeply to read", None,
                            source) from None
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
        line = int(m.group(1)) if m else None
        msg = re.sub(r"\s*\(at line \d+, column \d+\)", "", str(exc))
        raise ScenarioError("", None, f"TOML syntax: {msg}", line, source) from None
    return Scenario.from_dict(data, source=source, text=text, allow_paths=allow_paths)


def load(path: str | Path, allow_paths: tuple = ()) -> Scenario:
    """Read a scenario file; ``allow_paths``: folders besides its own that its table files
    may be read from (``--allow-path``)."""
    from .safe_io import read_text

    p = Path(path)
    text = read_text(p, "scenario")       # regular files only, size capped, UTF-8 (BOM ok)
    return loads(text, source=str(p), allow_paths=tuple(allow_paths))


def dumps(scenario: Scenario) -> str:
    """TOML text of ``scenario`` with every value as written (unit strings kept)."""
    return dumps_toml(scenario.to_dict())


def save(scenario: Scenario, path: str | Path) -> None:
    """Write ``scenario`` as TOML (to a temporary file first, then renamed)."""
    with atomic_open(path) as fh:
        fh.write(dumps(scenario))


@contextlib.contextmanager
def atomic_open(path: str | Path, mode: str = "w", newline: str | None = None) -> Iterator[Any]:
    """Open a temporary file beside ``path``; rename it onto ``path`` only when the ``with``
    block ends without an exception (else the temporary file is removed), so a failed write
    never leaves a partial file.  ``mode`` is ``"w"`` (UTF-8 text) or ``"wb"``.  Regular
    files only, the user's umask, symbolic links followed to a regular file:
    :func:`pulsetherm.network.safe_io.atomic_open`."""
    from .safe_io import atomic_open as _atomic

    with _atomic(path, mode, newline) as fh:
        yield fh


# ======================================================================================
# Numbers in the user's unit (sweeps, sizing, Monte Carlo)
# ======================================================================================
class _Num:
    """``^number unit$`` without backtracking: the number is matched unambiguously and the
    unit is the stripped rest (the old pattern, with an ambiguous digit run and a lazy
    unit group before trailing blanks, took seconds on a 2000-digit number)."""

    _HEAD = re.compile(r"\s*([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)")

    class _M:
        def __init__(self, number: str, unit: str) -> None:
            self._g = (number, unit)

        def group(self, i: int) -> str:
            return self._g[i - 1]

    def match(self, text: str):
        if len(text) > 400:
            return None
        m = self._HEAD.match(text)
        if not m:
            return None
        return self._M(m.group(1), text[m.end():].strip())


_NUM = _Num()


def parse_literal(text: str) -> Any:
    """A value typed on the command line (``--set``, ``--vary``): a TOML literal when it is
    one (numbers, true/false, quoted strings, lists), else the plain text (``30 degC``)."""
    if len(text) > 10_000:
        return text      # refused by the key's own check, never parsed as a deep literal
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except (tomllib.TOMLDecodeError, RecursionError):
        return text


def split_unit(text: str) -> tuple[float, str]:
    """``"0.35 K/W"`` -> ``(0.35, "K/W")``; ValueError if the text does not start with a
    number."""
    m = _NUM.match(text)
    if not m:
        raise ValueError(f"{text!r}: expected a number followed by a unit")
    return float(m.group(1)), m.group(2)


@dataclass(frozen=True, eq=False, repr=False)   # ==, hash, repr: FieldMethods
class UnitScale(FieldMethods):
    """The affine map between a unit and SI: ``si = offset + factor * x`` (affine for
    degC / degF, linear otherwise)."""

    unit: str
    kind: str
    offset: float
    factor: float

    @classmethod
    def of(cls, unit: str, kind: str, path: str) -> "UnitScale":
        zero = parse_quantity(f"0 {unit}".strip(), kind, path).value
        one = parse_quantity(f"1 {unit}".strip(), kind, path).value
        if not one != zero:
            raise ScenarioError(path, unit, f"a unit of {kind}")
        return cls(unit, kind, zero, one - zero)

    def to_si(self, x: float) -> float:
        return self.offset + self.factor * x

    def from_si(self, v: float) -> float:
        return (v - self.offset) / self.factor

    def text(self, x: float) -> str:
        """The number ``x`` (in this unit) as a scenario string, 10 significant digits."""
        s = f"{x:.10g}"
        return f"{s} {self.unit}" if self.unit else s


def field_kind(scenario: "Scenario", path: str) -> str | None:
    """Quantity kind of the field at ``path`` (None for a non-quantity field)."""
    parts = [p for p in _path_parts(path) if not p.startswith("[")]
    cls: Any = type(scenario)
    meta = None
    for i, part in enumerate(parts):
        schema = _schema(cls)
        if part not in schema:
            if meta is not None and meta["tag"] == "map":
                cls = meta["cls"]
                meta = None
                continue
            close = difflib.get_close_matches(part, list(schema), n=1)
            hint = f"did you mean {close[0]!r}? " if close else ""
            raise ScenarioError(path, None, f"not a key of the scenario ({part!r}); {hint}"
                                f"known keys here: {', '.join(schema)}")
        meta = schema[part].metadata
        if meta["tag"] in ("section", "list", "map"):
            cls = meta["cls"]
    if meta is None:
        return None
    if meta["tag"] in ("q", "qpair", "qlist"):
        return meta["kind"]
    if meta["tag"] == "wave":
        return "power"
    return None
