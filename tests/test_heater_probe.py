"""A heater on a line reads the hottest point under it, not the footprint edge (issue 9,
item 10).

Hand calculation: the strip is a fin.  Along x the trace copper conducts k_cu·W·t; under
each metre the laminate conducts g' = k·S(W/h) to the ground plane, with S the exact
conductance of a strip on a slab, S = 2K(k')/K(k), k = sech(πu/4), u = W/h (S. B. Cohn,
"Characteristic impedance of the shielded-strip transmission line", IRE Trans. MTT 2(2),
1954; electrostatic-thermal analogy, common practice).  A heat q' per metre over |x| < a
on a long fin, m = √(g'/(k_cu·W·t)), gives (the fin equation θ'' = m²θ − q'/(k_cu W t),
solved piecewise and matched at x = ±a; common practice, no source)

    θ(0) = (q'/g')·(1 − e^{−m·a})          (the centre, the hottest point)
    θ(a) = (q'/2g')·(1 − e^{−2m·a})        (the footprint edge).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import ellipk, ellipkm1

from pulsetherm.network.scenario import loads
from pulsetherm.network.simulate import simulate

TEXT = """name = "heater on a line"
coolant = "25 degC"
[board]
size = ["60 mm", "20 mm"]
[[board.layers]]
name = "top-copper"
material = "pcb-copper"
thickness = "35 um"
[[board.layers]]
name = "laminate"
material = "ptfe-ceramic"
thickness = "0.508 mm"
[[board.layers]]
name = "ground"
material = "pcb-copper"
thickness = "35 um"
[mount.sink]
kind = "fixed"
[[lines]]
name = "feed"
power = "0 W"
length = "50 mm"
frequency = "3 GHz"
width = "1.2 mm"
permittivity = 3.0
[[heaters]]
name = "chip"
power = "2 W"
line = "feed"
position = "25 mm"
length = "LEN"
"""


def fin(length: float, P: float = 2.0, W=1.2e-3, h=0.508e-3, t=35e-6, k_cu=390.0,
        k_lam=0.6):
    """(centre, edge) rise, K; library values of pcb-copper and ptfe-ceramic."""
    u = W / h
    kk = 1.0 / math.cosh(math.pi * u / 4.0)
    S = 2.0 * ellipkm1(kk * kk) / ellipk(kk * kk)
    g = k_lam * S
    m = math.sqrt(g / (k_cu * W * t))
    a = length / 2.0
    q = P / length
    return q / g * (1 - math.exp(-m * a)), q / (2 * g) * (1 - math.exp(-2 * m * a))


@pytest.mark.parametrize("length", [1e-3, 4e-3, 8e-3])
def test_heater_reads_its_hottest_point(length):
    res = simulate(loads(TEXT.replace("LEN", f"{length * 1e3:g} mm")))
    centre, edge = fin(length)
    rise = res.probes["chip"].peak_C - 25.0
    # the fin ignores the laminate's own in-plane conduction along x (a few per mille)
    assert rise == pytest.approx(centre, rel=0.01)   # measured within 0.2 %
    assert centre / edge > 1.04           # the edge reading the issue found was this low
    # and it is the hottest node under the footprint
    under = res.model.groups["chip"]
    hottest = max(float(res.response.peak(n)) for n in under)
    assert res.probes["chip"].peak_C == hottest
