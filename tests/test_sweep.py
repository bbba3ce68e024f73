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


def test_a_dead_worker_fails_its_rows_only(scn, tmp_path, monkeypatch):
    """A worker process that dies (killed, out of memory) broke the whole pool and the
    sweep.  Its rows are recorded as failed, the pool starts again for the others and the
    file keeps every row.  Common practice, no source."""
    import importlib
    import os

    sw = importlib.import_module("pulsetherm.network.sweep")
    if sw._start_method({k: os.environ.get(k) for k in sw.ONE_THREAD}) != "fork":
        pytest.skip("the fault is injected into forked workers")
    real = sw.run_row

    def dies(scn_, values, key=None, cache=None):
        if values.get("mount.sink.resistance") == "0.3 K/W" and os.getpid() != parent:
            os._exit(9)
        return real(scn_, values, key, cache)

    parent = os.getpid()
    monkeypatch.setattr(sw, "run_row", dies)
    out = tmp_path / "rows.csv"
    plan = plan_sweep(scn, vary=["mount.sink.resistance=0.1,0.2,0.3,0.4 K/W"])
    res = run_sweep(plan, out=out, workers=2)
    assert len(res.rows) == 4 and res.failed == 1
    bad = [r for r in res.rows if r["error"]]
    assert bad[0]["mount.sink.resistance"] == "0.3 K/W"
    assert bad[0]["error"].startswith("internal error (its worker process ended")
    assert len(list(csv.DictReader(out.read_text().splitlines()))) == 4


def _fork_only():
    import importlib
    import os

    sw = importlib.import_module("pulsetherm.network.sweep")
    if sw._start_method({k: os.environ.get(k) for k in sw.ONE_THREAD}) != "fork":
        pytest.skip("this process works beside forked workers only when it can fork")
    return sw


def test_a_waveform_sweep_on_two_workers_forks_one_and_works_here(scn, monkeypatch):
    """Waveform-only rows on 2 workers: this process (which holds the warm network) and
    one forked worker share the rows, and every row equals the serial one.  Common
    practice, no source."""
    import os

    sw = _fork_only()
    real = sw.run_row

    def tagged(scn_, values, key=None, cache=None):
        row = real(scn_, values, key, cache)
        row["pid"] = os.getpid()
        return row

    monkeypatch.setattr(sw, "run_row", tagged)
    plan = plan_sweep(scn, vary=["waveforms.p.width=50..150 us:40"])
    pooled = run_sweep(plan, workers=2).rows
    pids = {r.pop("pid") for r in pooled}
    assert os.getpid() in pids and len(pids) == 2
    serial = {r["key"]: r for r in run_sweep(plan).rows}
    for r in serial.values():
        r.pop("pid")
    assert {r["key"]: r for r in pooled} == serial


def test_a_dead_worker_beside_this_process_fails_its_row_only(scn, tmp_path, monkeypatch):
    """A forked worker of a waveform-only sweep dies (killed, out of memory) on its first
    row: that row is recorded as failed, every other row runs and the file keeps all of
    them.  Common practice, no source."""
    import os

    sw = _fork_only()
    real = sw.run_row
    plan = plan_sweep(scn, vary=["waveforms.p.width=50..150 us:12"])
    doomed = plan.rows[1]["waveforms.p.width"]    # row 0 runs here first; row 1 is handed out

    def dies(scn_, values, key=None, cache=None):
        if values.get("waveforms.p.width") == doomed and os.getpid() != parent:
            os._exit(9)
        return real(scn_, values, key, cache)

    parent = os.getpid()
    monkeypatch.setattr(sw, "run_row", dies)
    out = tmp_path / "rows.csv"
    res = run_sweep(plan, out=out, workers=2)
    assert len(res.rows) == 12 and res.failed == 1
    bad = [r for r in res.rows if r["error"]]
    assert bad[0]["waveforms.p.width"] == doomed
    assert bad[0]["error"].startswith("internal error (its worker process ended")
    assert len(list(csv.DictReader(out.read_text().splitlines()))) == 12


@pytest.mark.parametrize("rows, workers", [(0, 2), (1, 2), (7, 1), (399, 2), (5000, 2),
                                           (1000, 8)])
def test_tasks_shrink_to_single_rows_at_the_end(rows, workers):
    """Guided self-scheduling (Polychronopoulos and Kuck, IEEE Trans. Computers C-36(12),
    1987, with 8·workers in place of the workers): every row once, in order; each task
    ⌈remaining/(8·workers)⌉ rows, 1 to 32; so the last 8·workers rows go one at a time."""
    from pulsetherm.network.sweep import guided_chunks

    todo = list(range(rows))
    tasks = list(guided_chunks(todo, workers))
    assert [r for t in tasks for r in t] == todo
    left = rows
    for t in tasks:
        assert len(t) == max(1, min(32, -(-left // (8 * workers))))
        left -= len(t)
    sizes = [len(t) for t in tasks]
    assert sizes == sorted(sizes, reverse=True)
    assert sizes[-min(rows, 8 * workers):] == [1] * min(rows, 8 * workers)


def test_a_failed_write_of_a_forked_workers_row_is_not_taken_for_its_death(scn, tmp_path,
                                                                         monkeypatch):
    """Writing a row that a forked worker sent fails (disk full): the error reaches the
    caller, as it does for a row run here, instead of being taken for the worker's death
    (its rows run again, the write error lost).  Common practice, no source."""
    import os

    sw = _fork_only()
    real_row, real_write = sw.run_row, sw._RowWriter.write
    parent = os.getpid()

    def tagged(scn_, values, key=None, cache=None):
        row = real_row(scn_, values, key, cache)
        row["pid"] = os.getpid()
        return row

    def full(self, row):
        if row.get("pid") != parent:
            raise OSError(28, "No space left on device")
        return real_write(self, row)

    monkeypatch.setattr(sw, "run_row", tagged)
    monkeypatch.setattr(sw._RowWriter, "write", full)
    plan = plan_sweep(scn, vary=["waveforms.p.width=50..150 us:12"])
    with pytest.raises(OSError, match="No space left"):
        run_sweep(plan, out=tmp_path / "rows.csv", workers=2)

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


def test_resume_refuses_rows_of_an_edited_scenario(scn, tmp_path):
    """Rows were keyed by the varied values only: after an edit of the base scenario,
    --resume skipped every row and kept the old figures; then the edited rows were appended
    to the old ones in one file.  Resuming onto another sweep's file is refused, the file
    untouched.  Common practice, no source."""
    out = tmp_path / "rows.csv"
    plan = plan_sweep(scn, vary=["mount.sink.resistance=0.2 K/W,0.3 K/W"])
    run_sweep(plan, out=out)
    assert run_sweep(plan, out=out, resume=True).skipped == 2
    before = out.read_bytes()
    edited = plan_sweep(scn.with_value("coolant", "60 degC"),
                        vary=["mount.sink.resistance=0.2 K/W,0.3 K/W"])
    with pytest.raises(ValueError, match="another scenario, envelope file or seed"):
        run_sweep(edited, out=out, resume=True)
    assert out.read_bytes() == before
    # a new file for the edited scenario gives its own figures
    again = run_sweep(edited, out=tmp_path / "edited.csv")
    single = simulate(scn.with_value("coolant", "60 degC")
                      .with_value("mount.sink.resistance", "0.2 K/W"))
    assert again.rows[0]["pa.junction.peak_C"] == single.probes["pa.junction"].peak_C


# -- provenance: the fingerprint of scenario, envelope files and seed ---------------------
ENV_TOML = TEXT.replace('''[waveforms.p]
kind = "pulses"
peak = "40 W"
width = "100 us"
period = "1 ms"''', '''[waveforms.p]
kind = "table"
file = "env.csv"
interp = "step"
periodic = true
period = "1 ms"''')


def _envelope_case(folder, peak="40"):
    folder.mkdir(exist_ok=True)
    (folder / "env.csv").write_text(f"time_us,power_W\n0,{peak}\n100,0\n1000,0\n")
    (folder / "s.toml").write_text(ENV_TOML)
    return folder / "s.toml"


def test_resume_refuses_another_seed_or_envelope(tmp_path, capsys):
    """--resume onto a file made with another seed or another content of the CSV envelope
    (same scenario text) mixed rows silently; refused with exit 2, one line naming the
    file.  Common practice, no source."""
    f = _envelope_case(tmp_path / "case")
    out = tmp_path / "rows.jsonl"
    args = ["sweep", str(f), "--no-progress", "--mc", "mount.sink.resistance=normal:0.02 K/W",
            "--samples", "3", "--out", str(out)]
    assert main(args + ["--seed", "1"]) == 0
    assert main(args + ["--seed", "1", "--resume"]) == 0
    capsys.readouterr()
    before = out.read_bytes()
    assert main(args + ["--seed", "2", "--resume"]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and str(out) in err and "seed" in err
    (tmp_path / "case" / "env.csv").write_text("time_us,power_W\n0,50\n100,0\n1000,0\n")
    assert main(args + ["--seed", "1", "--resume"]) == 2
    assert str(out) in capsys.readouterr().err
    assert out.read_bytes() == before


def test_dask_ships_the_envelope_from_another_working_folder(tmp_path, monkeypatch):
    """A Dask worker read a table CSV relative to its own working folder, not the
    scenario's: from another folder that holds a different env.csv the rows silently used
    it.  The envelope travels with the task.  Reference: the serial rows (common practice,
    no source)."""
    distributed = pytest.importorskip("dask.distributed")
    from pulsetherm.network.scenario import load

    f = _envelope_case(tmp_path / "case", peak="40")
    elsewhere = tmp_path / "elsewhere"
    _envelope_case(elsewhere, peak="400")  # a decoy with ten times the power
    plan = plan_sweep(load(f), vary=["mount.sink.resistance=0.1..0.3 K/W:3"])
    serial = {r["key"]: r for r in run_sweep(plan).rows}
    assert all(not r["error"] for r in serial.values())
    monkeypatch.chdir(elsewhere)
    with distributed.LocalCluster(processes=False, n_workers=1, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        res = run_sweep(plan, scheduler=cluster.scheduler_address)
    assert {r["key"]: r for r in res.rows} == serial


# -- paired axes ----------------------------------------------------------------------
def test_zip_steps_paths_together(scn):
    """--zip pairs values row by row (3 rows, not 9) and combines with a --vary axis as one
    more grid axis; each row equals the single run of its values.  Common practice, no
    source."""
    plan = plan_sweep(scn, vary=["coolant=20 degC,40 degC"],
                      paired=["mount.sink.resistance=0.1,0.2,0.3 K/W",
                              "waveforms.p.peak=10 W,20 W,30 W"])
    assert plan.size == 6
    pairs = {(r["mount.sink.resistance"], r["waveforms.p.peak"]) for r in plan.rows}
    assert pairs == {("0.1 K/W", "10 W"), ("0.2 K/W", "20 W"), ("0.3 K/W", "30 W")}
    one = plan_sweep(scn, paired=["mount.sink.resistance=0.1,0.2,0.3 K/W; "
                                  "waveforms.p.peak=10 W,20 W,30 W"])
    assert one.rows == [{k: v for k, v in r.items() if k != "coolant"}
                        for r in plan.rows[:3]]
    res = run_sweep(plan)
    for row in res.rows:
        single = simulate(scn.with_value("coolant", row["coolant"])
                          .with_value("mount.sink.resistance", row["mount.sink.resistance"])
                          .with_value("waveforms.p.peak", row["waveforms.p.peak"]))
        assert row["pa.junction.peak_C"] == pytest.approx(
            single.probes["pa.junction"].peak_C, rel=1e-12, abs=1e-12)


def test_zip_of_unequal_lengths_names_every_axis(scn, tmp_path, capsys):
    """Common practice, no source."""
    with pytest.raises(ValueError) as exc:
        plan_sweep(scn, paired=["mount.sink.resistance=0.1,0.2,0.3 K/W",
                                "waveforms.p.peak=10 W,20 W"])
    msg = str(exc.value)
    assert "--zip" in msg and "mount.sink.resistance has 3" in msg \
        and "waveforms.p.peak has 2" in msg
    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    assert main(["sweep", str(f), "--no-progress", "--zip", "coolant=20 degC,30 degC",
                 "--zip", "waveforms.p.peak=10 W"]) == 2
    err = capsys.readouterr().err
    assert "coolant has 2" in err and "Traceback" not in err


# -- failed rows and exit status ------------------------------------------------------
def test_failed_rows_exit_1_and_keep_the_others(tmp_path, capsys):
    """A sweep whose rows failed exited 0.  Now: exit 1, the count on stderr, every row in
    the file (failed ones with their one-line error).  Common practice, no source."""
    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    out = tmp_path / "rows.csv"
    code = main(["sweep", str(f), "--no-progress", "--out", str(out),
                 "--vary", "waveforms.p.width=100 us,2 ms,5 ms"])
    err = capsys.readouterr().err
    assert code == 1 and "2 of 3 rows failed" in err and str(out) in err
    rows = list(csv.DictReader(out.read_text().splitlines()))
    assert len(rows) == 3
    assert rows[0]["error"] == "" and float(rows[0]["pa.junction.peak_C"]) > 30
    assert all("width" in r["error"] and "\n" not in r["error"] for r in rows[1:])
    code = main(["sweep", str(f), "--no-progress", "--vary", "waveforms.p.width=2 ms,3 ms"])
    assert code == 1 and "2 of 2 rows failed" in capsys.readouterr().err


def test_a_value_the_scenario_refuses_fails_its_rows_only(scn):
    """A varied value the scenario refuses (a sink resistance of 0, a material not in the
    library) stopped the whole sweep before any row ran; its rows fail with the message
    naming the key and the value, the others run.  Common practice, no source."""
    res = run_sweep(plan_sweep(scn, vary=["mount.sink.resistance=0 K/W,0.2 K/W",
                                          "coolant=20 degC,30 degC"]))
    assert res.failed == 2 and len(res.rows) == 4
    d = res.to_dict()
    assert d["failed"] == 2 and d["internal"] == 0 and d["sweep"] == res.rows[0]["sweep"]
    for row in res.rows:
        bad = row["mount.sink.resistance"] == "0 K/W"
        assert bool(row["error"]) == bad
        if bad:
            assert "mount.sink.resistance = '0 K/W'" in row["error"]


def test_an_internal_error_in_a_row_fails_that_row_only(scn, tmp_path, monkeypatch, capsys):
    """An unexpected exception (a bug) in one row used to end the sweep; it is recorded as
    a failed row asking for a report, the other rows run and the file keeps them; the
    command exits 3 (internal error).  Common practice, no source."""
    import importlib

    sim = importlib.import_module("pulsetherm.network.simulate")
    real = sim.probe_figures            # what a row calls

    def flaky(s):
        model = s.scenario if hasattr(s, "scenario") else s
        if model.get_value("mount.sink.resistance") == "0.2 K/W":
            raise TypeError("boom")
        return real(s)

    monkeypatch.setattr(sim, "probe_figures", flaky)
    out = tmp_path / "rows.csv"
    res = run_sweep(plan_sweep(scn, vary=["mount.sink.resistance=0.1,0.2,0.3 K/W"]), out=out)
    assert res.failed == 1 and res.internal == 1
    assert res.rows[1]["error"].startswith("internal error (TypeError: boom)")
    assert not res.rows[0]["error"] and not res.rows[2]["error"]
    assert len(list(csv.DictReader(out.read_text().splitlines()))) == 3
    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    code = main(["sweep", str(f), "--no-progress", "--vary",
                 "mount.sink.resistance=0.1,0.2 K/W"])
    err = capsys.readouterr().err
    assert code == 3 and "1 of 2 rows failed" in err and "bug" in err


# -- caps -----------------------------------------------------------------------------
def test_sweep_sizes_are_capped_before_anything_is_made(scn, tmp_path, capsys, monkeypatch):
    """A sweep of 10^9 rows ran out of memory.  The count is checked before a value or a row
    is made, with the cap in the message.  Common practice, no source."""
    import pulsetherm.network.units as units
    from pulsetherm.network.sweep import MAX_ROWS

    def never(*a, **k):
        raise AssertionError("values made before the count was checked")

    monkeypatch.setattr(units, "parse_range", never)
    with pytest.raises(ValueError, match=f"at most {MAX_ROWS} rows"):
        plan_sweep(scn, vary=["mount.sink.resistance=0.1..0.5 K/W:1000000000"])
    with pytest.raises(ValueError, match=f"at most {MAX_ROWS} rows"):
        plan_sweep(scn, vary=["mount.sink.resistance=0.1..0.5 K/W:" + "9" * 2000])
    monkeypatch.undo()
    with pytest.raises(ValueError, match=f"at most {MAX_ROWS} rows"):
        plan_sweep(scn, mc=["mount.sink.resistance=normal:1%"], samples=10 ** 9)
    with pytest.raises(ValueError, match=r"400 x 400 x 400.*at most"):
        plan_sweep(scn, vary=["mount.sink.resistance=0.1..0.5 K/W:400",
                              "waveforms.p.peak=1..100 W:400", "coolant=0..100 degC:400"])
    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    assert main(["sweep", str(f), "--no-progress", "--mc", "coolant=normal:1 K",
                 "--samples", "1000000000"]) == 2
    assert f"{MAX_ROWS}" in capsys.readouterr().err


def test_workers_are_capped_at_the_cpu_count(scn, tmp_path, capsys):
    """--workers 10000 started ten thousand processes.  Capped at the CPUs of the machine
    (a cluster takes --scheduler).  Common practice, no source."""
    from pulsetherm.network.sweep import cpu_cap

    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    cap = cpu_cap()
    assert main(["sweep", str(f), "--no-progress", "--vary", "coolant=20 degC,30 degC",
                 "--workers", str(cap + 1)]) == 2
    err = capsys.readouterr().err
    assert f"from 1 to {cap}" in err and len(err.strip().splitlines()) == 1
    with pytest.raises(ValueError, match=f"from 1 to {cap}"):
        run_sweep(plan_sweep(scn, vary=["coolant=20 degC,30 degC"]), workers=cap + 1)


def test_out_must_be_a_regular_file(scn, tmp_path):
    """--out onto a FIFO or a device is refused; a symbolic link to a regular file is
    followed (the rows go to its target, the link stays).  Common practice, no source."""
    import os

    plan = plan_sweep(scn, vary=["coolant=20 degC,30 degC"])
    target = tmp_path / "real.csv"
    run_sweep(plan, out=target)
    link = tmp_path / "link.csv"
    link.symlink_to(target)
    assert run_sweep(plan, out=link, resume=True).skipped == 2
    assert link.is_symlink()
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    with pytest.raises(ValueError, match="FIFO"):
        run_sweep(plan, out=fifo, resume=True)
    bad = tmp_path / "bad.csv"
    bad.symlink_to(fifo)
    with pytest.raises(ValueError, match="FIFO"):
        run_sweep(plan, out=bad)


# -- reuse of the built network ---------------------------------------------------------
def _line_scenario():
    """The termination example (a line, its heater) with a device on the same board."""
    from pathlib import Path

    text = (Path(__file__).resolve().parents[1] / "examples" / "termination_line.toml"
            ).read_text()
    text += ('\n[[devices]]\nname = "pa"\npower = "rf"\nfootprint = ["1 mm", "1 mm"]\n'
             'position = ["-8 mm", "0 mm"]\nlimit = "200 degC"\n[[devices.stack]]\n'
             'name = "die"\nmaterial = "sic-4h"\nthickness = "100 um"\n'
             'size = ["1.2 mm", "1.2 mm"]\n')
    return loads(text).with_value("lines[0].segments", 6)


@pytest.mark.parametrize("axes", [
    ["waveforms.rf.peak=5 W,15 W", "waveforms.load.peak=4 W,9 W"],
    ["waveforms.rf.width=50 us,20 us,50 us"],  # the device's shortest feature: rebuilt
    pytest.param(["waveforms.rf.period=1 ms,2 ms", "board.layers[1].thickness=0.5 mm,0.8 mm"],
                 marks=pytest.mark.slow),
])
def test_rows_reusing_a_built_network_equal_single_runs(axes):
    """Rows whose axes change only waveforms reuse the network (and its eigendecomposition)
    built for an earlier row; each equals a single run of its scenario to 1e-12, for a
    device, a line (its RF power turned into heat) and a line heater.  Common practice, no
    source; the reference is the single run."""
    from pulsetherm.network.sweepcache import ModelCache

    scn = _line_scenario()
    plan = plan_sweep(scn, vary=axes)
    cache = ModelCache()
    from pulsetherm.network.sweep import run_row

    rows = [run_row(scn, values, plan.key(values), cache) for values in plan.rows]
    assert cache.hits >= 1
    for row in rows:
        assert not row["error"], row["error"]
        s = scn
        for p in plan.paths:
            s = s.with_value(p, row[p])
        single = simulate(s)
        for name, p in single.probes.items():
            for what in ("peak_C", "mean_C"):
                assert row[f"{name}.{what}"] == pytest.approx(getattr(p, what), rel=1e-12,
                                                              abs=1e-12), (name, what)



def test_pulse_widths_within_one_grading_step_share_one_network():
    """The ladder is graded for the shortest waveform feature rounded down onto four steps
    a decade (simulate.waveform_t_min), so a pulse-width axis inside one step builds one
    network; every row still equals a single run of its scenario, and the rounded time is
    never above the shortest feature nor more than one step below it.  Common practice,
    no source; the reference is the single run."""
    from pulsetherm.network.simulate import _shortest_feature, _waveforms, waveform_t_min
    from pulsetherm.network.sweep import run_row
    from pulsetherm.network.sweepcache import ModelCache

    scn = _line_scenario()
    plan = plan_sweep(scn, vary=["waveforms.rf.width=60 us,70 us,85 us,99 us"])
    cache = ModelCache()
    rows = [run_row(scn, values, plan.key(values), cache) for values in plan.rows]
    assert (cache.misses, cache.hits) == (1, 3)
    for row in rows:
        s = scn.with_value("waveforms.rf.width", row["waveforms.rf.width"])
        waves = _waveforms(s)
        shortest = _shortest_feature(waves[d.name] for d in s.devices)
        t = waveform_t_min(s, waves)
        assert shortest / 10 ** 0.25 < t <= shortest
        single = simulate(s)
        for name, p in single.probes.items():
            assert row[f"{name}.peak_C"] == pytest.approx(p.peak_C, rel=1e-12, abs=1e-12)


@pytest.mark.parametrize("values", [
    {"waveforms.p.peak": "90 W"},
    {"waveforms.p.width": "50 us", "waveforms.p.peak": "10 W"},
    {"waveforms.p.delay": "100 us"},
    {"waveforms.p.kind": "constant"},
    {"waveforms.p.width": "0 us"},         # refused: same message
    {"waveforms.p.pek": "5 W"},            # unknown key: same message
    {"waveforms.p.period": "50 us"},       # width > period: refused by the scenario checks
    {"waveforms.p.width": "wide"},         # not a quantity: the loader's message
    {"waveforms.p.peak": "-5 W"},          # out of range: the loader's message
    {"waveforms.p.width": "60 us", "waveforms.p.period": "2 ms", "waveforms.p.rise": "1 us"},
    {"waveforms.p.peak": "2 W", "coolant": "20 degC"},  # not waveform-only: the long way
])
def test_a_row_of_waveform_keys_is_the_scenario_with_value_gives(scn, values):
    """Rows that set only keys of named waveforms reload just those tables; the scenario (or
    the error message) is the one Scenario.with_value gives.  Common practice, no source."""
    from pulsetherm.network.sweep import with_values

    def slow():
        s = scn
        for p, v in values.items():
            s = s.with_value(p, v)
        return s

    try:
        want, err = slow(), None
    except ValueError as exc:
        want, err = None, str(exc)
    if err is None:
        got = with_values(scn, values)
        assert got == want and got.source == want.source
    else:
        with pytest.raises(ValueError) as exc:
            with_values(scn, values)
        assert str(exc.value) == err


def test_a_search_range_with_a_count_names_the_option(tmp_path, capsys):
    """`size --range '1..200 W:5'` ended in "too many values to unpack".  A search range
    takes no ':N'; the message names the option and the range.  Common practice, no
    source."""
    f = tmp_path / "s.toml"
    f.write_text(TEXT)
    assert main(["size", str(f), "--adjust", "waveforms.p.peak", "--range", "1..200 W:5"]) == 2
    err = capsys.readouterr().err
    assert "--range = '1..200 W:5'" in err and "without ':N'" in err and "unpack" not in err


def test_drive_level_rows_equal_single_runs_serial_and_in_workers(scn):
    """A drive-level axis: the rows after the first reuse a periodic response scaled by
    linearity (network/rescale.py), in this process and in two workers (which start from
    the parent's built network); each equals a single run of its value to 1e-9 K
    (rounding; superposition, Carslaw and Jaeger 1959)."""
    plan = plan_sweep(scn, vary=["waveforms.p.peak=10..80 W:8"])
    serial = {r["key"]: r for r in run_sweep(plan).rows}
    pooled = {r["key"]: r for r in run_sweep(plan, workers=2).rows}
    assert serial.keys() == pooled.keys() and len(serial) == 8
    for key, row in serial.items():
        single = simulate(scn.with_value("waveforms.p.peak", row["waveforms.p.peak"]))
        for got in (row, pooled[key]):
            assert not got["error"]
            for f in ("peak_C", "mean_C"):
                want = getattr(single.probes["pa.junction"], f)
                assert abs(got[f"pa.junction.{f}"] - want) <= 1e-9, (key, f)

