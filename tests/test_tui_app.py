"""The terminal app, driven headlessly (Textual's ``run_test`` pilot)."""
from __future__ import annotations

import asyncio
import shutil
from pathlib import Path

import numpy as np
import pytest

from pulsetherm.tui.app import ScenarioApp, free_path, literal_value
from pulsetherm.tui.probe_table import ProbeTable
from pulsetherm.tui.trace_view import resample_max
from pulsetherm.tui.whatif_bar import parse_whatif

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "xband_gan_coldplate.toml"


@pytest.fixture()
def scenario(tmp_path: Path) -> Path:
    dst = tmp_path / EXAMPLE.name
    shutil.copy(EXAMPLE, dst)
    return dst


async def _settle(app, pilot) -> None:
    """Wait until the run started by the last action has reported back."""
    for _ in range(400):
        await pilot.pause()
        await app.workers.wait_for_complete()
        await pilot.pause()
        if "-busy" not in app.query_one("#status").classes:
            return
        await asyncio.sleep(0.05)
    raise AssertionError("the app's run did not finish")


def _drive(path: Path, script):
    async def main():
        app = ScenarioApp(path)
        async with app.run_test(size=(140, 40)) as pilot:
            await _settle(app, pilot)
            return await script(app, pilot)
    return asyncio.run(main())


def test_app_runs_the_scenario_and_fills_every_probe(scenario):
    async def script(app, pilot):
        table = app.query_one(ProbeTable)
        assert app.result is not None
        assert table.row_count == len(app.result.probes) > 0
        status = str(app.query_one("#status").render())
        assert "as written" in status
        assert app.query_one("#cautions").render()  # limits are judged: cautions shown
        return app.result
    res = _drive(scenario, script)
    assert all(p.peak_C >= p.mean_C >= p.min_C for p in res.probes.values())


def test_whatif_coolant_shifts_every_temperature_by_the_same_kelvin(scenario):
    """A linear network with one boundary: every temperature moves with the coolant
    (superposition; common practice, no source)."""
    async def script(app, pilot):
        before = {n: p.mean_C for n, p in app.result.probes.items()}
        await pilot.click("#whatif")
        await pilot.press(*"coolant = 20 degC", "enter")
        await _settle(app, pilot)
        after = {n: p.mean_C for n, p in app.result.probes.items()}
        return before, after, app.changes
    before, after, changes = _drive(scenario, script)
    assert changes == [("coolant", "20 degC")]
    for n in before:
        assert after[n] - before[n] == pytest.approx(-20.0, abs=1e-9)


def test_a_broken_whatif_is_taken_back_and_the_last_result_kept(scenario):
    async def script(app, pilot):
        good = app.result
        await pilot.click("#whatif")
        await pilot.press(*"devices[0].stack[0].thickness = -1 mm", "enter")
        await _settle(app, pilot)
        status = app.query_one("#status")
        return good, app.result, app.changes, str(status.render()), status.classes
    good, now, changes, text, classes = _drive(scenario, script)
    assert now is good
    assert changes == []
    assert "thickness" in text and "not applied" in text
    assert "-failed" in classes


def test_save_writes_a_new_file_and_never_touches_the_original(scenario):
    original = scenario.read_text()

    async def script(app, pilot):
        await pilot.click("#whatif")
        await pilot.press(*"coolant = 30 degC", "enter")
        await _settle(app, pilot)
        await pilot.press("s")
        await pilot.press("s")
        await pilot.pause()
    _drive(scenario, script)
    assert scenario.read_text() == original
    saved = sorted(p.name for p in scenario.parent.glob("*.whatif*.toml"))
    assert saved == ["xband_gan_coldplate.whatif-2.toml", "xband_gan_coldplate.whatif.toml"]
    assert 'coolant = "30 degC"' in (scenario.parent / saved[1]).read_text()


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


def test_trace_resampling_keeps_the_peak():
    t = np.linspace(0.0, 1e-3, 5001)
    y = np.where((t >= 0.40e-3) & (t <= 0.4002e-3), 99.0, 1.0)  # one narrow spike
    out = resample_max(t, y, 40)
    assert out.max() == 99.0 and out.size == 40 and np.all(np.isfinite(out))


def test_ui_verb_refuses_a_broken_file_before_opening(tmp_path, capsys):
    from pulsetherm.tui.cli import main

    bad = tmp_path / "bad.toml"
    bad.write_text('name = "x"\ncoolant = "-400 degC"\n')
    assert main(["ui", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "coolant" in err and "Traceback" not in err
