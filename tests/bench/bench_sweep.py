"""Benchmark: 1,000 ladder scenarios rebuilt and solved by a sweep.

Prints, side by side, the rate with 1 and 2 worker processes (goal: scaling >= 1.7x from 1
to 2 workers, >= 100 scenarios per second per worker), the per-scenario split (scenario
text -> scenario, network build, periodic solve, warm-up, the rest) and the share of the
time spent outside the solver.  Each sweep is run ``--repeat`` times (default 3) and the
median rate is reported; the load average of the machine is printed with it (other
processes on a shared machine lower the 2-worker figure).  Run:

    OPENBLAS_NUM_THREADS=1 python tests/bench/bench_sweep.py [N] [--repeat R]

Ratios only; nothing here is asserted (wall-clock numbers depend on the machine).
"""
from __future__ import annotations

import os
import statistics
import sys
import time

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

from pulsetherm.network.scenario import loads  # noqa: E402
from pulsetherm.network.simulate import build, simulate  # noqa: E402
from pulsetherm.network.sweep import chunk_size, plan_sweep, run_sweep  # noqa: E402

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


def split(reps: int = 200) -> dict[str, float]:
    """Mean seconds per scenario of each stage of one sweep row, in this process."""
    scn = loads(TEXT)
    for i in range(10):  # warm caches (unit parses, waveforms, library)
        simulate(build(scn.with_value("mount.sink.resistance", f"{0.2 + i * 1e-3:.6g} K/W")))
    acc = dict.fromkeys(("text", "scenario", "build", "periodic", "warm-up", "rest"), 0.0)
    for i in range(reps):
        value = f"{0.1 + i * 1e-3:.6g} K/W"
        t0 = time.perf_counter()
        loads(TEXT)
        t1 = time.perf_counter()
        s = scn.with_value("mount.sink.resistance", value)
        t2 = time.perf_counter()
        m = build(s)
        t3 = time.perf_counter()
        net = m.network
        nodes = list(dict.fromkeys(m.probes.values()))
        r = net.periodic(m.waveforms, probes=nodes, method=m.method)
        t4 = time.perf_counter()
        r.warmup_s[nodes[0]]
        t5 = time.perf_counter()
        # the whole row as the sweep runs it (periodic + warm-up again inside), minus the
        # two solver parts measured above, is the rest (probe figures, layer budget)
        m2 = build(s)
        t6 = time.perf_counter()
        simulate(m2)
        t7 = time.perf_counter()
        acc["text"] += t1 - t0
        acc["scenario"] += t2 - t1
        acc["build"] += t3 - t2
        acc["periodic"] += t4 - t3
        acc["warm-up"] += t5 - t4
        acc["rest"] += max((t7 - t6) - (t5 - t3), 0.0)
    return {k: v / reps for k, v in acc.items()}


def _spin(n: int = 3_000_000) -> int:
    s = 0
    for i in range(n):
        s += i
    return s


def machine_speedup() -> float:
    """Wall-clock speed-up of two independent pure-Python loops run in two processes
    against the same two loops in a row: the most any 2-worker pool can get right now."""
    import multiprocessing as mp

    ctx = mp.get_context("spawn")
    t = time.perf_counter()
    _spin()
    _spin()
    serial = time.perf_counter() - t
    with ctx.Pool(2) as pool:
        pool.map(_spin, [10, 10])  # start-up outside the timing
        t = time.perf_counter()
        pool.map(_spin, [3_000_000, 3_000_000], chunksize=1)
        par = time.perf_counter() - t
    return serial / par


def main(n: int = 1000, repeat: int = 3) -> None:
    print(f"load average at start: {' '.join(f'{x:.2f}' for x in os.getloadavg())} "
          f"({os.cpu_count()} CPUs)")
    cal = machine_speedup()
    print(f"machine check: two independent busy loops, 2 processes against one after the "
          f"other: speed-up {cal:.2f}x (2.0x on two free cores; the sweep's 1 -> 2 worker "
          "scaling cannot exceed this)")
    scn = loads(TEXT)
    plan = plan_sweep(scn, vary=[f"mount.sink.resistance=0.1..1 K/W:{n}"])
    parts = split()
    row = parts["scenario"] + parts["build"] + parts["periodic"] + parts["warm-up"] \
        + parts["rest"]
    print(f"one sweep row, in process: {row * 1e3:.2f} ms "
          f"(the scenario text parsed from scratch: +{parts['text'] * 1e3:.2f} ms)")
    for k in ("scenario", "build", "periodic", "warm-up", "rest"):
        print(f"  {k:9s} {parts[k] * 1e3:6.2f} ms  {parts[k] / row:6.1%}")
    solver = parts["periodic"] + parts["warm-up"]
    print(f"share of time outside the solver (everything but periodic + warm-up): "
          f"{1 - solver / row:.1%}; scenario + network build only: "
          f"{(parts['scenario'] + parts['build']) / row:.1%}")
    print(f"network: {len(build(scn).network.nodes)} nodes; "
          f"{chunk_size(n, 2)} rows per task with 2 workers")
    rates: dict[int, list[float]] = {1: [], 2: []}
    cpu: dict[int, list[float]] = {1: [], 2: []}
    for rep in range(repeat):
        for workers in (1, 2):
            c0 = _cpu()
            t = time.perf_counter()
            res = run_sweep(plan, workers=workers)
            dt = time.perf_counter() - t
            assert res.failed == 0, res.rows[0].get("error")
            rates[workers].append(n / dt)
            cpu[workers].append((_cpu() - c0) / n)
        print(f"  run {rep + 1}: 1 worker {rates[1][-1]:7.1f}/s   2 workers "
              f"{rates[2][-1]:7.1f}/s   ratio {rates[2][-1] / rates[1][-1]:.2f}x   "
              f"(load {os.getloadavg()[0]:.2f}; CPU per row {cpu[1][-1] * 1e3:.2f} / "
              f"{cpu[2][-1] * 1e3:.2f} ms)")
    r1, r2 = statistics.median(rates[1]), statistics.median(rates[2])
    ratio = statistics.median([b / a for a, b in zip(rates[1], rates[2])])
    print(f"median of {repeat}: {n} scenarios")
    print(f"  {'workers':>8s} {'per s':>8s} {'per s per worker':>17s}")
    print(f"  {1:>8d} {r1:8.1f} {r1:17.1f}")
    print(f"  {2:>8d} {r2:8.1f} {r2 / 2:17.1f}")
    print(f"scaling 1 -> 2 workers: {r2 / r1:.2f}x of the medians, median of the per-run "
          f"ratios {ratio:.2f}x (goal >= 1.7x)")
    print(f"scenarios per second per worker: {r1:.1f} (1 worker), {r2 / 2:.1f} (2 workers) "
          f"(goal >= 100)")
    c1, c2 = statistics.median(cpu[1]), statistics.median(cpu[2])
    print(f"CPU time per row (this process and its workers): {c1 * 1e3:.2f} ms with 1 worker, "
          f"{c2 * 1e3:.2f} ms with 2 (pool overhead {c2 / c1 - 1:+.1%}); scaling bound by "
          f"CPU alone: {2 * c1 / c2:.2f}x when two cores are free")
    cal2 = machine_speedup()
    print(f"machine check at end: speed-up {cal2:.2f}x for two independent busy loops; the "
          f"sweep's median scaling {ratio:.2f}x is {ratio / max(cal, cal2):.0%} of the better "
          "machine check")
    print(f"load average at end: {' '.join(f'{x:.2f}' for x in os.getloadavg())}")


def _cpu() -> float:
    """CPU seconds of this process plus its finished child processes (the workers)."""
    import resource

    me = resource.getrusage(resource.RUSAGE_SELF)
    ch = resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime + ch.ru_utime + ch.ru_stime


if __name__ == "__main__":
    args = [a for a in sys.argv[1:] if not a.startswith("--")]
    rep = 3
    if "--repeat" in sys.argv:
        rep = int(sys.argv[sys.argv.index("--repeat") + 1])
        args = [a for a in args if a != str(rep)] if len(args) > 1 else args
    main(int(args[0]) if args else 1000, rep)
