"""Benchmark: sweep rows of the X-band example, waveform-only and geometry axes, 1 and 2
workers, side by side in one run.

Cases (``examples/xband_gan_coldplate.toml``):

* **waveform-only**: ``waveforms.radar.peak`` stepped over N values.  Every row after the
  first reuses the built network and its eigendecomposition
  (:mod:`pulsetherm.network.sweepcache`), and, the power being the first row's times one
  factor, its periodic response (:mod:`pulsetherm.network.rescale`); goal >= 500 rows/s
  per worker.
* **pulse width**: ``waveforms.radar.width`` stepped: also waveform-only, so the network
  is reused, but every row solves its periodic state; goal >= 500 rows/s per worker.
* **geometry**: ``devices[0].stack[2].thickness`` (the flange) stepped over N values: every
  row builds its ladder and spreading calibration; goal >= 250 rows/s per worker.

Each case runs with 1 worker (in this process) and 2 worker processes, ``--repeat`` times
(default 3); the median rates, the 1 -> 2 worker ratio (goal >= 1.8x) and the load average
(``/proc/loadavg``) before each run are printed.  Every run uses values not seen before in
this process (a shifted range), so no row is served from the caches of an earlier run.  A
per-row split (scenario, network build or reuse, periodic solve, the rest) is printed for
each case.  At the end, per case, what 1 -> 2 workers can reach: the same 1-worker sweep
in two independent processes at once against one alone (the machine's ceiling for this
work), and the Amdahl bound that the first row (run before the fork) and the fork set.
Run:

    OPENBLAS_NUM_THREADS=1 python -P tests/bench/bench_sweep.py [--rows N] [--repeat R]

Ratios and rates only; nothing here is asserted (wall-clock numbers depend on the machine
and on its load: compare the load column before reading a rate).
"""
from __future__ import annotations

import argparse
import os
import statistics
import time
from pathlib import Path
from typing import Any

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

from pulsetherm.network.scenario import load  # noqa: E402
from pulsetherm.network.sweep import plan_sweep, run_sweep  # noqa: E402

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "xband_gan_coldplate.toml"

#: name -> (axis path, unit, low, high, goal rows/s per worker)
CASES = {
    "waveform-only": ("waveforms.radar.peak", "W", 50.0, 150.0, 500.0),
    "pulse width": ("waveforms.radar.width", "us", 50.0, 150.0, 500.0),
    "geometry": ("devices[0].stack[2].thickness", "mm", 0.5, 1.5, 250.0),
}


def loadavg() -> str:
    try:
        return " ".join(Path("/proc/loadavg").read_text().split()[:3])
    except OSError:
        return " ".join(f"{x:.2f}" for x in os.getloadavg())


def axis(case: str, n: int, run: int) -> str:
    """The case's axis with values not used by any other run (shifted by a small step)."""
    path, unit, lo, hi, _ = CASES[case]
    shift = (hi - lo) * 1e-4 * (run + 1)
    return f"{path}={lo + shift:.9g}..{hi + shift:.9g} {unit}:{n}"


def split(scn, case: str, rows: int = 40) -> dict[str, float]:
    """Mean seconds per row of each stage, in this process (values unseen before)."""
    from pulsetherm.network.simulate import build, probe_figures
    from pulsetherm.network.sweepcache import ModelCache

    plan = plan_sweep(scn, vary=[axis(case, rows, 1000)])
    cache = ModelCache()
    acc = dict.fromkeys(("scenario", "network", "solve", "rest", "rebuilt"), 0.0)
    for values in plan.rows:
        t0 = time.perf_counter()
        s = scn
        for p, v in values.items():
            s = s.with_value(p, v)
        t1 = time.perf_counter()
        model = cache.model(s, values)
        t2 = time.perf_counter()
        nodes = list(dict.fromkeys(model.probes.values()))
        model.network.periodic(model.waveforms, probes=nodes, method=model.method)
        t3 = time.perf_counter()
        probe_figures(model)  # solve again and the row's figures: the rest is the difference
        t4 = time.perf_counter()
        acc["scenario"] += t1 - t0
        acc["network"] += t2 - t1
        acc["solve"] += t3 - t2
        acc["rest"] += max((t4 - t3) - (t3 - t2), 0.0)
        t5 = time.perf_counter()
        fresh = build(s)  # what a row costs that cannot reuse the network: build and solve
        fresh.network.periodic(fresh.waveforms, probes=nodes, method=fresh.method)
        acc["rebuilt"] += time.perf_counter() - t5
    return {k: v / rows for k, v in acc.items()}


def _cpu() -> float:
    """CPU seconds of this process plus its finished child processes (the workers)."""
    import resource

    me = resource.getrusage(resource.RUSAGE_SELF)
    ch = resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime + ch.ru_utime + ch.ru_stime


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


def _alone_and_pair(case: str, rows: int, run: int, barrier: Any, out: Any) -> None:
    """One 1-worker sweep of ``case`` in a fresh process (after a warm-up sweep), timed
    from ``barrier`` (None: at once); its wall time goes to ``out``."""
    scn = load(EXAMPLE)
    run_sweep(plan_sweep(scn, vary=[axis(case, 20, 500 + run)]), workers=1)
    plan = plan_sweep(scn, vary=[axis(case, rows, 600 + run)])
    if barrier is not None:
        barrier.wait()
    t = time.perf_counter()
    run_sweep(plan, workers=1)
    out.put(time.perf_counter() - t)


def work_ceiling(case: str, rows: int) -> float:
    """The same 1-worker sweep in two independent (spawned) processes at once, against one
    alone: the most two workers can get for this work on this machine now, with nothing
    shared between them (the busy-loop check leaves out memory and cache traffic)."""
    import multiprocessing as mp

    ctx = mp.get_context("spawn")
    q = ctx.Queue()
    p = ctx.Process(target=_alone_and_pair, args=(case, rows, 0, None, q))
    p.start()
    alone = q.get()
    p.join()
    bar = ctx.Barrier(2)
    ps = [ctx.Process(target=_alone_and_pair, args=(case, rows, k, bar, q)) for k in (1, 2)]
    for p in ps:
        p.start()
    both = max(q.get(), q.get())
    for p in ps:
        p.join()
    return 2 * alone / both


def serial_bound(scn, case: str, rows: int) -> tuple[float, float, float]:
    """(first-row seconds, fork seconds, bound): a waveform-only sweep on 2 workers runs its
    first row (network build, eigendecomposition) here before it forks, so with a fork of
    f seconds and the other rows split evenly at their 1-worker cost, 1 -> 2 workers is at
    most (t1 + (n−1)r)/(t1 + f + (n−1)r/2) (Amdahl's law: G. M. Amdahl, "Validity of the
    single processor approach to achieving large scale computing capabilities", AFIPS
    1967).  Geometry rows build their own networks: t1 is one row like the others."""
    t1 = 0.0
    if case != "geometry":
        path, unit, lo, hi, _ = CASES[case]
        run_sweep(plan_sweep(scn, vary=[f"{path}={lo + (hi - lo) * 0.31:.9g} {unit}"]))
        first = plan_sweep(scn, vary=[f"{path}={lo + (hi - lo) * 0.37:.9g} {unit}"])
        t = time.perf_counter()   # a first row as in the timed sweeps: modules and tables warm
        run_sweep(first, workers=1)
        t1 = time.perf_counter() - t
    plan = plan_sweep(scn, vary=[axis(case, rows, 700)])
    t = time.perf_counter()
    run_sweep(plan, workers=1)
    whole = time.perf_counter() - t
    r = max(whole - t1, 0.0) / max(rows - (1 if t1 else 0), 1)
    forks = []
    for _ in range(5):
        t = time.perf_counter()
        pid = os.fork()
        if pid == 0:
            os._exit(0)
        forks.append(time.perf_counter() - t)
        os.waitpid(pid, 0)
    f = min(forks)
    t1 = t1 or r
    return t1, f, (t1 + (rows - 1) * r) / (t1 + f + (rows - 1) * r / 2)


def main(rows: int = 400, repeat: int = 3) -> None:
    print(f"load average at start (/proc/loadavg): {loadavg()} ({os.cpu_count()} CPUs)")
    cal = machine_speedup()
    print(f"machine check: two busy loops in 2 processes against one after the other: "
          f"{cal:.2f}x (2.0x on two free cores; no 2-worker sweep can beat this now)")
    scn = load(EXAMPLE)
    for case in CASES:
        parts = split(scn, case)
        rebuilt = parts.pop("rebuilt")
        row = sum(parts.values())
        print(f"{case}: one row in process {row * 1e3:.2f} ms = " + ", ".join(
            f"{k} {v * 1e3:.2f} ms ({v / row:.0%})" for k, v in parts.items()))
        if case in ("waveform-only", "pulse width"):
            alone = row - parts["network"] - parts["solve"] + rebuilt
            print(f"  without reuse (network, assembly and eigendecomposition again): "
                  f"{alone * 1e3:.2f} ms a row, {alone / row:.2f}x as long")
    results: dict[str, dict[int, list[float]]] = {c: {1: [], 2: []} for c in CASES}
    cpu: dict[str, dict[int, list[float]]] = {c: {1: [], 2: []} for c in CASES}
    print(f"\n{'run':>3s} {'case':>14s} {'workers':>7s} {'rows/s':>8s} {'per worker':>10s} "
          f"{'CPU ms/row':>10s}  load before")
    run = 0
    for rep in range(repeat):
        for case in CASES:
            for workers in (1, 2):
                run += 1
                plan = plan_sweep(scn, vary=[axis(case, rows, run)])
                before = loadavg()
                c0 = _cpu()
                t = time.perf_counter()
                res = run_sweep(plan, workers=workers)
                dt = time.perf_counter() - t
                if res.failed:
                    raise SystemExit(f"{res.failed} rows failed: {res.rows[0].get('error')}")
                rate = rows / dt
                results[case][workers].append(rate)
                cpu[case][workers].append((_cpu() - c0) / rows)
                print(f"{rep + 1:>3d} {case:>14s} {workers:>7d} {rate:8.1f} "
                      f"{rate / workers:10.1f} {cpu[case][workers][-1] * 1e3:10.2f}  {before}")
    print(f"\nmedians of {repeat} runs, {rows} rows each (X-band example):")
    print(f"  {'case':>14s} {'1 worker':>9s} {'2 workers':>10s} {'per worker':>11s} "
          f"{'1->2':>6s} {'1/CPU time':>11s} {'goal/worker':>12s}")
    for case, (*_, goal) in CASES.items():
        r1 = statistics.median(results[case][1])
        r2 = statistics.median(results[case][2])
        ratio = statistics.median(b / a for a, b in zip(results[case][1], results[case][2]))
        c1 = statistics.median(cpu[case][1])
        print(f"  {case:>14s} {r1:9.1f} {r2:10.1f} {r2 / 2:11.1f} {ratio:5.2f}x "
              f"{1 / c1:9.1f}/s {goal:>8.0f}/s  (goal 1->2 >= 1.8x)")
    print("  (rows/s are wall clock; '1/CPU time' is the rate one worker would reach on a "
          "free core, from the CPU seconds per row: read it when the load is high)")
    cal2 = machine_speedup()
    print(f"machine check at end: {cal2:.2f}x for two independent busy loops")
    print("what 1 -> 2 workers can reach, per case: the same sweep in two independent "
          "processes at once (no work shared), and the bound the serial first row and the "
          "fork set (Amdahl):")
    for case in CASES:
        ceiling = work_ceiling(case, rows)
        t1, f, bound = serial_bound(scn, case, rows)
        print(f"  {case:>14s}: two independent copies {ceiling:.2f}x; first row "
              f"{t1 * 1e3:.1f} ms, fork {f * 1e3:.1f} ms -> at most {bound:.2f}x")
    print(f"load average at end (/proc/loadavg): {loadavg()}")


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--rows", type=int, default=400, help="rows per sweep (400)")
    ap.add_argument("--repeat", type=int, default=3, help="runs of each case (3)")
    a = ap.parse_args()
    main(a.rows, a.repeat)
