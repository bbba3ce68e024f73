"""Stack-up builder (ladder model): slab transients, grading convergence, spreading,
interfaces, data-sheet devices, mounting, probes, limits and reports."""
from __future__ import annotations

import math

import numpy as np
import pytest

from pulsetherm.network.builder import (FIDELITY, build, frustum_sublayer, grading,
                                        sublayer_edges)
from pulsetherm.network.foster import Foster
from pulsetherm.network.materials import Material, default_library
from pulsetherm.network.stackup import (AreaResistance, Assembly, Board, Film, FixedBase,
                                        Layer, LumpedSink, Mount, Part, StackupError)

SI = Material(name="si-brief", k=148.0, rho=2330.0, c=712.0)     # physics brief §4
CU = Material(name="cu-390", k=390.0, rho=8933.0, c=385.0)       # physics brief §3
K150 = Material(name="k150", k=150.0, rho=3210.0, c=690.0)


def slab_zth(L: float, A: float, mat: Material, t: np.ndarray, terms: int = 200_000):
    """Carslaw & Jaeger (1959) slab, flux into one face, other face held: exact Foster
    network R_n = (L/kA)·8/((2n+1)²π²), τ_n = 4L²/((2n+1)²π²α) (physics brief §4)."""
    n = np.arange(terms)
    Rn = L / (mat.k * A) * 8.0 / ((2 * n + 1) ** 2 * math.pi ** 2)
    tau = 4 * L * L / ((2 * n + 1) ** 2 * math.pi ** 2 * mat.diffusivity)
    return Rn.sum() - np.exp(-np.outer(t, 1.0 / tau)) @ Rn


def slab_assembly(L=1e-3, side=1e-2, mat=SI):
    return Assembly([Part("d", (side, side), [Layer(mat, L)])], mount=Mount(sink=FixedBase()))


def zth(model, part, t):
    return np.asarray(model.network.zth(model.columns[part].junction, part, t=t).K_per_W)


# -- 1-D slab ------------------------------------------------------------------------------
def test_slab_zth_within_1_percent_from_1us_to_steady():
    """Si slab 1 mm, 10×10 mm footprint, no spreading, default fidelity: Zth within 1 %
    of the Carslaw & Jaeger series from 1 µs to steady state.  Brief §4 [deriv] check
    values at q0 = 1e6 W/m²: 6.7568 K steady, 6.1507 K at 10 ms, 2.2772 K at 1 ms."""
    asm = slab_assembly()
    m = build(asm, spreading="none")
    t = np.logspace(-6, 1, 50)
    z = zth(m, "d", t)
    exact = slab_zth(1e-3, 1e-4, SI, t)
    assert np.max(np.abs(z / exact - 1.0)) < 0.01
    q0A = 1e6 * 1e-4
    vals = q0A * zth(m, "d", np.array([1e-3, 1e-2, 1e3]))
    assert vals == pytest.approx([2.2772, 6.1507, 6.7568], rel=0.01)
    assert m.steady_resistance("d") == pytest.approx(1e-3 / (148.0 * 1e-4), rel=1e-12)
    assert m.node_count < 40


def test_grading_convergence_order():
    """Error of the slab Zth (1 µs .. 10 s) falls as the grading is refined; fitted order
    of the worst error against the refinement number about 2 (scikit-fem style
    convergence test; reference Carslaw & Jaeger 1959 series)."""
    asm = slab_assembly()
    t = np.logspace(-6, 1, 40)
    exact = slab_zth(1e-3, 1e-4, SI, t)
    xs = np.array([0.5, 1.0, 2.0, 4.0])
    errs, nodes = [], []
    for x in xs:
        m = build(asm, spreading="none", fidelity=float(x))
        errs.append(np.max(np.abs(zth(m, "d", t) / exact - 1.0)))
        nodes.append(m.node_count)
    order = -np.polyfit(np.log(xs), np.log(errs), 1)[0]
    assert np.all(np.diff(errs) < 0)
    assert order > 1.7
    assert np.all(np.diff(nodes) > 0)


def test_fidelity_names_and_numbers():
    assert grading("normal") == FIDELITY["normal"]
    assert grading(2.0).first == pytest.approx(FIDELITY["normal"].first / 2)
    with pytest.raises(StackupError, match="fidelity"):
        grading("ultra")
    with pytest.raises(StackupError, match="fidelity"):
        grading(-1.0)


def test_sublayer_edges_grow_geometrically_and_span_layers():
    xis = sublayer_edges([0.01, 0.0, 0.2], s0=1e-3, growth=1.3)
    assert xis[1].tolist() == [0.0, 1.0]
    for xi in xis:
        assert xi[0] == 0.0 and xi[-1] == 1.0 and np.all(np.diff(xi) > 0)
    d = np.diff(xis[2])
    assert np.allclose(d[1:] / d[:-1], d[1] / d[0], rtol=1e-9)   # constant ratio
    assert d[1] / d[0] <= 1.3 + 1e-9


def test_frustum_sublayer_matches_closed_form():
    """Square frustum s0 → s0 + 2t·tanθ: R = t/[k s0 (s0 + 2t tanθ)] (common practice, no
    source); capacity ρc·∫A dz exactly; a cap stops the growth."""
    k, t, s0 = 100.0, 1e-3, 2e-3
    g, ct, cb = frustum_sublayer(0, t, s0, s0, 1.0, None, k, 2e6)
    assert 1.0 / g == pytest.approx(t / (k * s0 * (s0 + 2 * t)), rel=1e-12)
    s1 = s0 + 2 * t
    vol = t * (s0 * s0 + s0 * s1 + s1 * s1) / 3.0
    assert ct + cb == pytest.approx(2e6 * vol, rel=1e-12)
    assert cb > ct
    g2, _, _ = frustum_sublayer(0, t, s0, s0, 1.0, (s0, s0), k, 2e6)
    assert 1.0 / g2 == pytest.approx(t / (k * s0 * s0), rel=1e-12)


# -- spreading ---------------------------------------------------------------------------
def test_calibrated_plate_matches_exact_series():
    """10×10 mm source on 50×50×3 mm copper (k 390), film h = 1e4 below: exact series
    R_sp = 0.1419 K/W, R_1D = 0.0431 (Yovanovich, Culham & Teertstra 1998; physics brief
    §3 [deriv]).  Calibrated ladder within 10 %; the plain 45° cone is far off (the film
    reaches only the cone's footprint)."""
    asm = Assembly([Part("d", (1e-2, 1e-2), [Layer(CU, 3e-3, size=(5e-2, 5e-2))])],
                   mount=Mount(sink=Film(1e4)))
    r1d = 3e-3 / (390 * 25e-4) + 1 / (1e4 * 25e-4)
    cal = build(asm, spreading="calibrated")
    assert cal.steady_resistance("d") - r1d == pytest.approx(0.1419, rel=0.10)
    cone = build(asm, spreading="angle")
    assert abs(cone.steady_resistance("d") - r1d - 0.1419) > 0.1 * 0.1419


def test_calibrated_two_layer_matches_compound_series():
    """Two layers: k1 150, 0.1 mm over k2 390, 1 mm; 1×1 mm source on 10×10 mm; h = 1e4:
    R_sp 1.6788 + R_1D 1.0323 = 2.7111 K/W (Yovanovich, Muzychka & Culham 1999; physics
    brief §3 [deriv]).  Calibrated ladder within 10 %."""
    asm = Assembly([Part("d", (1e-3, 1e-3), [Layer(K150, 1e-4, size=1e-2),
                                             Layer(CU, 1e-3, size=1e-2)])],
                   mount=Mount(sink=Film(1e4)))
    m = build(asm, spreading="calibrated")
    assert m.steady_resistance("d") == pytest.approx(2.7111, rel=0.10)
    angles = [lay.angle for lay in m.columns["d"].layers if lay.angle is not None]
    assert all(0.0 <= a < 90.0 for a in angles)


def test_default_angle_and_override():
    """45° by common practice (no source); a layer's own angle overrides it."""
    lay = Layer(CU, 1e-3)
    m = build(Assembly([Part("d", 1e-3, [lay])]))
    s0, t = 1e-3, 1e-3
    assert m.steady_resistance("d") == pytest.approx(t / (390 * s0 * (s0 + 2 * t)),
                                                     rel=1e-9)
    m0 = build(Assembly([Part("d", 1e-3, [Layer(CU, 1e-3, spreading_angle=0.0)])]))
    assert m0.steady_resistance("d") == pytest.approx(t / (390 * s0 * s0), rel=1e-9)


# -- interfaces --------------------------------------------------------------------------
def test_interfaces_add_their_one_dimensional_resistance():
    """Area resistance adds r/A, a TIM layer t/(kA), voids divide a layer's conductance by
    (1 − f) (1-D columns: exact by construction, common practice, no source)."""
    A = 4e-6
    base = [Layer(CU, 1e-3)]
    r0 = build(Assembly([Part("d", 2e-3, base)]), spreading="none").steady_resistance("d")
    with_r = build(Assembly([Part("d", 2e-3, [AreaResistance(2e-5, "tim")] + base)]),
                   spreading="none").steady_resistance("d")
    assert with_r - r0 == pytest.approx(2e-5 / A, rel=1e-12)
    grease = Layer("thermal-grease", 50e-6, name="tim")
    k_g = default_library().get("thermal-grease").k
    with_tim = build(Assembly([Part("d", 2e-3, [grease] + base)]),
                     spreading="none").steady_resistance("d")
    assert with_tim - r0 == pytest.approx(50e-6 / (k_g * A), rel=1e-9)
    voided = build(Assembly([Part("d", 2e-3, [Layer(CU, 1e-3, void_fraction=0.2)])]),
                   spreading="none").steady_resistance("d")
    assert voided == pytest.approx(r0 / 0.8, rel=1e-12)


def test_thermal_boundary_resistance_between_epi_and_substrate():
    """A TBR (area-specific, 3e-8 K·m², within the 1e-9 to 5e-8 range of GaN on SiC, value
    from memory) between a GaN layer and SiC raises the junction by about r/A_gate."""
    stack = [Layer("gan", 2e-6), Layer("sic-4h", 100e-6, size=2e-3)]
    fp = (0.2e-3, 0.1e-3)
    r0 = build(Assembly([Part("d", fp, stack)])).steady_resistance("d")
    r1 = build(Assembly([Part("d", fp, [stack[0], AreaResistance(3e-8, "tbr"), stack[1]])])
               ).steady_resistance("d")
    assert 0.8 * 3e-8 / 2e-8 < r1 - r0 <= 3e-8 / 2e-8 * (1 + 1e-9)


# -- devices -----------------------------------------------------------------------------
FOSTER = Foster([0.2, 0.5, 1.3], [10e-6, 1e-3, 100e-3])     # physics brief §5/§6 [deriv]


def test_datasheet_foster_on_ideal_mount_reproduces_zth():
    """A data-sheet Foster device on an ideal (fixed-temperature) mount: the junction Zth
    equals the data-sheet Zth to 1e-6 (Foster → Cauer by Lanczos, Golub & Meurant 2010)."""
    m = build(Assembly([Part("pa", 5e-3, foster=FOSTER, junction_limit=200.0)],
                       mount=Mount(sink=FixedBase(40.0))))
    t = np.logspace(-7, 1, 60)
    z = zth(m, "pa", t)
    assert np.max(np.abs(z - FOSTER.zth(t))) < 1e-6 * FOSTER.R_total
    assert m.probes[0] == "pa.junction" and m.limits["pa.junction"] == 200.0
    assert m.inputs == {"pa": "pa"}
    res = m.network.steady({"pa": 10.0})
    assert res.T("pa.junction") == pytest.approx(40.0 + 10.0 * 2.0, rel=1e-9)


def test_datasheet_rth_joins_the_stack_at_the_case():
    """Rth alone: junction = case + P·Rth at steady state; the case node sits on the
    package's solder layer."""
    m = build(Assembly([Part("q", 3e-3, [Layer("sac305", 50e-6)], rth=1.5)]),
              spreading="none")
    res = m.network.steady({"q": 2.0})
    assert res.T("q.junction") - res.T("q.case") == pytest.approx(3.0, rel=1e-9)
    assert res.T("q.case") - 25.0 == pytest.approx(2.0 * 50e-6 / (58.0 * 9e-6), rel=1e-9)


def test_physical_die_junction_is_the_heated_footprint():
    die = Part("pa", (0.4e-3, 0.2e-3), [Layer("sic-4h", 100e-6, size=2e-3),
                                        Layer("ausn", 25e-6, size=2e-3),
                                        Layer("cuw-85-15", 1e-3, size=8e-3)],
               junction_limit=225.0)
    m = build(Assembly([die], mount=Mount(sink=FixedBase(30.0))))
    info = m.node_map["pa.junction"]
    assert info.part == "pa" and info.layer == "sic-4h" and info.sublayer == 0
    assert info.area == pytest.approx(0.08e-6)
    assert m.limits["pa.junction"] == 225.0
    assert any(lim == pytest.approx(280.0) for lim in m.limits.values())   # AuSn melts
    assert 10 <= m.node_count <= 300


# -- mounting ----------------------------------------------------------------------------
def _board(vias=None):
    return Board([Layer("pcb-copper", 35e-6, name="top"),
                  Layer("fr4-class", 0.8e-3, name="lam", vias=vias),
                  Layer("pcb-copper", 35e-6, name="gnd")], size=(0.06, 0.04))


def _two_parts(dx: float, sink=None, vias=None):
    a = Part("a", 2e-3, [Layer("sac305", 50e-6)], rth=1.0, position=(0.0, 0.0))
    b = Part("b", 2e-3, [Layer("sac305", 50e-6)], rth=1.0, position=(dx, 0.0))
    return Assembly([a, b], _board(vias),
                    Mount([Layer("thermal-grease", 50e-6)], sink or LumpedSink(0.3, 50.0)))


def test_parts_couple_through_board_and_sink():
    """Heating one part warms its neighbour through the shared board copper and sink; the
    coupling falls with distance (coarse lateral model, common practice, no source)."""
    near = build(_two_parts(5e-3))
    far = build(_two_parts(30e-3))
    rn = near.network.steady({"a": 1.0})
    rf = far.network.steady({"a": 1.0})
    assert rn.T("b.junction") > rf.T("b.junction") > rf.T("ambient")
    # with a fixed base the sink cannot couple: only the board copper does
    fb = build(_two_parts(5e-3, FixedBase()))
    r = fb.network.steady({"a": 1.0})
    assert r.T("b.junction") > r.T("base")
    assert near.node_map["a.board-lam.1"].layer == "board-lam"


def test_vias_lower_the_junction_and_give_laminate_limit():
    plain = build(_two_parts(20e-3))
    vias = build(_two_parts(20e-3, vias=20.0))
    assert vias.steady_resistance("a") < plain.steady_resistance("a")
    lam_limit = [v for k, v in plain.limits.items() if k != "a.junction"]
    assert pytest.approx(130.0) in lam_limit     # laminate continuous-use rating


def test_sinks_film_lumped_fixed():
    part = Part("d", 5e-3, [Layer(CU, 2e-3, size=2e-2)])
    film = build(Assembly([part], mount=Mount(sink=Film(500.0, ambient=30.0))),
                 spreading="none")
    assert film.steady_resistance("d") == pytest.approx(
        2e-3 / (390 * 25e-6) + 1 / (500 * 25e-6), rel=1e-9)
    lumped = build(Assembly([part], mount=Mount(sink=LumpedSink(2.0, 100.0))),
                   spreading="none")
    assert lumped.steady_resistance("d") == pytest.approx(2e-3 / (390 * 25e-6) + 2.0,
                                                          rel=1e-9)
    body = build(Assembly([part], mount=Mount(sink=Film(100.0, area=0.01, capacity=50.0))),
                 spreading="none")
    assert body.steady_resistance("d") == pytest.approx(2e-3 / (390 * 25e-6) + 1.0,
                                                        rel=1e-9)
    zt = zth(lumped, "d", np.array([1e-4, 1e4]))
    assert zt[0] < 0.2 and zt[1] == pytest.approx(lumped.steady_resistance("d"), rel=1e-6)


# -- reports -----------------------------------------------------------------------------
def test_report_shares_sum_to_one_and_find_the_bottleneck():
    asm = _two_parts(20e-3)
    m = build(asm)
    rep = m.report()
    for p in rep.parts:
        assert sum(s.share for s in p.layers) == pytest.approx(1.0, rel=1e-9)
        assert all(s.time_constant >= 0 for s in p.layers)
    assert rep.part("a").largest().layer in ("board-lam", "device")
    assert rep.node_count == m.node_count
    assert "junction rise" in rep.summary()
    assert rep.to_dict()["parts"][0]["layers"][0]["layer"] == "device"
    both = m.report({"a": 1.0, "b": 1.0})
    for p in both.parts:
        assert sum(s.share for s in p.layers) == pytest.approx(1.0, rel=1e-9)


# -- validation --------------------------------------------------------------------------
@pytest.mark.parametrize("make, field", [
    (lambda: Layer(CU, -1e-3), "thickness"),
    (lambda: Layer(CU, 1e-3, void_fraction=1.2), "void_fraction"),
    (lambda: Layer(CU, 1e-3, spreading_angle=95.0), "spreading_angle"),
    (lambda: Layer("unobtainium", 1e-3).material and build(
        Assembly([Part("d", 1e-3, [Layer("unobtainium", 1e-3)])])), "material"),
    (lambda: AreaResistance(-1.0), "r_area"),
    (lambda: Part("a.b", 1e-3), "name"),
    (lambda: Part("d", None), "footprint"),
    (lambda: Part("d", 1e-3, rth=1.0, foster=FOSTER), "rth"),
    (lambda: Assembly([Part("d", 1e-3)]), "stack"),
    (lambda: Assembly([Part("d", 1e-3, [Layer(CU, 1e-3)])] * 2), "unique"),
    (lambda: build(slab_assembly(), t_min=0.0), "t_min"),
    (lambda: build(slab_assembly(), spreading="cone"), "spreading"),
    (lambda: Film(-5.0), "h"),
    (lambda: LumpedSink(0.0), "resistance"),
])
def test_bad_input_names_the_field(make, field):
    with pytest.raises(StackupError, match=field):
        make()


def test_via_array_from_vias_module_sets_k_z_under_the_footprint():
    """0.30 mm drill, 25 µm plating, square pitch 0.6 mm in a 0.3 W/(m·K) laminate:
    k_z,eff 23.6 W/(m·K) (physics brief §7, common practice [deriv]).  In a 1-D column
    whose via field covers the footprint the laminate resistance is t/(k_z·A)."""
    from pulsetherm.network.vias import Via, ViaArray
    arr = ViaArray(Via(0.30e-3, 25e-6), pitch=0.6e-3, laminate=0.3)
    assert arr.k_z == pytest.approx(23.6, rel=0.01)
    lam = Material(name="lam-03", k=0.3, rho=1850.0, c=1150.0)
    mk = lambda v: build(Assembly([Part("d", 4e-3, [Layer(lam, 0.8e-3, vias=v)])]),  # noqa: E731
                         spreading="none").steady_resistance("d")
    assert mk(arr) == pytest.approx(0.8e-3 / (arr.k_z * 16e-6), rel=1e-9)
    assert mk(None) == pytest.approx(0.8e-3 / (0.3 * 16e-6), rel=1e-9)


def test_calibrated_path_starts_at_the_source_area():
    """Calibrated spreading uses the equivalent flow area of the exact series, which is the
    source area near the source: the early Zth of the copper plate is the semi-infinite
    surface-flux value, q0 = 1e6 W/m² giving 0.0304 / 0.3039 K at 1 / 100 µs (Carslaw &
    Jaeger 1959; physics brief §4 [deriv]), within 3 %; the ladder's cumulative resistance
    to the bottom face is the exact series of the plate over an isothermal plane."""
    from pulsetherm.network.spreading import circular_series
    asm = Assembly([Part("d", (1e-2, 1e-2), [Layer(CU, 3e-3, size=(5e-2, 5e-2))])],
                   mount=Mount(sink=FixedBase()))
    m = build(asm, spreading="calibrated")
    z = zth(m, "d", np.array([1e-6, 1e-4]))
    assert 1e6 * 1e-4 * z == pytest.approx([0.0304, 0.3039], rel=0.03)
    a, b = 1e-2 / math.sqrt(math.pi), 5e-2 / math.sqrt(math.pi)
    exact = circular_series(a, b, 390.0, 3e-3, math.inf).total
    assert m.steady_resistance("d") == pytest.approx(exact, rel=1e-6)
    res = m.network.steady({"d": 1.0})
    faces = m.columns["d"].layers[0].nodes
    drops = [res.T(f) for f in faces]
    assert np.all(np.diff(drops) < 0)
