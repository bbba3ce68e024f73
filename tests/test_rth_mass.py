"""Data-sheet devices given by ``rth`` alone have no thermal mass: every output says so and
names the keys that give one; ``capacity`` gives one (issue 9, item 5).

References for rth with a capacity, one RC stage (first-order linear system, common
practice, no source): step response Zth(t) = R·(1 − e^{−t/τ}); periodic steady state under
rectangular pulses of width t_p every T: peak rise = P·R·(1 − e^{−t_p/τ})/(1 − e^{−T/τ}),
τ = R·C.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest

from pulsetherm.network.impedance import thermal_impedance
from pulsetherm.network.scenario import loads
from pulsetherm.network.simulate import simulate
from pulsetherm.tui.cli import main

TEXT = """name = "rth device"
coolant = "40 degC"
[waveforms.p]
kind = "pulses"
peak = "300 W"
width = "2 ms"
period = "20 ms"
[mount.sink]
kind = "fixed"
[[devices]]
name = "pa"
power = "p"
footprint = ["10 mm", "20 mm"]
limit = "200 degC"
rth = "0.3 K/W"
[[devices.stack]]
name = "flange"
material = "copper"
thickness = "1.5 mm"
"""

KEYS = ("'foster'", "'stack'", "'capacity'")


def _has_caution(text: str) -> bool:
    return "no thermal mass" in text and all(k in text for k in KEYS)


def test_every_output_warns(tmp_path, capsys):
    f = tmp_path / "rth.toml"
    f.write_text(TEXT)
    assert main(["run", str(f)]) == 0
    assert _has_caution(capsys.readouterr().out)
    assert main(["run", str(f), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert any(_has_caution(c) for c in d["cautions"])
    assert main(["check", str(f)]) == 0
    assert _has_caution(capsys.readouterr().out)
    assert main(["size", str(f), "--adjust", "waveforms.p.peak", "--range", "10..1000 W"]) == 0
    assert _has_caution(capsys.readouterr().out)
    assert main(["zth", str(f), "--probe", "pa.junction"]) == 0
    assert _has_caution(capsys.readouterr().out)


def test_peak_jumps_by_p_rth_without_capacity():
    """Massless junction: at the end of the pulse it stands P·rth = 90 K over the case."""
    res = simulate(loads(TEXT))
    assert res.probes["pa.junction"].ripple_K >= 90.0


def test_capacity_gives_mass_and_the_rc_peak():
    """rth 0.3 K/W, capacity 10 mJ/K on a fixed 40 degC base (no stack): τ = 3 ms,
    peak = 40 + 300·0.3·(1 − e^{−2/3})/(1 − e^{−20/3})."""
    text = TEXT.split("[[devices.stack]]")[0].replace(
        'rth = "0.3 K/W"', 'rth = "0.3 K/W"\ncapacity = "10 mJ/K"')
    res = simulate(loads(text))
    tau = 0.3 * 10e-3
    exact = 40 + 300 * 0.3 * -math.expm1(-2e-3 / tau) / -math.expm1(-20e-3 / tau)
    assert res.probes["pa.junction"].peak_C == pytest.approx(exact, rel=1e-9)
    assert not any("no thermal mass" in c for c in res.cautions)


def test_capacity_without_rth_is_refused(tmp_path, capsys):
    text = TEXT.replace('rth = "0.3 K/W"',
                        'foster = { R = ["0.3 K/W"], tau = ["1 ms"] }\ncapacity = "1 J/K"')
    f = tmp_path / "bad.toml"
    f.write_text(text)
    assert main(["run", str(f)]) == 2
    err = capsys.readouterr().err
    assert "capacity" in err and "rth" in err


def test_rth_only_zth_gives_curve_and_note_naming_keys():
    res = thermal_impedance(loads(TEXT), "pa.junction")
    assert res.foster is None and res.cauer is None and res.structure is None
    # massless junction: the full rth at once, then the flange (copper 1.5 mm over
    # 10 x 20 mm on a fixed base: L/(kA) = 1.5e-3/(401·2e-4) = 0.0187 K/W, 1-D)
    assert res.zth[0] == pytest.approx(0.3, rel=1e-3)
    assert res.R_th == pytest.approx(0.3 + 1.5e-3 / (401 * 2e-4), rel=0.02)
    note = " ".join(res.notes)
    for key in ("'foster'", "'stack'", "'capacity'"):
        assert key in note
    assert any("no thermal mass" in c for c in res.cautions)


def test_all_massless_zth_names_the_keys(tmp_path, capsys):
    f = tmp_path / "m.toml"
    f.write_text(TEXT.split("[[devices.stack]]")[0])
    assert main(["zth", str(f), "--probe", "pa.junction"]) == 2
    err = capsys.readouterr().err
    assert "'foster'" in err and "'stack'" in err and "'capacity'" in err


def test_rth_with_capacity_is_one_rc_stage():
    """rth = 0.3 K/W, capacity = 2 mJ/K: τ = 0.6 ms, Zth = R(1 − e^{−t/τ}) (on a fixed
    base with no stack)."""
    text = TEXT.split("[[devices.stack]]")[0]
    scn = loads(text.replace('rth = "0.3 K/W"', 'rth = "0.3 K/W"\ncapacity = "2 mJ/K"'))
    res = thermal_impedance(scn, "pa.junction")
    exact = 0.3 * -np.expm1(-res.t / (0.3 * 2e-3))
    np.testing.assert_allclose(res.zth, exact, rtol=1e-9, atol=1e-15)
    assert res.cauer is not None and res.cauer.C[0] == pytest.approx(2e-3, rel=1e-9)
    assert not any("no thermal mass" in c for c in res.cautions)
