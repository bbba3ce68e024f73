"""``check``: every probe listed, "no limit" where none, "limit broken" told from "margin
short", exit 1 for both with different final lines (issue 9, item 13).

The statuses follow the definitions written here (common practice, no source):
margin m = limit - peak; m < 0 broken; 0 <= m < required short; otherwise ok.
"""
from __future__ import annotations

import json

import pytest

from pulsetherm.network.checks import BROKEN, NO_LIMIT, OK, SHORT, judge, status_of
from pulsetherm.network.scenario import loads
from pulsetherm.network.simulate import simulate
from pulsetherm.tui.cli import main

TWO = """name = "two amplifiers"
coolant = "40 degC"

[mount.sink]
kind = "fixed"

[[devices]]
name = "pa"
power = "20 W"
footprint = ["3 mm", "3 mm"]
limit = "150 degC"
foster = { R = ["0.5 K/W", "1.5 K/W"], tau = ["100 us", "10 ms"] }

[[devices]]
name = "drv"
power = "2 W"
footprint = ["2 mm", "2 mm"]
position = ["10 mm", "0 mm"]
foster = { R = ["3 K/W"], tau = ["1 ms"] }
"""


def test_status_definitions():
    assert status_of(None, 5.0) == NO_LIMIT
    assert status_of(-0.1, 0.0) == BROKEN
    assert status_of(0.0, 0.0) == OK
    assert status_of(3.0, 5.0) == SHORT
    assert status_of(5.0, 5.0) == OK
    assert len({OK, SHORT, BROKEN, NO_LIMIT}) == 4


def _file(tmp_path, text=TWO):
    f = tmp_path / "two.toml"
    f.write_text(text)
    return f


def test_every_probe_listed_and_unlimited_not_called_holding(tmp_path, capsys):
    f = _file(tmp_path)
    assert main(["check", str(f)]) == 0
    out = capsys.readouterr().out
    assert "drv.junction" in out and NO_LIMIT in out
    assert "every limit holds" not in out
    assert any("every given limit holds" in ln and "drv.junction" in ln
               for ln in out.splitlines())
    assert "Caution: engineering estimates" in out


def test_broken_and_short_are_told_apart(tmp_path, capsys):
    scn = loads(TWO)
    res = simulate(scn)
    peak = res.probes["pa.junction"].peak_C
    # hand check of the peak: 20 W through 2 K/W in steady state on a 40 degC base
    assert peak == pytest.approx(40 + 20 * 2.0, rel=1e-9)
    f = _file(tmp_path)
    # limit 3 K above the peak, 10 K required: the limit holds, the margin is short
    lim = f"{peak + 3:.6f} degC"
    assert main(["check", str(f), "--margin", "10 K", "--set", f"devices[0].limit={lim}"]) == 1
    out = capsys.readouterr().out
    row = next(ln for ln in out.splitlines() if ln.startswith("pa.junction"))
    assert SHORT in row and BROKEN not in row
    last = [ln for ln in out.splitlines() if ln and not ln.startswith("Caution")][-1]
    assert "margin(s) are short" in last and "broken:" not in last
    # limit 1 K below the peak: broken
    lim = f"{peak - 1:.6f} degC"
    assert main(["check", str(f), "--set", f"devices[0].limit={lim}"]) == 1
    out = capsys.readouterr().out
    row = next(ln for ln in out.splitlines() if ln.startswith("pa.junction"))
    assert BROKEN in row
    last = [ln for ln in out.splitlines() if ln and not ln.startswith("Caution")][-1]
    assert last.startswith("1 limit(s) broken: pa.junction")


def test_nothing_limited(tmp_path, capsys):
    text = TWO.replace('limit = "150 degC"\n', "")
    f = _file(tmp_path, text)
    assert main(["check", str(f)]) == 0
    out = capsys.readouterr().out
    assert "nothing checked" in out and "every limit holds" not in out
    assert out.count(NO_LIMIT) == 2


def test_judge_dict_is_json():
    chk = judge(simulate(loads(TWO)), 0.0)
    d = json.loads(json.dumps(chk.to_dict(), allow_nan=False))
    assert [r["status"] for r in d["rows"]] == [OK, NO_LIMIT]
    assert d["failed"] is False and d["no_limit"] == ["drv.junction"]
