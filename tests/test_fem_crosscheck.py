"""Independent finite elements (scikit-fem) against the axisymmetric mode and the ladder.

A GaN-on-SiC transistor stack: the heated gate region (equal-area circle a = 0.3 mm) on a
100 µm SiC die (radius 1 mm), a 25 µm AuSn attach of the die's size and a 1 mm CuW flange
(radius 3 mm) held at a fixed temperature underneath.  The reference is an axisymmetric
Galerkin model written here with scikit-fem (bilinear quadrilaterals on an r-z tensor mesh
with the region outside the die removed above the flange; weak form ∫k∇T·∇v·2πr dA =
∫q·v·2πr ds over the gate; Zth from the modes of K φ = λ M φ, consistent mass).  Standard
Galerkin practice (e.g. Zienkiewicz & Taylor, *The Finite Element Method*, vol. 1,
axisymmetric problems); material values from the project library (physics brief §8).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg as sla

skfem = pytest.importorskip("skfem")
from skfem import (Basis, BilinearForm, ElementQuad1, FacetBasis, LinearForm,  # noqa: E402
                   MeshQuad, asm, condense, solve)
from skfem.helpers import dot, grad  # noqa: E402

from pulsetherm.network.axisym import build_axisym, compare  # noqa: E402
from pulsetherm.network.builder import build  # noqa: E402
from pulsetherm.network.materials import default_library  # noqa: E402
from pulsetherm.network.stackup import Assembly, FixedBase, Layer, Mount, Part  # noqa: E402

A_GATE, R_DIE, R_FLANGE = 0.3e-3, 1e-3, 3e-3
THICK = (100e-6, 25e-6, 1e-3)
NAMES = ("sic-4h", "ausn", "cuw-85-15")


def _assembly() -> Assembly:
    sq = math.sqrt(math.pi)
    part = Part("pa", sq * A_GATE, [Layer("sic-4h", THICK[0], size=sq * R_DIE),
                                    Layer("ausn", THICK[1], size=sq * R_DIE),
                                    Layer("cuw-85-15", THICK[2], size=sq * R_FLANGE)])
    return Assembly([part], mount=Mount(sink=FixedBase(25.0)))


def _graded(x0: float, x1: float, h0: float, g: float, fine_at_start: bool = True):
    pts = [0.0]
    step = h0
    while pts[-1] + 1.5 * step < x1 - x0:
        pts.append(pts[-1] + step)
        step *= g
    pts.append(x1 - x0)
    p = np.array(pts)
    return x0 + p if fine_at_start else x1 - p[::-1]


class FemStack:
    """Axisymmetric scikit-fem model of the stack (r horizontal, depth z downward)."""

    def __init__(self, h: float):
        r = np.unique(np.concatenate([
            _graded(0.0, A_GATE, h, 1.25, fine_at_start=False),
            _graded(A_GATE, R_DIE, h, 1.25), _graded(R_DIE, R_FLANGE, h, 1.25)]))
        zb = np.cumsum((0.0,) + THICK)
        z = np.unique(np.concatenate([
            _graded(zb[0], zb[1], h / 8, 1.3), _graded(zb[1], zb[2], h / 4, 1.3),
            _graded(zb[2], zb[3], h / 2, 1.3)]))
        mesh = MeshQuad.init_tensor(r, z)
        mid = mesh.p[:, mesh.t].mean(axis=1)
        mesh = mesh.remove_elements(np.flatnonzero((mid[0] > R_DIE) & (mid[1] < zb[2])))
        self.mesh = mesh
        lib = default_library()
        mats = [lib.get(n) for n in NAMES]
        ks = np.array([m.k for m in mats])
        rcs = np.array([m.rho_c for m in mats])

        def layer(zq):
            return np.digitize(zq, zb[1:-1])

        @BilinearForm
        def stiff(u, v, w):
            return ks[layer(w.x[1])] * dot(grad(u), grad(v)) * 2 * np.pi * w.x[0]

        @BilinearForm
        def mass(u, v, w):
            return rcs[layer(w.x[1])] * u * v * 2 * np.pi * w.x[0]

        @LinearForm
        def flux(v, w):
            return v * 2 * np.pi * w.x[0] / (np.pi * A_GATE ** 2)

        basis = Basis(mesh, ElementQuad1())
        top = mesh.facets_satisfying(lambda x: (x[1] < 1e-12) & (x[0] < A_GATE * (1 + 1e-9)))
        fb = FacetBasis(mesh, ElementQuad1(), facets=top)
        self.K = asm(stiff, basis)
        self.M = asm(mass, basis)
        self.b = asm(flux, fb)
        self.D = mesh.nodes_satisfying(lambda x: x[1] > zb[-1] * (1 - 1e-9))
        self.ndofs = basis.N

    def steady(self) -> float:
        """Mean gate temperature rise per watt, K/W (b·T = ∫q·T dA with q = 1/(πa²))."""
        T = solve(*condense(self.K, self.b, D=self.D))
        return float(self.b @ T)

    def zth(self, t: np.ndarray) -> np.ndarray:
        """Zth(t) = Σ (φ_iᵀb)²/λ_i·(1 − e^{−λ_i t}) over the modes of K φ = λ M φ."""
        free = np.setdiff1d(np.arange(self.ndofs), self.D)
        K = self.K[free][:, free].toarray()
        M = self.M[free][:, free].toarray()
        lam, phi = sla.eigh(K, M)
        c = (phi.T @ self.b[free]) ** 2 / lam
        return (1.0 - np.exp(-np.outer(t, lam))) @ c


@pytest.fixture(scope="module")
def fem_coarse():
    return FemStack(h=15e-6)


@pytest.fixture(scope="module")
def mesh_model():
    return build_axisym(_assembly())


def test_fem_mesh_converges():
    """The reference itself: halving the mesh changes the steady value by < 0.5 %."""
    r1 = FemStack(h=15e-6).steady()
    r2 = FemStack(h=7.5e-6).steady()
    assert abs(r1 / r2 - 1.0) < 5e-3


def test_axisym_steady_within_2_percent_of_fem(mesh_model):
    fine = FemStack(h=7.5e-6).steady()
    assert mesh_model.steady_resistance() == pytest.approx(fine, rel=0.02)


def test_axisym_zth_within_2_percent_of_fem(fem_coarse, mesh_model):
    t = np.logspace(-5, 0, 16)
    zf = fem_coarse.zth(t)
    za = mesh_model.zth(t)
    assert np.max(np.abs(za / zf - 1.0)) < 0.02


def test_ladder_against_fem(fem_coarse):
    """Calibrated ladder (equivalent flow area from the exact layered series, builder
    notes): steady and Zth from 1e-5 s to 1 s within 10 % of the finite elements (issue 4;
    measured −2.3 % steady, worst Zth +5.0 % near 4e-4 s before the runs; with runs +1.4 %
    steady, worst Zth +3.4 % near 5e-3 s; with the coupled die-flange interface +0.3 %
    steady, worst Zth +3.5 % near 5e-3 s)."""
    m = build(_assembly(), spreading="calibrated")
    fine = FemStack(h=7.5e-6).steady()
    assert m.steady_resistance("pa") == pytest.approx(fine, rel=0.10)
    t = np.logspace(-5, 0, 16)
    zl = np.asarray(m.network.zth("pa.junction", "pa", t=t).K_per_W)
    assert np.max(np.abs(zl / fem_coarse.zth(t) - 1.0)) < 0.10
