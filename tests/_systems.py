"""Small assembled systems and scenario texts shared by the tests (not a test module: its
name does not start with ``test_``; loaded by file path, since the tests are not a package;
``tests/hostile/make_corpus.py`` loads it the same way)."""
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


#: A small valid scenario: 50 W pulses (100 us in 1 ms) into a data-sheet Foster device
#: (3 terms, 2 K/W) on a copper flange over an ideal cold plate.  The command-line tests
#: and the hostile corpus change one key of it at a time.
SMALL_PULSED_SCENARIO = """name = "good"
coolant = "40 degC"

[waveforms.p]
kind = "pulses"
peak = "50 W"
width = "100 us"
period = "1 ms"

[mount.sink]
kind = "fixed"

[[devices]]
name = "pa"
power = "p"
footprint = ["3 mm", "3 mm"]
limit = "150 degC"
foster = { R = ["0.2 K/W", "0.5 K/W", "1.3 K/W"], tau = ["10 us", "1 ms", "100 ms"] }

[[devices.stack]]
name = "flange"
material = "copper"
thickness = "1 mm"
"""


_TWINS: dict[type, type] = {}


def dataclass_twin(obj):
    """``obj`` as an instance of a class that :func:`dataclasses.dataclass` (frozen, default
    eq/repr/hash) generates from the same fields (one twin class per class): the reference
    for the shared ``==``, ``hash`` and ``repr`` of :mod:`pulsetherm.waveforms.fieldwise`."""
    import dataclasses

    cls = type(obj)
    if cls not in _TWINS:
        spec = [(f.name, f.type, dataclasses.field(default=None, repr=f.repr,
                                                   compare=f.compare, hash=f.hash))
                for f in dataclasses.fields(cls)]
        _TWINS[cls] = dataclasses.make_dataclass(cls.__name__, spec, frozen=True)
        _TWINS[cls].__qualname__ = cls.__qualname__
    return _TWINS[cls](**{f.name: getattr(obj, f.name) for f in dataclasses.fields(cls)})


def graded_chain(n: int = 60):
    """Graded chain c0 .. c{n-1} -> sink (R_k = 0.05·r^k K/W, C_k = 7.12e-5·r^k J/K,
    r = 1.012^(120/n)), time constants about 1 µs .. 0.1 s (as in
    tests/bench/bench_engine.py), heat into c0."""
    from pulsetherm.network.model import ThermalNetwork

    net = ThermalNetwork()
    net.add_boundary("sink", temperature=25.0)
    r = 1.012 ** (120 / n)
    for k in range(n):
        net.add_node(f"c{k}", capacity=7.12e-5 * r ** k)
        if k:
            net.connect(f"c{k}", f"c{k - 1}", conductance=1.0 / (0.05 * r ** k))
    net.connect(f"c{n - 1}", "sink", conductance=1.0 / (0.05 * r ** n))
    net.add_input("die", nodes={"c0": 1.0})
    return net
