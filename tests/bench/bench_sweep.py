"""Benchmark: 1,000 ladder scenarios rebuilt and solved by a sweep.

Prints the rate with 1 and 2 worker processes (goal: scaling >= 1.7x from 1 to 2 workers,
>= 100 scenarios per second per worker) and the share of the time spent outside the
solver (building the scenario and the network).  Run:

    OPENBLAS_NUM_THREADS=1 python tests/bench/bench_sweep.py [N]

Ratios only; nothing here is asserted (wall-clock numbers depend on the machine).
"""
from __future__ import annotations

import os
import sys
import time

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

from pulsetherm.network.scenario import loads  # noqa: E402
from pulsetherm.network.simulate import build, simulate  # noqa: E402
from pulsetherm.network.sweep import plan_sweep, run_sweep  # noqa: E402

TEXT = """name = "bench ladder"
coolant = "40 degC"
[model]
grading = "coarse"
[waveforms.p]
kind = "pulses"
peak = "60 W"
width = "100 us"
period = "1 ms"
[mount.sink]
kind = "lumped"
resistance = "0.3 K/W"
capacity = "50 J/K"
[[devices]]
name = "pa"
power = "p"
footprint = ["0.6 mm", "2.4 mm"]
limit = "200 degC"
[[devices.stack]]
name = "die"
material = "sic-4h"
thickness = "100 um"
size = ["1.2 mm", "3 mm"]
[[devices.stack]]
name = "attach"
material = "ausn"
thickness = "25 um"
size = ["1.2 mm", "3 mm"]
[[devices.stack]]
name = "flange"
material = "cuw-85-15"
thickness = "1 mm"
size = ["6 mm", "10 mm"]
"""


def main(n: int = 1000) -> None:
    scn = loads(TEXT)
    vary = [f"mount.sink.resistance=0.1..1 K/W:{n}"]
    plan = plan_sweep(scn, vary=vary)
    # split of one scenario's time: build (scenario + network) against solve
    reps = 50
    t0 = time.perf_counter()
    models = [build(scn.with_value("mount.sink.resistance", f"{0.1 + i * 1e-3} K/W"))
              for i in range(reps)]
    t1 = time.perf_counter()
    for m in models:
        simulate(m)
    t2 = time.perf_counter()
    outside = (t1 - t0) / (t2 - t0)
    rates = {}
    for workers in (1, 2):
        t = time.perf_counter()
        res = run_sweep(plan, workers=workers)
        dt = time.perf_counter() - t
        assert res.failed == 0, res.rows[0].get("error")
        rates[workers] = n / dt
        print(f"{workers} worker(s): {n} scenarios in {dt:.2f} s = {rates[workers]:.1f} per s "
              f"({rates[workers] / workers:.1f} per s per worker)")
    print(f"scaling 1 -> 2 workers: {rates[2] / rates[1]:.2f}x (goal >= 1.7x)")
    print(f"scenarios per second per worker (1 worker): {rates[1]:.1f} (goal >= 100)")
    print(f"share of time outside the solver (scenario + network build): {outside:.1%}")
    print(f"network: {len(models[0].network.nodes)} nodes")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1000)
