"""Benchmark: compiling 10^5 pulses in one period (not collected by pytest).

Run:  OPENBLAS_NUM_THREADS=1 python tests/bench/bench_waveforms.py

Prints compile times and their ratio to a 1 s budget ("well under a second" is the goal),
and the ratio against a per-pulse Python loop that builds the same canonical form, so the
numbers mean something on any machine.  Each figure is the best of a few repeats.
"""
from __future__ import annotations

import time

import numpy as np

from pulsetherm.waveforms.canonical import Piecewise
from pulsetherm.waveforms.profile import Profile, Stretch
from pulsetherm.waveforms.pulses import Burst, PulseTrain, Stagger
from pulsetherm.waveforms.table import Table

N = 100_000


def best(fn, repeats: int = 3) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def loop_burst(tr: PulseTrain, n: int, period: float) -> Piecewise:
    """Reference: the same burst built one pulse at a time in Python."""
    edges, level, slope = [], [], []
    up, down = (tr.peak - tr.idle) / tr.rise, (tr.idle - tr.peak) / tr.fall
    flat = tr.width - 0.5 * (tr.rise + tr.fall)
    for k in range(n):
        s = k * tr.period
        nxt = (k + 1) * tr.period if k < n - 1 else period
        for start, lv, sl in ((s, tr.idle, up), (s + tr.rise, tr.peak, 0.0),
                              (s + tr.rise + flat, tr.peak, down),
                              (s + tr.rise + flat + tr.fall, tr.idle, 0.0)):
            edges.append(start)
            level.append(lv)
            slope.append(sl)
        assert nxt > edges[-1]
    edges.append(period)
    return Piecewise(edges, level, slope, True)


def main() -> None:
    tr = PulseTrain(peak=20.0, width=1e-6, period=1e-5, idle=0.1, rise=1e-7, fall=2e-7)
    burst = lambda: Burst(tr, pulses=N, gap=1e-3).compile()  # noqa: E731 - fresh object
    iv = np.tile([1e-5, 1.3e-5, 1.1e-5, 0.9e-5], N // 4)
    stagger = lambda: Stagger(peak=5.0, intervals=iv, widths=1e-6).compile()  # noqa: E731
    prof = lambda: Profile([Stretch(1.0, 0.5),  # noqa: E731
                            Stretch(N * 1e-5, PulseTrain(peak=20.0, width=1e-6,
                                                         period=1e-5))]).compile()
    pw = Burst(tr, pulses=N, gap=1e-3).compile()
    text = Table.from_piecewise(pw).to_csv()
    table = lambda: Table.from_csv(text).compile()  # noqa: E731
    b = Burst(tr, pulses=N, gap=1e-3)
    loop = best(lambda: loop_burst(tr, N, b.period), repeats=1)
    print(f"{N} pulses in one period, best of 3 (segments in the canonical form):")
    for name, fn, segs in (("Burst (ramped pulses)", burst, pw.n_segments),
                           ("Stagger (4-interval cycle)", stagger, 2 * N),
                           ("Profile (standby + train)", prof, None),
                           ("Table.from_csv (linear)", table, None)):
        t = best(fn)
        extra = f", {segs} segments" if segs else ""
        print(f"  {name:28s} {t * 1e3:8.1f} ms   ratio to 1 s budget {t:6.3f}{extra}")
    t = best(burst)
    print(f"  per-pulse Python loop (same burst) {loop * 1e3:8.1f} ms   "
          f"vectorised speed-up {loop / t:6.1f}x")


if __name__ == "__main__":
    main()
