"""Assembly of a network graph into a :class:`ThermalSystem`, static condensation of massless
nodes, and the static (steady) field.

Energy balance at the free nodes (absolute K)::

    C · dT/dt + G · T = Gb · T_b + B · P(t)

Massless nodes (C = 0) are eliminated exactly by static condensation (Schur complement).
Split the free nodes into capacitive (c) and massless (m) ones; the massless rows are
algebraic, ``0 = Gb_m T_b + B_m P − G_mc T_c − G_mm T_m``, so

    T_m = −K T_c + M_b T_b + M_p P,   K = G_mm⁻¹ G_mc, M_b = G_mm⁻¹ Gb_m, M_p = G_mm⁻¹ B_m

and the capacitive rows become a proper ODE with the Schur complements

    C_c dT_c/dt + (G_cc − G_cm K) T_c = (Gb_c − G_cm M_b) T_b + (B_c − G_cm M_p) P.

The relation is instantaneous, so the reconstruction of T_m is exact for any P(t), in
particular piecewise-linear power.  (Guyan, "Reduction of stiffness and mass matrices",
AIAA J. 3(2), 1965: static condensation of massless degrees of freedom.)
"""
from __future__ import annotations

import weakref
from dataclasses import dataclass
from functools import cached_property

import numpy as np
import scipy.sparse as sp
import scipy.linalg as sla

from .graph import Graph
from .system import KELVIN_OFFSET, ThermalSystem

__all__ = ["NetworkError", "assemble", "Condensed", "condense", "floating_nodes",
           "static_field"]


class NetworkError(ValueError):
    """Invalid thermal network; the message names the offending nodes and what is expected."""


def _names(items, limit: int = 8) -> str:
    items = [str(x) for x in items]
    more = f", ... ({len(items)} in all)" if len(items) > limit else ""
    return ", ".join(repr(x) for x in items[:limit]) + more


def assemble(graph, inputs: dict) -> ThermalSystem:
    """Build the :class:`ThermalSystem` of a network graph.

    Parameters
    ----------
    graph
        :class:`~pulsetherm.network.graph.Graph` (or a networkx graph).  Node attributes
        ``capacity`` (J/K), ``label``, ``boundary`` (bool) and, for
        boundaries, ``temperature_K``; edge attribute ``branches``: list of
        ``(g W/K, a, Tref K)`` (parallel connections between one pair add).
    inputs
        name -> object with ``weights`` (dict node -> weight summing to 1), ``temp_coeff``
        (1/K) and ``t_ref_K``.

    Raises
    ------
    NetworkError
        No free node; a massless group with no link to a capacitive node or a boundary.
    """
    free, bnds, C, labels, T_b = [], [], [], [], []
    for v, d in graph.nodes(data=True):
        if d["boundary"]:
            bnds.append(v)
            T_b.append(d["temperature_K"])
        else:
            free.append(v)
            C.append(d["capacity"])
            labels.append(d["label"])
    if not free:
        raise NetworkError("the network has no free (non-boundary) node: add_node(...) first")
    n, nb = len(free), len(bnds)
    index = dict(zip(free, range(n)))
    index.update(zip(bnds, range(n, n + nb)))
    C = np.array(C, dtype=np.float64)
    labels = tuple(map(str, labels))
    T_b = np.array(T_b, dtype=np.float64)

    # one row per branch: (end, end, g, a, Tref); ends as float64 rows, exact below 2^53
    flat = []
    for u, v, d in _edge_items(graph):
        iu, iv = index[u], index[v]
        for g, a, tref in d["branches"]:
            flat += (iu, iv, g, a, tref)
    table = np.array(flat, dtype=np.float64).reshape(-1, 5)
    ends = table[:, :2].astype(np.int64)
    edge_i = ends.min(axis=1)
    edge_j = ends.max(axis=1)
    edge_g = table[:, 2].copy()
    ea, er = table[:, 3].copy(), table[:, 4].copy()

    # Free-free conductances: off-diagonal -g, both diagonals +g.  Free-boundary ones: the
    # free diagonal +g and Gb[i, b] = g.
    ff = edge_j < n
    fb = ~ff
    rows = np.concatenate([edge_i[ff], edge_j[ff], edge_i[ff], edge_j[ff], edge_i[fb]])
    cols = np.concatenate([edge_j[ff], edge_i[ff], edge_i[ff], edge_j[ff], edge_i[fb]])
    vals = np.concatenate([-edge_g[ff], -edge_g[ff], edge_g[ff], edge_g[ff], edge_g[fb]])
    G = _csr(vals, rows, cols, (n, n))
    Gb = _csr(edge_g[fb], edge_i[fb], edge_j[fb] - n, (n, nb))

    names = tuple(inputs)
    bi, bj, bv = [], [], []
    for j, name in enumerate(names):
        for node, w in inputs[name].weights.items():
            bi.append(index[node])
            bj.append(j)
            bv.append(w)
    B = _csr(np.array(bv, dtype=np.float64), np.array(bi, dtype=np.int64),
             np.array(bj, dtype=np.int64), (n, len(names)))
    input_tc = np.array([inputs[k].temp_coeff for k in names], dtype=np.float64)
    input_Tref = np.array([inputs[k].t_ref_K for k in names], dtype=np.float64)

    system = ThermalSystem(
        node_names=tuple(map(str, free)), labels=labels, C=C, G=G, Gb=Gb,
        boundary_names=tuple(map(str, bnds)), T_boundary=T_b, B=B, input_names=names,
        edge_i=edge_i, edge_j=edge_j, edge_g=edge_g, edge_a=ea,
        edge_Tref=er, input_tc=input_tc, input_Tref=input_Tref)
    _check_massless(system)
    return system


def _edge_items(graph):
    """(u, v, attributes) of every edge once, in networkx's order (each node in insertion
    order, then its neighbours in the order they were joined, each edge from its
    earlier-visited end): read straight from a :class:`Graph`'s adjacency (no list of
    triples), else ``graph.edges(data=True)``."""
    if not isinstance(graph, Graph):
        yield from graph.edges(data=True)
        return
    done = set()
    for u, nbrs in graph._adj.items():
        for v, d in nbrs.items():
            if v not in done:
                yield u, v, d
        done.add(u)


#: Matrices up to this many entries sum their triplets on a dense scratch (measured: faster
#: up to about 32 x 32; from 40 x 40 on, sorting the triplets is, 290 -> 50 us at 250 x 250).
_DENSE_SCRATCH = 1024


def _csr(vals: np.ndarray, rows: np.ndarray, cols: np.ndarray,
         shape: tuple[int, int]) -> sp.csr_matrix:
    """CSR matrix of (row, col, value) triplets, duplicates summed in input order and exact
    zeros dropped.  Small matrices hand scipy the CSR arrays directly (scipy's COO
    conversion costs more in set-up than the whole assembly here): the tiniest summed on a
    dense scratch, the others by sorting the triplets (a dense n×n scratch would cost its
    page faults); large ones go through COO."""
    nr, nc = shape
    if nr * nc > SMALL_N * SMALL_N or nr == 0 or nc == 0:
        return sp.csr_matrix((vals, (rows, cols)), shape=shape)
    keys = np.asarray(rows, dtype=np.int64) * nc + np.asarray(cols, dtype=np.int64)
    if nr * nc <= _DENSE_SCRATCH:               # a few KB: sum on a dense scratch
        D = np.bincount(keys, weights=vals, minlength=nr * nc).reshape(nr, nc)
        rr, cc = np.nonzero(D)
        indptr = np.zeros(nr + 1, dtype=np.int32)
        np.cumsum(np.bincount(rr, minlength=nr), out=indptr[1:])
        return sp.csr_matrix((D[rr, cc], cc.astype(np.int32), indptr), shape=shape)
    order = np.argsort(keys, kind="stable")
    k = keys[order]
    first = np.ones(k.size, dtype=bool)
    first[1:] = k[1:] != k[:-1]
    starts = np.flatnonzero(first)
    data = np.add.reduceat(np.asarray(vals, dtype=np.float64)[order], starts) \
        if k.size else np.zeros(0)
    k = k[starts]
    nz = data != 0.0
    data, k = data[nz], k[nz]
    indptr = np.zeros(nr + 1, dtype=np.int32)
    np.cumsum(np.bincount(k // nc, minlength=nr), out=indptr[1:])
    return sp.csr_matrix((data, (k % nc).astype(np.int32), indptr), shape=shape)


def _components(system: ThermalSystem, mask: np.ndarray) -> list[np.ndarray]:
    """Connected groups of the free nodes selected by ``mask`` (through free-free links)."""
    idx = np.flatnonzero(mask)
    if idx.size == 0:
        return []
    sub = system.G if idx.size == system.n else system.G[idx][:, idx]
    ncomp, lab = sp.csgraph.connected_components(sub, directed=False)
    return [idx[lab == k] for k in range(ncomp)]


def _check_massless(system: ThermalSystem) -> None:
    """Every group of linked massless nodes must touch a capacitive node or a boundary."""
    massless = system.C == 0.0
    if not massless.any():
        return
    G = system.G.tocsr()
    to_boundary = np.asarray(system.Gb.sum(axis=1)).ravel() > 0
    capacitive = ~massless
    for group in _components(system, massless):
        touches_cap = G[group][:, capacitive].nnz > 0
        if not touches_cap and not to_boundary[group].any():
            names = [system.node_names[i] for i in group]
            raise NetworkError(
                f"massless nodes {_names(names)} (capacity 0) are linked to no node with heat "
                "capacity and to no boundary, so their temperature is undefined: connect them "
                "or give one of them a capacity > 0")


#: Per-system derived data (floating groups, LU of G), dropped with the system.
_CACHE: "weakref.WeakKeyDictionary[ThermalSystem, dict]" = weakref.WeakKeyDictionary()


def _cached(system: ThermalSystem) -> dict:
    try:
        return _CACHE[system]
    except KeyError:
        d = _CACHE[system] = {}
        return d


#: Networks up to this many free nodes use dense LU and a plain union-find (scipy's sparse
#: machinery costs more in set-up than the whole solve below this size).
SMALL_N = 256


def _free_roots(system: ThermalSystem) -> np.ndarray:
    """A label per free node, equal for nodes linked through free-free conductances: a
    union-find over the edge list for small networks (R. E. Tarjan, "Efficiency of a good
    but not linear set union algorithm", J. ACM 22(2), 1975; each label the smallest node
    of its group), scipy's csgraph otherwise."""
    n = system.n
    if n > SMALL_N:
        return sp.csgraph.connected_components(system.G, directed=False)[1]
    ei, ej = system.edge_i, system.edge_j
    ff = ej < n
    ei, ej = ei[ff], ej[ff]
    # links between consecutive nodes (a chain in its node order) join runs at once: each
    # node starts pointing to the first node of its run; the other links go one by one
    cons = ej == ei + 1
    first = np.ones(n, dtype=bool)
    first[ei[cons] + 1] = False
    parent = np.maximum.accumulate(np.where(first, np.arange(n), 0)).tolist()
    rest = ~cons
    for i, j in zip(ei[rest].tolist(), ej[rest].tolist()):
        while parent[i] != i:                   # find, halving the path
            parent[i] = i = parent[parent[i]]
        while parent[j] != j:
            parent[j] = j = parent[parent[j]]
        if i < j:
            parent[j] = i
        elif j < i:
            parent[i] = j
    roots = np.array(parent, dtype=np.int64)
    while True:                                 # every node to its root
        up = roots[roots]
        if np.array_equal(up, roots):
            return roots
        roots = up


def floating_nodes(system: ThermalSystem) -> list[list[str]]:
    """Groups of free nodes with no conduction path to any boundary (names).

    Such a part is adiabatic: under power it heats without bound (linear rise), so it has
    no steady or periodic steady state; a transient from a given state is still defined.
    """
    cache = _cached(system)
    if "floating" not in cache:
        n = system.n
        fb = (system.edge_j >= n) & (system.edge_g > 0)
        roots = _free_roots(system)
        grounded = np.zeros(n, dtype=bool)
        grounded[roots[system.edge_i[fb]]] = True     # groups with a link to a boundary
        out = []
        if not grounded[roots].all():
            for r in np.unique(roots[~grounded[roots]]).tolist():
                out.append([system.node_names[i] for i in np.flatnonzero(roots == r)])
        cache["floating"] = out
    return [list(g) for g in cache["floating"]]


def static_field(system: ThermalSystem, power: np.ndarray | None = None,
                 floating: str = "raise") -> np.ndarray:
    """Steady temperatures, K absolute, shape (n,): solve ``G T = Gb T_b + B P``.

    Solved as a rise over the first boundary temperature T0 (``G (T − T0) = Gb (T_b − T0)
    + B P``, using G·1 = Gb·1), so equal boundary temperatures give exactly T0 at zero power.

    Parameters
    ----------
    power
        Constant power per input, W, shape (m,); None = zero.
    floating
        "raise": a part with no path to a boundary raises :class:`NetworkError` naming its
        nodes; "nan": its temperatures are NaN.
    """
    n = system.n
    groups = floating_nodes(system)
    ok = np.ones(n, dtype=bool)
    if groups:
        if floating == "raise":
            flat = [v for g in groups for v in g]
            raise NetworkError(
                f"nodes {_names(flat)} have no conduction path to any boundary (an adiabatic "
                "part): they heat without bound, so there is no steady or periodic steady "
                "state; connect them to a boundary (add_boundary + connect), or run a "
                "transient with an initial temperature")
        for g in groups:
            ok[[system.index(v) for v in g]] = False
    T0 = float(system.T_boundary[0]) if system.nb else KELVIN_OFFSET
    cache = _cached(system)
    if power is None and "static0" in cache:       # the zero-power field, solved once
        return cache["static0"].copy()
    if "static_maps" not in cache:
        # small networks: dense copies of Gb and B (sparse products cost more here)
        small = n <= SMALL_N
        cache["static_maps"] = (system.Gb.toarray() if small else system.Gb,
                                system.B.toarray() if small else system.B)
    Gb, B = cache["static_maps"]
    rhs = Gb @ (system.T_boundary - T0)
    if power is not None:
        rhs = rhs + B @ np.asarray(power, dtype=np.float64)
    out = np.full(n, np.nan)
    idx = np.flatnonzero(ok)
    if idx.size:
        if "static_lu" not in cache:
            Gs = system.G if idx.size == n else system.G.tocsr()[idx][:, idx]
            solve = _banded_cholesky(Gs)
            if solve is not None:
                cache["static_lu"] = solve
            elif idx.size <= SMALL_N:
                # dense Cholesky (LAPACK potrf/potrs: G of a grounded network is symmetric
                # positive definite), else LU with partial pivoting (getrf/getrs)
                Gd = Gs.toarray()
                c, info = sla.lapack.dpotrf(Gd, lower=1, clean=0, overwrite_a=1)
                if info == 0:
                    def solve(b, c=c):
                        x, inf = sla.lapack.dpotrs(c, b, lower=1)
                        return x
                else:
                    Gd = Gs.toarray()           # potrf may have overwritten it
                    lu, piv, info = sla.lapack.dgetrf(Gd, overwrite_a=1)
                    if info != 0:
                        raise NetworkError("the conductance matrix is singular (a part with "
                                           "no path to a boundary)")

                    def solve(b, lu=lu, piv=piv):
                        x, inf = sla.lapack.dgetrs(lu, piv, b)
                        return x
                cache["static_lu"] = solve
            else:
                import scipy.sparse.linalg as spla   # large networks only (~10 ms import)
                cache["static_lu"] = spla.splu(Gs.tocsc()).solve
        out[idx] = T0 + cache["static_lu"](rhs[idx])
    if power is None:
        cache["static0"] = out.copy()
    return out


def _banded_cholesky(G):
    """Solver of G x = b by banded Cholesky (LAPACK dpbtrf/dpbtrs, G = L Lᵀ with L inside
    the band: no fill outside it; G. H. Golub and C. F. Van Loan, *Matrix Computations*,
    4th ed., 2013, §4.3.5) when the half bandwidth kd of G in its node order is small
    (4·kd ≤ n: a chain kd = 1, a grid of layers kd = its layer size): O(n·kd²) work
    against O(n³) dense.  None when the band is wide or G is not positive definite (the
    dense or sparse LU path then decides)."""
    G = G.tocsr()
    if not G.has_canonical_format:
        G = G.copy()
        G.sum_duplicates()
    n = G.shape[0]
    rows = np.repeat(np.arange(n), np.diff(G.indptr))
    cols = G.indices
    low = rows >= cols
    if not low.any():
        return None
    kd = int((rows[low] - cols[low]).max())
    if 4 * kd > n:
        return None
    ab = np.zeros((kd + 1, n))
    ab[rows[low] - cols[low], cols[low]] = G.data[low]      # ab[i − j, j] = G[i, j]
    c, info = sla.lapack.dpbtrf(ab, lower=1, overwrite_ab=1)
    if info != 0:
        return None

    def solve(b, c=c):
        b = np.asarray(b, dtype=np.float64)
        x, inf = sla.lapack.dpbtrs(c, b.reshape(n, -1), lower=1)
        return x.reshape(b.shape)
    return solve


@dataclass(frozen=True, eq=False)
class Condensed:
    """Dense capacitive-node system after static condensation (see module docstring).

    Shapes: nc capacitive nodes, nm massless ones, nb boundaries, m inputs.

    Parameters
    ----------
    system
        The full system.
    cap, mass
        Rows of the capacitive (nc,) and massless (nm,) nodes in ``system``.
    C
        Capacities, J/K, (nc,) > 0.
    G
        Condensed conductance matrix, W/K, dense (nc, nc), symmetric; the system's sparse G
        itself from ``condense(system, dense=False)`` when no node is massless.
    Fb
        Condensed boundary coupling, W/K, dense (nc, nb).
    B
        Condensed input map, dense (nc, m).
    K, Mb, Mp
        Massless reconstruction T_m = −K T_c + Mb T_b + Mp P: (nm, nc), (nm, nb), (nm, m).
    """

    system: ThermalSystem
    cap: np.ndarray
    mass: np.ndarray
    C: np.ndarray
    G: np.ndarray
    Fb: np.ndarray
    B: np.ndarray
    K: np.ndarray
    Mb: np.ndarray
    Mp: np.ndarray

    @property
    def nc(self) -> int:
        return self.cap.size

    @cached_property
    def row_of(self) -> np.ndarray:
        """For each system row: its index among ``cap`` (>= 0) or ``-1 - index`` in ``mass``."""
        out = np.empty(self.system.n, dtype=np.int64)
        out[self.cap] = np.arange(self.cap.size)
        out[self.mass] = -1 - np.arange(self.mass.size)
        return out

    def full_state(self, Tc: np.ndarray, power: np.ndarray) -> np.ndarray:
        """Every free node's temperature (n,) K from the capacitive ones and the power."""
        out = np.empty(self.system.n)
        out[self.cap] = Tc
        if self.mass.size:
            out[self.mass] = -self.K @ Tc + self.Mb @ self.system.T_boundary + self.Mp @ power
        return out


def condense(system: ThermalSystem, dense: bool = True) -> Condensed:
    """Eliminate the massless nodes of ``system`` exactly (static condensation).

    ``dense=False``: with no massless node, ``G`` is the system's sparse matrix (no dense
    n×n copy; the modal solver reads its structure first)."""
    C = system.C
    cap = np.flatnonzero(C > 0)
    mass = np.flatnonzero(C == 0)
    if cap.size == 0:
        raise NetworkError("every node is massless (capacity 0): the network has no "
                           "dynamics; give at least one node a heat capacity, or use steady()")
    G = system.G.tocsr()
    Gb = system.Gb.tocsr()
    B = system.B.tocsr()
    if mass.size == 0:
        Gcc, Fb, Bc = (G.toarray() if dense else G), Gb.toarray(), B.toarray()
    else:
        Gcc = G[cap][:, cap].toarray()
        Fb = Gb[cap].toarray()
        Bc = B[cap].toarray()
    nm, nb, m = mass.size, system.nb, system.m
    if nm == 0:
        K = np.zeros((0, cap.size))
        Mb = np.zeros((0, nb))
        Mp = np.zeros((0, m))
    else:
        Gmm = G[mass][:, mass].tocsc()
        Gmc = G[mass][:, cap]
        import scipy.sparse.linalg as spla   # only with massless nodes (~10 ms import)
        lu = spla.splu(Gmm)
        rhs = np.hstack([Gmc.toarray(), Gb[mass].toarray(), B[mass].toarray()])
        sol = lu.solve(rhs)
        K = sol[:, :cap.size]
        Mb = sol[:, cap.size:cap.size + nb]
        Mp = sol[:, cap.size + nb:]
        Gcm = G[cap][:, mass]
        Gcc = Gcc - Gcm @ K
        Fb = Fb - Gcm @ Mb
        Bc = Bc - Gcm @ Mp
        Gcc = 0.5 * (Gcc + Gcc.T)
    return Condensed(system=system, cap=cap, mass=mass, C=C[cap].copy(), G=Gcc, Fb=Fb, B=Bc,
                     K=K, Mb=Mb, Mp=Mp)
