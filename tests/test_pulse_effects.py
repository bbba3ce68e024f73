"""Droop and pulse-to-pulse figures from the exact periodic response
(network/pulse_effects.py), checked against

* a hand closed form for a single RC under a two-interval stagger (written here; the
  recurrence θ_end = PR + (θ_start − PR)·e^{−w/τ}, θ_next = θ_end·e^{−off/τ} of a first-order
  system, common practice, no source);
* a brute-force evaluation of the same response: the full state propagated with the
  matrix exponential (scipy ``expm``, Padé; the periodic start from (I − Φ(T))·x₀ = r) and
  every pulse sampled densely (Gauss-Legendre on sub-intervals graded toward each segment
  start), independent of the modal code;
* the monotonic sanity rule: more cooling never worsens droop, stability or damage
  (property test).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg as sla
from hypothesis import given, settings, strategies as st

from pulsetherm.network.cycling import CyclingSettings, cycling_figures
from pulsetherm.network.model import ThermalNetwork
from pulsetherm.network.pulse_effects import (PulseEffectsError, pulse_set, pulses_of,
                                              rf_effects, stability_db, trace_node)
from pulsetherm.waveforms.canonical import Piecewise, align, as_piecewise
from pulsetherm.waveforms.pulses import Burst, PulseTrain, Stagger


def _single_rc(R=2.0, tau=1e-3):
    net = ThermalNetwork()
    net.add_boundary("amb", 25.0)
    net.add_node("j", capacity=tau / R)
    net.connect("j", "amb", resistance=R)
    net.add_input("pa", {"j": 1.0})
    return net


# ======================================================================================
# single RC, by hand
# ======================================================================================
def test_single_rc_two_interval_stagger_hand_closed_form():
    R, tau, P, w, T1, T2 = 2.0, 1e-3, 10.0, 200e-6, 0.7e-3, 1.3e-3
    net = _single_rc(R, tau)
    ps = pulse_set(trace_node(net, {"pa": Stagger(P, (T1, T2), w)}, "j"), 0)
    # hand closed form: s1 = start of pulse 1, e1 its end, s2, e2 the second pulse
    PR, Ew = P * R, math.exp(-w / tau)
    E1, E2 = math.exp(-(T1 - w) / tau), math.exp(-(T2 - w) / tau)
    s1 = PR * (1 - Ew) * (Ew * E1 + 1) * E2 / (1 - Ew * Ew * E1 * E2)
    e1 = PR * (1 - Ew) + s1 * Ew
    s2 = e1 * E1
    e2 = PR * (1 - Ew) + s2 * Ew
    mean = lambda s: PR + (s - PR) * tau / w * (1 - Ew)  # noqa: E731  (∫ of the rise / w)
    np.testing.assert_allclose(ps.rise_start, [s1, s2], rtol=1e-12)
    np.testing.assert_allclose(ps.rise_end, [e1, e2], rtol=1e-12)
    np.testing.assert_allclose(ps.rise_mean, [mean(s1), mean(s2)], rtol=1e-12)
    np.testing.assert_allclose(ps.t_start, [0.0, T1], atol=1e-18)
    cg, cp = -0.015, 0.1
    fx = rf_effects(ps, cg, cp, "pa")
    d1, d2 = cg * (e1 - s1), cg * (e2 - s2)
    assert fx.worst_droop_dB == pytest.approx(d1 if abs(d1) > abs(d2) else d2, rel=1e-12)
    assert fx.worst_drift_deg == pytest.approx(cp * max(e1 - s1, e2 - s2), rel=1e-12)
    dm = abs(mean(s2) - mean(s1))
    assert fx.gain_pp_dB == pytest.approx(0.015 * dm, rel=1e-10)
    assert fx.gain_rms_dB == pytest.approx(0.015 * dm / 2, rel=1e-10)   # two points: σ = Δ/2
    assert fx.phase_pp_deg == pytest.approx(0.1 * dm, rel=1e-10)
    # amplitude ratio: A = 10^(±g/2/20) about the middle; σ/mean by hand
    a = 10 ** (np.array([+1, -1]) * 0.015 * dm / 2 / 20)
    assert fx.amplitude_stability_dB == pytest.approx(20 * math.log10(a.std() / a.mean()),
                                                      rel=1e-9)
    # phase: two unit phasors ±δ/2 apart: |e^{jφ} − mean| = sin(δ/2), |mean| = cos(δ/2)
    dphi = math.radians(0.1 * dm)
    assert fx.phase_stability_dB == pytest.approx(20 * math.log10(math.tan(dphi / 2)),
                                                  rel=1e-9)


def test_plain_train_has_no_pulse_to_pulse_variation():
    """One pulse per period: every pulse alike, stability None (−∞ dB), p-p exactly 0."""
    net = _single_rc()
    fx = rf_effects(pulse_set(trace_node(net, {"pa": PulseTrain(5.0, 1e-4, 1e-3)}, "j"), 0),
                    -0.02, 0.2)
    assert fx.pulses.count == 1
    assert fx.gain_pp_dB == 0.0 and fx.phase_pp_deg == 0.0
    assert fx.stability_dB is None and fx.amplitude_stability_dB is None
    assert fx.worst_droop_dB < 0 < fx.worst_drift_deg


def test_stability_db_definition():
    """20·log10(rms deviation / mean), common practice, no source: values 0.9 and 1.1
    deviate by 0.1 rms about a mean of 1 -> −20 dB."""
    assert stability_db(np.array([0.9, 1.1])) == pytest.approx(-20.0, rel=1e-12)
    assert stability_db(np.array([2.0, 2.0])) is None


def test_pulses_of_wraps_through_the_period_end():
    edges = np.array([0.0, 1.0, 2.0, 3.0, 4.0])
    level = np.array([5.0, 0.0, 5.0, 5.0])
    runs = pulses_of(edges, level, np.zeros(4))
    assert [r.tolist() for r in runs] == [[2, 3, 0]]
    assert pulses_of(edges, np.full(4, 3.0), np.zeros(4)) == []


def test_bad_coefficients_and_constant_power_are_refused():
    net = _single_rc()
    tr = trace_node(net, {"pa": PulseTrain(5.0, 1e-4, 1e-3)}, "j")
    with pytest.raises(PulseEffectsError, match="gain_tc"):
        rf_effects(pulse_set(tr, 0), float("nan"), 0.1)
    from pulsetherm.waveforms.pulses import Constant
    tr = trace_node(net, {"pa": Constant(2.0)}, "j")
    with pytest.raises(PulseEffectsError, match="constant"):
        rf_effects(pulse_set(tr, 0), -0.01, 0.1)
    with pytest.raises(PulseEffectsError, match="node"):
        trace_node(net, {"pa": Constant(2.0)}, "nowhere")


# ======================================================================================
# brute force: matrix exponential, every pulse sampled densely
# ======================================================================================
def _ladder(mass_j=False, g_sink=2.0):
    """junction - die - attach - base - sink boundary, one input on the junction; the
    junction optionally massless (a direct input-to-temperature path)."""
    net = ThermalNetwork()
    net.add_boundary("amb", 30.0)
    net.add_node("j", capacity=0.0 if mass_j else 2e-6)
    net.add_node("die", capacity=4e-5)
    net.add_node("attach", capacity=1e-3)
    net.add_node("base", capacity=0.05)
    net.connect("j", "die", resistance=0.3)
    net.connect("die", "attach", resistance=0.6)
    net.connect("attach", "base", resistance=0.4)
    net.connect("base", "amb", conductance=g_sink)
    net.add_input("pa", {"j": 1.0})
    return net


def _brute(net, waves, node):
    """Start, end and mean rise of every pulse of input 0 at ``node`` by brute force."""
    sys_ = net.system()
    C = np.asarray(sys_.C, float)
    G = sys_.G.toarray()
    Gb = sys_.Gb.toarray()
    B = sys_.B.toarray()
    Tb = np.asarray(sys_.T_boundary, float)
    cap = np.flatnonzero(C > 0)
    mass = np.flatnonzero(C == 0)
    Gmm_inv = np.linalg.inv(G[np.ix_(mass, mass)]) if mass.size else np.zeros((0, 0))
    # condensed: C_c x' = −K x + Fb + Bc P, massless rows follow algebraically
    K = G[np.ix_(cap, cap)] - G[np.ix_(cap, mass)] @ Gmm_inv @ G[np.ix_(mass, cap)]
    Fb = Gb[cap] @ Tb - G[np.ix_(cap, mass)] @ Gmm_inv @ (Gb[mass] @ Tb)
    Bc = B[cap] - G[np.ix_(cap, mass)] @ Gmm_inv @ B[mass]
    A = -K / C[cap][:, None]
    nc = cap.size

    def full(x, p):
        T = np.empty(sys_.n)
        T[cap] = x
        if mass.size:
            T[mass] = Gmm_inv @ (Gb[mass] @ Tb + B[mass] @ p - G[np.ix_(mass, cap)] @ x)
        return T

    # ambient (zero-power static field)
    x_amb = np.linalg.solve(K, Fb)
    amb = full(x_amb, np.zeros(sys_.m))
    pieces = [as_piecewise(waves.get(k, 0.0)) for k in sys_.input_names]
    edges, level, slope = align(pieces)

    def prop(x, k, s):
        """state after s within segment k from x (augmented expm: [x, 1, s])."""
        f0 = (Fb + Bc @ level[k]) / C[cap]
        f1 = (Bc @ slope[k]) / C[cap]
        M = np.zeros((nc + 2, nc + 2))
        M[:nc, :nc] = A
        M[:nc, nc] = f0
        M[:nc, nc + 1] = f1
        M[nc + 1, nc] = 1.0
        z = sla.expm(M * s) @ np.concatenate([x, [1.0, 0.0]])
        return z[:nc]

    N = edges.size - 1

    def period_map(x):
        for k in range(N):
            x = prop(x, k, edges[k + 1] - edges[k])
        return x

    # periodic start: x(T) = Φ x0 + r, affine in x0
    r = period_map(np.zeros(nc))
    Phi = np.column_stack([period_map(e) - r for e in np.eye(nc)])
    x0 = np.linalg.solve(np.eye(nc) - Phi, r)
    starts = [x0]
    for k in range(N):
        starts.append(prop(starts[-1], k, edges[k + 1] - edges[k]))
    row = sys_.index(node)
    gx, gw = np.polynomial.legendre.leggauss(16)
    runs = pulses_of(edges, level[:, 0], slope[:, 0])
    out = []
    for run in runs:
        vals_s, vals_e, integ, dur = None, None, 0.0, 0.0
        for k in run:
            h = edges[k + 1] - edges[k]
            xk = starts[k]
            pk = lambda s: level[k] + slope[k] * s  # noqa: E731
            if vals_s is None:
                vals_s = full(xk, pk(0.0))[row] - amb[row]
            # sub-intervals graded toward the segment start (fast modes there)
            cuts = np.concatenate([[0.0], h * 2.0 ** -np.arange(40, -1, -1)])
            for a, b in zip(cuts[:-1], cuts[1:]):
                ss = 0.5 * (b - a) * gx + 0.5 * (a + b)
                v = [full(prop(xk, k, s), pk(s))[row] - amb[row] for s in ss]
                integ += 0.5 * (b - a) * float(np.dot(gw, v))
            dur += h
            vals_e = full(prop(xk, k, h), pk(h))[row] - amb[row]
        out.append((vals_s, vals_e, integ / dur))
    return np.array(out)


@pytest.mark.parametrize("mass_j", [False, True])
@pytest.mark.parametrize("wave", ["stagger", "burst_ramps"])
def test_pulse_figures_match_brute_force(mass_j, wave):
    net = _ladder(mass_j)
    if wave == "stagger":
        w = Stagger(40.0, (310e-6, 470e-6, 390e-6, 560e-6), (30e-6, 45e-6, 30e-6, 60e-6))
    else:
        w = Burst(PulseTrain(40.0, 50e-6, period=250e-6, rise=5e-6, fall=8e-6), 6,
                  period=4e-3)
    waves = {"pa": w}
    for node in ("j", "attach"):
        ps = pulse_set(trace_node(net, waves, node), 0)
        ref = _brute(net, waves, node)
        assert ps.count == ref.shape[0] >= 4
        scale = np.abs(ref).max()
        np.testing.assert_allclose(ps.rise_start, ref[:, 0], rtol=1e-9, atol=1e-9 * scale)
        np.testing.assert_allclose(ps.rise_end, ref[:, 1], rtol=1e-9, atol=1e-9 * scale)
        np.testing.assert_allclose(ps.rise_mean, ref[:, 2], rtol=1e-9, atol=1e-9 * scale)
        # the derived figures follow to the same relative precision
        fx = rf_effects(ps, -0.015, 0.1)
        dm = ref[:, 2]
        assert fx.gain_pp_dB == pytest.approx(0.015 * (dm.max() - dm.min()), rel=1e-9)
        assert fx.phase_rms_deg == pytest.approx(0.1 * dm.std(), rel=1e-9)
        droop = -0.015 * (ref[:, 1] - ref[:, 0])
        assert fx.worst_droop_dB == pytest.approx(droop[np.argmax(np.abs(droop))], rel=1e-9)


# ======================================================================================
# more cooling: what is monotone and what is not
# ======================================================================================
def _figures(g_sink, k_scale, wave, c_scale=1.0):
    """Junction figures of a junction-die-attach-base ladder on a sink conductance; k_scale
    multiplies every conductance of the ladder, c_scale every capacity."""
    net = ThermalNetwork()
    net.add_boundary("amb", 30.0)
    for name, c in (("j", 2e-6), ("die", 4e-5), ("attach", 1e-3), ("base", 0.05)):
        net.add_node(name, capacity=c * c_scale)
    net.connect("j", "die", resistance=0.3 / k_scale)
    net.connect("die", "attach", resistance=0.6 / k_scale)
    net.connect("attach", "base", resistance=0.4 / k_scale)
    net.connect("base", "amb", conductance=g_sink * k_scale)
    net.add_input("pa", {"j": 1.0})
    tr = trace_node(net, {"pa": wave}, "j")
    fx = rf_effects(pulse_set(tr, 0), -0.015, 0.1)
    cyc = cycling_figures(tr, CyclingSettings())
    return fx, cyc


_waves = st.integers(2, 5).flatmap(lambda n: st.tuples(
    st.lists(st.floats(150e-6, 900e-6), min_size=n, max_size=n),
    st.lists(st.floats(10e-6, 100e-6), min_size=n, max_size=n)))


@settings(max_examples=25, deadline=None)
@given(g=st.floats(0.2, 20.0), more=st.floats(1.01, 5.0), k=st.floats(0.5, 3.0),
       kmore=st.floats(1.0, 3.0), wave=_waves)
def test_more_cooling_never_raises_peak_mean_or_arrhenius(g, more, k, kmore, wave):
    """A larger sink conductance and a higher k never warm the junction at any instant
    (comparison principle for C·T' = −G·T + B·P with more conductance to the boundary;
    steady form: Rayleigh's monotonicity law, Doyle & Snell 1984), so the peak, the mean
    and both Arrhenius factors never rise."""
    w = Stagger(30.0, tuple(wave[0]), tuple(wave[1]))
    _, ca = _figures(g, k, w)
    _, cb = _figures(g * more, k * kmore, w)
    assert cb.peak_C <= ca.peak_C + 1e-9 and cb.mean_C <= ca.mean_C + 1e-9
    assert cb.af_peak <= ca.af_peak * (1 + 1e-9) and cb.af_mean <= ca.af_mean * (1 + 1e-9)


@settings(max_examples=25, deadline=None)
@given(g=st.floats(0.2, 20.0), k=st.floats(0.5, 3.0), f=st.floats(1.01, 10.0), wave=_waves)
def test_conductances_up_at_fixed_time_constants_shrink_every_figure(g, k, f, wave):
    """Every conductance ×f with every capacity ×f (the same time constants): a linear
    network's rises all scale by 1/f, so droop, gain and phase spreads shrink by f, the
    stability ratio does not change (to first order in the small spreads: the amplitude
    is 10^(g/20), not linear), Coffin-Manson damage shrinks by f^n (n = 2 here)."""
    w = Stagger(30.0, tuple(wave[0]), tuple(wave[1]))
    a, ca = _figures(g, k, w)
    b, cb = _figures(g, k * f, w, c_scale=f)
    assert b.worst_droop_dB == pytest.approx(a.worst_droop_dB / f, rel=1e-8)
    assert b.gain_pp_dB == pytest.approx(a.gain_pp_dB / f, rel=1e-6, abs=1e-12)
    assert b.phase_rms_deg == pytest.approx(a.phase_rms_deg / f, rel=1e-6, abs=1e-12)
    assert abs(b.worst_droop_dB) < abs(a.worst_droop_dB)
    assert cb.damage_per_hour == pytest.approx(ca.damage_per_hour / f ** 2, rel=1e-8)


def _rc_figures(R, C, wave):
    net = ThermalNetwork()
    net.add_boundary("amb", 30.0)
    net.add_node("j", capacity=C)
    net.connect("j", "amb", resistance=R)
    net.add_input("pa", {"j": 1.0})
    tr = trace_node(net, {"pa": wave}, "j")
    return rf_effects(pulse_set(tr, 0), -0.015, 0.1), cycling_figures(tr, CyclingSettings())


def test_more_cooling_can_worsen_pulse_to_pulse_stability():
    """Not monotone (found by a random search; kept so the documentation stays honest):
    halving a single RC's resistance at the same capacity halves its time constant
    (149 -> 74 us), and pulses of unequal width in a staggered train then differ more:
    the gain spread more than doubles and the stability ratio worsens by ~6.9 dB, while
    the droop and the damage improve."""
    w = Stagger(30.0, (770e-6, 2430e-6, 300e-6), (21e-6, 159e-6, 162e-6))
    a, ca = _rc_figures(3.6, 4.13e-5, w)
    b, cb = _rc_figures(1.8, 4.13e-5, w)
    assert b.gain_pp_dB > 2.0 * a.gain_pp_dB
    assert b.stability_dB > a.stability_dB + 6.0
    assert abs(b.worst_droop_dB) < abs(a.worst_droop_dB)
    assert cb.damage_per_hour < ca.damage_per_hour and cb.peak_C < ca.peak_C


def test_more_cooling_can_worsen_droop_slightly():
    """Not monotone either: R 2.29 -> 0.874 K/W at C 3.67 mJ/K (τ 8.4 -> 3.2 ms) raises the
    worst droop by ~0.6 % in this staggered train while the peak falls by 4.4 K."""
    w = Stagger(30.0, (1760e-6, 1800e-6, 690e-6, 280e-6), (43e-6, 113e-6, 168e-6, 151e-6))
    a, ca = _rc_figures(2.29, 3.67e-3, w)
    b, cb = _rc_figures(2.29 / 2.62, 3.67e-3, w)
    assert abs(b.worst_droop_dB) > abs(a.worst_droop_dB) * 1.005
    assert cb.peak_C < ca.peak_C - 4.0
