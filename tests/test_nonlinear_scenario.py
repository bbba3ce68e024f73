"""A nonlinear scenario end to end: ``[model] nonlinear = true`` through the scenario layer,
the simulation (periodic shooting, warm-up) and the command line."""
from __future__ import annotations

import json
import math

import pytest

from pulsetherm.network.scenario import load
from pulsetherm.network.simulate import build, simulate
from pulsetherm.tui.cli import main

SCENARIO = """
name = "small nonlinear die"
coolant = "40 degC"

[model]
fidelity = "ladder"
grading = "coarse"
nonlinear = {nonlinear}

[waveforms.radar]
kind = "pulses"
peak = "60 W"
width = "2 ms"
period = "20 ms"

[board]
size = ["12 mm", "12 mm"]

[[board.layers]]
name = "top-copper"
material = "pcb-copper"
thickness = "35 um"

[[board.layers]]
name = "laminate"
material = "hydrocarbon-ceramic"
thickness = "0.254 mm"

[board.layers.vias]
drill = "0.3 mm"
plating = "25 um"
pitch = "0.6 mm"
fill = "pcb-copper"

[[board.layers]]
name = "ground-copper"
material = "pcb-copper"
thickness = "35 um"

[mount.sink]
kind = "fixed"

[[devices]]
name = "pa"
power = "radar"
footprint = ["0.6 mm", "2.4 mm"]
limit = "250 degC"

[[devices.stack]]
name = "die"
material = "gaas"
thickness = "100 um"
size = ["1.2 mm", "3.0 mm"]

[[devices.stack]]
name = "attach"
material = "ausn"
thickness = "25 um"
size = ["1.2 mm", "3.0 mm"]
"""


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("scn")
    out = {}
    for flag in ("true", "false"):
        p = d / f"die_{flag}.toml"
        p.write_text(SCENARIO.replace("{nonlinear}", flag))
        out[flag] = p
    return out


def test_nonlinear_scenario_runs_and_die_runs_hotter(files):
    """GaAs die, k(T) = k300·(T/300 K)^-1.3 (physics brief §8; Kirchhoff transform, Joyce,
    Solid-State Electronics 18, 1975): the conductivity falls as the die heats, so the
    mean junction rise of the nonlinear model is above the linear one (same network,
    constant k).  The nonlinear run really uses the nonlinear solver, balances its energy
    (finite, < 1e-6) and reports a finite warm-up time."""
    lin_scn, nl_scn = load(files["false"]), load(files["true"])
    nl_model = build(nl_scn)
    assert nl_model.method == "nonlinear"
    assert not nl_model.network.system().is_linear
    assert build(lin_scn).network.system().is_linear
    nl, lin = simulate(nl_scn), simulate(lin_scn)
    assert nl.response.method == "nonlinear"
    assert math.isfinite(nl.response.energy_error) and nl.response.energy_error < 1e-6
    amb = nl.ambient_C
    rise_nl = nl.probes["pa.junction"].mean_C - amb
    rise_lin = lin.probes["pa.junction"].mean_C - amb
    assert rise_lin > 5.0
    assert rise_nl > 1.02 * rise_lin
    # the peak suffers more than the mean: the die is hottest during the pulse
    assert (nl.probes["pa.junction"].peak_C - lin.probes["pa.junction"].peak_C
            > nl.probes["pa.junction"].mean_C - lin.probes["pa.junction"].mean_C)
    assert 0.0 < nl.warmup_s < math.inf


def test_nonlinear_scenario_command_line_prints_no_nan(files, capsys):
    """``pulsetherm run`` on the nonlinear scenario: text and JSON outputs carry no NaN
    (project rule: never a silent NaN)."""
    assert main(["run", str(files["true"])]) == 0
    text = capsys.readouterr().out
    assert "pa.junction" in text and "nan" not in text.lower()
    assert main(["run", str(files["true"]), "--json"]) == 0
    raw = capsys.readouterr().out
    assert "nan" not in raw.lower()
    d = json.loads(raw)
    assert d["probes"]["pa.junction"]["peak_C"] > d["probes"]["pa.junction"]["mean_C"]


def test_nonlinear_line_heat_rises_with_copper_temperature():
    """``nonlinear = true`` turns on the copper-loss temperature coefficient of lines
    (resistivity +0.393 %/K, International Annealed Copper Standard; skin-effect loss ∝ √ρ):
    the hot spot runs a little hotter than the linear model, never cooler."""
    from pathlib import Path

    from pulsetherm.network.scenario import loads
    from pulsetherm.network.simulate import simulate

    text = (Path(__file__).resolve().parents[1] / "examples" / "termination_line.toml").read_text()
    assert "[model]" not in text
    lin = simulate(loads(text)).probes["feed.hottest"]
    res = simulate(loads(text + "\n[model]\nnonlinear = true\n"))
    assert res.response.method == "nonlinear"
    hot = res.probes["feed.hottest"]
    assert lin.peak_C < hot.peak_C < lin.peak_C + 0.05 * (lin.peak_C - 50.0)
