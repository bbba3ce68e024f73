"""Microstrip electrical model: published examples, formula regressions, reference library."""
from __future__ import annotations

import math

import numpy as np
import pytest

import pulsetherm.network.microstrip as ms

from pulsetherm.network.microstrip import (
    NP_TO_DB, RHO_CU_20, HurayRoughness, Microstrip, MicrostripError, copper_resistivity,
    hammerstad_roughness, hj_analysis, huray_roughness, pozar_width, skin_depth,
    surface_resistance,
)


# ---------------------------------------------------------------------------------------
# Published example
# ---------------------------------------------------------------------------------------
def test_pozar_example_3_7():
    """Pozar, *Microwave Engineering*, 3rd ed., 2005, Example 3.7: 50 Ω on εr 2.20,
    d = 1.27 mm -> W/d = 3.081, W = 0.391 cm, ε_eff = 1.87, 90° at 2.5 GHz = 2.19 cm."""
    assert pozar_width(50.0, 2.20) == pytest.approx(3.081, abs=5e-4)
    line = Microstrip(height=1.27e-3, eps_r=2.20, z0_target=50.0, thickness=0.0,
                      frequency=2.5e9)
    # refined on the HJ analysis: same width to 0.1 %, eps_eff to 1 % (Pozar uses a simpler
    # ε_eff formula, eq. 3.195, giving 1.87; HJ gives 1.881)
    assert line.u == pytest.approx(3.081, rel=1e-3)
    assert line.w == pytest.approx(0.391e-2, rel=2e-3)
    assert line.eps_eff == pytest.approx(1.87, rel=1e-2)
    assert line.length_for(90.0) == pytest.approx(2.19e-2, abs=5e-5)
    assert line.z0 == pytest.approx(50.0, rel=1e-10)


# ---------------------------------------------------------------------------------------
# Formula regressions (physics brief §1, tag deriv)
# ---------------------------------------------------------------------------------------
@pytest.mark.parametrize("eps_r, u, z0, eps_eff", [
    (2.2, 3.081, 50.02, 1.8812),
    (9.8, 1.0, 49.29, 6.5790),
    (4.4, 0.1, 153.95, 2.9132),
    (4.4, 10.0, 14.764, 3.8639),
])
def test_hammerstad_jensen_zero_thickness(eps_r, u, z0, eps_eff):
    """Hammerstad & Jensen 1980 eq. (1)-(5); values of physics brief §1 (deriv), 0.1 %."""
    z, e, ur = hj_analysis(u, eps_r, 0.0)
    assert z == pytest.approx(z0, rel=1e-3)
    assert e == pytest.approx(eps_eff, rel=1e-3)
    assert ur == u


def test_hammerstad_jensen_thickness():
    """HJ 1980 thickness correction eq. (6)-(9): εr 4.4, u 1.9, t/h 0.04375 -> 49.435 Ω,
    ε_eff 3.2863 (physics brief §1, deriv), 0.1 %."""
    z, e, ur = hj_analysis(1.9, 4.4, 0.04375)
    assert z == pytest.approx(49.435, rel=1e-3)
    assert e == pytest.approx(3.2863, rel=1e-3)
    assert ur > 1.9


def test_skin_depth_and_surface_resistance():
    """IACS copper at 1 / 10 GHz: δ 2.090 / 0.661 µm, Rs 8.25 / 26.09 mΩ (physics brief §1,
    deriv, from Rs = √(πfμ0ρ))."""
    d = skin_depth(np.array([1e9, 10e9]), RHO_CU_20)
    rs = surface_resistance(np.array([1e9, 10e9]), RHO_CU_20)
    np.testing.assert_allclose(d, [2.090e-6, 0.661e-6], rtol=1e-3)
    np.testing.assert_allclose(rs, [8.25e-3, 26.09e-3], rtol=1e-3)


def test_surface_resistance_finite_thickness_limits():
    """One-sided slab: ρ/t at low frequency, √(πfμ0ρ) for t >> δ (value from memory)."""
    t = 35e-6
    assert surface_resistance(1e3, RHO_CU_20, thickness=t) == pytest.approx(RHO_CU_20 / t,
                                                                            rel=1e-3)
    thick = surface_resistance(10e9, RHO_CU_20)
    assert surface_resistance(10e9, RHO_CU_20, thickness=t) == pytest.approx(thick, rel=1e-9)
    # 3 skin depths: within 0.5 %
    f3 = RHO_CU_20 / (np.pi * 4e-7 * np.pi * (t / 3) ** 2)
    ratio = surface_resistance(f3, RHO_CU_20, thickness=t) / surface_resistance(f3, RHO_CU_20)
    assert 1.0 < ratio < 1.005


def test_hammerstad_roughness_values():
    """K_r = 1 + (2/π)arctan[1.4(Δ/δ)²] at 10 GHz, Δ_rms 0.5 / 1 / 2 µm -> 1.430 / 1.808 /
    1.951 (physics brief §1, deriv)."""
    d = skin_depth(10e9, RHO_CU_20)
    kr = hammerstad_roughness(np.array([0.5e-6, 1e-6, 2e-6]), d)
    np.testing.assert_allclose(kr, [1.430, 1.808, 1.951], atol=1.5e-3)


def test_huray_limits():
    """Huray et al., DesignCon 2010: K_H -> A_matte/A_flat at low frequency and
    A_matte/A_flat + 1.5·Σf_i when δ << r (the formula's limits)."""
    r, f = (0.5e-6, 1.0e-6), (0.8, 0.4)
    assert huray_roughness(1.0, r, f, 1.1) == pytest.approx(1.1, abs=1e-5)
    assert huray_roughness(1e-12, r, f, 1.1) == pytest.approx(1.1 + 1.5 * 1.2, rel=1e-5)
    rough = HurayRoughness(radius=r, area_ratio=f, matte_ratio=1.1)
    k = rough.factor(skin_depth(np.array([1e8, 1e9, 1e10, 1e11]), RHO_CU_20))
    assert np.all(np.diff(k) > 0)
    line = Microstrip(height=0.5e-3, eps_r=3.5, width=1e-3, frequency=1e10, roughness=rough)
    smooth = Microstrip(height=0.5e-3, eps_r=3.5, width=1e-3, frequency=1e10)
    assert line.alpha_c / smooth.alpha_c == pytest.approx(line.k_rough, rel=1e-12)


def test_copper_resistivity_iacs():
    """IACS: 1.7241 µΩ·cm at 20 °C, 0.00393 /K (physics brief §1, pub)."""
    assert copper_resistivity(20.0) == pytest.approx(1.7241e-8, rel=1e-12)
    assert copper_resistivity(120.0) == pytest.approx(1.7241e-8 * 1.393, rel=1e-12)


def test_conductor_loss_rises_with_temperature():
    """In the skin-effect regime Rs ∝ √ρ, so a smooth line's α_c rises ≈ 0.2 %/K (physics
    brief §1); the line-heat coefficient equals α_c's share times that rate."""
    cold = Microstrip(height=0.5e-3, eps_r=3.5, z0_target=50.0, frequency=5e9)
    hot = cold.at_temperature(120.0)
    assert hot.w == cold.w
    assert hot.alpha_c / cold.alpha_c == pytest.approx(math.sqrt(1.393), rel=1e-6)
    c = cold.heat_temp_coeff()
    assert c == pytest.approx(0.5 * 0.00393, rel=1e-3)
    lossy = Microstrip(height=0.5e-3, eps_r=3.5, z0_target=50.0, frequency=5e9,
                       tan_delta=0.004)
    assert lossy.heat_temp_coeff() == pytest.approx(0.5 * 0.00393 * lossy.conductor_share,
                                                    rel=1e-3)


def test_heat_per_length_and_units():
    """Power lost per metre = 2α·P (α in Np/m) = 0.2303·α·P (α in dB/m) (physics brief)."""
    line = Microstrip(height=0.5e-3, eps_r=3.5, z0_target=50.0, frequency=3e9,
                      tan_delta=0.003, roughness=1e-6)
    assert line.alpha_db == pytest.approx(line.alpha * 8.686, rel=1e-4)
    assert line.alpha_db == pytest.approx(line.alpha * NP_TO_DB, rel=1e-14)
    assert line.heat_per_length(10.0) == pytest.approx(0.2303 * line.alpha_db * 10.0, rel=5e-4)
    assert line.loss_fraction(0.1) == pytest.approx(1 - math.exp(-0.2 * line.alpha))


def test_synthesis_matches_analysis_with_dispersion_and_thickness():
    """Synthesis is refined on the same model the line reports (definition)."""
    for er, z in ((2.2, 30.0), (3.5, 50.0), (10.2, 75.0), (6.15, 120.0)):
        line = Microstrip(height=0.254e-3, eps_r=er, z0_target=z, thickness=35e-6,
                          frequency=20e9, dispersion=True)
        again = Microstrip(height=0.254e-3, eps_r=er, width=line.w, thickness=35e-6,
                           frequency=20e9, dispersion=True)
        assert again.z0 == pytest.approx(z, rel=1e-10)


def test_dispersion_raises_eps_eff():
    """Kirschning & Jansen 1982: ε_eff rises with frequency towards εr."""
    eps = [Microstrip(height=0.635e-3, eps_r=9.8, width=0.6e-3, frequency=f,
                      dispersion=True).eps_eff for f in (1e9, 10e9, 30e9, 100e9)]
    static = Microstrip(height=0.635e-3, eps_r=9.8, width=0.6e-3).eps_eff
    assert static < eps[0] < eps[1] < eps[2] < eps[3] < 9.8
    assert eps[0] == pytest.approx(static, rel=5e-3)


@pytest.mark.parametrize("kwargs, field", [
    (dict(height=0.0, eps_r=3.5, width=1e-3), "height"),
    (dict(height=1e-3, eps_r=1.0, width=1e-3), "eps_r"),
    (dict(height=1e-3, eps_r=3.5), "z0_target"),
    (dict(height=1e-3, eps_r=3.5, width=1e-3, z0_target=50.0), "z0_target"),
    (dict(height=1e-3, eps_r=3.5, width=1e-3, tan_delta=-0.1), "tan_delta"),
    (dict(height=1e-3, eps_r=3.5, width=1e-3, frequency=float("nan")), "frequency"),
    (dict(height=1e-3, eps_r=3.5, width=1e-7), "width"),
    (dict(height=1e-3, eps_r=3.5, z0_target=5000.0), "z0_target"),
    (dict(height=1e-3, eps_r=3.5, width=1e-3, roughness=-1e-6), "roughness"),
])
def test_bad_input_names_field(kwargs, field):
    with pytest.raises(MicrostripError, match=field):
        Microstrip(**kwargs)


def test_bad_huray_input():
    with pytest.raises(MicrostripError, match="area_ratio"):
        HurayRoughness(radius=(1e-6, 2e-6), area_ratio=(0.5,))
    with pytest.raises(MicrostripError, match="radius"):
        HurayRoughness(radius=-1e-6, area_ratio=0.5)


# ---------------------------------------------------------------------------------------
# Reference library
# ---------------------------------------------------------------------------------------
@pytest.mark.parametrize("disp", ["none", "kirschningjansen"])
def test_against_scikit_rf_mline(disp):
    """scikit-rf ``skrf.media.MLine`` (2.x) as a reference library: Z0 and ε_eff within 1 %,
    α_c and α_d within 5 %, over w/h 0.2-10, εr 2.2-10, 1-30 GHz.

    Options matched after reading its source: model 'hammerstadjensen' (HJ 1980 with the
    thickness correction), dispersion 'none' or 'kirschningjansen', dielectric
    'frequencyinvariant' (its default wideband Debye model would change tanδ with
    frequency), ``t`` given (else its conductor loss is zero), ``rough`` RMS in metres
    (Hammerstad K_r), ``rho`` IACS copper, t >= 3δ at 1 GHz (else it warns).
    """
    skrf = pytest.importorskip("skrf")
    from skrf.media import MLine

    f = np.array([1e9, 3e9, 10e9, 30e9])
    freq = skrf.Frequency.from_f(f, unit="Hz")
    worst = np.zeros(4)
    for h in (0.254e-3, 0.787e-3):
        for u in (0.2, 0.5, 1.0, 2.0, 5.0, 10.0):
            for er in (2.2, 3.5, 6.15, 10.0):
                ref = MLine(frequency=freq, w=u * h, h=h, t=17e-6, ep_r=er, rho=RHO_CU_20,
                            tand=0.002, rough=0.7e-6, disp=disp, diel="frequencyinvariant",
                            model="hammerstadjensen")
                for i, fi in enumerate(f):
                    ours = Microstrip(height=h, eps_r=er, width=u * h, tan_delta=0.002,
                                      thickness=17e-6, frequency=fi, roughness=0.7e-6,
                                      dispersion=disp != "none")
                    err = np.abs([ours.z0 / np.real(ref.z0[i]) - 1,
                                  ours.eps_eff / np.real(ref.ep_reff_f[i]) - 1,
                                  ours.alpha_c / ref.alpha_conductor[i] - 1,
                                  ours.alpha_d / ref.alpha_dielectric[i] - 1])
                    worst = np.maximum(worst, err)
    assert worst[0] < 0.01 and worst[1] < 0.01
    assert worst[2] < 0.05 and worst[3] < 0.05


@pytest.mark.parametrize("call, field", [
    (lambda: ms.hj_analysis(float("nan"), 4.4), "u"),
    (lambda: ms.hj_analysis(-1.0, 4.4), "u"),
    (lambda: ms.hj_analysis(1.0, 0.5), "eps_r"),
    (lambda: ms.pozar_width(-50.0, 4.4), "z0"),
    (lambda: ms.skin_depth(-1.0, 1.7e-8), "frequency"),
    (lambda: ms.surface_resistance(float("nan"), 1.7e-8), "frequency"),
    (lambda: ms.copper_resistivity(-300.0), "temperature_c"),
    (lambda: ms.conductor_loss(50.0, 0.0, 0.01), "width"),
    (lambda: ms.hammerstad_roughness(1e-6, 0.0), "delta"),
    (lambda: ms.current_factor(float("nan")), "z0"),
    (lambda: ms.dielectric_loss(1e9, 2.2, 3.0, 1e-3), "eps_eff"),
])
def test_formula_functions_refuse_bad_input_by_name(call, field):
    """No silent NaN (project rule 5): the formula functions name the bad field."""
    with pytest.raises(ms.MicrostripError, match=rf"^{field} = "):
        call()


def test_dielectric_loss_in_a_homogeneous_medium():
    """εr = 1 = ε_eff: all the field in the medium, α_d = k0·tanδ/2 (plane-wave loss,
    Pozar, Microwave Engineering, 3rd ed., eq. (3.198) with filling factor 1)."""
    f, tand = 1e9, 1e-3
    k0 = 2 * math.pi * f / 299_792_458.0
    assert float(ms.dielectric_loss(f, 1.0, 1.0, tand)) == pytest.approx(k0 * tand / 2,
                                                                         rel=1e-12)
