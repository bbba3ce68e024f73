"""A periodic response reused for the same power times one factor (network/rescale.py).

Reference: linearity of the heat equation in its sources (superposition; H. S. Carslaw and
J. C. Jaeger, *Conduction of Heat in Solids*, 2nd ed., 1959): the rise over the zero-power
field scales with a common factor on every heat input.  Each reused response is compared
with a direct solve on a fresh copy of the network."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pulsetherm.network.modal import ModalSolver
from pulsetherm.network.rescale import power_factor
from pulsetherm.waveforms.canonical import Piecewise

from tests.test_engine_properties import SETTINGS, random_net


def _waves(k: float, width: float = 1e-4) -> dict:
    return {"a": Piecewise([0.0, width, 1e-3], [10.0 * k, 0.0]),
            "b": Piecewise([0.0, 2e-4, 1.5e-3], [4.0 * k, 1.0 * k], slope=[2e4 * k, 0.0])}


@pytest.fixture
def solves(monkeypatch):
    """Counts the modal solver's periodic solves."""
    count = {"n": 0}
    orig = ModalSolver.periodic

    def spy(self, *a, **k):
        count["n"] += 1
        return orig(self, *a, **k)
    monkeypatch.setattr(ModalSolver, "periodic", spy)
    return count


@settings(**SETTINGS)
@given(n=st.integers(2, 12), seed=st.integers(0, 2**31 - 1),
       k=st.floats(1e-3, 20.0))   # larger factors pass 5000 K on some draws (refused)
def test_scaled_power_reuses_the_response_exactly(n, seed, k):
    """Peak, minimum, mean, warm-up time and energy balance of the reused response agree
    with a direct solve to 1e-10 of the rise (linearity, module docstring)."""
    net = random_net(n, seed)
    net.periodic(_waves(1.0), probes=net.nodes)
    reused = net.periodic(_waves(k), probes=net.nodes)
    fresh = random_net(n, seed)
    direct = fresh.periodic(_waves(k), probes=fresh.nodes)
    rise = max(abs(direct.peak(p) - direct.ambient[i]) for i, p in enumerate(fresh.nodes))
    for p in net.nodes:
        for f in ("peak", "min", "mean"):
            assert abs(getattr(reused, f)(p) - getattr(direct, f)(p)) <= 1e-10 * rise, (p, f)
        assert reused.warmup_s[p] == pytest.approx(direct.warmup_s[p], rel=1e-9)
    assert abs(reused.energy_error) < 1e-9


def test_reuse_happens_only_for_one_common_factor(solves):
    """One solve for a drive-level change; a new solve for another pulse width, a changed
    ratio between the inputs, zero power, or new solver options."""
    net = random_net(6, 11)
    net.periodic(_waves(1.0), probes=net.nodes)
    assert solves["n"] == 1
    net.periodic(_waves(2.5), probes=net.nodes)
    assert solves["n"] == 1                                   # reused
    net.periodic(_waves(2.5, width=2e-4), probes=net.nodes)
    assert solves["n"] == 2                                   # another shape
    w = _waves(1.0, width=2e-4)
    w["b"] = _waves(3.0)["b"]                                 # inputs scaled apart
    net.periodic(w, probes=net.nodes)
    assert solves["n"] == 3
    net.periodic({"a": 0.0, "b": 0.0}, probes=net.nodes)
    assert solves["n"] == 4
    net.periodic(_waves(7.0), probes=net.nodes[:2])           # other probes
    assert solves["n"] == 5
    net.configure_solver("modal", linear_points=50)
    net.periodic(_waves(7.0), probes=net.nodes[:2])           # new solver options
    assert solves["n"] == 6


def test_power_factor():
    """The factor of two proportional piecewise powers, None otherwise (common practice,
    no source)."""
    e = np.array([0.0, 1e-4, 1e-3])
    lv = np.array([[10.0, 4.0], [0.0, 1.0]])
    sl = np.array([[0.0, 2e4], [0.0, 0.0]])
    assert power_factor(e, 3 * lv, 3 * sl, e, lv, sl) == pytest.approx(3.0, rel=1e-15)
    assert power_factor(e, lv, sl, e, lv, sl) == 1.0
    assert power_factor(e, -lv, -sl, e, lv, sl) is None          # negative factor
    assert power_factor(e, 0 * lv, 0 * sl, e, lv, sl) is None     # zero power
    other = lv * np.array([1.0, 2.0])
    assert power_factor(e, other, sl, e, lv, sl) is None          # inputs apart
    assert power_factor(e * 1.5, lv, sl, e, lv, sl) is None       # other edges
    assert power_factor(e, lv, sl, e, 0 * lv, 0 * sl) is None     # nothing to scale
