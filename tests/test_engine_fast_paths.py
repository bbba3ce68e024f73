"""Fast paths of the whole periodic analysis against the plain ones (common practice, no
source: two ways of computing the same quantity must agree).

* The eigensolver of a chain (``modal._eigh``: LAPACK dstemr on the tridiagonal matrix in
  the order of the path, the network given in any node order, massless nodes condensed
  first) against scipy's dense ``eigh`` of the same matrix in path order (there dsyevr's
  Householder reduction is the identity, so both end in the same tridiagonal solve):
  eigenvalues to 1e-12 relative, eigenvectors orthonormal and with a small residual, on
  graded chains whose time constants span about 1e-7 .. 10 s; and the periodic peaks
  and minima of the whole analysis against the dense eigensolver.
* ``modal._path_order``: a tree with a branch, a loop and a single node.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg as sla

import pulsetherm.network.modal as modal
from pulsetherm.network.assemble import condense
from pulsetherm.network.model import ThermalNetwork
from pulsetherm.waveforms.canonical import Piecewise
from pulsetherm_test_systems import graded_chain  # tests/_systems.py, by conftest

WAVE = Piecewise([0.0, 1e-5, 1e-3], [0.1, 0.0])


def _graded(n: int, seed: int, order=None, massless: int | None = None) -> ThermalNetwork:
    """Chain c0 – c1 – … – c{n−1} – sink with time constants about 1e-7 .. 10 s (C from
    1e-9 to 1 J/K, random factors), nodes added in ``order`` (default: along the chain);
    node ``massless`` has no capacity."""
    rng = np.random.default_rng(seed)
    tau = np.logspace(-7, 1, n) * rng.uniform(0.7, 1.4, n)
    C = np.logspace(-9, 0, n) * rng.uniform(0.5, 2.0, n)
    g = C / tau
    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    for k in (range(n) if order is None else order):
        net.add_node(f"c{k}", capacity=0.0 if k == massless else C[k])
    for k in range(1, n):
        net.connect(f"c{k - 1}", f"c{k}", conductance=g[k])
    net.connect(f"c{n - 1}", "sink", conductance=g[0])
    net.add_input("die", nodes={"c0": 1.0})
    return net


def _dense_in_path_order(net: ThermalNetwork):
    """Eigenvalues and C-normalised modes of the network by dense eigh of the scaled
    matrix with its rows in chain order (c0, c1, …), modes returned in the system's order."""
    sys_ = net.system()
    cond = condense(sys_)
    names = [sys_.node_names[i] for i in cond.cap]
    path = np.argsort([int(v[1:]) for v in names])
    s = 1.0 / np.sqrt(cond.C)
    A = cond.G * s[None, :]
    A *= s[:, None]
    lam, Up = sla.eigh(A[np.ix_(path, path)])
    U = np.empty_like(Up)
    U[path] = Up
    return lam, U * s[:, None], cond


@pytest.mark.parametrize("seed", [1, 2, 3])
@pytest.mark.parametrize("shape", ["natural", "shuffled", "massless"])
def test_chain_eigenpairs_against_dense_eigh(seed, shape):
    n = 40
    rng = np.random.default_rng(100 + seed)
    order = rng.permutation(n) if shape != "natural" else None
    net = _graded(n, seed, order=order, massless=17 if shape == "massless" else None)
    solver = modal.ModalSolver(net.system())
    lam_ref, V_ref, cond = _dense_in_path_order(net)
    assert lam_ref.min() > 0 and lam_ref.max() / lam_ref.min() > 1e6     # stiff indeed
    np.testing.assert_allclose(solver.lam, lam_ref, rtol=1e-12, atol=0)
    # C-normalised: Vᵀ C V = I; residual of G v = λ C v relative to λ C v
    V = solver.V
    C = cond.C
    np.testing.assert_allclose(V.T @ (C[:, None] * V), np.eye(V.shape[1]), atol=1e-12)
    G = np.asarray(condense(net.system()).G)
    res = np.abs(G @ V - C[:, None] * V * solver.lam[None, :]).max(axis=0)
    scale = np.abs(C[:, None] * V * solver.lam[None, :]).max(axis=0)
    assert np.all(res <= 1e-10 * scale)
    # the same modes as the dense solve, up to sign
    sign = np.sign(np.sum(V * V_ref * C[:, None], axis=0))
    np.testing.assert_allclose(V * sign, V_ref, atol=1e-9 * np.abs(V_ref).max())


@pytest.mark.parametrize("seed", [4, 5])
@pytest.mark.parametrize("shape", ["natural", "shuffled", "massless"])
def test_chain_periodic_extremes_against_dense_eigh(seed, shape, monkeypatch):
    """Peaks and minima of the whole periodic analysis with the tridiagonal solve against
    the dense one, 1e-10 of the peak rise (the certified search's tolerance), at four
    probes along the chain."""
    n = 30
    order = np.random.default_rng(seed).permutation(n) if shape != "natural" else None
    probes = ["c0", "c3", "c12", "c29"]
    massless = 12 if shape == "massless" else None
    fast = _graded(n, seed, order=order, massless=massless).periodic({"die": WAVE},
                                                                      probes=probes)
    monkeypatch.setattr(modal, "_path_order", lambda rows, cols, n: None)
    plain = _graded(n, seed, order=None, massless=massless).periodic({"die": WAVE},
                                                                     probes=probes)
    scale = max(plain.peak(p) - 25.0 for p in probes)
    for p in probes:
        assert fast.peak(p) == pytest.approx(plain.peak(p), abs=1e-10 * scale), p
        assert fast.min(p) == pytest.approx(plain.min(p), abs=1e-10 * scale), p
        assert fast.mean(p) == pytest.approx(plain.mean(p), abs=1e-12 * scale), p


def _pattern(n: int, links) -> tuple[np.ndarray, np.ndarray]:
    r = list(range(n)) + [a for a, b in links] + [b for a, b in links]
    c = list(range(n)) + [b for a, b in links] + [a for a, b in links]
    return np.array(r), np.array(c)


def test_path_order_cases():
    # a shuffled path plus a separate pair: every link between neighbours of the order
    links = [(3, 0), (0, 4), (4, 1), (5, 2)]
    order = modal._path_order(*_pattern(6, links), 6)
    pos = np.empty(6, dtype=int)
    pos[order] = np.arange(6)
    assert sorted(order.tolist()) == list(range(6))
    assert all(abs(pos[a] - pos[b]) == 1 for a, b in links)
    # tridiagonal already: the identity marker
    assert modal._path_order(*_pattern(4, [(0, 1), (1, 2), (2, 3)]), 4) is modal._IDENTITY
    assert modal._path_order(*_pattern(1, []), 1) is modal._IDENTITY
    # a branch (node 1 has three neighbours) and a loop plus a path: no path order
    assert modal._path_order(*_pattern(4, [(0, 1), (1, 2), (1, 3)]), 4) is None
    assert modal._path_order(*_pattern(6, [(0, 1), (1, 2), (2, 0), (4, 5)]), 6) is None


def _random_tree(n: int, seed: int, window: int) -> ThermalNetwork:
    """Random tree whose node k joins one of the ``window`` nodes before it (half
    bandwidth ≤ window in node order), two boundaries."""
    rng = np.random.default_rng(seed)
    net = ThermalNetwork()
    net.add_boundary("b0", temperature=25.0)
    net.add_boundary("b1", temperature=70.0)
    for k in range(n):
        net.add_node(f"n{k}", capacity=10.0 ** rng.uniform(-6, 0))
        if k:
            net.connect(f"n{k}", f"n{int(rng.integers(max(0, k - window), k))}",
                        conductance=10.0 ** rng.uniform(-1, 1))
    net.connect(f"n{n - 1}", "b0", conductance=0.3)
    net.connect(f"n{n // 2}", "b1", conductance=2.0)
    net.add_input("p", nodes={"n0": 1.0, f"n{n // 3}": 2.0})
    return net


@pytest.mark.parametrize("n, window", [(40, 1), (40, 3), (200, 10), (60, 50), (300, 200)])
def test_static_field_banded_cholesky_against_dense_solve(n, window):
    """The static field through the banded Cholesky solve (narrow bands) or the dense and
    sparse paths (wide) against numpy's dense solve of G T = Gb T_b + B P, 1e-12 of the
    largest rise."""
    from pulsetherm.network.assemble import _banded_cholesky, static_field

    sys_ = _random_tree(n, n + window, window).system()
    G = sys_.G.toarray()
    kd = max(abs(i - j) for i, j in zip(*np.nonzero(G)))
    assert (_banded_cholesky(sys_.G) is not None) == (4 * kd <= n)
    P = np.array([3.0])
    got = static_field(sys_, P)
    want = np.linalg.solve(G, sys_.Gb.toarray() @ sys_.T_boundary + sys_.B.toarray() @ P)
    scale = np.abs(want - sys_.T_boundary.min()).max()
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-12 * scale)


def test_floating_groups_found_by_the_union_find():
    """Two floating groups (one a chain in scrambled order, one a single node) beside a
    cooled chain: named in node order, the cooled part has a static field."""
    from pulsetherm.network.assemble import floating_nodes, static_field

    net = ThermalNetwork()
    net.add_boundary("sink", temperature=20.0)
    for name in ["a2", "c0", "a0", "lone", "c1", "a1"]:
        net.add_node(name, capacity=1e-3)
    net.connect("a0", "a1", conductance=1.0)
    net.connect("a2", "a1", conductance=1.0)
    net.connect("c0", "c1", conductance=1.0)
    net.connect("c1", "sink", conductance=1.0)
    sys_ = net.system()
    assert floating_nodes(sys_) == [["a2", "a0", "a1"], ["lone"]]
    T = static_field(sys_, floating="nan") - 273.15
    ok = [sys_.index(v) for v in ("c0", "c1")]
    np.testing.assert_allclose(T[ok], 20.0, rtol=0, atol=1e-12)
    assert np.isnan(np.delete(T, ok)).all()


@pytest.mark.parametrize("seed", range(6))
def test_union_find_groups_against_csgraph(seed):
    """The union-find labels (runs of consecutive nodes joined at once, the other links one
    by one) give the groups of scipy's connected_components on random sparse graphs."""
    from scipy.sparse.csgraph import connected_components

    from pulsetherm.network.assemble import _free_roots

    rng = np.random.default_rng(seed)
    n = int(rng.integers(5, 60))
    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    for k in range(n):
        net.add_node(f"n{k}", capacity=1e-3)
    pairs = {tuple(sorted(rng.choice(n, 2, replace=False).tolist()))
             for _ in range(int(rng.integers(0, n)))}
    pairs |= {(k, k + 1) for k in range(n - 1) if rng.random() < 0.5}
    for a, b in sorted(pairs):
        net.connect(f"n{a}", f"n{b}", conductance=1.0)
    net.connect("n0", "sink", conductance=1.0)
    sys_ = net.system()
    roots = _free_roots(sys_)
    _, lab = connected_components(sys_.G, directed=False)
    # the same partition: a label is the smallest node of its group
    for g in np.unique(lab):
        members = np.flatnonzero(lab == g)
        assert np.all(roots[members] == members.min())


def test_eigh_of_a_sparse_matrix_with_repeated_entries():
    """A CSR conductance matrix of a chain whose diagonal entries are stored as two halves
    (a format scipy accepts and sums in its products): the same eigenpairs as its dense
    form, through the tridiagonal path."""
    import scipy.sparse as sp

    n = 12
    rng = np.random.default_rng(7)
    G = np.zeros((n, n))
    for k in range(n - 1):
        g = rng.uniform(0.5, 2.0)
        G[k, k] += g
        G[k + 1, k + 1] += g
        G[k, k + 1] -= g
        G[k + 1, k] -= g
    G[-1, -1] += 1.0
    indptr, indices, data = [0], [], []
    for i in range(n):
        cols = np.flatnonzero(G[i])
        reps = np.where(cols == i, 2, 1)        # the diagonal entry in two halves
        indices += list(np.repeat(cols, reps))
        data += list(np.repeat(G[i, cols] / reps, reps))
        indptr.append(len(indices))
    dup = sp.csr_matrix((np.array(data), np.array(indices), np.array(indptr)), shape=(n, n))
    assert not dup.has_canonical_format
    s = 1.0 / np.sqrt(rng.uniform(1e-3, 1.0, n))
    lam, U = modal._eigh(dup, s)
    A = G * s[None, :] * s[:, None]
    np.testing.assert_allclose(lam, sla.eigvalsh(A), rtol=1e-12)
    np.testing.assert_allclose(U.T @ U, np.eye(n), atol=1e-13)
    np.testing.assert_allclose(A @ U, U * lam[None, :], atol=1e-12 * lam.max())


@pytest.mark.skipif(np.finfo(np.longdouble).eps > 1e-18,
                    reason="needs an extended-precision long double for the reference")
def test_chain_slowest_eigenvalues_against_sturm_bisection():
    """The three slowest modes of a 300-node graded chain (time constants about 1 µs ..
    0.1 s, the benchmark's) to 1e-11 relative: the reference is bisection on the Sturm
    count of the tridiagonal matrix in extended precision (G. H. Golub and C. F. Van
    Loan, *Matrix Computations*, 4th ed., 2013, §8.4.1), itself within 3e-15 of a
    40-digit evaluation.  (Measured: the tridiagonal solve 2.4e-12, 3e-13, 1e-13, as
    scipy's dense eigh with eigenvectors; its eigenvalues-only driver, 2.2e-11, would
    fail.)"""
    n = 300
    net = graded_chain(n)
    solver = modal.ModalSolver(net.system())
    cond = condense(net.system())
    s = 1.0 / np.sqrt(cond.C)
    A = cond.G * s[None, :]
    A *= s[:, None]
    d = np.diagonal(A).astype(np.longdouble)
    e2 = np.diagonal(A, 1).astype(np.longdouble) ** 2

    def below(x):                       # eigenvalues below x: negative pivots of A − x I
        q = d[0] - x
        k = int(q < 0)
        for i in range(1, n):
            q = (d[i] - x) - e2[i - 1] / q
            k += int(q < 0)
        return k

    for j in range(3):
        lo = np.longdouble(solver.lam[j]) * (1 - np.longdouble(1e-8))
        hi = np.longdouble(solver.lam[j]) * (1 + np.longdouble(1e-8))
        assert below(lo) == j and below(hi) == j + 1
        for _ in range(60):
            mid = (lo + hi) / 2
            lo, hi = (lo, mid) if below(mid) > j else (mid, hi)
        ref = (lo + hi) / 2
        assert abs(float((np.longdouble(solver.lam[j]) - ref) / ref)) < 1e-11, j


# -- the refined extremes' root finder ---------------------------------------------------
def _modal_slope(rng, modes=12):
    """A closed-form slope f(x) = d0 + Σ a_i e^{−λ_i x} (+ ramp terms) with a sign change
    on a bracket, as _refine builds it: (f1 returning f, f', rounding bound; a, b)."""
    lam = 10 ** rng.uniform(1, 6, modes)
    A = rng.normal(size=modes) * 10 ** rng.uniform(-2, 2, modes)
    B = np.where(rng.random(modes) < 0.3, rng.normal(size=modes), 0.0)
    d0 = float(rng.normal())

    def f1(x):
        tot, dtot, mag = d0, float(B.sum()), abs(d0)
        for lm, ai, bi in zip(lam.tolist(), A.tolist(), B.tolist()):
            y = lm * x
            tm = ai * math.exp(-y) + (bi * (x * (-math.expm1(-y) / y)) if bi else 0.0)
            tot += tm
            dtot -= lm * tm
            mag += abs(tm)
        return tot, dtot, (modes + 1) * modal._EPS * mag

    xs = np.sort(10 ** rng.uniform(-7, -2, 40))
    fs = [f1(x)[0] for x in xs]
    for i in range(xs.size - 1):
        if fs[i] > 0 > fs[i + 1]:
            return f1, float(xs[i]), float(xs[i + 1])
    return None


def test_hermite_start_and_rounding_stop_find_the_same_roots():
    """The refinement's roots with the cubic Hermite start and the stop at the rounding
    floor of f equal those of the plain safeguarded Newton (secant start, step
    tolerance only) to 1e-12 of the bracket, on random modal slopes; the Hermite root of a
    cubic is its root (Burden and Faires, Numerical Analysis, 9th ed., 2011, §3.4)."""
    rng = np.random.default_rng(11)
    found = 0
    for _ in range(1000):
        case = _modal_slope(rng)
        if case is None:
            continue
        f1, a, b = case
        fa, da, _ = f1(a)
        fb, db, _ = f1(b)
        xtol = (b - a) * 1e-14
        plain = modal._rtsafe(lambda x: f1(x)[:2], a, b, fa, fb, xtol)
        fast = modal._rtsafe(f1, a, b, fa, fb, xtol, noise=True,
                             x0=modal._hermite_root(a, b, fa, fb, da, db))
        assert a < fast < b and abs(fast - plain) <= 1e-12 * (b - a), (a, b)
        found += 1
    assert found > 200
    # a cubic with a root at 0.3 in [0, 1]: its Hermite interpolant is itself
    p = np.polynomial.Polynomial.fromroots([0.3, 2.0, -1.5])   # + at 0, − at 1
    dp = p.deriv()
    x = modal._hermite_root(0.0, 1.0, p(0.0), p(1.0), dp(0.0), dp(1.0))
    assert abs(x - 0.3) < 1e-12


def test_a_rounding_floor_does_not_send_the_refinement_bisecting(monkeypatch):
    """The X-band example's pulse-width rows: a slope whose rounding floor (~1e-13 K/s)
    lay above the step tolerance made the Newton steps stop halving, and the safeguard
    bisected back from the far end of the bracket: 22-27 evaluations for one root at
    these widths.  With the stop at the rounding floor every root takes at most 8.  Common
    practice, no source."""
    from pathlib import Path

    from pulsetherm.network.scenario import load
    from pulsetherm.network.simulate import probe_figures

    counts = []
    real = modal._rtsafe

    def counted(fun, *args, **kw):
        n = [0]

        def f(x):
            n[0] += 1
            return fun(x)
        out = real(f, *args, **kw)
        counts.append(n[0])
        return out

    monkeypatch.setattr(modal, "_rtsafe", counted)
    scn = load(Path(__file__).resolve().parents[1] / "examples" / "xband_gan_coldplate.toml")
    for width in ("50.5 us", "63.5 us", "75.5 us", "85 us", "120.5 us"):   # 22-27 before
        probe_figures(scn.with_value("waveforms.radar.width", width))
    assert counts and max(counts) <= 8, counts
