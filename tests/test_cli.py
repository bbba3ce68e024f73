"""The command line: instant --help, exit codes, the broken-scenario corpus (status 2, a
short message naming the key, no traceback, no partial output file).  Common practice, no
source."""
from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from pulsetherm.tui.cli import main
from pulsetherm_test_systems import SMALL_PULSED_SCENARIO  # tests/_systems.py, by conftest

ROOT = Path(__file__).resolve().parents[1]
EX = ROOT / "examples"

GOOD = SMALL_PULSED_SCENARIO


def test_help_does_not_import_numpy_or_scipy():
    code = ("import sys\nfrom pulsetherm.tui.cli import main\n"
            "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
            "bad = [m for m in ('numpy', 'scipy', 'matplotlib', 'textual') if m in sys.modules]\n"
            "print(bad)\nsys.exit(1 if bad else 0)\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.returncode == 0, out.stdout + out.stderr
    assert "usage: pulsetherm" in out.stdout


@pytest.mark.parametrize("given", [None, "2"])
def test_the_script_runs_blas_on_one_thread_unless_told(given):
    """The ``pulsetherm`` script (main() on the process's own command line) sets one BLAS
    thread before numpy loads, unless the environment names a count; main() called with
    an argument list (a library call) leaves the environment alone.  Common practice, no
    source."""
    code = ("import os, sys\nfrom pulsetherm.tui.cli import main\n"
            "main(['materials'])\nprint('lib', os.environ.get('OPENBLAS_NUM_THREADS'))\n"
            "sys.argv = ['pulsetherm', 'materials']\nmain()\n"
            "import numpy\nprint('script', os.environ.get('OPENBLAS_NUM_THREADS'))\n")
    env = {k: v for k, v in os.environ.items() if k not in
           ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")}
    if given is not None:
        env["OPENBLAS_NUM_THREADS"] = given
    out = subprocess.run([sys.executable, "-P", "-c", code], capture_output=True, text=True,
                         env=env)
    assert out.returncode == 0, out.stderr
    lines = [ln for ln in out.stdout.splitlines() if ln.startswith(("lib ", "script "))]
    assert lines == [f"lib {given}", f"script {given or '1'}"]


def test_materials_list_and_show(capsys):
    assert main(["materials"]) == 0
    assert "fr4-class" in capsys.readouterr().out
    assert main(["materials", "beryllia"]) == 0
    out = capsys.readouterr().out
    assert "CAUTION" in out and "Table A.2" in out
    assert main(["materials", "berylia"]) == 2
    assert "did you mean 'beryllia'" in capsys.readouterr().err


def test_good_scenario_runs_and_checks(tmp_path, capsys):
    f = tmp_path / "good.toml"
    f.write_text(GOOD)
    assert main(["run", str(f), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert set(d) == {"scenario", "ambient_C", "probes", "warmup_s", "budget", "via_fields",
                      "cautions"}
    p = d["probes"]["pa.junction"]
    assert set(p) == {"peak_C", "mean_C", "min_C", "ripple_K", "limit_C", "margin_K"}
    assert d["cautions"][0].startswith("engineering estimates; verify by measurement")
    assert {"part", "layer", "share", "rise_K"} == set(d["budget"][0])
    assert main(["check", str(f)]) == 0
    capsys.readouterr()
    assert main(["check", str(f), "--set", "devices[0].limit=60 degC"]) == 1
    assert "pa.junction" in capsys.readouterr().out


# name -> (scenario text, key that the message must name)
def _sub(old: str, new: str) -> str:
    assert old in GOOD, old
    return GOOD.replace(old, new, 1)


WAVE = 'kind = "pulses"\npeak = "50 W"\nwidth = "100 us"\nperiod = "1 ms"'

BROKEN: dict[str, tuple[str, str]] = {
    "syntax_unclosed_string": (_sub('name = "good"', 'name = "good'), ".toml:1: TOML syntax"),
    "syntax_missing_value": (_sub('kind = "fixed"', "kind = "), ".toml:11: TOML syntax"),
    "syntax_duplicate_key": (_sub('kind = "fixed"', 'kind = "fixed"\nkind = "fixed"'), ".toml:12: TOML syntax"),
    "syntax_bad_header": (_sub("[mount.sink]", "[mount.sink"), ".toml:10: TOML syntax"),
    "unknown_top_key": (_sub('coolant = "40 degC"', 'coolant = "40 degC"\ncolour = "red"'),
                        "colour"),
    "unknown_device_key": (_sub('limit = "150 degC"', 'limt = "150 degC"'), "devices[0].limt"),
    "unknown_layer_key": (_sub('thickness = "1 mm"', 'thicknes = "1 mm"'),
                          "devices[0].stack[0].thicknes"),
    "unknown_waveform_key": (_sub('width = "100 us"', 'widht = "100 us"'),
                             "waveforms.p.widht"),
    "unknown_sink_kind": (_sub('kind = "fixed"', 'kind = "fixd"'), "mount.sink.kind"),
    "unknown_waveform_kind": (_sub('kind = "pulses"', 'kind = "pulse"'), "waveforms.p.kind"),
    "wrong_unit_length": (_sub('thickness = "1 mm"', 'thickness = "1 W"'),
                          "devices[0].stack[0].thickness"),
    "wrong_unit_time": (_sub('width = "100 us"', 'width = "100 mm"'), "waveforms.p.width"),
    "wrong_unit_power": (_sub('peak = "50 W"', 'peak = "50 K"'), "waveforms.p.peak"),
    "wrong_unit_temperature": (_sub('coolant = "40 degC"', 'coolant = "40 W"'), "coolant"),
    "wrong_unit_resistance": (_sub('"0.2 K/W"', '"0.2 W"'), "devices[0].foster.R[0]"),
    "unknown_unit": (_sub('thickness = "1 mm"', 'thickness = "1 furlong"'),
                     "devices[0].stack[0].thickness"),
    "bare_number": (_sub('thickness = "1 mm"', "thickness = 0.001"),
                    "devices[0].stack[0].thickness"),
    "negative_thickness": (_sub('thickness = "1 mm"', 'thickness = "-1 mm"'),
                           "devices[0].stack[0].thickness"),
    "zero_thickness": (_sub('thickness = "1 mm"', 'thickness = "0 mm"'),
                       "devices[0].stack[0].thickness"),
    "nan_thickness": (_sub('thickness = "1 mm"', 'thickness = "nan mm"'),
                      "devices[0].stack[0].thickness"),
    "negative_peak": (_sub('peak = "50 W"', 'peak = "-50 W"'), "waveforms.p.peak"),
    "zero_period": (_sub('period = "1 ms"', 'period = "0 ms"'), "waveforms.p.period"),
    "width_longer_than_period": (_sub('width = "100 us"', 'width = "2 ms"'),
                                 "waveforms.p"),
    "missing_waveform": (_sub('power = "p"', 'power = "q"'), "devices[0].power"),
    "misspelt_waveform": (_sub('power = "p"', 'power = "pp"'), "devices[0].power"),
    "unknown_material": (_sub('material = "copper"', 'material = "unobtainium"'),
                         "devices[0].stack[0].material"),
    "misspelt_material": (_sub('material = "copper"', 'material = "coper"'),
                          "devices[0].stack[0].material"),
    "footprint_three_values": (_sub('["3 mm", "3 mm"]', '["3 mm", "3 mm", "1 mm"]'),
                               "devices[0].footprint"),
    "missing_footprint": (_sub('footprint = ["3 mm", "3 mm"]\n', ""), "devices[0].footprint"),
    "missing_name": (_sub('name = "good"\n', ""), "name"),
    "missing_sink": (_sub('[mount.sink]\nkind = "fixed"\n', ""), "mount"),
    "no_heat_source": (GOOD.split("[[devices]]")[0], "devices"),
    "tau_length_mismatch": (_sub('tau = ["10 us", "1 ms", "100 ms"]', 'tau = ["10 us"]'),
                            "devices[0].foster.tau"),
    "rth_and_foster": (_sub('limit = "150 degC"', 'limit = "150 degC"\nrth = "1 K/W"'),
                       "devices[0]"),
    "limit_below_absolute_zero": (_sub('limit = "150 degC"', 'limit = "-300 degC"'),
                                  "devices[0].limit"),
    "ambient_and_coolant": (_sub('coolant = "40 degC"', 'coolant = "40 degC"\nambient = "25 degC"'),
                            "ambient"),
    "lumped_sink_without_resistance": (_sub('kind = "fixed"', 'kind = "lumped"'),
                                       "mount.sink.resistance"),
    "fixed_sink_with_h": (_sub('kind = "fixed"', 'kind = "fixed"\nh = "10 W/(m2 K)"'),
                          "mount.sink.h"),
    "duplicate_device_names": (GOOD + GOOD[GOOD.index("[[devices]]"):], "devices[1].name"),
    "name_with_dot": (_sub('name = "pa"', 'name = "p.a"'), "devices[0].name"),
    "duty_above_one": (_sub('period = "1 ms"', "duty = 1.5"), "waveforms.p.duty"),
    "burst_keys_on_pulses": (_sub('period = "1 ms"', 'period = "1 ms"\npulses = 4'),
                             "waveforms.p.pulses"),
    "floating_mass": (GOOD + '\n[[elements]]\nkind = "resistance"\nname = "strap"\n'
                      'between = ["pa.junction", "nowhere"]\nresistance = "1 K/W"\n',
                      "elements[0].between[1]"),
    "unknown_probe_node": (GOOD + '\n[[probes]]\nname = "x"\nnode = "pa.junctoin"\n',
                           "probes[0].node"),
    "heater_on_unknown_line": (GOOD + '\n[[heaters]]\nname = "h"\npower = "1 W"\n'
                               'line = "feed"\nposition = "1 mm"\n', "heaters[0].line"),
    "mass_without_path": (GOOD + '\n[[elements]]\nkind = "mass"\nname = "m"\nnode = "m2"\n'
                          'capacity = "1 J/K"\nresistance = "1 K/W"\n', "elements[0].node"),
    "string_for_table": (_sub("[mount.sink]\nkind = \"fixed\"", "[mount]\nsink = \"cold\""),
                         "mount.sink"),
    "bool_for_quantity": (_sub('limit = "150 degC"', "limit = true"), "devices[0].limit"),
    # review R1: hostile inputs
    "burst_of_1e8_pulses": (_sub('kind = "pulses"', 'kind = "burst"').replace(
        'period = "1 ms"', 'pri = "1 ms"\npulses = 100000000\nperiod = "1e6 s"'),
        "waveforms.p.pulses = 100000000"),
    "stagger_widths_mismatch": (_sub(WAVE, 'kind = "stagger"\npeak = "5 W"\nintervals = '
                                     '["1 ms", "2 ms"]\nwidths = ["1 us", "2 us", "3 us"]'),
                                "waveforms.p.widths = ['1 us', '2 us', '3 us']"),
    "stagger_pulse_longer_than_interval": (
        _sub(WAVE, 'kind = "stagger"\npeak = "5 W"\nintervals = ["1 ms", "2 ms"]\n'
             'widths = ["1.5 ms"]'), "waveforms.p.intervals = ['1 ms', '2 ms']"),
    "profile_without_stretches": (_sub(WAVE, 'kind = "profile"\nstretches = []'),
                                  "waveforms.p.stretches = []: at least one stretch"),
    "profile_negative_duration": (_sub(WAVE, 'kind = "profile"\nstretches = '
                                       '[{duration = "-1 s", power = "2 W"}]'),
                                  "waveforms.p.stretches[0].duration"),
    "profile_refers_to_itself": (_sub(WAVE, 'kind = "profile"\nstretches = '
                                      '[{duration = "1 s", power = "p"}]'),
                                 "waveforms.p.stretches[0].power"),
    "nan_string_power": (_sub('peak = "50 W"', 'peak = "NaN W"'), "waveforms.p.peak"),
    "inf_string_power": (_sub('peak = "50 W"', 'peak = "inf W"'), "waveforms.p.peak"),
    "overflowing_power": (_sub('peak = "50 W"', 'peak = "1e400 W"'), "waveforms.p.peak"),
    "empty_foster_arrays": (_sub('R = ["0.2 K/W", "0.5 K/W", "1.3 K/W"], tau = ["10 us", '
                                 '"1 ms", "100 ms"]', "R = [], tau = []"),
                            "devices[0].foster.R"),
    "unicode_device_name": (_sub('name = "pa"', 'name = "p\u00e4"'), "devices[0].name"),
    "duplicate_probe_names": (GOOD + '\n[[probes]]\nname = "x"\nnode = "pa.junction"\n'
                              '\n[[probes]]\nname = "x"\nnode = "pa.junction"\n',
                              "probes[1].name"),
    "probe_on_a_boundary": (GOOD + '\n[[probes]]\nname = "x"\nnode = "base"\n',
                            "probes[0].node = 'base'"),
    "period_and_prf": (_sub('period = "1 ms"', 'period = "1 ms"\nprf = "2 kHz"'),
                       "waveforms.p"),
    "probe_shadows_a_junction": (GOOD + '\n[[probes]]\nname = "pa.junction"\n'
                                 'limit = "100 degC"\n', "probes[0].name = 'pa.junction'"),
    "temperatures_overflow": (_sub('peak = "50 W"', 'peak = "1e308 W"'),
                              "waveforms.p.peak = '1e308 W'"),   # plausibility limit
    "line_larger_than_the_board": ((EX / "termination_line.toml").read_text().replace(
        'length = "25 mm"', 'length = "2500 mm"'), "lines[0].length = '2500 mm'"),
    "no_heat_capacity_anywhere": (GOOD.split("[[devices.stack]]")[0].replace(
        'foster = { R = ["0.2 K/W", "0.5 K/W", "1.3 K/W"], tau = ["10 us", "1 ms", "100 ms"] }',
        'rth = "2 K/W"'), "devices: at least one heat capacity"),
    "negative_delay": (_sub('period = "1 ms"', 'period = "1 ms"\ndelay = "-1 ms"'),
                       "waveforms.p.delay"),
}


def test_corpus_is_large_enough():
    assert len(BROKEN) >= 40


@pytest.mark.parametrize("name", sorted(BROKEN))
def test_broken_scenario_exits_2_naming_the_key(name, tmp_path, capsys):
    text, key = BROKEN[name]
    f = tmp_path / f"{name}.toml"
    f.write_text(text)
    csv_out = tmp_path / "out.csv"
    code = main(["run", str(f), "--csv", str(csv_out)])
    cap = capsys.readouterr()
    assert code == 2, cap.out + cap.err
    assert key in cap.err, cap.err
    assert "Traceback" not in cap.err + cap.out
    assert len(cap.err.strip().splitlines()) == 1
    assert not csv_out.exists()
    assert list(tmp_path.iterdir()) == [f]  # no partial or temporary file left


def test_missing_file_and_bad_options(tmp_path, capsys):
    assert main(["run", str(tmp_path / "none.toml")]) == 2
    assert "none.toml" in capsys.readouterr().err
    assert main(["run"]) == 2
    capsys.readouterr()
    f = tmp_path / "good.toml"
    f.write_text(GOOD)
    assert main(["run", str(f), "--plot", str(tmp_path / "x.gif")]) == 2
    assert ".png or .svg" in capsys.readouterr().err
    assert not (tmp_path / "x.gif").exists()
    assert main(["check", str(f), "--margin", "10 W"]) == 2
    assert "--margin" in capsys.readouterr().err
    assert main(["sweep", str(f), "--vary", "devices[0].limt=1,2"]) == 2
    assert "limt" in capsys.readouterr().err


def test_axisymmetric_fidelity_runs_one_die_stack(tmp_path, capsys):
    """The axisymmetric mode's junction probe is the footprint mean, as the ladder's: both
    within 3 % of the exact series for an isoflux circle on a disk over an isothermal base
    (1.9672 K/W here; Yovanovich, Culham & Teertstra 1998, computed by
    spreading.circular_series); its centre probe is hotter (the centre is the hottest
    point of an isoflux source; common practice, no source)."""
    text = """name = "bare die"
coolant = "25 degC"
[model]
fidelity = "axisymmetric"
[mount.sink]
kind = "fixed"
[[devices]]
name = "die"
power = "3 W"
footprint = ["1 mm", "1 mm"]
[[devices.stack]]
material = "silicon"
thickness = "0.5 mm"
size = ["5 mm", "5 mm"]
"""
    f, g = tmp_path / "ax.toml", tmp_path / "lad.toml"
    f.write_text(text)
    g.write_text(text.replace('"axisymmetric"', '"ladder"'))
    assert main(["run", str(f), "--json"]) == 0
    probes = json.loads(capsys.readouterr().out)["probes"]
    ax = probes["die.junction"]["mean_C"] - 25
    assert probes["die.centre"]["mean_C"] - 25 > 1.1 * ax
    assert main(["run", str(g), "--json"]) == 0
    lad = json.loads(capsys.readouterr().out)["probes"]["die.junction"]["mean_C"] - 25
    exact = 3.0 * 1.9672  # W × K/W
    assert ax == pytest.approx(exact, rel=0.03)
    assert lad == pytest.approx(exact, rel=0.03)
    h = tmp_path / "two.toml"
    h.write_text(text + text[text.index("[[devices]]"):].replace('name = "die"', 'name = "d2"'))
    assert main(["run", str(h)]) == 2
    assert "model.fidelity" in capsys.readouterr().err


def test_errors_found_after_loading_carry_the_file_and_line(tmp_path, capsys):
    """Build-time errors (a waveform the waveform classes refuse, a probe on a boundary)
    name the file and the line of their key like load-time ones.  Common practice, no
    source."""
    text, _ = BROKEN["stagger_widths_mismatch"]
    f = tmp_path / "s.toml"
    f.write_text(text)
    assert main(["run", str(f)]) == 2
    line = text.splitlines().index('widths = ["1 us", "2 us", "3 us"]') + 1
    assert f"s.toml:{line}: waveforms.p.widths" in capsys.readouterr().err
    f.write_text(BROKEN["probe_on_a_boundary"][0])
    assert main(["run", str(f)]) == 2
    assert "s.toml:" in capsys.readouterr().err
    f.write_text(GOOD)
    assert main(["zth", str(f), "--probe", "nothing"]) == 2
    assert "error: --probe = 'nothing'" in capsys.readouterr().err


def test_a_negative_margin_is_refused(tmp_path, capsys):
    """'check --margin -200 K' passed a junction 1 K over its limit ('every limit holds',
    exit 0).  Common practice, no source."""
    f = tmp_path / "s.toml"
    f.write_text(GOOD)
    for verb in (["check", str(f), "--set", "devices[0].limit=60 degC"],
                 ["size", str(f), "--adjust", "devices[0].limit", "--range", "60..200 degC"]):
        assert main(verb + ["--margin", "-200 K"]) == 2
        cap = capsys.readouterr()
        assert "--margin = '-200 K': expected a margin >= 0 K" in cap.err and cap.out == ""


#: Command lines for each verb: good ones, --help, and usage errors.
_ARGVS = [
    ["run", "s.toml"], ["run", "s.toml", "--json", "--set", "coolant=30 degC", "--set", "x=1"],
    ["run"], ["run", "s.toml", "--bogus"], ["run", "--help"], ["run", "s.toml", "extra"],
    ["run", "s.toml", "--allow-path", "/tmp"],
    ["zth", "s.toml", "--probe", "pa.junction", "--from", "10 us"], ["zth", "s.toml"],
    ["sweep", "s.toml", "--vary", "coolant=20,30 degC", "--samples", "3"],
    ["sweep", "s.toml", "--samples", "x"], ["sweep", "--help"],
    ["size", "s.toml", "--adjust", "a", "--range", "1..2 K/W"], ["size", "s.toml"],
    ["check", "s.toml", "--margin", "5 K"], ["check", "-h"],
    ["materials"], ["materials", "copper"], ["materials", "a", "b"],
    ["ui"], ["ui", "s.toml"], ["ui", "--help"],
]


def _parse(parser, argv, capsys):
    try:
        out = ("ok", vars(parser.parse_args(argv)))
    except SystemExit as exc:
        out = ("exit", exc.code)
    return out, capsys.readouterr()


@pytest.mark.parametrize("argv", _ARGVS, ids=" ".join)
def test_the_parser_of_one_verb_reads_its_command_lines_as_the_full_one(argv, capsys):
    """main() builds only the sub-parser of the verb the command line starts with; for that
    command line it must parse, print and refuse exactly as the parser of every verb."""
    from pulsetherm.tui.cli import build_parser

    full = _parse(build_parser(), argv, capsys)
    one = _parse(build_parser(argv[0]), argv, capsys)
    assert one == full
    if argv[1:2] in (["--help"], ["-h"]):
        assert full[1].out.startswith(f"usage: pulsetherm {argv[0]} ")


def test_a_verb_parser_knows_only_its_verb(capsys):
    """The comparison above can fail: another verb is unknown to a one-verb parser."""
    from pulsetherm.tui.cli import build_parser

    assert _parse(build_parser("run"), ["check", "s.toml"], capsys)[0] == ("exit", 2)
    assert _parse(build_parser(), ["check", "s.toml"], capsys)[0][0] == "ok"


@pytest.mark.parametrize("verb, paused", [("run", True), ("check", True), ("zth", True),
                                          ("materials", True), ("sweep", False),
                                          ("size", False), ("ui", False)])
def test_the_collector_is_paused_for_one_shot_verbs_only(monkeypatch, verb, paused):
    """The one-scenario verbs run without the cyclic garbage collector (their imports made it
    rescan ~10^5 long-lived objects); the long ones keep it, and every verb restores it."""
    import gc

    from pulsetherm.tui import cli

    seen = []
    monkeypatch.setitem(cli._HANDLERS, verb, lambda args: seen.append(gc.isenabled()) or 0)
    argv = {"run": ["run", "s.toml"], "check": ["check", "s.toml"],
            "zth": ["zth", "s.toml", "--probe", "p"], "materials": ["materials"],
            "sweep": ["sweep", "s.toml"], "size": ["size", "s.toml", "--adjust", "a",
                                                   "--range", "1..2 K/W"], "ui": ["ui"]}[verb]
    assert gc.isenabled()
    assert main(argv) == 0
    assert seen == [not paused] and gc.isenabled()
    gc.disable()                     # a caller that had it off gets it back off
    try:
        assert main(argv) == 0 and not gc.isenabled()
    finally:
        gc.enable()


@pytest.mark.parametrize("call, frozen", [("main()", True), ("main(['materials'])", False),
                                          ("main(['sweep', '--help'])", False)])
def test_only_the_processs_own_one_shot_command_freezes_its_objects(call, frozen):
    """The ``pulsetherm`` script (main() on sys.argv) freezes the objects of a one-shot verb
    before exit; a caller passing its own argv keeps a normal collector."""
    code = ("import gc, sys\nsys.argv = ['pulsetherm', 'materials']\n"
            "from pulsetherm.tui.cli import main\n"
            f"rc = {call}\nprint(gc.get_freeze_count() > 0, gc.isenabled(), rc)\n")
    out = subprocess.run([sys.executable, "-P", "-c", code], capture_output=True, text=True,
                         cwd=ROOT, timeout=120)
    assert out.stdout.split()[-3:] == [str(frozen), "True", "0"], out.stdout + out.stderr
