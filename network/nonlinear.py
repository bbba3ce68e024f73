"""Nonlinear solver: temperature-dependent conductivity and temperature-dependent heat inputs.

Model (absolute kelvin).  Each conductance e between nodes i and j (a free node or a boundary)
has ``k(T) = k(Tref)·(T/Tref)^−a``.  Within one material the heat flow through the edge is
exactly (Kirchhoff transform)

    q_e = g_e · (U_e(T_i) − U_e(T_j)),
    U(T) = ∫_Tref^T (T'/Tref)^−a dT' = Tref/(1 − a)·[(T/Tref)^{1−a} − 1]   (a ≠ 1),
    U(T) = Tref·ln(T/Tref)                                                 (a = 1),

i.e. the edge conductance between temperatures T1, T2 is ``g·(U(T1) − U(T2))/(T1 − T2)``.
For a body of one material the transformed field U obeys the linear equations, so a
uniform-material slab is exact whatever the discretisation (W. B. Joyce, "Thermal resistance
of heat sinks with temperature-dependent conductivity", Solid-State Electronics 18, 1975).

Heat input k: ``P_k(t)·(1 + c_k·(T̄_k − Tref_k))`` with ``T̄ = Bᵀ T`` (the weighted mean of its
nodes; the weights of B sum to one), e.g. copper loss of a line.

Balance: ``C dT/dt = −Dᵀ(g ⊙ ΔU(T)) + B·(P ⊙ (1 + c ⊙ (BᵀT − Tref)))`` with D the edge
incidence; the Jacobian is sparse, ``J = −Dᵀ diag(g) ∂ΔU/∂T + B diag(P c) Bᵀ``.

Thermal runaway
---------------
With linear conductances (all a = 0) and the rise θ = T − T_amb over the zero-power field:
``G θ = B(P₀ + diag(P c) Bᵀθ)``, ``P₀ = P ⊙ (1 + c ⊙ (BᵀT_amb − Tref))``.  With the input
resistance matrix ``R = Bᵀ G⁻¹ B`` the input temperatures y = Bᵀθ obey
``(I − R·diag(P c)) y = R P₀`` (derived).  A stable bounded state exists exactly when
``G − B diag(P c) Bᵀ`` is positive definite, i.e. when the loop gain ``ρ = λ_max(R·diag(P c))``
(real: R diag(Pc) is similar to the symmetric ``R^{1/2} diag(Pc) R^{1/2}``) is below 1; one
node: ``ρ = c·P·R`` and ``ΔT = P₀·R/(1 − c·P·R)``.  This is checked analytically; for nonlinear
k(T) runaway is detected by divergence of Newton's method (temperatures beyond
``T_LIMIT``) and the loop gain is reported from the Jacobian at the last iterate.
:class:`ThermalRunawayError` is a ``ValueError`` (the cause is the input: too much power).

Integration and periodic state
------------------------------
Transients: the full system ``diag(C)·dT/dt = F(t, T)`` is integrated by an own 3-stage
Radau IIA method (order 5, L-stable, stiffly accurate; Hairer & Wanner 1996, IV.5, IV.8)
with the analytic Jacobian (dense LU up to ``DENSE_LIMIT`` nodes, sparse LU above),
embedded error estimate and adaptive steps, restarted at every segment edge.  Massless
nodes (C = 0) are algebraic rows of an index-1 DAE, which the collocation method handles
directly (no inner solve per evaluation); at each segment start (where the power may jump)
their values are made consistent once by Newton.  Accuracy is that of the tolerances
(``rtol``, ``atol`` options).  Energy balance: the stage quadrature ``h·Σ b_j·(…)`` of the
actual input ``P·(1 + c·(T̄ − Tref))`` and of the heat into the boundaries through the k(T)
edges is consistent with the scheme, so ``E_in = ΔE_stored + E_boundaries`` holds to the
Newton tolerance (reported as ``energy_error``).

Periodic steady state: shooting on the start-of-period state, seeded with the steady state at the mean power,
corrected with the linearised monodromy ``(I − e^{T·J_lin})`` (a chord-Newton method) until one
period maps the state onto itself within ``atol``.  Up to ``PERIODIC_LIMIT`` capacitive nodes
the monodromy is a dense matrix exponential; above (or with ``shooting="krylov"``) the
correction is solved matrix-free by preconditioned GMRES with a backward-Euler linearised
propagator (see :meth:`NonlinearSolver._krylov_correction`).  Warm-up time: the transient
from ambient integrated period by period until the probe first reaches the target
(:meth:`NonlinearSolver.warmup_crossing`).

References
----------
W. B. Joyce, Solid-State Electronics 18, 1975 (Kirchhoff transform).  E. Hairer and
G. Wanner, *Solving Ordinary Differential Equations II*, Springer, 1996 (Radau IIA, index-1
DAEs).  T. J. Aprille and T. N. Trick, "Steady-state analysis of nonlinear circuits with
periodic inputs", Proc. IEEE 60(1), 1972 (shooting).
"""
from __future__ import annotations

import math

import numpy as np
import scipy.linalg as dla
import scipy.sparse as sp
import scipy.sparse.linalg as sla
from scipy.optimize import brentq, minimize_scalar

from .assemble import NetworkError, floating_nodes
from .solvers import RawResponse, as_arrays, merge_samples, segment_energy
from .system import ThermalSystem

__all__ = ["NonlinearSolver", "ThermalRunawayError", "kirchhoff_U", "kirchhoff_inverse",
           "T_LIMIT", "PERIODIC_LIMIT"]

#: Temperatures above this (K) count as divergence (runaway).
T_LIMIT = 5000.0
#: Largest number of capacitive nodes for the dense monodromy (Krylov shooting above).
PERIODIC_LIMIT = 3000
#: Backward-Euler steps per period of the linearised propagator in Krylov shooting.
KRYLOV_STEPS = 32
#: Tightest integrator tolerance used for the warm-up march (relative, and K absolute).
WARMUP_RTOL = 1e-6
#: Most periods integrated by :meth:`NonlinearSolver.warmup_crossing`.
WARMUP_MAX_PERIODS = 100_000
#: Interior samples per segment.
INTERIOR_POINTS = 8
#: Up to this many nodes the Radau matrices are factorised dense, above sparse.
DENSE_LIMIT = 150
#: Simplified-Newton iterations per Radau step before the step is halved.
NEWTON_MAXITER = 7

# 3-stage Radau IIA (order 5): Butcher matrix, nodes, weights (last row of A), the real
# eigenvalue of A⁻¹ and the embedded error coefficients (Hairer & Wanner 1996, IV.5 and
# IV.8, eq. 8.20: e = γ0·(−13 − 7√6, −13 + 7√6, −1)/3 with γ0 = 1/μ).
_S6 = math.sqrt(6.0)
RADAU_A = np.array([[(88 - 7 * _S6) / 360, (296 - 169 * _S6) / 1800, (-2 + 3 * _S6) / 225],
                    [(296 + 169 * _S6) / 1800, (88 + 7 * _S6) / 360, (-2 - 3 * _S6) / 225],
                    [(16 - _S6) / 36, (16 + _S6) / 36, 1.0 / 9.0]])
RADAU_C = np.array([(4 - _S6) / 10, (4 + _S6) / 10, 1.0])
RADAU_B = RADAU_A[2].copy()
RADAU_MU = 3.0 + 3.0 ** (2.0 / 3.0) - 3.0 ** (1.0 / 3.0)
RADAU_E = np.array([-13 - 7 * _S6, -13 + 7 * _S6, -1.0]) / 3.0


class ThermalRunawayError(ValueError):
    """No bounded steady state: the heat input grows faster with temperature than the
    network can remove it.  ``input_name`` and ``loop_gain`` name the cause."""

    def __init__(self, message: str, input_name: str | None = None,
                 loop_gain: float | None = None) -> None:
        super().__init__(message)
        self.input_name = input_name
        self.loop_gain = loop_gain


def kirchhoff_U(T, a, Tref):
    """Kirchhoff integral U(T) = ∫_Tref^T (T'/Tref)^−a dT' (K), elementwise (Joyce 1975)."""
    T, a, Tref = np.broadcast_arrays(np.asarray(T, float), np.asarray(a, float),
                                     np.asarray(Tref, float))
    x = T / Tref
    out = T - Tref
    lin = a == 0.0
    one = np.abs(a - 1.0) < 1e-12
    gen = ~(lin | one)
    if one.any():
        out = np.where(one, Tref * np.log(np.where(one, x, 1.0)), out)
    if gen.any():
        b = np.where(gen, 1.0 - a, 1.0)
        # Tref/(1-a)·(x^{1-a} − 1) = Tref/(1-a)·expm1((1-a)·ln x): accurate near x = 1
        out = np.where(gen, Tref / b * np.expm1(b * np.log(np.where(gen, x, 1.0))), out)
    return out


def kirchhoff_inverse(U, a, Tref):
    """T from U (inverse of :func:`kirchhoff_U`): T = Tref·[1 + (1 − a)U/Tref]^{1/(1−a)}."""
    U, a, Tref = np.broadcast_arrays(np.asarray(U, float), np.asarray(a, float),
                                     np.asarray(Tref, float))
    if np.all(a == 0):
        return Tref + U
    b = 1.0 - a
    with np.errstate(invalid="ignore", divide="ignore"):
        out = np.where(np.abs(b) < 1e-12, Tref * np.exp(U / Tref),
                       Tref * (1.0 + b * U / Tref) ** (1.0 / np.where(b == 0, 1.0, b)))
    return np.where(a == 0, Tref + U, out)


def _dU(T, a, Tref):
    """dU/dT = (T/Tref)^−a."""
    return (T / Tref) ** (-a)


class NonlinearSolver:
    """Solver for networks with k(T) conductances and temperature-dependent inputs
    (registered as ``"nonlinear"``).

    Parameters
    ----------
    system
        The assembled system (linear systems are accepted too).
    rtol, atol
        Options: integrator tolerances (relative; absolute in K).  Defaults 1e-8, 1e-9.
    max_newton
        Option: Newton iterations for steady states (default 60).
    max_shooting
        Option: most shooting iterations (periods) for the periodic state (default 40).
    shooting
        Option: how the periodic shooting solves its linearised correction: ``"dense"``
        (matrix exponential, up to ``PERIODIC_LIMIT`` capacitive nodes), ``"krylov"``
        (matrix-free GMRES with a preconditioner, any size) or ``"auto"`` (default: dense
        up to the limit, Krylov above).
    """

    name = "nonlinear"

    def __init__(self, system: ThermalSystem, **options) -> None:
        known = {"rtol", "atol", "max_newton", "max_shooting", "shooting"}
        bad = set(options) - known
        if bad:
            raise ValueError(f"NonlinearSolver: unknown option(s) {sorted(bad)}; expected "
                             f"{sorted(known)}")
        self.system = system
        self.rtol = float(options.get("rtol", 1e-8))
        self.atol = float(options.get("atol", 1e-9))
        self.max_newton = int(options.get("max_newton", 60))
        self.max_shooting = int(options.get("max_shooting", 40))
        self.shooting = str(options.get("shooting", "auto")).strip().lower()
        if self.shooting not in ("auto", "dense", "krylov"):
            raise ValueError(f"NonlinearSolver: shooting = {options['shooting']!r}; expected "
                             "'auto', 'dense' or 'krylov'")
        n = system.n
        self.n = n
        ei = np.asarray(system.edge_i, dtype=np.int64)
        ej = np.asarray(system.edge_j, dtype=np.int64)
        ne = ei.size
        self.ei, self.ej = ei, ej
        self.g = np.asarray(system.edge_g, float)
        self.a = np.asarray(system.edge_a, float)
        self.aref = np.asarray(system.edge_Tref, float)
        # incidence: D (ne, n) with +1 at i, −1 at j (free ends only)
        rows = np.concatenate([np.arange(ne), np.flatnonzero(ej < n)])
        cols = np.concatenate([ei, ej[ej < n]])
        vals = np.concatenate([np.ones(ne), -np.ones(int(np.sum(ej < n)))])
        self.D = sp.csr_matrix((vals, (rows, cols)), shape=(ne, n))
        self.Di = sp.csr_matrix((np.ones(ne), (np.arange(ne), ei)), shape=(ne, n))
        jf = ej < n
        self.Dj = sp.csr_matrix((np.ones(int(jf.sum())), (np.flatnonzero(jf), ej[jf])),
                                shape=(ne, n))
        # fixed temperatures of boundary ends
        self.Tb_end = np.where(jf, 0.0, system.T_boundary[np.where(jf, 0, ej - n)]
                               if system.nb else 0.0)
        self.jf = jf
        self.B = sp.csr_matrix(system.B)
        self.c = np.asarray(system.input_tc, float)
        self.cref = np.asarray(system.input_Tref, float)
        self.C = np.asarray(system.C, float)
        self.cap = np.flatnonzero(self.C > 0)
        self.mass = np.flatnonzero(self.C == 0)
        self.floating = floating_nodes(system)
        self.n_rhs = 0
        self.n_reject = 0
        self.n_jac = 0
        self.linear_k = bool(np.all(self.a == 0))
        # Jacobian pattern: entries (i,i) −g·U'(T_i), (i,j) +g·U'(T_j), (j,i) +g·U'(T_i),
        # (j,j) −g·U'(T_j) (free j only), scattered into a fixed CSR structure
        fj = np.flatnonzero(jf)
        r_ = np.concatenate([ei, ei[fj], ej[fj], ej[fj]])
        c_ = np.concatenate([ei, ej[fj], ei[fj], ej[fj]])
        keys, inv = np.unique(r_ * n + c_, return_inverse=True)
        jr = keys // n
        self._jpat = (np.bincount(jr, minlength=n).cumsum(), keys % n, inv, fj)
        if system.m and np.any(self.c != 0):
            self._BBt = [sp.csr_matrix(self.B[:, [k]] @ self.B[:, [k]].T)
                         for k in range(system.m)]
        else:
            self._BBt = []
        # fast kernels for the integrator: fixed edge classes, transposes, dense copies
        self._keys_flat = keys
        self._lin = np.flatnonzero(self.a == 0.0)
        self._one = np.flatnonzero(np.abs(self.a - 1.0) < 1e-12)
        self._gen = np.setdiff1d(np.arange(ne), np.concatenate([self._lin, self._one]))
        self._bgen = 1.0 - self.a[self._gen]
        self._ej_ext = np.where(jf, ej, n + np.arange(ne))   # boundary ends after the n free
        self._T_ext_b = self.Tb_end.copy()                    # one extra slot per edge
        self.dense = n <= DENSE_LIMIT
        self._bnd = np.flatnonzero(~jf)
        self.DT = sp.csr_matrix(self.D.T)
        self.BT = sp.csr_matrix(self.B.T)
        if self.dense:
            self._Dd = self.D.toarray()
            self._Bd = self.B.toarray()

    # -- the balance and its Jacobian ----------------------------------------------------
    def _U(self, T: np.ndarray) -> np.ndarray:
        """Kirchhoff U of edge-end temperatures T (..., ne) with each edge's own a, Tref."""
        r = self.aref
        if self.linear_k:
            return T - r
        out = np.empty_like(T)
        i = self._lin
        if i.size:
            out[..., i] = T[..., i] - r[i]
        i = self._one
        if i.size:
            out[..., i] = r[i] * np.log(T[..., i] / r[i])
        i = self._gen
        if i.size:
            b = self._bgen
            out[..., i] = r[i] / b * np.expm1(b * np.log(T[..., i] / r[i]))
        return out

    def _ends_ext(self, T: np.ndarray):
        """Edge-end temperatures (..., ne) for states T (..., n); boundary ends fixed."""
        lead = T.shape[:-1]
        T_ext = np.concatenate([T, np.broadcast_to(self._T_ext_b, lead + self._T_ext_b.shape)],
                               axis=-1)
        return T[..., self.ei], T_ext[..., self._ej_ext]

    def _res(self, Y: np.ndarray, P: np.ndarray) -> np.ndarray:
        """Stacked residual F for states Y (k, n) and nominal powers P (k, m), W, (k, n)."""
        self.n_rhs += Y.shape[0]
        Ti, Tj = self._ends_ext(Y)
        q = self.g * (self._U(Ti) - self._U(Tj))
        if self.dense:
            f = -(q @ self._Dd)
            if self.system.m:
                Tbar = Y @ self._Bd
                f += (P * (1.0 + self.c * (Tbar - self.cref))) @ self._Bd.T
        else:
            f = -np.asarray(self.DT @ q.T).T
            if self.system.m:
                Tbar = np.asarray(self.BT @ Y.T).T
                f += np.asarray(self.B @ (P * (1.0 + self.c * (Tbar - self.cref))).T).T
        return f

    def _jac(self, T: np.ndarray, P: np.ndarray):
        """∂F/∂T at one state: dense ndarray for small systems, else sparse CSR."""
        if not self.dense:
            return self.jacobian(T, P)
        self.n_jac += 1
        Ti, Tj = self._ends_ext(T)
        di = self.g * (1.0 if self.linear_k else _dU(Ti, self.a, self.aref))
        dj = self.g * (1.0 if self.linear_k else _dU(Tj, self.a, self.aref))
        di = np.broadcast_to(di, self.g.shape)
        dj = np.broadcast_to(dj, self.g.shape)
        fj = self._jpat[3]
        vals = np.concatenate([-di, dj[fj], di[fj], -dj[fj]])
        n = self.n
        data = np.bincount(self._jpat[2], weights=vals, minlength=self._keys_flat.size)
        J = np.zeros(n * n)
        J[self._keys_flat] = data
        J = J.reshape(n, n)
        if self._BBt:
            pc = P * self.c
            if np.any(pc != 0):
                J += (self._Bd * pc) @ self._Bd.T
        return J

    def _ends(self, T):
        Ti = T[self.ei]
        Tj = np.where(self.jf, T[np.where(self.jf, self.ej, 0)], self.Tb_end)
        return Ti, Tj

    def heat_out(self, T: np.ndarray) -> np.ndarray:
        """Net conducted heat leaving each free node, W, (n,): Dᵀ(g ⊙ (U(T_i) − U(T_j)))."""
        Ti, Tj = self._ends(T)
        q = self.g * (kirchhoff_U(Ti, self.a, self.aref) - kirchhoff_U(Tj, self.a, self.aref))
        return self.D.T @ q

    def heat_in(self, T: np.ndarray, P: np.ndarray) -> np.ndarray:
        """Input heat per node, W: B·(P ⊙ (1 + c ⊙ (BᵀT − Tref)))."""
        Tbar = self.B.T @ T
        return self.B @ (P * (1.0 + self.c * (Tbar - self.cref)))

    def residual(self, T: np.ndarray, P: np.ndarray) -> np.ndarray:
        """C dT/dt = residual(T, P), W."""
        self.n_rhs += 1
        return self.heat_in(T, P) - self.heat_out(T)

    def jacobian(self, T: np.ndarray, P: np.ndarray) -> sp.csr_matrix:
        """∂residual/∂T, sparse (n, n), W/K."""
        self.n_jac += 1
        Ti, Tj = self._ends(T)
        di = self.g * _dU(Ti, self.a, self.aref)
        dj = self.g * _dU(Tj, self.a, self.aref)
        cnt, cols, inv, fj = self._jpat
        vals = np.concatenate([-di, dj[fj], di[fj], -dj[fj]])
        data = np.bincount(inv, weights=vals, minlength=cols.size)
        indptr = np.concatenate([[0], cnt])
        J = sp.csr_matrix((data, cols, indptr), shape=(self.n, self.n))
        for k, BB in enumerate(self._BBt):
            if P[k] * self.c[k] != 0:
                J = J + (P[k] * self.c[k]) * BB
        return J

    # -- runaway -----------------------------------------------------------------------
    def loop_gain(self, T: np.ndarray, P: np.ndarray) -> tuple[float, int]:
        """ρ = λ_max(R·diag(P c)), R = Bᵀ K⁻¹ B with K = −(conduction Jacobian) at T; and the
        input with the largest share of the dominant eigenvector."""
        m = self.system.m
        if m == 0 or not np.any(self.c * P != 0):
            return 0.0, 0
        Ti, Tj = self._ends(T)
        di = self.g * _dU(Ti, self.a, self.aref)
        dj = self.g * _dU(Tj, self.a, self.aref)
        K = sp.csc_matrix(self.D.T @ (sp.diags(di) @ self.Di - sp.diags(dj) @ self.Dj))
        R = self.B.T @ sla.splu(K).solve(self.B.toarray())
        M = R * (P * self.c)[None, :]
        w, V = np.linalg.eig(M)
        k = int(np.argmax(w.real))
        share = np.abs(V[:, k]) * np.abs(P * self.c)
        return float(w[k].real), int(np.argmax(share))

    def _runaway(self, T, P, why: str):
        try:
            gain, k = self.loop_gain(np.clip(T, 1.0, None), P)
        except (RuntimeError, np.linalg.LinAlgError, ValueError):
            gain, k = float("nan"), 0
        name = self.system.input_names[k] if self.system.m else None
        if self.system.m and np.any(self.c * P != 0):
            msg = (f"thermal runaway: {why}; input {name!r} has loop gain {gain:.4g} "
                   f"(c·P·R, >= 1 means the heat it adds per kelvin outgrows what the "
                   f"network removes); reduce its power or temperature coefficient")
        else:
            msg = (f"thermal runaway: {why}; the conductivity falls with temperature so fast "
                   "(k ∝ T^-a, a > 1) that no bounded steady state carries this power; "
                   "reduce the power")
        raise ThermalRunawayError(msg, name, gain)

    def _check_linear_runaway(self, P: np.ndarray) -> None:
        """Analytic loop-gain test for linear conductances (see the module docstring)."""
        if not self.linear_k or not np.any(self.c * P != 0):
            return
        gain, _ = self.loop_gain(np.full(self.n, 300.0), P)
        if gain >= 1.0:
            self._runaway(np.full(self.n, 300.0), P,
                          f"loop gain {gain:.6g} >= 1 (analytic, linear conductances)")

    # -- steady state ------------------------------------------------------------------
    def _linear_guess(self, P: np.ndarray) -> np.ndarray:
        """Steady state with reference conductances and no temperature coefficients."""
        K = sp.csc_matrix(self.system.G)
        rhs = self.system.Gb @ self.system.T_boundary + self.B @ P
        return np.atleast_1d(sla.spsolve(K, rhs)) if self.n > 1 else rhs / K.toarray()[0]

    def steady(self, power: np.ndarray) -> np.ndarray:
        """Damped Newton on ``residual(T) = 0`` with the sparse Jacobian; K absolute (n,).

        Raises
        ------
        ThermalRunawayError
            No bounded steady state (loop gain >= 1, or divergence).
        RuntimeError
            Newton did not converge for another reason (message says how far it got).
        """
        if self.floating:
            raise NetworkError(f"nodes {', '.join(self.floating[0][:6])} have no conduction "
                               "path to a boundary: there is no steady state")
        P = np.asarray(power, dtype=np.float64).reshape(-1)
        self._check_linear_runaway(P)
        T = self._linear_guess(P)
        return self._newton(T, P)

    def _newton(self, T, P, extra=None):
        """Newton with backtracking; ``extra`` = (diag, rhs) adds ``−diag·T + rhs`` (used by
        implicit steps)."""
        scale = max(float(np.max(np.abs(T))), 1.0)
        f = self._f(T, P, extra)
        fn = float(np.linalg.norm(f))
        for it in range(self.max_newton):
            J = self.jacobian(T, P)
            if extra is not None:
                J = J - sp.diags(extra[0])
            try:
                dT = -sla.spsolve(sp.csc_matrix(J), f) if self.n > 1 else -f / J.toarray()[0]
            except RuntimeError:
                self._runaway(T, P, "singular Jacobian in Newton's method")
            dT = np.atleast_1d(dT)
            if not np.all(np.isfinite(dT)):
                self._runaway(T, P, "Newton step is not finite")
            step = 1.0
            while True:
                Tn = T + step * dT
                if np.all(Tn > 0) and np.all(np.isfinite(Tn)):
                    fn_new = self._f(Tn, P, extra)
                    if np.linalg.norm(fn_new) <= (1 - 1e-4 * step) * fn or step < 1e-3:
                        break
                step *= 0.5
                if step < 1e-6:
                    break
            # linear conductances: runaway was decided analytically (loop gain) beforehand
            if (not (np.all(Tn > 0) and np.all(np.isfinite(Tn)))
                    or (np.max(Tn) > T_LIMIT and not self.linear_k)):
                self._runaway(T, P, f"Newton's method diverges (temperature beyond "
                                    f"{T_LIMIT:.0f} K or not positive)")
            T, f = Tn, self._f(Tn, P, extra)
            fn = float(np.linalg.norm(f))
            if np.max(np.abs(step * dT)) <= 1e-12 * scale + 1e-13:
                return T
        if np.max(T) > 0.5 * T_LIMIT or not self.linear_k:
            self._runaway(T, P, f"Newton's method did not converge in {self.max_newton} "
                                "iterations (last step "
                                f"{np.max(np.abs(step * dT)):.3g} K)")
        raise RuntimeError(f"NonlinearSolver.steady: Newton did not converge in "
                           f"{self.max_newton} iterations (residual {fn:.3g} W)")

    def _f(self, T, P, extra):
        f = self.residual(T, P)
        if extra is not None:
            f = f - extra[0] * T + extra[1]
        return f

    # -- transients --------------------------------------------------------------------
    def _condense(self, Tc: np.ndarray, P: np.ndarray, Tz0: np.ndarray) -> np.ndarray:
        """Full state from the capacitive one: massless rows solved by Newton."""
        T = np.empty(self.n)
        T[self.cap] = Tc
        if self.mass.size == 0:
            return T
        z = self.mass
        T[z] = Tz0
        solve = None
        for it in range(60):
            f = self.residual(T, P)[z]
            if solve is None or it % 8 == 7:
                # chord Newton: the massless block of the Jacobian, refreshed now and then
                Jzz = sp.csc_matrix(self.jacobian(T, P)[z][:, z])
                if z.size <= 400:
                    lu = dla.lu_factor(Jzz.toarray())
                    solve = lambda r, lu=lu: dla.lu_solve(lu, r)  # noqa: E731
                else:
                    solve = sla.splu(Jzz).solve
            dz = -solve(f)
            T[z] += dz
            if np.max(np.abs(dz)) <= 1e-12 * max(1.0, np.max(np.abs(T[z]))):
                break
        return T

    # -- Radau IIA on the full system (massless rows are algebraic) ----------------------
    def _stage_terms(self, Y: np.ndarray, P: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Actual input power per input (k, m) and heat into the boundaries (k,), W, for
        stage states Y (k, n) and nominal powers P (k, m)."""
        if self.system.m:
            Tbar = Y @ self._Bd if self.dense else np.asarray(self.BT @ Y.T).T
            p_act = P * (1.0 + self.c * (Tbar - self.cref))
        else:
            p_act = np.zeros((Y.shape[0], 0))
        bnd = self._bnd
        if not bnd.size:
            return p_act, np.zeros(Y.shape[0])
        Ti, Tj = self._ends_ext(Y)
        q = self.g * (self._U(Ti) - self._U(Tj))
        return p_act, q[:, bnd].sum(axis=1)

    def _factor(self, M: np.ndarray | sp.spmatrix):
        """LU of a (dense or sparse) matrix; returns a solve function."""
        if sp.issparse(M):
            return sla.splu(sp.csc_matrix(M)).solve
        lu = dla.lu_factor(M, check_finite=False)
        return lambda r: dla.lu_solve(lu, r, check_finite=False)

    def _segment(self, Tfull0, a, s, h, t_eval, watch=None, track=None, first=None):
        """Integrate one segment (nominal power P = a + s·t, 0 <= t <= h) from the full state
        ``Tfull0`` with the 3-stage Radau IIA method (order 5, L-stable, stiffly accurate)
        applied to ``M·dT/dt = F(t, T)``, ``M = diag(C)`` singular at massless nodes (their
        rows are algebraic: index-1 DAE; Hairer & Wanner 1996, IV.8 and VI.1).

        One step solves the collocation system ``M·Z_i = h·Σ_j a_ij·F(t0 + c_j h, y0 + Z_j)``
        (simplified Newton, sparse/dense LU of ``I⊗M − h·A⊗J``, Jacobian at the step start)
        and estimates the local error with the embedded formula
        ``err = (μ/h·M − J)⁻¹·(F(t0, y0) + M·Σ e_i Z_i/h)`` (ibid. IV.8, eq. 8.19–8.20,
        with the refinement after a rejected estimate).  Steps are clipped to land on every
        ``t_eval`` offset, so samples carry the full order.

        Because the last stage is the step end (a_3j = b_j), the quadrature ``h·Σ b_j·(…)``
        of the stage values is consistent with the scheme: summed over the nodes,
        ``Σ C·ΔT = h·Σ_j b_j·(P_actual(Y_j) − q_boundary(Y_j))`` holds to the Newton
        tolerance, which is how the energy terms are accumulated.

        Returns the full state at ``t_eval`` (k, n), at the end, ``∫T dt`` (n,), the
        number of steps, ``∫P_actual dt`` (m,) J and ``∫q_boundary dt`` J.  With
        ``watch = (row, level)`` it stops at the first accepted step whose stage values or
        end value at ``row`` reach ``level`` K and returns ``("hit", t, y, h)``: the start
        time, state and size of that step.  With ``track`` (a dict from :meth:`_sweep`)
        the largest and smallest stage values of the tracked rows are recorded with the
        start of their step, for the refinement of the extremes.  ``first``: size of the
        first step to try (re-integrations inside a step accepted before).
        """
        n = self.n
        C = self.C
        rtol, atol = self.rtol, self.atol
        y = np.asarray(Tfull0, dtype=np.float64).copy()
        if self.mass.size:
            # the power may jump at the edge: start from consistent massless values
            y = self._condense(y[self.cap], a, y[self.mass])
        t = 0.0
        stops = np.asarray(t_eval, dtype=np.float64)
        out = np.empty((stops.size, n))
        k_stop = 0
        integral = np.zeros(n)
        e_in = np.zeros(self.system.m)
        e_bnd = 0.0
        steps = 0
        newton_tol = max(10 * np.finfo(float).eps / rtol, min(0.03, rtol ** 0.5))
        dense = self.dense
        Cd = np.diag(C) if dense else sp.diags(C)

        def F(tt, yy):
            return self._res(yy[None, :], (a + s * tt)[None, :])[0]

        def rms(x):
            return float(np.sqrt(np.mean(x * x)))

        f0 = F(0.0, y)
        scale = atol + rtol * np.abs(y)
        d0, d1 = rms(y / scale), rms((f0[self.cap] / C[self.cap]) / scale[self.cap]) \
            if self.cap.size else 0.0
        hs = min(h, 0.01 * d0 / d1 if d1 > 1e-5 else h)
        hs = max(hs, 1e-12 * h)
        if first is not None:
            # a step of this size was accepted from this state before (re-integration)
            hs = min(h, float(first))
        while t < h * (1 - 1e-14):
            while k_stop < stops.size and stops[k_stop] <= t * (1 + 1e-14):
                out[k_stop] = y
                k_stop += 1
            target = stops[k_stop] if k_stop < stops.size else h
            hstep = min(hs, target - t)
            if target - t - hstep < 1e-6 * hstep:
                hstep = target - t
            P0 = a + s * t
            J = self._jac(y, P0)
            scale = atol + rtol * np.abs(y)
            while True:
                if hstep < 1e-14 * max(h, 1e-300) + 1e-300:
                    raise RuntimeError(f"NonlinearSolver: step size underflow at t = {t:.6g} "
                                       "s in a segment")
                if dense:
                    Jd = J
                    Mbig = np.kron(np.eye(3), Cd) - hstep * np.kron(RADAU_A, Jd)
                    Mreal = (RADAU_MU / hstep) * Cd - Jd
                else:
                    Mbig = sp.kron(sp.eye(3), Cd) - hstep * sp.kron(sp.csr_matrix(RADAU_A), J)
                    Mreal = (RADAU_MU / hstep) * Cd - J
                try:
                    solve_big = self._factor(Mbig)
                    solve_real = self._factor(Mreal)
                except (RuntimeError, dla.LinAlgError, ValueError):
                    hstep *= 0.5
                    continue
                Z = np.zeros((3, n))
                tj = t + RADAU_C * hstep
                Pj = a[None, :] + s[None, :] * tj[:, None]
                converged = False
                dn_old = None
                rate = None
                n_iter = 0
                for n_iter in range(1, NEWTON_MAXITER + 1):
                    Y = y[None, :] + Z
                    Fs = self._res(Y, Pj)
                    if not np.all(np.isfinite(Fs)):
                        break
                    G = C[None, :] * Z - hstep * (RADAU_A @ Fs)
                    dZ = -solve_big(G.ravel()).reshape(3, n)
                    dn = rms(dZ / scale[None, :])
                    if dn_old is not None:
                        rate = dn / dn_old
                        if rate >= 1 or rate ** (NEWTON_MAXITER - n_iter + 1) / (1 - rate) \
                                * dn > newton_tol:
                            break
                    Z += dZ
                    if dn == 0 or (rate is not None and rate / (1 - rate) * dn < newton_tol) \
                            or (dn_old is None and dn < 1e-3 * newton_tol):
                        converged = True
                        break
                    dn_old = dn
                if not converged:
                    hstep *= 0.5
                    self.n_reject += 1
                    continue
                y_new = y + Z[2]
                if not np.all(np.isfinite(y_new)) or np.any(y_new <= 0):
                    hstep *= 0.5
                    continue
                ZE = (RADAU_E @ Z) / hstep
                f0 = F(t, y)
                err = solve_real(f0 + C * ZE)
                esc = atol + rtol * np.maximum(np.abs(y), np.abs(y_new))
                en = rms(err / esc)
                if en > 1:
                    f1 = F(t, y + err)
                    if np.all(np.isfinite(f1)):
                        err = solve_real(f1 + C * ZE)
                        en = rms(err / esc)
                safety = 0.9 * (2 * NEWTON_MAXITER + 1) / (2 * NEWTON_MAXITER + n_iter)
                if en > 1:
                    hstep *= max(0.2, safety * en ** -0.25)
                    self.n_reject += 1
                    continue
                break
            # accepted: energy and ∫T dt by the scheme's own quadrature at the stages
            Y = y[None, :] + Z
            if watch is not None and float(np.max(Y[:, watch[0]])) >= watch[1]:
                return ("hit", t, y.copy(), hstep)
            if track is not None:
                V = Y[:, track["rows"]]
                vmax, vmin = V.max(axis=0), V.min(axis=0)
                # an extreme at the segment's end is a corner (the power changes there):
                # it is a sample already and needs no refinement
                corner = t + hstep >= h * (1 - 1e-12)
                for p in np.flatnonzero(vmax > track["hi"]):
                    track["hi"][p] = vmax[p]
                    track["hi_at"][p] = (None if corner and V[2, p] >= vmax[p] else
                                         (track["seg"], t, y, hstep))
                for p in np.flatnonzero(vmin < track["lo"]):
                    track["lo"][p] = vmin[p]
                    track["lo_at"][p] = (None if corner and V[2, p] <= vmin[p] else
                                         (track["seg"], t, y, hstep))
            w = hstep * RADAU_B
            integral += w @ Y
            p_act, q_b = self._stage_terms(Y, Pj)
            e_in += w @ p_act
            e_bnd += float(w @ q_b)
            steps += 1
            landed = hstep == target - t
            t = target if landed else t + hstep
            y = y_new
            if float(np.max(y)) > T_LIMIT:
                self._runaway(y, a, "temperatures diverge during the transient")
            factor = min(10.0, safety * en ** -0.25) if en > 0 else 10.0
            if not landed or factor < 1.0 or hstep >= hs:
                hs = hstep * factor
        while k_stop < stops.size:
            out[k_stop] = y
            k_stop += 1
        return out, y, integral, steps, e_in, e_bnd

    @staticmethod
    def _offsets(h: float) -> np.ndarray:
        return np.geomspace(h * 1e-3, h, INTERIOR_POINTS + 1)

    def _sweep(self, T0, edges, level, slope, rows, sample=True):
        """All segments from ``T0``: sample times, probe values, end state, ``∫T dt`` (n,),
        steps, and the energy terms ``{"input_J", "to_boundaries_J"}`` (J)."""
        t_out, v_out = [np.array([0.0])], [T0[rows][None, :]]
        T = T0.copy()
        integral = np.zeros(self.n)
        steps = 0
        e_in = np.zeros(self.system.m)
        e_bnd = 0.0
        p = rows.size
        track = ({"rows": rows, "hi": np.full(p, -np.inf), "lo": np.full(p, np.inf),
                  "hi_at": [None] * p, "lo_at": [None] * p, "seg": 0} if sample else None)
        for k in range(edges.size - 1):
            h = edges[k + 1] - edges[k]
            offs = self._offsets(h) if sample else np.array([h])
            if track is not None:
                track["seg"] = k
            vals, T, integ, nf, ei, eb = self._segment(T, level[k], slope[k], h, offs,
                                                       track=track)
            integral += integ
            steps += nf
            e_in += ei
            e_bnd += eb
            t_out.append(edges[k] + offs)
            v_out.append(vals[:, rows])
        t = np.concatenate(t_out)
        t[-1] = edges[-1]
        v = np.vstack(v_out)
        if track is not None:
            t, v = self._refine_extremes(t, v, track, edges, level, slope, rows)
        terms = {"input_J": float(e_in.sum()), "to_boundaries_J": e_bnd,
                 "input_by_source_J": {nm: float(v) for nm, v in
                                       zip(self.system.input_names, e_in)}}
        return t, v, T, integral, steps, terms

    def _refine_extremes(self, t, v, track, edges, level, slope, rows):
        """Add the exact maximum and minimum of every probe as samples: inside the Radau
        step whose stage values were extreme, the probe temperature is maximised
        (minimised) over the step by Brent's bounded method on a re-integration from the
        step start (one short Radau step per evaluation; R. P. Brent 1973, ch. 5)."""
        new_t, new_v = [], []
        for p in range(rows.size):
            for kind, sign, best in (("hi_at", -1.0, np.max(v[:, p])),
                                     ("lo_at", 1.0, np.min(v[:, p]))):
                at = track[kind][p]
                if at is None:
                    continue
                k, ts, ys, hs = at
                a0, s0 = level[k] + slope[k] * ts, slope[k]

                def state(tau):
                    if tau <= 0.0:
                        return ys
                    return self._segment(ys, a0, s0, tau, np.array([tau]), first=hs)[1]

                res = minimize_scalar(lambda tau: sign * state(tau)[rows[p]],
                                      bounds=(0.0, hs), method="bounded",
                                      options={"xatol": 1e-4 * hs})
                tau = float(res.x)
                y = state(tau)
                if sign * (y[rows[p]] - best) < 0.0:   # better than every sample
                    new_t.append(edges[k] + ts + tau)
                    new_v.append(y[rows])
        return merge_samples(t, v, new_t, new_v)

    def _energy(self, terms: dict, T_start: np.ndarray, T_end: np.ndarray) -> tuple[float, dict]:
        """Relative imbalance ``|E_in − ΔE_stored − E_boundaries| / max(|terms|)`` with the
        actual (temperature-dependent) input energy and the heat carried into the
        boundaries through the k(T) edges."""
        stored = float(np.sum(self.C * (T_end - T_start)))
        e_in, e_b = terms["input_J"], terms["to_boundaries_J"]
        scale = max(abs(e_in), abs(stored), abs(e_b))
        err = abs(e_in - stored - e_b) / scale if scale > 0 else 0.0
        return err, {**terms, "stored_J": stored}

    def _initial(self, initial, T_amb: np.ndarray | None = None) -> np.ndarray:
        """Start state (n,) K absolute: ``initial`` checked (finite, > 0 K), or the
        zero-power steady state ``T_amb`` (computed when not given) for None."""
        if initial is None:
            return (self.steady(np.zeros(self.system.m)) if T_amb is None
                    else np.array(T_amb, dtype=np.float64))
        T0 = np.asarray(initial, dtype=np.float64).reshape(-1)
        if T0.size != self.n or not np.all(np.isfinite(T0)) or np.any(T0 <= 0):
            raise ValueError(f"initial: expected {self.n} finite absolute temperatures "
                             f"in K, got shape {np.shape(initial)}")
        return T0

    def transient(self, edges, level, slope, initial, probes) -> RawResponse:
        """From ``initial`` (n,) K absolute, or the zero-power steady state when None."""
        edges, level, slope, rows = as_arrays(edges, level, slope, probes)
        T0 = self._initial(initial)
        if self.mass.size:
            T0 = self._condense(T0[self.cap], level[0], T0[self.mass])
        t, v, Tend, integral, steps, terms = self._sweep(T0, edges, level, slope, rows)
        mean_full = integral / edges[-1]
        err, energy = self._energy(terms, T0, Tend)
        info = {"method": "nonlinear", "steps": steps, "rejected": self.n_reject,
                "nfev": self.n_rhs,
                "njev": self.n_jac, "mean_full": mean_full, "energy_error": err,
                "energy_J": energy, "success": True,
                "message": f"Radau IIA (order 5), rtol {self.rtol:g}, atol {self.atol:g} K"}
        return RawResponse(t, v, T0, Tend, mean_full[rows], info)

    def warmup_crossing(self, edges, level, slope, row: int, target_rise: float,
                        phase_t=None, phase_v=None, initial=None, q_ps=None) -> float:
        """First time (s) at which the rise of node ``row`` over the zero-power steady state
        reaches ``target_rise`` (K) when the periodic drive starts from ``initial`` (n,) K
        absolute (None: the zero-power steady state).

        A nonlinear system has no exact period jump, so the transient is integrated period
        by period; the first Radau step whose stage or end values reach the target is
        re-integrated from its start and the crossing located by Brent's method
        (R. P. Brent, *Algorithms for Minimization without Derivatives*, 1973, ch. 4).
        The march runs at tolerances no tighter than ``WARMUP_RTOL`` (relative and K):
        the warm-up time is a figure quoted to a few digits and the march covers many
        periods.  ``math.inf`` when the state settles (period map moves it less than
        ``atol``) below the target.  A linear system (constant k, no temperature
        coefficients) is handed to the exact modal warm-up
        (:meth:`ModalSolver.warmup_crossing`, which uses the periodic samples ``phase_t``,
        ``phase_v``); ``q_ps`` is accepted for the common signature and not used.
        """
        edges, level, slope, _ = as_arrays(edges, level, slope, [row])
        if self.system.is_linear:
            # nothing depends on temperature: the exact modal period jump applies
            from .modal import ModalSolver

            return ModalSolver(self.system).warmup_crossing(
                edges, level, slope, int(row), float(target_rise),
                np.asarray(phase_t, dtype=np.float64), np.asarray(phase_v, dtype=np.float64),
                initial=initial)
        if self.rtol < WARMUP_RTOL or self.atol < WARMUP_RTOL:
            loose = NonlinearSolver(self.system, rtol=max(self.rtol, WARMUP_RTOL),
                                    atol=max(self.atol, WARMUP_RTOL),
                                    max_newton=self.max_newton)
            return loose.warmup_crossing(edges, level, slope, row, target_rise,
                                         initial=initial)
        row = int(row)
        T_amb = self.steady(np.zeros(self.system.m))
        T = self._initial(initial, T_amb)
        target = float(target_rise)
        if T[row] - T_amb[row] >= target:
            return 0.0
        T_per = float(edges[-1])
        thr = float(T_amb[row]) + target
        for n_per in range(WARMUP_MAX_PERIODS):
            T_start = T.copy()
            for k in range(edges.size - 1):
                h = float(edges[k + 1] - edges[k])
                out = self._segment(T, level[k], slope[k], h, np.array([h]), watch=(row, thr))
                if isinstance(out[0], str):
                    _, ts, ys, hs = out
                    a0, s0 = level[k] + slope[k] * ts, slope[k]

                    def f(tau):
                        y = self._segment(ys, a0, s0, tau, np.array([tau]), first=hs)[1]
                        return float(y[row] - thr)

                    lo = 1e-9 * hs
                    if f(lo) >= 0.0:
                        return n_per * T_per + float(edges[k]) + ts
                    cands = RADAU_C * hs
                    vals = [f(c) for c in cands]
                    up = [i for i, v in enumerate(vals) if v >= 0.0]
                    if up:
                        hi = float(cands[up[0]])
                        lo = float(cands[up[0] - 1]) if up[0] > 0 else lo
                        tau = brentq(f, lo, hi, xtol=1e-12 * T_per, rtol=1e-12)
                    else:
                        # touches the level between stages: take the closest approach
                        tau = float(cands[int(np.argmax(vals))])
                    return n_per * T_per + float(edges[k]) + ts + tau
                T = out[1]
            if np.max(np.abs(T - T_start)) <= self.atol:
                return math.inf
        raise RuntimeError(f"NonlinearSolver.warmup_crossing: the rise at node "
                           f"{self.system.node_names[row]!r} did not reach {target:.4g} K "
                           f"within {WARMUP_MAX_PERIODS} periods")

    def _period_map(self, Tc0, edges, level, slope, Tz):
        T = np.empty(self.n)
        T[self.cap] = Tc0
        if self.mass.size:
            T = self._condense(Tc0, level[0], Tz)
        for k in range(edges.size - 1):
            h = edges[k + 1] - edges[k]
            T = self._segment(T, level[k], slope[k], h, np.array([h]))[1]
        return T

    def _krylov_correction(self, J: sp.csc_matrix, T_per: float):
        """Matrix-free solve of the chord correction ``(I − M)·δ = r`` for large networks,
        ``M`` the linearised monodromy on the capacitive nodes (massless rows follow
        algebraically).

        ``M`` is applied as ``KRYLOV_STEPS`` backward-Euler steps of the linearised system
        over the period, ``M ≈ [(C/h − J)⁻¹·C/h]^K`` with one sparse LU of the full
        ``C/h − J`` (an L-stable rational approximation of ``e^{A·T}``, exact for the slow
        modes to O(1/K), fast modes damped).  The corrector only sets the contraction rate
        of the chord iteration; the accuracy of the periodic state is that of the residual
        ``Φ(x) − x`` driven below ``atol`` with the full nonlinear period map.  GMRES
        (Y. Saad and M. H. Schultz, SIAM J. Sci. Stat. Comput. 7, 1986) is preconditioned
        by ``P⁻¹ = −(A·T)⁻¹ + I/2``, the inverse of the trapezoidal (Cayley) form
        ``I − (I − AT/2)⁻¹(I + AT/2) = −AT·(I − AT/2)⁻¹``, one sparse solve with the full
        Jacobian (the massless rows eliminate themselves): for an eigenvalue z = λT ≤ 0 the
        preconditioned operator is close to ``(1 − e^z)(1 − z/2)/(−z)`` ∈ [1/2, 1]
        (derived), so GMRES needs few iterations however stiff or slow the network is.
        """
        cap = self.cap
        Cc = self.C[cap]
        hk = T_per / KRYLOV_STEPS
        c_h = self.C / hk
        lu_be = sla.splu(sp.csc_matrix(sp.diags(c_h) - J))
        lu_full = sla.splu(sp.csc_matrix(J))
        nc = cap.size
        x = np.zeros(self.n)
        rhs = np.zeros(self.n)
        counts = {"propagations": 0}

        def propagate(v):
            counts["propagations"] += 1
            x[:] = 0.0
            x[cap] = np.ravel(v)
            y = x
            for _ in range(KRYLOV_STEPS):
                y = lu_be.solve(c_h * y)
            return y[cap]

        def precond(v):
            v = np.ravel(v)
            rhs[:] = 0.0
            rhs[cap] = Cc * v
            return -lu_full.solve(rhs)[cap] / T_per + 0.5 * v

        op = sla.LinearOperator((nc, nc), matvec=lambda v: np.ravel(v) - propagate(v),
                                dtype=np.float64)
        M = sla.LinearOperator((nc, nc), matvec=precond, dtype=np.float64)

        def correct(r):
            d, info = sla.gmres(op, r, M=M, rtol=1e-8, atol=0.0, restart=50, maxiter=20)
            if info < 0 or not np.all(np.isfinite(d)):
                raise RuntimeError("NonlinearSolver.periodic: GMRES failed on the shooting "
                                   f"correction (code {info})")
            return d

        correct.counts = counts
        return correct

    def periodic(self, edges, level, slope, probes) -> RawResponse:
        """Periodic steady state by shooting (chord Newton with the linearised monodromy),
        seeded with the steady state at the mean power."""
        edges, level, slope, rows = as_arrays(edges, level, slope, probes)
        if self.floating:
            raise NetworkError(f"nodes {', '.join(self.floating[0][:6])} have no conduction "
                               "path to a boundary: there is no periodic steady state")
        nc = self.cap.size
        krylov = self.shooting == "krylov" or (self.shooting == "auto"
                                               and nc > PERIODIC_LIMIT)
        if self.shooting == "dense" and nc > PERIODIC_LIMIT:
            raise ValueError(f"NonlinearSolver.periodic: shooting = 'dense' with {nc} "
                             f"capacitive nodes; the dense monodromy is limited to "
                             f"{PERIODIC_LIMIT}: use shooting='krylov' (or 'auto'), or a "
                             "transient over enough periods")
        T_per = edges[-1]
        h = np.diff(edges)
        Pbar = segment_energy(edges, level, slope) / T_per
        Ppk = np.max(level + np.maximum(slope * h[:, None], 0.0), axis=0)
        self._check_linear_runaway(Ppk)
        Ts = self.steady(Pbar)
        cap, z = self.cap, self.mass
        J = sp.csc_matrix(self.jacobian(Ts, Pbar))
        if krylov:
            correct = self._krylov_correction(J, float(T_per))
        else:
            # linearised monodromy about the mean-power steady state
            Jd = J.toarray()
            Jc = Jd[np.ix_(cap, cap)]
            if z.size:
                Jc = Jc - Jd[np.ix_(cap, z)] @ np.linalg.solve(Jd[np.ix_(z, z)],
                                                               Jd[np.ix_(z, cap)])
            Mlin = dla.expm(Jc / self.C[cap][:, None] * T_per)
            lu = dla.lu_factor(np.eye(nc) - Mlin)

            def correct(r):
                return dla.lu_solve(lu, r)
        x = Ts[cap].copy()
        Tz = Ts[z].copy()
        it = 0
        err = np.inf
        for it in range(1, self.max_shooting + 1):
            Tend = self._period_map(x, edges, level, slope, Tz)
            Tz = Tend[z]
            r = Tend[cap] - x
            err = float(np.max(np.abs(r)))
            if err <= max(self.atol, 1e-10 * float(np.max(x))) * 10:
                break
            x = x + correct(r)
            if not np.all(np.isfinite(x)) or np.max(x) > T_LIMIT:
                self._runaway(Tend, Ppk, "the periodic shooting diverges")
        else:
            raise RuntimeError(f"NonlinearSolver.periodic: shooting did not converge in "
                               f"{self.max_shooting} periods (mismatch {err:.3g} K)")
        T0 = self._condense(x, level[-1], Tz) if z.size else None
        if T0 is None:
            T0 = np.empty(self.n)
            T0[cap] = x
        t, v, Tend, integral, steps, terms = self._sweep(T0, edges, level, slope, rows)
        mean_full = integral / T_per
        e_err, energy = self._energy(terms, T0, Tend)
        info = {"method": "nonlinear", "shooting_iterations": it, "mismatch_K": err,
                "shooting": "krylov" if krylov else "dense",
                "propagations": correct.counts["propagations"] if krylov else 0,
                "steps": steps, "rejected": self.n_reject, "nfev": self.n_rhs,
                "mean_full": mean_full,
                "energy_error": e_err, "energy_J": energy, "success": True,
                "message": f"shooting converged in {it} periods (mismatch {err:.2g} K)"}
        return RawResponse(t, v, T0, Tend, mean_full[rows], info)
