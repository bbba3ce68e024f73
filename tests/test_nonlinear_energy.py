"""Nonlinear solver: energy balance with k(T) edges and temperature-dependent inputs, the
Radau IIA coefficients, and massless (algebraic) nodes inside the integrator."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from pulsetherm.network.model import ThermalNetwork
from pulsetherm.network.nonlinear import (RADAU_A, RADAU_B, RADAU_C, RADAU_E, RADAU_MU,
                                          NonlinearSolver, kirchhoff_U)
from pulsetherm_test_systems import chain  # tests/_systems.py, registered by conftest
from pulsetherm.waveforms.canonical import Piecewise, align




def U(T, a=1.3, Tr=300.0):
    """Kirchhoff integral written out here (Joyce 1975, a ≠ 1)."""
    return Tr / (1 - a) * ((T / Tr) ** (1 - a) - 1)


# -- the method's coefficients -----------------------------------------------------------------
def test_radau_coefficients():
    """3-stage Radau IIA (Hairer & Wanner, Solving ODEs II, 1996, IV.5 Table 5.6): collocation
    conditions Σ_j a_ij c_j^(k−1) = c_i^k / k (k = 1..3), quadrature order 5
    (Σ b_j c_j^(k−1) = 1/k, k = 1..5), c_3 = 1 and b = last row of A (stiffly accurate), the
    real eigenvalue of A⁻¹ is μ (IV.8), and the embedded estimate is exact for
    polynomials of degree <= 2 (Σ e_j c_j^k with the y0 term: derived)."""
    for k in range(1, 4):
        assert np.allclose(RADAU_A @ RADAU_C ** (k - 1), RADAU_C ** k / k, rtol=0, atol=1e-15)
    for k in range(1, 6):
        assert RADAU_B @ RADAU_C ** (k - 1) == pytest.approx(1.0 / k, abs=1e-15)
    assert RADAU_C[2] == 1.0 and np.array_equal(RADAU_B, RADAU_A[2])
    ev = np.linalg.eigvals(np.linalg.inv(RADAU_A))
    assert np.min(np.abs(ev - RADAU_MU)) < 1e-12
    # y = t^k (k = 1, 2) over a unit step from 0: Z_j = c_j^k, f(0) = [k == 1];
    # the embedded error numerator f0 + Σ E_j Z_j must vanish (order of the estimate)
    for k in (1, 2):
        assert float(k == 1) + RADAU_E @ RADAU_C ** k == pytest.approx(0.0, abs=1e-13)


# -- energy balance ----------------------------------------------------------------------------
def reference_with_energy(sysm, P_of_t, edges, T0):
    """Independent stiff integration (scipy solve_ivp, Radau, rtol 1e-11) of the
    capacitive chain with two extra states: E_in' = P(1 + c(T0 − Tref)) and
    E_out' = g_last·(U(T_last) − U(T_b)); common practice, no source."""
    N = sysm.n
    g, c, cref, Tb = sysm.edge_g, sysm.input_tc[0], sysm.input_Tref[0], sysm.T_boundary[0]

    def rhs(t, x):
        T = x[:N]
        Text = np.append(T, Tb)
        q = g * (U(T) - U(Text[1:]))
        dT = np.zeros(N)
        dT -= q
        dT[1:] += q[:-1]
        p = P_of_t(t) * (1 + c * (T[0] - cref))
        dT[0] += p
        return np.concatenate([dT / sysm.C, [p, q[-1]]])

    x = np.concatenate([T0, [0.0, 0.0]])
    for k in range(edges.size - 1):
        sol = solve_ivp(rhs, (edges[k], edges[k + 1]), x, method="Radau", rtol=1e-11,
                        atol=1e-12)
        x = sol.y[:, -1]
    return x[:N], x[N], x[N + 1]


def test_energy_terms_against_independent_integration():
    """k(T) chain (a = 1.3) with a copper-loss input (c = 0.004 1/K), pulsed: the solver's
    actual input energy, heat into the sink and stored energy agree with an independent
    integration carrying the energies as extra states (1e-7 relative), and the balance
    closes to 1e-9 (rtol 1e-8)."""
    sysm = chain(np.geomspace(2e-5, 2e-3, 4), 4.0, a=1.3, tc=0.004)
    pw = Piecewise([0.0, 1e-3, 4e-3], [30.0, 0.0])
    edges, level, slope = align([pw], duration=8e-3)
    res = NonlinearSolver(sysm, rtol=1e-8, atol=1e-9).transient(edges, level, slope, None,
                                                                  np.arange(4))
    T_ref, Ein_ref, Eout_ref = reference_with_energy(
        sysm, lambda t: 30.0 if (t % 4e-3) < 1e-3 else 0.0, edges, np.full(4, 300.0))
    e = res.info["energy_J"]
    nominal = 2 * 30.0 * 1e-3
    assert Ein_ref > 1.05 * nominal          # the copper-loss term is really there
    assert e["input_J"] == pytest.approx(Ein_ref, rel=1e-7)
    assert e["to_boundaries_J"] == pytest.approx(Eout_ref, rel=1e-7)
    assert e["stored_J"] == pytest.approx(float(sysm.C @ (T_ref - 300.0)), rel=1e-7)
    assert res.info["energy_error"] < 1e-9


def test_constant_coefficient_input_energy_is_nominal():
    """With c = 0 the actual input energy is the nominal ∫P dt exactly (the Radau
    quadrature is exact for the piecewise-linear power; derived) — ramps included."""
    sysm = chain(np.array([1e-4, 0.0, 5e-4]), 5.0, a=1.3)
    pw = Piecewise([0.0, 2e-4, 6e-4, 1e-3], [0.0, 20.0, 5.0], slope=[1e5, 0.0, -1e4])
    edges, level, slope = align([pw], duration=3e-3)
    res = NonlinearSolver(sysm, rtol=1e-8).transient(edges, level, slope, None, np.arange(3))
    h = np.diff(edges)
    nominal = float(h @ level[:, 0] + 0.5 * (h * h) @ slope[:, 0])
    assert res.info["energy_J"]["input_J"] == pytest.approx(nominal, rel=1e-12)
    assert res.info["energy_error"] < 1e-8


def _network(massless: bool):
    """Die–attach–flange to a 25 degC sink, k(T) a = 1.3 in the die, 0.4 in the attach, a
    copper-loss input on the die (degC API)."""
    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    net.add_node("die", capacity=2e-4)
    net.add_node("attach", capacity=0.0 if massless else 5e-5)
    net.add_node("flange", capacity=3e-3)
    net.connect("die", "attach", resistance=1.5, k_exponent=1.3)
    net.connect("attach", "flange", resistance=0.5, k_exponent=0.4)
    net.connect("flange", "sink", resistance=0.8)
    net.add_input("pa", nodes={"die": 1.0}, temp_coeff=0.002)
    return net


@pytest.mark.parametrize("massless", [False, True])
def test_response_energy_error_is_reported(massless):
    """Through the network API: the Response of a nonlinear transient and of a periodic
    state carries a finite energy_error below 1e-6 (no NaN; project rule), and the periodic
    balance stores nothing over one period (start and end coincide)."""
    net = _network(massless)
    pw = Piecewise([0.0, 1e-3, 5e-3], [40.0, 0.0])
    tr = net.transient({"pa": pw}, duration=12e-3, method="nonlinear")
    assert math.isfinite(tr.energy_error) and tr.energy_error < 1e-6
    assert tr.energy["input_J"] > 0 and tr.energy["to_boundaries_J"] > 0
    assert "nan" not in tr.summary().lower()
    # whole periods (one solver run): the actual input exceeds the nominal 2 x 40 mJ, as
    # the copper-loss coefficient adds heat while the die is above its 25 degC reference
    two = net.transient({"pa": pw}, duration=10e-3, method="nonlinear")
    assert 0.08 < two.energy["input_J"] < 0.08 * 1.2
    assert two.energy["input_J"] == pytest.approx(
        two.energy["stored_J"] + two.energy["to_boundaries_J"], rel=1e-6)
    per = net.periodic({"pa": pw}, method="nonlinear")
    assert math.isfinite(per.energy_error) and per.energy_error < 1e-6
    assert abs(per.energy["stored_J"]) < 1e-6 * per.energy["input_J"]
    # one period: what goes in comes out into the sink
    assert per.energy["to_boundaries_J"] == pytest.approx(per.energy["input_J"], rel=1e-6)


# -- massless nodes inside the integrator ------------------------------------------------------
def test_massless_node_pulsed_transient_against_reduced_reference():
    """A massless middle node of a k(T) chain (a = 1.3) under a pulse train: at every segment
    end the solver (Radau IIA on the DAE, no elimination) matches an independent
    integration of the 2-state reduced ODE whose middle temperature is found by a scalar
    root search (brentq) at each evaluation; common practice, no source.  1e-6 of the
    rise."""
    C = np.array([1e-4, 0.0, 5e-4])
    g = 5.0
    sysm = chain(C, g, a=1.3)
    pw = Piecewise([0.0, 3e-4, 1e-3], [25.0, 0.0])
    edges, level, slope = align([pw], duration=4e-3)
    res = NonlinearSolver(sysm, rtol=1e-10, atol=1e-10).transient(edges, level, slope, None,
                                                                   np.arange(3))

    def middle(Ta, Tb):
        return brentq(lambda Tm: (U(Ta) - U(Tm)) - (U(Tm) - U(Tb)), min(Ta, Tb), max(Ta, Tb),
                      xtol=1e-14, rtol=1e-15) if Ta != Tb else Ta

    def rhs(t, x, p):
        Ta, Tb = x
        Tm = middle(Ta, Tb)
        q1 = g * (U(Ta) - U(Tm))
        q3 = g * (U(Tb) - U(300.0))
        return [(p - q1) / C[0], (q1 - q3) / C[2]]

    x = np.array([300.0, 300.0])
    worst = 0.0
    rise = 0.0
    for k in range(edges.size - 1):
        sol = solve_ivp(rhs, (edges[k], edges[k + 1]), x, method="Radau", rtol=1e-11,
                        atol=1e-11, args=(level[k, 0],))
        x = sol.y[:, -1]
        got = res.theta[np.flatnonzero(np.isclose(res.t, edges[k + 1], rtol=0,
                                                  atol=1e-15))[-1]]
        ref = np.array([x[0], middle(x[0], x[1]), x[1]])
        worst = max(worst, float(np.max(np.abs(got - ref))))
        rise = max(rise, float(np.max(ref - 300.0)))
    assert rise > 5.0
    assert worst <= 1e-6 * rise
    # and the algebraic row holds at the end: both edges carry the same heat
    Ta, Tm, Tb = res.state_end
    assert abs((kirchhoff_U(Ta, 1.3, 300) - kirchhoff_U(Tm, 1.3, 300))
               - (kirchhoff_U(Tm, 1.3, 300) - kirchhoff_U(Tb, 1.3, 300))) < 1e-9


# -- periodic shooting: Krylov corrector ------------------------------------------------------
def test_krylov_shooting_equals_dense_and_lifts_the_size_limit(monkeypatch):
    """The matrix-free (GMRES) shooting correction reaches the same periodic state as the
    dense monodromy (both drive the same nonlinear residual Φ(x) − x to zero; common
    practice, no source): 24-node k(T) chain with a massless node, 1e-7 of the rise.  With
    the dense limit lowered below the network size, "auto" picks the Krylov path instead of
    refusing, and "dense" names the limit and the alternatives."""
    from pulsetherm.network import nonlinear

    N = 24
    C = np.geomspace(1e-5, 1e-2, N)
    C[N // 3] = 0.0
    sysm = chain(C, 10.0, a=1.3, tc=0.003)
    opts = {"rtol": 1e-7, "atol": 1e-8}
    pw = Piecewise([0.0, 0.5e-3, 4e-3], [40.0, 0.0])
    edges, level, slope = align([pw])
    rows = np.arange(0, N, 4)
    dense = NonlinearSolver(sysm, shooting="dense", **opts).periodic(edges, level, slope, rows)
    kry = NonlinearSolver(sysm, shooting="krylov", **opts).periodic(edges, level, slope, rows)
    assert dense.info["shooting"] == "dense" and kry.info["shooting"] == "krylov"
    assert kry.info["shooting_iterations"] <= dense.info["shooting_iterations"] + 2
    rise = float(np.max(dense.theta - 300.0))
    assert rise > 20.0
    assert np.max(np.abs(kry.theta - dense.theta)) <= 1e-7 * rise
    assert kry.info["energy_error"] < 1e-6
    monkeypatch.setattr(nonlinear, "PERIODIC_LIMIT", 10)
    auto = NonlinearSolver(sysm, **opts).periodic(edges, level, slope, rows)
    assert auto.info["shooting"] == "krylov"
    with pytest.raises(ValueError, match="limited to 10.*krylov"):
        NonlinearSolver(sysm, shooting="dense").periodic(edges, level, slope, rows)
    with pytest.raises(ValueError, match="shooting"):
        NonlinearSolver(sysm, shooting="fast")


def test_nonlinear_warmup_time_reaches_the_target():
    """Warm-up of a nonlinear network (massless attach): a transient from ambient run for
    exactly the reported warm-up time ends at 99 % of the periodic peak rise (definition of
    the warm-up time), and 0.5 % earlier it is still below (first crossing); 1e-5 of the
    rise.  The flange lags the pulse, so its crossing falls inside a segment."""
    net = _network(True)
    pw = Piecewise([0.0, 1e-3, 5e-3], [40.0, 0.0])
    per = net.periodic({"pa": pw}, method="nonlinear")
    for p in ("die", "flange"):
        w = per.warmup(p)
        target = 0.99 * (per.peak(p) - 25.0)
        end = net.transient({"pa": pw}, duration=w, method="nonlinear", probes=[p])
        assert end.T(p)[-1] - 25.0 == pytest.approx(target, rel=1e-5)
        early = net.transient({"pa": pw}, duration=0.995 * w, method="nonlinear", probes=[p])
        assert np.max(early.T(p)) - 25.0 < target


def test_linear_network_through_nonlinear_solver_matches_modal():
    """A network with constant k and no coefficients forced through the nonlinear solver
    (as ``[model] nonlinear = true`` does): periodic figures and the warm-up time equal the
    exact modal solver's (the warm-up is handed to the modal period jump; the flange's
    extremes lie inside a segment and are located by the refinement); 1e-7."""
    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    net.add_node("die", capacity=2e-4)
    net.add_node("flange", capacity=3e-2)
    net.connect("die", "flange", resistance=1.5)
    net.connect("flange", "sink", resistance=0.8)
    net.add_input("pa", nodes={"die": 1.0})
    pw = Piecewise([0.0, 1e-4, 1e-3], [40.0, 0.0])
    nl = net.periodic({"pa": pw}, method="nonlinear")
    md = net.periodic({"pa": pw}, method="modal")
    assert nl.method == "nonlinear"
    for p in ("die", "flange"):
        assert nl.peak(p) == pytest.approx(md.peak(p), rel=1e-7)   # interior peak: refined
        assert nl.min(p) == pytest.approx(md.min(p), rel=1e-7)
        assert nl.mean(p) == pytest.approx(md.mean(p), rel=1e-7)
        assert nl.warmup(p) == pytest.approx(md.warmup(p), rel=1e-7)
