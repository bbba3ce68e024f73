"""Via field size: the default rule (the footprint of the part above: its lowest sized
stack layer, else its footprint), an area as well as sides, and the field printed by
``run`` (text and --json).  Hand calculations are written beside each check."""
from __future__ import annotations

import json

import pytest

from pulsetherm.network.scenario import loads
from pulsetherm.network.simulate import simulate
from pulsetherm.tui.cli import main

SCN = """name = "flange over vias"
coolant = "40 degC"
[waveforms.cw]
kind = "constant"
power = "100 W"
[board]
size = ["60 mm", "40 mm"]
[[board.layers]]
name = "top"
material = "pcb-copper"
thickness = "35 um"
[[board.layers]]
name = "laminate"
material = "hydrocarbon-ceramic"
thickness = "0.508 mm"
[board.layers.vias]
drill = "0.3 mm"
plating = "25 um"
pitch = "0.6 mm"
fill = "pcb-copper"
{area}
[[board.layers]]
name = "ground"
material = "pcb-copper"
thickness = "35 um"
[mount.sink]
kind = "fixed"
[[devices]]
name = "q1"
power = "cw"
footprint = ["4 mm", "6 mm"]
limit = "200 degC"
[[devices.stack]]
name = "die"
material = "silicon"
thickness = "0.3 mm"
size = ["4 mm", "6 mm"]
[[devices.stack]]
name = "flange"
material = "copper"
thickness = "1.5 mm"
size = ["10 mm", "20 mm"]
"""


def _run(area: str = ""):
    return simulate(loads(SCN.replace("{area}", area)))


def test_default_field_is_the_flange():
    """No ``area``: the field is the flange's 10 × 20 mm (its lowest sized stack layer)."""
    (row,) = _run().to_dict()["via_fields"]
    assert (row["width_m"], row["length_m"]) == pytest.approx((10e-3, 20e-3))
    assert row["area_m2"] == pytest.approx(200e-6) and row["given"] is False
    assert row["layer"] == "board-laminate"


@pytest.mark.parametrize("area", ['area = "200 mm2"', 'area = "2 cm2"',
                                  'area = ["10 mm", "20 mm"]'])
def test_area_or_sides_give_the_same_field(area):
    """200 mm² written as an area or as sides: the same field area and the same junction
    mean within 0.5 % (a square and a 1:2 rectangle of one area; equal-area circles in
    the series)."""
    base = _run().probes["q1.junction"].mean_C
    res = _run(area)
    (row,) = res.to_dict()["via_fields"]
    assert row["area_m2"] == pytest.approx(200e-6) and row["given"] is True
    assert res.probes["q1.junction"].mean_C == pytest.approx(base, rel=5e-3)


def test_a_smaller_field_runs_hotter():
    """Half the area (100 mm²) under the flange: the junction runs hotter (Rayleigh's
    monotonicity law, Doyle & Snell 1984: less via conductance, a higher resistance)."""
    assert _run('area = "100 mm2"').probes["q1.junction"].mean_C \
        > _run().probes["q1.junction"].mean_C + 0.1


def test_run_prints_the_field(tmp_path, capsys):
    f = tmp_path / "v.toml"
    f.write_text(SCN.replace("{area}", ""))
    assert main(["run", str(f)]) == 0
    out = capsys.readouterr().out
    assert "via fields used" in out and "10 x 20" in out and "part footprint" in out
    assert main(["run", str(f), "--json"]) == 0
    rows = json.loads(capsys.readouterr().out)["via_fields"]
    assert rows[0]["area_m2"] == pytest.approx(200e-6)


def test_area_without_unit_is_refused(tmp_path, capsys):
    f = tmp_path / "v.toml"
    f.write_text(SCN.replace("{area}", 'area = "200"'))
    assert main(["run", str(f)]) == 2
    assert "vias.area" in capsys.readouterr().err


def test_ladder_output_states_the_via_field_accuracy():
    """A ladder with a via field says how far such fields read from the r-z mesh (the bands
    measured in tests/test_ladder_vs_rz.py); the r-z mode itself does not, and a board
    without vias does not (common practice, no source: a default that decides the answer
    is said in the output)."""
    from pulsetherm.network.simulate import VIA_FIELD_NOTE

    assert VIA_FIELD_NOTE in _run().to_dict()["cautions"]
    rz = loads(SCN.replace("{area}", "") + '[model]\nfidelity = "axisymmetric"\n')
    assert VIA_FIELD_NOTE not in simulate(rz).to_dict()["cautions"]
    plain = SCN.replace("{area}", "")
    start = plain.index("[board.layers.vias]")
    end = plain.index("[[board.layers]]", start)
    assert VIA_FIELD_NOTE not in simulate(loads(plain[:start] + plain[end:])).to_dict()["cautions"]
