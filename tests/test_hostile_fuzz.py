"""Property fuzzing of the input edge (issue 10): the unit parser, the scenario quantity
reader and the scenario loader raise only the project's own error types (``UnitError``,
``ScenarioError``; both ``ValueError`` subclasses) on any input, and return finite numbers
when they accept.  Common practice, no source.
"""
from __future__ import annotations

import math
import tomllib

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from pulsetherm.network import scenario as scn_mod
from pulsetherm.network.scenario import QUANTITY_KINDS, ScenarioError, loads
from pulsetherm.network.units import KINDS, UnitError, parse_quantity, parse_range

SETTINGS = settings(max_examples=300, deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.too_slow])

# text built from the pieces units are made of, plus anything at all
_PIECES = st.sampled_from(["1", "0", "9" * 30, ".", "e", "E", "-", "+", "/", "^", "(", ")",
                           " ", "*", "·", "²", "µ", "m", "mm", "W", "K", "degC", "°C",
                           "dBm", "oz", "%", "s", "Hz", "kW", "J", "kg", "mil", "mils", "ohm",
                           "inf", "nan", "\x1b", "\x00", "\u202e", "1e308", "1e-320", "99",
                           "..", ":", ",", "[", "]", "log", "step"])
UNIT_TEXT = st.one_of(st.lists(_PIECES, max_size=12).map("".join), st.text(max_size=40))


@SETTINGS
@given(text=UNIT_TEXT, kind=st.sampled_from(sorted(KINDS)))
def test_unit_parser_raises_only_unit_error(text, kind):
    try:
        value = parse_quantity(text, kind, "f")
    except UnitError:
        return
    assert math.isfinite(value)


@SETTINGS
@given(text=UNIT_TEXT, kind=st.sampled_from(sorted(KINDS)))
def test_sweep_ranges_raise_only_unit_error(text, kind):
    try:
        values = parse_range(text, kind, "f")
    except UnitError:
        return
    assert all(math.isfinite(v) for v in values)


@SETTINGS
@given(text=st.one_of(UNIT_TEXT, st.integers(), st.floats(), st.booleans(), st.none()),
       kind=st.sampled_from(sorted(QUANTITY_KINDS)))
def test_scenario_quantities_raise_only_scenario_error(text, kind):
    try:
        q = scn_mod.parse_quantity(text, kind, "k")
    except ScenarioError:
        return
    assert math.isfinite(q.value)


BASE = tomllib.loads("""
name = "fuzz"
coolant = "40 degC"
[waveforms.p]
kind = "pulses"
peak = "50 W"
width = "100 us"
period = "1 ms"
[mount.sink]
kind = "fixed"
[[devices]]
name = "pa"
power = "p"
footprint = ["3 mm", "3 mm"]
foster = { R = ["0.2 K/W"], tau = ["10 us"] }
[[devices.stack]]
name = "flange"
material = "copper"
thickness = "1 mm"
""")

LEAF = st.one_of(UNIT_TEXT, st.integers(min_value=-10**30, max_value=10**30), st.floats(),
                 st.booleans())
VALUE = st.recursive(LEAF, lambda inner: st.one_of(st.lists(inner, max_size=3),
                                                   st.dictionaries(st.text(max_size=8),
                                                                   inner, max_size=3)),
                     max_leaves=8)


def _paths(node, path=()):
    if isinstance(node, dict):
        for k, v in node.items():
            yield path + (k,)
            yield from _paths(v, path + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield path + (i,)
            yield from _paths(v, path + (i,))


PATHS = sorted(_paths(BASE), key=str)


@SETTINGS
@given(where=st.sampled_from(PATHS), value=VALUE)
def test_loader_raises_only_scenario_error_on_any_value(where, value):
    import copy

    data = copy.deepcopy(BASE)
    node = data
    for p in where[:-1]:
        node = node[p]
    node[where[-1]] = value
    try:
        scn_mod.Scenario.from_dict(data)
    except ScenarioError:
        pass


@SETTINGS
@given(text=st.text(max_size=300))
def test_loader_raises_only_scenario_error_on_any_text(text):
    try:
        loads(text)
    except ScenarioError:
        pass
