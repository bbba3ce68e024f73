"""Rainflow counting, cycles per hour, Coffin-Manson damage and Arrhenius factors
(network/cycling.py)."""
from __future__ import annotations

import math

import numpy as np
import pytest
import rainflow as rainflow_pkg     # independent ASTM E1049-85 implementation (test only)

from pulsetherm.network.cycling import (EV, CyclingError, CyclingSettings, arrhenius_factor,
                                        coffin_manson_damage, count_by_range,
                                        cycling_figures, rainflow, rainflow_periodic,
                                        reversals)
from pulsetherm.network.model import ThermalNetwork
from pulsetherm.network.pulse_effects import trace_node
from pulsetherm.waveforms.pulses import Burst, PulseTrain


def test_astm_e1049_worked_example():
    """ASTM E1049-85 (reapproved 2017), §5.4.4 rainflow counting, the standard's example
    history -2, 1, -3, 5, -1, 3, -4, 4, -2: ranges 3 (half), 4 (one and a half), 6 (half),
    8 (one), 9 (half); nothing else."""
    c = rainflow([-2, 1, -3, 5, -1, 3, -4, 4, -2])
    assert c.by_range() == {3.0: 0.5, 4.0: 1.5, 6.0: 0.5, 8.0: 1.0, 9.0: 0.5}
    assert c.total == 4.0


def test_matches_the_rainflow_package_on_random_sequences():
    """The ``rainflow`` package (PyPI, an ASTM E1049-85 implementation) as the independent
    reference: every (range, mean, count) and, without repeated values, the indices."""
    rng = np.random.default_rng(20261204)
    for n in range(300):
        x = rng.normal(size=int(rng.integers(3, 80)))
        ties = n % 3 == 0
        if ties:
            x = np.round(x, 1)          # plateaus and repeated values
        ours = rainflow(x)
        ref = sorted(rainflow_pkg.extract_cycles(x))
        mine = sorted(zip(ours.range.tolist(), ours.mean.tolist(), ours.count.tolist(),
                          ours.i_start.tolist(), ours.i_end.tolist()))
        assert len(mine) == len(ref)
        k = 3 if ties else 5            # on plateaus the two pick different equal points
        for a, b in zip(mine, ref):
            np.testing.assert_allclose(a[:k], b[:k], rtol=0, atol=1e-12)


def test_periodic_count_is_whole_cycles_and_matches_repetitions():
    """One period turned to start at its highest point: whole cycles only; N periods laid
    end to end and counted by the package give exactly N times the same counts."""
    rng = np.random.default_rng(7)
    for _ in range(30):
        x = rng.normal(size=int(rng.integers(3, 40)))
        c = rainflow_periodic(x)
        assert c.total == pytest.approx(round(c.total))
        k = int(np.argmax(x))
        y = np.concatenate([x[k:], x[:k]])
        rep = np.concatenate([np.tile(y, 7), [y[0]]])
        ref = dict(rainflow_pkg.count_cycles(rep))
        mine = {r: 7 * n for r, n in c.by_range().items()}
        assert set(ref) == set(mine)
        for r in mine:
            assert ref[r] == pytest.approx(mine[r], rel=1e-12)


def test_reversals_and_bad_input():
    v, i = reversals([0.0, 1.0, 1.0, 2.0, 1.0, 1.0, 0.0, 3.0])
    assert v.tolist() == [0.0, 2.0, 0.0, 3.0] and i.tolist() == [0, 3, 6, 7]
    with pytest.raises(CyclingError, match=r"series\[1\]"):
        rainflow([0.0, float("nan"), 1.0])


def test_coffin_manson_and_cycles_per_hour_by_hand():
    """Two 50 K cycles and one 10 K cycle per period, 10 periods per hour, n = 2 against a
    100 K reference: D = 10·(2·0.25 + 0.01) = 5.1 reference cycles per hour (Coffin 1954,
    Manson 1953, Miner 1945: N_f ∝ ΔT^−n, damage adds as n_i/N_i)."""
    c = rainflow_periodic([0.0, 50.0, 0.0, 50.0, 40.0, 50.0])
    assert c.by_range() == {10.0: 1.0, 50.0: 2.0}
    assert coffin_manson_damage(c, 10.0, 100.0, 2.0) == pytest.approx(5.1, rel=1e-12)
    rows = count_by_range(c, 10.0)
    per = {(r["from_K"], r["to_K"]): r["per_hour"] for r in rows}
    assert per[(5.0, 10.0)] == 10.0 and per[(20.0, 50.0)] == 20.0
    assert rows[-1]["to_K"] is None
    assert sum(r["per_hour"] for r in rows) == 30.0
    with pytest.raises(CyclingError, match="exponent"):
        coffin_manson_damage(c, 10.0, 100.0, 0.0)


def test_arrhenius_physics_brief_value():
    """Physics brief §9: 0.7 eV, 55 -> 125 degC gives AF = 77.6 (Arrhenius 1889)."""
    af = arrhenius_factor(125.0 + 273.15, 55.0 + 273.15, 0.7 * EV)
    assert af == pytest.approx(77.6, abs=0.05)
    assert arrhenius_factor(300.0, 300.0, 0.7 * EV) == 1.0
    with pytest.raises(CyclingError, match="reference_temperature"):
        arrhenius_factor(300.0, -1.0, 0.7 * EV)
    with pytest.raises(CyclingError, match="exponent"):
        CyclingSettings(exponent=float("nan"))


def test_single_rc_train_one_cycle_of_the_closed_form_ripple():
    """A single RC under a plain train swings once per period between
    s = PR(1 − e^{−w/τ})e^{−(T−w)/τ}/(1 − e^{−T/τ}) and e = PR(1 − e^{−w/τ})/(1 − e^{−T/τ})
    (first-order periodic response, common practice, no source): one cycle of e − s."""
    R, tau, P, w, T = 2.0, 1e-3, 10.0, 2e-4, 1e-3
    net = ThermalNetwork()
    net.add_boundary("amb", 25.0)
    net.add_node("j", capacity=tau / R)
    net.connect("j", "amb", resistance=R)
    net.add_input("pa", {"j": 1.0})
    fig = cycling_figures(trace_node(net, {"pa": PulseTrain(P, w, T)}, "j"),
                          CyclingSettings(reference_range_K=10.0, exponent=2.5))
    Ew = math.exp(-w / tau)
    e = P * R * (1 - Ew) / (1 - math.exp(-T / tau))
    s = e * math.exp(-(T - w) / tau)
    assert fig.cycles.total == 1.0
    assert fig.largest_range_K == pytest.approx(e - s, rel=1e-12)
    assert fig.cycles_per_hour == pytest.approx(3600.0 / T, rel=1e-12)
    assert fig.damage_per_hour == pytest.approx(3600.0 / T * ((e - s) / 10.0) ** 2.5,
                                                rel=1e-12)
    assert fig.peak_C == pytest.approx(25.0 + e, rel=1e-12)
    assert fig.mean_C == pytest.approx(25.0 + P * R * w / T, rel=1e-12)


def test_turning_points_inside_segments_are_the_exact_extremes():
    """The attach of a two-node ladder keeps heating after each pulse: its peaks lie
    inside the off segments.  The largest turning point equals the solver's exactly
    located peak; the burst's cycles per period follow its pulses."""
    net = ThermalNetwork()
    net.add_boundary("amb", 25.0)
    net.add_node("j", capacity=1e-5)
    net.add_node("attach", capacity=2e-3)
    net.connect("j", "attach", resistance=1.0)
    net.connect("attach", "amb", resistance=0.5)
    net.add_input("pa", {"j": 1.0})
    w = Burst(PulseTrain(50.0, 20e-6, period=200e-6), 8, period=5e-3)
    tr = trace_node(net, {"pa": w}, "attach")
    assert tr.ext_t.size >= 8            # a peak after each pulse
    resp = net.periodic({"pa": w}, probes=["attach"], method="modal")
    _, v = tr.sequence()
    assert float(v.max()) + tr.ambient_K - 273.15 == pytest.approx(resp.peak("attach"),
                                                                   rel=1e-12)
    assert tr.mean + tr.ambient_K - 273.15 == pytest.approx(resp.mean("attach"), rel=1e-10)
    fig = cycling_figures(tr, CyclingSettings())
    assert fig.cycles.total == 8.0       # seven small cycles in the burst and the big one
