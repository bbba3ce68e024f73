"""Mission profiles: stretches in sequence, repeating or once; exact energies."""
from __future__ import annotations

import numpy as np
import pytest

from pulsetherm.waveforms.canonical import Piecewise, WaveformError
from pulsetherm.waveforms.profile import Profile, Stretch
from pulsetherm.waveforms.pulses import Burst, Constant, PulseTrain


def test_standby_then_transmit():
    """10 min standby at idle, then 5 min of bursts: the mean is the time-weighted mean of
    the stretches when the transmit stretch holds whole burst periods (linearity of the
    integral; common practice, no source)."""
    tx = Burst(PulseTrain(peak=40.0, width=20e-6, period=0.5e-3, idle=0.2), pulses=16,
               period=12.5e-3)
    day = Profile([Stretch(600.0, 0.5, "standby"), Stretch(300.0, tx, "transmit")])
    assert day.periodic and day.period == 900.0
    assert 300.0 / tx.period == pytest.approx(24000)
    assert day.mean == pytest.approx((600 * 0.5 + 300 * tx.mean) / 900, rel=1e-10)
    e = day.stretch_energies()
    assert e[0] == pytest.approx(300.0, rel=1e-15)
    assert e[1] == pytest.approx(300 * tx.mean, rel=1e-10)
    assert day.energy == pytest.approx(e.sum(), rel=1e-10)
    pw = day.compile()
    # standby is one segment; the transmit stretch starts with the first pulse at 600 s
    assert pw.edges[1] == 600.0 and pw.level[0] == 0.5
    assert pw.level[1] == 40.0
    np.testing.assert_allclose(day.value([300.0, 600.0 + 1e-6, 600.0 + 30e-6]), [0.5, 40.0, 0.2])


def test_cut_mid_pulse_is_exact():
    tr = PulseTrain(peak=10.0, width=0.3, period=1.0)
    p = Profile([Stretch(1.0, 0.5), Stretch(2.15, tr)], periodic=False, after=0.1)
    pw = p.compile()
    np.testing.assert_allclose(pw.edges, [0, 1, 1.3, 2, 2.3, 3, 3.15])
    np.testing.assert_allclose(pw.level, [0.5, 10, 0, 10, 0, 10])
    assert pw.after == 0.1 and not pw.periodic
    assert p.energy == pytest.approx(0.5 + 3.0 + 3.0 + 1.5, rel=1e-14)


def test_tuples_constants_and_single_shot_sources():
    shot = Piecewise([0.0, 0.5], [4.0], periodic=False, after=1.0)
    p = Profile([(2.0, shot, "warm-up"), (1.0, Constant(3.0)), (1.0, 0.0)])
    assert [s.label for s in p.stretches] == ["warm-up", "", ""]
    np.testing.assert_allclose(p.starts, [0.0, 2.0, 3.0])
    assert p.energy == pytest.approx(4.0 * 0.5 + 1.0 * 1.5 + 3.0, rel=1e-15)
    assert p.period == 4.0


def test_profile_errors():
    with pytest.raises(WaveformError, match=r"Stretch\.duration = 0\.0 s: expected a time > 0"):
        Stretch(0.0, 1.0)
    with pytest.raises(WaveformError, match=r"Stretch\.power = -2\.0 W"):
        Stretch(1.0, -2.0)
    with pytest.raises(WaveformError, match=r"Stretch\.power = 'hot'"):
        Stretch(1.0, "hot")
    with pytest.raises(WaveformError, match=r"Profile\.stretches = \(\)"):
        Profile(())
    with pytest.raises(WaveformError, match=r"Profile\.stretches\[1\] = 5"):
        Profile([(1.0, 2.0), 5])
    with pytest.raises(WaveformError, match=r"Profile\.after = 1\.0 W: only a single-shot"):
        Profile([(1.0, 2.0)], after=1.0)


def test_pulses_below_time_resolution_are_refused():
    """A 10 ps pulse after 11 s of standby is below the 1e-12 relative time resolution: an
    error, not a silent loss of energy."""
    tr = PulseTrain(peak=1.0, width=1e-11, period=1e-7)
    with pytest.raises(WaveformError, match=r"below the time resolution .*change the energy"):
        Profile([Stretch(11.0, 0.0), Stretch(7.5e-7, tr)]).compile()
    with pytest.raises(WaveformError, match=r"pulse width 1e-13 s is below the time resolution"):
        PulseTrain(peak=1.0, width=1e-13, period=1.0).compile()


def test_a_stretch_that_would_tile_too_many_segments_is_refused():
    """One hour of a 10 kHz train is 3.6e7 pulses held segment by segment: refused by name
    instead of exhausting memory.  Common practice, no source."""
    from pulsetherm.waveforms.profile import MAX_STRETCH_SEGMENTS, Profile, Stretch
    from pulsetherm.waveforms.pulses import PulseTrain

    tr = PulseTrain(10.0, 10e-6, prf=10e3)
    with pytest.raises(ValueError, match=r"Stretch\.duration = 3600\.0 s: plays 36000000 "
                                         r"periods"):
        Profile([Stretch(3600.0, tr)]).compile()
    ok = Profile([Stretch(MAX_STRETCH_SEGMENTS / 2 * 1e-4, tr)]).compile()
    assert ok.n_segments <= MAX_STRETCH_SEGMENTS
