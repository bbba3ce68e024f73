"""Sizing: the value found keeps every limit when re-run, and a value just beyond it breaks
one; the ends are checked first.  Common practice, no source: the reference is re-running
the scenario.  Closed form check: a data-sheet device on a lumped sink has mean rise
P_avg·(ΣR_i + R_sink) (physics brief §5) and a peak found by the exact periodic solution."""
from __future__ import annotations

import json

import pytest

from pulsetherm.network.scenario import loads
from pulsetherm.network.simulate import simulate
from pulsetherm.network.sizing import SizingError, size
from pulsetherm.tui.cli import main

TEXT = """name = "size me"
coolant = "40 degC"
[waveforms.p]
kind = "pulses"
peak = "50 W"
width = "100 us"
period = "1 ms"
[mount.sink]
kind = "lumped"
resistance = "0.3 K/W"
[[devices]]
name = "pa"
power = "p"
footprint = ["4 mm", "4 mm"]
limit = "150 degC"
foster = { R = ["0.2 K/W", "0.5 K/W", "1.3 K/W"], tau = ["10 us", "1 ms", "100 ms"] }
"""


def _slack(scn, path, text, margin):
    p = simulate(scn.with_value(path, text)).probes["pa.junction"]
    return p.limit_C - p.peak_C - margin


@pytest.mark.parametrize("path, rng, kind", [
    ("mount.sink.resistance", "0.1..40 K/W", "largest"),
    ("coolant", "0..140 degC", "largest"),
    ("waveforms.p.width", "10..900 us", "largest"),
])
def test_value_found_holds_and_beyond_breaks(path, rng, kind):
    scn = loads(TEXT)
    res = size(scn, path, rng, margin=10.0)
    assert res.kind == kind and res.binding_probe == "pa.junction"
    assert _slack(scn, path, res.value_text, 10.0) >= 0
    assert _slack(scn, path, res.beyond_text, 10.0) < 0


def test_sink_resistance_against_the_mean_rise():
    """With the peak ripple removed (duty 100 %: a constant 5 W), the largest sink
    resistance keeping 150 degC with 10 K margin is (100 K / 5 W) - 2 K/W = 18 K/W."""
    scn = loads(TEXT).with_value("waveforms.p", {"kind": "constant", "power": "5 W"})
    res = size(scn, "mount.sink.resistance", "1..40 K/W", margin=10.0)
    assert res.value == pytest.approx(18.0, abs=40 * 1e-4)


def test_whole_range_passes_and_best_end_fails():
    scn = loads(TEXT)
    res = size(scn, "mount.sink.resistance", "0.1..0.2 K/W")
    assert res.whole_range and "whole range" in res.note
    with pytest.raises(SizingError, match="even the better end"):
        size(scn, "mount.sink.resistance", "40..50 K/W")


def test_cli_size(tmp_path, capsys):
    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    assert main(["size", str(f), "--adjust", "mount.sink.resistance", "--range",
                 "0.1..40 K/W", "--margin", "10 K", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["binding_probe"] == "pa.junction" and d["kind"] == "largest"
    assert main(["size", str(f), "--adjust", "mount.sink.resistance", "--range",
                 "40..50 K/W"]) == 2
    err = capsys.readouterr().err
    assert "even the better end" in err and "Traceback" not in err
    assert main(["size", str(f), "--adjust", "name", "--range", "1..2 K/W"]) == 2


def test_sizing_carries_the_material_cautions():
    """A beryllia layer's caution goes with the sizing answer (it only had the general
    caution).  Common practice, no source."""
    scn = loads(TEXT + '\n[[devices.stack]]\nname = "isolator"\nmaterial = "beryllia"\n'
                       'thickness = "0.5 mm"\n')
    res = size(scn, "mount.sink.resistance", "0.1..40 K/W", tol=0.5)
    assert res.cautions[0].startswith("engineering estimates")
    assert any(c.startswith("Beryllia") for c in res.cautions)
    assert any(c.startswith("Beryllia") for c in res.to_dict()["cautions"])


def test_reported_value_is_the_simulated_text():
    """``value`` is the number of ``value_text`` (the value simulated and found to pass), not
    the unrounded bisection midpoint.  Common practice, no source."""
    res = size(loads(TEXT), "mount.sink.resistance", "0.1..40 K/W")
    assert res.value == float(res.value_text.split()[0])
    assert res.history[-1][0] == res.value_text or res.value_text in [h[0] for h in res.history]
