"""The README's guided example is the program's own output, not a stale copy.

The block after ``$ pulsetherm run examples/xband_gan_coldplate.toml`` in README.md must
equal what ``run`` prints today, line by line; the sentence that reads it must quote the
same rounded figures (common practice, no source: documentation generated from the code
it describes).  Regenerate with ``pulsetherm run examples/xband_gan_coldplate.toml``.
"""
from __future__ import annotations

import re
from pathlib import Path

import pytest

from pulsetherm.tui.cli import main

ROOT = Path(__file__).resolve().parent.parent
COMMAND = "$ pulsetherm run examples/xband_gan_coldplate.toml"


def _readme_block() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    m = re.search(r"```\n" + re.escape(COMMAND) + r"\n(.*?)```", text, re.S)
    assert m, "README.md has no guided example block"
    return [line.rstrip() for line in m.group(1).rstrip("\n").splitlines()]


def _run(capsys, monkeypatch) -> list[str]:
    monkeypatch.chdir(ROOT)
    assert main(["run", "examples/xband_gan_coldplate.toml"]) == 0
    out = capsys.readouterr().out
    return [line.rstrip() for line in out.rstrip("\n").splitlines()]


def test_readme_example_block_is_the_run_output(capsys, monkeypatch):
    got, shown = _run(capsys, monkeypatch), _readme_block()
    assert shown == got, "\n".join(["README block differs from `run` output; now:"] + got)


def test_readme_reading_quotes_the_run(capsys, monkeypatch):
    """The sentence after the block: the swing, the period mean and the flange's share."""
    got = _run(capsys, monkeypatch)
    row = next(line.split() for line in got if line.startswith("pa.junction"))
    peak, mean, low = float(row[1]), float(row[2]), float(row[3])
    flange = next(float(line.split()[2]) for line in got if line.split()[1:2] == ["flange"])
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    reading = text[text.index("Read it as:"):][:600]
    assert f"by {peak - low:.0f} K" in reading
    assert f"its {mean:.0f} °C period mean" in reading
    assert f"flange holds {flange:.0f} %" in reading
    assert pytest.approx(peak - low, abs=0.05) == float(row[4])
