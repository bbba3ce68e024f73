"""Layout of the workbench at 80x24 and 160x45: nothing runs past the screen, the probe
table keeps its margin column, names that do not fit end in an ellipsis.

The reviewed text captures of every main screen are in ``tests/tui_captures`` (written by
``tests/tui_captures/capture.py``)."""
from __future__ import annotations

import asyncio
import re

import pytest

from pulsetherm.tui.app import ScenarioApp
from pulsetherm.tui.probe_table import COLUMNS


def _screen(size):
    async def main():
        app = ScenarioApp(None)
        async with app.run_test(size=size) as pilot:
            for _ in range(3000):
                await pilot.pause(0.02)
                if app.done_seq == app.seq:
                    break
            probes = list(app.result.probes)
            # the result message is posted before the table repaints: under load (the full
            # suite on 2 cores) 0.1 s was not always enough, so wait for the first probe row
            for _ in range(250):
                await pilot.pause(0.02)
                lines = [s.text for s in app.screen._compositor.render_strips()]
                head = [i for i, x in enumerate(lines) if " probe " in x]
                if head and head[0] + 1 < len(lines) and \
                        probes[0][:6] in lines[head[0] + 1]:
                    break
            app.stopper.stop("extras")
            return lines, probes
    return asyncio.run(main())


@pytest.mark.parametrize("size", [(80, 24), (160, 45)])
def test_the_main_screen_fits(size):
    w, h = size
    lines, probes = _screen(size)
    assert len(lines) == h and all(len(x) <= w for x in lines)
    head = next(i for i, x in enumerate(lines) if " probe " in x)
    header = lines[head]
    assert "margin K" in header  # the last column to go
    if w >= 160:
        assert all(c in header for c in COLUMNS)  # the wide screen shows every column
    rows = lines[head + 1: head + 1 + len(probes)]
    for name, row in zip(probes, rows):
        cell = row.split("│")[-1].split()[0] if "│" in row else row.split()[0]
        assert cell == name or (cell.endswith("…") and name.startswith(cell[:-1]))
        assert re.search(r"[+-]\d+\.\d\s*$", row.rstrip("│ ").rstrip())  # margin shown
    assert any("Caution:" in x for x in lines)  # limits are judged: the caution is shown
