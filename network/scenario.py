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

import dataclasses
import difflib
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterator

__all__ = [
    "ScenarioError", "Quantity", "Scenario", "load", "loads", "save", "dumps",
    "dumps_toml", "find_line", "KELVIN_OFFSET",
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
        key = self.path or "(file)"
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
_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]]+?)\s*\]\]?\s*(#.*)?$")
_KEYVAL = re.compile(r"""^\s*((?:[A-Za-z0-9_\-]+|"[^"]*"|'[^']*')(?:\s*\.\s*(?:[A-Za-z0-9_\-]+|"[^"]*"|'[^']*'))*)\s*=""")


def _split_dotted(key: str) -> list[str]:
    parts = re.findall(r"""[A-Za-z0-9_\-]+|"[^"]*"|'[^']*'""", key)
    return [p[1:-1] if p[:1] in "\"'" else p for p in parts]


def _path_parts(path: str) -> list[str]:
    """``devices[0].stack[2].thickness`` -> ``['devices', '[0]', 'stack', '[2]', 'thickness']``."""
    out: list[str] = []
    for m in re.finditer(r"\[(\d+)\]|\"([^\"]*)\"|([^.\[\]]+)", path):
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
    found: dict[str, int] = {}
    counts: dict[str, int] = {}
    prefix: list[str] = []
    depth = 0  # open brackets of a multi-line value: skip its lines
    for no, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if depth > 0:
            depth += _bracket_balance(line)
            continue
        if not line or line.startswith("#"):
            continue
        mh = _HEADER.match(line)
        if mh and not _KEYVAL.match(line):
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
        mk = _KEYVAL.match(line)
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
