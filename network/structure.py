"""Cumulative and differential structure functions of a Cauer ladder.

Along a Cauer ladder from the junction, the cumulative structure function is the total heat
capacity C_Σ reached against the total thermal resistance R_Σ passed; for 1-D heat flow through
a cross-section A(x) of a material (k, ρ, c),

    dC_Σ = ρ·c·A·dx,  dR_Σ = dx/(k·A)   ⇒   K(R_Σ) = dC_Σ/dR_Σ = ρ·c·k·A²,

the differential structure function, which maps a heat-flow path (layers, spreading) into
regions of constant or changing ρ·c·k·A².

References
----------
V. Székely and T. Van Bien, "Fine structure of heat flow path in semiconductor devices: a
measurement and identification method", Solid-State Electronics 31(9), 1988.
JEDEC JESD51-14, 2010 (transient dual interface method; structure functions).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .foster import Cauer, Foster, FosterError

__all__ = ["StructureFunction", "structure_function"]


@dataclass(frozen=True, eq=False)
class StructureFunction:
    """Cumulative structure function of a Cauer ladder (a staircase).

    Parameters
    ----------
    R_cum
        R_Σ at the far end of each stage, Σ_{j<=k} R_j, K/W, shape (n,), increasing.
    C_cum
        C_Σ of each stage, Σ_{j<=k} C_j, J/K, shape (n,), increasing.

    Notes
    -----
    Node k (capacity C_k) sits at R_Σ = R_cum[k] − R_k (node 1, the junction, at 0), so
    C_Σ(R_Σ) = C_cum[k] for R_cum[k−1] <= R_Σ < R_cum[k]; at R_Σ = R_cum[-1] (the
    thermal ground) C_Σ becomes infinite.
    """

    R_cum: np.ndarray
    C_cum: np.ndarray

    def __post_init__(self) -> None:
        Rc = np.array(self.R_cum, dtype=np.float64, ndmin=1, copy=True)
        Cc = np.array(self.C_cum, dtype=np.float64, ndmin=1, copy=True)
        for name, arr in (("R_cum", Rc), ("C_cum", Cc)):
            if arr.ndim != 1 or arr.size == 0:
                raise FosterError(f"{name}: expected a non-empty 1-D array, got shape {arr.shape}")
            if not np.all(np.isfinite(arr)):
                raise FosterError(f"{name}: expected finite values, got {arr!r}")
            if arr[0] <= 0.0 or (np.diff(arr) <= 0.0).any():
                raise FosterError(f"{name}: expected positive, strictly increasing sums")
        if Rc.size != Cc.size:
            raise FosterError(f"C_cum: expected {Rc.size} values (as R_cum), got {Cc.size}")
        Rc.setflags(write=False)
        Cc.setflags(write=False)
        object.__setattr__(self, "R_cum", Rc)
        object.__setattr__(self, "C_cum", Cc)

    @property
    def R(self) -> np.ndarray:
        """Stage resistances R_k, K/W."""
        return np.diff(self.R_cum, prepend=0.0)

    @property
    def C(self) -> np.ndarray:
        """Stage capacities C_k, J/K."""
        return np.diff(self.C_cum, prepend=0.0)

    @property
    def R_node(self) -> np.ndarray:
        """R_Σ of every node (where its capacity sits), K/W; the junction is at 0."""
        return self.R_cum - self.R

    def to_cauer(self) -> Cauer:
        """The ladder this function describes."""
        return Cauer(self.R, self.C)

    def c_at(self, r_sigma) -> np.ndarray:
        """C_Σ at given R_Σ (K/W), J/K; ``inf`` at and beyond the thermal ground."""
        r = np.asarray(r_sigma, dtype=np.float64)
        if (~np.isfinite(r) | (r < 0.0)).any():
            raise FosterError(f"r_sigma = {r_sigma!r}: expected finite values >= 0 K/W")
        k = np.searchsorted(self.R_cum, r, side="right")
        out = np.full(r.shape, np.inf)
        inside = k < self.R_cum.size
        out[inside] = self.C_cum[k[inside]]
        return out

    def steps(self) -> tuple[np.ndarray, np.ndarray]:
        """Corner points (R_Σ, C_Σ) of the staircase, shape (2n,) each, for a step plot."""
        x = np.repeat(np.concatenate([[0.0], self.R_cum[:-1]]), 2)[1:]
        x = np.concatenate([x, [self.R_cum[-1]]])
        y = np.repeat(self.C_cum, 2)
        return x, y

    def differential(self) -> tuple[np.ndarray, np.ndarray]:
        """Differential structure function K = dC_Σ/dR_Σ at the nodes.

        Each node's capacity C_k is the heat stored in the half cells on both sides of it,
        K_k = C_k / ((R_{k−1} + R_k)/2) (node 1: C_1 / (R_1/2), one half cell), placed at the
        node's R_Σ.  For a uniform 1-D path K = ρ·c·k·A² (Székely & Van Bien 1988).

        Returns
        -------
        R_node : (n,) K/W
        K : (n,) W²·s/K³ (J/K per K/W)
        """
        R = self.R
        half = 0.5 * (np.concatenate([[0.0], R[:-1]]) + R)
        return self.R_node, self.C / half

    def equivalent_area(self, k: float, rho: float, c: float) -> tuple[np.ndarray, np.ndarray]:
        """Cross-section A = √(K/(ρ·c·k)) of a 1-D path of one material, m², at the nodes."""
        for name, v in (("k", k), ("rho", rho), ("c", c)):
            if not (np.isfinite(v) and v > 0.0):
                raise FosterError(f"{name} = {v!r}: expected a finite value > 0")
        r, K = self.differential()
        return r, np.sqrt(K / (rho * c * k))


def structure_function(network: Cauer | Foster) -> StructureFunction:
    """Cumulative structure function of a Cauer ladder (a Foster network is converted first).

    C_Σ(R_Σ): R_cum = Σ_{j<=k} R_j, C_cum = Σ_{j<=k} C_j along the ladder from the junction
    (JEDEC JESD51-14, 2010; Székely & Van Bien, Solid-State Electronics 31(9), 1988).
    """
    if isinstance(network, Foster):
        network = network.to_cauer()
    if not isinstance(network, Cauer):
        raise FosterError(f"network = {network!r}: expected a Cauer or Foster network")
    return StructureFunction(np.cumsum(network.R), np.cumsum(network.C))
