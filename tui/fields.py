"""The form's fields: which keys an item of the scenario has, and reading what was typed.

The scenario schema (the dataclasses of :mod:`pulsetherm.network.scenario` and their field
metadata) says which keys a section has and of what kind; a waveform or a sink shows only
the keys of its ``kind``.  :func:`read_field` turns typed text into the TOML value to store
(a bare number in a quantity field takes the unit of the value it replaces) and refuses
text that is not a value of the field's kind, naming the field and what is expected.
"""
from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass
from typing import Any

__all__ = ["FieldSpec", "section_class", "form_fields", "read_field", "show_value",
           "kind_defaults", "KIND_SWITCH"]

#: A unit to show in an empty field's example, by quantity kind.
_EXAMPLE_UNIT = {"length": "mm", "time": "us", "power": "W", "temperature": "degC",
                 "resistance": "K/W", "capacity": "J/K", "frequency": "GHz", "area": "mm2",
                 "area_resistance": "K mm2/W", "h": "W/(m2 K)", "angle": "deg",
                 "impedance": "ohm", "difference": "K"}

#: Tags shown as a child in the tree, not as a field of the form.
_CHILD_TAGS = ("section", "list", "map", "raw")


@dataclass(frozen=True)
class FieldSpec:
    """One field of the form: key, full path, schema tag, quantity kind, choices, value."""

    key: str
    path: str
    tag: str
    kind: str | None
    choices: tuple[str, ...]
    required: bool
    doc: str
    value: Any

    @property
    def placeholder(self) -> str:
        """What an empty field shows (the example unit is in :attr:`example`)."""
        return "unset"

    @property
    def example(self) -> str:
        """A short example value (shown in the field's tooltip)."""
        if self.tag in ("q", "qpair", "qlist"):
            u = _EXAMPLE_UNIT.get(self.kind or "", "")
            one = f"1 {u}".strip()
            return {"qpair": f"{one}, {one}", "qlist": f"{one}, …"}.get(self.tag, one)
        return self.hint

    @property
    def hint(self) -> str:
        if self.tag in ("q", "qpair", "qlist"):
            many = {"qpair": "x, y ", "qlist": "list of "}.get(self.tag, "")
            return f"{many}{self.kind.replace('_', ' ')} + unit"
        if self.tag == "wave":
            return "waveform name or '5 W'"
        return {"int": "a whole number", "number": "a number", "bool": "true or false",
                "str": "text", "strpair": "two names, comma-separated",
                "choice": " / ".join(self.choices)}.get(self.tag, self.tag)


def _parts(path: str) -> list[str]:
    return [p for p in re.split(r"\.(?![^\[]*\])|(?=\[)", path) if p]


def section_class(path: str):
    """The schema class of the table at ``path`` (``devices[0].stack[1]`` -> LayerSpec)."""
    from pulsetherm.network.scenario import Scenario

    cls: Any = Scenario
    meta = None
    for part in _parts(path):
        if part.startswith("["):
            continue
        fields = {f.name: f for f in dataclasses.fields(cls)}
        if part not in fields:
            if meta is not None and meta["tag"] == "map":  # a named waveform
                meta = None
                continue
            raise KeyError(path)
        meta = fields[part].metadata
        if meta.get("cls") is not None:
            cls = meta["cls"]
    return cls


def _allowed(cls, table: dict[str, Any]) -> set[str] | None:
    from pulsetherm.network.scenario import SINK_KEYS, WAVEFORM_KEYS

    name = cls.__name__
    kind = table.get("kind")
    if name == "WaveformSpec" and kind in WAVEFORM_KEYS:
        return {"kind", "delay", *WAVEFORM_KEYS[kind]}
    if name == "SinkSpec" and kind in SINK_KEYS:
        return {"kind", *SINK_KEYS[kind]}
    if name == "LayerSpec" and "area_resistance" in table:
        return {"name", "area_resistance"}
    return None


def form_fields(data: dict[str, Any], path: str) -> list[FieldSpec]:
    """Fields of the table at ``path`` in the plain dict ``data`` (keys as the schema
    orders them; tables and arrays of tables are left to the tree)."""
    from pulsetherm.network.scenario import get_path

    try:
        table = get_path(data, path) if path else data
    except ValueError:  # a section not written yet (``model``): its fields start unset
        table = {}
    cls = section_class(path)
    allowed = _allowed(cls, table)
    out = []
    for f in dataclasses.fields(cls):
        meta = f.metadata
        if not meta or meta["tag"] in _CHILD_TAGS:
            continue
        if meta["tag"] == "wave" and isinstance(table.get(f.name), dict):
            continue  # an inline waveform table: edited as a child
        if allowed is not None and f.name not in allowed:
            continue
        full = f"{path}.{f.name}" if path else f.name
        out.append(FieldSpec(f.name, full, meta["tag"], meta["kind"], tuple(meta["choices"]),
                             bool(meta["required"]), meta["doc"], table.get(f.name)))
    return out


def show_value(value: Any) -> str:
    """A stored value as the form shows it."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (list, tuple)):
        return ", ".join(show_value(v) for v in value)
    return str(value)


def _unit_of(old: Any) -> str:
    from pulsetherm.network.scenario import split_unit

    if isinstance(old, (list, tuple)) and old:
        old = old[0]
    if isinstance(old, str):
        try:
            return split_unit(old)[1]
        except ValueError:
            return ""
    return ""


def _quantity(text: str, spec: FieldSpec, unit: str) -> str:
    from pulsetherm.network.scenario import ScenarioError, parse_quantity

    t = text.strip()
    if re.fullmatch(r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?", t) and unit:
        t = f"{t} {unit}"
    q = parse_quantity(t, spec.kind, spec.path)
    check = "positive"
    if spec.key in ("position",):
        check = "any"
    if spec.key in ("delay", "gap", "rise", "fall", "capacity", "spreading_angle",
                    "roughness", "power", "peak", "idle", "after"):
        check = "nonneg"
    if spec.kind == "temperature":
        check = "kelvin"
    if check == "positive" and not q.value > 0:
        raise ScenarioError(spec.path, t, f"a {spec.kind.replace('_', ' ')} > 0")
    if check == "nonneg" and not q.value >= 0:
        raise ScenarioError(spec.path, t, f"a {spec.kind.replace('_', ' ')} >= 0")
    return t


def read_field(spec: FieldSpec, text: str) -> Any:
    """The value to store for ``text`` typed in ``spec``'s field; None means "remove the
    key" (an empty optional field).  Raises ScenarioError naming the field."""
    from pulsetherm.network.scenario import ScenarioError, parse_literal

    t = text.strip()
    if not t:
        if spec.required:
            raise ScenarioError(spec.path, "", "a value (this key is required)")
        return None
    tag = spec.tag
    unit = _unit_of(spec.value)
    if tag == "q":
        return _quantity(t, spec, unit)
    if tag in ("qpair", "qlist", "strpair"):
        items = [x.strip() for x in t.strip("[]").split(",") if x.strip()]
        if tag == "strpair":
            if len(items) != 2:
                raise ScenarioError(spec.path, t, "two names, comma-separated")
            return items
        if tag == "qpair" and len(items) not in (1, 2):
            raise ScenarioError(spec.path, t, "one or two comma-separated values")
        if not items:
            raise ScenarioError(spec.path, t, "at least one value")
        return [_quantity(x, spec, _unit_of(x) or unit) for x in items]
    if tag == "choice":
        if t not in spec.choices:
            raise ScenarioError(spec.path, t, "one of " + ", ".join(spec.choices))
        return t
    v = parse_literal(t)
    if tag == "bool":
        if not isinstance(v, bool):
            raise ScenarioError(spec.path, t, "true or false")
        return v
    if tag == "int":
        if isinstance(v, bool) or not isinstance(v, int) or v < 1:
            raise ScenarioError(spec.path, t, "a whole number >= 1")
        return v
    if tag == "number":
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise ScenarioError(spec.path, t, "a number")
        return v
    return t  # str, wave


#: Tables whose ``kind`` swaps the form's fields, with the keys a new kind starts with.
KIND_SWITCH: dict[str, dict[str, dict[str, Any]]] = {
    "SinkSpec": {"fixed": {},
                 "lumped": {"resistance": "0.5 K/W", "capacity": "50 J/K"},
                 "film": {"h": "2000 W/(m2 K)"}},
    "WaveformSpec": {"constant": {"power": "10 W"},
                     "pulses": {"peak": "50 W", "width": "100 us", "period": "1 ms"},
                     "burst": {"peak": "50 W", "width": "20 us", "pri": "100 us",
                               "pulses": 4, "period": "2 ms"},
                     "stagger": {"peak": "50 W", "intervals": ["100 us", "140 us", "120 us"],
                                 "widths": ["10 us", "10 us", "10 us"]},
                     "profile": {"stretches": [{"duration": "1 s", "power": "20 W"},
                                               {"duration": "1 s", "power": "2 W"}],
                                 "periodic": True}},
}


def kind_defaults(cls_name: str, old: dict[str, Any], kind: str) -> dict[str, Any]:
    """The table after switching ``old`` to ``kind``: levels the new kind shares with the
    old one are kept (a pulse's peak stays the burst's peak), timings and the rest start
    from :data:`KIND_SWITCH`."""
    from pulsetherm.network.scenario import SINK_KEYS, WAVEFORM_KEYS

    keys = SINK_KEYS[kind] if cls_name == "SinkSpec" else (*WAVEFORM_KEYS[kind], "delay")
    new: dict[str, Any] = {"kind": kind}
    for key, value in KIND_SWITCH[cls_name][kind].items():
        new[key] = value
    # levels and the sink's own numbers carry over; timings start from the defaults
    # (a pulse width kept from a train could exceed a burst's repetition interval)
    carry = ("peak", "idle", "power", "delay", "resistance", "capacity", "h", "area")
    for key in keys:
        if key in old and key in carry:
            new[key] = old[key]
    return new
