"""Scenario files: TOML writer, key-line finder, load/save round trip, error paths
(common practice, no source: the schema is ours)."""
from __future__ import annotations

import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from pulsetherm.network.scenario import (ScenarioError, dumps, dumps_toml, find_line, load,
                                         loads)
from pulsetherm_test_systems import dataclass_twin  # tests/_systems.py, by conftest

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))

keys = st.text(alphabet=st.characters(codec="utf-8", exclude_categories=("Cs",)), min_size=1,
               max_size=8)
scalars = st.one_of(st.booleans(), st.integers(-10**6, 10**6),
                    st.floats(allow_nan=False), st.text(max_size=12))
tables = st.recursive(
    st.dictionaries(keys, st.one_of(scalars, st.lists(scalars, max_size=3)), max_size=4),
    lambda inner: st.dictionaries(keys, st.one_of(inner, st.lists(inner, min_size=1,
                                                                   max_size=2)), max_size=3),
    max_leaves=12)


@settings(max_examples=60, deadline=None)
@given(tables)
def test_writer_round_trips_through_tomllib(data):
    """tomllib reads back exactly what the writer wrote."""
    assert tomllib.loads(dumps_toml(data)) == data


def test_writer_special_floats():
    out = tomllib.loads(dumps_toml({"a": math.inf, "b": -math.inf, "c": 1.0, "d": 1e-300}))
    assert out["a"] == math.inf and out["b"] == -math.inf and out["d"] == 1e-300
    assert math.isnan(tomllib.loads(dumps_toml({"n": math.nan}))["n"])


TEXT = """name = "x"
coolant = "20 degC"

[mount.sink]
kind = "fixed"

[[devices]]
name = "a"
power = "1 W"
footprint = ["1 mm", "1 mm"]
rth = "1 K/W"

[[devices]]
name = "b"
power = "2 W"
footprint = ["1 mm", "1 mm"]

[[devices.stack]]
material = "copper"
thickness = "1 mm"

[[devices.stack]]
material = "silicon"
thickness = "-1 mm"
"""


def test_find_line_counts_arrays_of_tables():
    assert find_line(TEXT, "devices[1].stack[1].thickness") == 24
    assert find_line(TEXT, "devices[0].rth") == 11
    assert find_line(TEXT, "mount.sink.kind") == 5
    # a key not in the text: the nearest enclosing key
    assert find_line(TEXT, "devices[1].stack[1].size") == 22
    assert find_line(TEXT, "nothing.here") is None


def test_error_names_path_value_expected_and_line():
    with pytest.raises(ScenarioError) as exc:
        loads(TEXT, source="t.toml")
    e = exc.value
    assert e.path == "devices[1].stack[1].thickness"
    assert e.value == "-1 mm"
    assert "> 0" in e.expected
    assert e.line == 24
    assert str(e).startswith("t.toml:24: devices[1].stack[1].thickness = '-1 mm'")


def test_unknown_key_gets_did_you_mean():
    with pytest.raises(ScenarioError) as exc:
        loads(TEXT.replace('rth = "1 K/W"', 'rht = "1 K/W"'))
    assert exc.value.path == "devices[0].rht"
    assert "did you mean 'rth'" in str(exc.value)
    assert exc.value.line == 11


def test_bare_number_is_refused_with_unit_hint():
    with pytest.raises(ScenarioError) as exc:
        loads(TEXT.replace('"-1 mm"', "0.001"))
    assert "unit" in str(exc.value) and exc.value.path == "devices[1].stack[1].thickness"


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_examples_round_trip_keeps_every_value(path, tmp_path):
    """save(load(f)) reads back equal, with the original unit strings."""
    scn = load(path)
    out = tmp_path / "again.toml"
    from pulsetherm.network.scenario import save

    save(scn, out)
    again = load(out)
    assert again.to_dict() == scn.to_dict()
    assert again.to_dict() == tomllib.loads(path.read_text())
    assert dumps(again) == out.read_text()




def test_with_value_by_index_and_by_name():
    scn = loads(TEXT.replace('"-1 mm"', '"1 mm"'))
    a = scn.with_value("devices[b].stack[1].thickness", "20 mil")
    assert a.devices[1].stack[1].thickness.text == "20 mil"
    assert a.devices[1].stack[1].thickness.value == pytest.approx(0.508e-3)
    b = a.with_value("devices[0].rth", "0.35 K/W")
    assert b.devices[0].rth.value == 0.35
    with pytest.raises(ScenarioError):
        scn.with_value("devices[5].rth", "1 K/W")
    with pytest.raises(ScenarioError) as exc:
        scn.with_value("devices[0].rth", "-1 K/W")
    assert exc.value.path == "devices[0].rth"



def _leaves(data, path=""):
    """Every key path of a scenario's dict form whose value is not a table, with it."""
    if isinstance(data, dict):
        for k, v in data.items():
            yield from _leaves(v, f"{path}.{k}" if path else k)
    elif isinstance(data, list) and data and all(isinstance(x, dict) for x in data):
        for i, v in enumerate(data):
            yield from _leaves(v, f"{path}[{i}]")
    else:
        yield path, data


def _edits(value):
    """Values to set at a leaf: itself, and changed ones (a scaled number, another unit,
    text that is no quantity, a negative)."""
    out = [value]
    if isinstance(value, str):
        head, _, unit = value.partition(" ")
        try:
            x = float(head)
        except ValueError:
            out.append(value + "x")
        else:
            out += [f"{x * 1.5:g} {unit}".strip(), f"{-x - 1:g} {unit}".strip(),
                    f"{x:g} furlong"]
    elif isinstance(value, bool):
        out.append(not value)
    elif isinstance(value, (int, float)):
        out += [value * 2, -value - 1]
    return out


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_with_value_rebuilds_the_path_as_a_full_reload_does(path):
    """with_value rebuilds only the tables on the key's path; for every key of every
    example, set to itself and to changed or bad values, the scenario (or the error
    message) equals loading the edited dict form whole.  Common practice, no source."""
    from pulsetherm.network.scenario import Scenario, set_path

    scn = load(path)
    checked = 0
    for key, value in _leaves(scn.to_dict()):
        for v in _edits(value):
            data = scn.to_dict()
            set_path(data, key, v)
            try:
                want, err = Scenario.from_dict(data, source=scn.source), None
            except ScenarioError as exc:
                want, err = None, str(exc)
            if err is None:
                got = scn.with_value(key, v)
                assert got == want and got.source == want.source, (key, v)
                assert got.to_dict() == want.to_dict(), (key, v)
            else:
                with pytest.raises(ScenarioError) as exc:
                    scn.with_value(key, v)
                assert str(exc.value) == err, (key, v)
            checked += 1
    assert checked > 40

def test_the_four_required_shapes_load():
    """A data-sheet device on an ideal cold plate, a bare stack on a fixed base, a line
    with a point heater, several devices on one sink (the shipped examples cover the last
    two; the first two are written here)."""
    datasheet = """name = "ds"
coolant = "40 degC"
[mount.sink]
kind = "fixed"
[waveforms.p]
kind = "pulses"
peak = "50 W"
width = "100 us"
period = "1 ms"
[[devices]]
name = "pa"
power = "p"
footprint = "5 mm"
foster = { R = ["0.2 K/W", "0.5 K/W", "1.3 K/W"], tau = ["10 us", "1 ms", "100 ms"] }
"""
    bare = """name = "bare"
coolant = "25 degC"
[mount.sink]
kind = "fixed"
[[devices]]
name = "die"
power = "3 W"
footprint = ["1 mm", "1 mm"]
[[devices.stack]]
material = "silicon"
thickness = "1 mm"
size = ["1 mm", "1 mm"]
"""
    for text in (datasheet, bare):
        scn = loads(text)
        assert loads(dumps(scn)).to_dict() == scn.to_dict()


def test_via_field_of_a_laminate_layer():
    """Square grid of 0.30 mm drills, 25 um plating, pitch 0.6 / 1.0 mm, laminate k 0.3,
    empty: k_z,eff 23.6 / 8.7 W/(m K) (physics brief §7, derived from the area-fraction
    rule)."""
    from pulsetherm.network.materials import default_library
    from pulsetherm.network.scenario import ViaSpec, _load_section
    from pulsetherm.network.simulate import _vias

    lib = default_library()
    lib.update({"lam03": {"k": 0.3, "rho": 1850.0, "c": 1150.0}})
    for pitch, want in (("0.6 mm", 23.6), ("1.0 mm", 8.7)):
        spec = _load_section(ViaSpec, {"drill": "0.3 mm", "plating": "25 um", "pitch": pitch},
                             "board.layers[1].vias")
        assert _vias(spec, lib, "v", {}, lib.get("lam03")).k_z == pytest.approx(want, abs=0.05)


def test_line_segments_key_sets_the_longest_segment():
    """``lines[].segments = N`` is honoured: no segment longer than L/N (it was accepted by
    the schema and ignored).  Common practice, no source."""
    from pulsetherm.network.simulate import build

    scn = load(EXAMPLES[[p.name for p in EXAMPLES].index("termination_line.toml")])
    coarse = build(scn).lines["feed"]
    fine = build(scn.with_value("lines[0].segments", 200)).lines["feed"]
    L = 25e-3
    assert max(np.diff(fine.line.edges)) <= L / 200 * (1 + 1e-9)
    assert len(fine.top_nodes) > len(coarse.top_nodes) >= 24


def test_atomic_open_is_all_or_nothing(tmp_path):
    """One atomic writer for scenario files and command-line outputs: a failure inside the
    block leaves the old file and no temporary file.  Common practice, no source."""
    from pulsetherm.network.scenario import atomic_open, save
    from pulsetherm.tui.cli import atomic_output

    f = tmp_path / "out.csv"
    f.write_text("old")
    for opener in (atomic_open, atomic_output):
        with pytest.raises(RuntimeError):
            with opener(f) as fh:
                fh.write("partial")
                raise RuntimeError("boom")
        assert f.read_text() == "old" and list(tmp_path.iterdir()) == [f]
    with atomic_output(f) as fh:
        fh.write("a\r\nb")
    assert f.read_bytes() == b"a\r\nb"  # newline="" for csv writers
    scn = load(EXAMPLES[0])
    save(scn, tmp_path / "s.toml")
    assert load(tmp_path / "s.toml") == scn


def test_command_line_literals():
    """One reader for --set and --vary values.  Common practice, no source."""
    from pulsetherm.network.scenario import parse_literal

    assert parse_literal("30 degC") == "30 degC"
    assert parse_literal('["2 mm", "3 mm"]') == ["2 mm", "3 mm"]
    assert parse_literal("true") is True and parse_literal("4") == 4
    assert parse_literal('"pa"') == "pa" and parse_literal("fr4-class") == "fr4-class"


def test_run_summary_carries_the_caution_when_it_judges_limits():
    """Output that judges limits carries the cautions (product rule 5)."""
    from pathlib import Path

    from pulsetherm.network.scenario import load
    from pulsetherm.network.simulate import CAUTION, simulate

    res = simulate(load(Path(__file__).resolve().parents[1] / "examples" /
                        "xband_gan_coldplate.toml"))
    assert CAUTION in res.summary()


def test_table_waveform_equals_the_same_pulse_train(tmp_path):
    """A measured envelope read from CSV (step, periodic) that draws the same pulses as a
    ``pulses`` waveform gives the same temperatures (the same piecewise-constant power)."""
    from pathlib import Path

    from pulsetherm.network.scenario import ScenarioError, dumps, load
    from pulsetherm.network.simulate import simulate

    base = (Path(__file__).resolve().parents[1] / "examples" /
            "xband_gan_coldplate.toml").read_text()
    (tmp_path / "env.csv").write_text("time_us,power_W\n0,120\n100,0\n1000,0\n")
    table = base.replace('[waveforms.radar]\nkind = "pulses"', '[waveforms.radar_pulses]\nkind = "pulses"')
    table += ('\n[waveforms.radar]\nkind = "table"\nfile = "env.csv"\ninterp = "step"\n'
              'periodic = true\nperiod = "1 ms"\n')
    (tmp_path / "pulses.toml").write_text(base)
    (tmp_path / "table.toml").write_text(table)
    a = simulate(load(tmp_path / "pulses.toml")).probes["pa.junction"]
    scn = load(tmp_path / "table.toml")
    assert 'file = "env.csv"' in dumps(scn)
    b = simulate(scn).probes["pa.junction"]
    assert b.peak_C == pytest.approx(a.peak_C, rel=1e-9)
    assert b.mean_C == pytest.approx(a.mean_C, rel=1e-9)
    (tmp_path / "env.csv").unlink()
    with pytest.raises(ScenarioError, match=r"waveforms\.radar\.file"):
        simulate(load(tmp_path / "table.toml"))


def _sections(obj, out):
    """Every section object inside ``obj`` (depth first), ``obj`` included."""
    import dataclasses

    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        out.append(obj)
        for f in dataclasses.fields(obj):
            _sections(getattr(obj, f.name), out)
    elif isinstance(obj, (tuple, list)):
        for v in obj:
            _sections(v, out)
    elif isinstance(obj, dict):
        for v in obj.values():
            _sections(v, out)
    return out


_generated_twin = dataclass_twin   # tests/_systems.py, registered by conftest


def _hash_or_error(obj):
    try:
        return hash(obj)
    except TypeError as exc:        # a section holding a dict (waveforms, materials)
        return str(exc)


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_sections_eq_hash_repr_match_the_generated_ones(path):
    """The sections take ==, hash and repr from their base class (generated per class they
    cost import time); each must give what dataclass(frozen=True) would (common practice,
    no source)."""
    scn = load(path)
    again = load(path)
    other = scn.with_value("name", "another name")
    moved = loads(path.read_text(), source="elsewhere.toml")   # source: compare=False
    objs = _sections(scn, [])
    assert len(objs) > 5
    for obj in objs:
        twin = _generated_twin(obj)
        assert repr(obj) == repr(twin)
        assert _hash_or_error(obj) == _hash_or_error(twin)
        assert obj == obj and not obj != obj
        assert (obj == "text") is False and obj.__eq__("text") is NotImplemented
    for a, b in ((scn, again), (scn, other), (scn, moved), (scn.mount, scn.mount.sink)):
        assert (a == b) == (_generated_twin(a) == _generated_twin(b)), (a, b)
        assert (a != b) == (_generated_twin(a) != _generated_twin(b))
    assert scn == again and scn == moved and scn != other
    assert _hash_or_error(scn) == _hash_or_error(moved)
    assert repr(scn).startswith("Scenario(name=") and "source=" not in repr(scn)
