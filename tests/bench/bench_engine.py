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
3. Scaling table on graded chains of n = 10 .. 300 nodes: bare ``eigh`` (default driver),
   the whole periodic analysis from the graph (assembly, condensation, eigendecomposition,
   periodic state, certified extremes) and a 100-pulse transient from the graph, each the
   best of several fresh networks; ratios periodic/eigh and transient/periodic.
4. A 120-node graded chain (time constants 1 µs .. 0.1 s; 10 µs pulses of 20 W at 1 kHz):
   brute force ``solve_ivp`` BDF (sparse Jacobian, restarted at every edge) period after
   period from ambient, stopping when the per-period change of the peak times τmax/T falls
   below 0.01 K, against the whole periodic analysis.  Measured up to a wall-time cap, then
   extrapolated from the time per period and the number of periods the exact solution
   says the rule needs (the printout says which).

Run: ``OPENBLAS_NUM_THREADS=1 python -P tests/bench/bench_engine.py`` (``--quick``: the
scaling table and the chain only).  Print ``cat /proc/loadavg`` beside the numbers: the
ratios are measured side by side in one run, the absolute times depend on the load.
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
CHAIN_CAP_S = float(os.environ.get("BENCH_CHAIN_CAP_S", "90"))


def chain(n: int) -> ThermalNetwork:
    """Graded chain c0 .. c{n-1} -> sink: R_k = R0·r^k, C_k = C0·r^k (r = 1.012^(120/n)),
    so the time constants span about 1 µs .. 0.1 s at n = 120; heat into c0."""
    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    r = 1.012 ** (120 / n)
    R0, C0 = 0.05, 3.56e-6 / 0.05
    for k in range(n):
        net.add_node(f"c{k}", capacity=C0 * r ** k)
        if k:
            net.connect(f"c{k}", f"c{k - 1}", conductance=1.0 / (R0 * r ** k))
    net.connect(f"c{n - 1}", "sink", conductance=1.0 / (R0 * r ** n))
    net.add_input("die", nodes={"c0": 1.0})
    return net


def _best_fresh(make, run, reps: int) -> float:
    """Best wall time of ``run(net)`` over ``reps`` fresh networks (built untimed)."""
    nets = [make() for _ in range(reps)]
    best = np.inf
    for net in nets:
        t0 = time.perf_counter()
        run(net)
        best = min(best, time.perf_counter() - t0)
    return best


def _bare_eigh_of(net, reps: int) -> float:
    cond = condense(net.system())
    s = 1.0 / np.sqrt(cond.C)
    A = s[:, None] * cond.G * s[None, :]
    best = np.inf
    for _ in range(reps):
        t0 = time.perf_counter()
        sla.eigh(A, check_finite=False)
        best = min(best, time.perf_counter() - t0)
    return best


def scaling_table() -> None:
    """Whole periodic analysis and 100-pulse transient from the graph against bare eigh."""
    print("scaling (graded chains; best of fresh networks; 'stack' = the 300-node stack):")
    print(f"{'n':>6} {'eigh ms':>9} {'periodic ms':>12} {'per/eigh':>9} "
          f"{'100-pulse ms':>13} {'tr/per':>7}")
    cases = [(f"{n}", lambda n=n: chain(n), "c0") for n in (10, 20, 30, 100, 120, 300)]
    cases.append(("stack", build, "L0.0"))
    for label, make, probe in cases:
        reps = 30 if make().system().n <= 120 else 8
        t_eig = _bare_eigh_of(make(), reps)
        t_per = _best_fresh(make, lambda net: net.periodic({"die": WAVE}, probes=[probe]), reps)
        t_tr = _best_fresh(make, lambda net: net.transient({"die": WAVE}, periods=100,
                                                           probes=[probe]), reps)
        print(f"{label:>6} {t_eig * 1e3:9.3f} {t_per * 1e3:12.3f} {t_per / t_eig:9.2f} "
              f"{t_tr * 1e3:13.3f} {t_tr / t_per:7.2f}")
    print("goals: periodic/eigh <= 1.5 for n >= 100, periodic <= 3 ms for n <= 30, "
          "transient/periodic <= 3")


def _rule_periods(solver, row: int, tau_max: float, T: float, tp: float) -> int:
    """First period n whose pulse-end value changed by less than 0.01 K·T/τmax from the
    previous period (exact decaying part δ(t) = Σ a_i e^{−λ_i t}, a = Φ·(0 − q_ps))."""
    edges, level = WAVE.edges, WAVE.level[:, None]
    q_ps = solver.periodic_start(edges, level, np.zeros_like(level))
    a = solver.Phi[row] * (-q_ps)

    def change(k):
        d1 = np.sum(a * np.exp(-solver.lam * ((k + 1) * T + tp)))
        d0 = np.sum(a * np.exp(-solver.lam * (k * T + tp)))
        return abs(d1 - d0) * tau_max / T

    hi = 1
    while change(hi) >= 0.01:
        hi *= 2
    lo = hi // 2
    while hi - lo > 1:
        mid = (lo + hi) // 2
        lo, hi = (lo, mid) if change(mid) < 0.01 else (mid, hi)
    return hi + 1


def chain_brute_force(cap_s: float) -> None:
    """Section 4 (module docstring)."""
    import scipy.sparse as sp

    from pulsetherm.network.modal import ModalSolver

    t_exact = _best_fresh(lambda: chain(120), lambda net: net.periodic({"die": WAVE},
                                                                       probes=["c0"]), 30)
    net = chain(120)
    res = net.periodic({"die": WAVE}, probes=["c0"])
    tau_max, T, tp = res.info["tau_max"], 1e-3, 10e-6
    sys_ = net.system()
    row = sys_.index("c0")
    n_rule = _rule_periods(ModalSolver(sys_), row, tau_max, T, tp)
    C = sys_.C
    G = sys_.G.tocsr()
    b = sys_.B.toarray()[:, 0]
    jac = sp.csc_matrix(sp.diags(1.0 / C) @ (-G))
    x = np.zeros(sys_.n)                     # rise over ambient (one boundary)
    last, n_done, change = None, 0, np.inf
    t0 = time.perf_counter()
    while time.perf_counter() - t0 < cap_s:
        peak = -np.inf
        for a, bnd, p in ((0.0, tp, 20.0), (tp, T, 0.0)):
            sol = solve_ivp(lambda t, y, p=p: (-(G @ y) + b * p) / C, (a, bnd), x,
                            method="BDF", rtol=1e-6, atol=1e-9, jac=jac)
            x = sol.y[:, -1]
            peak = max(peak, float(sol.y[row].max()))
        n_done += 1
        if last is not None:
            change = abs(peak - last)
            if change * tau_max / T < 0.01:
                break
        last = peak
    t_brute = time.perf_counter() - t0
    done = change * tau_max / T < 0.01
    t_total = t_brute if done else t_brute / n_done * n_rule
    tag = "measured" if done else (f"EXTRAPOLATED: {n_done} periods measured, "
                                   f"{n_rule} needed by the exact solution")
    print(f"120-node graded chain: time constants {res.info['tau_min']:.2e} .. {tau_max:.2e} s; "
          f"peak {res.peak('c0'):.4f} degC")
    print(f"  pulsetherm whole periodic analysis from the graph (best of 30): "
          f"{t_exact * 1e3:.2f} ms")
    print(f"  brute force BDF (sparse Jacobian, from ambient, stop when change x tau_max/T < "
          f"0.01 K): {t_total:.1f} s ({tag}; {n_done} periods in {t_brute:.1f} s, "
          f"last peak {peak + 25.0:.4f} degC)")
    print(f"  ratio brute force / pulsetherm: {t_total / t_exact:.0f}x (goal >= 3000x)")


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
    import sys

    print(f"load average: {open('/proc/loadavg').read().strip()}")
    scaling_table()
    chain_brute_force(CHAIN_CAP_S)
    if "--quick" in sys.argv:
        print(f"load average: {open('/proc/loadavg').read().strip()}")
        return
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
          f"{t_full / t_eigh:.2f} (goal <= 1.5)")
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
    print(f"load average: {open('/proc/loadavg').read().strip()}")


if __name__ == "__main__":
    main()
