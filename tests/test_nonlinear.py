"""Nonlinear solver: k(T) conductances (Kirchhoff transform), temperature-dependent inputs,
thermal runaway, transients and periodic shooting."""
from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.integrate import solve_ivp

from pulsetherm.network.nonlinear import (NonlinearSolver, ThermalRunawayError,
                                          kirchhoff_U)
from pulsetherm.network.system import ThermalSystem
from pulsetherm_test_systems import chain  # tests/_systems.py, registered by conftest
from pulsetherm.waveforms.canonical import Piecewise, align




# -- steady state: Kirchhoff transform ---------------------------------------------------------
@pytest.mark.parametrize("linear_rise, brief_value", [(50.0, 56.1), (100.0, 127.2)])
def test_slab_kirchhoff_exact(linear_rise, brief_value):
    """One-material slab (20-node chain, k ∝ T^-4/3, sink at T0 = 300 K, total R = 1 K/W).

    Source: W. B. Joyce, Solid-State Electronics 18, 1975 (Kirchhoff transform);
    physics brief §8: T = T0·[1 − (a−1)(U − T0)/T0]^(−1/(a−1)), with U − T0 the linear rise.
    Closed form for a = 4/3 (derived): rise 50 K -> 300·(18/17)³ − 300 = 56.1164 K;
    100 K -> 300·(9/8)³ − 300 = 127.1484 K.  The brief prints 56.1 / 127.2; 127.2 is a
    rounding slip of 127.148 (checked to ±0.06 K only)."""
    N = 20
    sysm = chain(np.full(N, 1e-3), N / 1.0, a=4.0 / 3.0)
    T = NonlinearSolver(sysm).steady(np.array([linear_rise]))
    a, T0 = 4.0 / 3.0, 300.0
    exact = T0 * (1.0 - (a - 1.0) * linear_rise / T0) ** (-1.0 / (a - 1.0)) - T0
    assert abs((T[0] - T0) - exact) <= 1e-6 * exact
    assert abs((T[0] - T0) - brief_value) <= 0.06
    # every node, not only the hot end: U is linear along the uniform chain
    U = kirchhoff_U(T, a, T0)
    assert np.allclose(U, linear_rise * (1.0 - np.arange(N) / N), rtol=1e-9, atol=1e-9)


def test_kirchhoff_linear_limit():
    """a = 0: U(T) = T − Tref (definition), and a = 1: Tref·ln(T/Tref) (derived)."""
    T = np.array([250.0, 300.0, 420.0])
    assert np.allclose(kirchhoff_U(T, 0.0, 300.0), T - 300.0)
    assert np.allclose(kirchhoff_U(T, 1.0, 300.0), 300.0 * np.log(T / 300.0))
    # derivative of U is (T/Tref)^-a (definition), checked by central differences
    d = (kirchhoff_U(T + 1e-4, 1.3, 300.0) - kirchhoff_U(T - 1e-4, 1.3, 300.0)) / 2e-4
    assert np.allclose(d, (T / 300.0) ** -1.3, rtol=1e-8)


def test_kirchhoff_too_much_power_is_runaway():
    """For a > 1 U is bounded by Tref/(a−1) (= 900 K for a = 4/3, T0 = 300 K; derived from
    Joyce 1975): a linear rise of 1000 K has no steady state."""
    sysm = chain(np.full(5, 1e-3), 5.0, a=4.0 / 3.0)
    with pytest.raises(ThermalRunawayError, match="runaway"):
        NonlinearSolver(sysm).steady(np.array([1000.0]))


# -- temperature-dependent inputs: loop gain ----------------------------------------------------
def one_node(R=2.0, c=0.0):
    return chain([1e-3], 1.0 / R, tc=c, tc_ref=300.0)


@pytest.mark.parametrize("cPR", [0.0, 0.25, 0.5, 0.9, 0.999])
def test_one_node_temperature_coefficient(cPR):
    """One node, P·(1 + c·ΔT) through R: ΔT = P·R + c·P·R·ΔT, so ΔT = P·R/(1 − c·P·R)
    (derived)."""
    R, P = 2.0, 10.0
    c = cPR / (P * R)
    T = NonlinearSolver(one_node(R, c)).steady(np.array([P]))
    assert abs((T[0] - 300.0) - P * R / (1.0 - cPR)) <= 1e-9 * P * R / (1.0 - cPR)


@pytest.mark.parametrize("cPR", [1.0, 1.0 + 1e-9, 1.5, 4.0])
def test_one_node_runaway_exactly_at_unit_loop_gain(cPR):
    """Runaway exactly when c·P·R ≥ 1 (derived: the 1/(1 − c·P·R) above has no positive
    bounded value).  The error names the input and the loop gain."""
    R, P = 2.0, 10.0
    s = NonlinearSolver(one_node(R, cPR / (P * R)))
    with pytest.raises(ThermalRunawayError) as err:
        s.steady(np.array([P]))
    assert err.value.input_name == "heater"
    assert err.value.loop_gain == pytest.approx(cPR, rel=1e-9)
    assert "heater" in str(err.value) and "loop gain" in str(err.value)
    assert isinstance(err.value, ValueError)


def test_two_inputs_matrix_loop_gain():
    """Two heated nodes with coefficients: input temperatures y = Bᵀθ obey
    (I − R·diag(P c))·y = R·P (derived), R the 2 × 2 input resistance matrix."""
    g = np.array([3.0, 2.0, 1.5])
    base = chain([1e-3, 1e-3, 1e-3], g)
    B = sp.csr_matrix(np.array([[1.0, 0.0], [0.0, 0.0], [0.0, 1.0]]))
    c = np.array([0.01, 0.02])
    sysm = ThermalSystem(base.node_names, base.labels, base.C, base.G, base.Gb,
                         base.boundary_names, base.T_boundary, B, ("a", "b"), base.edge_i,
                         base.edge_j, base.edge_g, base.edge_a, base.edge_Tref, c,
                         np.array([300.0, 300.0]))
    P = np.array([5.0, 8.0])
    R = B.T @ np.linalg.solve(base.G.toarray(), B.toarray())
    y = np.linalg.solve(np.eye(2) - R * (P * c)[None, :], R @ P)
    T = NonlinearSolver(sysm).steady(P)
    assert np.allclose(B.T @ (T - 300.0), y, rtol=1e-10)
    # raising the powers until λ_max(R diag(P c)) = 1.2 must report runaway
    gain = np.max(np.linalg.eigvals(R * (P * c)[None, :]).real)
    with pytest.raises(ThermalRunawayError) as err:
        NonlinearSolver(sysm).steady(P * 1.2 / gain)
    assert err.value.loop_gain == pytest.approx(1.2, rel=1e-9)


# -- transients ----------------------------------------------------------------------------------
def reference_rhs(sysm: ThermalSystem, P_of_t):
    """Independent right-hand side (written here from the equations, not from the solver):
    C dT/dt = B·P(1 + c(T̄ − Tref)) − Σ_edges g (U(T_i) − U(T_j))."""
    N = sysm.n
    a, Tr = sysm.edge_a, sysm.edge_Tref

    def U(T):
        return Tr / (1 - a) * ((T / Tr) ** (1 - a) - 1)

    def rhs(t, T):
        Tj = np.append(T, sysm.T_boundary[0])[sysm.edge_j]
        q = sysm.edge_g * (U(T[sysm.edge_i]) - U(Tj))
        out = np.zeros(N)
        np.add.at(out, sysm.edge_i, -q)
        free = sysm.edge_j < N
        np.add.at(out, sysm.edge_j[free], q[free])
        Tbar = sysm.B.T @ T
        out += sysm.B @ (P_of_t(t) * (1 + sysm.input_tc * (Tbar - sysm.input_Tref)))
        return out / sysm.C

    return rhs


def test_nonlinear_transient_against_solve_ivp():
    """Pulsed transient of a 5-node k(T) chain with copper-loss input against an
    independent stiff integration (scipy solve_ivp, Radau, rtol 1e-11) of the same equations,
    restarted at every edge; common practice, no source.  Agreement 1e-6 of the rise."""
    sysm = chain(np.geomspace(2e-5, 2e-3, 5), 4.0, a=1.3, tc=0.004)
    pw = Piecewise([0.0, 1e-3, 4e-3], [30.0, 0.0])
    edges, level, slope = align([pw], duration=8e-3)
    res = NonlinearSolver(sysm, rtol=1e-10, atol=1e-10).transient(edges, level, slope, None,
                                                                   np.arange(5))
    T = np.full(5, 300.0)
    ref = []
    for k in range(edges.size - 1):
        lv = level[k]
        sol = solve_ivp(reference_rhs(sysm, lambda t, lv=lv: lv), (edges[k], edges[k + 1]), T,
                        method="Radau", rtol=1e-11, atol=1e-12)
        T = sol.y[:, -1]
        ref.append(T)
    ref = np.array(ref)
    got = np.array([res.theta[np.flatnonzero(res.t == e)[0]] for e in edges[1:]])
    rise = np.max(ref - 300.0)
    assert rise > 10.0
    assert np.max(np.abs(got - ref)) <= 1e-6 * rise


def test_massless_node_transient_matches_reference():
    """A massless middle node is eliminated exactly; the result matches the independent
    integration of the 4-node network where that node is removed by hand (two k(T) edges in
    series, solved for the middle temperature; common practice, no source) — checked
    through the steady value after a long step and the first segment end."""
    C = np.array([1e-4, 0.0, 5e-4])
    sysm = chain(C, 5.0, a=1.3)
    s = NonlinearSolver(sysm, rtol=1e-10, atol=1e-10)
    edges, level, slope = align([Piecewise([0.0, 0.2], [20.0], periodic=False)], duration=0.2)
    res = s.transient(edges, level, slope, None, np.arange(3))
    steady = s.steady(np.array([20.0]))
    # time constants ~ 1e-4..1e-3 s: after 0.2 s the transient is below e^-100
    assert np.allclose(res.state_end, steady, rtol=0, atol=1e-7)
    # the massless node sits where both its k(T) edges carry the same heat
    Ta, Tm, Tb = res.state_end
    assert abs((kirchhoff_U(Ta, 1.3, 300) - kirchhoff_U(Tm, 1.3, 300))
               - (kirchhoff_U(Tm, 1.3, 300) - kirchhoff_U(Tb, 1.3, 300))) < 1e-8


def test_periodic_shooting_equals_long_transient():
    """Periodic steady state by shooting equals the last period of a brute-force transient
    run until the start-up has died out (slowest τ ≈ 0.6 ms, 10 periods of 4 ms: e^-60);
    common practice, no source.  Agreement 1e-6 of the rise at every segment end."""
    sysm = chain(np.array([1e-5, 4e-5, 1e-4]), 4.0, a=1.3, tc=0.003)
    s = NonlinearSolver(sysm, rtol=1e-9, atol=1e-9)
    pw = Piecewise([0.0, 0.5e-3, 4e-3], [40.0, 0.0])
    edges, level, slope = align([pw])
    per = s.periodic(edges, level, slope, np.arange(3))
    assert per.info["shooting_iterations"] < 15
    e2, l2, s2 = align([pw], duration=10 * 4e-3)
    long = s.transient(e2, l2, s2, None, np.arange(3))
    T_last = 9 * 4e-3
    got = np.array([per.theta[np.flatnonzero(per.t == e)[0]] for e in edges])
    ref = np.array([long.theta[np.flatnonzero(np.isclose(long.t, T_last + e, rtol=0,
                                                         atol=1e-12))[-1]] for e in edges])
    rise = np.max(got - 300.0)
    assert rise > 5.0
    assert np.max(np.abs(got - ref)) <= 1e-6 * rise
    # periodic state: start and end of the period coincide
    assert np.allclose(per.state_start, per.state_end, rtol=0, atol=1e-7)


def test_periodic_reduces_to_linear_formula():
    """Linear network (a = 0, c = 0), one RC: the periodic peak of a rectangular train is
    P·R(1 − e^{−tp/τ})/(1 − e^{−T/τ}) (physics brief §5, single RC: R 1 K/W, τ 1 ms, 100 W,
    0.1 ms in 1 ms -> 15.0545 K peak, 6.1207 K min; derived)."""
    sysm = chain([1e-3], 1.0)
    s = NonlinearSolver(sysm, rtol=1e-11, atol=1e-11)
    edges, level, slope = align([Piecewise([0.0, 1e-4, 1e-3], [100.0, 0.0])])
    per = s.periodic(edges, level, slope, np.array([0]))
    peak = per.theta[np.flatnonzero(per.t == 1e-4)[0], 0] - 300.0
    low = per.theta[0, 0] - 300.0
    assert peak == pytest.approx(15.0545, abs=1e-4)
    assert low == pytest.approx(6.1207, abs=1e-4)
    assert per.mean[0] - 300.0 == pytest.approx(10.0, rel=1e-6)


def test_bad_option_named():
    with pytest.raises(ValueError, match="tolerance|unknown option"):
        NonlinearSolver(chain([1e-3], 1.0), tolerance=1e-3)
