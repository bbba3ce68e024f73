"""The network's graph store (network/graph.py) against networkx.Graph: same nodes, edges,
attributes and iteration order, so assembly sees the same edge sequence (common practice,
no source)."""
from __future__ import annotations

import random

import networkx as nx
import pytest

from pulsetherm.network.graph import Graph
from pulsetherm.network.model import ThermalNetwork


def _both(ops):
    ours, theirs = Graph(), nx.Graph()
    for op, args, attr in ops:
        getattr(ours, op)(*args, **attr)
        getattr(theirs, op)(*args, **attr)
    return ours, theirs


def _random_ops(seed: int, n: int = 12, m: int = 30):
    rng = random.Random(seed)
    names = [f"n{i}" for i in rng.sample(range(100), n)]
    ops = [("add_node", (v,), {"capacity": rng.random()}) for v in names[: n // 2]]
    for _ in range(m):
        u, v = rng.sample(names, 2)
        ops.append(("add_edge", (u, v), {"conductance": rng.random()}))
    ops += [("add_node", (v,), {"label": v}) for v in names[n // 2:]]
    return ops


@pytest.mark.parametrize("seed", range(20))
def test_same_as_networkx(seed):
    ours, theirs = _both(_random_ops(seed))
    assert list(ours) == list(theirs)
    assert ours.nodes(data=True) == list(theirs.nodes(data=True))
    assert ours.edges(data=True) == list(theirs.edges(data=True))
    assert list(ours.edges) == list(theirs.edges)
    assert len(ours.edges) == theirs.number_of_edges() == ours.number_of_edges()
    for v in ours:
        assert list(ours.neighbors(v)) == list(theirs.neighbors(v))
        assert ours.degree(v) == theirs.degree(v)
    for u, v in theirs.edges:
        assert ours.has_edge(v, u) and (v, u) in ours.edges
        assert ours.edges[v, u] is ours.edges[u, v]
        assert ours.edges[u, v] == theirs.edges[u, v]
    assert not ours.has_edge("n0", "missing") and "missing" not in ours
    assert [] not in ours                       # unhashable: not a node, no error


def test_to_networkx_round_trip():
    ours, theirs = _both(_random_ops(7))
    g = ours.to_networkx()
    assert isinstance(g, nx.Graph)
    assert list(g.nodes(data=True)) == list(theirs.nodes(data=True))
    assert list(g.edges(data=True)) == list(theirs.edges(data=True))


def test_network_graph_parallel_branches_share_one_edge():
    net = ThermalNetwork()
    net.add_boundary("sink", 25.0)
    net.add_node("j", capacity=1e-3)
    net.connect("j", "sink", resistance=2.0)
    net.connect("sink", "j", resistance=2.0)
    g = net.graph
    assert g.edges["sink", "j"]["conductance"] == 1.0
    assert len(g.edges["j", "sink"]["branches"]) == 2
    assert net.graph.to_networkx().edges["j", "sink"]["conductance"] == 1.0
    with pytest.raises(KeyError, match="not in the graph"):
        g.neighbors("nowhere")
