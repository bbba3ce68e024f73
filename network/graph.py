"""The small undirected graph a :class:`~pulsetherm.network.model.ThermalNetwork` keeps.

The network needs only a store of named nodes and edges with attribute dicts, in insertion
order; no graph algorithm runs on it (connectivity is found on the assembled matrices,
:mod:`pulsetherm.network.assemble`).  This class offers the part of the
:class:`networkx.Graph` interface the package and its users read — ``name in g``,
``g.nodes[name]``, ``g.nodes(data=True)``, ``g.edges[a, b]``, ``g.edges(data=True)``,
``g.has_edge``, ``g.add_node``, ``g.add_edge``, ``g.neighbors``, ``g.degree`` — without
importing networkx (about 80 ms, a fifth of a whole ``pulsetherm run``).  For networkx's
algorithms, :meth:`Graph.to_networkx` gives a copy as a ``networkx.Graph``.

Edges are reported in networkx's order (each node in insertion order, then its neighbours in
the order they were joined, each edge once from its earlier-visited end), so assembly sees
the same edge sequence either way.
"""
from __future__ import annotations

from typing import Any, Iterator

__all__ = ["Graph"]


class _NodeView:
    """``g.nodes``: iterate names, ``g.nodes[name]`` -> attribute dict, or call it:
    ``g.nodes(data=True)`` -> (name, attributes) pairs."""

    __slots__ = ("_nodes",)

    def __init__(self, nodes: dict[Any, dict]) -> None:
        self._nodes = nodes

    def __getitem__(self, name) -> dict:
        return self._nodes[name]

    def __iter__(self) -> Iterator:
        return iter(self._nodes)

    def __len__(self) -> int:
        return len(self._nodes)

    def __contains__(self, name) -> bool:
        return name in self._nodes

    def __call__(self, data: bool = False):
        return list(self._nodes.items()) if data else list(self._nodes)

    def __repr__(self) -> str:
        return f"NodeView({tuple(self._nodes)!r})"


class _EdgeView:
    """``g.edges``: iterate (u, v) pairs, ``g.edges[u, v]`` -> attribute dict, or call it:
    ``g.edges(data=True)`` -> (u, v, attributes) triples."""

    __slots__ = ("_adj",)

    def __init__(self, adj: dict[Any, dict]) -> None:
        self._adj = adj

    def _triples(self) -> list[tuple]:
        """(u, v, attributes) of every edge once, from its end added first (a self-loop
        once): networkx's order."""
        out, done = [], set()
        for u, nbrs in self._adj.items():
            out += [(u, v, d) for v, d in nbrs.items() if v not in done]
            done.add(u)
        return out

    def __getitem__(self, pair) -> dict:
        u, v = pair
        return self._adj[u][v]

    def __iter__(self) -> Iterator[tuple]:
        return ((u, v) for u, v, _ in self._triples())

    def __len__(self) -> int:
        return len(self._triples())

    def __contains__(self, pair) -> bool:
        try:
            u, v = pair
        except (TypeError, ValueError):
            return False
        return u in self._adj and v in self._adj[u]

    def __call__(self, data: bool = False):
        if data:
            return self._triples()
        return [(u, v) for u, v, _ in self._triples()]


class Graph:
    """Undirected graph of hashable node names, one attribute dict per node and per edge
    (shared by both directions of the edge).  Self-loops are not refused here; the network
    refuses them with its own message."""

    def __init__(self) -> None:
        self._node: dict[Any, dict] = {}
        self._adj: dict[Any, dict[Any, dict]] = {}

    # -- building -----------------------------------------------------------------------
    def add_node(self, name, **attr) -> None:
        """Add ``name`` (or update its attributes when it exists)."""
        if name not in self._node:
            self._node[name] = {}
            self._adj[name] = {}
        self._node[name].update(attr)

    def add_edge(self, u, v, **attr) -> None:
        """Join ``u`` and ``v`` (added with no attributes when new); an existing edge's
        attributes are updated."""
        for x in (u, v):
            if x not in self._node:
                self.add_node(x)
        d = self._adj[u].get(v)
        if d is None:
            d = {}
            self._adj[u][v] = d
            self._adj[v][u] = d
        d.update(attr)

    # -- reading ------------------------------------------------------------------------
    @property
    def nodes(self) -> _NodeView:
        return _NodeView(self._node)

    @property
    def edges(self) -> _EdgeView:
        return _EdgeView(self._adj)

    def has_node(self, name) -> bool:
        return name in self._node

    def has_edge(self, u, v) -> bool:
        return u in self._adj and v in self._adj[u]

    def neighbors(self, name) -> Iterator:
        try:
            return iter(self._adj[name])
        except KeyError:
            raise KeyError(f"node {name!r} is not in the graph") from None

    def degree(self, name) -> int:
        """Number of edges at ``name``."""
        return len(self._adj[name])

    def number_of_nodes(self) -> int:
        return len(self._node)

    def number_of_edges(self) -> int:
        return len(self.edges)

    def __contains__(self, name) -> bool:
        try:
            return name in self._node
        except TypeError:               # unhashable: not a node (as in networkx)
            return False

    def __iter__(self) -> Iterator:
        return iter(self._node)

    def __len__(self) -> int:
        return len(self._node)

    def __repr__(self) -> str:
        return f"Graph({len(self._node)} nodes, {self.number_of_edges()} edges)"

    def to_networkx(self):
        """A :class:`networkx.Graph` copy (nodes, edges and attributes in the same order;
        attribute values shared, not copied) for networkx's algorithms."""
        import networkx as nx

        g = nx.Graph()
        g.add_nodes_from((n, dict(d)) for n, d in self._node.items())
        g.add_edges_from((u, v, dict(d)) for u, v, d in self.edges(data=True))
        return g
