"""Exact engine against closed forms: single RC, Foster/Cauer network, bursts, 1-D slab.

Reference values marked "deriv" come from /work/shared/physics-brief.md §4-5: regression
values computed from the closed forms (lumped RC and the Foster periodic formula; the finite
slab series of Carslaw & Jaeger, *Conduction of Heat in Solids*, 2nd ed., 1959, §3.3-3.4).
They check the code against the formulas, not against measurements.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from pulsetherm.network.model import ThermalNetwork
from pulsetherm.waveforms.canonical import Piecewise


def rc_network(R=1.0, C=1e-3):
    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    net.add_node("j", capacity=C)
    net.connect("j", "sink", resistance=R)
    net.add_input("die", nodes={"j": 1.0})
    return net


def train(peak, width, period):
    return Piecewise([0.0, width, period], [peak, 0.0])


def burst(peak, width, period, pulses, burst_period):
    edges, lv = [0.0], []
    for k in range(pulses):
        edges += [k * period + width, (k + 1) * period]
        lv += [peak, 0.0]
    edges[-1] = burst_period
    return Piecewise(edges, lv)


class Ladder:
    """A bare R/C ladder (no dependence on network/foster.py)."""

    def __init__(self, R, C):
        self.R, self.C = np.asarray(R, float), np.asarray(C, float)


# Foster R [0.2, 0.5, 1.3] K/W, tau [10 us, 1 ms, 100 ms] as a Cauer ladder: physics brief §6
# table, "deriv (two methods)" (Lanczos/Stieltjes, Golub & Meurant 2010), 8-9 digits.
BRIEF_CAUER = Ladder([0.21033899, 0.51612360, 1.27353741],
                     [4.87495734e-5, 1.93913951e-3, 7.65129454e-2])
FOSTER_R = np.array([0.2, 0.5, 1.3])
FOSTER_TAU = np.array([1e-5, 1e-3, 1e-1])


def foster_periodic(P, tp, T, R=FOSTER_R, tau=FOSTER_TAU):
    """Physics brief §5 (deriv): exact periodic peak and minimum of a Foster network."""
    a, b = np.exp(-tp / tau), np.exp(-T / tau)
    pk = P * np.sum(R * (1 - a) / (1 - b))
    mn = P * np.sum(R * (1 - a) * np.exp(-(T - tp) / tau) / (1 - b))
    return pk, mn


def test_single_rc_step_exact():
    """Lumped capacitance ΔT = P·R·(1 − e^{−t/RC}) (Bergman et al. 2011 §5.1; brief §4)."""
    net = rc_network()
    tr = net.transient({"die": 100.0}, duration=5e-3)
    exact = 100.0 * (1.0 - np.exp(-tr.t / 1e-3))
    assert np.max(np.abs(tr.T("j") - 25.0 - exact)) <= 1e-10 * 100.0
    z = net.zth("j")
    assert np.allclose(z.K_per_W, 1.0 - np.exp(-z.t / 1e-3), rtol=1e-12, atol=1e-15)


def test_single_rc_periodic_against_closed_form():
    """Brief §5 table (deriv): R 1 K/W, τ 1 ms, 100 W, 0.1 ms in 1 ms -> peak 15.0545 K,
    min 6.1207 K, mean 10 K; closed form checked to 1e-10 relative."""
    net = rc_network()
    res = net.periodic({"die": train(100.0, 1e-4, 1e-3)})
    a, b = math.exp(-0.1), math.exp(-1.0)
    pk = 100 * (1 - a) / (1 - b)
    mn = pk * math.exp(-0.9)
    assert abs(res.peak("j") - 25 - pk) <= 1e-10 * pk
    assert abs(res.min("j") - 25 - mn) <= 1e-10 * mn
    assert abs(res.mean("j") - 25 - 10.0) <= 1e-10 * 10.0
    assert abs(res.ripple("j") - (pk - mn)) <= 1e-9
    assert round(pk, 4) == 15.0545 and round(mn, 4) == 6.1207
    assert res.energy_error < 1e-12


def test_foster_periodic_peak_min():
    """Brief §5 (deriv): Foster R [0.2,0.5,1.3], τ [10 µs,1 ms,100 ms], 50 W, 100 µs in 1 ms:
    peak 20.2925 K, min 8.0010 K; ≤ 1e-6 relative against the Foster formula (the ladder
    elements carry 8-9 digits)."""
    net = ThermalNetwork()
    net.add_boundary("case", temperature=25.0)
    net.add_cauer(BRIEF_CAUER, top="j", bottom="case")
    net.add_input("die", nodes={"j": 1.0})
    res = net.periodic({"die": train(50.0, 1e-4, 1e-3)}, probes=["j"])
    pk, mn = foster_periodic(50.0, 1e-4, 1e-3)
    assert abs(res.peak("j") - 25 - pk) <= 1e-6 * pk
    assert abs(res.min("j") - 25 - mn) <= 1e-6 * mn
    assert abs(res.mean("j") - 25 - 50 * 0.1 * 2.0) <= 1e-6 * 10
    assert round(pk, 4) == 20.2925 and round(mn, 4) == 8.0010


def burst_reference(P, tp, T, N, Tb, periodic: bool):
    """Independent per-mode recurrence (brief §5): exact scalar update per segment of every
    Foster term, periodic start from the fixed point s = e^{−Tb/τ}s + r; returns the largest
    end-of-pulse rise (the peaks of a positive-residue network are at pulse ends)."""
    best = 0.0
    states = []
    for R, tau in zip(FOSTER_R, FOSTER_TAU):
        def run(s):
            ends = []
            for k in range(N):
                s = s * math.exp(-tp / tau) + P * R * (1 - math.exp(-tp / tau))
                ends.append(s)
                s = s * math.exp(-(T - tp) / tau)
            s = s * math.exp(-(Tb - N * T) / tau)
            return s, ends
        r, _ = run(0.0)
        s0 = r / (1 - math.exp(-Tb / tau)) if periodic else 0.0
        states.append(run(s0)[1])
    best = max(sum(st[k] for st in states) for k in range(N))
    return best


def test_foster_bursts_periodic_and_first_burst():
    """Brief §5 (deriv): bursts of 10 pulses every 20 ms: periodic peak 17.1907 K, first
    burst from cold 14.3843 K; ≤ 1e-6 relative against the per-mode recurrence."""
    net = ThermalNetwork()
    net.add_boundary("case", temperature=25.0)
    net.add_cauer(BRIEF_CAUER, top="j", bottom="case")
    net.add_input("die", nodes={"j": 1.0})
    wf = burst(50.0, 1e-4, 1e-3, 10, 20e-3)
    res = net.periodic({"die": wf}, probes=["j"])
    ref = burst_reference(50.0, 1e-4, 1e-3, 10, 20e-3, periodic=True)
    assert abs(res.peak("j") - 25 - ref) <= 1e-6 * ref
    assert round(ref, 4) == 17.1907
    first = net.transient({"die": wf}, duration=20e-3, probes=["j"])
    ref1 = burst_reference(50.0, 1e-4, 1e-3, 10, 20e-3, periodic=False)
    assert abs(first.peak("j") - 25 - ref1) <= 1e-6 * ref1
    assert round(ref1, 4) == 14.3843
    # a long transient (period jumping) ends on the periodic steady state
    long = net.transient({"die": wf}, periods=2000, probes=["j"])
    assert abs(long.peak("j") - res.peak("j")) <= 1e-9 * ref
    assert long.energy_error < 1e-9 and res.energy_error < 1e-9


def test_add_cauer_from_foster_class():
    """Same Foster network through network/foster.py (Foster.to_cauer) and add_foster."""
    from pulsetherm.network.foster import Foster

    pk, mn = foster_periodic(50.0, 1e-4, 1e-3)
    for how in ("cauer", "foster"):
        net = ThermalNetwork()
        net.add_boundary("case", temperature=25.0)
        f = Foster(R=FOSTER_R, tau=FOSTER_TAU)
        if how == "cauer":
            names = net.add_cauer(f.to_cauer(), top="j", bottom="case")
            assert names[0] == "j" and len(names) == 3
        else:
            net.add_foster(f, top="j", bottom="case")
        net.add_input("die", nodes={"j": 1.0})
        res = net.periodic({"die": train(50.0, 1e-4, 1e-3)}, probes=["j"])
        assert abs(res.peak("j") - 25 - pk) <= 1e-9 * pk
        assert abs(res.min("j") - 25 - mn) <= 1e-9 * mn
        back = net.foster("j", input="die")
        assert np.allclose(back.R, FOSTER_R, rtol=1e-9)
        assert np.allclose(back.tau, FOSTER_TAU, rtol=1e-9)


def slab_ladder(L, k, rho, c, A, first=0.2e-6, growth=1.06):
    """Vertex-centred finite-volume ladder of a slab, graded from the heated face."""
    dx = [first]
    while sum(dx) < L:
        dx.append(dx[-1] * growth)
    x = np.concatenate([[0.0], np.cumsum(dx)])
    x = x * (L / x[-1])
    d = np.diff(x)
    R = d / (k * A)
    cap = rho * c * A * 0.5 * (np.concatenate([d, [0.0]]) + np.concatenate([[0.0], d]))
    return Ladder(R, cap[:-1])


def slab_zth(t, L, k, A, alpha, terms=400_000):
    """Carslaw & Jaeger 1959 (§3.3): slab, flux into one face, other face held — exact
    Foster network R_n = (L/kA)·8/((2n+1)²π²), τ_n = 4L²/((2n+1)²π²α) (physics brief §4)."""
    n = np.arange(terms)
    m2 = (2 * n + 1.0) ** 2 * np.pi ** 2
    Rn = (L / (k * A)) * 8.0 / m2
    taun = 4 * L * L / (m2 * alpha)
    z = (-np.expm1(-np.multiply.outer(t, 1.0 / taun))) @ Rn
    tail = (L / (k * A)) * 8.0 / np.pi ** 2 / (4.0 * terms)   # Σ_{n≥N} 1/(2n+1)² ≈ 1/(4N)
    return z + tail


def test_silicon_slab_fine_cauer_ladder():
    """1 mm silicon (k 148, ρ 2330, c 712; brief §8), flux into one face, other face held:
    a graded fine ladder reproduces the Carslaw & Jaeger 1959 series Zth(t) within 0.5 % for
    t ≥ 1 µs; brief §4 (deriv): q0 1e6 W/m² -> 6.7568 K steady, 6.1507 K at 10 ms, 2.2772 K
    at 1 ms."""
    L, k, rho, c = 1e-3, 148.0, 2330.0, 712.0
    A = 1e-6
    alpha = k / (rho * c)
    net = ThermalNetwork()
    net.add_boundary("cold", temperature=25.0)
    lad = slab_ladder(L, k, rho, c, A)
    net.add_cauer(lad, top="face", bottom="cold", label="silicon")
    net.add_input("q", nodes={"face": 1.0})
    t = np.geomspace(1e-6, 0.1, 51)
    z = net.zth("face", input="q", t=t).K_per_W
    ref = slab_zth(t, L, k, A, alpha)
    assert np.max(np.abs(z / ref - 1)) < 5e-3
    q0A = 1e6 * A
    assert abs(q0A * net.zth("face", t=[1e3]).K_per_W[0] - 6.7568) < 5e-4
    assert abs(q0A * slab_zth(np.array([10e-3]), L, k, A, alpha)[0] - 6.1507) < 5e-4
    assert abs(q0A * slab_zth(np.array([1e-3]), L, k, A, alpha)[0] - 2.2772) < 5e-4


def test_several_inputs_on_a_common_period_superpose():
    """Two inputs with periods 1 ms and 2.5 ms (common period 5 ms): a linear network's
    response is the sum of the single-input responses (superposition; common practice, no
    source), also for the exact period means; the periodic state is the 5 ms one."""
    def make():
        net = ThermalNetwork()
        net.add_boundary("case", temperature=25.0)
        net.add_cauer(BRIEF_CAUER, top="j", bottom="case")
        net.add_input("a", nodes={"j": 1.0})
        net.add_input("b", nodes={"j.1": 2.0, "j": 1.0})
        return net

    wa = train(30.0, 1e-4, 1e-3)
    wb = Piecewise([0.0, 5e-4, 1.5e-3, 2.5e-3], [10.0, 20.0, 0.0], slope=[0.0, -1e4, 0.0])
    net = make()
    both = net.periodic({"a": wa, "b": wb}, probes=["j", "j.1"])
    one = net.periodic({"a": wa}, probes=["j", "j.1"])
    two = net.periodic({"b": wb}, probes=["j", "j.1"])
    assert both.span == pytest.approx(5e-3)
    for p in ("j", "j.1"):
        assert abs((both.mean(p) - 25) - (one.mean(p) - 25) - (two.mean(p) - 25)) < 1e-10
    tr_both = net.transient({"a": wa, "b": wb}, duration=5e-3, probes=["j"])
    tr_a = net.transient({"a": wa}, duration=5e-3, probes=["j"])
    tr_b = net.transient({"b": wb}, duration=5e-3, probes=["j"])
    common = np.intersect1d(np.intersect1d(tr_both.t, tr_a.t), tr_b.t)
    assert common.size >= 3
    pick = lambda r: r.T("j")[np.searchsorted(r.t, common)] - 25.0
    assert np.max(np.abs(pick(tr_both) - pick(tr_a) - pick(tr_b))) < 1e-10
    assert both.energy_error < 1e-12 and tr_both.energy_error < 1e-12


def foster_reference_ends(edges, level, periodic: bool):
    """Independent per-mode scalar recurrence over piecewise-constant segments (brief §5:
    "advance each mode exactly per segment") for the Foster network; rises at all segment
    ends (periodic: from the fixed point of one period)."""
    h = np.diff(edges)
    out = np.zeros(h.size)
    for R, tau in zip(FOSTER_R, FOSTER_TAU):
        a = np.exp(-h / tau)

        def run(s):
            ends = np.empty(h.size)
            for k in range(h.size):
                s = s * a[k] + level[k] * R * (1 - a[k])
                ends[k] = s
            return ends

        first = run(0.0)
        s0 = first[-1] / (1 - np.exp(-edges[-1] / tau)) if periodic else 0.0
        out += run(s0)
    return out


@pytest.mark.parametrize("store_limit", [4_000_000, 100])
def test_many_segments_random_widths(monkeypatch, store_limit):
    """4000 segments of random widths and levels (every width distinct: the per-segment
    path; store_limit 100 forces recomputation from block starts): every segment end and
    the exact peak against the per-mode recurrence, 1e-9 relative."""
    import pulsetherm.network.modal as modal

    monkeypatch.setattr(modal, "STORE_LIMIT", store_limit)
    rng = np.random.default_rng(3)
    n = 4000
    edges = np.concatenate([[0.0], np.cumsum(rng.uniform(1e-6, 2e-5, n))])
    level = rng.uniform(0, 60, n) * (rng.random(n) < 0.5)
    net = ThermalNetwork()
    net.add_boundary("case", temperature=25.0)
    net.add_cauer(BRIEF_CAUER, top="j", bottom="case")
    net.add_input("die", nodes={"j": 1.0})
    res = net.periodic({"die": Piecewise(edges, level)}, probes=["j"])
    ref = foster_reference_ends(edges, level, periodic=True)
    got = res.T("j")[np.searchsorted(res.t, edges[1:])] - 25.0
    assert np.max(np.abs(got - ref)) <= 1e-6 * ref.max()     # ladder digits (8-9)
    # peak: at a segment end for this positive-residue network
    assert abs(res.peak("j") - 25.0 - ref.max()) <= 1e-6 * ref.max()
    assert res.energy_error < 1e-10


def test_long_burst_period_many_identical_segments():
    """Bursts of 2000 pulses (4000 segments per period, few distinct widths: the tabulated
    path) against the per-mode recurrence, periodic and from cold."""
    wf = burst(50.0, 1e-5, 1e-4, 2000, 0.5)
    net = ThermalNetwork()
    net.add_boundary("case", temperature=25.0)
    net.add_cauer(BRIEF_CAUER, top="j", bottom="case")
    net.add_input("die", nodes={"j": 1.0})
    for periodic in (True, False):
        res = (net.periodic({"die": wf}, probes=["j"]) if periodic else
               net.transient({"die": wf}, duration=0.5, probes=["j"]))
        ref = foster_reference_ends(wf.edges, wf.level, periodic)
        assert abs(res.peak("j") - 25.0 - ref.max()) <= 1e-6 * ref.max()


def test_periodic_energy_balance_checks_periodicity(monkeypatch):
    """The periodic response's energy balance uses the state propagated through the period:
    exact start -> imbalance at rounding level (and end = start); a start 1 % off the
    periodic one (injected) -> the stored-energy term C·(T(T) − T(0)) is no longer zero
    and the imbalance is flagged (before, the end was a copy of the start and the check
    passed whatever the start)."""
    from pulsetherm.network.modal import ModalSolver

    net = rc_network()
    res = net.periodic({"die": train(100.0, 1e-4, 1e-3)}, probes=["j"], method="modal")
    assert res.energy_error <= 1e-12
    assert np.allclose(res.state_end, res.state_start, rtol=0, atol=1e-9)
    good = ModalSolver.periodic_start
    monkeypatch.setattr(ModalSolver, "periodic_start",
                        lambda self, *a: 1.01 * good(self, *a))
    bad = rc_network().periodic({"die": train(100.0, 1e-4, 1e-3)}, probes=["j"],
                                method="modal")
    assert bad.energy_error > 1e-3
