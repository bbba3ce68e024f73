"""Random connected networks: the exact modal engine against an independent stiff ODE
integration (scipy.integrate.solve_ivp, Radau, rtol 1e-10) and the energy balance.

Reference: direct numerical integration of C·dT/dt = −G·T + Gb·T_b + B·P(t) assembled here
from the edge list (independent of network/assemble.py), restarted at every waveform edge.
Common practice, no source.
"""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, example, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

from pulsetherm.network.model import ThermalNetwork
from pulsetherm.network.modal import ModalSolver, gk
from pulsetherm.waveforms.canonical import Piecewise

WAVE = Piecewise([0.0, 1e-4, 3e-4, 1e-3], [2.0, 1.0, 0.0], slope=[0.0, -5000.0, 0.0])


def random_network(n: int, seed: int):
    rng = np.random.default_rng(seed)
    C = 10.0 ** rng.uniform(-7, -1, n)
    C[0], C[-1] = 1e-7, 1e-1                       # time constants spread over >= 6 decades
    edges = []
    for k in range(1, n):                         # random spanning tree: connected
        edges.append((int(rng.integers(0, k)), k, 10.0 ** rng.uniform(-1, 1)))
    for _ in range(int(rng.integers(0, n))):      # extra links (parallel ones allowed)
        a, b = rng.integers(0, n, 2)
        if a != b:
            edges.append((int(a), int(b), 10.0 ** rng.uniform(-1, 1)))
    to_b = [(int(k), int(rng.integers(0, 2)), 10.0 ** rng.uniform(-1, 1))
            for k in rng.choice(n, size=max(1, n // 5), replace=False)]
    Tb = np.array([25.0, 40.0])
    heated = [int(x) for x in rng.choice(n, size=min(2, n), replace=False)]
    net = ThermalNetwork()
    net.add_boundary("b0", temperature=Tb[0])
    net.add_boundary("b1", temperature=Tb[1])
    for k in range(n):
        net.add_node(f"n{k}", capacity=C[k])
    for a, b, g in edges:
        net.connect(f"n{a}", f"n{b}", conductance=g)
    for k, b, g in to_b:
        net.connect(f"n{k}", f"b{b}", conductance=g)
    net.add_input("p", nodes={f"n{h}": 1.0 + i for i, h in enumerate(heated)})
    # independent dense matrices (degC)
    G = np.zeros((n, n))
    for a, b, g in edges:
        G[a, a] += g
        G[b, b] += g
        G[a, b] -= g
        G[b, a] -= g
    f = np.zeros(n)
    for k, b, g in to_b:
        G[k, k] += g
        f[k] += g * Tb[b]
    w = np.zeros(n)
    for i, h in enumerate(heated):
        w[h] += 1.0 + i
    w /= w.sum()
    return net, C, G, f, w


def reference(C, G, f, w, wave: Piecewise, T0: np.ndarray, t_eval: np.ndarray, duration):
    """Radau from T0 (degC) over [0, duration], restarted at every edge of ``wave``."""
    jac = -G / C[:, None]
    period = wave.span
    n_per = int(np.ceil(duration / period - 1e-9))
    cuts = np.unique(np.concatenate([np.add.outer(np.arange(n_per) * period,
                                                  wave.edges).ravel(), [duration]]))
    cuts = cuts[cuts <= duration * (1 + 1e-12)]
    out = np.empty((t_eval.size, C.size))
    amb = np.linalg.solve(G, f)                   # integrate the rise over ambient
    y = T0 - amb
    for a, b in zip(cuts[:-1], cuts[1:]):
        mid = 0.5 * (a + b)
        k = int(np.searchsorted(wave.edges, mid % period, side="right") - 1)
        sl = float(wave.slope[k])
        p0 = float(wave.value(np.array([mid]))[0]) - sl * (mid - a)   # power just after a

        def rhs(t, x, p0=p0, sl=sl, a=a):
            return (-G @ x + w * (p0 + sl * (t - a))) / C

        sel = (t_eval >= a) & (t_eval <= b)
        te = np.unique(np.concatenate([t_eval[sel], [b]]))
        sol = solve_ivp(rhs, (a, b), y, method="Radau", rtol=1e-10, atol=1e-12, jac=jac,
                        t_eval=te, first_step=1e-12)
        assert sol.success
        if sel.any():
            out[sel] = sol.y[:, np.searchsorted(te, t_eval[sel])].T
        y = sol.y[:, -1]
    return out + amb


def check_transient_against_radau(n, seed, hot):
    """Modal transient (3 periods: period jumping + within-period sampling) vs Radau within
    1e-6 K; energy balance within 1e-9 relative.  (The imbalance grows like eps x the
    spread of time constants: ~1e-10 at 1e8, up to ~7e-10 measured at 1e9.)"""
    net, C, G, f, w = random_network(n, seed)
    solver = ModalSolver(net.system())
    assume(solver.tau.max() / solver.tau.min() >= 1e6)   # time constants over >= 6 decades
    amb = np.linalg.solve(G, f)
    T0 = amb + (np.random.default_rng(seed).uniform(0, 30, n) if hot else 0.0)
    initial = dict(zip([f"n{k}" for k in range(n)], T0)) if hot else None
    probes = [f"n{k}" for k in range(n)]
    tr = net.transient({"p": WAVE}, duration=3e-3, initial=initial, probes=probes)
    t = tr.t
    ref = reference(C, G, f, w, WAVE, T0, t, 3e-3)
    err = np.max(np.abs(tr.temperatures - ref))
    assert err <= 1e-6, err
    assert tr.energy_error <= 1e-9


@settings(max_examples=5, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(n=st.integers(2, 24), seed=st.integers(0, 2**31 - 1), hot=st.booleans())
def test_random_transient_against_radau(n, seed, hot):
    check_transient_against_radau(n, seed, hot)


@pytest.mark.slow
@settings(max_examples=8, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(n=st.integers(2, 60), seed=st.integers(0, 2**31 - 1), hot=st.booleans())
@example(n=12, seed=6435631, hot=True)   # energy balance 1.7e-9 with the dsyevd driver
def test_random_transient_against_radau_large(n, seed, hot):
    check_transient_against_radau(n, seed, hot)


@settings(max_examples=4, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(n=st.integers(2, 30), seed=st.integers(0, 2**31 - 1))
def test_random_periodic_is_a_fixed_point(n, seed):
    """The periodic steady state, integrated one period by Radau from its own start state,
    returns to it (1e-6 K); period mean equals the steady state at the mean power (exact
    identity of the averaged equations); energy balance 1e-9."""
    net, C, G, f, w = random_network(n, seed)
    probes = [f"n{k}" for k in range(n)]
    res = net.periodic({"p": WAVE}, probes=probes)
    T_start = res.temperatures[0]
    ref = reference(C, G, f, w, WAVE, T_start, res.t, WAVE.span)
    assert np.max(np.abs(res.temperatures - ref)) <= 1e-6
    mean_ref = np.linalg.solve(G, f + w * WAVE.mean)
    assert np.max(np.abs(res.means - mean_ref)) <= 1e-8 * max(1.0, np.abs(mean_ref).max())
    assert res.energy_error <= 1e-9


def test_gk_series_and_recursion_agree():
    """g_k across the series/recursion switch against high-order series in float
    (common practice, no source): relative 1e-13."""
    from math import factorial

    x = np.array([0.0, 1e-8, 0.05, 0.0999, 0.1, 0.1001, 0.5, 3.0, 50.0, 1e4])
    for k in range(3):
        exact = []
        for xi in x:
            if xi < 5:
                exact.append(sum((-xi) ** j / factorial(j + k + 1) for j in range(80)))
            else:  # recursion is exact enough far from the switch
                g = -np.expm1(-xi) / xi
                for kk in range(k):
                    g = (1 / factorial(kk + 1) - g) / xi
                exact.append(g)
        assert np.allclose(gk(k, x), exact, rtol=1e-13, atol=0)
