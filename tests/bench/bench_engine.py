"""Benchmark of the exact modal engine (printed, not asserted; not collected by pytest).

Network: ~300 nodes in 30 layers of 10 (a graded stack), time constants about 1e-7 .. 10 s;
drive: 10 µs pulses at 1 kHz into one node.

1. Periodic-steady-state peak: ``ThermalNetwork.periodic`` (fresh network: assembly,
   condensation, eigendecomposition, closed-form periodic state, exact peak) against brute
   force — ``scipy.integrate.solve_ivp`` (Radau, rtol 1e-6, analytic Jacobian) period after
   period from ambient until the peak changes by less than 0.01 K per period.  The brute
   force would need thousands of periods (slowest τ ≈ 10 s), so it is capped in wall time;
   the rest is extrapolated from the measured time per period and the number of periods the
   exact solution says are needed.  The printout says which part is measured and which is
   extrapolated.
2. Overhead of the whole periodic analysis over the bare ``scipy.linalg.eigh`` call on the
   same (condensed, symmetrically scaled) matrix.

Run: ``OPENBLAS_NUM_THREADS=1 python tests/bench/bench_engine.py``.
"""
from __future__ import annotations

import os
import time

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import scipy.linalg as sla  # noqa: E402
from scipy.integrate import solve_ivp  # noqa: E402

from pulsetherm.network.assemble import condense  # noqa: E402
from pulsetherm.network.model import ThermalNetwork  # noqa: E402
from pulsetherm.waveforms.canonical import Piecewise  # noqa: E402

LAYERS, PER_LAYER = 30, 10
BRUTE_CAP_S = float(os.environ.get("BENCH_BRUTE_CAP_S", "60"))


def build() -> ThermalNetwork:
    rng = np.random.default_rng(1)
    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    caps = np.logspace(-6.2, 0.3, LAYERS)          # layer capacities, J/K
    for layer in range(LAYERS):
        for k in range(PER_LAYER):
            net.add_node(f"L{layer}.{k}", capacity=caps[layer] * rng.uniform(0.5, 2.0),
                         label=f"layer{layer}")
            if k:
                net.connect(f"L{layer}.{k}", f"L{layer}.{k - 1}", conductance=2.0)
            if layer:
                net.connect(f"L{layer}.{k}", f"L{layer - 1}.{k}",
                            conductance=1.0 * rng.uniform(0.5, 2.0))
    for k in range(PER_LAYER):
        net.connect(f"L{LAYERS - 1}.{k}", "sink", conductance=0.5)
    net.add_input("die", nodes={"L0.0": 1.0})
    return net


WAVE = Piecewise([0.0, 10e-6, 1e-3], [20.0, 0.0])       # 10 µs, 20 W, 1 kHz


def exact_run():
    t0 = time.perf_counter()
    net = build()
    res = net.periodic({"die": WAVE}, probes=["L0.0"])
    dt = time.perf_counter() - t0
    return net, res, dt


def bare_eigh(net):
    cond = condense(net.system())
    s = 1.0 / np.sqrt(cond.C)
    A = s[:, None] * cond.G * s[None, :]
    best = np.inf
    for _ in range(3):
        t0 = time.perf_counter()
        sla.eigh(A, check_finite=False)
        best = min(best, time.perf_counter() - t0)
    return best, A


def brute_force(net, res, cap_s):
    """Radau period by period from ambient; returns (periods done, seconds, last change)."""
    sys_ = net.system()
    C = sys_.C
    import scipy.sparse as sp

    G = sys_.G.tocsr()
    b = sys_.B.toarray()[:, 0]
    row = sys_.index("L0.0")
    jac = sp.csc_matrix(sp.diags(1.0 / C) @ (-G))
    x = np.zeros(sys_.n)                           # rise over ambient (all boundaries 25 °C)
    last_peak, n, change = None, 0, np.inf
    t0 = time.perf_counter()
    while time.perf_counter() - t0 < cap_s:
        peak = -np.inf
        for a, bnd, p in ((0.0, 10e-6, 20.0), (10e-6, 1e-3, 0.0)):
            sol = solve_ivp(lambda t, y, p=p: (-G @ y + b * p) / C, (a, bnd), x,
                            method="Radau", rtol=1e-6, atol=1e-9, jac=jac)
            x = sol.y[:, -1]
            peak = max(peak, sol.y[row].max())
        n += 1
        if last_peak is not None:
            change = abs(peak - last_peak)
            if change < 0.01:
                break
        last_peak = peak
    return n, time.perf_counter() - t0, change


def periods_needed(net):
    """From the exact solution: (a) the first period n after which the pulse-end value
    changes by < 0.01 K per period (the brute force's stopping rule), (b) the first n whose
    pulse-end value is within 0.01 K of the periodic-steady-state peak.  With the decaying
    part δ(t) = Σ a_i e^{−λ_i t} (a = Φ·(q_0 − q_ps)), the pulse-end value of period n is
    θ_ps(t_p) + δ(nT + t_p)."""
    from pulsetherm.network.modal import ModalSolver

    solver = ModalSolver(net.system())
    edges, level = WAVE.edges, WAVE.level[:, None]
    q_ps = solver.periodic_start(edges, level, np.zeros_like(level))
    row = net.system().index("L0.0")
    a = solver.Phi[row] * (-q_ps)
    T, tp = 1e-3, 10e-6

    def delta(k):
        return float(np.sum(a * np.exp(-solver.lam * (k * T + tp))))

    def first(pred):
        hi = 1
        while not pred(hi):
            hi *= 2
        lo = hi // 2
        while hi - lo > 1:
            mid = (lo + hi) // 2
            lo, hi = (lo, mid) if pred(mid) else (mid, hi)
        return hi

    n_rule = first(lambda k: abs(delta(k + 1) - delta(k)) < 0.01)
    n_true = first(lambda k: abs(delta(k)) < 0.01)
    return n_rule, n_true, delta(n_rule)


def main() -> None:
    times = []
    for _ in range(3):
        net, res, dt = exact_run()
        times.append(dt)
    t_exact = min(times)
    print(f"network: {net.system().n} nodes, time constants "
          f"{res.info['tau_min']:.2e} .. {res.info['tau_max']:.2e} s, "
          f"{res.info['modes']} modes")
    print(f"exact periodic steady state: peak {res.peak('L0.0'):.4f} degC, "
          f"min {res.min('L0.0'):.4f}, mean {res.mean('L0.0'):.4f}; "
          f"best wall time {t_exact * 1e3:.1f} ms (build, assembly, eigh, periodic state, "
          "exact peak; the warm-up time is computed on first access)")
    t_eigh, _ = bare_eigh(net)
    t_an = []
    for _ in range(3):
        net2 = build()                                    # graph built, not assembled
        t0 = time.perf_counter()
        net2.periodic({"die": WAVE}, probes=["L0.0"])
        t_an.append(time.perf_counter() - t0)
    t_full = min(t_an)
    print(f"bare scipy.linalg.eigh on the same {net.system().n}x{net.system().n} matrix "
          f"(best of 3): {t_eigh * 1e3:.1f} ms; whole periodic analysis from the graph "
          f"(best of 3): {t_full * 1e3:.1f} ms")
    print(f"overhead ratio (whole periodic analysis from the graph / bare eigh): "
          f"{t_full / t_eigh:.2f} (goal <= 2)")
    from pulsetherm.network.modal import ModalSolver

    sys_ = net.system()
    edges, level = WAVE.edges, WAVE.level[:, None]
    slope = np.zeros_like(level)
    row = np.array([sys_.index("L0.0")])
    t_sv = []
    for _ in range(3):
        t0 = time.perf_counter()
        ModalSolver(sys_).periodic(edges, level, slope, row)
        t_sv.append(time.perf_counter() - t0)
    print(f"overhead ratio (solver only on the assembled system: condensation, eigh, periodic "
          f"state, exact peak = {min(t_sv) * 1e3:.1f} ms / bare eigh): "
          f"{min(t_sv) / t_eigh:.2f} (goal <= 2)")
    n_rule, n_true, err_rule = periods_needed(net)
    print(f"exact: the peak changes < 0.01 K/period after {n_rule} periods, but is then still "
          f"{abs(err_rule):.3f} K below the periodic peak; it is within 0.01 K of it after "
          f"{n_true} periods ({n_true * 1e-3:.1f} s of simulated time)")
    n_done, t_brute, change = brute_force(net, res, BRUTE_CAP_S)
    per_period = t_brute / n_done
    print(f"brute force (solve_ivp Radau rtol 1e-6, sparse Jacobian, restarted at every edge): "
          f"{n_done} periods measured in {t_brute:.1f} s = {per_period * 1e3:.1f} ms/period "
          f"(last change {change:.3g} K/period)")
    t_rule = per_period * n_rule
    t_true = per_period * n_true
    tag = "measured" if (change < 0.01 and n_done >= n_rule) else "EXTRAPOLATED"
    print(f"  stopping rule 'change < 0.01 K/period': {t_rule:.1f} s ({tag}) -> ratio "
          f"{t_rule / t_exact:.0f}x, but that answer is {abs(err_rule):.3f} K low")
    print(f"  to the periodic peak within 0.01 K: {t_true:.0f} s (EXTRAPOLATED from the "
          f"measured time per period x {n_true} periods) -> ratio {t_true / t_exact:.0f}x "
          "(goal >= 1000x)")


if __name__ == "__main__":
    main()
