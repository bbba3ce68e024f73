"""The fast paths and caches of the calibrated build give the numbers of the plain
computation, to the last bit where the plain one is the same arithmetic: the coupling
tables computed in one batch per run, the region below a run cached and summed in batches,
the recursion of several cut stacks run together, the depth series' per-stack set-up cached;
and no cache is stale when a layer changes (common practice, no source)."""
from __future__ import annotations

import math

import numpy as np
import pytest

from pulsetherm.network import builder as B
from pulsetherm.network import spreading as S
from pulsetherm.network.builder import build
from pulsetherm.network.stackup import Assembly, Board, FixedBase, Film, Layer, Mount, Part


def _clear_caches() -> None:
    B._BELOW_CACHE.clear()
    for f in (B._cross_terms_cached, B._run_alone, B._below_g_saturated, B._frustum_cached,
              S._depth_profile_cached, S._depth_modes):
        f.cache_clear()


def _flanged(t_flange: float, sink=None) -> Assembly:
    """A die and attach on a CuW flange of thickness ``t_flange`` on a 3-layer board."""
    part = Part("pa", (0.6e-3, 2.4e-3), [Layer("sic-4h", 100e-6, size=(1.2e-3, 3e-3)),
                                          Layer("ausn", 25e-6, size=(1.2e-3, 3e-3)),
                                          Layer("cuw-85-15", t_flange, size=(6e-3, 10e-3),
                                                name="flange"),
                                          Layer("sac305", 50e-6, size=(6e-3, 10e-3))])
    board = Board([Layer("pcb-copper", 35e-6, name="top"),
                   Layer("hydrocarbon-ceramic", 0.508e-3, name="lam"),
                   Layer("pcb-copper", 35e-6, name="bot")], size=(40e-3, 30e-3))
    return Assembly([part], board, Mount(interface=[Layer("thermal-grease", 50e-6)],
                                         sink=sink or FixedBase(40.0)))


def _numbers(bm) -> tuple[dict, dict]:
    g = bm.network.graph
    caps = {n: g.nodes[n]["capacity"] for n in g.nodes}
    edges = {tuple(sorted((a, b))): d["conductance"] for a, b, d in g.edges(data=True)}
    return caps, edges


def _random_cut_stacks(rng, n_run: int = 2):
    """A run of ``n_run`` layers over 1-4 layers below, cut at faces and inside layers."""
    n = n_run + int(rng.integers(1, 5))
    ks = list(10 ** rng.uniform(-0.5, 2.6, n))
    ts = list(10 ** rng.uniform(-4.7, -2.8, n))
    stacks = []
    for j in range(n_run, n):
        for f in (0.3, 1.0):
            stacks.append((ks[:j + 1], ts[:j] + [ts[j] * f]))
    return ks, ts, stacks


def test_cut_stacks_recursion_equals_each_stack_alone():
    """_phi_stacks runs the stacks of one column cut at several depths together; each row
    equals layer_phi of its own stack to the last bit, with and without a film."""
    rng = np.random.default_rng(21)
    for _ in range(20):
        _, _, stacks = _random_cut_stacks(rng)
        zeta = np.sort(10 ** rng.uniform(1, 5, 40))
        hs = [math.inf if rng.random() < 0.5 else float(10 ** rng.uniform(2, 5))
              for _ in stacks]
        arr = [(np.array(k), np.array(t)) for k, t in stacks]
        assert B._phi_cut_stacks(zeta, arr, hs) is not None
        got = B._phi_stacks(zeta, arr, hs)
        for q, (k, t) in enumerate(stacks):
            np.testing.assert_array_equal(got[q], S.layer_phi(zeta, k, t, hs[q]))


def test_cut_stacks_path_declines_other_stacks():
    """Stacks that are not one column cut at several depths take the grouped recursion
    (and still equal layer_phi of each stack)."""
    zeta = np.linspace(100.0, 1e4, 17)
    stacks = [(np.array([3.0, 20.0]), np.array([1e-4, 2e-4])),
              (np.array([3.0, 50.0]), np.array([1e-4, 2e-4]))]
    assert B._phi_cut_stacks(zeta, stacks, [math.inf, math.inf]) is None
    got = B._phi_stacks(zeta, stacks, math.inf)
    for q, (k, t) in enumerate(stacks):
        np.testing.assert_array_equal(got[q], S.layer_phi(zeta, k, t, math.inf))


def test_region_below_batched_equals_one_stack():
    """_below_gs (cached one by one, the missing stacks summed in one batch) equals
    _below_g of each stack computed alone to the last bit; a second call reads the cache
    and returns the same arrays."""
    rng = np.random.default_rng(5)
    b, b2 = 1.07e-3, 4.37e-3
    for _ in range(8):
        _, _, stacks = _random_cut_stacks(rng)
        lowers = [(tuple(k[2:]), tuple(t[2:]), math.inf if rng.random() < 0.7 else 3e3)
                  for k, t in stacks]
        B._BELOW_CACHE.clear()
        got = B._below_gs(b, b2, 32, lowers)
        for G, (kl, tl, h) in zip(got, lowers):
            np.testing.assert_array_equal(G, B._below_g(b, b2, 32, kl, tl, h))
            assert not G.flags.writeable
        again = B._below_gs(b, b2, 32, lowers)
        assert all(x is y for x, y in zip(got, again))


def test_region_below_cache_not_stale():
    """The cache of _below_gs is keyed on every layer, the film and the radii: a thicker
    first layer, another film or another radius gives the plain sum of that stack."""
    b, b2 = 1.07e-3, 4.37e-3
    kl, tl = (180.0, 60.0, 390.0), (1e-3, 5e-5, 35e-6)
    first = B._below_gs(b, b2, 32, [(kl, tl, math.inf)])[0]
    for kl2, tl2, h2, bb in [(kl, (1.2e-3,) + tl[1:], math.inf, b), (kl, tl, 2e3, b),
                             (kl, tl, math.inf, 1.2e-3)]:
        G = B._below_gs(bb, b2, 32, [(kl2, tl2, h2)])[0]
        np.testing.assert_array_equal(G, B._below_g(bb, b2, 32, kl2, tl2, h2))
        assert not np.array_equal(G, first)


def test_cross_terms_per_stack_film_equals_separate_calls():
    """One batch with a film per stack (the chain's stack over the sink with the cut
    stacks of the tables) equals the stacks of each film computed on their own."""
    rng = np.random.default_rng(8)
    ks, ts, stacks = _random_cut_stacks(rng)
    stacks = [(ks, ts)] + stacks
    hs = [2.5e3] + [math.inf] * (len(stacks) - 1)
    a, b, b2 = 0.7e-3, 1.07e-3, 4.37e-3
    got = B._cross_terms_uncached(a, b, b2, stacks, 2, hs)
    assert got[0] == B._cross_terms_uncached(a, b, b2, stacks[:1], 2, 2.5e3)[0]
    assert got[1:] == B._cross_terms_uncached(a, b, b2, stacks[1:], 2, math.inf)


def test_eager_coupling_tables_equal_lazy_ones():
    """depth_profile computes the coupling tables of every run in one batch with the
    chain's term; each equals the table _Profile._cross computes on first read, and the
    chain's term equals _cross_term of the stack over the sink."""
    asm = _flanged(1e-3, Film(h=3e3, ambient=30.0))
    segs = B._column_segments(asm.parts[0], asm, None, 45.0)
    prof = B.depth_profile(segs, asm.parts[0].footprint, asm.mount.sink)
    assert prof._cross_tab
    lazy = B._Profile(prof.a, prof.b, prof.ks, prof.ts, prof.top, prof.plate, prof.r_exact,
                      prof.r_stack, prof.runs)
    for (j, m), (zq, vals) in prof._cross_tab.items():
        lazy._cross(j, m, np.array([0.0]))
        zq2, vals2 = lazy._cross_tab[(j, m)]
        np.testing.assert_array_equal(zq, zq2)
        np.testing.assert_array_equal(vals, vals2)
    h = B._sink_h(asm.mount.sink, prof.plate[0] * prof.plate[1])
    for j, run in enumerate(prof.runs[:-1]):
        x = B._cross_term(run.a, run.b, prof.runs[j + 1].b, prof.ks[run.first:],
                          prof.ts[run.first:], run.last + 1 - run.first, h)
        assert run.cross == x


def test_depth_modes_cache_not_stale():
    """The depth series' set-up is cached per disk and layers: a thicker middle layer
    gives the series of that stack as a fresh process computes it, not the cached one
    (depths below it move)."""
    a, b = 0.4e-3, 2e-3
    ks = [370.0, 57.0, 190.0]
    z = np.array([50e-6, 110e-6, 400e-6, 0.9e-3])
    R1, dR1 = S.circular_depth_profile(a, b, ks, [100e-6, 25e-6, 1e-3], z)
    R2, dR2 = S.circular_depth_profile(a, b, ks, [100e-6, 40e-6, 1e-3], z)
    S._depth_modes.cache_clear()
    S._depth_profile_cached.cache_clear()
    R2f, dR2f = S.circular_depth_profile(a, b, ks, [100e-6, 40e-6, 1e-3], z)
    np.testing.assert_array_equal(R2, R2f)
    np.testing.assert_array_equal(dR2, dR2f)
    assert np.all(R1[2:] != R2[2:]) and np.all(dR1[2:] != dR2[2:])


@pytest.mark.parametrize("sink", [FixedBase(40.0), Film(h=3e3, ambient=30.0)])
def test_flange_sweep_networks_equal_fresh_builds(sink):
    """A flange-thickness sweep through warm caches builds, row by row, the network a
    fresh process builds (every cache cleared) to the last bit, and the first value again
    at the end gives its first network: no cache answers for another thickness."""
    thick = [0.8e-3, 1.1e-3, 0.55e-3, 0.8e-3]
    warm = [_numbers(build(_flanged(t, sink), spreading="calibrated")) for t in thick]
    assert warm[0] == warm[3]
    assert warm[0][1] != warm[1][1]
    for t, w in zip(thick[:3], warm):
        _clear_caches()
        assert _numbers(build(_flanged(t, sink), spreading="calibrated")) == w


def test_column_sublayers_equal_layer_by_layer():
    """_column_sublayers (every layer of a column in one pass) gives the conductances,
    capacities and face areas of _profile_sublayers layer by layer to the last bit, on
    columns with an area-resistance attach and a via field in the laminate."""
    from pulsetherm.network.stackup import AreaResistance
    from pulsetherm.network.vias import Via, ViaArray
    rng = np.random.default_rng(17)
    for _ in range(6):
        asm = _flanged(float(rng.uniform(0.4e-3, 1.5e-3)))
        part = asm.parts[0]
        stack = list(part.stack)
        if rng.random() < 0.5:
            stack[1] = AreaResistance(float(10 ** rng.uniform(-6, -5)), name="attach")
        lam = Layer("hydrocarbon-ceramic", float(rng.uniform(0.2e-3, 1.2e-3)), name="lam",
                    vias=ViaArray(Via(0.3e-3, 25e-6, fill="copper"), 0.6e-3, 0.6))
        board = Board([asm.board.layers[0], lam, asm.board.layers[2]], size=asm.board.size)
        asm = Assembly([Part("pa", part.footprint, stack)], board, asm.mount)
        segs = B._column_segments(asm.parts[0], asm, None, 45.0)
        xis = B._column_xis(segs, B.grading("normal"), float(10 ** rng.uniform(-7, -5)))
        prof = B.depth_profile(segs, asm.parts[0].footprint, asm.mount.sink,
                               lambda pr: B._profile_points(pr, segs, xis))
        fast = B._column_sublayers(prof, segs, xis)
        reads = iter(prof.readings)
        for si, (seg, xi) in enumerate(zip(segs, xis)):
            if fast[si] is None:
                next(reads)
                continue
            at = (next(reads), next(reads))
            plain = B._profile_sublayers(prof, seg, prof.top[si], xi * seg.thickness,
                                         B._via_field(seg), prof.ts[si] / seg.thickness, at)
            for x, y in zip(fast[si], plain):
                np.testing.assert_array_equal(x, y)


def _path(area, w0, l0, plate):
    """One face size: the w × l rectangle of ``area`` grown from w0 × l0 with both sides out
    by the same amount, capped by ``plate`` (the scalar form _Profile.paths vectorises)."""
    W, L = plate
    if area <= w0 * l0:
        f = math.sqrt(area / (w0 * l0))
        return w0 * f, l0 * f
    s = 0.5 * (-(w0 + l0) + math.sqrt((w0 - l0) ** 2 + 4.0 * area))
    w, l = w0 + s, l0 + s
    if w > W:
        w, l = W, min(area / W, L)
    elif l > L:
        w, l = min(area / L, W), L
    return w, l


def test_paths_equal_path_one_by_one():
    """_Profile.paths (the face sizes of a layer at once) equals the scalar form area by
    area to the last bit: inside the footprint, growing, capped by either side."""
    asm = _flanged(1e-3)
    segs = B._column_segments(asm.parts[0], asm, None, 45.0)
    prof = B.depth_profile(segs, asm.parts[0].footprint, asm.mount.sink)
    rng = np.random.default_rng(2)
    w0, l0 = 0.6e-3, 2.4e-3
    for plate in [(6e-3, 10e-3), (3e-3, 2.5e-3), (1e-3, 40e-3), (40e-3, 30e-3)]:
        areas = np.concatenate([10 ** rng.uniform(-7.5, -3.5, 60), [w0 * l0]])
        pw, pl = prof.paths(areas, w0, l0, plate)
        for a, x, y in zip(areas.tolist(), pw.tolist(), pl.tolist()):
            assert (x, y) == _path(a, w0, l0, plate)
    # a plate per area (the faces of a whole column at once)
    plates = [(6e-3, 10e-3), (3e-3, 2.5e-3), (1e-3, 40e-3), (40e-3, 30e-3)] * 10
    areas = 10 ** rng.uniform(-7.5, -3.5, len(plates))
    pw, pl = prof.paths(areas, w0, l0, (np.array([p[0] for p in plates]),
                                        np.array([p[1] for p in plates])))
    for a, pt, x, y in zip(areas.tolist(), plates, pw.tolist(), pl.tolist()):
        assert (x, y) == _path(a, w0, l0, pt)


@pytest.mark.parametrize("args, match", [
    ((1e-3, 2e-3, [1.0, -2.0], [1e-3, 1e-3]), r"k\[1\]"),
    ((1e-3, 2e-3, [1.0, 2.0], [1e-3, float("nan")]), r"t\[1\]"),
    ((3e-3, 2e-3, 1.0, 1e-3), "a = "),
    ((1e-3, 2e-3, [1.0, 2.0], [1e-3]), "one conductivity per layer"),
])
def test_series_checks_kept_on_the_fast_path(args, match):
    """circular_series and circular_depth_profile skip the per-number checks only for
    finite positive floats: anything else still raises the message naming the field."""
    with pytest.raises(S.SpreadingError, match=match):
        S.circular_series(*args, math.inf)
    with pytest.raises(S.SpreadingError, match=match):
        S.circular_depth_profile(*args, np.array([0.5e-3]))


@pytest.mark.parametrize("spreading", ["calibrated", "angle"])
def test_face_names_clash_named_on_both_paths(spreading):
    """A part layer named like a board layer's column name clashes; the faces created a
    layer at once (calibrated) name the node as the one-by-one path does."""
    from pulsetherm.network.stackup import StackupError
    part = Part("pa", (1e-3, 1e-3), [Layer("sic-4h", 100e-6, size=2e-3, name="board-top"),
                                     Layer("cuw-85-15", 1e-3, size=5e-3, name="f")])
    board = Board([Layer("pcb-copper", 35e-6, name="top"),
                   Layer("fr4-class", 0.5e-3, name="lam")], size=(40e-3, 40e-3))
    with pytest.raises(StackupError, match=r"node 'pa\.board-top\.1' defined twice"):
        build(Assembly([part], board, Mount(sink=FixedBase(25.0))), spreading=spreading)
