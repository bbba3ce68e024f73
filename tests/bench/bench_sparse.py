"""Benchmark: sparse (exact modes above τ_c + quasi-static remainder) against the dense modal
solver on the die/attach/base cross-section of tests/test_sparse.py.  Prints time ratios and
the agreement; run with ``OPENBLAS_NUM_THREADS=1 python tests/bench/bench_sparse.py [nx]``."""
from __future__ import annotations

import importlib.util
import pathlib
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


def main(nx: int = 130) -> None:
    sysm, probes = _ts.die_stack(nx)
    edges, level, slope = align([Piecewise([0.0, 10e-6, 1e-3], [5.0, 0.0])])
    t0 = time.perf_counter()
    pm = ModalSolver(sysm).periodic(edges, level, slope, probes)
    t1 = time.perf_counter()
    ps = SparseSolver(sysm).periodic(edges, level, slope, probes)
    t2 = time.perf_counter()
    scale = np.max(pm.theta - _ts.T_AMB)
    err = np.max(np.abs(_ts.at_edges(ps, edges) - _ts.at_edges(pm, edges))) / scale
    print(f"n = {sysm.n}, tracked modes {ps.info['modes']}: sparse/modal time ratio "
          f"{(t2 - t1) / (t1 - t0):.3f}, max difference / rise {err:.2e}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 130)
