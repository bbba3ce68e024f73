"""Every shipped example runs from the command line; its headline numbers are checked
against independent reasoning:

* mean rise = average power x steady resistance (for a linear network the period mean of
  the periodic steady state equals the steady state under mean power; common practice,
  no source);
* peak >= mean >= minimum;
* a data-sheet device's junction-to-case share equals the Foster sum (sum of R_i: the
  steady resistance of a Foster network, physics brief §6);
* a sweep row equals the single run of the same values.
"""
from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from pulsetherm.network.scenario import load
from pulsetherm.network.simulate import build
from pulsetherm.tui.cli import main

EX = Path(__file__).resolve().parents[1] / "examples"
NAMES = ["xband_gan_coldplate", "burst_fr4_finned", "termination_line", "four_channel_module",
         "stagger_burst_phase"]


def _run(name: str, capsys, *extra: str) -> dict:
    assert main(["run", str(EX / f"{name}.toml"), "--json", *extra]) == 0
    return json.loads(capsys.readouterr().out)


def _mean_power(model, name):
    from pulsetherm.waveforms.canonical import as_piecewise
    return as_piecewise(model.waveforms[name]).mean


def test_examples_are_the_four_documented():
    assert sorted(p.stem for p in EX.glob("*.toml")) == sorted(NAMES)


@pytest.mark.parametrize("name", NAMES)
def test_peak_mean_min_ordered_and_cautions(name, capsys):
    d = _run(name, capsys)
    assert d["probes"]
    for p in d["probes"].values():
        assert p["peak_C"] >= p["mean_C"] - 1e-9 >= p["min_C"] - 2e-9
        assert p["ripple_K"] == pytest.approx(p["peak_C"] - p["min_C"])
        if p["limit_C"] is not None:
            assert p["margin_K"] == pytest.approx(p["limit_C"] - p["peak_C"])
    assert d["cautions"][0].startswith("engineering estimates")
    assert d["warmup_s"] > 0


def test_xband_mean_rise_is_average_power_times_steady_resistance(capsys):
    """Radar pulses 120 W, 100 us at 1 kHz: P_avg = P_pk*tau*PRF = 12 W (Skolnik, Intro.
    to Radar Systems, ch. 1); mean junction rise = 12 W x R_steady (steady solve at 1 W)."""
    d = _run("xband_gan_coldplate", capsys)
    model = build(load(EX / "xband_gan_coldplate.toml"))
    assert _mean_power(model, "pa") == pytest.approx(12.0)
    r = model.built.steady_resistance("pa")
    rise = d["probes"]["pa.junction"]["mean_C"] - d["ambient_C"]
    assert rise == pytest.approx(12.0 * r, rel=1e-6)
    # the budget shares of one part add up to the whole rise
    share = sum(b["share"] for b in d["budget"] if b["part"] == "pa")
    assert share == pytest.approx(1.0, rel=1e-6)
    assert sum(b["rise_K"] for b in d["budget"]) == pytest.approx(rise, rel=1e-6)


def test_burst_mean_and_foster_share(capsys):
    """32 pulses of 12 W x 50 us every 200 ms: P_avg = 32*12*50e-6/0.2 = 0.096 W.  The
    device's own layer (the data-sheet ladder) takes sum(R_i) = 4.0 K/W of it."""
    d = _run("burst_fr4_finned", capsys)
    model = build(load(EX / "burst_fr4_finned.toml"))
    p_avg = 32 * 12 * 50e-6 / 0.2
    assert _mean_power(model, "driver") == pytest.approx(p_avg)
    r = model.built.steady_resistance("driver")
    rise = d["probes"]["driver.junction"]["mean_C"] - d["ambient_C"]
    assert rise == pytest.approx(p_avg * r, rel=1e-6)
    dev = [b for b in d["budget"] if b["layer"] == "device"]
    assert dev and dev[0]["rise_K"] == pytest.approx(p_avg * 4.0, rel=1e-6)


def test_four_channels_share_the_sink(capsys):
    """Four channels of 5 W mean each on a 0.25 K/W sink: the plate sits 4*5*0.25 = 5 K
    above the coolant; each junction adds 5 W x (1.8 K/W Foster + carrier + TIM) and the
    staggered channels are alike."""
    d = _run("four_channel_module", capsys)
    assert d["probes"]["plate"]["mean_C"] == pytest.approx(d["ambient_C"] + 5.0, rel=1e-9)
    peaks = [d["probes"][f"ch{i}.junction"]["peak_C"] for i in range(1, 5)]
    assert max(peaks) - min(peaks) < 1e-6
    dev = [b for b in d["budget"] if b["part"] == "ch1" and b["layer"] == "device"]
    assert dev[0]["rise_K"] == pytest.approx(5.0 * 1.8, rel=1e-6)


def test_termination_line_sweep_of_laminates_matches_single_runs(tmp_path, capsys):
    """Three laminates in one sweep; each row equals the single run with that laminate
    (the ranking, which follows both k and the laminate's loss, is checked in
    tests/test_line_laminate.py)."""
    out = tmp_path / "lam.csv"
    lams = ["ptfe-ceramic", "ptfe-woven-glass", "hydrocarbon-ceramic"]
    assert main(["sweep", str(EX / "termination_line.toml"), "--vary",
                 "board.layers[1].material=" + ",".join(lams), "--out", str(out),
                 "--no-progress"]) == 0
    capsys.readouterr()
    rows = {r["board.layers[1].material"]: r
            for r in csv.DictReader(out.read_text().splitlines())}
    assert set(rows) == set(lams)
    for lam in lams:
        d = _run("termination_line", capsys, "--set", f"board.layers[1].material={lam}")
        assert float(rows[lam]["term.peak_C"]) == pytest.approx(d["probes"]["term"]["peak_C"],
                                                                rel=1e-12)


def test_demo_table_and_outputs(tmp_path, capsys):
    f = EX / "xband_gan_coldplate.toml"
    csv_out, png = tmp_path / "t.csv", tmp_path / "t.png"
    assert main(["run", str(f), "--csv", str(csv_out), "--plot", str(png)]) == 0
    out = capsys.readouterr().out
    assert "pa.junction" in out and "Caution: engineering estimates" in out
    rows = list(csv.reader(csv_out.read_text().splitlines()))
    assert rows[0][0] == "t_s" and len(rows) > 10
    assert png.read_bytes()[:4] == b"\x89PNG"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["t.csv", "t.png"]


def test_stagger_burst_phase_headline(capsys):
    """Dwell of 8 pulses (25 us, 90 W; staggered intervals 180/230/205/260 us twice) every
    10 ms: the pulses start where the intervals put them, the phase spread is phase_tc times
    the spread of the pulse-mean rises (its definition, network/pulse_effects.py), the
    junction runs 8 cycles per dwell (rainflow: one per pulse), and the design keeps the
    0.7 deg pulse-to-pulse limit (check exits 0).  Headline values measured when the
    example was written: phase p-p 0.60 deg, droop -0.20 dB (kept within wide bands: the
    ladder's grading may change)."""
    d = _run("stagger_burst_phase", capsys)
    rf = d["rf"]["pa"]
    assert rf["pulses"] == 8
    starts = [0, 180, 410, 615, 875, 1055, 1285, 1490]
    assert rf["per_pulse"]["t_start_s"] == pytest.approx([t * 1e-6 for t in starts],
                                                         abs=1e-12)
    m = rf["per_pulse"]["rise_mean_K"]
    assert rf["phase_pp_deg"] == pytest.approx(0.08 * (max(m) - min(m)), rel=1e-12)
    assert rf["gain_pp_dB"] == pytest.approx(0.012 * (max(m) - min(m)), rel=1e-12)
    assert 0.45 < rf["phase_pp_deg"] < 0.7 and -0.3 < rf["droop_dB"] < -0.1
    assert m[-1] > m[0]                   # the junction warms along the burst
    junction = d["cycling"]["pa"][0]
    assert junction["cycles_per_period"] == 8.0
    assert junction["cycles_per_hour"] == pytest.approx(8 * 3600 / 10e-3, rel=1e-12)
    assert any("promise no lifetime" in c for c in d["cautions"])
    assert main(["check", str(EX / "stagger_burst_phase.toml")]) == 0
    assert "pa.phase_pp" in capsys.readouterr().out


@pytest.mark.slow
def test_stagger_burst_phase_sizing_holds_the_phase_limit(capsys):
    """Sizing the attach thickness against the 0.7 deg pulse-to-pulse phase limit: at the
    value found the limit holds, just beyond it is broken (re-run)."""
    from pulsetherm.network.sizing import size
    scn = load(EX / "stagger_burst_phase.toml")
    res = size(scn, "devices[0].stack[1].thickness", "10..100 um", tol="1 um")
    assert res.binding_probe == "pa.phase_pp" and res.binding_unit == "deg"
    for text, ok in ((res.value_text, True), (res.beyond_text, False)):
        d = _run("stagger_burst_phase", capsys, "--set",
                 f"devices[0].stack[1].thickness={text}")
        assert (d["rf"]["pa"]["phase_pp_deg"] <= 0.7) is ok


def test_stagger_burst_phase_sizing_range_that_fails_names_the_phase_unit():
    """Both ends of the range break the 0.7 deg phase limit (thicker attach, warmer pulses):
    the refusal states the shortfall in degrees, not in kelvin or degC."""
    from pulsetherm.network.sizing import SizingError, size
    scn = load(EX / "stagger_burst_phase.toml")
    with pytest.raises(SizingError) as err:
        size(scn, "devices[0].stack[1].thickness", "150..200 um")
    msg = str(err.value)
    assert "pa.phase_pp" in msg and " deg" in msg and "degC" not in msg, msg
