"""Cumulative and differential structure functions.

For 1-D heat flow through a cross-section A of one material, dC_Σ/dR_Σ = ρ·c·k·A²
(Székely & Van Bien, Solid-State Electronics 31(9), 1988; JEDEC JESD51-14, 2010).
"""
from __future__ import annotations

import numpy as np
import pytest

from pulsetherm.network.foster import Cauer, Foster, FosterError
from pulsetherm.network.structure import StructureFunction, structure_function

# silicon near 300 K (physics brief §8 / §4 check values)
K_SI, RHO_SI, C_SI = 148.0, 2330.0, 712.0


def slab_foster(L: float, A: float, n_terms: int) -> Foster:
    """Exact Foster series of a slab, flux into one face, other face held (Carslaw & Jaeger,
    *Conduction of Heat in Solids*, 1959; physics brief §4):
    R_n = (L/kA)·8/((2n+1)²π²), τ_n = 4L²/((2n+1)²π²α), truncated at ``n_terms``."""
    alpha = K_SI / (RHO_SI * C_SI)
    n = np.arange(n_terms)
    m = (2 * n + 1) ** 2 * np.pi ** 2
    return Foster(L / (K_SI * A) * 8 / m, 4 * L * L / (m * alpha))


@pytest.mark.parametrize("n_terms", [20, 80])
def test_slab_differential_structure_function(n_terms):
    """Uniform Si slab (L 1 mm, A 1 mm²) from its exact Foster series: the differential
    structure function equals ρ·c·k·A² within 5 % at all inner nodes (Székely & Van Bien
    1988), and the cumulative one reaches ρ·c·A·x at R_Σ = x/(kA)."""
    L, A = 1e-3, 1e-6
    sf = structure_function(slab_foster(L, A, n_terms))
    target = RHO_SI * C_SI * K_SI * A ** 2
    r, K = sf.differential()
    assert K.size == n_terms
    # every node but the junction (one half cell only) and the last one (next to the held face)
    np.testing.assert_allclose(K[1:-1], target, rtol=0.05)
    assert r[1] < 0.1 * L / (K_SI * A) and r[-2] > 0.7 * L / (K_SI * A)
    # the end nodes are not full cells of the ladder: the check above is not vacuous
    assert abs(K[0] / target - 1) > 0.05 and abs(K[-1] / target - 1) > 0.05
    # cumulative: C_Σ(R_Σ) ≈ ρ c A x with x = R_Σ·k·A, between 20 % and 80 % of the depth
    x = np.linspace(0.2, 0.8, 7) * L
    # (a staircase: within one cell's capacity, the ladder has n_terms cells over the depth)
    np.testing.assert_allclose(sf.c_at(x / (K_SI * A)), RHO_SI * C_SI * A * x,
                               rtol=0, atol=RHO_SI * C_SI * A * L / n_terms)


def test_two_layer_ladder_and_equivalent_area():
    """A fine ladder of two materials (die on a spreader of 4x the area): K steps from
    ρ·c·k·A₁² to ρ·c·k·A₂²; the equivalent area recovers A (definition, Székely & Van Bien 1988).
    Built as a Cauer ladder, taken through its Foster network and back (exact)."""
    n, dx = 60, 5e-6
    A = np.r_[np.full(n // 2, 1e-6), np.full(n // 2, 4e-6)]
    R = dx / (K_SI * A)
    C = RHO_SI * C_SI * A * dx
    ladder = Cauer(R, C).to_foster().to_cauer()
    sf = structure_function(ladder)
    r, area = sf.equivalent_area(K_SI, RHO_SI, C_SI)
    # node k's half cells: inside each layer the node-centred K is exact
    np.testing.assert_allclose(area[1: n // 2], 1e-6, rtol=1e-8)
    np.testing.assert_allclose(area[n // 2 + 1:], 4e-6, rtol=1e-8)
    np.testing.assert_allclose(sf.R_cum[-1], R.sum(), rtol=1e-12)


def test_staircase_semantics():
    """C_Σ(R_Σ) is a staircase: node k at Σ_{j<k} R_j carries C_k; infinite at the ground."""
    sf = structure_function(Cauer([1.0, 2.0], [0.1, 0.5]))
    np.testing.assert_allclose(sf.R_cum, [1.0, 3.0])
    np.testing.assert_allclose(sf.C_cum, [0.1, 0.6])
    np.testing.assert_allclose(sf.R_node, [0.0, 1.0])
    np.testing.assert_allclose(sf.c_at([0.0, 0.5, 1.0, 2.9, 3.0, 5.0]),
                               [0.1, 0.1, 0.6, 0.6, np.inf, np.inf])
    x, y = sf.steps()
    np.testing.assert_allclose(x, [0.0, 1.0, 1.0, 3.0])
    np.testing.assert_allclose(y, [0.1, 0.1, 0.6, 0.6])
    c = sf.to_cauer()
    np.testing.assert_allclose(c.R, [1.0, 2.0])
    np.testing.assert_allclose(c.C, [0.1, 0.5])


def test_foster_input_is_converted():
    """A Foster network is converted to its Cauer ladder first (physics brief §6 values)."""
    sf = structure_function(Foster([0.2, 0.5, 1.3], [1e-5, 1e-3, 1e-1]))
    np.testing.assert_allclose(sf.R, [0.21033899, 0.51612360, 1.27353741], rtol=1e-7)


def test_validation():
    with pytest.raises(FosterError, match="R_cum"):
        StructureFunction([1.0, 0.5], [1.0, 2.0])
    with pytest.raises(FosterError, match="C_cum"):
        StructureFunction([1.0, 2.0], [1.0])
    with pytest.raises(FosterError, match="network"):
        structure_function([1.0, 2.0])
    with pytest.raises(FosterError, match="rho"):
        structure_function(Cauer([1.0], [1.0])).equivalent_area(1.0, -1.0, 1.0)
