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
every reported sample.  Each probe's extremes are then located exactly in the segments
around its best samples (sign change of the closed-form slope, Brent); with ``nc ≤ 64``
capacitive nodes every mode is tracked, so this holds also just after an edge; above, an
extreme within ~40·τ_c of an edge is that of the tracked modes only.  The state at t = 0 is the given initial state (periodic: the
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
interest (1/τ_max … max(τ_c, min C_i/(2G_ii)), and σ = 0) the chains
``((G + σ_j C)⁻¹ C)^i G⁻¹ B`` (and the same from the initial deviation), each built and
C-orthonormalised on its own, then together — and the network is projected on it
(Galerkin / Rayleigh–Ritz: ``Vᵀ G V y = μ y``).  The Ritz pairs (μ, V y) then play the part
of the modes; S₀, S₁ keep steady values and period means exact.  This is an approximation
of the dynamics (model order reduction, moment matching at each shift); ``info
["error_estimate"]`` compares it with the space of every other shift (σ = 0 kept),
relative to the largest probe rise, floored at 1e-9 (rounding).  Measured: 1.3e-8 of the
rise against the modal solver on the 2,000-node cross-section (estimate 1.5e-7), 2e-10 on a
2,000-node board grid; on the 100k-node board grid its periodic peak is within 3e-10 of
implicit stepping at tol 1e-6.  With basis="auto" an estimate above ``tol`` hands over to
stepping.  The chosen path and its size are in ``info``.

``basis="step"`` (chosen by "auto" when the exact modes do not fit the budget and n ≤
``max_step_nodes``): no modes at all; implicit time stepping of the whole network with a
requested accuracy ``tol`` (relative to the largest probe rise, default 1e-6).  Each step is
the L-stable, stiffly accurate SDIRK4 of Hairer & Wanner (one sparse factorisation of
``C/(γh) + G`` per distinct step, reused); the step sequence restarts at ``h0`` at every
switching edge, where the fast modes are excited, and doubles every ``per_level`` steps.
The periodic state solves ``(I − M) x₀ = r`` (M: one period of homogeneous stepping, r: one
period from zero) by GMRES from the mean-power state ``x̄ = G⁻¹ B P̄``, right-preconditioned
by ``I + (T C⁻¹G)⁻¹`` (one solve with G): for a mode of rate λ the preconditioned
eigenvalue is ``(1 − e^{−λT})(1 + 1/(λT)) ∈ [1, 1.28]``, so slow and fast modes converge
alike in a handful of iterations.  ``info["error_estimate"]`` is from step doubling (the
period, or the first segments of a transient, re-run with every step halved; plus the
periodicity defect), relative to the largest probe rise; above ``tol`` the message says so
and ``success`` is False.  Sample times are the step ends (dense after every edge).

The Krylov path reports its estimate the same way (warning and ``success`` False above
``tol``).

Parts of the network without a path to a boundary (adiabatic) are refused (G singular);
use the dense modal solver for them.

References
----------
E. Hairer and G. Wanner, *Solving Ordinary Differential Equations II*, 2nd ed., Springer,
1996, Table IV.6.5 (SDIRK4).  Y. Saad and M. H. Schultz, "GMRES", SIAM J. Sci. Stat.
Comput. 7, 1986.  B. N. Parlett, *The Symmetric Eigenvalue Problem*, SIAM, 1998 (Sylvester inertia,
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
from .solvers import RawResponse, as_arrays, merge_samples, segment_energy
from .system import ThermalSystem

__all__ = ["SparseSolver", "ModeBasis", "Stepper", "count_modes_below"]

#: Samples inside a segment (log-spaced), besides its end.
INTERIOR_POINTS = 8
#: A reported interior sample is at least this many τ_c after the start of its segment.
CUT_MARGIN = 40.0
#: Stepping ladder: per_level = ceil(STEP_LEVEL_FACTOR·tol^-1/4), h0 = STEP_H0_FACTOR·τ_min·tol^1/4.
STEP_LEVEL_FACTOR = 0.185
STEP_H0_FACTOR = 0.5
#: GMRES stops at a residual below this fraction of tol × the largest rise.
GMRES_FRACTION = 0.05
#: Lowest reported Krylov estimate: below it the two spaces agree to rounding (measured:
#: 2e-10 of the rise against the modal solver on a 2,000-node board grid, estimate 2e-11).
ESTIMATE_FLOOR = 1e-9
#: Segments re-run with halved steps for the transient's error estimate.
ESTIMATE_SEGMENTS = 4
#: Runs of up to this many segments search every segment for interior extremes.
ALL_SEGMENTS = 64


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


# -- implicit stepping fallback (controlled accuracy) -------------------------------------
#: SDIRK4 of Hairer & Wanner (Solving ODEs II, 2nd ed., 1996, Table IV.6.5): 5 stages, order
#: 4, L-stable and stiffly accurate (the last stage is the step), one diagonal γ = 1/4.
_SD_A = np.array([[1 / 4, 0, 0, 0, 0],
                  [1 / 2, 1 / 4, 0, 0, 0],
                  [17 / 50, -1 / 25, 1 / 4, 0, 0],
                  [371 / 1360, -137 / 2720, 15 / 544, 1 / 4, 0],
                  [25 / 24, -49 / 48, 125 / 16, -85 / 12, 1 / 4]])
_SD_C = np.array([1 / 4, 3 / 4, 11 / 20, 1 / 2, 1.0])
_SD_G = 0.25


class Stepper:
    """Implicit time stepping of ``C θ' + G θ = B P(t)`` with reused sparse factorisations.

    Each step is SDIRK4 (see ``_SD_A``): stage i solves

        (C/(γh) + G) Y_i = C θ_n/(γh) + Σ_{j<i} (a_ij/γ) F_j + B P(t_n + c_i h),
        F_j = −G Y_j + B P(t_n + c_j h),    θ_{n+1} = Y_5,

    with one SuperLU factorisation of ``C/(γh) + G`` per distinct step size h (cached).
    Massless rows (C = 0) are algebraic: the method is stiffly accurate, so they satisfy
    ``G θ = B P`` row-wise at every step end (index-1 DAE; Hairer & Wanner II, §VI.1).

    Step sequence of a segment: it restarts at every switching edge (where the fast modes
    are excited) with ``h0`` and doubles the step after every ``per_level`` steps (a graded
    ladder h0·2^k shared by all segments, so the factorisations are reused); the last
    part of the segment is divided into equal steps no longer than the current rung.
    A mode of time constant τ is met with h/τ ≲ ln2/per_level when it matters, so the
    local error per mode is ~ (ln2/per_level)^5 and the error falls as per_level^-4.

    Parameters
    ----------
    C, G, B
        The system (rises; any constant boundary part removed).
    h0
        First step after every edge, s.
    per_level
        Steps per rung of the ladder.
    """

    def __init__(self, C: np.ndarray, G: sp.csc_matrix, B: sp.csr_matrix, h0: float,
                 per_level: int, cache_bytes: float = 1.5e9) -> None:
        self.C = C
        self.G = G
        self.B = B
        self.h0 = float(h0)
        self.per_level = int(per_level)
        self.cache_bytes = cache_bytes
        self._lu: dict = {}
        self._lu_bytes = 0.0
        self._grids: dict = {}
        self.n_factor = 0
        self.n_solves = 0
        self.n_steps = 0

    def grid(self, L: float) -> np.ndarray:
        """Step sizes of a segment of length L (sum = L to rounding)."""
        key = float(L)
        g = self._grids.get(key)
        if g is not None:
            return g
        steps = []
        done = 0.0
        h = self.h0
        while True:
            if done + self.per_level * h >= L * (1 - 1e-12):
                rest = L - done
                q = max(1, int(math.ceil(rest / h * (1 - 1e-12))))
                if rest > 0:
                    steps += [rest / q] * q
                break
            steps += [h] * self.per_level
            done += self.per_level * h
            h *= 2.0
        g = np.asarray(steps)
        self._grids[key] = g
        return g

    def lu(self, h: float):
        key = float(h)
        f = self._lu.get(key)
        if f is None:
            f = _factor(self.G + sp.diags(self.C / (_SD_G * h)))
            self.n_factor += 1
            size = 12.0 * (f.L.nnz + f.U.nnz)
            while self._lu and self._lu_bytes + size > self.cache_bytes:
                k0 = next(iter(self._lu))
                old = self._lu.pop(k0)
                self._lu_bytes -= 12.0 * (old.L.nnz + old.U.nnz)
            self._lu[key] = f
            self._lu_bytes += size
        return f

    def segment(self, y: np.ndarray, a_vec: np.ndarray, b_vec: np.ndarray, L: float,
                rows: np.ndarray | None, refine: int = 1):
        """Advance θ over one segment with input ``B P = a_vec + s·b_vec`` (s from its start).

        Returns the step-end offsets (k,), the probe rows at them (k, p) and the end state.
        ``refine`` = 2 splits every step into two halves (step doubling, for the estimate).
        """
        hs = self.grid(L)
        if refine > 1:
            hs = np.repeat(hs / refine, refine)
        C, G = self.C, self.G
        offs = np.empty(hs.size)
        vals = [] if rows is not None else None
        s = 0.0
        A = _SD_A / _SD_G
        for k, h in enumerate(hs):
            lu = self.lu(h)
            Cy = C * y * (1.0 / (_SD_G * h))
            F = []
            for i in range(5):
                rhs = Cy if a_vec is None else Cy + a_vec + (s + _SD_C[i] * h) * b_vec
                for j in range(i):
                    rhs = rhs + A[i, j] * F[j]
                Y = lu.solve(rhs)
                if i < 4:
                    f = -(G @ Y)
                    if a_vec is not None:
                        f += a_vec + (s + _SD_C[i] * h) * b_vec
                    F.append(f)
            self.n_solves += 5
            y = Y
            s += h
            offs[k] = s
            if vals is not None:
                vals.append(y[rows])
        offs[-1] = L
        self.n_steps += hs.size
        return offs, (np.array(vals) if vals is not None else None), y

    def sweep(self, y, edges, level, slope, rows, refine: int = 1, last: int | None = None):
        """Step through the segments (``level``/``slope`` (s, m), or None for no input);
        returns t (k,), probe rows (k, p) (None without rows), end state."""
        ts, vs = [], []
        N = edges.size - 1 if last is None else min(last, edges.size - 1)
        for k in range(N):
            L = edges[k + 1] - edges[k]
            if level is None:
                a_vec = b_vec = None
            else:
                a_vec = self.B @ level[k]
                b_vec = self.B @ slope[k]
            offs, v, y = self.segment(y, a_vec, b_vec, L, rows, refine)
            ts.append(edges[k] + offs)
            if rows is not None:
                vs.append(v)
        t = np.concatenate(ts)
        return t, (np.vstack(vs) if rows is not None else None), y


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
        Option: "auto" (exact modes when they fit the budget, else implicit stepping up
        to ``max_step_nodes`` free nodes (default 20000), else rational Krylov), "eig",
        "step" or "krylov".
    tol
        Option: requested accuracy of the stepping path, relative to the largest probe
        rise (default 1e-6); also the threshold above which the Krylov estimate warns.
    per_level, h0
        Options overriding the stepping ladder derived from ``tol``.
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
                 "depth", "tol", "max_step_nodes", "per_level", "h0"}
        bad = set(options) - known
        if bad:
            raise ValueError(f"SparseSolver: unknown option(s) {sorted(bad)}; expected "
                             f"{sorted(known)}")
        basis = options.get("basis", "auto")
        if basis not in ("auto", "eig", "krylov", "step"):
            raise ValueError(f"basis = {basis!r}: expected 'auto', 'eig', 'step' or 'krylov'")
        tol = options.get("tol", 1e-6)
        if not (isinstance(tol, (int, float)) and 0 < tol < 1):
            raise ValueError(f"tol = {tol!r}: expected a relative tolerance in (0, 1)")
        self.tol = float(tol)
        self.max_step_nodes = int(options.get("max_step_nodes", 20000))
        self.per_level_option = options.get("per_level")
        if self.per_level_option is not None and int(self.per_level_option) < 1:
            raise ValueError(f"per_level = {self.per_level_option!r}: expected an integer >= 1")
        self.h0_option = options.get("h0")
        if self.h0_option is not None and not (math.isfinite(self.h0_option)
                                               and self.h0_option > 0):
            raise ValueError(f"h0 = {self.h0_option!r}: expected a positive time in s")
        self._stepper_obj = None
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
        # rounded: a windowed transient of the same waveform reuses the periodic basis
        return float(f"{float(np.min(np.diff(edges))) / CUT_MARGIN:.9g}")

    def path(self, tau_cut: float) -> tuple[str, int | None]:
        """The method for τ_c: "eig" when the exact modes above the cut fit the budget
        (``max_modes``, ``memory_budget``), else "krylov" (reduced model with an error
        estimate; with basis="auto" an estimate above ``tol`` hands over to implicit
        stepping up to ``max_step_nodes`` free nodes).  Returns (kind, mode count)."""
        key = ("path", tau_cut)
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
                                            "(zero pivot); use basis='step' or 'krylov'")
            kind = "eig" if (kind == "eig" or fits) else "krylov"
        self._bases[key] = (kind, count)
        return kind, count

    def basis(self, tau_cut: float, extra: np.ndarray | None = None) -> ModeBasis:
        """Tracked modes for τ_c (cached; ``extra`` columns widen a Krylov basis)."""
        key = (tau_cut, None if extra is None else extra.tobytes())
        if key in self._bases:
            return self._bases[key]
        kind, count = self.path(tau_cut)
        if kind == "step":
            raise ValueError("SparseSolver.basis: the stepping path has no mode basis")
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
        if nc <= 64:
            # all modes come out of the dense branch below at no extra cost: track them all,
            # so extremes just after an edge (transfer responses) are not lost to the
            # quasi-static remainder
            count = nc
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
        """Rational Krylov (multi-shift) Galerkin basis; see the module docstring.

        Each shift's chain ``((G + σC)⁻¹C)^i X₀`` is built on its own (C-orthonormalised
        within the chain only), so the spaces of all shifts and of every other shift are
        both genuine rational Krylov spaces; the second gives the error estimate."""
        n, m = self.system.n, self.system.m
        C = self.C
        tmax = self._tau_max()
        start = [self.U0]
        if extra is not None:
            start.append(extra.reshape(n, -1))
        X0 = np.hstack(start)
        # no mode is faster than min C_i/(2 G_ii) (Gershgorin on C⁻¹G, diagonally
        # dominant G; the massless rows' Schur complement keeps that), so shifts stop there
        cap = self.C > 0
        t_lo = tau_cut
        if cap.any():
            t_lo = max(tau_cut, float(np.min(C[cap] / (2.0 * self.G.diagonal()[cap]))))
        decades = max(math.log10(tmax / t_lo), 0.0)
        nsh = max(1, int(math.ceil(decades * self.shifts_per_decade)) + 1)
        taus = np.geomspace(tmax, t_lo, nsh) if tmax > t_lo else np.array([t_lo])
        shifts = [0.0] + list(1.0 / taus)

        def orth(Y, V):
            # C-inner-product block Gram–Schmidt, twice, then a thin QR in the C-norm
            for _ in range(2):
                if V.shape[1]:
                    Y = Y - V @ (V.T @ (C[:, None] * Y))
            Gm = Y.T @ (C[:, None] * Y)
            w, Q = np.linalg.eigh(0.5 * (Gm + Gm.T))
            keep = w > 1e-16 * max(w.max(initial=0.0), 1e-300)
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

        chains = []
        for sigma in shifts:
            if sigma == 0.0:
                lu = self.lu0
            else:
                lu = _factor(self.G + sigma * sp.diags(C))
                self.n_factor += 1
            W = orth(X0, np.zeros((n, 0)))
            Y = W
            for level in range(self.depth):
                Y = lu.solve(C[:, None] * Y)
                self.n_solves += Y.shape[1]
                Y = orth(Y, W)
                if Y.shape[1] == 0:
                    break
                W = np.hstack([W, Y])
            chains.append(W)
            del lu
        V = orth(np.hstack(chains), np.zeros((n, 0)))
        lam, Phi = self._ritz(V)
        info = {"modes": int(lam.size), "shifts": len(shifts), "depth": self.depth,
                "tau_max": tmax}
        b = self._finish("krylov", lam, Phi, tau_cut, info)
        # every other shift (σ = 0 kept): a coarser rational Krylov space for the estimate
        if len(chains) > 2:
            Vs = orth(np.hstack([chains[0]] + chains[2::2]), np.zeros((n, 0)))
            lam_s, Phi_s = self._ritz(Vs)
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
        """Sweep the segments from modal state x0 (samples only; the callers add the exact
        extremes with :meth:`_refine`).

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

    def _refine(self, b: ModeBasis, x0: np.ndarray, edges, level, slope, rows,
                t: np.ndarray, v: np.ndarray, top: int = 2):
        """Add each probe's exact interior extremes near its best samples.

        Inside segment k (start state x_k, power a + b·s) the probe rise is
        θ(s) = Φ_p x(s) + S₀ₚ(a + b s) − S₁ₚ b with x(s) = e^{−λs}x_k + ψ₀Wa + ψ₁Wb, so
        dθ/ds = Φ_p(−λ x(s) + Wa + Wb s) + S₀ₚ b is exact in closed form.  In the segments
        holding (or just after) the ``2·top`` highest and lowest samples of each probe, a sign
        change of dθ/ds on a log grid (s = 0, then 24 points from a quarter of the fastest
        tracked time constant to the segment end; in every segment when there are at most
        ``ALL_SEGMENTS``) brackets an extreme, located by
        Brent's method (R. P. Brent, *Algorithms for Minimization without Derivatives*,
        1973, ch. 4) and added as a sample for every probe.  The extremes of a transfer
        response (negative residues) often lie just after an edge, before the first
        log-spaced sample.  The candidate segments' start states come from one forward
        sweep (memory: one state per candidate segment).  Right limits at power jumps of
        massless probes are added too when every mode is tracked.
        """
        from scipy.optimize import brentq

        N = edges.size - 1
        if t.size == 0 or b.lam.size == 0:
            return t, v
        lam = b.lam
        Pp, S0p, S1p = b.Phi[rows], b.S0[rows], b.S1[rows]
        seg = np.clip(np.searchsorted(edges, t, side="left") - 1, 0, N - 1)
        order = np.argsort(v, axis=0, kind="stable")
        cand = set()
        if N <= ALL_SEGMENTS:
            # few segments: search every one (the best samples can sit near a lower local
            # extreme than the true one: n=11, seed=898 missed a minimum by 4e-7 of the rise)
            cand = {(k, j) for k in range(N) for j in range(v.shape[1])}
        else:
            for j in range(v.shape[1]):
                for i in np.concatenate([order[-2 * top:, j], order[:2 * top, j]]).tolist():
                    cand.add((int(seg[i]), j))
                    if seg[i] + 1 < N:
                        cand.add((int(seg[i]) + 1, j))
        # right limits at power jumps of probes with an instantaneous response (massless
        # nodes heated directly): exact when every mode is tracked (S₀ is then the direct
        # map, zero at capacitive rows); with a truncated basis the quasi-static remainder
        # is not valid right at a jump, so none are added
        jumps = np.zeros(0, dtype=np.int64)
        if self._complete(b) and N > 1:
            dP = level[1:] - (level[:-1] + slope[:-1] * np.diff(edges)[:-1, None])
            jumps = np.flatnonzero(np.any(np.abs(dP @ S0p.T) > 0.0, axis=1)) + 1
        ks = sorted({k for k, _ in cand} | set(jumps.tolist()))
        # segment starts for the candidate segments (one forward sweep)
        starts, x, k_next = {}, x0.copy(), 0
        for k in ks:
            for kk in range(k_next, k):
                h = edges[kk + 1] - edges[kk]
                x = (np.exp(-lam * h) * x + _psi(0, lam, h) * (b.W @ level[kk])
                     + _psi(1, lam, h) * (b.W @ slope[kk]))
            starts[k], k_next = x.copy(), k
        by_seg: dict[int, list[int]] = {}
        for k, j in cand:
            by_seg.setdefault(k, []).append(j)
        lam2 = lam[:, None]
        new_t = [edges[k] for k in jumps.tolist()]
        new_v = [Pp @ starts[k] + S0p @ level[k] - S1p @ slope[k] for k in jumps.tolist()]
        for k in ks:
            if k not in by_seg:
                continue
            js = np.array(sorted(by_seg[k]))
            xk, a, s_ = starts[k], level[k], slope[k]
            Wa, Wb = b.W @ a, b.W @ s_
            h = edges[k + 1] - edges[k]
            # bracket grid down to a quarter of the fastest tracked time constant
            grid = np.concatenate([[0.0], np.geomspace(min(max(0.25 / lam.max(), 1e-9 * h),
                                                               h), h, 24)])
            X = (np.exp(-lam2 * grid) * xk[:, None] + _psi(0, lam2, grid) * Wa[:, None]
                 + _psi(1, lam2, grid) * Wb[:, None])
            D = Pp[js] @ (-lam2 * X + Wa[:, None] + Wb[:, None] * grid) + (S0p[js] @ s_)[:, None]
            jj, ii = np.nonzero(D[:, :-1] * D[:, 1:] < 0.0)
            for j, i in zip(js[jj].tolist(), ii.tolist()):

                def slope_j(s, j=j):
                    x = np.exp(-lam * s) * xk + _psi(0, lam, s) * Wa + _psi(1, lam, s) * Wb
                    return float(Pp[j] @ (-lam * x + Wa + Wb * s) + S0p[j] @ s_)

                s0 = brentq(slope_j, grid[i], grid[i + 1], xtol=1e-15 * h, rtol=1e-15)
                x = np.exp(-lam * s0) * xk + _psi(0, lam, s0) * Wa + _psi(1, lam, s0) * Wb
                new_t.append(edges[k] + s0)
                new_v.append(Pp @ x + S0p @ (a + s0 * s_) - S1p @ s_)
        return merge_samples(t, v, new_t, new_v)

    def _run_increment(self, b: ModeBasis, edges, level, slope) -> np.ndarray:
        """End-of-period modal state from a zero start (vectorised over segments)."""
        lam = b.lam[:, None]
        T = edges[-1]
        h = np.diff(edges)[None, :]
        rho = _psi(0, lam, h) * (b.W @ level.T) + _psi(1, lam, h) * (b.W @ slope.T)
        return np.sum(np.exp(-lam * (T - edges[1:])[None, :]) * rho, axis=1)

    def _complete(self, b: ModeBasis) -> bool:
        """Whether ``b`` tracks every mode (then S₀ is the exact direct map of massless
        nodes and S₁ vanishes: right limits at power jumps are exact)."""
        return b.kind == "eig" and b.lam.size == int(np.count_nonzero(self.C > 0))

    def _full(self, b: ModeBasis, x: np.ndarray, P: np.ndarray, dP: np.ndarray) -> np.ndarray:
        """Full state T = T_amb + Φ x + S₀ P − S₁ P′ (module docstring), K absolute, (n,)."""
        return self.T_amb + b.Phi @ x + b.S0 @ P - b.S1 @ dP

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
        if b.kind == "krylov":
            est = info.get("error_estimate", math.inf)
            info["tol"] = self.tol
            if est <= self.tol:
                info["message"] += (f"; estimated error {est:.2g} of the largest rise "
                                    f"(tolerance {self.tol:.2g})")
            else:
                info["success"] = False
                info["message"] = (f"WARNING: reduced (rational Krylov) model, {b.lam.size} "
                                   f"Ritz modes: estimated error {est:.2g} of the largest "
                                   f"rise exceeds the tolerance {self.tol:.2g}; the dynamics "
                                   "are approximate (means and steady values stay exact)")
        return info

    def _estimate(self, b: ModeBasis, fn, vals: np.ndarray) -> dict:
        """Krylov path: compare with the smaller space (relative to the largest rise)."""
        small = b.info.get("_smaller")
        if small is None:
            return {}
        other = fn(small)
        scale = max(float(np.max(np.abs(vals))), 1e-300)
        n = min(len(other), len(vals))
        est = float(np.max(np.abs(other[:n] - vals[:n]))) / scale
        return {"error_estimate": max(est, ESTIMATE_FLOOR)}


    # -- implicit stepping path --------------------------------------------------------
    def stepper(self) -> Stepper:
        """The implicit stepper for ``tol`` (created once; its factorisations are reused).

        Ladder from the tolerance, calibrated on the die/attach/base cross-section of the
        tests (error at the edges 7e-6, 4e-7, 3e-8 of the rise at 2, 4, 8 steps per rung:
        it falls as per_level^-4; the step-doubling estimate is 3–6× the true error):
        ``per_level = max(2, ceil(0.185·tol^-1/4))`` steps per rung, first step
        ``h0 = τ_min/2`` with τ_min ≈ min over capacitive rows of C_i/(2 G_ii) (Gershgorin
        bound of the fastest time constant)."""
        if self._stepper_obj is None:
            tol = self.tol
            per = (int(self.per_level_option) if self.per_level_option is not None
                   else max(2, int(math.ceil(STEP_LEVEL_FACTOR * tol ** -0.25))))
            if self.h0_option is not None:
                h0 = float(self.h0_option)
            else:
                cap = self.C > 0
                d = self.G.diagonal()
                tau_min = float(np.min(self.C[cap] / (2.0 * d[cap]))) if cap.any() else 1.0
                h0 = STEP_H0_FACTOR * tau_min
            self._stepper_obj = Stepper(self.C, self.G, self.B, h0, per,
                                        cache_bytes=2.5 * self.memory_budget)
        return self._stepper_obj

    def _step_info(self, st: Stepper, edges, mean_full, est: float, extra: dict) -> dict:
        ok = bool(est <= self.tol)
        msg = (f"implicit stepping (SDIRK4, {st.n_steps} steps, {st.n_factor} "
               f"factorisations), estimated error {est:.2g} of the largest rise "
               f"(tolerance {self.tol:.2g})")
        if not ok:
            msg = "WARNING: " + msg + " exceeds the tolerance; lower tol or per_level"
        info = {"method": "sparse", "basis": "step", "tol": self.tol,
                "error_estimate": est, "segments": int(edges.size - 1),
                "h0": st.h0, "per_level": st.per_level, "steps": st.n_steps,
                "factorisations": self.n_factor + st.n_factor,
                "solves": self.n_solves + st.n_solves, "mean_full": mean_full,
                "success": ok, "message": msg}
        info.update(extra)
        return info

    def _step_periodic(self, edges, level, slope, rows) -> RawResponse:
        """Periodic state by stepping: (I − M) x₀ = r by GMRES (see the module docstring)."""
        st = self.stepper()
        n = self.system.n
        T = edges[-1]
        Pbar = segment_energy(edges, level, slope) / T
        xbar = self.U0 @ Pbar                       # mean-power steady rise (first guess)
        r = st.sweep(np.zeros(n), edges, level, slope, None)[2]

        def M(x):
            return st.sweep(x, edges, None, None, None)[2]

        def pinv(u):                                # (I − e^{−TA})⁻¹ ≈ I + (TA)⁻¹
            self.n_solves += 1
            return u + self.lu0.solve(self.C * u) / T

        rhs = r - (xbar - M(xbar))
        count = [0]

        def matvec(u):
            count[0] += 1
            v = pinv(np.asarray(u).reshape(-1))
            return v - M(v)

        op = sla.LinearOperator((n, n), matvec=matvec, dtype=np.float64)
        scale0 = max(float(np.max(np.abs(xbar))), float(np.max(np.abs(r))), 1e-300)
        atol = GMRES_FRACTION * self.tol * scale0
        if np.linalg.norm(rhs) > atol:
            u, flag = sla.gmres(op, rhs, rtol=1e-14, atol=atol, restart=40, maxiter=4)
        else:
            u, flag = np.zeros(n), 0
        x0 = xbar + pinv(u)
        t, v, x_end = st.sweep(x0, edges, level, slope, rows)
        # estimate: one period with every step halved (step doubling) from the same start;
        # its end against the start also measures the GMRES (periodicity) defect
        t2, v2, x_end2 = st.sweep(x0, edges, level, slope, rows, refine=2)
        vv = np.vstack([x_end[rows][None, :], v])
        scale = max(float(np.max(np.abs(vv))), 1e-300)
        est = max(float(np.max(np.abs(v2[1::2] - v))),
                  float(np.max(np.abs(x_end2[rows] - x0[rows]))),
                  float(np.max(np.abs(x_end[rows] - x0[rows])))) / scale
        mean_full = self.T_amb + xbar                 # exact: average of the periodic state
        start = self.T_amb + x_end
        theta = vv + self.T_amb[rows][None, :]
        extra = {"gmres_iterations": count[0], "gmres_flag": int(flag)}
        if flag != 0:
            extra["gmres_warning"] = "GMRES did not reach its tolerance"
        return RawResponse(np.concatenate([[0.0], t]), theta, start, start.copy(),
                           mean_full[rows], self._step_info(st, edges, mean_full, est, extra))

    def _step_transient(self, edges, level, slope, d0, rows) -> RawResponse:
        st = self.stepper()
        t, v, y_end = st.sweep(d0.copy(), edges, level, slope, rows)
        # estimate: step doubling over the first segments (at most ESTIMATE_SEGMENTS)
        k = min(edges.size - 1, ESTIMATE_SEGMENTS)
        t2, v2, _ = st.sweep(d0.copy(), edges, level, slope, rows, refine=2, last=k)
        nk = v2.shape[0] // 2
        vv = np.vstack([d0[rows][None, :], v])
        scale = max(float(np.max(np.abs(vv))), 1e-300)
        est = float(np.max(np.abs(v2[1::2] - v[:nk]))) / scale
        dur = edges[-1]
        EP = segment_energy(edges, level, slope)
        # ∫θ dt from the balance C Δθ + G ∫θ = B ∫P (exact given the end state)
        integral = self.lu0.solve(self.B @ EP - self.C * (y_end - d0))
        self.n_solves += 1
        mean_full = self.T_amb + integral / dur
        theta = vv + self.T_amb[rows][None, :]
        return RawResponse(np.concatenate([[0.0], t]), theta, self.T_amb + d0,
                           self.T_amb + y_end, mean_full[rows],
                           self._step_info(st, edges, mean_full, est,
                                           {"estimate_segments": int(k)}))

    def _handover(self, raw: RawResponse, run) -> RawResponse:
        """basis="auto": a Krylov answer whose estimate exceeds tol is replaced by stepping
        (up to max_step_nodes free nodes); otherwise it is returned with its warning."""
        if (raw.info.get("basis") == "krylov" and self.basis_kind == "auto"
                and not raw.info.get("success", True)
                and self.system.n <= self.max_step_nodes):
            est = raw.info.get("error_estimate")
            out = run()
            out.info["krylov_estimate"] = est
            out.info["message"] += (f" (the reduced Krylov model's estimate {est:.2g} was "
                                    "above the tolerance)")
            return out
        return raw

    def periodic(self, edges, level, slope, probes) -> RawResponse:
        """Periodic steady state (see the module docstring for the three paths)."""
        edges, level, slope, rows = as_arrays(edges, level, slope, probes)
        if self.path(self._tau_cut(edges))[0] == "step":
            return self._step_periodic(edges, level, slope, rows)
        raw = self._modes_periodic(edges, level, slope, rows)
        return self._handover(raw, lambda: self._step_periodic(edges, level, slope, rows))

    def _modes_periodic(self, edges, level, slope, rows) -> RawResponse:
        """Periodic steady state: x(0) = r/(1 − e^{−λT}) per tracked mode (exact),
        quasi-static remainder as in the module docstring."""
        b = self.basis(self._tau_cut(edges))
        T = edges[-1]
        h_last = edges[-1] - edges[-2]
        P_end = level[-1] + slope[-1] * h_last

        def solve(bb):
            r = self._run_increment(bb, edges, level, slope)
            x0 = r / (-np.expm1(-bb.lam * T))
            t, v, x_end, _ = self._run(bb, x0, edges, level, slope, rows)
            v0 = bb.Phi[rows] @ x0 + bb.S0[rows] @ P_end - bb.S1[rows] @ slope[-1]
            return x0, t, np.vstack([v0[None, :], v]), x_end

        x0, t, v, x_end = solve(b)
        extra = self._estimate(b, lambda bb: solve(bb)[2], v) if b.kind == "krylov" else {}
        # the start sample (t = 0) takes part: an extreme may follow it closely
        t, v = self._refine(b, x0, edges, level, slope, rows, np.concatenate([[0.0], t]), v)
        Pbar = segment_energy(edges, level, slope) / T
        mean_full = self.T_amb + self.U0 @ Pbar          # exact: average of the periodic state
        start = self._full(b, x0, P_end, slope[-1])
        end = self._full(b, x_end, P_end, slope[-1])     # propagated: checks periodicity
        theta = v + self.T_amb[rows][None, :]
        return RawResponse(t, theta, start, end, mean_full[rows],
                           self._info(b, edges, mean_full, extra))

    def transient(self, edges, level, slope, initial, probes) -> RawResponse:
        """Transient from ``initial`` (n,) K absolute (None: the zero-power static field)."""
        edges, level, slope, rows = as_arrays(edges, level, slope, probes)
        n = self.system.n
        if initial is None:
            d0 = np.zeros(n)
        else:
            d0 = np.asarray(initial, dtype=np.float64).reshape(-1) - self.T_amb
            if d0.size != n or not np.all(np.isfinite(d0)):
                raise ValueError(f"initial: expected {n} finite temperatures in K, got "
                                 f"shape {np.shape(initial)}")
        if self.path(self._tau_cut(edges))[0] == "step":
            return self._step_transient(edges, level, slope, d0, rows)
        raw = self._modes_transient(edges, level, slope, d0, rows)
        return self._handover(raw, lambda: self._step_transient(edges, level, slope, d0,
                                                                 rows))

    def _modes_transient(self, edges, level, slope, d0, rows) -> RawResponse:
        n = self.system.n
        extra_cols = None if not np.any(d0) else d0
        b = self.basis(self._tau_cut(edges),
                       extra_cols if self.basis_kind != "eig" else None)
        Cd0 = self.C * d0

        def solve(bb):
            x0 = bb.Phi.T @ Cd0
            t, v, x_end, integral = self._run(bb, x0, edges, level, slope, rows)
            return x0, t, v, x_end, integral

        x0, t, v, x_end, integral = solve(b)
        if self._complete(b):
            # massless probes follow the power at once: their value at t = 0 is the right
            # limit (as in the modal solver), not the given initial value
            start = self._full(b, x0, level[0], slope[0])
            v0 = start[rows] - self.T_amb[rows]
        else:
            start = self.T_amb + d0
            v0 = d0[rows]
        vv = np.vstack([v0[None, :], v])
        extra = (self._estimate(b, lambda bb: np.vstack([v0[None, :], solve(bb)[2]]), vv)
                 if b.kind == "krylov" else {})
        t, vv = self._refine(b, x0, edges, level, slope, rows, np.concatenate([[0.0], t]), vv)
        dur = edges[-1]
        h = np.diff(edges)
        EP = segment_energy(edges, level, slope)              # ∫P dt per input
        dPint = h @ slope                                    # ∫P' dt
        mean_full = self.T_amb + (b.Phi @ integral + b.S0 @ EP - b.S1 @ dPint) / dur
        P_end = level[-1] + slope[-1] * h[-1]
        end = self._full(b, x_end, P_end, slope[-1])
        theta = vv + self.T_amb[rows][None, :]
        return RawResponse(t, theta, start, end, mean_full[rows],
                           self._info(b, edges, mean_full, extra))
