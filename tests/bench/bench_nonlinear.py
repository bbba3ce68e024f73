"""Benchmark of the nonlinear solver's transient integrator (not collected by pytest).

Run:  OPENBLAS_NUM_THREADS=1 python tests/bench/bench_nonlinear.py

Prints, for a 6-node k(T) chain (a = 1.3, copper-loss input, 1 kHz pulses, 10 ms):
* the time with one massless node over the time without (massless rows are algebraic
  equations of the Radau IIA step, so the ratio should be near 1; before they were
  eliminated by an inner Newton solve at every evaluation: ~10-20 s for this run);
* the time of the own Radau IIA on the all-capacitive chain over scipy's solve_ivp Radau
  (same tolerances, restarted at every edge, no samples or energy terms).
"""
from __future__ import annotations

import time

import numpy as np
import scipy.sparse as sp
from scipy.integrate import solve_ivp

from pulsetherm.network.nonlinear import NonlinearSolver
from pulsetherm.network.system import ThermalSystem
from pulsetherm.waveforms.canonical import Piecewise, align


def chain(C, g, a):
    N = C.size
    gg = np.full(N, g)
    G = sp.lil_matrix((N, N))
    for k in range(N):
        G[k, k] += g
        if k + 1 < N:
            G[k + 1, k + 1] += g
            G[k, k + 1] -= g
            G[k + 1, k] -= g
    return ThermalSystem(tuple(f"n{k}" for k in range(N)), ("x",) * N, C, G.tocsr(),
                         sp.csr_matrix(([g], ([N - 1], [0])), shape=(N, 1)), ("sink",),
                         np.array([300.0]), sp.csr_matrix(([1.0], ([0], [0])), shape=(N, 1)),
                         ("p",), np.arange(N), np.arange(1, N + 1), gg, np.full(N, a),
                         np.full(N, 300.0), np.array([0.003]), np.array([300.0]))


def timed(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main() -> None:
    pw = Piecewise([0.0, 1e-4, 1e-3], [40.0, 0.0])
    edges, level, slope = align([pw], duration=10e-3)
    C_full = np.array([1e-4, 2e-4, 3e-4, 5e-4, 1e-3, 2e-3])
    C_mass = C_full.copy()
    C_mass[2] = 0.0
    for rtol in (1e-6, 1e-8):
        res = {}
        for name, C in (("capacitive", C_full), ("massless", C_mass)):
            sysm = chain(C, 5.0, 1.3)
            t, r = timed(lambda: NonlinearSolver(sysm, rtol=rtol, atol=rtol).transient(
                edges, level, slope, None, np.arange(6)))
            res[name] = t
            print(f"rtol {rtol:g}: {name:10s} {t:7.3f} s, {r.info['steps']} steps, "
                  f"energy error {r.info['energy_error']:.1e}")
        print(f"  massless / capacitive time ratio: {res['massless'] / res['capacitive']:.2f}")
        sysm = chain(C_full, 5.0, 1.3)
        s = NonlinearSolver(sysm)

        def scipy_run():
            T = np.full(6, 300.0)
            for k in range(edges.size - 1):
                P = level[k]
                sol = solve_ivp(lambda t, y: s.residual(y, P) / C_full, (edges[k], edges[k + 1]),
                                T, method="Radau", rtol=rtol, atol=rtol,
                                jac=lambda t, y: (s.jacobian(y, P).toarray() / C_full[:, None]))
                T = sol.y[:, -1]
            return T

        t_sp, _ = timed(scipy_run)
        print(f"  own Radau IIA / scipy solve_ivp Radau (capacitive chain): "
              f"{res['capacitive'] / t_sp:.2f}")


if __name__ == "__main__":
    main()
