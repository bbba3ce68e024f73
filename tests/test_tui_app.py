"""The terminal workbench, driven headlessly (Textual's ``run_test`` pilot).

Physics expectations here are common practice, no source: a thicker series layer of a
conduction path (the grease under the board) raises every temperature above it.
"""
from __future__ import annotations

import asyncio
import os
import shutil
from pathlib import Path

import pytest
from textual.widgets import Input, Select

from pulsetherm.network.scenario import loads
from pulsetherm.tui.app import ScenarioApp, free_path, literal_value
from pulsetherm.tui.confirm_screen import ConfirmScreen
from pulsetherm.tui.item_form import ItemForm
from pulsetherm.tui.probe_table import ProbeTable
from pulsetherm.tui.whatif_bar import WhatIfBar, parse_whatif

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "xband_gan_coldplate.toml"
GREASE = "mount.interface[0].thickness"


@pytest.fixture()
def scenario(tmp_path: Path) -> Path:
    dst = tmp_path / EXAMPLE.name
    shutil.copy(EXAMPLE, dst)
    return dst


async def settle(app, pilot, limit: float = 60.0) -> None:
    """Wait until the newest run request has been answered (result or failure)."""
    loop = asyncio.get_running_loop()
    end = loop.time() + limit
    while loop.time() < end:
        await pilot.pause(0.02)
        if app.done_seq == app.seq:
            await pilot.pause()
            return
    raise AssertionError("the app's run did not finish")


def drive(script, path: Path | None = None, size=(120, 36), save_dir: Path | None = None):
    async def main():
        app = ScenarioApp(path, save_dir=save_dir)
        async with app.run_test(size=size) as pilot:
            await settle(app, pilot)
            out = await script(app, pilot)
            app.stopper.stop("solve")
            app.stopper.stop("extras")
            return out
    return asyncio.run(main())


async def type_into(app, pilot, path: str, text: str) -> Input:
    """Show ``path``'s table in the form, focus the field, replace its text, press Enter."""
    table = path.rsplit(".", 1)[0]
    app.choose(table)
    await pilot.pause()
    form = app.query_one(ItemForm)
    box = form.input_for(path)
    assert box is not None, f"no field for {path}"
    box.focus()
    box.value = ""
    await pilot.pause()
    await pilot.press(*text, "enter")
    await pilot.pause()
    return box


def peak(app, probe: str) -> float:
    return app.result.probes[probe].peak_C


# -- acceptance --------------------------------------------------------------------------
def test_demo_opens_and_thicker_grease_raises_the_junction_peak(tmp_path):
    async def script(app, pilot):
        assert app.session.path is None and app.result is not None
        table = app.query_one(ProbeTable)
        assert table.row_count == len(app.result.probes) > 0
        before = peak(app, "final.junction")
        box = await type_into(app, pilot, GREASE, "150 um")
        await settle(app, pilot)
        return before, peak(app, "final.junction"), app.session.get(GREASE), \
            app.focused is box, str(app.query_one("#status").render())
    before, after, stored, focus_kept, status = drive(script, save_dir=tmp_path)
    assert stored == "150 um"
    assert after > before + 0.1
    assert focus_kept  # the focus stays in the field after the edit
    assert "every limit holds" in status


def test_negative_thickness_is_refused_at_the_field_without_a_recompute(tmp_path):
    async def script(app, pilot):
        runs = app.solve_count
        seq = app.seq
        await type_into(app, pilot, GREASE, "-1 mm")
        form = app.query_one(ItemForm)
        return (runs, app.solve_count, seq, app.seq, app.session.get(GREASE),
                dict(form.errors), app.session.dirty)
    runs0, runs1, seq0, seq1, stored, errors, dirty = drive(script, save_dir=tmp_path)
    assert runs1 == runs0 and seq1 == seq0  # no recompute started
    assert stored == "50 um" and not dirty  # the last good value is kept
    assert GREASE in errors and "thickness" in errors[GREASE] and "50 um" in errors[GREASE]


def test_letters_typed_after_an_applied_edit_fire_no_command(tmp_path):
    """u, s, r, q, p, w, z and digits are commands elsewhere; in a text field they are text."""
    async def script(app, pilot):
        box = await type_into(app, pilot, GREASE, "60 um")
        await settle(app, pilot)
        undo_depth = len(app.session.undo_stack)
        tab = app.query_one("#results").active
        await pilot.press(*"/usr/quiz/sprqwz12")
        await pilot.pause()
        typed = box.value
        bar = app.query_one(WhatIfBar)
        bar.focus()
        await pilot.press(*"coolant = 35 degC", "enter")
        await settle(app, pilot)
        await pilot.press(*"users/quests/run", "?")
        await pilot.pause()
        return (typed, bar.value, undo_depth, len(app.session.undo_stack),
                app.query_one("#results").active, tab, app.is_running,
                type(app.screen).__name__, sorted(p.name for p in tmp_path.iterdir()),
                app.session.get("coolant"))
    (box_text, bar_text, depth0, depth1, tab1, tab0, running, screen, files,
     coolant) = drive(script, save_dir=tmp_path)
    assert box_text == "60 um/usr/quiz/sprqwz12"  # typed on after the applied value
    assert bar_text == "users/quests/run?"
    assert depth1 == depth0 + 1  # the what-if only: nothing undone
    assert tab1 == tab0 and running and screen == "Screen"
    assert files == []  # nothing saved
    assert coolant == "35 degC"


def test_save_in_place_keeps_comments_and_reload_gives_the_same_scenario(scenario):
    async def script(app, pilot):
        await type_into(app, pilot, GREASE, "80 um")
        await settle(app, pilot)
        edited = app.session.scenario()
        await pilot.press("ctrl+s")
        await pilot.pause()
        dirty_after_save = app.session.dirty
        await pilot.press("ctrl+r")
        await settle(app, pilot)
        return edited, app.session.scenario(), dirty_after_save, app.session.get(GREASE)
    edited, reloaded, dirty, value = drive(script, scenario)
    text = scenario.read_text()
    assert not dirty
    assert reloaded == edited and value == "80 um"
    assert 'thickness = "80 um"' in text
    assert "# heated gate region" in text and "# ideal cold plate" in text  # comments kept
    assert loads(text) == edited


def test_demo_saves_a_new_file_headed_by_its_changes(tmp_path):
    async def script(app, pilot):
        await type_into(app, pilot, GREASE, "70 um")
        await settle(app, pilot)
        await pilot.press("ctrl+s")
        await pilot.pause()
        return app.session.path
    path = drive(script, save_dir=tmp_path)
    text = path.read_text()
    assert path.parent == tmp_path and path.name == "demo.edited.toml"
    assert text.startswith("# Written by pulsetherm ui")
    assert f"{GREASE} = 70 um" in text and "from built-in demo" in text
    assert loads(text).mount.interface[0].thickness.text == "70 um"


def test_quit_with_unsaved_changes_asks_first(scenario):
    async def script(app, pilot):
        await type_into(app, pilot, GREASE, "90 um")
        await settle(app, pilot)
        app.query_one("#tree").focus()
        await pilot.press("ctrl+q")
        await pilot.pause()
        asked = isinstance(app.screen, ConfirmScreen)
        await pilot.press("escape")  # stay
        await pilot.pause()
        stayed = app.is_running and not isinstance(app.screen, ConfirmScreen)
        await pilot.press("ctrl+q")
        await pilot.pause()
        await pilot.click("#yes")
        await pilot.pause()
        return asked, stayed
    original = scenario.read_text()
    asked, stayed = drive(script, scenario)
    assert asked and stayed
    assert scenario.read_text() == original  # quitting without saving wrote nothing


def test_a_failing_save_leaves_the_old_file_intact(scenario, monkeypatch):
    original = scenario.read_text()

    def refuse(src, dst):
        raise OSError(28, "No space left on device")

    async def script(app, pilot):
        await type_into(app, pilot, GREASE, "90 um")
        await settle(app, pilot)
        monkeypatch.setattr(os, "replace", refuse)
        await pilot.press("ctrl+s")
        await pilot.pause()
        monkeypatch.undo()
        return app.session.dirty, str(app.query_one("#status").render())
    dirty, status = drive(script, scenario)
    assert scenario.read_text() == original
    assert dirty and "not saved" in status and "unchanged" in status
    assert [p.name for p in scenario.parent.iterdir()] == [scenario.name]  # no stray part file


def test_undo_restores_the_value_and_its_results_and_redo_repeats(tmp_path):
    async def script(app, pilot):
        first = app.result
        await type_into(app, pilot, GREASE, "200 um")
        await settle(app, pilot)
        second = app.result
        app.query_one("#tree").focus()
        await pilot.press("ctrl+z")
        await settle(app, pilot)
        undone = (app.session.get(GREASE), app.result)
        await pilot.press("ctrl+y")
        await settle(app, pilot)
        return first, second, undone, (app.session.get(GREASE), app.result)
    first, second, (v_undo, r_undo), (v_redo, r_redo) = drive(script, save_dir=tmp_path)
    assert v_undo == "50 um" and v_redo == "200 um"
    assert r_undo.probes == first.probes
    assert r_redo.probes == second.probes
    assert second.probes["final.junction"].peak_C > first.probes["final.junction"].peak_C


# -- more editing -------------------------------------------------------------------------
def test_sink_kind_switch_swaps_the_fields_and_recomputes(tmp_path):
    async def script(app, pilot):
        before = peak(app, "final.junction")
        app.choose("mount.sink")
        await pilot.pause()
        form = app.query_one(ItemForm)
        form.query_one(Select).value = "lumped"
        await pilot.pause()
        await settle(app, pilot)
        await pilot.pause()
        keys = [f.key for f in app.query_one(ItemForm).fields]
        return before, peak(app, "final.junction"), keys, app.session.get("mount.sink")
    before, after, keys, sink = drive(script, save_dir=tmp_path)
    assert keys == ["kind", "resistance", "capacity"]
    assert sink["kind"] == "lumped" and "resistance" in sink
    assert after > before  # a resistance to the coolant added below a fixed base


def test_layers_are_added_moved_removed_and_devices_duplicated(tmp_path):
    from pulsetherm.tui.app_messages import StructureEdit

    async def script(app, pilot):
        names = lambda: [x["name"] for x in app.session.get("devices[0].stack")]  # noqa: E731
        start = names()
        app.post_message(StructureEdit("add", "devices[0].stack", 1))
        await settle(app, pilot)
        added = names()
        app.post_message(StructureEdit("up", "devices[0].stack", 2))
        await settle(app, pilot)
        moved = names()
        app.post_message(StructureEdit("remove", "devices[0].stack", 1))
        await settle(app, pilot)
        removed = names()
        app.post_message(StructureEdit("duplicate", "devices", 0))
        await settle(app, pilot)
        devs = [d["name"] for d in app.session.get("devices")]
        return start, added, moved, removed, devs, list(app.result.probes)
    start, added, moved, removed, devs, probes = drive(script, save_dir=tmp_path)
    assert added == start[:2] + ["new-layer"] + start[2:]
    assert moved == start[:1] + ["new-layer"] + start[1:]
    assert removed == start
    assert devs == ["final", "final-2", "driver"]
    assert "final-2.junction" in probes


def test_bare_number_keeps_the_unit_and_material_is_chosen_from_the_library(tmp_path):
    from pulsetherm.tui.material_picker import MaterialPicker

    async def script(app, pilot):
        await type_into(app, pilot, GREASE, "75")
        await settle(app, pilot)
        value = app.session.get(GREASE)
        app.choose("mount.interface[0]")
        await pilot.pause()
        await pilot.click("#m-1")
        await pilot.pause()
        picker = isinstance(app.screen, MaterialPicker)
        await pilot.press(*"gap", "enter")
        await settle(app, pilot)
        return value, picker, app.session.get("mount.interface[0].material")
    value, picker, material = drive(script, save_dir=tmp_path)
    assert value == "75 um"
    assert picker and material == "gap-pad"


def test_whatif_history_and_a_bad_whatif_is_reported(tmp_path):
    async def script(app, pilot):
        bar = app.query_one(WhatIfBar)
        bar.focus()
        await pilot.press(*"coolant = 30 degC", "enter")
        await settle(app, pilot)
        await pilot.press(*"nosuch.key = 3", "enter")
        await pilot.pause()
        status = str(app.query_one("#status").render())
        await pilot.press("up")
        recalled = bar.value
        await pilot.press("up")
        return status, recalled, bar.value, app.session.get("coolant")
    status, recalled, older, coolant = drive(script, save_dir=tmp_path)
    assert "nosuch" in status and coolant == "30 degC"
    assert recalled == "nosuch.key = 3" and older == "coolant = 30 degC"


@pytest.mark.slow
def test_a_cancelled_nonlinear_solve_stops_and_quitting_never_waits(tmp_path):
    """The nonlinear demo takes tens of seconds; Esc stops it, quitting does not wait."""
    async def main():
        app = ScenarioApp(None, save_dir=tmp_path)
        async with app.run_test(size=(100, 30)) as pilot:
            await settle(app, pilot)
            linear = app.result
            app.query_one(WhatIfBar).focus()
            await pilot.press(*"model.nonlinear = true", "enter")
            await pilot.pause(0.5)
            assert app.stopper.busy("solve")
            app.query_one("#tree").focus()
            await pilot.press("escape")
            await asyncio.wait_for(app.workers.wait_for_complete(), 20)
            cancelled = not app.stopper.busy("solve") and app.result is linear
            await pilot.press("ctrl+z")  # back to linear, then start the long solve again
            await settle(app, pilot)
            await pilot.press("ctrl+y")
            await pilot.pause(0.5)
            busy = app.stopper.busy("solve")
            app.session.saved_text = app.session.text()  # nothing to ask about
            await pilot.press("ctrl+q")
        return cancelled, busy
    cancelled, busy = asyncio.run(asyncio.wait_for(main(), 60))
    assert cancelled and busy


# -- small parts -------------------------------------------------------------------------
def test_whatif_parsing_and_values():
    assert parse_whatif(" mount.sink.resistance = 0.2 K/W ") == ("mount.sink.resistance", "0.2 K/W")
    with pytest.raises(ValueError, match="key.path = value"):
        parse_whatif("coolant 20 degC")
    assert literal_value("3") == 3
    assert literal_value("true") is True
    assert literal_value("0.2 K/W") == "0.2 K/W"


def test_free_path_never_reuses_a_name(tmp_path):
    p = tmp_path / "a.toml"
    p.write_text("")
    first = free_path(p, "report.json")
    assert first.name == "a.report.json"
    first.write_text("{}")
    assert free_path(p, "report.json").name == "a.report-2.json"


def test_ui_verb_refuses_a_broken_file_before_opening(tmp_path, capsys):
    from pulsetherm.tui.cli import main

    bad = tmp_path / "bad.toml"
    bad.write_text('name = "x"\ncoolant = "-400 degC"\n')
    assert main(["ui", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "coolant" in err and "Traceback" not in err


def test_json_report_is_written_to_a_new_file(tmp_path):
    import json

    async def script(app, pilot):
        app.action_report()
        app.action_report()
        await pilot.pause()
        return app.result
    res = drive(script, save_dir=tmp_path)
    names = sorted(p.name for p in tmp_path.iterdir())
    assert names == ["demo.report-2.json", "demo.report.json"]
    data = json.loads((tmp_path / "demo.report.json").read_text())
    assert data["probes"]["final.junction"]["peak_C"] == res.probes["final.junction"].peak_C
    assert data["cautions"]


def test_a_broken_limit_is_marked_in_text_and_the_trace_shows_before_and_after(tmp_path):
    from pulsetherm.tui.trace_view import TraceView

    async def script(app, pilot):
        app.query_one(WhatIfBar).focus()
        await pilot.press(*'devices[0].limit = "60 degC"', "enter")
        await settle(app, pilot)
        table = app.query_one(ProbeTable)
        first = [str(c) for c in table.get_row_at(0)]
        names = [s.name for s in app.query_one(TraceView).series]
        return first, str(app.query_one("#status").render()), names
    first, status, names = drive(script, save_dir=tmp_path)
    assert first[0] == "! final.junction" and first[-1].endswith("OVER")
    assert float(first[-1].split()[0]) < 0
    assert "LIMIT BROKEN at final.junction" in status
    assert names[0] == "final.junction (file)" and "final.junction" in names[1:]


def test_a_refused_whatif_names_the_users_file_and_line(scenario):
    async def script(app, pilot):
        app.query_one(WhatIfBar).focus()
        await pilot.press(*"coolant = 30 degCC", "enter")
        await pilot.pause()
        return str(app.query_one("#status").render()), app.session.dirty
    status, dirty = drive(script, scenario)
    line = next(i for i, x in enumerate(scenario.read_text().splitlines(), 1)
                if x.startswith("coolant"))
    assert f"{scenario}:{line}:" in status and "degCC" in status and "kept 40 degC" in status
    assert not dirty


def test_escape_in_a_field_puts_the_stored_value_back(tmp_path):
    async def script(app, pilot):
        box = await type_into(app, pilot, GREASE, "-5 um")
        shown = box.value
        await pilot.press("escape")
        await pilot.pause()
        return shown, box.value, dict(app.query_one(ItemForm).errors)
    shown, after, errors = drive(script, save_dir=tmp_path)
    assert shown == "-5 um" and after == "50 um" and errors == {}
