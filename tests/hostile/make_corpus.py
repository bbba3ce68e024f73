"""Write the hostile-input corpus: ``python -P tests/hostile/make_corpus.py``.

Every file is a scenario (``*.toml``) that the command line must refuse with exit status 2,
one line on stderr naming the key (or file or option) in its ``# expect:`` comment, no
traceback, nothing written, quickly.  An ``# args:`` comment gives the verb and options
(default ``run FILE --csv OUT``).  The classes follow issue 10: uncaught exception types,
resource exhaustion, impossible physics, files the scenario should not reach, messages
(control characters, encodings), and issue 9 item 6 (quoted numbers without a unit).
Common practice, no source.
"""
from __future__ import annotations

import json
import shlex
from pathlib import Path

HERE = Path(__file__).resolve().parent

def _shared_scenario() -> str:
    """The small valid scenario of tests/_systems.py, named "hostile base" (loaded by path:
    this script runs outside pytest)."""
    import importlib.util

    spec = importlib.util.spec_from_file_location("_systems", HERE.parent / "_systems.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.SMALL_PULSED_SCENARIO.replace('name = "good"', 'name = "hostile base"', 1)


BASE = _shared_scenario()

TABLE = '''name = "hostile table"
coolant = "40 degC"

[waveforms.env]
kind = "table"
file = "FILE"
periodic = true

[mount.sink]
kind = "fixed"

[[devices]]
name = "pa"
power = "env"
footprint = ["3 mm", "3 mm"]
foster = { R = ["0.2 K/W", "1.3 K/W"], tau = ["10 us", "100 ms"] }
'''


def sub(old: str, new: str, base: str = BASE) -> str:
    assert old in base, old
    return base.replace(old, new, 1)


CASES: dict[str, tuple[str, str] | tuple[str, str, str]] = {}


def case(name: str, text: str, expect: str, args: str = "") -> None:
    assert name not in CASES, name
    CASES[name] = (text, expect, args)


TH = 'thickness = "1 mm"'
PK = 'peak = "50 W"'
WD = 'width = "100 us"'
# -- numbers and units: overflow, denormals, linear-time parsing -----------------------
for i, (val, key) in enumerate([
        ('"5000 dBm"', "waveforms.p.peak"), ('"1 kW^200"', "waveforms.p.peak"),
        ('"1e999 W"', "waveforms.p.peak"), ('"1e300 W"', "waveforms.p.peak"),
        ('"-1e300 W"', "waveforms.p.peak"), ('"1e-320 W"', "waveforms.p.peak"),
        ('"inf W"', "waveforms.p.peak"), ('"nan W"', "waveforms.p.peak"),
        ('"50"', "waveforms.p.peak"), ('"50 w"', "waveforms.p.peak"),
        ('"1 W^-99"', "waveforms.p.peak"), ('"1 W^99999999999999999999"', "waveforms.p.peak"),
        ('"' + "9" * 2000 + ' W"', "waveforms.p.peak"), ('"1/0 W"', "waveforms.p.peak"),
        ('"1/' + "0" * 30 + ' W"', "waveforms.p.peak"), ('"0x10 W"', "waveforms.p.peak"),
        ('"--1 W"', "waveforms.p.peak"), ('"1e W"', "waveforms.p.peak"),
        ('"1 W W"', "waveforms.p.peak"), ('"' + "(" * 400 + "W" + ")" * 400 + '"',
                                         "waveforms.p.peak"),
        ('"1 W' + "*W" * 300 + '"', "waveforms.p.peak"), ("1e400", "waveforms.p.peak"),
        ("inf", "waveforms.p.peak"), ("nan", "waveforms.p.peak"),
        (str(10 ** 40), "waveforms.p.peak"), ("true", "waveforms.p.peak"),
        ("[]", "waveforms.p.peak"), ("{}", "waveforms.p.peak"),
        ('"1 \\u001b[31mW"', "waveforms.p.peak"), ('"90 dBW"', "waveforms.p.peak")]):
    case(f"peak_{i:02d}", sub(PK, f"peak = {val}"), key)
for i, (val, key) in enumerate([
        ('"0.76"', "devices[0].stack[0].thickness"),       # issue 9 item 6
        ('"2"', "devices[0].stack[0].thickness"),
        ('"30 mils"', "did you mean 'mil'"),
        ('"1e-320 m"', "devices[0].stack[0].thickness"),
        ('"1e-300 mm"', "devices[0].stack[0].thickness"),
        ('"1e30 m"', "devices[0].stack[0].thickness"),
        ('"5 m"', "devices[0].stack[0].thickness"),
        ('"1 oz/mm"', "devices[0].stack[0].thickness"),
        ('"1 mm' + " " * 3000 + 'x"', "devices[0].stack[0].thickness"),
        ('"' + "1" * 2000 + '\\n"', "devices[0].stack[0].thickness"),
        ('"1 ' + "m" * 3000 + '"', "devices[0].stack[0].thickness"),
        ('"1 \\u202emm"', "devices[0].stack[0].thickness")]):
    case(f"thickness_{i:02d}", sub(TH, f"thickness = {val}"), key)
case("oz_on_a_laminate", sub('material = "copper"\nthickness = "1 mm"',
                             'material = "fr4-class"\nthickness = "1 oz"'),
     "devices[0].stack[0].thickness")
for i, (val, key) in enumerate([
        ('"1e-30 s"', "waveforms.p.width"), ('"1e30 s"', "waveforms.p.width"),
        ('"100"', "waveforms.p.width"), ('"100 mm"', "waveforms.p.width"),
        ('"1e-320 s"', "waveforms.p.width")]):
    case(f"width_{i:02d}", sub(WD, f"width = {val}"), key)
# -- plausibility of inputs ----------------------------------------------------------------
for i, (old, new, key) in enumerate([
        ('coolant = "40 degC"', 'coolant = "-300 degC"', "coolant"),
        ('coolant = "40 degC"', 'coolant = "1e6 degC"', "coolant"),
        ('coolant = "40 degC"', 'coolant = "40"', "coolant"),
        ('limit = "150 degC"', 'limit = "1e300 K"', "devices[0].limit"),
        ('"0.2 K/W"', '"1e300 K/W"', "devices[0].foster.R[0]"),
        ('"0.2 K/W"', '"1e-320 K/W"', "devices[0].foster.R[0]"),
        ('"10 us"', '"1e-300 s"', "devices[0].foster.tau[0]"),
        ('footprint = ["3 mm", "3 mm"]', 'footprint = ["1 nm", "1 nm"]', "devices[0].footprint"),
        ('footprint = ["3 mm", "3 mm"]', 'footprint = ["1e5 m", "3 mm"]', "devices[0].footprint"),
        ('kind = "fixed"', 'kind = "lumped"\nresistance = "1e-300 K/W"', "mount.sink.resistance"),
        ('kind = "fixed"', 'kind = "film"\nh = "1e30 W/m2K"', "mount.sink.h"),
        ('kind = "fixed"', 'kind = "lumped"\nresistance = "1 K/W"\ncapacity = "1e300 J/K"',
         "mount.sink.capacity"),
        ('period = "1 ms"', 'period = "1 ms"\nduty = "150 %"', "waveforms.p"),
        ('period = "1 ms"', 'period = "1 ms"\ndelay = "1e300 s"', "waveforms.p.delay")]):
    case(f"plausible_{i:02d}", sub(old, new), key)
case("material_k_denormal", BASE + '\n[materials.hostile]\nk = 1e-320\nrho = 8000.0\n'
     'c = 400.0\n', "materials")
case("material_k_huge", BASE + '\n[materials.hostile]\nk = 1e300\nrho = 8000.0\nc = 400.0\n',
     "materials")
case("material_rho_nan", BASE + '\n[materials.hostile]\nk = 1.0\nrho = nan\nc = 400.0\n',
     "materials")
case("material_c_zero", BASE + '\n[materials.hostile]\nk = 1.0\nrho = 8000.0\nc = 0.0\n',
     "materials")
# -- resource caps: sizes refused before anything is allocated ---------------------------
case("burst_1e9_pulses", sub('kind = "pulses"\npeak = "50 W"\nwidth = "100 us"\n'
                             'period = "1 ms"', 'kind = "burst"\npeak = "50 W"\n'
                             'width = "1 ns"\npri = "2 ns"\npulses = 1000000000'),
     "waveforms.p.pulses")
case("periods_huge", sub('coolant = "40 degC"', 'coolant = "40 degC"\n[model]\n'
                         'periods = 1000000000'), "model.periods")
case("layers_100", BASE + "".join(f'\n[[devices.stack]]\nname = "l{i}"\nmaterial = "copper"\n'
                                  'thickness = "1 mm"\n' for i in range(100)),
     "devices[0].stack")
case("foster_100_terms", sub('foster = { R = ["0.2 K/W", "0.5 K/W", "1.3 K/W"], tau = '
                             '["10 us", "1 ms", "100 ms"] }',
                             'foster = { R = [' + ", ".join(['"0.01 K/W"'] * 100)
                             + '], tau = [' + ", ".join(['"1 ms"'] * 100) + '] }'),
     "devices[0].foster")
prof = ['name = "profile bomb"', '[mount.sink]', 'kind = "fixed"', '[[devices]]', 'name = "pa"',
        'power = "w0"', 'footprint = "2 mm"', 'foster = { R = ["1 K/W"], tau = ["1 ms"] }']
for i in range(40):
    prof += [f"[waveforms.w{i}]", 'kind = "profile"',
             f'stretches = [{{ duration = "1 ms", power = "w{i + 1}" }}, '
             f'{{ duration = "1 ms", power = "w{i + 1}" }}]']
prof += ["[waveforms.w40]", 'kind = "constant"', 'power = "1 W"']
case("profile_doubling_40_levels", "\n".join(prof) + "\n", "profiles nested")
wide = prof[:8]
for i in range(6):
    wide += [f"[waveforms.w{i}]", 'kind = "profile"', "stretches = [" + ", ".join(
        [f'{{ duration = "1 ms", power = "w{i + 1}" }}'] * 8) + "]"]
wide += ["[waveforms.w6]", 'kind = "constant"', 'power = "1 W"']
case("profile_fanout_8_per_level", "\n".join(wide) + "\n", "stretches once its named")
case("profile_loop", "\n".join(prof[:8] + [
    "[waveforms.w0]", 'kind = "profile"', 'stretches = [{ duration = "1 ms", power = "w1" }]',
    "[waveforms.w1]", 'kind = "profile"', 'stretches = [{ duration = "1 ms", power = "w0" }]'])
     + "\n", "w0")
case("deep_toml_arrays", sub('name = "hostile base"', 'name = "hostile base"\ndeep = '
                             + "[" * 3000 + "]" * 3000), "nested too deeply")
case("deep_inline_tables", sub('name = "hostile base"', 'name = "hostile base"\ndeep = '
                               + "{a = " * 2000 + "1" + "}" * 2000), "nested too deeply")
case("deep_literal_set", BASE, "name", "run FILE --set name=" + "[" * 3000 + "]" * 3000)
case("periods_without_a_simple_ratio", sub('kind = "pulses"\npeak = "50 W"\nwidth = "100 us"\n'
                                          'period = "1 ms"', 'kind = "burst"\npeak = "50 W"\n'
                                          'width = "1 us"\npri = "2 us"\npulses = 50000\n'
                                          'period = "0.1 s"') + '\n[[devices]]\nname = "b"\n'
     'power = { kind = "pulses", peak = "1 W", width = "1 ms", period = "0.1001 s" }\n'
     'footprint = "1 mm"\nfoster = { R = ["1 K/W"], tau = ["1 ms"] }\n', "common period")
case("many_devices", BASE + "".join(
    f'\n[[devices]]\nname = "d{i}"\npower = "1 W"\nfootprint = "1 mm"\nrth = "1 K/W"\n'
    for i in range(300)), "devices")
case("long_name", sub('name = "hostile base"', 'name = "' + "n" * 5000 + '"'), "name")
# -- messages: control characters, encodings ---------------------------------------------
case("escape_in_unknown_key", sub('coolant = "40 degC"', 'coolant = "40 degC"\n'
                                  '"\\u001b[2J\\u001b[31mred" = 1'), "unknown key")
case("escape_in_device_name", sub('name = "pa"', 'name = "pa\\u001b[31m"'), "devices[0].name")
case("escape_in_probe_name", BASE + '\n[[probes]]\nname = "j\\u001b]0;owned\\u0007"\n'
     'node = "pa.junction"\n', "probes[0].name")
case("escape_in_description", sub('coolant = "40 degC"', 'coolant = "40 degC"\n'
                                  'description = "a\\nb\\u001b[2J"'), "description")
case("newline_in_name", sub('name = "hostile base"', 'name = "a\\nb"'), "name")
case("tab_in_scenario_name", sub('name = "hostile base"', 'name = "a\\tb"'), "name")
case("nul_in_name", sub('name = "hostile base"', 'name = "a\\u0000b"'), "name")
case("bidi_in_material", sub('material = "copper"', 'material = "cop\\u202eper"'),
     "devices[0].stack[0].material")
case("bom_then_bad_key", "\ufeff" + sub('limit = "150 degC"', 'limt = "150 degC"'),
     "devices[0].limt")
case("syntax_unclosed", sub('name = "hostile base"', 'name = "hostile'), "TOML syntax")
case("syntax_nul_byte", sub('coolant = "40 degC"', 'coolant = "40 degC"\x00'), "TOML syntax")
# -- table files the scenario should not reach, and hostile CSV --------------------------
for i, (f, expect) in enumerate([
        ("../../../../etc/passwd", "waveforms.env.file"), ("/etc/passwd", "waveforms.env.file"),
        ("/dev/zero", "waveforms.env.file"), ("/proc/self/environ", "waveforms.env.file"),
        (".", "waveforms.env.file"), ("missing.csv", "waveforms.env.file"),
        ("data/../../escape.csv", "waveforms.env.file"), ("~/x.csv", "waveforms.env.file")]):
    case(f"table_path_{i:02d}", TABLE.replace("FILE", f), expect)
for i, (name, expect) in enumerate([
        ("bad_header.csv", "waveforms.env.file"), ("latin1.csv", "waveforms.env.file"),
        ("utf16.csv", "waveforms.env.file"), ("nan_row.csv", "waveforms.env.file"),
        ("one_row.csv", "waveforms.env.file"), ("three_columns.csv", "waveforms.env.file"),
        ("backwards.csv", "waveforms.env.file"), ("negative.csv", "waveforms.env.file"),
        ("huge_dbm.csv", "waveforms.env.file"), ("nul.csv", "waveforms.env.file")]):
    case(f"table_csv_{i:02d}", TABLE.replace("FILE", f"hostile_csv/{name}"), expect)
case("table_single_shot_run", TABLE.replace("FILE", "hostile_csv/good.csv").replace(
    "periodic = true", "periodic = false"), "waveforms.env.periodic")
# -- a line whose strip is narrower than its copper, a solve too long to wait for --------
# the shipped line example (a 50-ohm microstrip feeding a chip termination)
LINE = (HERE.parents[1] / "examples" / "termination_line.toml").read_text(encoding="utf-8")
case("line_laminate_1um", sub('"0.508 mm"', '"1 um"', LINE), "board.layers[1].thickness")
case("line_laminate_1nm", sub('"0.508 mm"', '"1 nm"', LINE), "board.layers[1].thickness")
case("line_width_under_copper", sub('impedance = "50 ohm"', 'width = "10 um"', LINE),
     "lines[0].width")
case("line_long_common_period", sub('peak = "9.5 W"\nwidth = "50 us"\nperiod = "1 ms"',
                                    'peak = "9.5 W"\nwidth = "50 us"\nperiod = "10 s"',
                                    LINE), "waveforms")
# -- command-line options ----------------------------------------------------------------
case("set_quoted_number", BASE, "devices[0].stack[0].thickness",
     "run FILE --set \"devices[0].stack[0].thickness='2'\"")
case("set_escape_path", BASE, "unknown key", "run FILE --set \x1b[2Jx=1")
case("set_bad_path", BASE, "devices[7]", "run FILE --set 'devices[7].limit=100 degC'")
case("margin_overflow", BASE, "--margin", "check FILE --margin '1e999 K'")
case("margin_digits", BASE, "--margin", "check FILE --margin '" + "9" * 2000 + " K'")
case("zth_probe_escape", BASE, "probe", "zth FILE --probe pa\x1b[31m")
case("sweep_digits", BASE, "--vary", "sweep FILE --no-progress --vary "
     "'waveforms.p.peak=1.." + "9" * 2000 + " W:3'")
case("sweep_bad_unit", BASE, "--vary", "sweep FILE --no-progress --vary "
     "'waveforms.p.peak=1..2 kW^200:3'")
case("size_range_overflow", BASE, "--range", "size FILE --adjust waveforms.p.peak "
     "--range '1..1e999 W'")


CSV = {
    "bad_header.csv": b"root:x:0:0:root:/root:/bin/bash,secret\n0,1\n1,2\n",
    "latin1.csv": "# caf\u00e9 \u00b0\ntime_us,power_W\n0,1\n1,2\n".encode("latin-1"),
    "utf16.csv": "time_us,power_W\n0,1\n1,2\n".encode("utf-16"),
    "nan_row.csv": b"time_us,power_W\n0,1\n1,nan\n2,1\n",
    "one_row.csv": b"time_us,power_W\n0,1\n",
    "three_columns.csv": b"time_us,power_W,x_W\n0,1,2\n1,2,3\n",
    "backwards.csv": b"time_us,power_W\n0,1\n2,1\n1,1\n",
    "negative.csv": b"time_us,power_W\n0,1\n1,-5\n",
    "huge_dbm.csv": b"time_us,power_dBm\n0,1\n1,99999\n",
    "nul.csv": b"time_us,power_W\n0,1\x00\n1,2\n",
    "good.csv": b"time_us,power_W\n0,10\n100,0\n1000,0\n",
}


def main() -> None:
    for old in HERE.glob("*.toml"):
        old.unlink()
    for name, (text, expect, args) in sorted(CASES.items()):
        # args as a JSON list: control characters stay escaped in the TOML comment
        head = f"# expect: {expect}\n" + (f"# args: {json.dumps(shlex.split(args))}\n"
                                           if args else "")
        data = head.encode("utf-8") + text.encode("utf-8")
        if text.startswith("\ufeff"):     # the mark must lead the file
            data = "\ufeff".encode("utf-8") + head.encode("utf-8") \
                + text[1:].encode("utf-8")
        (HERE / f"{name}.toml").write_bytes(data)
    folder = HERE / "hostile_csv"
    folder.mkdir(exist_ok=True)
    for name, data in CSV.items():
        (folder / name).write_bytes(data)
    print(f"{len(CASES)} scenario files, {len(CSV)} CSV files in {HERE}")


if __name__ == "__main__":
    main()
