"""Small assembled systems shared by the nonlinear-solver tests (not a test module: its name
does not start with ``test_``; loaded by file path, since the tests are not a package)."""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from pulsetherm.network.system import ThermalSystem


def chain(C, g, *, a=0.0, Tref=300.0, T_b=300.0, tc=0.0, tc_ref=300.0):
    """Chain 0–1–…–(N−1)–boundary: node k to k+1 through g[k], the last g to the boundary.
    One input on node 0."""
    C = np.asarray(C, float)
    N = C.size
    g = np.broadcast_to(np.asarray(g, float), (N,)).copy()
    ei, ej = np.arange(N), np.arange(1, N + 1)
    G = sp.lil_matrix((N, N))
    for k in range(N):
        G[k, k] += g[k]
        if k + 1 < N:
            G[k + 1, k + 1] += g[k]
            G[k, k + 1] -= g[k]
            G[k + 1, k] -= g[k]
    Gb = sp.csr_matrix(([g[-1]], ([N - 1], [0])), shape=(N, 1))
    B = sp.csr_matrix(([1.0], ([0], [0])), shape=(N, 1))
    return ThermalSystem(tuple(f"n{k}" for k in range(N)), ("slab",) * N, C, G.tocsr(), Gb,
                         ("sink",), np.array([T_b]), B, ("heater",), ei, ej, g,
                         np.full(N, float(a)), np.full(N, float(Tref)), np.array([float(tc)]),
                         np.array([float(tc_ref)]))
