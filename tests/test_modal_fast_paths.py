"""Fast paths of the exact modal solver against its general paths (common practice, no
source: two ways of computing the same closed form must agree).

* ``ModalSolver._seg_states`` without ramps (every slope 0: ψ₀ from expm1 alone) against
  the general ψ₀/ψ₁ tables of ``_phis``;
* the certified extremes of ``modal_bounds.certify`` through the fused first level (a few
  segments: every interval bounded for every probe at once, then open intervals cut in
  quarters), through the fused level over the segments that whole-segment bounds leave
  open (longer waveforms), and through the per-candidate path (whole segments, then
  per-candidate sample intervals), with the sample-based refinement switched off so that
  the search alone has to find every extreme, and against a 2000-point grid per segment.
"""
from __future__ import annotations

import numpy as np
import pytest

import pulsetherm.network.modal as modal
import pulsetherm.network.modal_bounds as mb
from pulsetherm.network.model import ThermalNetwork
from pulsetherm.waveforms.canonical import Piecewise

from pulsetherm_test_systems import graded_chain  # tests/_systems.py, by conftest
from tests.test_engine_properties import assert_same_extremes, random_net

PULSE_A = Piecewise([0.0, 1e-4, 1e-3], [10.0, 0.0])
PULSE_B = Piecewise([0.0, 2e-4, 1.5e-3], [4.0, 1.0], slope=[2e4, 0.0])
PULSE_C = Piecewise([0.0, 3e-5, 4e-4, 5e-4], [6.0, 0.5, 0.0])      # levels only
PULSE_D = Piecewise([0.0, 5e-5, 1e-3], [10.0, 0.0])


def _solver(net: ThermalNetwork) -> modal.ModalSolver:
    return modal.ModalSolver(net.system())


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_seg_states_without_ramps_matches_general_tables(seed):
    """q, q', q'' at offsets from 0 to 10⁴ time constants (λs across the 0.1 series switch
    of g_k): the no-ramp path against e^{−λs} q₀ + ψ₀ Wa from ``_phis``, relative 1e-13 of
    the largest term."""
    rng = np.random.default_rng(seed)
    net = random_net(9, seed)
    sol = _solver(net)
    lam = sol.lam
    tau = 1.0 / lam.max()
    s = np.concatenate([[0.0], tau * 10.0 ** rng.uniform(-6, 4, 40)])
    c = s.size
    q0s = rng.normal(size=(lam.size, c))
    lvl = rng.uniform(-2.0, 5.0, size=(c, sol.W.shape[1]))
    slp = np.zeros_like(lvl)
    q, dq, cq = sol._seg_states(q0s, s, lvl, slp)
    e, p0, _ = modal._phis(lam[:, None], s[None, :], 1)
    Wa = sol.W @ lvl.T
    q_ref = e * q0s + p0 * Wa
    dq_ref = -lam[:, None] * q_ref + Wa
    cq_ref = -lam[:, None] * dq_ref
    for got, ref, size in ((q, q_ref, np.abs(q0s) + np.abs(p0 * Wa)),
                           (dq, dq_ref, lam[:, None] * (np.abs(q0s) + np.abs(p0 * Wa))
                            + np.abs(Wa)),
                           (cq, cq_ref, lam[:, None] ** 2 * (np.abs(q0s) + np.abs(p0 * Wa))
                            + lam[:, None] * np.abs(Wa))):
        assert np.all(np.abs(got - ref) <= 1e-13 * size), np.max(np.abs(got - ref) / size)
    # a ramp anywhere takes the general path (ψ₁ enters)
    slp[3] = 1e3
    q2, _, _ = sol._seg_states(q0s, s, lvl, slp)
    e, p0, p1 = modal._phis(lam[:, None], s[None, :], 1)
    assert np.allclose(q2, e * q0s + p0 * Wa + p1 * (sol.W @ slp.T), rtol=1e-13, atol=0)


def _cases():
    rng = np.random.default_rng(2024)
    out = []
    for i in range(10):
        n, seed = int(rng.integers(3, 13)), int(rng.integers(0, 2**31 - 1))
        wf = {"a": PULSE_A, "b": PULSE_B} if i % 2 == 0 else {"a": PULSE_A, "b": PULSE_C}
        out.append((lambda n=n, seed=seed: random_net(n, seed), wf, None))
    out.append((lambda: random_net(9, 133825), {"a": PULSE_A, "b": PULSE_B}, None))
    out.append((lambda: graded_chain(30), {"die": Piecewise([0.0, 10e-6, 1e-3], [20.0, 0.0])},
                [f"c{k}" for k in range(0, 30, 3)]))
    return out


@pytest.mark.parametrize("case", range(12))
def test_fused_search_alone_finds_every_extreme(case, monkeypatch):
    """With the sample-based refinement off, the certified search alone must reach every
    peak and minimum: no closed-form value on a 2000-point grid per segment above the
    fused path's peak (below its minimum) by more than 1e-10 of the largest rise, and the
    three paths (fused over all segments, fused over the open segments, per candidate)
    equal to 1e-10 of it."""
    make, wf, probes = _cases()[case]
    monkeypatch.setattr(modal.ModalSolver, "_refine", lambda self, t, v, *a, **k: (t, v))
    used = []
    fused = mb._fused_level
    monkeypatch.setattr(mb, "_fused_level", lambda *a: used.append(1) or fused(*a))
    net = make()
    probes = probes or net.nodes
    res = net.periodic(wf, probes=probes)
    assert used, "the fused first level was not taken"
    monkeypatch.setattr(mb, "FUSED_SEGMENTS", -1)      # whole segments, then fused on the open
    used.clear()
    opened = []
    coarse = mb._coarse
    monkeypatch.setattr(mb, "_coarse", lambda *a, **k: opened.append(coarse(*a, **k))
                        or opened[-1])
    sub = make().periodic(wf, probes=probes)
    # the fused level over the open segments is taken whenever any segment stays open
    assert bool(used) == any(x is not None for x in opened)
    monkeypatch.setattr(mb, "FUSED_ELEMENTS", 0)       # per candidate
    used.clear()
    gen = make().periodic(wf, probes=probes)
    assert not used
    _bounds_grid_and_matches(make, net, wf, probes, res, (sub, gen))


def _bounds_grid_and_matches(make, net, wf, probes, res, others):
    """``res``'s peaks and minima are not exceeded by a 2000-point grid per segment of the
    closed form (on ``net``) and equal every response of ``others``, to 1e-10 of the
    largest rise (common practice, no source)."""
    zero = make().periodic({k: 0.0 for k in wf}, probes=probes)
    scale = max(max(abs(res.peak(p) - zero.peak(p)), abs(res.min(p) - zero.peak(p)))
                for p in probes)
    net.configure_solver("modal", linear_points=2000)
    fine = net.periodic(wf, probes=probes)
    for p in probes:
        assert fine.T(p).max() <= res.peak(p) + 1e-10 * scale, p
        assert fine.T(p).min() >= res.min(p) - 1e-10 * scale, p
        for other in others:
            assert abs(other.peak(p) - res.peak(p)) <= 1e-10 * scale, p
            assert abs(other.min(p) - res.min(p)) <= 1e-10 * scale, p


def test_fused_search_in_small_passes(monkeypatch):
    """The fused first level's open intervals handed on a few at a time (the memory bound
    of large networks, forced with a small pass size) give the same certified extremes,
    with the refinement off so that the search does all the work (common practice, no
    source)."""
    make, wf, probes = _cases()[-1]
    monkeypatch.setattr(modal.ModalSolver, "_refine", lambda self, t, v, *a, **k: (t, v))
    whole = make().periodic(wf, probes=probes)
    monkeypatch.setattr(mb, "CHUNK_ELEMENTS", 30 * 5)              # 5 candidates a pass
    parts = make().periodic(wf, probes=probes)
    assert_same_extremes(parts, whole, probes)


def test_fused_level_without_the_lines_on_a_repeated_solve(monkeypatch):
    """When the whole-segment lines left segments open at the solver's last call with the
    same probes, the next solve goes straight to the fused level with every slot open: the
    certified extremes of a second waveform on that network equal those of a fresh network
    (lines first), the refinement off (common practice, no source)."""
    monkeypatch.setattr(modal.ModalSolver, "_refine", lambda self, t, v, *a, **k: (t, v))
    probes = [f"c{k}" for k in range(0, 30, 3)]
    first = {"die": Piecewise([0.0, 10e-6, 1e-3], [20.0, 0.0])}
    second = {"die": Piecewise([0.0, 25e-6, 1e-3], [12.0, 1.0])}
    net = graded_chain(30)
    net.periodic(first, probes=probes)
    solver = net._solver("modal")
    assert solver._lines_open[1]                      # the lines left segments open
    lines = []
    coarse = mb._coarse
    monkeypatch.setattr(mb, "_coarse", lambda *a, **k: lines.append(1) or coarse(*a, **k))
    again = net.periodic(second, probes=probes)
    assert not lines                                  # straight to the fused level
    fresh = graded_chain(30).periodic(second, probes=probes)
    assert lines
    scale = max(fresh.peak(p) - 25.0 for p in probes)
    for p in probes:
        assert again.peak(p) == pytest.approx(fresh.peak(p), abs=1e-10 * scale), p
        assert again.min(p) == pytest.approx(fresh.min(p), abs=1e-10 * scale), p



def _piece_cases():
    """Networks and waveforms whose fused first level leaves convex intervals open with
    the refinement off (the fused second level's work): every node of random networks and
    of graded chains as a probe (slow nodes: slopes of nearly cancelling modal terms)."""
    chain_waves = [Piecewise([0.0, 10e-6, 1e-3], [20.0, 0.0]),
                   Piecewise([0.0, 60e-6, 1e-3], [20.0, 0.0]),
                   Piecewise([0.0, 20e-6, 5e-5, 4e-4], [20.0, 5.0, 0.0])]
    out = [(lambda n=n, seed=seed: random_net(n, seed), wf, None)
           for n, seed, wf in ((15, 1342382291, {"a": PULSE_A, "b": PULSE_B}),
                               (15, 955794088, {"a": PULSE_A, "b": PULSE_C}),
                               (10, 1665772334, {"a": PULSE_D, "b": 0.0}),
                               (13, 1969602794, {"a": PULSE_A, "b": PULSE_B}))]
    out += [(lambda: graded_chain(20), {"die": w}, None) for w in chain_waves]
    return out + [_cases()[8], _cases()[11]]


@pytest.mark.parametrize("case", range(9))
def test_fused_pieces_against_the_general_search(case, monkeypatch):
    """The fused second level (open intervals of the fused first level cut in quarters,
    every piece bounded for its slots by matrix products) against the general search
    (``FUSED_PIECES`` off: descend and search cut and bound candidate by candidate), with
    the sample-based refinement off so that the search has to find every extreme: equal
    peaks and minima to 1e-10 of the largest rise, none above (below) the closed form on
    a 2000-point grid per segment by more than that (common practice, no source)."""
    make, wf, probes = _piece_cases()[case]
    monkeypatch.setattr(modal.ModalSolver, "_refine", lambda self, t, v, *a, **k: (t, v))
    seen = []
    pieces = mb._fused_pieces
    monkeypatch.setattr(mb, "_fused_pieces", lambda *a: seen.append(pieces(*a)) or seen[-1])
    net = make()
    probes = probes or net.nodes
    res = net.periodic(wf, probes=probes)
    assert seen, "the fused second level was not taken"
    assert all(x is not False for x in seen)
    monkeypatch.setattr(mb, "FUSED_PIECES", False)
    seen.clear()
    gen = make().periodic(wf, probes=probes)
    assert not seen
    _bounds_grid_and_matches(make, net, wf, probes, res, (gen,))


def test_fused_pieces_on_the_xband_pulse_width_rows(monkeypatch):
    """The X-band example's pulse-width rows (the sweep the fused second level is for: its
    slow flange probe leaves a few wide off-pulse intervals open after the first level,
    which one level of quarters clears), refinement on as in a sweep: the certified peaks
    and minima with and without the fused second level equal to 1e-10 of the largest rise
    (common practice, no source)."""
    from pathlib import Path

    from pulsetherm.network.scenario import load
    from pulsetherm.network.simulate import probe_figures

    seen = []
    pieces = mb._fused_pieces
    monkeypatch.setattr(mb, "_fused_pieces", lambda *a: seen.append(pieces(*a)) or seen[-1])
    examples = Path(__file__).resolve().parents[1] / "examples"
    scn = load(examples / "xband_gan_coldplate.toml")
    for width in ("50.5 us", "77.3 us", "120.5 us", "149.9 us"):
        row = scn.with_value("waveforms.radar.width", width)
        monkeypatch.setattr(mb, "FUSED_PIECES", True)
        seen.clear()
        _, res, _ = probe_figures(row)
        assert seen and all(x is not False for x in seen), width
        monkeypatch.setattr(mb, "FUSED_PIECES", False)
        _, gen, _ = probe_figures(row)
        scale = max(gen.peak(p) - gen.min(p) for p in gen.probes)
        for p in gen.probes:
            assert abs(res.peak(p) - gen.peak(p)) <= 1e-10 * scale, (width, p)
            assert abs(res.min(p) - gen.min(p)) <= 1e-10 * scale, (width, p)


def test_fused_pieces_declined_takes_the_general_search(monkeypatch):
    """When the fused second level declines (slots x pieces over ``PIECES_ELEMENTS``, here
    0), the open intervals go to the general search with nothing lost: the same certified
    extremes as the fused second level, refinement off (common practice, no source)."""
    make, wf, probes = _piece_cases()[4]
    monkeypatch.setattr(modal.ModalSolver, "_refine", lambda self, t, v, *a, **k: (t, v))
    probes = probes or make().nodes
    fused = make().periodic(wf, probes=probes)
    seen = []
    pieces = mb._fused_pieces
    monkeypatch.setattr(mb, "_fused_pieces", lambda *a: seen.append(pieces(*a)) or seen[-1])
    monkeypatch.setattr(mb, "PIECES_ELEMENTS", 0)
    declined = make().periodic(wf, probes=probes)
    assert seen and all(x is False for x in seen)
    assert_same_extremes(declined, fused, probes)
