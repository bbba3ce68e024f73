"""Calibrated spreading honours the lateral size of every layer (runs of one size, each on its
own plate): a smaller flange runs hotter, the ladder follows the axisymmetric r-z mesh for a
die on a flange narrower than the board, and a thin copper plane on laminate spreads like a
fin."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import k0, k1

from pulsetherm.network.axisym import build_axisym, compare
from pulsetherm.network.builder import _column_segments, build, depth_profile
from pulsetherm.network.stackup import Assembly, Board, FixedBase, Layer, Mount, Part

CU_T, LAM_T = 35e-6, 0.508e-3


def _flanged(flange: float) -> Assembly:
    """1×1 mm heated area on a 2 mm SiC die and attach, a 1 mm CuW flange of side
    ``flange``, a 40 × 40 mm board (copper plane, laminate, copper) on a fixed base."""
    part = Part("pa", (1e-3, 1e-3), [Layer("sic-4h", 100e-6, size=2e-3),
                                      Layer("ausn", 25e-6, size=2e-3),
                                      Layer("cuw-85-15", 1e-3, size=flange, name="flange")])
    board = Board([Layer("pcb-copper", CU_T, name="top"),
                   Layer("fr4-class", LAM_T, name="lam"),
                   Layer("pcb-copper", CU_T, name="bot")], size=(40e-3, 40e-3))
    return Assembly([part], board, Mount(sink=FixedBase(25.0)))


def _plane(src: float) -> Assembly:
    """A ``src`` × ``src`` source straight on a 35 µm copper plane over 0.508 mm laminate,
    40 × 40 mm, fixed base."""
    board = Board([Layer("pcb-copper", CU_T, name="plane"),
                   Layer("fr4-class", LAM_T, name="lam")], size=(40e-3, 40e-3))
    return Assembly([Part("p", (src, src), [])], board, Mount(sink=FixedBase(25.0)))


def test_smaller_flange_runs_hotter():
    """Common practice, no source: a narrower flange spreads the heat over less laminate, so
    the junction runs hotter (measured 4.54 / 7.87 / 17.3 K/W for 30 / 10 / 3 mm; before the
    runs every flange gave 4.0688 K/W)."""
    r = [build(_flanged(f), spreading="calibrated").steady_resistance()
         for f in (30e-3, 10e-3, 3e-3)]
    assert r[0] < r[1] < r[2]
    assert r[2] > 3.0 * r[0]


def test_runs_split_by_lateral_size():
    """The column is cut where the lateral size changes: die (+ attach), flange, board."""
    asm = _flanged(10e-3)
    segs = _column_segments(asm.parts[0], asm, None, 45.0)
    prof = depth_profile(segs, asm.parts[0].footprint, asm.mount.sink)
    assert [(r.first, r.last) for r in prof.runs] == [(0, 1), (2, 2), (3, 5)]
    # heat enters each run through the whole base of the narrower run above
    assert prof.runs[1].a == pytest.approx(prof.runs[0].b)
    assert prof.runs[2].a == pytest.approx(prof.runs[1].b)
    # the cut profile is continuous across run boundaries and ends on the exact chain
    zb = [prof.top[r.first] for r in prof.runs[1:]]
    for z in zb:
        lo, _ = prof(np.array([z * (1 - 1e-9)]))
        at, _ = prof(np.array([z]))
        hi, _ = prof(np.array([z * (1 + 1e-9)]))
        assert hi[0] == pytest.approx(at[0], rel=1e-5)
        assert lo[0] == pytest.approx(at[0], rel=1e-5)
    assert prof.r_stack == pytest.approx(prof.r_exact, rel=1e-6)


@pytest.mark.parametrize("flange", [3e-3, 10e-3, 30e-3])
def test_flange_on_board_against_rz_mesh(flange):
    """Axisymmetric r-z finite volumes (network/axisym.py; Patankar 1980, ch. 4), same
    stack: steady within 10 % (measured −1.7 % / −1.0 % / −0.9 % for 3 / 10 / 30 mm on
    this coarse grid, −0.3 / −0.2 / −0.3 % on the default one; +6.3 / +5.9 / +0.6 % before
    the coupled flange-board interface and the laminate's in-plane conductivity entered
    the series, and +10 / +12 / +2 % against a refined grid); Zth from 1e-4 s to 100 s
    within 25 % (measured worst 5 / 9 / 15 %, the flange rim filling through three rings;
    without them 30 / 79 / 29 %)."""
    c = compare(build(_flanged(flange), spreading="calibrated", t_min=1e-4),
                t=np.logspace(-4, 2, 13), t_min=1e-4, radial_cells=8)
    assert abs(c.steady_difference) < 0.10, c.summary()
    assert c.max_zth_difference < 0.25, c.summary()


@pytest.mark.parametrize("src", [1e-3, 3e-3, 6e-3])
def test_copper_plane_on_laminate_spreads_like_a_fin(src):
    """Thin copper plane (k t) over laminate (film k_lam/t_lam under it), isothermal disk of
    the source's area, infinite plane: R = 1/[πa²h + 2πa·(k t/L)·K1(a/L)/K0(a/L)],
    L = √(k t/h) ≈ 4.8 mm (the fin of an infinite plate with base conduction, e.g.
    Incropera & DeWitt, *Fundamentals of Heat and Mass Transfer*, infinite-fin forms;
    common practice).  Calibrated ladder within 25 % of it (measured +10 / +16 / +21 %, the
    mean over an isoflux source lies above an isothermal one) and within 10 % of the r-z
    mesh (measured −1.1 / −0.7 / −0.7 %); the 45° frustum gives 759 / 135 / 39 K/W."""
    a = src / math.sqrt(math.pi)
    kt, h = 390.0 * CU_T, 0.3 / LAM_T
    L = math.sqrt(kt / h)
    fin = 1.0 / (math.pi * a * a * h + 2 * math.pi * a * kt / L * k1(a / L) / k0(a / L))
    r = build(_plane(src), spreading="calibrated").steady_resistance()
    assert r == pytest.approx(fin, rel=0.25)
    rz = build_axisym(_plane(src), t_min=1e-4, radial_cells=8).steady_resistance()
    assert r == pytest.approx(rz, rel=0.10)


def test_cross_terms_batched_equal_one_at_a_time():
    """The coupling term of one run over several cut depths (builder._cross_terms: the run
    alone computed once, the wide modes every stack sees alike summed once, the solves
    stacked) equals the term of each stack computed alone, to rounding (common practice,
    no source)."""
    from pulsetherm.network.builder import _cross_terms_uncached
    rng = np.random.default_rng(3)
    for _ in range(6):
        run_k = list(10 ** rng.uniform(0, 2.6, 2))
        run_t = list(10 ** rng.uniform(-4.5, -3, 2))
        below_k = list(10 ** rng.uniform(-0.5, 2.6, 3))
        below_t = list(10 ** rng.uniform(-4.5, -3, 3))
        stacks = [(run_k + below_k[:m], run_t + below_t[:m - 1] + [below_t[m - 1] * f])
                  for m in (1, 2, 3) for f in (0.3, 1.0)]
        b = float(rng.uniform(1e-3, 3e-3))
        b2 = b * float(rng.uniform(1.5, 5.0))
        a = b * float(rng.uniform(0.2, 0.9))
        batch = _cross_terms_uncached(a, b, b2, stacks, 2, math.inf)
        alone = [_cross_terms_uncached(a, b, b2, [s], 2, math.inf)[0] for s in stacks]
        np.testing.assert_allclose(batch, alone, rtol=1e-11, atol=1e-14)
        assert all(math.isfinite(x) for x in batch)


def test_calibrated_angles_found_on_first_read():
    """A calibrated layer's equivalent angle is found when first read (a sweep row never
    reads it): the same number on every read and in every build of the same stack, in
    [0, 89] degrees (common practice, no source)."""
    first = build(_flanged(10e-3), spreading="calibrated")
    build(_flanged(3e-3), spreading="calibrated")  # another stack in between
    again = build(_flanged(10e-3), spreading="calibrated")
    a1 = [lay.angle for lay in first.columns["pa"].layers]
    assert [lay.angle for lay in first.columns["pa"].layers] == a1
    assert [lay.angle for lay in again.columns["pa"].layers] == a1
    assert all(a is None or 0.0 <= a <= 89.0 for a in a1)
    assert any(a is not None and 0.0 < a < 89.0 for a in a1)
    assert first.columns["pa"].layers == again.columns["pa"].layers


def test_region_below_run_equals_plain_sum():
    """builder._below_g (the wide modes a thick first layer saturates summed apart, the
    rest mode by mode; cached) equals G = Σ_k Z'_k I_kn I_km / N'_k + Z'_0 summed over every
    wide mode at once, for thin and thick first layers below the run (common practice, no
    source)."""
    from pulsetherm.network.builder import _below_g, _cross_kernel
    from pulsetherm.network.spreading import _phi
    b, b2 = 1.1e-3, 4.4e-3
    d, d2, j0lam, inv_n, I, inv_k = _cross_kernel(b, b2, 32)
    for kl, tl in [((180.0, 60.0), (1e-3, 5e-5)), ((390.0, 0.7), (35e-6, 5e-4)),
                   ((180.0,), (2e-5,)), ((20.0, 390.0, 3.0), (3e-3, 1e-4, 5e-5))]:
        w = _phi(d2, np.array(kl), np.array(tl), math.inf) / (kl[0] * d2) * inv_k
        ref = I.T @ (I * w[:, None])
        ref[0, 0] += sum(t / k for k, t in zip(kl, tl)) * (0.5 * b * b) ** 2 / (0.5 * b2 * b2)
        np.testing.assert_allclose(_below_g(b, b2, 32, kl, tl, math.inf), ref, rtol=1e-12,
                                   atol=1e-12 * np.abs(ref).max())
