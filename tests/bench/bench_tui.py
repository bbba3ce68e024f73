"""Benchmark of the terminal workbench (not collected by pytest).

Run:  OPENBLAS_NUM_THREADS=1 python -P tests/bench/bench_tui.py

Prints, on the built-in demo, driven headlessly:
* edit-to-result latency: from a form edit (a new grease thickness each time, so nothing
  comes from the cache) to the probe table holding the new result, the part of it spent
  in the worker, and beside them the bare ``simulate`` time of a geometry not built
  before (goal: under 150 ms);
* cancel latency of a nonlinear solve: from Esc to the worker thread having ended
  (goal: under 0.5 s), and the time ``ctrl+q`` takes to leave during such a solve.
"""
from __future__ import annotations

import asyncio
import os
import statistics
import tempfile
import time

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

from pulsetherm.network.simulate import simulate  # noqa: E402
from pulsetherm.tui.app import ScenarioApp  # noqa: E402
from pulsetherm.tui.app_messages import FieldEdited  # noqa: E402

GREASE = "mount.interface[0].thickness"


async def wait_done(app, pilot, limit=120.0):
    end = time.perf_counter() + limit
    while time.perf_counter() < end:
        await pilot.pause(0.005)
        if app.done_seq == app.seq:
            return
    raise RuntimeError("no result")


async def edit_latency(n: int = 12) -> tuple[list[float], list[float], list[float]]:
    out, bare, solve = [], [], []
    with tempfile.TemporaryDirectory() as tmp:
        app = ScenarioApp(None, save_dir=tmp)
        async with app.run_test(size=(120, 36)) as pilot:
            await wait_done(app, pilot)
            app.choose("mount.interface[0]")
            await pilot.pause()
            for k in range(n):
                t0 = time.perf_counter()
                app.post_message(FieldEdited(GREASE, f"{51 + k} um"))
                await wait_done(app, pilot)
                out.append(time.perf_counter() - t0)
                solve.append(app.last_solve_s)
                scn = app.session.scenario().with_value(GREASE, f"{51 + k}.5 um")
                t1 = time.perf_counter()
                simulate(scn)  # a geometry not built before, as in the app
                bare.append(time.perf_counter() - t1)
            app.stopper.stop("extras")
    return out, bare, solve


async def cancel_latency(repeats: int = 3) -> tuple[list[float], list[float]]:
    cancel, leave = [], []
    with tempfile.TemporaryDirectory() as tmp:
        for r in range(repeats):
            app = ScenarioApp(None, save_dir=tmp)
            async with app.run_test(size=(120, 36)) as pilot:
                await wait_done(app, pilot)
                app.apply_value("model.nonlinear", True)
                await pilot.pause(1.0)
                assert app.stopper.busy("solve"), "the nonlinear solve ended too soon"
                t0 = time.perf_counter()
                app.query_one("#tree").focus()
                await pilot.press("escape")
                await app.workers.wait_for_complete()
                cancel.append(time.perf_counter() - t0)
                app.session.saved_text = app.session.text()
                app.request_run("again")  # a long solve is running when we quit
                await pilot.pause(1.0)
                t0 = time.perf_counter()
                await pilot.press("ctrl+q")
            leave.append(time.perf_counter() - t0)
    return cancel, leave


def main() -> None:
    print(f"load average: {open('/proc/loadavg').read().split()[:3]}")
    lat, bare, solve = asyncio.run(edit_latency())
    print(f"edit-to-result latency, demo: median {1e3 * statistics.median(lat):.0f} ms, "
          f"max {1e3 * max(lat):.0f} ms over {len(lat)} edits (of which in the worker: "
          f"median {1e3 * statistics.median(solve):.0f} ms); bare simulate of a new "
          f"geometry: median {1e3 * statistics.median(bare):.0f} ms (ratio "
          f"{statistics.median(lat) / statistics.median(bare):.2f}); goal < 150 ms")
    cancel, leave = asyncio.run(cancel_latency())
    print(f"cancel latency, nonlinear demo: median {1e3 * statistics.median(cancel):.0f} ms, "
          f"max {1e3 * max(cancel):.0f} ms over {len(cancel)}; goal < 500 ms")
    print(f"quit during a nonlinear solve: median {1e3 * statistics.median(leave):.0f} ms, "
          f"max {1e3 * max(leave):.0f} ms")
    print(f"load average: {open('/proc/loadavg').read().split()[:3]}")


if __name__ == "__main__":
    main()
