"""Facts a practising engineer expects of a built stack-up (reviewer checks): thicker
laminate runs hotter, more vias and a bigger flange run cooler, rises are linear in power,
a data-sheet device reproduces its curve, the die sets the ripple of a short pulse, and
heat capacities are counted once."""
from __future__ import annotations

import numpy as np
import pytest

from pulsetherm.network.builder import build
from pulsetherm.network.foster import Foster
from pulsetherm.network.stackup import (Assembly, Board, FixedBase, Layer, LumpedSink,
                                        Mount, Part)
from pulsetherm.network.vias import Via, ViaArray
from pulsetherm.waveforms.pulses import PulseTrain


def _die(flange=10e-3):
    return Part("pa", (1e-3, 1e-3), [Layer("sic-4h", 100e-6, size=2e-3),
                                      Layer("ausn", 25e-6, size=2e-3),
                                      Layer("cuw-85-15", 1e-3, size=flange, name="flange")],
                junction_limit=225.0)


def _asm(lam=0.508e-3, flange=10e-3, vias=None, sink=None):
    board = Board([Layer("pcb-copper", 35e-6, name="top"),
                   Layer("fr4-class", lam, name="lam", vias=vias),
                   Layer("pcb-copper", 35e-6, name="bot")], size=(40e-3, 40e-3))
    return Assembly([_die(flange)], board, Mount(sink=sink or FixedBase(25.0)))


@pytest.mark.parametrize("spreading", ["angle", "calibrated", "none"])
def test_thicker_laminate_runs_hotter(spreading):
    """Common practice, no source: heat crosses the laminate, so a thicker one is hotter."""
    r = [build(_asm(lam=t), spreading=spreading).steady_resistance()
         for t in (0.254e-3, 0.508e-3, 1.524e-3)]
    assert r[0] < r[1] < r[2]


@pytest.mark.parametrize("spreading", ["angle", "calibrated"])
def test_more_vias_run_cooler(spreading):
    """Common practice, no source: a denser via array under the part lowers the rise."""
    via = Via(drill=0.3e-3, plating=25e-6)
    r = [build(_asm(vias=ViaArray(via, pitch=p, laminate=0.3)),
               spreading=spreading).steady_resistance()
         for p in (1.5e-3, 1.0e-3, 0.6e-3)]
    plain = build(_asm(), spreading=spreading).steady_resistance()
    assert plain > r[0] > r[1] > r[2]


def test_bigger_flange_runs_cooler():
    """Common practice, no source: a wider flange spreads the heat over more laminate (45°
    cone of the angle model: from 3 mm up the cone reaches the edge of the flange)."""
    r = [build(_asm(flange=f)).steady_resistance() for f in (2.5e-3, 3e-3, 4e-3)]
    assert r[0] > r[1] > r[2]


def test_rises_are_linear_in_power():
    """Linear network (common practice, no source): doubling the power doubles every
    rise, at every node, in steady state and in the periodic peak."""
    m = build(_asm(sink=LumpedSink(0.5, 20.0, ambient=25.0)))
    s1 = m.network.steady({"pa": 5.0})
    s2 = m.network.steady({"pa": 10.0})
    for n in m.network.nodes:
        assert s2.T(n) - 25.0 == pytest.approx(2.0 * (s1.T(n) - 25.0), rel=1e-9, abs=1e-12)
    probe = m.probes[0]
    p1 = m.network.periodic({"pa": PulseTrain(peak=5.0, width=10e-6, duty=0.1)},
                            probes=[probe])
    p2 = m.network.periodic({"pa": PulseTrain(peak=10.0, width=10e-6, duty=0.1)},
                            probes=[probe])
    assert p2.peak(probe) - 25.0 == pytest.approx(2.0 * (p1.peak(probe) - 25.0), rel=1e-6)
    assert p2.ripple(probe) == pytest.approx(2.0 * p1.ripple(probe), rel=1e-6)


def test_datasheet_foster_on_ideal_base_is_the_datasheet_curve():
    """A data-sheet Foster device straight on an ideal base: the junction Zth is the
    data-sheet curve Σ R_i(1 − e^{−t/τ_i}) (definition of a Foster network)."""
    fos = Foster([0.2, 0.5, 1.0], [1e-5, 1e-3, 0.1])
    m = build(Assembly([Part("q", 5e-3, foster=fos)], mount=Mount(sink=FixedBase(25.0))))
    t = np.logspace(-7, 1, 40)
    z = np.asarray(m.network.zth("q.junction", "q", t=t).K_per_W)
    exact = (np.asarray(fos.R)[None, :]
             * (1 - np.exp(-t[:, None] / np.asarray(fos.tau)[None, :]))).sum(axis=1)
    assert np.max(np.abs(z - exact)) < 1e-6 * 1.7


def test_short_pulse_ripple_is_set_by_the_die_not_the_sink():
    """Common practice, no source: under a 10 µs pulse at 10 % duty the ripple of the
    junction is set by the die's heat capacity; a 4× larger sink resistance lifts the mean
    by P_mean·ΔR = 2 W · 1.5 K/W but leaves the ripple within 1 %."""
    def run(rs):
        m = build(_asm(sink=LumpedSink(rs, 50.0, ambient=25.0)), t_min=1e-6)
        j = m.probes[0]
        return m.network.periodic({"pa": PulseTrain(peak=20.0, width=10e-6, duty=0.1)},
                                  probes=[j]), j
    a, j = run(0.5)
    b, _ = run(2.0)
    assert b.mean(j) - a.mean(j) == pytest.approx(2.0 * 1.5, rel=1e-6)   # P_mean·ΔR
    assert b.ripple(j) == pytest.approx(a.ripple(j), rel=0.01)


@pytest.mark.parametrize("spreading", ["angle", "none"])
def test_capacity_counted_once(spreading):
    """Every sub-layer's heat capacity goes to exactly one pair of face nodes: the
    network's total equals the layers' capacities plus the sink's, and for 1-D columns
    each layer's capacity is ρ·c·volume of the column it represents."""
    m = build(_asm(sink=LumpedSink(0.5, 7.0)), spreading=spreading)
    g = m.network.graph
    total = sum(g.nodes[n]["capacity"] for n in m.network.nodes)
    layers = [lay for lay in m.columns["pa"].layers if lay.group != "sink"]
    assert total == pytest.approx(sum(lay.capacity for lay in layers) + 7.0, rel=1e-12)
    if spreading == "none":
        from pulsetherm.network.materials import default_library
        lib = default_library()
        for lay in layers:
            mat = lib.get(lay.material)
            assert lay.capacity == pytest.approx(mat.rho * mat.c * 1e-6 * lay.thickness,
                                                 rel=1e-12)


def test_calibrated_via_field_counts_by_its_area():
    """Calibrated spreading counts a via field over its own area (the series at the field's
    k_z, the area taken back depth by depth): vias lower the junction, a larger field never
    raises it and a smaller one raises it (Rayleigh's monotonicity law, Doyle & Snell
    1984), and each stays within 10 % of the project's r-z mesh, which keeps the field
    local."""
    from pulsetherm.network.axisym import build_axisym
    from pulsetherm.network.materials import default_library

    lam = default_library().get("hydrocarbon-ceramic")
    field = ViaArray(Via(0.3e-3, 25e-6, fill="copper"), 0.6e-3, lam)

    def rth(vias, area=None):
        part = Part("pa", (1e-3, 2e-3), [Layer("cuw-85-15", 1e-3, size=(6e-3, 8e-3))])
        board = Board([Layer("pcb-copper", 35e-6, name="top"),
                       Layer(lam, 0.508e-3, name="lam", vias=vias, via_area=area),
                       Layer("pcb-copper", 35e-6, name="gnd")], size=(0.04, 0.03))
        asm = Assembly([part], board, Mount(sink=FixedBase(25.0)))
        m = build(asm, spreading="calibrated")
        mesh = build_axisym(asm).steady_resistance()
        assert m.steady_resistance("pa") == pytest.approx(mesh, rel=0.10)
        return m.steady_resistance("pa")

    r0, r1 = rth(None), rth(field)
    r2, r3 = rth(field, area=(12e-3, 12e-3)), rth(field, area=(3e-3, 4e-3))
    assert r1 < 0.8 * r0
    assert r2 <= r1 < r3 < r0
