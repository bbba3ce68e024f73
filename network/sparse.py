"""Linear solver for large networks: sparse factorisations, no dense eigendecomposition.

The system ``C dT/dt + G T = Gb T_b + B P(t)`` (n free nodes, C diagonal ≥ 0, G sparse
symmetric positive definite) is written as a rise ``θ = T − T_amb`` over the zero-power
static field ``T_amb = G⁻¹ Gb T_b``, so ``C θ' + G θ = B P(t)``.

Splitting into tracked modes and a quasi-static remainder
--------------------------------------------------------
Let ``G φ_k = λ_k C φ_k`` with ``φ_kᵀ C φ_l = δ_kl`` (massless nodes included: their rows of
φ follow algebraically).  The exact expansion of the static inverse is

    G⁻¹ = Σ_k φ_k φ_kᵀ / λ_k + [0 0; 0 G_zz⁻¹]      (z: massless rows),
    G⁻¹ C G⁻¹ = Σ_k φ_k φ_kᵀ / λ_k².

A set of r tracked modes ``Φ = [φ_1 … φ_r]`` (time constants τ = 1/λ above a cut τ_c) is
advanced exactly per piecewise-linear segment (the same closed form as the dense modal
solver: ``x(s) = e^{−λs} x(0) + ψ₀(λ,s)·Wa + ψ₁(λ,s)·Wb``, ``W = Φᵀ B``).  Everything else
(the fast modes and the massless nodes) is taken quasi-statically, including the first-order
lag of a ramp:

    θ_fast(t) = S₀ P(t) − S₁ P'(t),
    S₀ = (G⁻¹ − Φ Λ⁻¹ Φᵀ) B,   S₁ = (G⁻¹ C G⁻¹ − Φ Λ⁻² Φᵀ) B.

This is exact for every steady value (constant power: ``θ = G⁻¹ B P``) and for every period
mean (the average of the periodic state is ``G⁻¹ B P̄``).  A neglected mode with τ < τ_c is in
error only by its own transient, ``≤ e^{−δ/τ_c}`` of its amplitude at a time δ after a power
step or kink; reported samples are taken at every segment end and at log-spaced interior
points no closer than ``40·τ_c`` to the start of their segment (``τ_c = h_min/40`` by default,
h_min the shortest segment), so the neglected transients are below e⁻⁴⁰ of their amplitude at
every reported sample.  The state at t = 0 is the given initial state (periodic: the
left limit, equal to the end of the period).

Two ways of getting the tracked modes
-------------------------------------
``basis="eig"``: the exact modes with τ > τ_c.  Their number is counted first from the
inertia of ``G − C/τ_c`` (Sylvester's law of inertia: the number of negative pivots of its
LDLᵀ factorisation equals the number of eigenvalues λ < 1/τ_c; Haynsworth's inertia additivity
covers the massless rows), then they are found by Lanczos (ARPACK ``eigsh``) on the symmetric
operator ``C^{1/2} G⁻¹ C^{1/2}`` applied with one sparse factorisation of G (shift-invert at
0).  Within e⁻⁴⁰ this path is as exact as the dense modal solver.

``basis="krylov"``: when the count (or ``n × count`` doubles) exceeds the budget, a rational
Krylov subspace is built instead — for shifts σ_j log-spaced over the time constants of
interest (1/τ_max … 1/τ_c, and σ = 0) the chains ``((G + σ_j C)⁻¹ C)^i G⁻¹ B`` (and the same
from the initial deviation), C-orthonormalised — and the network is projected on it
(Galerkin / Rayleigh–Ritz: ``Vᵀ G V y = μ y``).  The Ritz pairs (μ, V y) then play the part
of the modes; S₀, S₁ keep steady values and period means exact.  This is an approximation
of the dynamics (model order reduction, moment matching at each shift); ``info
["error_estimate"]`` compares it with the space one chain level smaller, relative to the
largest probe rise.  The chosen path and its size are in ``info``.

Parts of the network without a path to a boundary (adiabatic) are refused (G singular);
use the dense modal solver for them.

References
----------
B. N. Parlett, *The Symmetric Eigenvalue Problem*, SIAM, 1998 (Sylvester inertia,
shift-invert Lanczos for the generalised symmetric problem).  R. B. Lehoucq, D. C. Sorensen
and C. Yang, *ARPACK Users' Guide*, SIAM, 1998.  A. Ruhe, "Rational Krylov sequence methods
for eigenvalue computation", Linear Algebra Appl. 58, 1984; A. Odabasioglu, M. Celik and
L. T. Pileggi, "PRIMA: passive reduced-order interconnect macromodeling algorithm", IEEE
Trans. CAD 17(8), 1998 (congruence projection of RC networks keeps them stable).
R. W. Cottle, "Manifestations of the Schur complement", Linear Algebra Appl. 8, 1974
(Haynsworth inertia additivity).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as dla
import scipy.sparse as sp
import scipy.sparse.linalg as sla

from .assemble import NetworkError, floating_nodes, static_field
from .modal import gk
from .solvers import RawResponse
from .system import ThermalSystem

__all__ = ["SparseSolver", "ModeBasis", "count_modes_below"]

#: Samples inside a segment (log-spaced), besides its end.
INTERIOR_POINTS = 8
#: A reported interior sample is at least this many τ_c after the start of its segment.
CUT_MARGIN = 40.0


def _psi(k: int, lam: np.ndarray, s) -> np.ndarray:
    """ψ_k(λ, s) = ∫₀^s e^{−λ(s−u)} u^k/k! du = s^{k+1} g_k(λs) (g_k from the modal solver)."""
    s = np.asarray(s, dtype=np.float64)
    return s ** (k + 1) * gk(k, lam * s)


def _factor(A: sp.spmatrix, symmetric_no_pivot: bool = False):
    """Sparse LU (SuperLU) with a symmetric fill-reducing ordering."""
    A = sp.csc_matrix(A)
    if symmetric_no_pivot:
        return sla.splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                        options={"SymmetricMode": True})
    return sla.splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                    options={"SymmetricMode": True})


def count_modes_below(G: sp.spmatrix, C: np.ndarray, sigma: float) -> int:
    """Number of generalised eigenvalues λ of ``G φ = λ C φ`` (C ≥ 0 diagonal) below σ.

    Sylvester's law of inertia: ``G − σC = L D Lᵀ`` has as many negative pivots as
    eigenvalues below σ (the massless rows add only positive pivots, Haynsworth).  The
    factorisation is taken without pivoting in a symmetric ordering so the diagonal of U
    is D.
    """
    A = (sp.csc_matrix(G) - sigma * sp.diags(C)).tocsc()
    lu = _factor(A, symmetric_no_pivot=True)
    d = lu.U.diagonal()
    if not np.all(np.isfinite(d)) or np.any(d == 0):
        raise np.linalg.LinAlgError("inertia count: zero pivot")
    return int(np.count_nonzero(d < 0))


@dataclass
class ModeBasis:
    """Tracked modes plus the quasi-static remainder (see the module docstring).

    Shapes: n free nodes, r tracked modes, m inputs.

    Parameters
    ----------
    kind
        "eig" (exact modes) or "krylov" (Ritz pairs of a rational Krylov subspace).
    lam
        λ = 1/τ of the tracked modes, 1/s, (r,).
    Phi
        C-orthonormal mode shapes at every free node, (n, r).
    W
        Modal input map Φᵀ B, (r, m).
    S0, S1
        Quasi-static remainder maps, (n, m): K/W and K·s/W.
    tau_cut
        τ_c, s.
    """

    kind: str
    lam: np.ndarray
    Phi: np.ndarray
    W: np.ndarray
    S0: np.ndarray
    S1: np.ndarray
    tau_cut: float
    info: dict = field(default_factory=dict)


class SparseSolver:
    """Linear solver for large networks (registered as ``"sparse"``).

    Parameters
    ----------
    system
        The assembled, linear system.
    tau_cut
        Option: τ_c, s; modes faster than this are quasi-static.  Default: the shortest
        segment of each waveform / 40.
    basis
        Option: "auto" (exact modes when they fit the budget, else rational Krylov),
        "eig" or "krylov".
    max_modes
        Option: largest number of exact modes computed by Lanczos (default 1500).
    memory_budget
        Option: bytes allowed for the n × r mode array (default 1e9).
    shifts_per_decade, depth
        Options of the Krylov basis: shifts per decade of time constant (default 1) and
        chain length per shift (default 12).
    """

    name = "sparse"

    def __init__(self, system: ThermalSystem, **options) -> None:
        if not system.is_linear:
            raise ValueError("SparseSolver: the system is nonlinear (k(T) exponents or "
                             "temperature coefficients); use method='nonlinear'")
        known = {"tau_cut", "basis", "max_modes", "memory_budget", "shifts_per_decade",
                 "depth"}
        bad = set(options) - known
        if bad:
            raise ValueError(f"SparseSolver: unknown option(s) {sorted(bad)}; expected "
                             f"{sorted(known)}")
        basis = options.get("basis", "auto")
        if basis not in ("auto", "eig", "krylov"):
            raise ValueError(f"basis = {basis!r}: expected 'auto', 'eig' or 'krylov'")
        tau_cut = options.get("tau_cut")
        if tau_cut is not None and not (math.isfinite(tau_cut) and tau_cut > 0):
            raise ValueError(f"tau_cut = {tau_cut!r}: expected a positive time in s")
        self.system = system
        self.basis_kind = basis
        self.tau_cut_option = None if tau_cut is None else float(tau_cut)
        self.max_modes = int(options.get("max_modes", 1500))
        self.memory_budget = float(options.get("memory_budget", 1e9))
        self.shifts_per_decade = float(options.get("shifts_per_decade", 1.0))
        self.depth = int(options.get("depth", 12))
        groups = floating_nodes(system)
        if groups:
            raise NetworkError(
                f"SparseSolver: nodes {', '.join(groups[0][:6])} have no conduction path to "
                "a boundary (adiabatic part): G is singular; use method='modal'")
        self.C = np.asarray(system.C, dtype=np.float64)
        self.G = sp.csc_matrix(system.G)
        self.B = sp.csr_matrix(system.B)
        self.lu0 = _factor(self.G)
        self.T_amb = static_field(system)
        Bd = self.B.toarray()
        self.U0 = self.lu0.solve(Bd) if system.m else np.zeros((system.n, 0))   # G⁻¹B
        self.U1 = self.lu0.solve(self.C[:, None] * self.U0) if system.m else self.U0.copy()
        self._bases: dict = {}
        self.n_solves = 2 * system.m
        self.n_factor = 1

    # -- basis construction ------------------------------------------------------------
    def steady(self, power: np.ndarray) -> np.ndarray:
        """Exact steady state ``G T = Gb T_b + B P`` (sparse solve), K absolute (n,)."""
        P = np.asarray(power, dtype=np.float64).reshape(-1)
        return self.T_amb + self.U0 @ P

    def _tau_cut(self, edges: np.ndarray) -> float:
        if self.tau_cut_option is not None:
            return self.tau_cut_option
        return float(np.min(np.diff(edges))) / CUT_MARGIN

    def basis(self, tau_cut: float, extra: np.ndarray | None = None) -> ModeBasis:
        """Tracked modes for τ_c (cached; ``extra`` columns widen a Krylov basis)."""
        key = (tau_cut, None if extra is None else extra.tobytes())
        if key in self._bases:
            return self._bases[key]
        kind = self.basis_kind
        count = None
        if kind in ("auto", "eig"):
            try:
                count = count_modes_below(self.G, self.C, 1.0 / tau_cut)
                self.n_factor += 1
            except (RuntimeError, np.linalg.LinAlgError):
                count = None
            fits = (count is not None and count <= self.max_modes
                    and count * self.system.n * 8.0 <= self.memory_budget)
            if kind == "eig" and count is None:
                raise np.linalg.LinAlgError("SparseSolver: the mode count by inertia failed "
                                            "(zero pivot); use basis='krylov'")
            kind = "eig" if (kind == "eig" or fits) else "krylov"
        if kind == "eig":
            b = self._eig_basis(tau_cut, count)
        else:
            b = self._krylov_basis(tau_cut, extra)
        if count is not None:
            b.info["modes_above_cut"] = count
        self._bases[key] = b
        return b

    def _finish(self, kind, lam, Phi, tau_cut, info) -> ModeBasis:
        W = (self.B.T @ Phi).T if Phi.shape[1] else np.zeros((0, self.system.m))
        W = np.asarray(W)
        S0 = self.U0 - Phi @ (W / lam[:, None])
        S1 = self.U1 - Phi @ (W / (lam * lam)[:, None])
        return ModeBasis(kind, lam, Phi, W, S0, S1, tau_cut, info)

    def _eig_basis(self, tau_cut: float, count: int) -> ModeBasis:
        """Exact modes with τ > τ_c: Lanczos on C^{1/2} G⁻¹ C^{1/2} (largest eigenvalues τ)."""
        n = self.system.n
        cap = np.flatnonzero(self.C > 0)
        nc = cap.size
        sc = np.sqrt(self.C[cap])
        if count == 0:
            return self._finish("eig", np.zeros(0), np.zeros((n, 0)), tau_cut, {"modes": 0})

        def embed(y):
            z = np.zeros((n,) + y.shape[1:])
            z[cap] = sc.reshape((-1,) + (1,) * (y.ndim - 1)) * y
            return z

        if count >= nc - 1 or nc <= 64:
            # small capacitive part: the whole operator, densely (still no n × n eigenproblem)
            Z = self.lu0.solve(embed(np.eye(nc)))
            self.n_solves += nc
            M = sc[:, None] * Z[cap]
            nu, U = dla.eigh(0.5 * (M + M.T))
            nu, U = nu[::-1][:count], U[:, ::-1][:, :count]
            iters = 0
        else:
            def op(y):
                self.n_solves += 1
                return sc * self.lu0.solve(embed(np.asarray(y).reshape(-1)))[cap]

            A = sla.LinearOperator((nc, nc), matvec=op, dtype=np.float64)
            ncv = min(nc, max(2 * count + 1, count + 32))
            nu, U = sla.eigsh(A, k=count, which="LA", tol=1e-13, ncv=ncv,
                              v0=np.ones(nc) / math.sqrt(nc))
            order = np.argsort(nu)[::-1]
            nu, U = nu[order], U[:, order]
            iters = 1
        lam = 1.0 / nu
        # full mode shapes (massless rows included): φ = λ G⁻¹ C φ = G⁻¹ (C^{1/2} u) / ν
        Phi = self.lu0.solve(embed(U)) * lam[None, :]
        self.n_solves += count
        return self._finish("eig", lam, Phi, tau_cut,
                            {"modes": int(count), "lanczos": bool(iters)})

    def _tau_max(self) -> float:
        """Slowest time constant (largest eigenvalue of C^{1/2} G⁻¹ C^{1/2}), s."""
        n = self.system.n
        cap = np.flatnonzero(self.C > 0)
        sc = np.sqrt(self.C[cap])
        if cap.size <= 2:
            return float(np.max(self.C) / max(self.G.diagonal().min(), 1e-300)) * 10

        def op(y):
            z = np.zeros(n)
            z[cap] = sc * np.asarray(y).reshape(-1)
            self.n_solves += 1
            return sc * self.lu0.solve(z)[cap]

        A = sla.LinearOperator((cap.size, cap.size), matvec=op, dtype=np.float64)
        nu = sla.eigsh(A, k=1, which="LA", tol=1e-3, v0=np.ones(cap.size),
                       return_eigenvectors=False)
        return float(nu[0])

    def _krylov_basis(self, tau_cut: float, extra: np.ndarray | None) -> ModeBasis:
        """Rational Krylov (multi-shift) Galerkin basis; see the module docstring."""
        n, m = self.system.n, self.system.m
        C = self.C
        tmax = self._tau_max()
        start = [self.U0]
        if extra is not None:
            start.append(extra.reshape(n, -1))
        X0 = np.hstack(start)
        decades = max(math.log10(tmax / tau_cut), 0.0)
        nsh = max(1, int(math.ceil(decades * self.shifts_per_decade)) + 1)
        taus = np.geomspace(tmax, tau_cut, nsh) if tmax > tau_cut else np.array([tau_cut])
        shifts = [0.0] + list(1.0 / taus)
        V = np.zeros((n, 0))
        levels = []  # chain level of each basis column (for the error estimate)

        def orth(Y, V):
            # C-inner-product block Gram–Schmidt, twice, then a thin QR in the C-norm
            for _ in range(2):
                if V.shape[1]:
                    Y = Y - V @ (V.T @ (C[:, None] * Y))
            Gm = Y.T @ (C[:, None] * Y)
            w, Q = np.linalg.eigh(0.5 * (Gm + Gm.T))
            keep = w > 1e-24 * max(w.max(initial=0.0), 1e-300) * 1e8
            if not keep.any():
                return np.zeros((n, 0))
            Z = Y @ (Q[:, keep] / np.sqrt(w[keep]))
            for _ in range(2):
                if V.shape[1]:
                    Z = Z - V @ (V.T @ (C[:, None] * Z))
                Gz = Z.T @ (C[:, None] * Z)
                w2, Q2 = np.linalg.eigh(0.5 * (Gz + Gz.T))
                k2 = w2 > 1e-20
                Z = Z @ (Q2[:, k2] / np.sqrt(w2[k2]))
            return Z

        for sigma in shifts:
            if sigma == 0.0:
                lu = self.lu0
            else:
                lu = _factor(self.G + sigma * sp.diags(C))
                self.n_factor += 1
            Y = X0
            for level in range(self.depth):
                Y = lu.solve(C[:, None] * Y)
                self.n_solves += Y.shape[1]
                Z = orth(Y, V)
                if Z.shape[1] == 0:
                    break
                V = np.hstack([V, Z])
                levels += [level] * Z.shape[1]
                Y = Z
            del lu
        levels = np.asarray(levels)
        lam, Phi = self._ritz(V)
        info = {"modes": int(lam.size), "shifts": len(shifts), "depth": self.depth,
                "tau_max": tmax}
        b = self._finish("krylov", lam, Phi, tau_cut, info)
        # smaller space (last chain level dropped) for the error estimate
        small = levels < self.depth - 1
        if small.any() and not small.all():
            lam_s, Phi_s = self._ritz(V[:, small])
            b.info["_smaller"] = self._finish("krylov", lam_s, Phi_s, tau_cut, {})
        return b

    def _ritz(self, V: np.ndarray):
        """Rayleigh–Ritz on span(V) (C-orthonormal): Vᵀ G V y = μ y, Ritz vectors V y."""
        Gr = V.T @ (self.G @ V)
        mu, Y = np.linalg.eigh(0.5 * (Gr + Gr.T))
        mu = np.maximum(mu, 1e-300)
        return mu, V @ Y

    # -- propagation -------------------------------------------------------------------
    @staticmethod
    def _offsets(h: float, tau_cut: float) -> np.ndarray:
        """Interior sample offsets of a segment of length h (log-spaced, ≥ 40 τ_c), then h."""
        lo = max(CUT_MARGIN * tau_cut, h * 1e-3)
        if lo < 0.5 * h:
            s = np.geomspace(lo, h, INTERIOR_POINTS + 1)
        else:
            s = np.array([h])
        return s

    def _run(self, b: ModeBasis, x0: np.ndarray, edges, level, slope, rows):
        """Sweep the segments from modal state x0.

        Returns t (k,), rises at the probes (k, p) (t = 0 excluded), x_end, ∫x dt, and the
        quasi-static integral ∫(S₀P − S₁P') dt as a (m,)-weight pair."""
        lam = b.lam
        Pp, S0p, S1p = b.Phi[rows], b.S0[rows], b.S1[rows]
        x = x0.copy()
        integral = np.zeros_like(x)
        t_out, v_out = [], []
        N = edges.size - 1
        for k in range(N):
            h = edges[k + 1] - edges[k]
            a, s_ = level[k], slope[k]
            Wa, Wb = b.W @ a, b.W @ s_
            offs = self._offsets(h, b.tau_cut)
            lam2 = lam[:, None]
            X = (np.exp(-lam2 * offs[None, :]) * x[:, None] + _psi(0, lam2, offs) * Wa[:, None]
                 + _psi(1, lam2, offs) * Wb[:, None])
            P = a[None, :] + offs[:, None] * s_[None, :]
            vals = (Pp @ X).T + P @ S0p.T - (S1p @ s_)[None, :]
            t_out.append(edges[k] + offs)
            v_out.append(vals)
            integral += _psi(0, lam, h) * x + _psi(1, lam, h) * Wa + _psi(2, lam, h) * Wb
            x = X[:, -1]
        t = np.concatenate(t_out)
        t[-1] = edges[-1]
        return t, np.vstack(v_out), x, integral

    def _run_increment(self, b: ModeBasis, edges, level, slope) -> np.ndarray:
        """End-of-period modal state from a zero start (vectorised over segments)."""
        lam = b.lam[:, None]
        T = edges[-1]
        h = np.diff(edges)[None, :]
        rho = _psi(0, lam, h) * (b.W @ level.T) + _psi(1, lam, h) * (b.W @ slope.T)
        return np.sum(np.exp(-lam * (T - edges[1:])[None, :]) * rho, axis=1)

    def _full(self, b: ModeBasis, x: np.ndarray, P: np.ndarray, dP: np.ndarray) -> np.ndarray:
        return self.T_amb + b.Phi @ x + b.S0 @ P - b.S1 @ dP

    @staticmethod
    def _arrays(edges, level, slope, probes):
        edges = np.asarray(edges, dtype=np.float64)
        level = np.atleast_2d(np.asarray(level, dtype=np.float64))
        slope = np.atleast_2d(np.asarray(slope, dtype=np.float64))
        rows = np.asarray(probes, dtype=np.int64).reshape(-1)
        return edges, level, slope, rows

    def _info(self, b: ModeBasis, edges, mean_full, extra=None) -> dict:
        info = {"method": "sparse", "basis": b.kind, "modes": int(b.lam.size),
                "tau_cut": b.tau_cut, "segments": int(edges.size - 1),
                "factorisations": self.n_factor, "solves": self.n_solves,
                "mean_full": mean_full, "success": True,
                "message": (f"{b.kind} basis, {b.lam.size} tracked modes (τ_c = "
                            f"{b.tau_cut:.3g} s), faster dynamics quasi-static")}
        for k, v in b.info.items():
            if not k.startswith("_"):
                info.setdefault(k, v)
        if extra:
            info.update(extra)
        return info

    def _estimate(self, b: ModeBasis, fn, vals: np.ndarray) -> dict:
        """Krylov path: compare with the smaller space (relative to the largest rise)."""
        small = b.info.get("_smaller")
        if small is None:
            return {}
        other = fn(small)
        scale = max(float(np.max(np.abs(vals))), 1e-300)
        n = min(len(other), len(vals))
        return {"error_estimate": float(np.max(np.abs(other[:n] - vals[:n]))) / scale}

    def periodic(self, edges, level, slope, probes) -> RawResponse:
        """Periodic steady state: x(0) = r/(1 − e^{−λT}) per tracked mode (exact),
        quasi-static remainder as in the module docstring."""
        edges, level, slope, rows = self._arrays(edges, level, slope, probes)
        b = self.basis(self._tau_cut(edges))
        T = edges[-1]
        h_last = edges[-1] - edges[-2]
        P_end = level[-1] + slope[-1] * h_last

        def solve(bb):
            r = self._run_increment(bb, edges, level, slope)
            x0 = r / (-np.expm1(-bb.lam * T))
            t, v, x_end, _ = self._run(bb, x0, edges, level, slope, rows)
            v0 = bb.Phi[rows] @ x0 + bb.S0[rows] @ P_end - bb.S1[rows] @ slope[-1]
            return x0, t, np.vstack([v0[None, :], v])

        x0, t, v = solve(b)
        extra = self._estimate(b, lambda bb: solve(bb)[2], v) if b.kind == "krylov" else {}
        h = np.diff(edges)
        Pbar = (h @ level + 0.5 * (h * h) @ slope) / T
        mean_full = self.T_amb + self.U0 @ Pbar          # exact: average of the periodic state
        start = self._full(b, x0, P_end, slope[-1])
        t = np.concatenate([[0.0], t])
        theta = v + self.T_amb[rows][None, :]
        return RawResponse(t, theta, start, start.copy(), mean_full[rows],
                           self._info(b, edges, mean_full, extra))

    def transient(self, edges, level, slope, initial, probes) -> RawResponse:
        """Transient from ``initial`` (n,) K absolute (None: the zero-power static field)."""
        edges, level, slope, rows = self._arrays(edges, level, slope, probes)
        n = self.system.n
        if initial is None:
            d0 = np.zeros(n)
        else:
            d0 = np.asarray(initial, dtype=np.float64).reshape(-1) - self.T_amb
            if d0.size != n or not np.all(np.isfinite(d0)):
                raise ValueError(f"initial: expected {n} finite temperatures in K, got "
                                 f"shape {np.shape(initial)}")
        extra_cols = None if not np.any(d0) else d0
        b = self.basis(self._tau_cut(edges),
                       extra_cols if self.basis_kind != "eig" else None)
        Cd0 = self.C * d0

        def solve(bb):
            x0 = bb.Phi.T @ Cd0
            t, v, x_end, integral = self._run(bb, x0, edges, level, slope, rows)
            return x0, t, v, x_end, integral

        x0, t, v, x_end, integral = solve(b)
        v0 = d0[rows]
        vv = np.vstack([v0[None, :], v])
        extra = (self._estimate(b, lambda bb: np.vstack([v0[None, :], solve(bb)[2]]), vv)
                 if b.kind == "krylov" else {})
        dur = edges[-1]
        h = np.diff(edges)
        EP = h @ level + 0.5 * (h * h) @ slope              # ∫P dt per input
        dPint = h @ slope                                    # ∫P' dt
        mean_full = self.T_amb + (b.Phi @ integral + b.S0 @ EP - b.S1 @ dPint) / dur
        P_end = level[-1] + slope[-1] * h[-1]
        end = self._full(b, x_end, P_end, slope[-1])
        t = np.concatenate([[0.0], t])
        theta = vv + self.T_amb[rows][None, :]
        start = self.T_amb + d0
        return RawResponse(t, theta, start, end, mean_full[rows],
                           self._info(b, edges, mean_full, extra))
