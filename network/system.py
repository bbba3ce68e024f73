"""The assembled thermal system: the contract between the network model and every solver.

A :class:`ThermalNetwork` (graph of named nodes) is assembled once into these arrays; all
solvers (exact modal, sparse, nonlinear) read only this object.

Energy balance at the free nodes (SI: J/K, W/K, W, kelvin)::

    C · dT/dt + G · T = Gb · T_b + B · P(t)

``G`` holds the conductances among free nodes and, on its diagonal, the conductance from
each free node to the boundaries, so ``G`` is symmetric positive definite whenever every
connected part reaches a boundary.  Temperatures are absolute kelvin inside; rises are kelvin.

Shapes: n free nodes, nb boundaries, m inputs, ne conductances.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
import scipy.sparse as sp

__all__ = ["ThermalSystem", "KELVIN_OFFSET"]

#: 0 degC in kelvin.
KELVIN_OFFSET = 273.15


@dataclass(frozen=True, eq=False)
class ThermalSystem:
    """Assembled matrices of a thermal RC network.

    Parameters
    ----------
    node_names
        Free (non-boundary) node names, the row order of every array, length n.
    labels
        Part/layer label of each free node (for reports), length n.
    C
        Heat capacity of each free node, J/K, shape (n,), >= 0 (zeros are massless nodes).
    G
        Conductance matrix among free nodes, W/K, sparse (n, n), symmetric; the diagonal
        includes the conductance to boundaries.
    Gb
        Conductance from free nodes to each boundary, W/K, sparse (n, nb).
    boundary_names
        Boundary node names, length nb.
    T_boundary
        Boundary temperatures, K, shape (nb,).
    B
        Input map, sparse (n, m): column j spreads input j over nodes (weights sum to 1).
    input_names
        Heat input names, length m.
    edge_i, edge_j
        End nodes of every conductance, shape (ne,): index of a free node (< n) or
        ``n + b`` for boundary b.
    edge_g
        Conductance of every edge at the reference temperature, W/K, shape (ne,).
    edge_a
        Exponent a of k(T) = k(Tref)·(T/Tref)^-a for every edge, shape (ne,); 0 = linear.
    edge_Tref
        Reference temperature of each edge's k(T), K, shape (ne,) (300 K by default).
    input_tc
        Temperature coefficient c of each input, 1/K, shape (m,): P·(1 + c·(T − Tref)), T
        the weighted mean temperature of the input's nodes; 0 = constant.
    input_Tref
        Reference temperature of each input's coefficient, K, shape (m,).
    """

    node_names: tuple[str, ...]
    labels: tuple[str, ...]
    C: np.ndarray
    G: sp.csr_matrix
    Gb: sp.csr_matrix
    boundary_names: tuple[str, ...]
    T_boundary: np.ndarray
    B: sp.csr_matrix
    input_names: tuple[str, ...]
    edge_i: np.ndarray
    edge_j: np.ndarray
    edge_g: np.ndarray
    edge_a: np.ndarray
    edge_Tref: np.ndarray
    input_tc: np.ndarray
    input_Tref: np.ndarray

    @property
    def n(self) -> int:
        return len(self.node_names)

    @property
    def m(self) -> int:
        return len(self.input_names)

    @property
    def nb(self) -> int:
        return len(self.boundary_names)

    @cached_property
    def is_linear(self) -> bool:
        """No k(T) exponent and no temperature coefficient (read once: the arrays of a
        system are not changed after assembly)."""
        return not (np.any(self.edge_a != 0.0) or np.any(self.input_tc != 0.0))

    def index(self, name: str) -> int:
        """Row of a free node; ``KeyError`` naming the node and the known ones otherwise."""
        try:
            return self.node_names.index(name)
        except ValueError:
            raise KeyError(f"node {name!r} is not a free node of this network "
                           f"(known: {', '.join(self.node_names[:12])}"
                           f"{', ...' if self.n > 12 else ''})") from None

    def input_index(self, name: str) -> int:
        try:
            return self.input_names.index(name)
        except ValueError:
            raise KeyError(f"input {name!r} is not defined (known: "
                           f"{', '.join(self.input_names) or 'none'})") from None
