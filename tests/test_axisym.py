"""Axisymmetric r-z accuracy mode against exact spreading series, the half-space limit and
the slab series; ladder-against-mesh report."""
from __future__ import annotations

import math

import numpy as np
import pytest

from pulsetherm.network.axisym import build_axisym, compare, radial_grid
from pulsetherm.network.builder import build
from pulsetherm.network.materials import Material
from pulsetherm.network.stackup import (Assembly, Board, Film, FixedBase, Layer, LumpedSink,
                                        Mount, Part, StackupError)

CU = Material(name="cu-390", k=390.0, rho=8933.0, c=385.0)   # physics brief §3
K150 = Material(name="k150", k=150.0, rho=3210.0, c=690.0)
SI = Material(name="si-brief", k=148.0, rho=2330.0, c=712.0)


def test_plate_spreading_within_2_percent_of_exact_series():
    """Circular isoflux source of the area of 10×10 mm on 50×50×3 mm copper, h = 1e4:
    R_sp = 0.1419 K/W (Yovanovich, Culham & Teertstra 1998; physics brief §3 [deriv])."""
    asm = Assembly([Part("d", 1e-2, [Layer(CU, 3e-3, size=5e-2)])],
                   mount=Mount(sink=Film(1e4)))
    m = build_axisym(asm, t_min=1e-4)
    r1d = 3e-3 / (390 * 25e-4) + 1 / (1e4 * 25e-4)
    assert m.steady_resistance() - r1d == pytest.approx(0.1419, rel=0.02)
    assert m.centre_resistance() - r1d == pytest.approx(0.1736, rel=0.03)


def test_two_layer_within_3_percent():
    """k1 150, 0.1 mm over k2 390, 1 mm; 1×1 mm source on 10×10 mm; h = 1e4: 2.7111 K/W
    (Yovanovich, Muzychka & Culham 1999; physics brief §3 [deriv])."""
    asm = Assembly([Part("d", 1e-3, [Layer(K150, 1e-4, size=1e-2),
                                     Layer(CU, 1e-3, size=1e-2)])],
                   mount=Mount(sink=Film(1e4)))
    assert build_axisym(asm, t_min=1e-4).steady_resistance() == pytest.approx(2.7111,
                                                                               rel=0.03)


def test_half_space_limit():
    """Large plate (radius and thickness 200 a), isothermal base: k·a·R_sp → 8/(3π²) =
    0.2702 (isoflux circle on a half-space; physics brief §3 [pub])."""
    a = 1e-3
    b = 200 * a
    side = math.sqrt(math.pi) * a
    asm = Assembly([Part("d", side, [Layer(CU, b, size=math.sqrt(math.pi) * b)])])
    m = build_axisym(asm, t_min=1e-2, radial_cells=8)
    r1d = b / (390 * math.pi * b * b)
    assert 390 * a * (m.steady_resistance() - r1d) == pytest.approx(8 / (3 * math.pi ** 2),
                                                                    rel=0.02)


def test_slab_transient_matches_series():
    """Source as wide as the plate: 1-D; Zth within 1 % of the Carslaw & Jaeger (1959)
    slab series from 1 µs to steady (physics brief §4)."""
    asm = Assembly([Part("d", 1e-2, [Layer(SI, 1e-3, size=1e-2)])])
    m = build_axisym(asm, radial_cells=3)
    t = np.logspace(-6, 1, 25)
    n = np.arange(200_000)
    L, A = 1e-3, 1e-4
    Rn = L / (148 * A) * 8 / ((2 * n + 1) ** 2 * math.pi ** 2)
    tau = 4 * L * L / ((2 * n + 1) ** 2 * math.pi ** 2 * SI.diffusivity)
    exact = Rn.sum() - np.exp(-np.outer(t, 1 / tau)) @ Rn
    assert np.max(np.abs(m.zth(t) / exact - 1)) < 0.01


def test_compare_reports_ladder_against_mesh():
    asm = Assembly([Part("d", 2e-3, [Layer(CU, 1e-3, size=1e-2)])],
                   mount=Mount(sink=FixedBase()))
    c = compare(build(asm, spreading="calibrated"), t=np.logspace(-5, 0, 8),
                radial_cells=6)
    assert abs(c.steady_difference) < 0.05
    assert c.zth_difference.shape == (8,)
    assert "steady ladder" in c.summary()


def test_radial_grid_contains_required_radii():
    r = radial_grid(1e-3, [2e-3, 5e-3], 1e-4, 1.3)
    for x in (0.0, 1e-3, 2e-3, 5e-3):
        assert np.any(np.isclose(r, x, rtol=0, atol=1e-15))
    assert np.all(np.diff(r) > 0)


def test_radial_grid_is_graded_at_every_edge():
    """The steps either side of the source edge and of every inner layer edge are at most
    2·h0 (geometric grading from each edge, then a last step onto the edge): a conductive
    flange crowds the flux at its rim as the source does at its edge (common practice, no
    source).  Graded from the source edge alone, the steps at the 4 mm rim were 0.3 and
    0.4 mm."""
    h0 = 1e-4
    r = radial_grid(1e-3, [4e-3, 20e-3], h0, 1.25)
    for edge in (1e-3, 4e-3):
        i = int(np.argmin(np.abs(r - edge)))
        assert r[i] == edge
        assert r[i] - r[i - 1] <= 2 * h0 and r[i + 1] - r[i] <= 2 * h0
    assert np.all(np.diff(r) > 0) and r[-1] == 20e-3


def test_default_grid_converged_on_a_flange_over_a_board():
    """Grid convergence (common practice, no source): a 3 mm copper flange heated over its
    whole top on a 36 mm board (35 µm copper / 1.16 mm laminate / 35 µm copper), default
    grid against one 4 times finer with growth 1.03: within 3 % (measured +2.6 %; the grid
    graded from the source edge alone at a/12 read +4.7 %, 9 % on random stacks)."""
    side = 13.7e-3
    board = Board([Layer("pcb-copper", 35e-6, name="top"),
                   Layer("hydrocarbon-ceramic", 1.16e-3, name="lam"),
                   Layer("pcb-copper", 35e-6, name="gnd")], size=36e-3)
    asm = Assembly([Part("f", (side, side), [Layer("copper", 3e-3, size=side)])], board,
                   Mount(sink=FixedBase(25.0)))
    fine = build_axisym(asm, t_min=1e-4, radial_cells=96, radial_growth=1.03)
    default = build_axisym(asm, t_min=1e-4)
    assert default.steady_resistance() == pytest.approx(fine.steady_resistance(), rel=0.03)


def test_datasheet_part_refused():
    from pulsetherm.network.foster import Foster
    asm = Assembly([Part("d", 1e-3, foster=Foster([1.0], [1e-3]))])
    with pytest.raises(StackupError, match="data-sheet"):
        build_axisym(asm)


@pytest.mark.parametrize("sink", [FixedBase(), LumpedSink(0.5, 10.0, 25.0)],
                         ids=["fixed", "lumped"])
def test_calibrated_ladder_follows_the_mesh_on_one_temperature_sinks(sink):
    """A lumped sink is one node: the plate's bottom is isothermal and the sink resistance adds
    in series, in the ladder as in the r-z mesh (common practice, no source)."""
    asm = Assembly([Part("d", 2e-3, [Layer("sic-4h", 1e-4, size=3e-3),
                                     Layer(CU, 2e-3, size=2e-2)])], mount=Mount(sink=sink))
    c = compare(build(asm, spreading="calibrated"), t=np.logspace(-5, 1, 7), radial_cells=8)
    assert abs(c.steady_difference) < 0.03
