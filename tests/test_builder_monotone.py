"""Monotonicity of the built networks (property tests, few examples): raising any k,
adding vias or thinning an interface never raises a part's junction temperature under its
own power (the driving-point resistance of a conduction network falls when any
conductance rises: Rayleigh's monotonicity law, Doyle & Snell, *Random Walks and Electric
Networks*, 1984, ch. 1.4).

Other node temperatures may rise, and rightly: better board copper carries more heat from
a hot part to its neighbour (a transfer temperature), so the test checks driving points."""
from __future__ import annotations

from hypothesis import given, settings, strategies as st

from pulsetherm.network.builder import build
from pulsetherm.network.materials import Material
from pulsetherm.network.stackup import (AreaResistance, Assembly, Board, Layer, LumpedSink,
                                        Mount, Part)


def _mat(name: str, k: float) -> Material:
    # diffusivity held at 1e-4 m²/s so the graded sub-layers (and node names) stay the
    # same when k changes; the heat capacity does not enter a steady state
    return Material(name=name, k=k, rho=3000.0, c=k / (3000.0 * 1e-4))


def _assembly(ks, tim, vias, spread):
    die = Part("a", (0.6e-3, 0.4e-3), [Layer(_mat("die", ks[0]), 100e-6, size=2e-3),
                                       Layer(_mat("attach", ks[1]), 25e-6, size=2e-3),
                                       Layer(_mat("flange", ks[2]), 1e-3, size=8e-3)],
               position=(0.0, 0.0))
    drv = Part("b", 2e-3, [Layer(_mat("solder", ks[1]), 50e-6)], rth=2.0,
               position=(12e-3, 0.0))
    board = Board([Layer(_mat("cu", ks[3]), 35e-6, name="top"),
                   Layer(_mat("lam", ks[4]), 0.5e-3, name="lam", vias=vias),
                   Layer(_mat("cu2", ks[3]), 35e-6, name="gnd")], size=(0.04, 0.03))
    mount = Mount([Layer(_mat("tim", 3.0), tim, name="tim"), AreaResistance(1e-5, "contact")],
                  LumpedSink(0.5, 20.0))
    return Assembly([die, drv], board, mount)


def _rises(asm, spread):
    """Junction rise of each part with only that part powered, K/W."""
    m = build(asm, spreading=spread, t_min=1e-5, fidelity="coarse")
    return {p: m.steady_resistance(p) for p in ("a", "b")}


def _le(x, y):
    return all(x[p] <= y[p] * (1 + 1e-9) for p in x)


ks = st.tuples(st.floats(100, 400), st.floats(30, 80), st.floats(100, 400),
               st.floats(300, 400), st.floats(0.2, 1.5))


@settings(max_examples=8, deadline=None)
@given(ks=ks, which=st.integers(0, 4), factor=st.floats(1.05, 4.0),
       tim=st.floats(20e-6, 100e-6), spread=st.sampled_from(["angle", "none"]))
def test_raising_k_never_raises_a_junction(ks, which, factor, tim, spread):
    r0 = _rises(_assembly(ks, tim, None, spread), spread)
    ks2 = list(ks)
    ks2[which] *= factor
    r1 = _rises(_assembly(tuple(ks2), tim, None, spread), spread)
    assert _le(r1, r0)


@settings(max_examples=4, deadline=None)
@given(ks=ks, kv=st.floats(2.0, 40.0), tim=st.floats(20e-6, 100e-6), thin=st.floats(0.2, 0.9),
       spread=st.sampled_from(["angle", "none"]))
def test_vias_and_thinner_interface_never_raise_a_junction(ks, kv, tim, thin, spread):
    r0 = _rises(_assembly(ks, tim, None, spread), spread)
    r1 = _rises(_assembly(ks, tim, max(kv, ks[4] * 1.01), spread), spread)
    r2 = _rises(_assembly(ks, tim * thin, None, spread), spread)
    assert _le(r1, r0)
    assert _le(r2, r0)


def _single(ks, tim, vias, spread):
    """Part ``a`` alone on the board: one heat source, every node temperature, degC."""
    full = _assembly(ks, tim, vias, spread)
    asm = Assembly([full.parts[0]], full.board, full.mount)
    m = build(asm, spreading=spread, t_min=1e-5, fidelity="coarse")
    return m.network.steady({"a": 1.0}).temperatures


@settings(max_examples=5, deadline=None)
@given(ks=ks, which=st.integers(0, 4), factor=st.floats(1.05, 4.0),
       tim=st.floats(20e-6, 100e-6), thin=st.floats(0.2, 0.9), kv=st.floats(2.0, 40.0),
       spread=st.sampled_from(["angle", "none"]))
def test_one_source_no_node_gets_warmer(ks, which, factor, tim, thin, kv, spread):
    """With one heated part every steady temperature of its column is the heat times the
    resistance from that node to the sink, which no added conductance can raise (Rayleigh's
    monotonicity law, Doyle & Snell 1984, ch. 1.4).

    Geometric spreading only: a calibrated column's sub-layer areas follow the exact
    solution for the given conductivities, so its inner nodes stand for other averages when
    a k changes (its junction is covered by the tests above)."""
    t0 = _single(ks, tim, None, spread)
    ks2 = list(ks)
    ks2[which] *= factor
    for t1, moved in ((_single(tuple(ks2), tim, None, spread), ""),
                      (_single(ks, tim, max(kv, ks[4] * 1.01), spread), ""),
                      (_single(ks, tim * thin, None, spread), "mount-tim")):
        # nodes inside a thinned layer sit at other depths: compare the rest
        common = {n for n in t0.keys() & t1.keys() if not (moved and moved in n)}
        assert len(common) >= 0.75 * len(t0)
        assert all(t1[n] <= t0[n] + 1e-9 * (1 + abs(t0[n])) for n in common)


@settings(max_examples=6, deadline=None)
@given(ks=ks, which=st.integers(0, 4), factor=st.floats(1.05, 4.0),
       tim=st.floats(20e-6, 100e-6), thin=st.floats(0.2, 0.9), kv=st.floats(2.0, 40.0))
def test_calibrated_column_junction_never_rises(ks, which, factor, tim, thin, kv):
    """Calibrated spreading, one part: its junction follows the exact layered series, which
    falls when any conductance rises (Rayleigh's law, Doyle & Snell 1984, ch. 1.4).

    With several parts the calibrated columns' board coupling depends on each column's
    equivalent areas, so a neighbour may warm by about 1 % when a k rises: a known limit of
    the column model, not of the physics."""
    j0 = _single(ks, tim, None, "calibrated")["a.junction"]
    ks2 = list(ks)
    ks2[which] *= factor
    for j1 in (_single(tuple(ks2), tim, None, "calibrated")["a.junction"],
               _single(ks, tim, max(kv, ks[4] * 1.01), "calibrated")["a.junction"],
               _single(ks, tim * thin, None, "calibrated")["a.junction"]):
        assert j1 <= j0 + 1e-9 * (1 + abs(j0))
