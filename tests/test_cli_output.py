"""Command-line output details: grid sweeps row by row, sizing figures, closed pipes."""
from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from pulsetherm.tui.cli import main
from pulsetherm.tui.report import _short_quantity

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def test_grid_sweep_prints_one_line_per_row(capsys):
    rc = main(["sweep", str(EXAMPLES / "termination_line.toml"), "--no-progress",
               "--vary", "board.layers[1].material=ptfe-ceramic,ptfe-woven-glass"])
    out = capsys.readouterr().out
    assert rc == 0
    lines = [ln for ln in out.splitlines() if ln.startswith(("ptfe-ceramic", "ptfe-woven"))]
    assert len(lines) == 2
    # the poorer conductor runs hotter (common practice, no source)
    peak = {ln.split()[0]: float(ln.split()[1]) for ln in lines}
    assert peak["ptfe-woven-glass"] > peak["ptfe-ceramic"]


def test_sizing_value_is_shown_with_five_digits():
    assert _short_quantity("400.793457 us") == "400.79 us"
    assert _short_quantity("0.1234567 K/W") == "0.12346 K/W"
    assert _short_quantity("n/a") == "n/a"


def test_sized_value_is_rounded_toward_its_passing_side():
    """The printed sized value keeps the limit: a 'largest' value is rounded down, a
    'smallest' one up (to the nearest, 0.1234567 K/W printed as 0.12346 K/W lies beyond the
    value found, on the side that was not checked).  Common practice, no source."""
    from pulsetherm.tui.report import sizing_text

    class Fake:
        def __init__(self, kind, text):
            self.d = {"adjust": "x", "kind": kind, "margin_K": 0.0, "value_text": text,
                      "binding_probe": "pa.junction", "binding_peak_C": 1.0,
                      "binding_limit_C": 2.0, "evaluations": 3, "note": "",
                      "cautions": ["c"]}

        def to_dict(self):
            return self.d

    assert "= 0.12345 K/W" in sizing_text(Fake("largest", "0.1234567 K/W"))
    assert "= 0.12346 K/W" in sizing_text(Fake("smallest", "0.1234512 K/W"))
    assert "= -20.001 degC" in sizing_text(Fake("largest", "-20.00012 degC"))
    assert _short_quantity("0.1234567 K/W", toward="up") == "0.12346 K/W"
    assert _short_quantity("0 K/W", toward="up") == "0 K/W"


def test_a_closed_pipe_ends_quietly():
    # ~300 listings overflow any pipe buffer, so the writer meets the closed pipe
    code = ("import sys\nfrom pulsetherm.tui.cli import main\n"
            "rcs = {main(['materials']) for _ in range(300)}\n"
            "sys.exit(max(rcs))\n")
    proc = subprocess.Popen([sys.executable, "-P", "-c", code], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE)
    proc.stdout.readline()
    proc.stdout.close()          # the reader goes away after one line, like `| head -1`
    err = proc.stderr.read().decode()
    proc.stderr.close()
    assert proc.wait(timeout=60) == 0
    assert "Traceback" not in err and "Broken pipe" not in err


def test_json_output_never_carries_nan(tmp_path, capsys, monkeypatch):
    """``--json`` is strict JSON: a non-finite figure is an error (exit 2, one line, nothing
    on stdout) instead of a bare NaN token.  Common practice, no source (RFC 8259 has no
    NaN)."""
    import importlib

    simulate_mod = importlib.import_module("pulsetherm.network.simulate")

    class Bad:
        def to_dict(self):
            return {"scenario": "x", "probes": {"pa.junction": {"peak_C": float("nan")}}}

    monkeypatch.setattr(simulate_mod, "simulate", lambda scn: Bad())
    f = tmp_path / "s.toml"
    f.write_text((EXAMPLES / "xband_gan_coldplate.toml").read_text())
    assert main(["run", str(f), "--json"]) == 2
    cap = capsys.readouterr()
    assert cap.out == "" and "not a finite number" in cap.err
    assert "Traceback" not in cap.err and len(cap.err.strip().splitlines()) == 1


def test_check_without_limits_does_not_claim_they_hold(tmp_path, capsys):
    """Common practice, no source."""
    f = tmp_path / "s.toml"
    f.write_text('name = "no limits"\n[mount.sink]\nkind = "fixed"\n[[devices]]\n'
                 'name = "pa"\npower = "2 W"\nfootprint = "2 mm"\n'
                 'foster = { R = ["3 K/W"], tau = ["1 ms"] }\n')
    assert main(["check", str(f)]) == 0
    out = capsys.readouterr().out
    assert "every limit holds" not in out and "nothing checked" in out
    assert "Caution: engineering estimates" in out
