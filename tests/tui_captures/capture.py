"""Write text captures of the workbench's main screens (run on demand, then review).

Run:  python -P tests/tui_captures/capture.py

Writes ``<screen>-<W>x<H>.txt`` beside this script for the built-in demo at 80x24 and
160x45: the probes tab, the warm-up, the layer budget, the waveforms, the pulsed Zth, the
network, a layer in the form with a refused value, the quit question and the help screen.
"""
from __future__ import annotations

import asyncio
import sys
import tempfile
from pathlib import Path

from pulsetherm.tui.app import ScenarioApp

HERE = Path(__file__).resolve().parent


def screen_text(app) -> str:
    """The screen as plain text, one line per terminal row (trailing blanks removed)."""
    return "\n".join(s.text.rstrip() for s in app.screen._compositor.render_strips()) + "\n"


async def settle(app, pilot, extras: bool = False) -> None:
    for _ in range(6000):
        await pilot.pause(0.02)
        if app.done_seq == app.seq and not (extras and app.stopper.busy("extras")):
            await pilot.pause(0.1)
            return
    raise RuntimeError("no result")


async def capture(w: int, h: int, out: Path) -> dict[str, str]:
    shots: dict[str, str] = {}
    with tempfile.TemporaryDirectory() as tmp:
        app = ScenarioApp(None, save_dir=tmp)
        async with app.run_test(size=(w, h)) as pilot:
            await settle(app, pilot)
            app.choose("devices[0]")
            await settle(app, pilot)
            shots["probes"] = screen_text(app)
            for key, name in (("2", "warmup"), ("3", "heldup"), ("4", "waves"), ("5", "zth"),
                              ("6", "network")):
                await pilot.press(key)
                await settle(app, pilot, extras=True)
                shots[name] = screen_text(app)
            await pilot.press("1")
            app.choose("devices[0].stack[2]")
            await pilot.pause(0.2)
            box = app.query_one("#form").input_for("devices[0].stack[2].thickness")
            box.focus()
            box.value = ""
            await pilot.press(*"-1 mm", "enter")
            await pilot.pause(0.2)
            shots["form-refused"] = screen_text(app)
            box.value = ""
            await pilot.press(*"1.5 mm", "enter")
            await settle(app, pilot)
            shots["after-edit"] = screen_text(app)
            app.query_one("#tree").focus()
            await pilot.press("ctrl+q")
            await pilot.pause(0.2)
            shots["quit-question"] = screen_text(app)
            await pilot.press("escape")
            await pilot.press("f1")
            await pilot.pause(0.2)
            shots["help"] = screen_text(app)
            app.session.saved_text = app.session.text()
            app.stopper.stop("extras")
    for name, text in shots.items():
        (out / f"{name}-{w}x{h}.txt").write_text(text, encoding="utf-8")
    return shots


def main(argv: list[str]) -> None:
    out = Path(argv[0]) if argv else HERE
    for w, h in ((80, 24), (160, 45)):
        asyncio.run(capture(w, h, out))
        print(f"wrote captures at {w}x{h} to {out}")


if __name__ == "__main__":
    main(sys.argv[1:])
