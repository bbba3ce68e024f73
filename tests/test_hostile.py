"""Hostile input (issue 10): the corpus in tests/hostile/ (regenerate with
``python -P tests/hostile/make_corpus.py``) and the file, output and exit-status rules that
need a live file system.  Every refusal: exit status 2, one line on stderr naming the key,
no traceback, no escape code echoed, nothing written.  Common practice, no source.
"""
from __future__ import annotations

import json
import os
import signal
import stat
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from pulsetherm.tui.cli import main

HOSTILE = Path(__file__).resolve().parent / "hostile"
FILES = sorted(HOSTILE.glob("*.toml"))
EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
GOOD = (HOSTILE / "peak_00.toml").read_text().split("\n", 1)[1].replace('"5000 dBm"',
                                                                         '"50 W"')


def _meta(path: Path) -> tuple[str, list[str]]:
    expect, args = "", []
    for line in path.read_text(encoding="utf-8-sig", errors="replace").splitlines()[:3]:
        if line.startswith("# expect: "):
            expect = line[len("# expect: "):]
        elif line.startswith("# args: "):
            args = json.loads(line[len("# args: "):])
    return expect, args


class _Hang(BaseException):
    pass


def _run(argv: list[str]) -> int:
    """``main(argv)`` with a hang guard (a refusal must never wait on its input)."""
    def alarm(signum, frame):
        raise _Hang(f"no answer: {argv[:2]}")

    old = signal.signal(signal.SIGALRM, alarm)
    signal.alarm(60)
    try:
        return main(argv)
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)


def _refused(cap, expect: str) -> None:
    err = cap.err
    assert "Traceback" not in err + cap.out
    assert len(err.strip().splitlines()) == 1, err
    assert "\x1b" not in err and "\x00" not in err, repr(err)
    assert expect in err, err


def test_the_corpus_covers_each_class():
    assert len(FILES) >= 100
    names = {f.stem.rsplit("_", 1)[0] for f in FILES}
    for cls in ("peak", "thickness", "plausible", "table_path", "table_csv"):
        assert cls in names


@pytest.mark.parametrize("path", FILES, ids=[f.stem for f in FILES])
def test_hostile_file_exits_2_in_one_line(path, tmp_path, capsys):
    expect, args = _meta(path)
    out = tmp_path / "out.csv"
    argv = [str(path) if a == "FILE" else a for a in args] or ["run", str(path)]
    if argv[0] in ("run", "zth"):
        argv += ["--csv", str(out)]
    before = sorted(p.name for p in HOSTILE.rglob("*"))
    code = _run(argv)
    cap = capsys.readouterr()
    assert code == 2, cap.out + cap.err
    _refused(cap, expect)
    assert list(tmp_path.iterdir()) == []
    assert sorted(p.name for p in HOSTILE.rglob("*")) == before


@pytest.mark.parametrize("name", ["peak_00", "deep_toml_arrays", "table_path_01",
                                  "escape_in_unknown_key", "set_quoted_number"])
def test_a_sample_in_a_fresh_interpreter(name, tmp_path):
    """The same refusals from a separate process (the way a user meets them)."""
    path = HOSTILE / f"{name}.toml"
    expect, args = _meta(path)
    argv = [str(path) if a == "FILE" else a for a in args] or ["run", str(path)]
    proc = subprocess.run([sys.executable, "-P", "-c", "import sys; from pulsetherm.tui.cli "
                           "import main; sys.exit(main())", *argv],
                          capture_output=True, text=True, timeout=120, cwd=tmp_path)
    assert proc.returncode == 2, proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1 and "Traceback" not in proc.stderr
    assert expect in proc.stderr
    assert list(tmp_path.iterdir()) == []


# -- inputs that are not regular files --------------------------------------------------
def test_fifo_device_and_folder_as_scenario_are_refused(tmp_path, capsys):
    fifo = tmp_path / "pipe.toml"
    os.mkfifo(fifo)
    for target, what in ((fifo, "FIFO"), (Path("/dev/zero"), "device"), (tmp_path, "directory")):
        assert _run(["run", str(target)]) == 2
        _refused(capsys.readouterr(), what)


def test_oversize_and_non_utf8_scenarios_name_the_file(tmp_path, capsys):
    big = tmp_path / "big.toml"
    big.write_text(GOOD + "#" * 1_100_000)
    assert _run(["run", str(big)]) == 2
    _refused(capsys.readouterr(), "big.toml")
    latin = tmp_path / "latin.toml"
    latin.write_bytes(GOOD.replace("hostile base", "caf\u00e9").encode("latin-1"))
    assert _run(["run", str(latin)]) == 2
    _refused(capsys.readouterr(), "latin.toml' : not UTF-8"[:10])


def test_a_byte_order_mark_is_accepted(tmp_path, capsys):
    f = tmp_path / "bom.toml"
    f.write_bytes(b"\xef\xbb\xbf" + GOOD.encode())
    assert _run(["run", str(f)]) == 0
    cap = capsys.readouterr()
    assert "pa.junction" in cap.out and cap.err == ""


def test_table_link_out_of_the_folder_is_refused_unless_allowed(tmp_path, capsys):
    outside = tmp_path / "outside"
    inside = tmp_path / "scn"
    outside.mkdir()
    inside.mkdir()
    (outside / "env.csv").write_text("time_us,power_W\n0,10\n100,0\n1000,0\n")
    (inside / "env.csv").symlink_to(outside / "env.csv")
    text = (HOSTILE / "table_path_00.toml").read_text().replace("../../../../etc/passwd",
                                                                "env.csv")
    f = inside / "s.toml"
    f.write_text(text)
    assert _run(["run", str(f)]) == 2
    _refused(capsys.readouterr(), "--allow-path")
    assert _run(["run", str(f), "--allow-path", str(outside)]) == 0
    assert "pa.junction" in capsys.readouterr().out


def test_table_row_cap(tmp_path, capsys, monkeypatch):
    from pulsetherm.waveforms import table

    monkeypatch.setattr(table, "MAX_ROWS", 10)
    (tmp_path / "env.csv").write_text("time_us,power_W\n" + "".join(
        f"{i},1\n" for i in range(20)))
    f = tmp_path / "s.toml"
    f.write_text((HOSTILE / "table_path_00.toml").read_text().replace(
        "../../../../etc/passwd", "env.csv"))
    assert _run(["run", str(f)]) == 2
    _refused(capsys.readouterr(), "at most 10 rows")


# -- outputs ------------------------------------------------------------------------------
def _good(tmp_path: Path) -> Path:
    f = tmp_path / "good.toml"
    f.write_text(GOOD)
    return f


def test_outputs_refuse_devices_fifos_and_folders(tmp_path, capsys):
    f = _good(tmp_path)
    fifo = tmp_path / "out.fifo"
    os.mkfifo(fifo)
    for target in ("/dev/null", str(fifo), str(tmp_path)):
        assert _run(["run", str(f), "--csv", target]) == 2
        _refused(capsys.readouterr(), "expected a regular file")
    assert stat.S_ISCHR(os.stat("/dev/null").st_mode)      # the device node is untouched
    assert stat.S_ISFIFO(os.stat(fifo).st_mode)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["good.toml", "out.fifo"]


def test_outputs_follow_links_keep_modes_and_use_the_umask(tmp_path, capsys):
    f = _good(tmp_path)
    old = os.umask(0o027)
    try:
        new = tmp_path / "new.csv"
        assert _run(["run", str(f), "--csv", str(new)]) == 0
        assert stat.S_IMODE(os.stat(new).st_mode) == 0o640       # 0o666 & ~0o027
        real = tmp_path / "real.csv"
        real.write_text("old")
        os.chmod(real, 0o664)
        link = tmp_path / "link.csv"
        link.symlink_to(real)
        assert _run(["run", str(f), "--csv", str(link)]) == 0
        assert link.is_symlink() and real.read_text().startswith("t_s")
        assert stat.S_IMODE(os.stat(real).st_mode) == 0o664      # kept
        dangling = tmp_path / "dangling.csv"
        dangling.symlink_to(tmp_path / "nowhere" / "x.csv")
        capsys.readouterr()
        assert _run(["run", str(f), "--csv", str(dangling)]) == 2
        _refused(capsys.readouterr(), "symbolic link to a missing file")
    finally:
        os.umask(old)


def test_disk_full_names_the_output(tmp_path):
    import errno

    from pulsetherm.network.safe_io import atomic_open

    target = tmp_path / "out.csv"
    with pytest.raises(OSError) as info:
        with atomic_open(target) as fh:
            fh.write("x")
            raise OSError(errno.ENOSPC, "No space left on device")
    assert info.value.filename == str(target)
    assert list(tmp_path.iterdir()) == []


# -- exit statuses -----------------------------------------------------------------------
def test_an_internal_error_exits_3_with_a_request_to_report(tmp_path, capsys, monkeypatch):
    import importlib

    sim = importlib.import_module("pulsetherm.network.simulate")

    def broken(scn):
        return 1 / 0

    monkeypatch.setattr(sim, "simulate", broken)
    f = _good(tmp_path)
    monkeypatch.delenv("PULSETHERM_DEBUG", raising=False)
    assert _run(["run", str(f)]) == 3
    cap = capsys.readouterr()
    assert len(cap.err.strip().splitlines()) == 1 and "Traceback" not in cap.err
    assert "internal error (ZeroDivisionError" in cap.err and "please report" in cap.err
    monkeypatch.setenv("PULSETHERM_DEBUG", "1")
    assert _run(["run", str(f)]) == 3
    assert "Traceback" in capsys.readouterr().err


@pytest.mark.parametrize("raise_it", [
    lambda: np.linalg.solve(np.zeros((2, 2)), np.ones(2)),     # LinAlgError (a ValueError)
    lambda: np.linalg.cholesky(-np.eye(2)),                     # LinAlgError
])
def test_a_library_value_error_is_a_bug_not_the_users_input(tmp_path, capsys, monkeypatch,
                                                             raise_it):
    """A ValueError subclass raised by a library (numpy's LinAlgError: a singular matrix the
    project should never have built) is an internal error, exit 3, not blamed on the input;
    the project's own input errors stay exit 2.  Common practice, no source."""
    import importlib

    sim = importlib.import_module("pulsetherm.network.simulate")
    monkeypatch.setattr(sim, "simulate", lambda scn: raise_it())
    monkeypatch.delenv("PULSETHERM_DEBUG", raising=False)
    f = _good(tmp_path)
    status = _run(["run", str(f)])
    err = capsys.readouterr().err
    assert status == 3 and "internal error (LinAlgError" in err, err


def test_is_input_error_classes():
    """The classification behind exit 2 / exit 3 and a sweep's failed rows."""
    import tomllib

    from pulsetherm.network.safe_io import is_input_error
    from pulsetherm.network.scenario import ScenarioError
    from pulsetherm.network.units import UnitError

    assert is_input_error(ScenarioError("a", "1", "a length"))
    assert is_input_error(UnitError("x"))
    assert is_input_error(OSError(2, "No such file"))
    assert is_input_error(KeyError("probe 'x' is not there"))
    try:
        tomllib.loads("a = ")
    except tomllib.TOMLDecodeError as exc:
        assert is_input_error(exc)
    try:
        float("3 mm")
    except ValueError as exc:   # a plain ValueError counts as input only when raised in
        assert not is_input_error(exc)   # pulsetherm's own code; this file is not
    try:
        np.linalg.inv(np.zeros((2, 2)))
    except np.linalg.LinAlgError as exc:
        assert not is_input_error(exc)
    assert not is_input_error(ZeroDivisionError())
    assert not is_input_error(TypeError("boom"))


def test_every_verb_goes_through_the_guard():
    """A verb added to the command line inherits the exit statuses: main() dispatches every
    handler through tui.exit_status.guarded."""
    import inspect

    from pulsetherm.tui import cli

    assert "guarded(" in inspect.getsource(cli.main)
    assert "--allow-path" in cli.build_parser()._subparsers._group_actions[0].choices[
        "run"].format_help()


# -- issue 9 item 6: units on every quantity ----------------------------------------------
def test_ounces_on_copper_layers_and_percent_duty(tmp_path, capsys):
    """'1 oz' of copper is 35 um (common practice, no source): the same answer both ways,
    on 'copper' and 'pcb-copper' layers; a void fraction of '10 %' equals 0.1."""
    def peak(text):
        f = tmp_path / "s.toml"
        f.write_text(text)
        assert _run(["run", str(f), "--json"]) == 0
        return json.loads(capsys.readouterr().out)["probes"]["pa.junction"]["peak_C"]

    for mat in ("copper", "pcb-copper"):
        base = GOOD.replace('material = "copper"', f'material = "{mat}"')
        a = peak(base.replace('thickness = "1 mm"', 'thickness = "1 oz"'))
        b = peak(base.replace('thickness = "1 mm"', 'thickness = "35 um"'))
        assert a == b
    c = peak(GOOD.replace('thickness = "1 mm"', 'thickness = "1 mm"\nvoid_fraction = "10 %"'))
    d = peak(GOOD.replace('thickness = "1 mm"', 'thickness = "1 mm"\nvoid_fraction = 0.1'))
    assert c == d != peak(GOOD)


# -- results that cannot be physical are refused ------------------------------------------
def test_result_invariants_refuse_impossible_numbers():
    """min <= mean <= peak, finite, above 0 K and at most 5000 K (common practice, no
    source: a time average lies between the extremes)."""
    import numpy as np

    from pulsetherm.network.result import ResultError, check_invariants

    theta = np.array([[300.0, 310.0], [320.0, 330.0]])
    check_invariants(theta, np.array([310.0, 320.0]), ("a", "b"))      # fine
    for mean, t, match in (([330.0, 320.0], theta, "'a': mean"),       # mean above peak
                           ([310.0, 300.0], theta, "'b': mean"),       # below minimum
                           ([310.0, 320.0], theta - 310.0, "at or below 0 K"),
                           ([310.0, 320.0], theta * np.nan, "not a finite number"),
                           ([310.0, 6000.0], theta + [0.0, 5700.0], "above 5000 K")):
        with pytest.raises(ResultError, match=match):
            check_invariants(t, np.array(mean), ("a", "b"))
