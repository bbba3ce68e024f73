"""Bounds on how long a legal scenario can take (issue 10, the long fuzz run): a strip
narrower than its copper is refused, a thin laminate no longer meshes a heater footprint
into thousands of segments, and a periodic solve too large to wait for is refused before
it starts, with the factors in the message.  Common practice, no source.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from pulsetherm.network import limits
from pulsetherm.network.lines import FOOTPRINT_SEGMENTS, PointHeater, RFLine
from pulsetherm.network.microstrip import Microstrip
from pulsetherm.network.scenario import ScenarioError, loads
from pulsetherm.network.simulate import build, simulate

EXAMPLE = (Path(__file__).resolve().parents[1] / "examples" / "termination_line.toml")
FR4 = {"k": 0.3, "k_inplane": 0.3, "rho": 1850.0, "c": 1150.0, "t_max_K": 130.0 + 273.15}


def _example(old: str, new: str) -> str:
    text = EXAMPLE.read_text(encoding="utf-8")
    assert old in text, old
    return text.replace(old, new, 1)


def _footprint_segments(line: RFLine, a: float, b: float) -> int:
    x = line.x
    return int(np.count_nonzero((x > a) & (x < b)))


@pytest.mark.parametrize("h", ["1 um", "1 nm", "20 um", "50 um"])
def test_strip_narrower_than_its_copper_is_refused(h):
    # 35 um copper: a 50-ohm strip on 50 um of this laminate is ~90 um wide (kept); on
    # 20 um 34 um wide, on 1 um 0.5 um (refused, naming the laminate thickness)
    scn = loads(_example('thickness = "0.508 mm"', f'thickness = "{h}"'))
    if h == "50 um":
        assert build(scn).lines["feed"].line.microstrip.w >= 35e-6
        return
    with pytest.raises(ScenarioError) as exc:
        build(scn)
    msg = str(exc.value)
    assert msg.startswith(f"board.layers[1].thickness = '{h}'"), msg
    assert "W >= t" in msg and "35 um copper" in msg


def test_given_width_under_the_copper_thickness_names_the_width():
    scn = loads(_example('impedance = "50 ohm"', 'width = "20 um"'))
    with pytest.raises(ScenarioError) as exc:
        build(scn)
    assert str(exc.value).startswith("lines[0].width = '20 um'"), str(exc.value)


def test_thin_laminate_footprint_is_meshed_in_a_bounded_number_of_segments():
    # a 2 mm footprint on a 2 um laminate: the laminate thickness as the fine step gave
    # 1000 segments under it (and a 49 s run); by default at most FOOTPRINT_SEGMENTS
    ms = Microstrip(2e-6, 3.0, z0_target=50.0, thickness=1e-6, frequency=3e9)
    hp = PointHeater("term", 24e-3, 2e-3, resistance=10.0, capacity=5e-3)
    line = RFLine(ms, 25e-3, FR4, heaters=(hp,))
    under = _footprint_segments(line, 23e-3, 25e-3)
    assert 0.5 * FOOTPRINT_SEGMENTS <= under <= FOOTPRINT_SEGMENTS + 1
    assert line.edges.size - 1 < 4 * FOOTPRINT_SEGMENTS
    # a fine step given explicitly is kept
    fine = RFLine(ms, 25e-3, FR4, heaters=(hp,), fine_segment=10e-6)
    assert _footprint_segments(fine, 23e-3, 25e-3) >= 190


def test_thick_laminate_mesh_unchanged_by_the_footprint_cap():
    # the example's 0.508 mm laminate: the fine step (< 1/64 of the footprint only on thin
    # laminates) is not touched; the segment count it had before the cap (27)
    m = build(loads(EXAMPLE.read_text(encoding="utf-8")))
    assert len(m.lines["feed"].top_nodes) == 27


def test_long_common_period_refused_before_the_solve():
    # a 10 s load period against the 1 ms RF pulses: 20,000 segments x 28 probe nodes x
    # 110 capacities (was 45 s of CPU in the exact extremes search)
    text = _example('period = "1 ms"\n\n[waveforms.load]', 'period = "10 s"\n\n'
                    '[waveforms.load]')
    with pytest.raises(ScenarioError) as exc:
        simulate(loads(text))
    msg = str(exc.value)
    assert msg.startswith("waveforms: ") and f"{limits.MAX_PERIODIC_WORK:.0e}" in msg
    assert "20000 segments" in msg and "28 probe nodes" in msg, msg


def test_many_line_segments_refused_naming_the_lines():
    # 300 segments: 301 probe nodes x 1202 capacities x (2 + 100) > the limit
    text = _example('impedance = "50 ohm"', 'impedance = "50 ohm"\nsegments = 300')
    with pytest.raises(ScenarioError) as exc:
        simulate(loads(text))
    assert str(exc.value).startswith("lines: "), str(exc.value)


def test_work_just_under_the_limit_runs(monkeypatch):
    # the example itself (28 x 110 x 102 = 3.1e5) runs; with the limit set just under its
    # work it is refused, just over it runs: the bound is the product the docstring states
    work = 28 * 110 * (2 + limits.PERIODIC_WORK_CUTS)
    scn = loads(EXAMPLE.read_text(encoding="utf-8"))
    monkeypatch.setattr(limits, "MAX_PERIODIC_WORK", work - 1)
    with pytest.raises(ScenarioError):
        simulate(scn)
    monkeypatch.setattr(limits, "MAX_PERIODIC_WORK", work)
    assert simulate(scn).probes["feed.hottest"].peak_C > 50.0
