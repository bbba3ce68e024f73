"""Benchmark: the sparse solver's paths against the dense modal solver on the die/attach/base
cross-section of tests/test_sparse.py — exact modes above τ_c ("eig") and the implicit
stepping fallback ("step", forced by a tiny mode budget) — with times and the agreement at
every edge (relative to the largest rise); optionally the 100k-node board grid (time, peak
RSS, error estimate).  Run with
``OPENBLAS_NUM_THREADS=1 python tests/bench/bench_sparse.py [nx ...] [--100k |
--100k-reference]`` (the reference adds implicit stepping at tol 1e-6 on the 100k grid).
"""
from __future__ import annotations

import importlib.util
import pathlib
import resource
import sys
import time

import numpy as np

from pulsetherm.network.modal import ModalSolver
from pulsetherm.network.sparse import SparseSolver
from pulsetherm.waveforms.canonical import Piecewise, align

_spec = importlib.util.spec_from_file_location(
    "_ts", pathlib.Path(__file__).resolve().parents[1] / "test_sparse.py")
_ts = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(_ts)


def _timed(fn):
    t0 = time.perf_counter()
    r = fn()
    return r, time.perf_counter() - t0


def main(nx: int = 130) -> None:
    sysm, probes = _ts.die_stack(nx)
    pw = Piecewise([0.0, 10e-6, 1e-3], [5.0, 0.0])
    edges, level, slope = align([pw])
    e2, l2, s2 = align([pw], duration=5e-3)
    # times include building each solver (the modal eigendecomposition, the sparse
    # factorisations and modes); the transient reuses the solver built for the period
    modal, tb = _timed(lambda: ModalSolver(sysm))
    pm, tpm = _timed(lambda: modal.periodic(edges, level, slope, probes))
    tpm += tb
    tm, ttm = _timed(lambda: modal.transient(e2, l2, s2, None, probes))
    scale = np.max(pm.theta - _ts.T_AMB)
    print(f"n = {sysm.n}: modal periodic {tpm:.2f} s (with its eigendecomposition), "
          f"5-pulse transient {ttm:.2f} s more")
    for label, opts in (("eig", {}), ("krylov", {"basis": "krylov"}),
                        ("step tol 1e-4", {"basis": "step", "tol": 1e-4}),
                        ("step tol 1e-6", {"basis": "step", "tol": 1e-6})):
        s, tb = _timed(lambda: SparseSolver(sysm, **opts))
        ps, tps = _timed(lambda: s.periodic(edges, level, slope, probes))
        tps += tb
        ts, tts = _timed(lambda: s.transient(e2, l2, s2, None, probes))
        ep = np.max(np.abs(_ts.at_edges(ps, edges) - _ts.at_edges(pm, edges))) / scale
        et = np.max(np.abs(_ts.at_edges(ts, e2) - _ts.at_edges(tm, e2))) / scale
        est = ps.info.get("error_estimate", float("nan"))
        print(f"  {label:22s} periodic {tps:6.2f} s (x{tps / tpm:5.2f} modal), error "
              f"{ep:.1e} (estimate {est:.1e}); transient {tts:6.2f} s (x{tts / ttm:5.2f}), "
              f"error {et:.1e}")


def big(reference: bool = False) -> None:
    sysm, hot = _ts.board_grid(160, 125)
    pw = Piecewise([0.0, 10e-6, 1e-3], [20.0, 0.0])
    probes = np.array([hot[0], 0])
    s = SparseSolver(sysm)
    per, tp = _timed(lambda: s.periodic(*align([pw]), probes))
    tr, tt = _timed(lambda: s.transient(*align([pw], duration=0.1), None, probes))
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1e6
    print(f"n = {sysm.n}: path {per.info['basis']}, periodic {tp:.1f} s, 100-pulse transient "
          f"{tt:.1f} s, peak RSS {rss:.2f} GB; error estimates {per.info['error_estimate']:.2g}"
          f" / {tr.info['error_estimate']:.2g}; message: {per.info['message']}")
    if reference:
        # implicit stepping at tol 1e-6 (≈ 4–5 min, ≈ 4.7 GB): an independent reference
        ref, tref = _timed(lambda: SparseSolver(sysm, basis="step", tol=1e-6).periodic(
            *align([pw]), probes))
        rise = ref.theta[:, 0].max() - _ts.T_AMB
        d = abs(per.theta[:, 0].max() - ref.theta[:, 0].max()) / rise
        rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1e6
        print(f"  stepping reference {tref:.0f} s (peak RSS now {rss:.2f} GB, estimate "
              f"{ref.info['error_estimate']:.2g}): periodic peak difference / rise {d:.1e}")


if __name__ == "__main__":
    args = [a for a in sys.argv[1:] if not a.startswith("--")]
    for a in args or ["70", "130"]:
        main(int(a))
    if "--100k" in sys.argv or "--100k-reference" in sys.argv:
        big("--100k-reference" in sys.argv)
