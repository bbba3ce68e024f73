"""RF to heat: amplifier and passive balances, dBm, keyed amplifiers driving heat waveforms."""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pulsetherm.waveforms.canonical import Piecewise, WaveformError
from pulsetherm.waveforms.pulses import Burst, PulseTrain
from pulsetherm.waveforms.rf import (PassiveLoss, PowerBalance, PulsedAmplifier,
                                     amplifier_from_efficiency, amplifier_from_pae, dbm_to_w,
                                     passive_loss, quiescent, w_to_dbm)

# Definitions (eta = P_out/P_dc, PAE = (P_out - P_in)/P_dc): D. M. Pozar, Microwave
# Engineering, 4th ed., 2012, §12.5 (from memory).  Balance P_dc + P_in = P_out + P_diss:
# conservation of energy (common practice, no source).


def test_dbm():
    """dBm definition: 0 dBm = 1 mW, 30 dBm = 1 W, 60 dBm = 1 kW (unit definition)."""
    assert dbm_to_w(0.0) == pytest.approx(1e-3, rel=1e-15)
    assert dbm_to_w(30.0) == pytest.approx(1.0, rel=1e-15)
    np.testing.assert_allclose(dbm_to_w([60.0, -30.0]), [1e3, 1e-6], rtol=1e-14)
    assert w_to_dbm(1.0) == pytest.approx(30.0, abs=1e-12)
    with pytest.raises(WaveformError, match=r"0 W has no dBm value"):
        w_to_dbm(0.0)


def test_drain_efficiency_numbers():
    """100 W out at 50 % drain efficiency: 200 W DC, 100 W heat (P_diss = P_out(1/eta - 1))."""
    b = amplifier_from_efficiency(100.0, 0.5)
    assert (b.p_dc, b.p_in, b.p_out, b.p_diss) == (200.0, 0.0, 100.0, 100.0)
    assert b.residual == 0.0 and b.drain_efficiency == 0.5
    with_drive = amplifier_from_efficiency(100.0, 0.5, p_in=5.0)
    assert with_drive.p_diss == 105.0 and with_drive.residual == 0.0
    dbm = amplifier_from_efficiency(50.0, 0.5, p_in=40.0, unit="dBm")  # 100 W out, 10 W in
    assert dbm.p_diss == pytest.approx(110.0, rel=1e-14)


def test_pae_numbers():
    """100 W out, 10 dB gain (10 W in), PAE 40 %: P_dc = 90/0.4 = 225 W,
    P_diss = 90·(1/0.4 - 1) = 135 W."""
    b = amplifier_from_pae(100.0, 0.4, gain_db=10.0)
    assert b.p_in == pytest.approx(10.0, rel=1e-15)
    assert b.p_dc == pytest.approx(225.0, rel=1e-15)
    assert b.p_diss == pytest.approx(135.0, rel=1e-15)
    assert b.pae == pytest.approx(0.4, rel=1e-15) and b.gain_db == pytest.approx(10.0)
    same = amplifier_from_pae(50.0, 0.4, p_in=40.0, unit="dBm")
    assert same.p_diss == pytest.approx(135.0, rel=1e-13)


def test_passive_and_bias():
    """IL = 10·log10(2) dB dissipates exactly half the input (definition of dB)."""
    b = passive_loss(10.0, 10 * math.log10(2.0))
    assert b.p_diss == pytest.approx(5.0, rel=1e-14) and b.p_out == pytest.approx(5.0)
    assert passive_loss(10.0, 0.0).p_diss == 0.0
    # small loss without cancellation: 1e-6 dB -> fraction ln(10)/10 * 1e-6
    assert passive_loss(1.0, 1e-6).p_diss == pytest.approx(math.log(10) / 10 * 1e-6, rel=1e-6)
    q = quiescent(28.0, 0.25)
    assert (q.p_dc, q.p_diss, q.p_out) == (7.0, 7.0, 0.0)
    line = PassiveLoss.from_attenuation(2.0, 0.05)  # 2 dB/m over 5 cm
    assert line.loss_db == pytest.approx(0.1)


@pytest.mark.parametrize("call,pattern", [
    (lambda: amplifier_from_efficiency(10.0, 0.0), r"efficiency = 0\.0: expected an efficiency "
                                                   r"in \(0, 1\]"),
    (lambda: amplifier_from_efficiency(10.0, 55.0), r"efficiency = 55\.0: .*not a percentage"),
    (lambda: amplifier_from_efficiency(-1.0, 0.5), r"p_out = -1\.0 W: expected a power >= 0"),
    (lambda: amplifier_from_efficiency(float("nan"), 0.5), r"p_out = nan W: expected a finite"),
    (lambda: amplifier_from_efficiency(10.0, 0.5, unit="dBW"), r"unit = 'dBW'"),
    (lambda: amplifier_from_pae(10.0, 1.5, gain_db=10), r"pae = 1\.5"),
    (lambda: amplifier_from_pae(10.0, 0.5), r"expected exactly one \(the drive power"),
    (lambda: amplifier_from_pae(10.0, 0.5, p_in=20.0), r"p_in = 20\.0 W: expected less than"),
    (lambda: passive_loss(1.0, -0.1), r"loss_db = -0\.1: expected a finite insertion loss >= 0"),
    (lambda: quiescent(-5.0, 1.0), r"voltage = -5\.0"),
    (lambda: PulsedAmplifier(), r"expected exactly one"),
    (lambda: PulsedAmplifier(pae=0.5), r"gain_db = None: expected a gain in dB with pae"),
    (lambda: PulsedAmplifier(efficiency=0.5, keying="bias"), r"keying = 'bias'"),
    (lambda: PulsedAmplifier(efficiency=0.5, drain_voltage=28, idle_current=0.1),
     r"idle_current = 0\.1 A with keying='drain': expected 0"),
])
def test_errors(call, pattern):
    with pytest.raises(WaveformError, match=pattern):
        call()


@settings(deadline=None, max_examples=150)
@given(p_out=st.floats(1e-6, 1e7), eta=st.floats(1e-3, 1.0), gain_db=st.floats(0.01, 40.0),
       loss_db=st.floats(0.0, 60.0), v=st.floats(0.0, 100.0), i=st.floats(0.0, 50.0))
def test_energy_conservation(p_out, eta, gain_db, loss_db, v, i):
    """P_DC + P_in = P_out + P_diss for every conversion (conservation of energy)."""
    g = 10 ** (gain_db / 10)
    balances = [amplifier_from_efficiency(p_out, eta), amplifier_from_efficiency(p_out, eta,
                                                                                 p_out / g),
                amplifier_from_pae(p_out, eta, gain_db=gain_db), passive_loss(p_out, loss_db),
                quiescent(v, i)]
    for b in balances:
        scale = max(b.p_dc, b.p_in, b.p_out, b.p_diss, 1e-300)
        assert abs(b.residual) <= 1e-12 * scale
        assert min(b.p_dc, b.p_in, b.p_out, b.p_diss) >= 0
    assert balances[0].p_diss == pytest.approx(p_out * (1 / eta - 1), rel=1e-12, abs=1e-12 * p_out)
    pae = balances[2]
    assert pae.p_diss == pytest.approx((p_out - pae.p_in) * (1 / eta - 1), rel=1e-12,
                                       abs=1e-12 * p_out)


def test_pulsed_amplifier_heat_drain_keyed():
    """Drain-pulsed: heat = P_out(1/eta - 1) during the pulse, none between pulses."""
    env = PulseTrain(peak=100.0, width=1e-4, duty=0.1)
    amp = PulsedAmplifier(efficiency=0.4)
    h = amp.heat(env)
    pw = h.compile()
    np.testing.assert_allclose(pw.level, [150.0, 0.0], rtol=1e-14)
    assert h.mean == pytest.approx(15.0, rel=1e-14)
    # mean heat = mean DC + mean drive - mean RF out (balance over the period)
    bal = amp.balance(100.0)
    assert h.mean == pytest.approx(0.1 * (bal.p_dc + bal.p_in - bal.p_out), rel=1e-14)


def test_pulsed_amplifier_heat_gate_keyed_with_ramps():
    """Gate-pulsed: the drain stays biased, V·I_idle flows between pulses (only where the RF
    envelope is exactly zero; during the ramps the heat follows k·P_out)."""
    env = Burst(PulseTrain(peak=200.0, width=50e-6, period=500e-6, rise=5e-6, fall=5e-6),
                pulses=8, gap=2e-3)
    amp = PulsedAmplifier(pae=0.5, gain_db=13.0, keying="gate", drain_voltage=50.0,
                          idle_current=0.02)
    k = (1 - 10 ** -1.3) * (1 / 0.5 - 1)
    assert amp.heat_per_output_watt == pytest.approx(k, rel=1e-15)
    assert amp.idle_heat == pytest.approx(1.0)
    h = amp.heat(env)
    pw = h.compile()
    off = (env.compile().level == 0) & (env.compile().slope == 0)
    off_time = np.sum(pw.widths[off])
    assert off_time == pytest.approx(env.period - 8 * (50e-6 + 5e-6), rel=1e-12)
    assert h.mean == pytest.approx(k * env.mean + 1.0 * off_time / env.period, rel=1e-12)
    assert h.peak == pytest.approx(k * 200.0, rel=1e-14)
    assert h.rf_mean == pytest.approx(env.mean)
    idle = amp.idle_balance()
    assert idle.p_diss == pytest.approx(1.0) and idle.residual == 0.0


def test_single_shot_envelope_and_line_heat():
    shot = Piecewise([0.0, 1e-3], [10.0], periodic=False, after=0.0)
    amp = PulsedAmplifier(efficiency=0.5, keying="gate", drain_voltage=10.0, idle_current=0.1)
    pw = amp.heat(shot).compile()
    assert pw.level[0] == 10.0 and pw.after == pytest.approx(1.0)
    line = PassiveLoss(10 * math.log10(2.0))
    env = PulseTrain(peak=20.0, width=1e-4, period=1e-3)
    assert line.heat(env).mean == pytest.approx(0.5 * env.mean, rel=1e-14)
    assert line.balance(20.0).p_diss == pytest.approx(10.0)


def test_power_balance_validates():
    with pytest.raises(WaveformError, match=r"PowerBalance\.p_diss = -1\.0 W"):
        PowerBalance(1.0, 0.0, 2.0, -1.0)
    assert PowerBalance(0.0, 0.0, 0.0, 0.0).drain_efficiency is None
