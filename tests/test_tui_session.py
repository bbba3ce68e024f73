"""The workbench's editing session and its form fields (no screen involved)."""
from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

from pulsetherm.network.scenario import ScenarioError, SINK_KEYS, WAVEFORM_KEYS, loads
from pulsetherm.network.simulate import build
from pulsetherm.tui.fields import (KIND_SWITCH, form_fields, kind_defaults, read_field,
                                   section_class)
from pulsetherm.tui.session import Session, unique_name

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "xband_gan_coldplate.toml"


@pytest.fixture()
def session(tmp_path: Path) -> Session:
    dst = tmp_path / EXAMPLE.name
    shutil.copy(EXAMPLE, dst)
    return Session.open(dst)


def test_an_edit_changes_one_value_and_keeps_every_comment(session):
    before = session.text()
    session.set_value("mount.interface[0].thickness", "80 um")
    after = session.text()
    changed = [(a, b) for a, b in zip(before.splitlines(), after.splitlines()) if a != b]
    assert changed == [('thickness = "50 um"', 'thickness = "80 um"')]
    assert session.dirty and session.changes == ['mount.interface[0].thickness = 80 um']


def test_a_bad_edit_raises_and_leaves_the_document_unchanged(session):
    before = session.text()
    with pytest.raises(ScenarioError, match="thickness"):
        session.set_value("devices[0].stack[0].thickness", "-1 mm")
    with pytest.raises(ScenarioError):
        session.set_value("mount.sink.kind", "boiling")
    assert session.text() == before and not session.undo_stack and not session.dirty


def test_undo_and_redo_walk_the_edits(session):
    session.set_value("coolant", "30 degC")
    session.set_value("coolant", "20 degC")
    assert session.undo() == "coolant = 20 degC"
    assert session.get("coolant") == "30 degC"
    assert session.undo() == "coolant = 30 degC"
    assert session.get("coolant") == "40 degC" and not session.dirty
    assert session.undo() is None
    assert session.redo() == "coolant = 30 degC"
    session.set_value("coolant", "25 degC")  # a new edit drops the redo branch
    assert session.redo() is None


def test_structure_edits_keep_the_scenario_valid(session):
    stack = "devices[0].stack"
    names = lambda: [x["name"] for x in session.get(stack)]  # noqa: E731
    start = names()
    session.insert_item(stack, 1, {"name": "shim", "material": "copper",
                                   "thickness": "0.2 mm"}, "shim added")
    assert names() == start[:1] + ["shim"] + start[1:]
    session.move_item(stack, 1, 1)
    assert names() == start[:2] + ["shim"] + start[2:]
    session.remove_item(stack, 2)
    assert names() == start
    session.duplicate_item("devices", 0)
    assert [d["name"] for d in session.get("devices")] == ["pa", "pa-2"]
    assert len(session.scenario().devices) == 2
    with pytest.raises(ScenarioError):  # a board needs at least one layer
        for _ in range(3):
            session.remove_item("board.layers", 0)
    assert len(session.get("board.layers")) == 1


def test_save_in_place_is_atomic_and_a_failed_write_changes_nothing(session, monkeypatch):
    path = session.path
    original = path.read_text()
    session.set_value("coolant", "35 degC")

    def refuse(src, dst):
        raise OSError(28, "No space left on device")
    monkeypatch.setattr(os, "replace", refuse)
    with pytest.raises(OSError):
        session.save()
    monkeypatch.undo()
    assert path.read_text() == original and session.dirty
    assert sorted(p.name for p in path.parent.iterdir()) == [path.name]
    assert session.save() == path
    assert not session.dirty
    text = path.read_text()
    assert 'coolant = "35 degC"' in text and "# heated gate region" in text
    session.reload()
    assert session.get("coolant") == "35 degC" and not session.undo_stack


def test_the_demo_saves_to_a_new_file_with_a_header(tmp_path):
    s = Session.demo(tmp_path)
    s.set_value("coolant", "50 degC")
    first = s.save()
    assert first == tmp_path / "demo.edited.toml"
    text = first.read_text()
    assert text.splitlines()[0].startswith("# Written by pulsetherm ui on ")
    assert "from built-in demo" in text and "#   - coolant = 50 degC" in text
    assert loads(text).coolant.text == "50 degC"
    assert unique_name("pa", {"pa", "pa-2"}) == "pa-3"


def test_form_fields_follow_the_kind():
    s = Session.demo()
    data = s.data()
    keys = [f.key for f in form_fields(data, "mount.sink")]
    assert keys == ["kind"]
    keys = [f.key for f in form_fields(data, "waveforms.radar")]
    assert keys[0] == "kind" and set(keys) == {"kind", "delay", *WAVEFORM_KEYS["pulses"]}
    assert section_class("devices[0].stack[1]").__name__ == "LayerSpec"
    assert section_class("board.layers[1].vias").__name__ == "ViaSpec"


@pytest.mark.parametrize("cls,path,kinds", [
    ("SinkSpec", "mount.sink", tuple(SINK_KEYS)),
    ("WaveformSpec", "waveforms.radar", tuple(KIND_SWITCH["WaveformSpec"])),
])
def test_every_kind_switch_gives_a_valid_scenario(cls, path, kinds):
    for kind in kinds:
        s = Session.demo()
        new = kind_defaults(cls, s.get(path), kind)
        scn = s.replace_table(path, new, f"{path}.kind = {kind}")
        assert scn.get_value(f"{path}.kind") == kind
        build(scn)  # the waveform objects and the sink are made without complaint


def test_read_field_keeps_units_and_refuses_bad_text():
    s = Session.demo()
    spec = {f.key: f for f in form_fields(s.data(), "mount.interface[0]")}
    assert read_field(spec["thickness"], "75") == "75 um"  # the unit of the value it replaces
    assert read_field(spec["thickness"], "0.1 mm") == "0.1 mm"
    with pytest.raises(ScenarioError, match="thickness"):
        read_field(spec["thickness"], "-1 mm")
    with pytest.raises(ScenarioError, match="thickness"):
        read_field(spec["thickness"], "3 kg")
    assert read_field(spec["spreading_angle"], "") is None  # an optional key is removed
    dev = {f.key: f for f in form_fields(s.data(), "devices[0]")}
    assert read_field(dev["footprint"], "1, 2") == ["1 mm", "2 mm"]
    with pytest.raises(ScenarioError, match="required"):
        read_field(dev["name"], " ")


def test_save_as_new_file_leaves_the_original_and_heads_the_copy(session):
    original = session.path.read_text()
    session.set_value("coolant", "33 degC")
    target = session.save(new_file=True)
    assert session.path == target and target.name == "xband_gan_coldplate.edited.toml"
    assert (target.parent / "xband_gan_coldplate.toml").read_text() == original
    text = target.read_text()
    assert "#   - coolant = 33 degC" in text and "# heated gate region" in text
