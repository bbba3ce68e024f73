"""The workbench's other screens: size and sweep inside the app, play mode, help, the
command palette's own commands.  Expectations: common practice, no source (a thicker
grease layer in series raises the junction; the largest thickness that keeps a limit is
where the peak meets it)."""
from __future__ import annotations

import asyncio

import pytest
from textual.widgets import Input, Static

from pulsetherm.tui.app import ScenarioApp
from pulsetherm.tui.help_screen import HelpScreen
from pulsetherm.tui.study_screen import StudyScreen
from pulsetherm.tui.warmup_view import WarmupView


async def _settle(app, pilot):
    for _ in range(3000):
        await pilot.pause(0.02)
        if app.done_seq == app.seq:
            return
    raise AssertionError("no result")


def _run(script, size=(120, 36)):
    async def main():
        app = ScenarioApp(None)
        async with app.run_test(size=size) as pilot:
            await _settle(app, pilot)
            out = await script(app, pilot)
            for g in ("solve", "extras", "study"):
                app.stopper.stop(g)
            return out
    return asyncio.run(main())


async def _wait_text(screen, pilot, wid: str, stop: str) -> str:
    for _ in range(3000):
        await pilot.pause(0.05)
        text = str(screen.query_one(wid, Static).render())
        if stop in text:
            return text
    raise AssertionError(f"no {stop!r} in {wid}")


@pytest.mark.slow
def test_sweep_and_size_one_value_inside_the_app():
    async def script(app, pilot):
        app.query_one("#tree").focus()
        await pilot.press("z")
        await pilot.pause()
        screen = app.screen
        assert isinstance(screen, StudyScreen)
        screen.query_one("#s-path", Input).value = "mount.interface[0].thickness"
        screen.query_one("#s-range", Input).value = "20..200 um"
        screen.query_one("#s-steps", Input).value = "3"
        await pilot.click("#s-sweep")
        sweep = await _wait_text(screen, pilot, "#s-out", "Caution")
        screen.query_one("#s-range", Input).value = "10..5000 um"
        screen.query_one("#s-margin", Input).value = "0 K"
        await pilot.click("#s-size")
        sized = await _wait_text(screen, pilot, "#s-out", "Caution")
        return sweep, sized, app.session.dirty
    sweep, sized, dirty = _run(script)
    rows = [r.split() for r in sweep.splitlines()[1:4]]
    assert [r[0] for r in rows] == ["20", "110", "200"]  # the values, in the range's unit
    peaks = [float(r[2]) for r in rows]
    assert peaks[0] < peaks[1] < peaks[2]  # thicker grease, hotter junction
    assert "largest value" in sized and "binding" in sized
    assert not dirty  # studies never change the scenario being edited


def test_play_moves_a_time_cursor_over_the_warm_up():
    async def script(app, pilot):
        app.query_one("#tree").focus()
        await pilot.press("p")
        view = app.query_one(WarmupView)
        seen = []
        for _ in range(3000):
            await pilot.pause(0.05)
            if view.cursor is not None:
                seen.append(view.cursor)
            if len(seen) >= 3:
                break
        return app.query_one("#results").active, seen, view.readout()
    tab, seen, readout = _run(script)
    assert tab == "t-warmup"
    assert len(seen) >= 3 and seen[0] < seen[-1]
    assert readout.startswith("t = ") and "final.junction" in readout and "°C" in readout


def test_help_lists_keys_and_editable_paths_and_the_palette_has_the_apps_commands():
    async def script(app, pilot):
        titles = [c.title for c in app.get_system_commands(app.screen)]
        app.query_one("#tree").focus()
        await pilot.press("f1")
        await pilot.pause()
        screen = app.screen
        text = "\n".join(str(s.render()) for s in screen.query(Static))
        await pilot.press("escape")
        await pilot.pause()
        return titles, isinstance(screen, HelpScreen), text, type(app.screen).__name__
    titles, was_help, text, after = _run(script)
    for t in ("Save scenario", "Save as a new file", "Write JSON report", "Undo edit", "Redo edit", "Reload scenario", "Cancel solve",
              "Play warm-up", "Size or sweep a value", "Show network"):
        assert t in titles
    assert was_help and "ctrl+s" in text and "mount.interface[0].thickness" in text
    assert after == "Screen"


def test_waveform_kind_switch_swaps_the_form_fields():
    from textual.widgets import Select

    from pulsetherm.network.scenario import WAVEFORM_KEYS
    from pulsetherm.tui.item_form import ItemForm

    async def script(app, pilot):
        app.choose("waveforms.radar")
        await pilot.pause()
        app.query_one(ItemForm).query_one(Select).value = "burst"
        await _settle(app, pilot)
        await pilot.pause()
        return [f.key for f in app.query_one(ItemForm).fields], app.session.get(
            "waveforms.radar"), app.result
    keys, wave, res = _run(script)
    assert set(keys) == {"kind", "delay", *WAVEFORM_KEYS["burst"]}
    assert wave["kind"] == "burst" and wave["peak"] == "90 W"  # the peak carried over
    assert res is not None and "final.junction" in res.probes


@pytest.mark.slow
def test_a_running_sweep_stops_on_request():
    async def script(app, pilot):
        app.apply_value("model.nonlinear", True)
        app.cancel_solve()
        app.query_one("#tree").focus()
        await pilot.press("z")
        await pilot.pause()
        screen = app.screen
        screen.query_one("#s-path", Input).value = "coolant"
        screen.query_one("#s-range", Input).value = "30..50 degC"
        # enough rows that the sweep is still running when stop is clicked (six nonlinear
        # rows of the demo now take under a second)
        screen.query_one("#s-steps", Input).value = "100"
        await pilot.click("#s-sweep")
        await pilot.pause(1.0)
        busy = screen.stopper.busy("study")
        await pilot.click("#s-stop")
        await asyncio.wait_for(app.workers.wait_for_complete(), 20)
        return busy, str(screen.query_one("#s-out", Static).render())
    busy, out = _run(script)
    assert busy and out == "stopped"
