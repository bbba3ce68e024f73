"""A delay on a periodic waveform is taken modulo its period, exactly (issue 9, item 11).

Reference: periodicity itself, p(t - d) = p(t - d - k·T) for a waveform of period T (the
definition of a periodic function; no source needed).  A delay of d and of d + k·T must give
the same canonical form, and a scenario run with either must give the same numbers.
"""
from __future__ import annotations

from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from pulsetherm.network.scenario import load
from pulsetherm.network.simulate import simulate
from pulsetherm.waveforms.algebra import delay_phase
from pulsetherm.waveforms.pulses import Burst, PulseTrain, Stagger

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "four_channel_module.toml"


def _same(a, b):
    pa, pb = a.compile(), b.compile()
    assert pa.periodic and pb.periodic
    np.testing.assert_array_equal(pa.edges, pb.edges)
    np.testing.assert_array_equal(pa.level, pb.level)
    np.testing.assert_array_equal(pa.slope, pb.slope)


@pytest.mark.parametrize("d_text", ["0", "0.00025", "0.0005", "0.00075", "0.0001234"])
@pytest.mark.parametrize("k", [1, 7, 50_000, 100_000, 123_457])
def test_whole_periods_add_nothing(d_text, k):
    # the delay as written (decimal) plus k periods, rounded once to binary
    d = float(Fraction(d_text))
    dk = float(Fraction(d_text) + k * Fraction("0.001"))
    w = PulseTrain(20.0, 250e-6, 1e-3, rise=10e-6, fall=5e-6)
    _same(w.delayed(d) if d else w, w.delayed(dk))


def test_delay_added_in_binary_arithmetic():
    # d + k*T summed in floats carries rounding of a few ulp of the sum: no sliver segment
    w = PulseTrain(20.0, 250e-6, 1e-3)
    for k in (10, 1000, 100_000):
        a = w.delayed(250e-6).compile()
        b = w.delayed(250e-6 + k * 1e-3).compile()
        assert b.n_segments == a.n_segments
        np.testing.assert_allclose(b.edges, a.edges, rtol=0, atol=1e-12 * 1e-3)
        assert np.diff(b.edges).min() > 1e-6


def test_other_shapes():
    tr = PulseTrain(10.0, 20e-6, 100e-6)
    b = Burst(tr, 5, period=2e-3)
    s = Stagger(10.0, (100e-6, 130e-6, 170e-6), 20e-6)
    _same(b.delayed(0.3e-3), b.delayed(0.3e-3 + 5000 * 2e-3))
    _same(s.delayed(50e-6), s.delayed(float(Fraction("0.00005") + 40_000 * Fraction("0.0004"))))


def test_phase_exact():
    assert delay_phase(100.0, 1e-3) == 0.0
    assert delay_phase(50.0, 1e-3) == 0.0
    assert delay_phase(100.00025, 1e-3) == 2.5e-4
    assert delay_phase(2.5e-4, 1e-3) == 2.5e-4


def _run(delay: str):
    scn = load(EXAMPLE).with_value("waveforms.ch3.delay", delay)
    return simulate(scn)


@pytest.mark.parametrize("extra", ["100.0005 s", "50.0005 s", "1.5 ms"])
def test_scenario_run_same_with_whole_periods(extra):
    """The issue's case: ch3 delayed by 100 s gave peaks 5 K low and a plate peak below
    its mean; 50 s gave inf.  500 us and 500 us + k·1 ms must agree to 1e-12."""
    ref = _run("500 us")
    got = _run(extra)
    for name, p in ref.probes.items():
        q = got.probes[name]
        for a, b in ((p.peak_C, q.peak_C), (p.mean_C, q.mean_C), (p.min_C, q.min_C)):
            assert abs(a - b) <= 1e-12 * max(1.0, abs(a)), (name, a, b)
        assert q.peak_C >= q.mean_C - 1e-9 >= q.min_C - 2e-9


@pytest.mark.parametrize("delay", ["100 s", "50 s"])
def test_whole_number_of_periods_is_no_delay(delay):
    """ch3 delayed by a whole number of 1 ms periods keys with ch1 (delay 0)."""
    got = _run(delay)
    ref = simulate(load(EXAMPLE).with_value("waveforms.ch3.delay", "0 s"))
    for name, p in ref.probes.items():
        assert abs(got.probes[name].peak_C - p.peak_C) <= 1e-12 * abs(p.peak_C)
