"""Property tests: canonical forms are sorted, finite, non-negative, their integral is the
stated energy, and averaging commutes with sums and scalings.

The stated energies come from the pulse conventions in waveforms/pulses.py (energy above idle
of a pulse = (peak - idle)·width, width at half amplitude; derived from the trapezoid areas,
no outside source).  The integral is taken independently by the midpoint rule through
``value()`` (exact for piecewise-linear segments).
"""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from pulsetherm.waveforms.canonical import Piecewise
from pulsetherm.waveforms.profile import Profile, Stretch
from pulsetherm.waveforms.pulses import Burst, PulseTrain, Stagger
from pulsetherm.waveforms.table import Table

FAST = settings(deadline=None, max_examples=60)

power = st.floats(0.0, 1e4, allow_nan=False)
frac = st.floats(0.0, 1.0)


def check_canonical(pw: Piecewise, energy: float) -> None:
    assert np.all(np.diff(pw.edges) > 0) and pw.edges[0] == 0.0
    for arr in (pw.edges, pw.level, pw.slope, pw.end_level):
        assert np.all(np.isfinite(arr))
    assert np.all(pw.level >= 0)
    scale = max(float(pw.level.max()), 1e-300)
    # ramp ends are level + slope·width: rounding only
    assert np.all(pw.end_level >= -1e-12 * scale)
    mid = 0.5 * (pw.edges[:-1] + pw.edges[1:])
    integral = float(np.sum(pw.value(mid) * pw.widths))
    tol = 1e-10 * max(abs(energy), scale * pw.span)
    assert pw.energy == pytest.approx(integral, abs=tol)
    assert pw.energy == pytest.approx(energy, abs=tol)


@st.composite
def trains(draw):
    peak = draw(st.floats(1e-3, 1e6))
    idle = draw(frac) * peak
    period = draw(st.floats(1e-7, 10.0))
    duty = draw(st.floats(1e-4, 1.0))
    width = duty * period
    ramps = draw(frac)  # share of the width spent in ramps
    split = draw(frac)
    slack = min(width, period - width)  # ramps/2 must fit in the width and the off time
    rise = 2 * ramps * slack * split * 0.999
    fall = 2 * ramps * slack * (1 - split) * 0.999
    return PulseTrain(peak=peak, width=width, period=period, idle=idle, rise=rise, fall=fall)


@FAST
@given(trains())
def test_train_canonical_and_average(tr):
    d = tr.width / tr.period
    assert tr.mean == pytest.approx(tr.peak * d + tr.idle * (1 - d), rel=1e-9,
                                    abs=1e-11 * tr.peak)
    check_canonical(tr.compile(), tr.idle * tr.period + (tr.peak - tr.idle) * tr.width)


@FAST
@given(trains(), st.integers(1, 50), st.floats(0.0, 5.0))
def test_burst_canonical_and_average(tr, n, gap_ratio):
    b = Burst(tr, pulses=n, gap=gap_ratio * tr.period)
    e = tr.idle * b.period + n * (tr.peak - tr.idle) * tr.width
    check_canonical(b.compile(), e)
    d = n * tr.width / b.period
    # exact up to the time resolution TIME_RTOL·span = 1e-12·span (a ramp shorter than that
    # next to a zero off time is absorbed): error <= peak·1e-12 on the mean
    assert b.mean == pytest.approx(tr.peak * d + tr.idle * (1 - d), rel=1e-9,
                                   abs=1e-11 * tr.peak)


@FAST
@given(st.floats(1e-3, 1e4), st.lists(st.floats(1e-6, 1e-3), min_size=1, max_size=30),
       st.floats(0.01, 0.9), frac)
def test_stagger_canonical_and_average(peak, intervals, duty, idle_share):
    widths = tuple(duty * x for x in intervals)
    idle = idle_share * peak
    s = Stagger(peak=peak, intervals=intervals, widths=widths, idle=idle)
    t = sum(intervals)
    assert s.period == pytest.approx(t, rel=1e-14)
    e = idle * t + (peak - idle) * sum(widths)
    check_canonical(s.compile(), e)


@FAST
@given(trains(), trains(), st.sampled_from([(1, 1), (1, 2), (2, 3), (3, 4), (5, 2)]),
       st.floats(0.0, 10.0))
def test_sums_and_scalings_commute_with_averaging(a, b, ratio, k):
    """mean(a + b) = mean(a) + mean(b), mean(k·a) = k·mean(a) (linearity of the integral)."""
    p, q = ratio
    b = PulseTrain(peak=b.peak, width=b.duty * a.period * q / p, period=a.period * q / p,
                   idle=b.idle)
    s = a + b
    # exact up to the time resolution (1e-12 of the common period): abs error <= peak·1e-12
    assert s.mean == pytest.approx(a.mean + b.mean, rel=1e-9, abs=1e-11 * (a.peak + b.peak))
    if a.compile().is_constant or b.compile().is_constant:
        # a constant fits any period: the sum keeps the other one's (or the first) period
        energy = (a.mean + b.mean) * s.period
    else:
        periods = s.period / a.period, s.period / b.period
        assert all(abs(x - round(x)) < 1e-6 for x in periods)
        energy = round(periods[0]) * a.energy + round(periods[1]) * b.energy
    check_canonical(s.compile(), energy)
    assert (k * a).mean == pytest.approx(k * a.mean, rel=1e-12, abs=1e-300)
    assert (k * (a + b)).mean == pytest.approx(k * a.mean + k * b.mean, rel=1e-9, abs=1e-300)


@FAST
@given(st.lists(st.tuples(st.floats(1e-3, 100.0), st.floats(0.0, 100.0)), min_size=1,
                max_size=6), trains())
def test_profile_energy_is_sum_of_stretches(items, tr):
    stretches = [Stretch(d, p) for d, p in items] + [Stretch(7.5 * tr.period, tr)]
    prof = Profile(stretches)
    # pulses must stay above the time resolution (1e-12 of the whole profile)
    assume(tr.width > 1e-10 * sum(s.duration for s in stretches))
    e = sum(d * p for d, p in items) + 7 * tr.energy + tr.compile().window(
        0.5 * tr.period).energy
    check_canonical(prof.compile(), e)


@FAST
@given(st.lists(st.tuples(st.floats(1e-9, 1e-3), st.floats(0.0, 1e3)), min_size=2,
                max_size=40), st.sampled_from(["step", "linear"]), st.booleans())
def test_table_round_trip(rows, interp, periodic):
    t = np.cumsum([r[0] for r in rows])
    p = np.array([r[1] for r in rows])
    assume(np.all(np.diff(t) > 0))
    tab = Table(t, p, interp=interp, periodic=periodic)
    pw = tab.compile()
    back = Table.from_csv(Table.from_piecewise(pw).to_csv()).compile()
    assert back.periodic == pw.periodic
    np.testing.assert_array_equal(back.edges, pw.edges)
    np.testing.assert_allclose(back.level, pw.level, rtol=1e-12, atol=1e-12 * p.max())
    assert back.energy == pytest.approx(pw.energy, rel=1e-9, abs=1e-300)
    assert Table.from_csv(tab.to_csv()) == tab
