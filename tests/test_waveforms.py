"""Pulse trains, bursts, stagger, constants, algebra: exact canonical forms and averages."""
from __future__ import annotations

import numpy as np
import pytest

from pulsetherm.waveforms.algebra import Delayed, Scaled, Sum, rotate
from pulsetherm.waveforms.canonical import Piecewise, WaveformError, align, as_piecewise
from pulsetherm.waveforms.pulses import Burst, Constant, PulseTrain, Stagger


def midpoint_energy(pw: Piecewise) -> float:
    """Integral of the canonical form by the midpoint rule (exact for linear segments),
    evaluated through ``value()``: an independent check of ``energy``."""
    mid = 0.5 * (pw.edges[:-1] + pw.edges[1:])
    return float(np.sum(pw.value(mid) * pw.widths))


# -- radar basics ----------------------------------------------------------------------------
def test_radar_average_power_skolnik():
    """1 MW peak, 1 µs pulses at 1 kHz PRF: duty = τ·PRF = 0.001, P_avg = P_peak·τ·PRF = 1 kW.
    Source: M. I. Skolnik, Introduction to Radar Systems, ch. 1 (duty cycle and average
    power), as quoted in /work/shared/physics-brief.md §5."""
    tr = PulseTrain(peak=1e6, width=1e-6, prf=1e3)
    assert tr.duty == pytest.approx(1e-3, rel=1e-15)
    assert tr.mean == pytest.approx(1e3, rel=1e-12)
    assert tr.period == pytest.approx(1e-3, rel=1e-15)
    assert tr.energy == pytest.approx(1.0, rel=1e-12)  # 1 MW x 1 µs = 1 J per period
    assert tr.peak == 1e6


@pytest.mark.parametrize("timing", [dict(period=1e-3), dict(prf=1e3), dict(duty=1e-3)])
def test_period_prf_duty_are_equivalent(timing):
    """Common practice, no source: period = 1/PRF = width/duty."""
    tr = PulseTrain(peak=50.0, width=1e-6, **timing)
    assert tr.period == pytest.approx(1e-3, rel=1e-14)
    assert tr.prf == pytest.approx(1e3, rel=1e-14)
    assert tr.duty == pytest.approx(1e-3, rel=1e-14)


def test_rectangular_train_canonical_form():
    tr = PulseTrain(peak=100.0, width=1e-4, period=1e-3, idle=2.0)
    pw = tr.compile()
    np.testing.assert_array_equal(pw.edges, [0.0, 1e-4, 1e-3])
    np.testing.assert_array_equal(pw.level, [100.0, 2.0])
    np.testing.assert_array_equal(pw.slope, [0.0, 0.0])
    assert pw.periodic
    assert tr.compile() is pw  # cached


@pytest.mark.parametrize("rise,fall", [(0.0, 0.0), (1e-5, 0.0), (0.0, 3e-5), (2e-5, 4e-5),
                                       (1e-4, 1e-4)])
def test_average_identity_with_ramps(rise, fall):
    """P_avg = peak·D + idle·(1 − D), D = width/period, width at half amplitude
    (common practice for pulse width, no source; the identity is derived from the
    trapezoid areas)."""
    tr = PulseTrain(peak=80.0, width=1e-4, period=5e-4, idle=3.0, rise=rise, fall=fall)
    d = 1e-4 / 5e-4
    assert tr.duty == pytest.approx(d, rel=1e-15)
    assert tr.mean == pytest.approx(80.0 * d + 3.0 * (1 - d), rel=1e-13)
    pw = tr.compile()
    assert pw.energy == pytest.approx(midpoint_energy(pw), rel=1e-13)
    assert pw.peak == 80.0 and pw.minimum == pytest.approx(3.0, abs=1e-12)
    # ramps: value halfway up the rise is halfway between idle and peak
    if rise > 0:
        assert tr.value(rise / 2) == pytest.approx(0.5 * (80 + 3), rel=1e-12)
        assert pw.slope[0] == pytest.approx((80 - 3) / rise, rel=1e-12)
    flat = 1e-4 - 0.5 * (rise + fall)
    assert pw.n_segments == sum(x > 0 for x in (rise, flat, fall, 5e-4 - 1e-4 - 0.5 * (rise + fall)))


def test_duty_one_is_constant():
    tr = PulseTrain(peak=7.0, width=1e-3, duty=1.0)
    pw = tr.compile()
    assert pw.n_segments == 1 and pw.is_constant
    assert tr.mean == 7.0


def test_constant():
    c = Constant(3.5)
    assert c.mean == 3.5 and c.peak == 3.5 and c.duty == 1.0 and c.period is None
    assert Constant(2.0, period=1e-3).compile().span == 1e-3
    assert Constant(0.0).duty == 0.0


# -- bursts ---------------------------------------------------------------------------------
def test_burst_average_and_structure():
    """N pulses of width τ per burst period T_b: D = N·τ/T_b (common practice, no source)."""
    tr = PulseTrain(peak=50.0, width=100e-6, period=1e-3, idle=0.5)
    b = Burst(tr, pulses=10, period=20e-3)
    d = 10 * 100e-6 / 20e-3
    assert b.duty == pytest.approx(d, rel=1e-15)
    assert b.mean == pytest.approx(50.0 * d + 0.5 * (1 - d), rel=1e-13)
    pw = b.compile()
    assert pw.n_segments == 20
    np.testing.assert_allclose(pw.edges[:-1:2], np.arange(10) * 1e-3, rtol=0, atol=1e-18)
    assert pw.edges[-1] == 20e-3
    assert pw.energy == pytest.approx(midpoint_energy(pw), rel=1e-13)


def test_burst_gap_forms():
    tr = PulseTrain(peak=10.0, width=2e-6, period=1e-5, rise=2e-7, fall=4e-7)
    b = Burst(tr, pulses=4, gap=1e-4)
    assert b.period == pytest.approx(3 * 1e-5 + 2e-6 + 3e-7 + 1e-4, rel=1e-14)
    assert b.gap == pytest.approx(1e-4, rel=1e-12)
    # a gap equal to the train's own off time gives the plain train
    same = Burst(tr, pulses=4, gap=tr.period - tr.width - 3e-7)
    assert same.period == pytest.approx(4 * tr.period, rel=1e-14)
    assert same.mean == pytest.approx(tr.mean, rel=1e-12)
    # one pulse per burst with the train's period is the train
    one = Burst(tr, pulses=1, period=tr.period)
    np.testing.assert_allclose(one.compile().edges, tr.compile().edges, rtol=1e-15)


def test_burst_errors():
    tr = PulseTrain(peak=1.0, width=1e-6, period=1e-3)
    with pytest.raises(WaveformError, match=r"Burst\.pulses = 0.*at least one pulse"):
        Burst(tr, pulses=0, period=1.0)
    with pytest.raises(WaveformError, match=r"exactly one of period .* and gap"):
        Burst(tr, pulses=2)
    with pytest.raises(WaveformError, match=r"exactly one of period .* and gap"):
        Burst(tr, pulses=2, period=1.0, gap=0.1)
    with pytest.raises(WaveformError, match=r"Burst\.period = 0\.001 s: expected at least"):
        Burst(tr, pulses=3, period=1e-3)
    with pytest.raises(WaveformError, match=r"Burst\.gap = -1"):
        Burst(tr, pulses=3, gap=-1.0)
    with pytest.raises(WaveformError, match=r"Burst\.train"):
        Burst(Constant(1.0), pulses=3, gap=1.0)
    with pytest.raises(WaveformError, match=r"whole number"):
        Burst(tr, pulses=2.5, gap=1.0)


def test_hundred_thousand_pulses_in_one_period():
    """10^5 pulses in one burst period compile exactly (vectorised; timing in
    tests/bench/bench_waveforms.py)."""
    n = 100_000
    tr = PulseTrain(peak=20.0, width=1e-6, period=1e-5, idle=0.1, rise=1e-7, fall=2e-7)
    b = Burst(tr, pulses=n, gap=1e-3)
    pw = b.compile()
    assert pw.n_segments == 4 * n
    starts = pw.edges[:-1:4]
    np.testing.assert_allclose(starts, np.arange(n) * 1e-5, rtol=1e-14, atol=1e-18)
    d = n * 1e-6 / b.period
    assert b.mean == pytest.approx(20.0 * d + 0.1 * (1 - d), rel=1e-10)
    assert pw.energy == pytest.approx(midpoint_energy(pw), rel=1e-10)
    assert pw.peak == 20.0
    # every pulse identical: pulse tops all at peak, idle between
    np.testing.assert_array_equal(pw.level[1::4], 20.0)
    np.testing.assert_array_equal(pw.level[3::4], 0.1)
    # staggered cycle of 10^5 intervals
    iv = np.tile([1e-5, 1.3e-5, 1.1e-5, 0.9e-5], n // 4)
    s = Stagger(peak=5.0, intervals=iv, widths=1e-6)
    spw = s.compile()
    assert spw.n_segments == 2 * n
    assert s.mean == pytest.approx(5.0 * n * 1e-6 / iv.sum(), rel=1e-10)


# -- stagger --------------------------------------------------------------------------------
def test_stagger_average_and_starts():
    """Staggered PRI: pulse k starts at the sum of the earlier intervals (common practice,
    no source)."""
    iv = (1.0e-3, 1.2e-3, 0.9e-3)
    s = Stagger(peak=5.0, intervals=iv, widths=(1e-5, 2e-5, 1e-5), idle=0.1)
    assert s.period == pytest.approx(3.1e-3, rel=1e-15)
    d = 4e-5 / 3.1e-3
    assert s.duty == pytest.approx(d, rel=1e-14)
    assert s.mean == pytest.approx(5.0 * d + 0.1 * (1 - d), rel=1e-13)
    pw = s.compile()
    np.testing.assert_allclose(pw.edges[:-1:2], [0.0, 1.0e-3, 2.2e-3], rtol=1e-15)
    np.testing.assert_allclose(pw.widths[::2], [1e-5, 2e-5, 1e-5], rtol=1e-9)
    single = Stagger(peak=5.0, intervals=(1e-3,), widths=1e-5)
    assert single.mean == pytest.approx(PulseTrain(peak=5.0, width=1e-5, period=1e-3).mean)


def test_stagger_errors():
    with pytest.raises(WaveformError, match=r"Stagger\.intervals = \(\)"):
        Stagger(peak=1.0, intervals=(), widths=1e-6)
    with pytest.raises(WaveformError, match=r"Stagger\.intervals\[1\] = 1e-07 s: expected at "
                                            r"least widths\[1\]"):
        Stagger(peak=1.0, intervals=(1e-3, 1e-7), widths=1e-6)
    with pytest.raises(WaveformError, match=r"one width or 2 widths"):
        Stagger(peak=1.0, intervals=(1e-3, 2e-3), widths=(1e-6,))
    with pytest.raises(WaveformError, match=r"Stagger\.intervals\[1\] = 'a'"):
        Stagger(peak=1.0, intervals=(1e-3, "a"), widths=1e-6)
    with pytest.raises(WaveformError, match=r"Stagger\.intervals\[0\] = -0\.001: expected a finite time > 0"):
        Stagger(peak=1.0, intervals=(-1e-3, 1e-3), widths=1e-6)
    with pytest.raises(WaveformError, match=r"Stagger\.widths\[1\] = 0"):
        Stagger(peak=1.0, intervals=(1e-3, 1e-3), widths=(1e-6, 0.0))


# -- pulse-train errors -----------------------------------------------------------------------
@pytest.mark.parametrize("kwargs,pattern", [
    (dict(peak=1.0, width=2e-3, period=1e-3), r"PulseTrain\.width = 0\.002 s: expected at most "
                                              r"the period"),
    (dict(peak=1.0, width=1e-6, duty=1.5), r"PulseTrain\.duty = 1\.5: expected a fraction in "
                                           r"\(0, 1\]"),
    (dict(peak=1.0, width=1e-6, duty=0.0), r"PulseTrain\.duty = 0\.0"),
    (dict(peak=float("nan"), width=1e-6, period=1.0), r"PulseTrain\.peak = nan: expected a "
                                                      r"finite"),
    (dict(peak=float("inf"), width=1e-6, period=1.0), r"PulseTrain\.peak = inf"),
    (dict(peak=-1.0, width=1e-6, period=1.0), r"PulseTrain\.peak = -1\.0 W: expected a power "
                                              r">= 0"),
    (dict(peak=1.0, width=1e-6, period=1.0, idle=-0.5), r"PulseTrain\.idle = -0\.5"),
    (dict(peak=1.0, width=1e-6, period=1.0, idle=2.0), r"PulseTrain\.idle = 2\.0 W: expected at "
                                                       r"most peak"),
    (dict(peak=1.0, width=1e-6), r"got none of period/prf/duty: expected exactly one"),
    (dict(peak=1.0, width=1e-6, period=1e-3, prf=1e3), r"got \['period', 'prf'\]"),
    (dict(peak=1.0, width=0.0, period=1e-3), r"PulseTrain\.width = 0\.0 s: expected a time > 0"),
    (dict(peak=1.0, width=1e-6, prf=-5.0), r"PulseTrain\.prf = -5\.0"),
    (dict(peak=1.0, width=1e-6, period=1e-3, rise=3e-6), r"PulseTrain\.width = 1e-06 s: expected "
                                                         r"at least \(rise \+ fall\)/2"),
    (dict(peak=1.0, width=1e-6, period=1.5e-6, rise=1e-6, fall=1e-6),
     r"PulseTrain\.period = 1\.5e-06 s: expected at least width \+ \(rise \+ fall\)/2"),
    (dict(peak=1.0, width=1e-6, period=1e-3, fall=-1e-9), r"PulseTrain\.fall = -1e-09"),
    (dict(peak="10 W", width=1e-6, period=1e-3), r"PulseTrain\.peak = '10 W': expected a number"),
])
def test_pulse_train_errors(kwargs, pattern):
    with pytest.raises(WaveformError, match=pattern):
        PulseTrain(**kwargs)


def test_errors_are_value_errors():
    with pytest.raises(ValueError):
        PulseTrain(peak=1.0, width=2.0, period=1.0)


def test_replace_keeps_period():
    import dataclasses
    tr = PulseTrain(peak=1.0, width=1e-6, prf=1e3)
    wider = dataclasses.replace(tr, width=2e-6)
    assert wider.period == tr.period and wider.duty == pytest.approx(2e-3)
    faster = dataclasses.replace(tr, period=5e-4)
    assert faster.prf == pytest.approx(2e3) and faster.duty == pytest.approx(2e-3)
    b = Burst(tr, pulses=3, gap=1e-3)
    assert dataclasses.replace(b, pulses=2).period == b.period
    with pytest.raises(ValueError):
        dataclasses.replace(tr, prf=2e3)  # derived, read-only
    assert tr == PulseTrain(peak=1.0, width=1e-6, period=1e-3)
    assert "prf" not in repr(tr)


def test_common_period_of_equal_periods_is_that_period():
    """Equal periods skip the fraction search (it costs an import per run) and give what it
    gives; unequal or odd ones still go through it (common practice, no source)."""
    from pulsetherm.waveforms.canonical import MAX_PERIOD_MULTIPLE, common_period

    for p in (1e-3, 0.2, 1.7e-7, 3.3e5, 1e-300):
        assert common_period([p]) == p and common_period([p, p, p]) == p
    assert common_period([1e-3, 0.5e-3]) == 1e-3
    assert common_period([2e-3, 3e-3]) == pytest.approx(6e-3, rel=1e-15)
    with pytest.raises(WaveformError):
        common_period([1.0, 1.0 / (MAX_PERIOD_MULTIPLE + 0.5)])
    for bad in ([-1.0], [-1.0, -1.0]):               # refused as before (no positive period)
        with pytest.raises(WaveformError):
            common_period(bad)


# -- algebra --------------------------------------------------------------------------------
def test_sum_common_period_and_average():
    """Sums over the common period: mean(a + b) = mean(a) + mean(b) (linearity of the
    integral; common practice, no source)."""
    a = PulseTrain(peak=10.0, width=1e-4, period=1e-3, rise=2e-5, fall=2e-5)
    b = PulseTrain(peak=4.0, width=3e-4, period=1.5e-3, idle=1.0)
    s = a + b
    assert isinstance(s, Sum)
    assert s.period == pytest.approx(3e-3, rel=1e-12)
    assert s.mean == pytest.approx(a.mean + b.mean, rel=1e-13)
    assert s.energy == pytest.approx(3 * a.energy + 2 * b.energy, rel=1e-13)
    t = np.linspace(0, 6e-3, 4001)[1:-1] + 1.234e-7
    np.testing.assert_allclose(s.value(t), a.value(t) + b.value(t), rtol=1e-12, atol=1e-12)
    # numbers and builtins
    assert (a + 2.0).mean == pytest.approx(a.mean + 2.0, rel=1e-14)
    assert (2.0 + a).mean == pytest.approx(a.mean + 2.0, rel=1e-14)
    assert sum([a, b]).mean == pytest.approx(a.mean + b.mean, rel=1e-13)
    assert len((a + b + a).terms) == 3  # flattened


def test_scaling():
    a = Burst(PulseTrain(peak=10.0, width=1e-4, period=1e-3), pulses=3, gap=1e-3)
    for k in (0.0, 0.25, 3.0):
        s = k * a
        assert isinstance(s, Scaled)
        assert s.mean == pytest.approx(k * a.mean, rel=1e-15, abs=0)
        assert (a * k).peak == pytest.approx(k * a.peak)
    with pytest.raises(WaveformError, match=r"Scaled\.factor = -1\.0: expected a finite number "
                                            r">= 0"):
        (-1.0) * a
    with pytest.raises(WaveformError, match=r"Scaled\.factor = nan"):
        a * float("nan")


def test_sum_errors_say_why():
    a = PulseTrain(peak=1.0, width=1e-6, period=1e-3)
    odd = PulseTrain(peak=1.0, width=1e-6, period=np.pi * 1e-3)
    with pytest.raises(WaveformError, match=r"Sum: cannot add waveforms with periods .*no "
                                            r"common multiple"):
        (a + odd).compile()
    shot = Piecewise([0.0, 1e-3], [5.0], periodic=False)
    with pytest.raises(WaveformError, match=r"single-shot .* periodic .*neither"):
        (a + shot).compile()
    with pytest.raises(WaveformError, match=r"Sum\.terms\[1\] = 'x'"):
        Sum((a, "x"))


def test_single_shot_sum():
    s1 = Piecewise([0.0, 1.0, 2.0], [1.0, 3.0], periodic=False, after=0.5)
    s2 = Piecewise([0.0, 0.5], [2.0], periodic=False, after=0.0)
    tot = Sum((s1, s2, 1.0)).compile()
    assert not tot.periodic
    assert tot.after == 1.5
    assert tot.energy == pytest.approx(s1.energy + s2.energy + 1.0 * 2.0, rel=1e-15)
    np.testing.assert_allclose(tot.value([0.25, 0.75, 1.5, 3.0]), [4.0, 2.0, 4.0, 1.5])


@pytest.mark.parametrize("delay", [0.0, 1e-5, 3e-5, 1.2e-4, 5e-4, 9.99e-4, 1e-3, 2.5e-3])
def test_delayed_is_exact_rotation(delay):
    a = PulseTrain(peak=10.0, width=1e-4, period=1e-3, rise=2e-5, fall=4e-5, idle=1.0)
    d = a.delayed(delay)
    assert isinstance(d, Delayed)
    assert d.period == pytest.approx(1e-3, rel=1e-15)
    assert d.mean == pytest.approx(a.mean, rel=1e-13)
    t = np.linspace(0, 2e-3, 3001) + 1.1e-7
    np.testing.assert_allclose(d.value(t), a.value(t - delay), rtol=1e-11, atol=1e-9)


def test_delayed_single_shot_and_alternating_sources():
    shot = Piecewise([0.0, 1.0], [2.0], periodic=False, after=1.0)
    r = rotate(shot, 0.5)
    np.testing.assert_allclose(r.value([0.25, 0.75, 2.0]), [0.0, 2.0, 1.0])
    # two amplifiers keyed alternately: never both on, total mean = sum of means
    a = PulseTrain(peak=10.0, width=4e-4, period=1e-3)
    both = a + a.delayed(5e-4)
    assert both.peak == 10.0
    assert both.mean == pytest.approx(2 * a.mean, rel=1e-14)


def test_engine_contract_inputs():
    """The engine consumes as_piecewise/align: all waveform classes pass through."""
    tr = PulseTrain(peak=10.0, width=1e-4, period=1e-3)
    b = Burst(tr, pulses=2, gap=2e-3)
    edges, level, slope = align([as_piecewise(tr), as_piecewise(b), as_piecewise(3.0)])
    assert b.period == pytest.approx(3.1e-3, rel=1e-14)
    assert edges[-1] == pytest.approx(31e-3, rel=1e-12)  # common period of 1 ms and 3.1 ms
    assert level.shape == (edges.size - 1, 3)
    w = np.diff(edges)
    assert np.sum(level[:, 0] * w) / edges[-1] == pytest.approx(tr.mean, rel=1e-12)



def test_align_of_one_waveform_equals_the_general_path():
    """align() of a single periodic waveform takes its own edges (a sweep row's common
    case); the values equal the general path (tile, merge, read at midpoints) exactly, and
    a waveform with a sub-resolution sliver or a constant still goes the general way.
    Common practice, no source."""
    from pulsetherm.waveforms import canonical as cn

    rng = np.random.default_rng(7)
    cases = [PulseTrain(peak=120.0, width=1e-4, period=1e-3),
             PulseTrain(peak=5.0, width=3e-6, period=1e-3, rise=1e-7, fall=2e-7, idle=0.5),
             Burst(PulseTrain(peak=10.0, width=1e-5, period=1e-4), pulses=7, gap=2e-3),
             Stagger(40.0, (1e-4, 1.3e-4, 0.9e-4), 1e-5)]
    for _ in range(20):
        e = np.concatenate([[0.0], np.cumsum(rng.uniform(1e-6, 1e-3, rng.integers(1, 9)))])
        cases.append(Piecewise(e, rng.uniform(0, 50, e.size - 1),
                               rng.uniform(-1e3, 1e3, e.size - 1), True))
    for w in cases:
        pw = as_piecewise(w)
        assert cn._align_one(pw) is not None
        for got, want in zip(align([pw]), cn._align_general([pw])):
            np.testing.assert_array_equal(got, want)
    sliver = Piecewise([0.0, 1e-3, 1e-3 + 1e-16, 2e-3], [1.0, 2.0, 3.0], [0.0, 0.0, 0.0],
                       True)
    assert cn._align_one(sliver) is None and align([sliver])[0].size == 3
    assert cn._align_one(as_piecewise(3.0)) is None


def test_one_pulse_equals_the_vectorised_layout():
    """A pulse train's period (one pulse from 0) is laid out on plain floats; the edges,
    levels and slopes equal the vectorised layout bit for bit, ramps below the time
    resolution and too-narrow pulses included (the same message).  Common practice, no
    source."""
    from pulsetherm.waveforms import pulses as pu
    from pulsetherm.waveforms.canonical import TIME_RTOL

    rng = np.random.default_rng(3)
    compared = refused = 0
    for _ in range(3000):
        span = 10 ** rng.uniform(-6, 1)
        tol = TIME_RTOL * span
        width = span * rng.uniform(0, 1) if rng.integers(0, 5) else tol * rng.uniform(0.5, 2)
        rise, fall = ([0.0, tol * rng.uniform(0, 1.5), span * rng.uniform(0, 0.2)]
                      [rng.integers(0, 3)] for _ in range(2))
        if width + 0.5 * (rise + fall) > span:
            continue
        peak = rng.uniform(0, 100)
        args = dict(peak=peak, idle=rng.uniform(0, peak) * (rng.random() < 0.5), rise=rise,
                    fall=fall, span=span)
        try:
            want = pu._pulses(np.zeros(1), np.array([span]), np.array([width]), **args)
        except WaveformError as exc:
            with pytest.raises(WaveformError) as got:
                pu._one_pulse(span, width, **args)
            assert str(got.value) == str(exc)
            refused += 1
            continue
        got = pu._one_pulse(span, width, **args)
        for a, b in ((got.edges, want.edges), (got.level, want.level),
                     (got.slope, want.slope)):
            np.testing.assert_array_equal(a, b)
        compared += 1
    assert compared > 1000 and refused > 50
    tr = PulseTrain(peak=120.0, width=1e-4, period=1e-3, rise=1e-6, fall=2e-6)
    np.testing.assert_array_equal(tr.compile().edges,
                                  [0.0, 1e-6, 1e-6 + (1e-4 - 1.5e-6), 1e-4 + 1.5e-6, 1e-3])

def test_burst_refuses_an_unbounded_pulse_count():
    """A burst of 10^8 pulses used to be built in memory (the process was killed); it is
    refused by name instead.  Common practice, no source."""
    from pulsetherm.waveforms.pulses import MAX_BURST_PULSES, Burst, PulseTrain

    tr = PulseTrain(10.0, 1e-6, period=1e-5)
    with pytest.raises(ValueError, match=r"Burst\.pulses = 100000000: expected at most"):
        Burst(tr, 100_000_000, period=1e4)
    assert Burst(tr, MAX_BURST_PULSES, period=10.0).pulses == MAX_BURST_PULSES
