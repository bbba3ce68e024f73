"""Unit parser: every factor cross-checked against pint (test-only dependency)."""
from __future__ import annotations

import math
import re

import numpy as np
import pint
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pulsetherm.network.units import (KINDS, OZ_COPPER_M, UNITS, UnitError, format_quantity,
                                      parse_quantity, parse_range, unit_factor)

ureg = pint.UnitRegistry()

# Our symbol -> pint's name for the same unit, where pint's spelling differs.
PINT_NAME = {"um": "micrometer", "uW": "microwatt", "uJ": "microjoule", "us": "microsecond",
             "mil": "thou", "in": "inch", "h": "hour", "deg": "degree", "Np": "neper",
             "%": "percent", "degC": "delta_degC"}
SPECIAL = {"oz", "dB", "Np"}   # pint treats dB and Np as logarithmic; oz is a mass there


@pytest.mark.parametrize("symbol", sorted(set(UNITS) - SPECIAL))
def test_every_table_factor_matches_pint(symbol):
    """Each factor of the closed unit table equals pint's conversion to SI base units
    (pint default registry, the reference for unit definitions in the test suite)."""
    factor, _ = UNITS[symbol]
    q = ureg.Quantity(1.0, PINT_NAME.get(symbol, symbol)).to_base_units()
    if symbol in ("deg",):
        q = q.to("radian")
    assert factor == pytest.approx(q.magnitude, rel=1e-12), (symbol, q)


def test_special_factors():
    """oz of copper = 35 µm (common practice, no source); 1 Np = 8.686 dB (20·log10(e) dB,
    physics brief)."""
    assert UNITS["oz"][0] == OZ_COPPER_M == 35e-6
    assert 1.0 / UNITS["dB"][0] == pytest.approx(20 * math.log10(math.e))
    assert 1.0 / UNITS["dB"][0] == pytest.approx(8.686, abs=5e-4)


# text, kind, pint expression giving the same quantity (None: checked by value instead)
CASES = [
    ("0.508 mm", "length", "0.508 mm"),
    ("20 mil", "length", "20 thou"),
    ("100 us", "time", "100 microsecond"),
    ("100 µs", "time", "100 microsecond"),
    ("100 μs", "time", "100 microsecond"),
    ("1.5 ms", "time", "1.5 ms"),
    ("42 W", "power", "42 W"),
    ("318 K", "temperature", "318 K"),
    ("45 degC", "temperature", "45 degC"),
    ("45 °C", "temperature", "45 degC"),
    ("45℃", "temperature", "45 degC"),
    ("0.35 K/W", "thermal_resistance", "0.35 K/W"),
    ("0.35 °C/W", "thermal_resistance", "0.35 delta_degC/W"),
    ("390 W/mK", "conductivity", "390 W/(m*K)"),
    ("390 W/(m·K)", "conductivity", "390 W/(m*K)"),
    ("390 W/m·K", "conductivity", "390 W/(m*K)"),
    ("390 W/m-K", "conductivity", "390 W/(m*K)"),
    ("1e4 W/m2K", "film_coefficient", "1e4 W/(m**2*K)"),
    ("1e4 W/(m^2·K)", "film_coefficient", "1e4 W/(m**2*K)"),
    ("1e4 W/(m²·K)", "film_coefficient", "1e4 W/(m**2*K)"),
    ("2.5 GHz", "frequency", "2.5 GHz"),
    ("100 /s", "frequency", "100 1/s"),
    ("10 K·mm²/W", "area_resistance", "10 K*mm**2/W"),
    ("10 Kmm2/W", "area_resistance", "10 K*mm**2/W"),
    ("0.02 J/K", "capacity", "0.02 J/K"),
    ("385 J/(kg·K)", "specific_heat", "385 J/(kg*K)"),
    ("385 J/kg/K", "specific_heat", "385 J/(kg*K)"),
    ("8933 kg/m3", "density", "8933 kg/m**3"),
    ("8.9 g/cm3", "density", "8.9 g/cm**3"),
    ("8.9 g/cm³", "density", "8.9 g/cm**3"),
    ("4 mm²", "area", "4 mm**2"),
    ("50 W/cm2", "heat_flux", "50 W/cm**2"),
    ("2 Wh", "energy", "2 W*hour"),
    ("3 mJ", "energy", "3 mJ"),
    ("45 deg", "angle", "45 degree"),
    ("45°", "angle", "45 degree"),
    ("50 %", "dimensionless", "50 percent"),
    ("20 ppm", "dimensionless", "20 ppm"),
    ("0.5", "dimensionless", "0.5"),
    ("35 um", "copper_thickness", "35 micrometer"),
    ("1.4 mil", "copper_thickness", "1.4 thou"),
]


@pytest.mark.parametrize("text, kind, pint_text", CASES)
def test_parse_against_pint(text, kind, pint_text):
    """Our SI value equals pint's for the same quantity (pint default registry)."""
    mag, _, unit = pint_text.partition(" ")
    expect = ureg.Quantity(float(mag), unit or "dimensionless").to_base_units()
    if kind == "angle":
        expect = expect.to("radian")
    if kind == "attenuation":
        expect = expect.to("neper/m")
    assert parse_quantity(text, kind, "x") == pytest.approx(expect.magnitude, rel=1e-12)


@pytest.mark.parametrize("text, kind, expect", [
    # 10^(46/10) mW = 39.81 W (definition of dBm, common practice, no source)
    ("46 dBm", "power", 39.810717055349734),
    ("0 dBm", "power", 1e-3),
    ("30 dBW", "power", 1000.0),
    # copper weight 35 µm per oz (common practice, no source)
    ("1 oz", "copper_thickness", 35e-6),
    ("2 oz", "copper_thickness", 70e-6),
    ("1/2 oz", "copper_thickness", 17.5e-6),
    # 1 Np = 8.686 dB (physics brief, units); dB/m returned in Np/m
    ("0.5 dB/m", "attenuation", 0.5 / 8.685889638065035),
    ("0.02 dB/mm", "attenuation", 20.0 / 8.685889638065035),
    ("3 dB", "decibel", 3.0),
    ("1 Np", "decibel", 8.685889638065035),
    ("10 K", "temperature_difference", 10.0),
])
def test_special_quantities(text, kind, expect):
    assert parse_quantity(text, kind) == pytest.approx(expect, rel=1e-12)


def test_exact_decimal_results():
    """Sub-unit prefixes divide by the integer 1/factor: '100 us' is exactly 1e-4."""
    assert parse_quantity("100 us", "time") == 1e-4
    assert parse_quantity("0.508 mm", "length") == 0.508e-3
    assert parse_quantity("2.5 GHz", "frequency") == 2.5e9


def test_numbers_and_default_units():
    assert parse_quantity(0.0016, "length") == 0.0016
    # text without a unit is refused (issue 9 item 6: '0.76' was read as 0.76 m); a Python
    # number is SI, and dimensionless text takes '%' or a plain number
    with pytest.raises(UnitError, match=r"'0.0016': a number without a unit; expected a "
                                        r"length"):
        parse_quantity("0.0016", "length")
    assert parse_quantity("0.25", "dimensionless") == 0.25
    assert parse_quantity("10 %", "dimensionless") == pytest.approx(0.1)
    assert parse_quantity(1.6, "length", default_unit="mm") == pytest.approx(1.6e-3)
    assert parse_quantity("25", "temperature", default_unit="degC") == pytest.approx(298.15)
    assert parse_quantity(np.float64(3.0), "power") == 3.0
    with pytest.raises(UnitError, match=r"ambient = 25: a plain number is ambiguous"):
        parse_quantity(25, "temperature", "ambient")


@pytest.mark.parametrize("text, kind, match", [
    ("45 degC", "temperature_difference",
     r"rise = '45 degC': degC is for absolute temperatures; a difference of 45 degC is "
     r"45 K, write it in K"),
    ("1 oz", "length", r"'oz' is a copper weight .* only for copper thickness"),
    ("1 oz/mm", "copper_thickness", r"'oz' may only stand alone"),
    ("3 kg", "length", r"'kg' is of dimension kg; expected a length such as '0.5 mm' or "
                       r"'20 mil'"),
    ("5 W/mK", "film_coefficient", r"'W/mK' is a conductivity unit; expected a film"),
    ("3 mmm", "length", r"ambiguous"),
    ("3 meter", "length", r"unknown unit 'meter'"),
    ("3 sec", "time", r"unknown unit 'sec'"),
    ("3 ms2", "time", r"is of dimension"),
    ("abc", "length", r"no number found"),
    ("nan mm", "length", r"no number found"),
    ("-10 K", "temperature", r"below absolute zero"),
    ("-300 degC", "temperature", r"below absolute zero"),
    ("3 (mm", "length", r"missing '\)'"),
    ("3 m*", "length", r"expected a unit after"),
    ("46 dBm", "time", r"'dBm' is a power level"),
    ("2 J/K", "temperature", r"'J/K' is a capacity unit"),
])
def test_errors_name_field_value_and_expectation(text, kind, match):
    with pytest.raises(UnitError, match=match) as info:
        parse_quantity(text, kind, field="rise" if "rise" in match else "devices[0].t")
    msg = str(info.value)
    assert repr(text) in msg and "expected" in msg
    assert issubclass(UnitError, ValueError)


def test_bad_inputs():
    with pytest.raises(UnitError, match="true/false"):
        parse_quantity(True, "length")
    with pytest.raises(UnitError, match=r"got list"):
        parse_quantity([1], "length")
    with pytest.raises(UnitError, match=r"not a finite number"):
        parse_quantity(float("inf"), "length")
    with pytest.raises(UnitError, match=r"kind = 'speed': expected one of"):
        parse_quantity("1 m", "speed")
    with pytest.raises(UnitError, match="unit 'mK/'"):
        unit_factor("mK/")


def test_unit_factor():
    assert unit_factor("W/(m·K)")[0] == 1.0
    assert unit_factor("mil")[0] == pytest.approx(25.4e-6)
    f, dim = unit_factor("K·mm²/W")
    assert f == pytest.approx(1e-6) and dim == KINDS["area_resistance"].dim


@pytest.mark.parametrize("value, kind, text", [
    (5.08e-4, "length", "508 µm"),
    (1.6e-3, "length", "1.6 mm"),
    (318.15, "temperature", "45 °C"),
    (390.0, "conductivity", "390 W/(m·K)"),
    (1e4, "film_coefficient", "10000 W/(m²·K)"),
    (0.02, "capacity", "20 mJ/K"),
    (1e-5, "area_resistance", "10 K·mm²/W"),
    (1e-4, "time", "100 µs"),
    (2.5e9, "frequency", "2.5 GHz"),
    (0.5, "dimensionless", "0.5"),
    (0.5 / 8.685889638065035, "attenuation", "0.5 dB/m"),
    (0.35, "thermal_resistance", "0.35 K/W"),
])
def test_format_quantity(value, kind, text):
    assert format_quantity(value, kind) == text
    ascii_text = format_quantity(value, kind, ascii=True)
    assert ascii_text.isascii()
    assert parse_quantity(ascii_text, kind) == pytest.approx(value, rel=1e-3)


@settings(max_examples=60, deadline=None)
@given(value=st.floats(min_value=1e-9, max_value=1e6, allow_nan=False),
       kind=st.sampled_from(["length", "time", "frequency", "power", "thermal_resistance",
                             "conductivity", "film_coefficient", "capacity", "temperature",
                             "area_resistance", "density", "energy"]))
def test_format_then_parse_round_trip(value, kind):
    if kind == "temperature":
        value += 1.0
    text = format_quantity(value, kind, digits=12)
    assert parse_quantity(text, kind) == pytest.approx(value, rel=1e-10, abs=1e-9)


# -- sweeps ----------------------------------------------------------------------------------
@pytest.mark.parametrize("text, kind, expect", [
    ("1 mm..3 mm:5", "length", [1e-3, 1.5e-3, 2e-3, 2.5e-3, 3e-3]),
    ("1..3 mm:5", "length", [1e-3, 1.5e-3, 2e-3, 2.5e-3, 3e-3]),
    ("1..3 mm step 0.5 mm", "length", [1e-3, 1.5e-3, 2e-3, 2.5e-3, 3e-3]),
    ("1..3 mm step 0.5", "length", [1e-3, 1.5e-3, 2e-3, 2.5e-3, 3e-3]),
    ("1..2.9 mm step 0.5 mm", "length", [1e-3, 1.5e-3, 2e-3, 2.5e-3]),
    ("[1, 2, 3] mm", "length", [1e-3, 2e-3, 3e-3]),
    ("[1 mm, 20 mil]", "length", [1e-3, 0.508e-3]),
    ("1 mm, 20 mil", "length", [1e-3, 0.508e-3]),
    ("1, 2 mm", "length", [1e-3, 2e-3]),
    ("1 kHz..1 MHz:4 log", "frequency", [1e3, 1e4, 1e5, 1e6]),
    ("20..80 degC step 20", "temperature", [293.15, 313.15, 333.15, 353.15]),
    ("20 degC..80 degC step 20 degC", "temperature", [293.15, 313.15, 333.15, 353.15]),
    ("10 us..30 us:3", "time", [1e-5, 2e-5, 3e-5]),
    ("5..5 W:1", "power", [5.0]),
    ("[46 dBm, 50 W]", "power", [39.810717055349734, 50.0]),
    (["1 mm", 0.002], "length", [1e-3, 2e-3]),
    ("[1, 2, 3]", "dimensionless", [1.0, 2.0, 3.0]),
])
def test_parse_range(text, kind, expect):
    np.testing.assert_allclose(parse_range(text, kind), expect, rtol=1e-12)


@pytest.mark.parametrize("text, match", [
    ("1..3 mm", r"either ':n'"),
    ("1..3 mm:5 step 1 mm", r"either ':n'"),
    ("..3 mm:5", r"'start..stop'"),
    ("3..1 mm step 1 mm", r"positive step and start <= stop"),
    ("1..3 mm step -1 mm", r"positive step"),
    ("1..3 mm:0", r"n >= 1"),
    ("0..3 mm:4 log", r"positive ends"),
    ("[1, 2 mm", r"missing '\]'"),
    ("1 mm,, 2 mm", r"empty item"),
    ("1..3 kg:3", r"expected a length"),
    ("0..1 m step 1 nm", r"too many"),
])
def test_parse_range_errors(text, match):
    with pytest.raises(UnitError, match=match):
        parse_range(text, "length", field="sweep.thickness")


@pytest.mark.parametrize("text,hint", [
    ("50 w", "did you mean 'W'?"),            # a slip of case
    ("100 uS", "did you mean 'us'?"),         # uS would be a microsiemens
    ("30 C", "did you mean 'degC' or 'K'?"),
    ("1.5 C/W", "did you mean 'degC' or 'K'?"),
    ("1 ounce", "did you mean 'oz'?"),
])
def test_unknown_unit_hints_for_usual_slips(text, hint):
    """Usual slips get the symbol meant (common practice, no source)."""
    with pytest.raises(UnitError, match=re.escape(hint)):
        parse_quantity(text)
