"""Sweeps: grid values and ranges, Monte Carlo percentiles, resume after an interruption,
process workers and a Dask cluster give the same rows as a serial run.  Common practice, no
source; the reference is a single run of the same values."""
from __future__ import annotations

import csv
import json

import pytest

from pulsetherm.network.scenario import loads
from pulsetherm.network.simulate import simulate
from pulsetherm.network.sweep import parse_axis, plan_sweep, row_key, run_sweep
from pulsetherm.tui.cli import main

TEXT = """name = "lumped"
coolant = "30 degC"
[waveforms.p]
kind = "pulses"
peak = "40 W"
width = "100 us"
period = "1 ms"
[mount.sink]
kind = "lumped"
resistance = "0.3 K/W"
capacity = "20 J/K"
[[devices]]
name = "pa"
power = "p"
footprint = ["4 mm", "4 mm"]
limit = "150 degC"
foster = { R = ["0.2 K/W", "0.5 K/W", "1.3 K/W"], tau = ["10 us", "1 ms", "100 ms"] }
"""


@pytest.fixture
def scn():
    return loads(TEXT)


def test_axis_forms(scn):
    assert parse_axis(scn, "mount.sink.resistance=0.1..0.5 K/W:5")[1] == [
        "0.1 K/W", "0.2 K/W", "0.3 K/W", "0.4 K/W", "0.5 K/W"]
    assert parse_axis(scn, "mount.sink.resistance=0.1,0.2 K/W")[1] == ["0.1 K/W", "0.2 K/W"]
    assert parse_axis(scn, "coolant=20 degC,300 K")[1] == ["20 degC", "300 K"]
    with pytest.raises(ValueError, match="resistanse"):
        parse_axis(scn, "mount.sink.resistanse=1,2 K/W")


def test_grid_rows_equal_single_runs(scn):
    res = run_sweep(plan_sweep(scn, vary=["mount.sink.resistance=0.1..0.5 K/W:3",
                                          "waveforms.p.width=50 us,100 us"]))
    assert len(res.rows) == 6 and res.failed == 0
    for row in res.rows[:3]:
        single = simulate(scn.with_value("mount.sink.resistance",
                                         row["mount.sink.resistance"])
                          .with_value("waveforms.p.width", row["waveforms.p.width"]))
        assert row["pa.junction.peak_C"] == single.probes["pa.junction"].peak_C
    # mean rise = P_avg x (sum R_Foster + R_sink), common practice
    r0 = res.rows[0]
    p_avg = 40 * 50e-6 / 1e-3
    assert r0["pa.junction.mean_C"] - 30 == pytest.approx(p_avg * (2.0 + 0.1), rel=1e-9)


def test_monte_carlo_is_seeded_and_reports_percentiles(scn):
    a = run_sweep(plan_sweep(scn, mc=["mount.sink.resistance=normal:0.03 K/W"], samples=30,
                             seed=7))
    b = run_sweep(plan_sweep(scn, mc=["mount.sink.resistance=normal:0.03 K/W"], samples=30,
                             seed=7))
    assert [r["key"] for r in a.rows] == [r["key"] for r in b.rows]
    pc = a.percentiles()["pa.junction"]
    assert pc["p5"] < pc["p50"] < pc["p95"]
    u = plan_sweep(scn, mc=["mount.sink.resistance=uniform:10%"], samples=20, seed=1)
    vals = [float(r["mount.sink.resistance"].split()[0]) for r in u.rows]
    assert all(0.27 <= v <= 0.33 for v in vals)


def test_resume_skips_complete_rows_and_drops_a_partial_line(scn, tmp_path):
    out = tmp_path / "rows.csv"
    plan = plan_sweep(scn, vary=["mount.sink.resistance=0.1..0.4 K/W:4"])
    full = run_sweep(plan, out=out)
    lines = out.read_text().splitlines(keepends=True)
    assert len(lines) == 5
    # simulate an interruption: two complete rows and half of the third
    out.write_text("".join(lines[:3]) + lines[3][:20])
    again = run_sweep(plan, out=out, resume=True)
    assert again.skipped == 2 and len(again.rows) == 2
    rows = list(csv.DictReader(out.read_text().splitlines()))
    assert sorted(r["key"] for r in rows) == sorted(r["key"] for r in full.rows)
    with pytest.raises(ValueError, match="exists"):
        run_sweep(plan, out=out)


def test_jsonl_rows_and_keys(scn, tmp_path):
    out = tmp_path / "rows.jsonl"
    res = run_sweep(plan_sweep(scn, vary=["coolant=20 degC,40 degC"]), out=out)
    recs = [json.loads(x) for x in out.read_text().splitlines()]
    assert [r["key"] for r in recs] == [r["key"] for r in res.rows]
    assert recs[0]["key"] == row_key({"coolant": "20 degC"}, scn)
    assert recs[1]["pa.junction.peak_C"] - recs[0]["pa.junction.peak_C"] == pytest.approx(20)


def test_failed_rows_are_recorded_not_raised(scn):
    res = run_sweep(plan_sweep(scn, vary=["waveforms.p.width=100 us,2 ms"]))
    assert res.failed == 1
    assert "width" in res.rows[1]["error"]


def test_process_workers_match_serial(scn, tmp_path, capsys):
    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    out1, out2 = tmp_path / "a.csv", tmp_path / "b.csv"
    args = ["sweep", str(f), "--vary", "mount.sink.resistance=0.1..0.4 K/W:4", "--no-progress"]
    assert main(args + ["--out", str(out1)]) == 0
    assert main(args + ["--out", str(out2), "--workers", "2"]) == 0
    capsys.readouterr()
    a = {r["key"]: r for r in csv.DictReader(out1.read_text().splitlines())}
    b = {r["key"]: r for r in csv.DictReader(out2.read_text().splitlines())}
    assert a == b


def test_dask_local_cluster_matches_serial(scn):
    distributed = pytest.importorskip("dask.distributed")
    plan = plan_sweep(scn, vary=["mount.sink.resistance=0.1..0.3 K/W:3"])
    serial = {r["key"]: r for r in run_sweep(plan).rows}
    with distributed.LocalCluster(processes=False, n_workers=1, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        res = run_sweep(plan, scheduler=cluster.scheduler_address)
    assert {r["key"]: r for r in res.rows} == serial


def test_sweep_carries_the_material_cautions():
    """Sweeps judge limits, so their output carries the general caution and the cautions of
    the materials in the scenario, also a material brought in by a --vary axis.  Common
    practice, no source."""
    scn = loads(TEXT
                + '\n[[devices.stack]]\nname = "isolator"\nmaterial = "alumina-96"\n'
                  'thickness = "0.5 mm"\n')
    plan = plan_sweep(scn, vary=["devices[0].stack[0].material=alumina-96,beryllia"])
    res = run_sweep(plan)
    assert res.cautions[0].startswith("engineering estimates")
    assert any(c.startswith("Beryllia") for c in res.to_dict()["cautions"])
    res = run_sweep(plan_sweep(scn, vary=["devices[0].stack[0].thickness=0.4 mm,0.5 mm"]))
    assert not any(c.startswith("Beryllia") for c in res.cautions)


def test_a_range_in_the_wrong_unit_names_the_option_and_the_range(scn, tmp_path, capsys):
    """The message showed an internal '0 W' instead of the range the user typed.  Common
    practice, no source."""
    with pytest.raises(ValueError) as exc:
        parse_axis(scn, "devices[0].limit=100..200 W:3")
    msg = str(exc.value)
    assert "'100..200 W:3'" in msg and "'W' is not a temperature unit" in msg
    assert "'0 W'" not in msg
    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    assert main(["size", str(f), "--adjust", "devices[0].limit", "--range", "100..200 W"]) == 2
    err = capsys.readouterr().err
    assert "--range = '100..200 W'" in err and "'0 W'" not in err


def test_varying_a_name_is_refused(scn):
    """Renaming the device renamed its probe, so every row came back 'ok' without a single
    figure.  Common practice, no source."""
    with pytest.raises(ValueError, match=r"--vary = 'devices\[0\]\.name': a value to vary"):
        plan_sweep(scn, vary=["devices[0].name=a,b"])


def test_out_into_a_missing_folder_names_the_option(tmp_path, capsys):
    """Common practice, no source."""
    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    out = tmp_path / "nodir" / "rows.csv"
    assert main(["sweep", str(f), "--no-progress", "--vary",
                 "mount.sink.resistance=0.2 K/W,0.3 K/W", "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "--out = " in err and "does not exist" in err and "Traceback" not in err
    assert not (tmp_path / "nodir").exists()


def test_resume_does_not_reuse_rows_of_an_edited_scenario(scn, tmp_path):
    """Rows were keyed by the varied values only: after an edit of the base scenario,
    --resume skipped every row and kept the old figures.  Common practice, no source."""
    out = tmp_path / "rows.csv"
    plan = plan_sweep(scn, vary=["mount.sink.resistance=0.2 K/W,0.3 K/W"])
    run_sweep(plan, out=out)
    assert run_sweep(plan, out=out, resume=True).skipped == 2
    edited = plan_sweep(scn.with_value("coolant", "60 degC"),
                        vary=["mount.sink.resistance=0.2 K/W,0.3 K/W"])
    again = run_sweep(edited, out=out, resume=True)
    assert again.skipped == 0 and len(again.rows) == 2
    single = simulate(scn.with_value("coolant", "60 degC")
                      .with_value("mount.sink.resistance", "0.2 K/W"))
    assert again.rows[0]["pa.junction.peak_C"] == single.probes["pa.junction"].peak_C
