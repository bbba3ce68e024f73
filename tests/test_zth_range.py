"""``zth`` builds for its own time range and skips, with a note, only the parts that do not
exist (issue 9, items 8 and 9; the rth device's zth is in test_rth_mass.py).

References
----------
* Slab series: H. S. Carslaw and J. C. Jaeger, *Conduction of Heat in Solids*, 2nd ed.,
  1959, §3.3 (slab, constant flux into one face, the other face held):
  Zth(t) = (L/kA)·[1 − Σ 8/((2n+1)²π²)·exp(−(2n+1)²π²αt/(4L²))] (physics brief §4).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from pulsetherm.network.impedance import thermal_impedance
from pulsetherm.network.scenario import loads
from pulsetherm.tui.cli import main

SI_K, SI_RHO, SI_C = 148.0, 2330.0, 712.0   # the library's "silicon" (physics brief §4)

SLAB = """name = "silicon slab, constant power"
[mount.sink]
kind = "fixed"
[model]
spreading = "none"
[[devices]]
name = "d"
power = "10 W"
footprint = ["10 mm", "10 mm"]
[[devices.stack]]
name = "die"
material = "silicon"
thickness = "1 mm"
size = ["10 mm", "10 mm"]
"""


def slab_zth(t, L=1e-3, A=1e-4, terms=200_000):
    n = np.arange(terms)
    a = SI_K / (SI_RHO * SI_C)
    Rn = L / (SI_K * A) * 8.0 / ((2 * n + 1) ** 2 * math.pi ** 2)
    tau = 4 * L * L / ((2 * n + 1) ** 2 * math.pi ** 2 * a)
    return Rn.sum() - np.exp(-np.outer(t, 1.0 / tau)) @ Rn


def test_constant_power_device_zth_resolved_from_1_us():
    """The issue: a constant-power device gave a one-stage curve, -97 % at 1 µs."""
    res = thermal_impedance(loads(SLAB), "d.junction")
    assert res.t[0] == pytest.approx(1e-6)
    exact = slab_zth(res.t)
    err = np.abs(res.zth / exact - 1.0)
    assert err.max() < 0.02, (res.t[np.argmax(err)], err.max())
    assert res.foster is not None and res.cauer is not None and len(res.foster.R) > 3


@pytest.mark.parametrize("t_from", [1e-7, 1e-5])
def test_zth_from_sets_the_first_time(t_from):
    res = thermal_impedance(loads(SLAB), "d.junction", t_from=t_from)
    assert res.t[0] == pytest.approx(t_from)
    assert res.pulsed.widths[0] == pytest.approx(t_from)
    err = np.abs(res.zth / slab_zth(res.t) - 1.0)
    assert err.max() < 0.02


def test_cli_zth_from_option(tmp_path, capsys):
    f = tmp_path / "slab.toml"
    f.write_text(SLAB)
    assert main(["zth", str(f), "--probe", "d.junction", "--from", "10 us"]) == 0
    assert "from 1.000e-05 s" in capsys.readouterr().out
    assert main(["zth", str(f), "--probe", "d.junction", "--from", "10 W"]) == 2
    assert "--from" in capsys.readouterr().err


def test_axisymmetric_zth_gives_curve_and_pulsed_family():
    """The r-z mode's junction is the centre of a heated footprint (a transfer
    impedance): Zth and the pulsed family are given, Cauer/structure skipped with a note.
    Reference for the curve: the slab series again (a 1-D stack in the r-z mesh)."""
    scn = loads(SLAB + '\n').with_value("model.fidelity", "axisymmetric")
    res = thermal_impedance(scn, "d.junction")
    assert res.cauer is None and res.structure is None
    assert any("transfer impedance" in n for n in res.notes)
    assert res.pulsed is not None and np.all(np.isfinite(res.pulsed.K_per_W))
    err = np.abs(res.zth / slab_zth(res.t) - 1.0)
    assert err.max() < 0.03
