"""Exact linear solver: modal decomposition and closed-form segment propagation.

After static condensation (:mod:`pulsetherm.network.assemble`) the capacitive nodes obey
``C dT/dt + G T = F T_b + B P(t)`` with C diagonal > 0 and G symmetric.  The generalised
symmetric eigenproblem ``G v = λ C v`` is solved through the scaling
``A = C^{-1/2} G C^{-1/2} = U Λ Uᵀ`` (``scipy.linalg.eigh``), ``V = C^{-1/2} U`` so that
``Vᵀ C V = I`` and ``Vᵀ G V = Λ``.  With ``T = T_ref + V q`` (``T_ref`` the zero-power static
field) each modal coordinate is a first-order system

    dq_i/dt = −λ_i q_i + w_iᵀ P(t),      W = Vᵀ B.

On a segment where P = a + b·s (0 ≤ s ≤ h) the solution is exact:

    q(s) = e^{−λs} q(0) + ψ₀(λ, s) Wa + ψ₁(λ, s) Wb,
    ψ_k(λ, s) = ∫₀^s e^{−λ(s−u)} u^k/k! du = s^{k+1} g_k(λs),
    g_k(x) = Σ_j (−x)^j/(j+k+1)!,   g₀ = −expm1(−x)/x,  g_{k+1} = (1/(k+1)! − g_k)/x,

and its integral ``∫₀^h q = ψ₀ q(0) + ψ₁ Wa + ψ₂ Wb`` gives exact time averages.  The
series is used for x < 1 to avoid cancellation; λ = 0 (adiabatic parts) is the x → 0 limit.

Periodic steady state (period T, any number of segments): the end-of-period state is
``q(T) = e^{−λT} q(0) + r`` with ``r = Σ_k e^{−λ(T − t_{k+1})} ρ_k`` (ρ_k the forced increment of
segment k from a zero start), so ``q(0) = r / (1 − e^{−λT})`` — no warm-up simulation.

Massless nodes follow algebraically, ``T_m = −K T_c + M_b T_b + M_p P`` (exact).

References
----------
H. S. Carslaw and J. C. Jaeger, *Conduction of Heat in Solids*, 2nd ed., Oxford, 1959
(modal/series solutions of linear conduction).  C. Moler and C. Van Loan, "Nineteen dubious
ways to compute the exponential of a matrix, twenty-five years later", SIAM Review 45(1),
2003 (ψ/φ-functions of the matrix exponential for piecewise-polynomial inputs).
"""
from __future__ import annotations

import math

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp

from .assemble import condense, floating_nodes, static_field
from .modal_bounds import certify
from .solvers import RawResponse, as_arrays, merge_samples, segment_energy
from .system import ThermalSystem

__all__ = ["ModalSolver", "gk"]

#: Sample budget for the interior (log-spaced) points of a response.
SAMPLE_BUDGET = 20_000
#: Interior samples per segment when the budget allows.
INTERIOR_POINTS = 10
#: Roots x modes below which the refinement iterates on plain floats (numpy per-call
#: costs more there).
_SCALAR_LIMIT = 256
#: Largest modes × segments array kept in memory (segment-start states for refinement).
STORE_LIMIT = 4_000_000
#: Largest modes × segments tables of forcing and segment functions laid out at once for
#: the blocked scan (above: gathered block column by block column).
_TABLE_LIMIT = 65_536

#: One and four ulp of 1.0 (the safeguarded Newton's step tolerance relative to x).
_EPS = float(np.finfo(np.float64).eps)
_EPS4 = 4.0 * _EPS

_FACT = np.array([math.factorial(j) for j in range(24)], dtype=np.float64)


def gk(k: int, x: np.ndarray) -> np.ndarray:
    """g_k(x) = Σ_j (−x)^j/(j+k+1)! for x ≥ 0 (ψ_k(λ, s) = s^{k+1}·g_k(λs)).

    Series (12 terms, Horner; truncation < 1e-17 relative) for x < 0.1, otherwise the
    recursion from g₀ = −expm1(−x)/x (cancellation at most ~30 ulp at x = 0.1 for k = 2).
    """
    x = np.asarray(x, dtype=np.float64)
    small = x < 0.1
    if small.all():
        acc = np.full_like(x, 1.0 / _FACT[11 + k + 1])
        for j in range(10, -1, -1):
            acc = acc * (-x) + 1.0 / _FACT[j + k + 1]
        return acc
    out = np.empty_like(x)
    if small.any():
        out[small] = gk(k, x[small])
    big = ~small
    xb = x[big]
    g = -np.expm1(-xb) / xb
    for kk in range(k):
        g = (1.0 / _FACT[kk + 1] - g) / xb
    out[big] = g
    return out


def _psi(k: int, lam: np.ndarray, s) -> np.ndarray:
    """ψ_k(λ, s) = s^{k+1} g_k(λs), broadcasting λ (modes, 1) against s."""
    s = np.asarray(s, dtype=np.float64)
    return s ** (k + 1) * gk(k, lam * s)


def _gks(x: np.ndarray, kmax: int) -> list[np.ndarray]:
    """[g_0(x), ..., g_kmax(x)] in one pass: the recursion g_{k+1} = (1/(k+1)! − g_k)/x
    from g₀ = −expm1(−x)/x for x ≥ 0.1, the series Σ_j (−x)^j/(j+k+1)! (12 terms, as in
    :func:`gk`) below, all orders at once and only where x < 0.1: the powers (−x)^j are
    built by repeated products (never a pow from a negative base, ~40× slower in numpy)
    and summed against the coefficient table in one matrix product.  With |x| < 0.1 the
    terms fall by 10× or more each, so the plain sum matches Horner's rule to about 1 ulp."""
    x = np.asarray(x, dtype=np.float64)
    small = x < 0.1
    if not small.any():
        g = -np.expm1(-x) / x
        out = [g]
        for kk in range(kmax):
            g = (1.0 / _FACT[kk + 1] - g) / x
            out.append(g)
        return out
    every = small.all()
    flat = x.ravel()
    idx = None if every else np.flatnonzero(small.ravel())
    xs = -(flat if every else flat[idx])
    pw = np.empty((12, xs.size))                 # rows (−x)^0 .. (−x)^11
    pw[0] = 1.0
    np.cumprod(np.broadcast_to(xs, (11, xs.size)), axis=0, out=pw[1:])
    acc = _SERIES[:kmax + 1] @ pw                # (kmax + 1, number of small x)
    if every:
        return list(acc.reshape((kmax + 1,) + x.shape))
    xb = np.where(small, 1.0, x)
    g = -np.expm1(-xb) / xb
    g.ravel()[idx] = acc[0]
    out = [g]
    for kk in range(kmax):
        g = (1.0 / _FACT[kk + 1] - g) / xb
        g.ravel()[idx] = acc[kk + 1]
        out.append(g)
    return out


#: Series coefficients 1/(j+k+1)! (row k, column j) of _gks.
_SERIES = np.array([[1.0 / _FACT[j + k + 1] for j in range(12)] for k in range(4)])


def _phis(lam: np.ndarray, s, kmax: int) -> list[np.ndarray]:
    """[e^{−λs}, ψ₀(λ, s), ..., ψ_kmax(λ, s)] broadcasting λ against s (one g-pass)."""
    s = np.asarray(s, dtype=np.float64)
    x = lam * s
    g = _gks(x, kmax)
    out = [np.exp(-x)]
    sp = s
    for k in range(kmax + 1):
        out.append(sp * g[k])
        sp = sp * s
    return out


def _bracketed_newton(fun, a: np.ndarray, b: np.ndarray, fa: np.ndarray | None = None,
                      fb: np.ndarray | None = None, xtol=0.0, max_iter: int = 200) -> np.ndarray:
    """Roots of many scalar functions at once, each bracketed: f(a) > 0 > f(b).

    ``fun(x, idx) -> (f, f')`` evaluates the functions ``idx`` (indices into ``a``) at
    ``x`` (arrays of the same length); ``fa``/``fb`` are f at the bracket ends when known.
    The start is the secant point of the bracket; then Newton steps, replaced by bisection
    whenever a step leaves the bracket or fails to halve the previous one (safeguarded
    Newton, W. H. Press et al., *Numerical Recipes*, 3rd ed., 2007, §9.4 "rtsafe").  The
    bracket shrinks every step; a root stops when its step is below ``xtol`` (absolute, per
    root) or 4 ulp of x, or f is exactly 0; converged roots are not evaluated again.
    """
    a = np.array(a, dtype=np.float64)
    b = np.array(b, dtype=np.float64)
    n = a.size
    idx = np.arange(n)
    if fa is None:
        fa, _ = fun(a, idx)
    if fb is None:
        fb, _ = fun(b, idx)
    xt = np.broadcast_to(np.asarray(xtol, dtype=np.float64), (n,))
    x = a - fa * (b - a) / (fb - fa)
    x = np.where(np.isfinite(x) & (x > np.minimum(a, b)) & (x < np.maximum(a, b)), x,
                 0.5 * (a + b))
    fx, dfx = fun(x, idx)
    a = np.where(fx > 0, x, a)
    b = np.where(fx > 0, b, x)
    out = x.copy()
    act = np.flatnonzero(fx != 0)
    x, fx, dfx, a, b, xt = x[act], fx[act], dfx[act], a[act], b[act], xt[act]
    dx_old = np.abs(b - a)
    eps4 = _EPS4
    for _ in range(max_iter):
        if act.size == 0:
            break
        with np.errstate(divide="ignore", invalid="ignore"):
            xn = x - fx / dfx
        lo, hi = np.minimum(a, b), np.maximum(a, b)
        bad = ~np.isfinite(xn) | (xn < lo) | (xn > hi) | (np.abs(xn - x) > 0.5 * dx_old)
        xn = np.where(bad, 0.5 * (a + b), xn)
        step = np.abs(xn - x)
        dx_old = np.where(bad, np.abs(b - a), step)
        tol = np.maximum(eps4 * np.maximum(np.abs(x), 1e-300), xt)
        conv = step <= tol
        if conv.any():                  # these keep x (recorded in out already)
            keep = ~conv
            act, x, xn, a, b, dx_old, xt = (act[keep], x[keep], xn[keep], a[keep], b[keep],
                                            dx_old[keep], xt[keep])
            if act.size == 0:
                break
        fn, dfn = fun(xn, act)
        pos = fn > 0
        a = np.where(pos, xn, a)
        b = np.where(pos, b, xn)
        x, fx, dfx = xn, fn, dfn
        out[act] = x
        fin = (fn == 0) | (np.abs(b - a) <= np.maximum(
            eps4 * np.maximum(np.abs(xn), 1e-300), xt))
        if fin.any():
            keep = ~fin
            act, x, fx, dfx, a, b, dx_old, xt = (act[keep], x[keep], fx[keep], dfx[keep],
                                                 a[keep], b[keep], dx_old[keep], xt[keep])
    return out


def _rtsafe(fun, a: float, b: float, fa: float, fb: float, xtol: float,
            max_iter: int = 200, noise=None, x0: float | None = None) -> float:
    """Scalar twin of :func:`_bracketed_newton` (plain floats, for a few small roots where
    numpy's per-call cost dominates): f(a) > 0 > f(b), ``fun(x) -> (f, f')``.

    With ``noise``, ``fun(x)`` returns (f, f', e), e a bound on the rounding error of f at
    x, and x is taken as the root once |f(x)| ≤ e (it is one to working precision).
    Without it a root whose f has a rounding floor above the step tolerance would make
    the Newton steps stop halving, and the safeguard bisect back from the far end of the
    bracket (up to 40 more evaluations, measured on the X-band example).  ``x0``: the
    first point (default: the secant point of the bracket)."""
    if noise:
        inner = fun

        def fun(x):
            f, df, e = inner(x)
            return (0.0 if abs(f) <= e else f), df
    x = a - fa * (b - a) / (fb - fa) if x0 is None else x0
    if not (a < x < b):
        x = 0.5 * (a + b)
    fx, dfx = fun(x)
    if fx == 0:
        return x
    if fx > 0:
        a = x
    else:
        b = x
    dx_old = b - a
    for _ in range(max_iter):
        xn = x - fx / dfx if dfx != 0 else math.nan
        bad = not (a <= xn <= b) or abs(xn - x) > 0.5 * dx_old
        if bad:
            xn = 0.5 * (a + b)
        step = abs(xn - x)
        dx_old = b - a if bad else step
        tol = max(_EPS4 * max(abs(x), 1e-300), xtol)
        if step <= tol:
            return x
        fn, dfn = fun(xn)
        if fn == 0:
            return xn
        if fn > 0:
            a = xn
        else:
            b = xn
        x, fx, dfx = xn, fn, dfn
        if b - a <= max(_EPS4 * max(abs(xn), 1e-300), xtol):
            return x
    return x



def _hermite_root(a: float, b: float, fa: float, fb: float, da: float, db: float) -> float:
    """A root in (a, b) of the cubic Hermite interpolant of f from f and f' at both ends
    (fa > 0 > fb): a start for Newton that is usually orders of magnitude closer than the
    secant point (the interpolant's error is O(h^4) times the fourth derivative).  Newton
    on the cubic from the secant point, kept inside the bracket; the secant point when
    that fails.  (Cubic Hermite interpolation: R. L. Burden and J. D. Faires, *Numerical
    Analysis*, 9th ed., 2011, section 3.4.)"""
    h = b - a
    sec = fa / (fa - fb)
    # H(t) = fa + t*h*da + t^2*c2 + t^3*c3 on t in [0, 1]
    c2 = 3.0 * (fb - fa) - h * (2.0 * da + db)
    c3 = 2.0 * (fa - fb) + h * (da + db)
    t, lo, hi = sec, 0.0, 1.0
    for _ in range(8):
        H = fa + t * (h * da + t * (c2 + t * c3))
        if H > 0:
            lo = t
        elif H < 0:
            hi = t
        else:
            break
        dH = h * da + t * (2.0 * c2 + 3.0 * t * c3)
        tn = t - H / dH if dH != 0 else 0.5 * (lo + hi)
        if not lo < tn < hi:
            tn = 0.5 * (lo + hi)
        if abs(tn - t) <= 1e-12:
            t = tn
            break
        t = tn
    x = a + t * h
    return x if a < x < b else a + sec * h

def _eigh(G, s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Eigenvalues (ascending) and orthonormal eigenvectors of A = S G S, S = diag(s), for
    the symmetric G (dense, or scipy sparse).

    A chain (every node joined to at most two others, no loop) has, in the order of its
    path, a tridiagonal A: then LAPACK's dstemr (multiple relatively robust
    representations: I. S. Dhillon, B. N. Parlett and C. Vömel, "The design and
    implementation of the MRRR algorithm", ACM TOMS 32(4), 2006) solves it directly in
    O(n²), the routine scipy's default driver dsyevr ends in too, after the Householder
    tridiagonalisation and back-transformation (G. H. Golub and C. F. Van Loan, *Matrix
    Computations*, 4th ed., 2013, §8.3.1) that cost O(n³) and change nothing for a
    tridiagonal A.  Measured on graded chains (OpenBLAS, one thread): 0.42 ms against
    0.53 ms at n = 100, 3.5 ms against 7.1 ms at n = 300; a sparse G is never made dense.
    The slowest modes of a graded chain come out at least as accurately: the smallest
    eigenvalue of the 300-node benchmark chain to 2.4e-12 relative with either solve,
    of a 1500-node one to 7.5e-12 against 2.1e-11 for the dense solve, measured against
    bisection on the Sturm count in extended precision (tests/test_engine_fast_paths.py).
    Other matrices: dense A, scipy's default driver (dsyevr).  The divide-and-conquer
    drivers (dsyevd, dstevd) are 10-30 % faster but resolve the slowest modes of a stiff
    network less well: a 3-period transient of a 12-node network with time constants over
    6.6e7 balanced its energy to 1.7e-9 with dsyevd against 1.2e-12 with dsyevr
    (test_engine_random, n=12, seed=6435631); dstevd gave 2e-11 relative error on the
    slowest eigenvalue of a 60-node chain (τ 1e-7 .. 10 s) where dstemr gave 4e-15."""
    n = s.size
    if sp.issparse(G):
        G = G.tocsr()
        if not G.has_canonical_format:          # repeated entries: summed first
            G = G.copy()
            G.sum_duplicates()
        rows = np.repeat(np.arange(n), np.diff(G.indptr))
        cols, vals = G.indices, G.data
        nz = vals != 0
        if not nz.all():
            rows, cols, vals = rows[nz], cols[nz], vals[nz]
        A = None
    else:
        A = G * s[None, :]
        A *= s[:, None]
        rows, cols = np.nonzero(A)
        vals = A[rows, cols]
    order = _path_order(rows, cols, n)
    if order is not None:
        ident = order is _IDENTITY
        if ident:
            order = np.arange(n)
        off = rows != cols
        # A_ij = G_ij s_j s_i, in the order of the dense product above
        v = vals * s[cols] * s[rows] if A is None else vals
        d = np.zeros(n)
        d[rows[~off]] = v[~off]
        pos = np.empty(n, dtype=np.int64)
        pos[order] = np.arange(n)
        pr, pc = pos[rows[off]], pos[cols[off]]
        up = pc == pr + 1                       # links between path neighbours
        e = np.zeros(n)                         # dstemr takes n entries (last: workspace)
        e[pr[up]] = v[off][up]
        m, w, Z, info = sla.lapack.dstemr(d if ident else d[order], e, 0, 0.0, 0.0, 0, 0,
                                          compute_v=1)
        if info == 0 and m == n:
            if ident:
                return w, Z
            U = np.empty_like(Z)
            U[order] = Z
            return w, U
    if A is None:
        A = G.toarray()
        A *= s[None, :]
        A *= s[:, None]
    return sla.eigh(A, check_finite=False, overwrite_a=True)


#: Marker of the identity order (see :func:`_path_order`).
_IDENTITY = np.arange(0)
_IDENTITY.flags.writeable = False


def _path_order(rows: np.ndarray, cols: np.ndarray, n: int) -> np.ndarray | None:
    """An order of the n rows making the symmetric matrix with nonzeros (rows, cols)
    tridiagonal (its graph a union of paths), None if there is none; ``_IDENTITY`` when it
    is tridiagonal as it is.  The paths are walked from their ends."""
    off = rows != cols
    r, c = rows[off], cols[off]
    if r.size > 2 * (n - 1):                    # more than n − 1 links: not a forest
        return None
    if not r.size or np.abs(r - c).max() == 1:
        return _IDENTITY                        # tridiagonal as it is
    deg = np.bincount(r, minlength=n)
    if deg.max() > 2:
        return None
    srt = np.argsort(r, kind="stable")
    r, c = r[srt], c[srt]
    first = np.searchsorted(r, np.arange(n))
    nb1 = np.full(n, -1)
    nb2 = np.full(n, -1)
    nb1[deg >= 1] = c[first[deg >= 1]]
    nb2[deg == 2] = c[first[deg == 2] + 1]
    nb1l, nb2l = nb1.tolist(), nb2.tolist()
    seen = [False] * n
    order = []
    for s in np.flatnonzero(deg <= 1).tolist():
        if seen[s]:
            continue
        prev, cur = -1, s
        while cur != -1:
            seen[cur] = True
            order.append(cur)
            nxt = nb1l[cur] if nb1l[cur] != prev else nb2l[cur]
            prev, cur = cur, nxt
    if len(order) != n:                         # a loop: no path order
        return None
    return np.array(order, dtype=np.int64)


class ModalSolver:
    """Exact modal solver for linear networks (registered as ``"modal"``).

    Parameters
    ----------
    system
        The assembled system (linear: no k(T) exponents, no temperature coefficients).
    linearize
        Option: accept a nonlinear system and use its reference conductances (for small-
        signal impedances).
    linear_points
        Option: evenly spaced samples added inside every segment (default 0), for plots on
        a linear time axis; the log-spaced samples and exact extremes are always there.

    Attributes
    ----------
    lam
        Eigenvalues λ_i = 1/τ_i, 1/s, (nc,), ascending; exactly 0 for adiabatic parts.
    V
        C-normalised mode shapes at the capacitive nodes, (nc, nc).
    Phi
        Mode shapes at every free node (massless rows reconstructed), (n, nc).
    Dp
        Direct (instantaneous) input-to-temperature map of massless nodes, K/W, (n, m).
    W
        Modal input map Vᵀ B, (nc, m).
    """

    name = "modal"

    def __init__(self, system: ThermalSystem, **options) -> None:
        unknown = set(options) - {"linearize", "linear_points"}
        if unknown:
            raise ValueError(f"ModalSolver: unknown option(s) {sorted(unknown)}; expected "
                             "linearize, linear_points")
        if not system.is_linear and not options.get("linearize", False):
            raise ValueError("ModalSolver: the system is nonlinear (k(T) exponents or "
                             "temperature coefficients); use the nonlinear solver")
        self.system = system
        self.options = options
        cond = condense(system, dense=False)    # G sparse when nothing is condensed
        self.cond = cond
        s = 1.0 / np.sqrt(cond.C)
        lam, U = _eigh(cond.G, s)
        lam = np.maximum(lam, 0.0)
        n_float = len(floating_nodes(system))
        if n_float:
            lam[:n_float] = 0.0
        self.lam = lam
        U *= s[:, None]                         # V = S U in place (no second n×n array)
        self.V = U
        self.W = self.V.T @ cond.B
        n, nc = system.n, cond.nc
        Dp = np.zeros((n, system.m))
        if cond.mass.size:
            Phi = np.empty((n, nc))
            Phi[cond.cap] = self.V
            Phi[cond.mass] = -cond.K @ self.V
            Dp[cond.mass] = cond.Mp
        else:                                   # every node has mass: cap is 0 .. n−1
            Phi = self.V
        self.Phi = Phi
        self.Dp = Dp
        # Zero-power static field; floating parts referred to 0 K (their q is absolute).
        T_ref = static_field(system, floating="nan")
        if cond.mass.size or n_float:
            Tc = np.nan_to_num(T_ref[cond.cap], nan=0.0)
            T_ref = np.empty(n)
            T_ref[cond.cap] = Tc
            if cond.mass.size:
                T_ref[cond.mass] = -cond.K @ Tc + cond.Mb @ system.T_boundary
        self.T_ref = T_ref
        self.n_float = n_float
        self.n_eval = 0
        #: The latest periodic response asked of this solver through its network, reused
        #: for the same power times one factor (:mod:`pulsetherm.network.rescale`).
        self.memo: dict = {}

    # -- basic pieces ------------------------------------------------------------------
    @property
    def tau(self) -> np.ndarray:
        """Time constants 1/λ, s (inf for adiabatic modes)."""
        with np.errstate(divide="ignore"):
            return np.where(self.lam > 0, 1.0 / np.where(self.lam > 0, self.lam, 1.0), np.inf)

    def q_from_state(self, x: np.ndarray | None) -> np.ndarray:
        """Modal coordinates of a full absolute state (n,) K (None: the static field)."""
        if x is None:
            return np.zeros(self.lam.size)
        cap = self.cond.cap
        return self.V.T @ (self.cond.C * (x[cap] - self.T_ref[cap]))

    def state(self, q: np.ndarray, power: np.ndarray) -> np.ndarray:
        """Full absolute state (n,) K from modal coordinates and the present power (m,)."""
        return self.T_ref + self.Phi @ q + self.Dp @ power

    def steady(self, power: np.ndarray) -> np.ndarray:
        """Static field G T = Gb T_b + B P (sparse solve), K absolute, (n,) from P (m,) W."""
        return static_field(self.system, np.asarray(power, dtype=np.float64))

    def _forcing(self, level: np.ndarray, slope: np.ndarray):
        """Modal forcing W·a and W·b for segments (rows of level/slope) -> (modes, k)."""
        return self.W @ level.T, self.W @ slope.T

    def _advance(self, q0: np.ndarray, h, Wa: np.ndarray, Wb: np.ndarray) -> np.ndarray:
        """q after time h from q0 (modes, k) with forcing a + b s (broadcast over columns)."""
        lam = self.lam[:, None]
        return np.exp(-lam * h) * q0 + _psi(0, lam, h) * Wa + _psi(1, lam, h) * Wb

    # -- blocked scan over segments ----------------------------------------------------
    def _seg_funcs(self, h: np.ndarray, need_p2: bool = True):
        """Per-segment e^{−λh}, ψ₀, ψ₁ (and ψ₂) as a function of segment indices.

        Pulse trains and bursts have few distinct widths: they are computed once per
        distinct width (widths equal to 1e-12 relative, the precision of the edges
        themselves, share one entry) and gathered; otherwise computed per segment."""
        h = np.asarray(h, dtype=np.float64)
        key = (h.tobytes(), need_p2)
        last = getattr(self, "_funcs_last", None)
        if last is not None and last[0] == key:
            return last[1]
        funcs = self._seg_funcs_new(h, need_p2)
        if h.size <= 4096:
            self._funcs_last = (key, funcs)
        return funcs

    def _seg_funcs_new(self, h: np.ndarray, need_p2: bool):
        lam = self.lam[:, None]
        if h.size <= 16:                        # a few segments: no search for repeats
            tab = _phis(lam, h[None, :], 2 if need_p2 else 1)
            return lambda sel: tuple(t[:, sel] for t in tab)
        order = np.argsort(h, kind="stable")
        hs = h[order]
        new = np.ones(h.size, dtype=bool)
        new[1:] = (hs[1:] - hs[:-1]) > 1e-12 * hs[1:]
        nu = int(new.sum())
        if nu <= max(64, h.size // 4):
            inv = np.empty(h.size, dtype=np.int64)
            inv[order] = np.cumsum(new) - 1
            hu = hs[new][None, :]
            tab = _phis(lam, hu, 2 if need_p2 else 1)
            if hu.size == 1:
                return lambda sel: tuple(np.broadcast_to(t, (t.shape[0], np.size(sel)))
                                         for t in tab)
            return lambda sel: tuple(t[:, inv[sel]] for t in tab)

        def direct(sel):
            return tuple(_phis(lam, h[sel][None, :], 2 if need_p2 else 1))
        return direct

    def _blocks(self, edges: np.ndarray, level: np.ndarray, slope: np.ndarray):
        """:meth:`_blocks_new`, remembered for the last (small) waveform: the periodic
        start and the sampling scan fold the same blocks."""
        if edges.size > 4097:
            return self._blocks_new(edges, level, slope)
        key = (edges.tobytes(), level.tobytes(), slope.tobytes(), level.shape)
        last = getattr(self, "_blocks_last", None)
        if last is not None and last[0] == key:
            return last[1]
        out = self._blocks_new(edges, level, slope)
        self._blocks_last = (key, out)
        return out

    def _blocks_new(self, edges: np.ndarray, level: np.ndarray, slope: np.ndarray):
        """Split the N segments into nblk blocks of Bk = ⌈√N⌉ (zero-width padding) and fold
        each block: its decay Π_k e^{−λh_k} and forced increment (the state at the block
        end from a zero start), both (modes, nblk).

        Returns Bk, nblk, h (nblk, Bk), level and slope (nblk, Bk, m), ``column(j)`` ->
        (Wa, Wb, e^{−λh}, ψ₀, ψ₁, ψ₂) of the j-th segment of every block, each (modes,
        nblk), segment indices (nblk, Bk), decay, increment.  Up to ``_TABLE_LIMIT``
        entries the forcing and the functions of every segment are laid out once (strided
        views per column), else gathered per column.
        """
        N = edges.size - 1
        h = edges[1:] - edges[:-1]
        nm = self.lam.size
        Bk = max(1, int(math.ceil(math.sqrt(N))))
        nblk = int(math.ceil(N / Bk))
        pad = nblk * Bk - N
        if pad:
            hp = np.concatenate([h, np.zeros(pad)]).reshape(nblk, Bk)
            lp = np.concatenate([level, np.zeros((pad, level.shape[1]))]).reshape(nblk, Bk, -1)
            sp_ = np.concatenate([slope, np.zeros((pad, slope.shape[1]))]).reshape(nblk, Bk,
                                                                                    -1)
        else:                                   # copies: the blocks are remembered
            hp = h.reshape(nblk, Bk)
            lp = level.reshape(nblk, Bk, -1).copy()
            sp_ = slope.reshape(nblk, Bk, -1).copy()
        funcs = self._seg_funcs(hp.ravel())
        seg = np.arange(nblk * Bk).reshape(nblk, Bk)
        if nm * nblk * Bk <= _TABLE_LIMIT:
            m = level.shape[1]
            Wa_all, Wb_all = self._forcing(lp.reshape(-1, m), sp_.reshape(-1, m))
            tabs = (Wa_all, Wb_all) + tuple(funcs(seg.ravel()))

            def column(j):
                return tuple(t[:, j::Bk] for t in tabs)
        else:
            def column(j):
                return self._forcing(lp[:, j, :], sp_[:, j, :]) + tuple(funcs(seg[:, j]))
        dec = np.ones((nm, nblk))
        inc = np.zeros((nm, nblk))
        for j in range(Bk):
            Wa, Wb, d, p0, p1, _ = column(j)
            dec *= d
            inc = d * inc + p0 * Wa + p1 * Wb
        return Bk, nblk, hp, lp, sp_, column, seg, dec, inc

    def _scan(self, q0: np.ndarray, edges: np.ndarray, level: np.ndarray, slope: np.ndarray,
              Pp: np.ndarray, Dp: np.ndarray, store: bool, need_integral: bool = True):
        """Sweep the segments from ``q0``; exact, vectorised as √N blocks of √N segments.

        Returns
        -------
        ends : (N, p) probe rises (Pp q + Dp P, left limits) at every segment end
        q_end : (modes,) state at the last edge
        integral : (modes,) ∫ q dt over the run (None unless ``need_integral``)
        starts : (modes, N) segment-start states if ``store`` else block starts (modes, nblk)
        """
        N = edges.size - 1
        nm = self.lam.size
        Bk, nblk, hp, lp, sp_, column, seg, dec, inc = self._blocks(edges, level, slope)
        # pass 2: block-start states, sequential over blocks
        Qs = np.empty((nm, nblk))
        q = q0.astype(np.float64).copy()
        for b in range(nblk):
            Qs[:, b] = q
            q = dec[:, b] * q + inc[:, b]
        q_end = q
        # pass 3: within blocks, all blocks at once
        ends = np.empty((nblk, Bk, Pp.shape[0]))
        integral = np.zeros(nm) if need_integral else None
        starts = np.empty((nm, N)) if store else Qs
        Q = Qs.copy()
        for j in range(Bk):
            if store:
                cols = seg[:, j]
                ok = cols < N
                starts[:, cols[ok]] = Q[:, ok]
            Wa, Wb, d, p0, p1, p2 = column(j)
            if need_integral:
                integral += np.sum(p0 * Q + p1 * Wa + p2 * Wb, axis=1)
            Q = d * Q + p0 * Wa + p1 * Wb
            pw = lp[:, j, :] + sp_[:, j, :] * hp[:, j][:, None]
            ends[:, j, :] = (Pp @ Q).T + pw @ Dp.T
        ends = ends.reshape(nblk * Bk, -1)[:N]
        return ends, q_end, integral, starts

    def _segment_start(self, k: int, edges, level, slope, starts, store: bool) -> np.ndarray:
        """State at the start of segment k (from stored starts, or from its block start)."""
        if store:
            return starts[:, k]
        N = edges.size - 1
        Bk = max(1, int(math.ceil(math.sqrt(N))))
        b = k // Bk
        q = starts[:, b].copy()
        for kk in range(b * Bk, k):
            h = edges[kk + 1] - edges[kk]
            Wa, Wb = self._forcing(level[kk:kk + 1], slope[kk:kk + 1])
            q = self._advance(q[:, None], h, Wa, Wb)[:, 0]
        return q

    def _eval_seg(self, q0: np.ndarray, s, lvl: np.ndarray, slp: np.ndarray,
                  Pp: np.ndarray, Dp: np.ndarray) -> np.ndarray:
        """Probe rises (len(s), p) at offsets s inside a segment starting from q0."""
        s = np.atleast_1d(np.asarray(s, dtype=np.float64))[None, :]
        lam = self.lam[:, None]
        Wa = (self.W @ lvl)[:, None]
        Wb = (self.W @ slp)[:, None]
        Q = np.exp(-lam * s) * q0[:, None] + _psi(0, lam, s) * Wa + _psi(1, lam, s) * Wb
        P = lvl[None, :] + s.T * slp[None, :]
        self.n_eval += s.size
        return (Pp @ Q).T + P @ Dp.T

    # -- sampling and peak refinement --------------------------------------------------
    def _fast_tau(self, Pp: np.ndarray) -> float:
        """Fastest time constant with a noticeable share of the probe response."""
        lam = self.lam
        amp = np.abs(Pp).max(axis=0) * np.abs(self.W).max(axis=1) / np.where(lam > 0, lam, np.inf)
        if not np.any(amp > 0):
            return float(1.0 / lam.max()) if lam.max() > 0 else 1.0
        keep = (amp >= 1e-6 * amp.max()) & (lam > 0)
        return float(1.0 / lam[keep].max()) if keep.any() else 1.0

    def _sample(self, q0, edges, level, slope, rows, store_ok: bool = True,
                refine: bool = True, keep: dict | None = None, need_integral: bool = True):
        """Exact samples at every segment end (plus interior log-spaced points and refined
        extremes of every probe).  Returns t, theta (absolute K), q_end, integral; ``keep``
        (a dict) receives the segment (or block) start states and whether all are stored;
        the integral is None unless ``need_integral``."""
        Pp = self.Phi[rows]
        Dp = self.Dp[rows]
        N = edges.size - 1
        store = store_ok and N * self.lam.size <= STORE_LIMIT
        ends, q_end, integral, starts = self._scan(q0, edges, level, slope, Pp, Dp, store,
                                                   need_integral)
        if keep is not None:
            keep.update(starts=starts, store=store)
        direct = bool(np.any(Dp != 0))              # a massless probe: P enters directly
        p0 = (Pp @ q0) + Dp @ level[0] if direct else Pp @ q0
        t_list = [np.array([0.0]), edges[1:]]
        v_list = [p0[None, :], ends]
        # interior log-spaced points down to the fastest relevant time constant
        if store and N * (INTERIOR_POINTS + int(self.options.get("linear_points", 0))) \
                <= SAMPLE_BUDGET:
            # a function of the probes only (the network fixed): kept for the last probe set
            key = rows.tobytes()
            last = getattr(self, "_tau_last", None)
            if last is not None and last[0] == key:
                tau_f = last[1]
            else:
                tau_f = self._fast_tau(Pp)
                self._tau_last = (key, tau_f)
            h = edges[1:] - edges[:-1]
            lo = np.maximum(tau_f / 4.0, h * 1e-6)
            geo = lo < h / 8
            # log-spaced offsets lo .. h (end excluded) or evenly spaced interior points,
            # all segments evaluated in one call
            u = np.arange(INTERIOR_POINTS) / INTERIOR_POINTS
            ne = INTERIOR_POINTS // 2
            if geo.all():                       # the usual case: log-spaced everywhere
                ks = np.repeat(np.arange(N), INTERIOR_POINTS)
                ss = (lo[:, None] * (h / lo)[:, None] ** u[None, :]).ravel()
            else:
                with np.errstate(divide="ignore", invalid="ignore"):
                    sg = lo[:, None] * (h / lo)[:, None] ** u[None, :]
                sl = h[:, None] * (np.arange(1, ne + 1) / (ne + 1))[None, :]
                kg = np.repeat(np.flatnonzero(geo), INTERIOR_POINTS)
                kl = np.repeat(np.flatnonzero(~geo), ne)
                ks = np.concatenate([kg, kl])
                ss = np.concatenate([sg[geo].ravel(), sl[~geo].ravel()])
            L = int(self.options.get("linear_points", 0))
            if L > 0:
                # evenly spaced points as well (for plots on a linear time axis)
                ks = np.concatenate([ks, np.repeat(np.arange(N), L)])
                ss = np.concatenate([ss, (h[:, None] * (np.arange(1, L + 1) / (L + 1))
                                          [None, :]).ravel()])
            if ks.size:
                q, _, _ = self._seg_states(starts[:, ks], ss, level[ks], slope[ks],
                                           q_only=True)
                self.n_eval += ks.size
                t_list.append(edges[ks] + ss)
                v_list.append((Pp @ q).T + (level[ks] + ss[:, None] * slope[ks]) @ Dp.T
                              if direct else (Pp @ q).T)
        # right limits at edges where a massless probe jumps with the power
        if direct:
            jump = np.flatnonzero(np.any((level[1:] - (level[:-1] + slope[:-1] *
                                                         np.diff(edges)[:-1, None])) != 0, axis=1))
            if jump.size:
                k = jump + 1
                qs = np.stack([self._segment_start(int(kk), edges, level, slope, starts, store)
                               for kk in k], axis=1)
                vals = (Pp @ qs).T + level[k] @ Dp.T
                t_list.append(edges[k])
                v_list.append(vals)
        t = np.concatenate(t_list)
        v = np.vstack(v_list)
        order = np.argsort(t, kind="stable")
        t, v = t[order], v[order]
        if refine:
            t, v = self._extremes(t, v, q0, edges, level, slope, starts, store, Pp, Dp,
                                  q_end)
        return t, v + self.T_ref[rows][None, :], q_end, integral

    def _extremes(self, t, v, q0, edges, level, slope, starts, store, Pp, Dp, q_end=None):
        """Refined extremes (:meth:`_refine`), then certified (modal_bounds: no other local
        extreme beats them) when every segment start is stored; t, v rises."""
        t, v = self._refine(t, v, q0, edges, level, slope, starts, store, Pp, Dp)
        if store:
            t, v = certify(self, t, v, edges, level, slope, starts, Pp, Dp,
                           lambda f, a, b, fa, fb, xtol: _bracketed_newton(
                               f, a, b, fa, fb, xtol=xtol), q_end=q_end)
        return t, v

    def _slope_seg(self, q0, s: float, lvl, slp, Pp_j, Dp_j) -> float:
        """dθ/ds of one probe inside a segment: Pp·(−λ q(s) + Wa + Wb s) + Dp·slope."""
        q = self._eval_q(q0, s, lvl, slp)
        dq = -self.lam * q + self.W @ lvl + (self.W @ slp) * s
        return float(Pp_j @ dq + Dp_j @ slp)

    def _eval_q(self, q0, s: float, lvl, slp) -> np.ndarray:
        lam = self.lam
        return (np.exp(-lam * s) * q0 + _psi(0, lam, s) * (self.W @ lvl)
                + _psi(1, lam, s) * (self.W @ slp))

    def _seg_states(self, q0s: np.ndarray, s: np.ndarray, lvl: np.ndarray, slp: np.ndarray,
                    out: np.ndarray | None = None, q_only: bool = False):
        """Modal state and its first two time derivatives inside segments, for many
        (start state, offset) pairs at once: q0s (modes, c), s (c,), lvl/slp (c, m);
        written into ``out`` (3, modes, c) when given; ``q_only``: the derivatives are
        not computed (None).

        q(s) = e^{−λs} q₀ + ψ₀ Wa + ψ₁ Wb,  q' = −λ q + Wa + Wb s,  q'' = −λ q' + Wb.

        Without ramps (every slope 0, pulse trains) only ψ₀ = s·g₀(λs) enters, and
        g₀(x) = −expm1(−x)/x is accurate to about 2 ulp for every x > 0 (1 at x = 0): no
        series, a third of the work."""
        lam = self.lam[:, None]
        if out is None:
            out = np.empty(((1,) if q_only else (3,)) + q0s.shape)
        q = out[0]
        if not slp.any():
            nx = lam * (-s)[None, :]                       # −λs
            e = np.exp(nx)
            g0 = np.divide(np.expm1(nx), nx, out=np.ones_like(nx), where=nx < 0)
            Wa = self.W @ lvl.T
            np.multiply(e, q0s, out=q)
            q += (g0 * s[None, :]) * Wa
            if q_only:
                return q, None, None
            dq, cq = out[1], out[2]
            np.multiply(-lam, q, out=dq)
            dq += Wa
            np.multiply(-lam, dq, out=cq)
            return q, dq, cq
        e, p0, p1 = _phis(lam, s[None, :], 1)
        Wa = self.W @ lvl.T
        Wb = self.W @ slp.T
        np.multiply(e, q0s, out=q)
        q += p0 * Wa
        q += p1 * Wb
        if q_only:
            return q, None, None
        dq, cq = out[1], out[2]
        np.multiply(-lam, q, out=dq)
        dq += Wa
        dq += Wb * s[None, :]
        np.multiply(-lam, dq, out=cq)
        cq += Wb
        return q, dq, cq

    def _refine(self, t, v, q0, edges, level, slope, starts, store, Pp, Dp, top: int = 2):
        """Locate each probe's maximum and minimum exactly in the segments around its best
        samples: where the closed-form slope changes sign inside a bracket of neighbouring
        samples, its root is the extreme; it is added as a sample for every probe.

        The roots of all brackets (every probe, maximum and minimum) are found together by
        a safeguarded Newton iteration on the closed-form slope dθ/ds = Pp·q'(s) + Dp·b with
        its exact derivative Pp·q''(s) (:func:`_bracketed_newton`)."""
        N = edges.size - 1
        cache: dict[int, np.ndarray] = {}

        def start(k):
            if k not in cache:
                cache[k] = self._segment_start(k, edges, level, slope, starts, store)
            return cache[k]

        kk_a = np.minimum(np.maximum(np.searchsorted(edges, t, side="right") - 1, 0), N - 1)
        at_edge = ((t == edges[kk_a]) & (kk_a > 0)).tolist()
        kk = kk_a.tolist()
        tl = t.tolist()
        el = edges.tolist()
        nt = len(tl)
        # the best 4·top samples of every probe, highest first (maximum) and lowest first
        ordr = np.argsort(v, axis=0, kind="stable")
        best = {1.0: ordr[::-1][:4 * top].T.tolist(), -1.0: ordr[:4 * top].T.tolist()}
        cand_j, cand_sign, cand_k, cand_a, cand_b = [], [], [], [], []
        for j in range(v.shape[1]):
            for sign in (1.0, -1.0):
                seen = set()
                for i in best[sign][j]:
                    lo_i, hi_i = max(i - 1, 0), min(i + 1, nt - 1)
                    segs = set()
                    for ii in (lo_i, i, hi_i):
                        k = kk[ii]
                        segs.add(k)
                        if at_edge[ii]:
                            segs.add(k - 1)
                    segs -= seen
                    for k in sorted(segs):
                        seen.add(k)
                        a = max(tl[lo_i], el[k]) - el[k]
                        b = min(tl[hi_i], el[k + 1]) - el[k]
                        if b <= a:
                            a, b = 0.0, el[k + 1] - el[k]
                        cand_j.append(j)
                        cand_sign.append(sign)
                        cand_k.append(k)
                        cand_a.append(a)
                        cand_b.append(b)
                    if len(seen) >= min(2 * top, N):   # no further segment to add
                        break
        if not cand_k:
            return t, v
        cj = np.array(cand_j)
        sg = np.array(cand_sign)
        ck = np.array(cand_k)
        q0s = starts[:, ck] if store else np.stack([start(int(k)) for k in ck], axis=1)
        lv, sl = level[ck], slope[ck]
        Pj = Pp[cj].T * sg[None, :]                      # (modes, c), sign applied
        lam = self.lam[:, None]
        Wb = self.W @ sl.T
        # the slope dθ/ds = Pj·q'(s) + Dj·b with q'(s) = e^{−λs} q'(0) + ψ₀(λ, s) Wb and
        # q'(0) = −λ q₀ + Wa (q' obeys the same modal equation with forcing Wb); its
        # derivative is Pj·q''(s), q'' = −λ q' + Wb.  ψ₀ = s·(−expm1(−λs)/(λs)) is accurate
        # for every λs > 0 (1 at λs = 0), so no series is needed here.
        A = Pj * (-lam * q0s + self.W @ lv.T)
        Bw = Pj * Wb
        ramps = bool(sl.any()) and bool(np.any(Bw != 0))
        direct = sg * np.sum(Dp[cj] * sl, axis=1) if Dp.any() else np.zeros(ck.size)
        c2 = Bw.sum(axis=0)

        def fp(sel, s):
            x = lam * s[None, :]
            term = A[:, sel] * np.exp(-x)                 # Pj·q'(s) per mode
            if ramps:
                with np.errstate(divide="ignore", invalid="ignore"):
                    g0 = np.where(x > 0, -np.expm1(-x) / x, 1.0)
                term = term + Bw[:, sel] * (s[None, :] * g0)
            return term.sum(axis=0) + direct[sel], c2[sel] - (lam * term).sum(axis=0)

        a = np.array(cand_a)
        b = np.array(cand_b)
        allc = np.arange(ck.size)
        fa, da = fp(allc, a)
        fb, db = fp(allc, b)
        ok = np.flatnonzero((fa > 0) & (fb < 0))
        if ok.size == 0:
            return t, v
        xtol = np.maximum((b[ok] - a[ok]) * 1e-14, 1e-300)
        if A.shape[0] * ok.size <= _SCALAR_LIMIT:
            # few modes and roots: the same iteration on plain floats
            lam_l = self.lam.tolist()
            s_star = np.empty(ok.size)
            for r, c in enumerate(ok.tolist()):
                Ac, Bc = A[:, c].tolist(), Bw[:, c].tolist()
                d0, cc2 = float(direct[c]), float(c2[c])
                terms = list(zip(lam_l, Ac, Bc))

                def f1(x, terms=terms, d0=d0, cc2=cc2):
                    tot = d0
                    dtot = cc2
                    mag = abs(d0)
                    for lm, ai, bi in terms:
                        y = lm * x
                        tm = ai * math.exp(-y)
                        if bi != 0.0:
                            tm += bi * (x * (-math.expm1(-y) / y if y > 0 else 1.0))
                        tot += tm
                        dtot -= lm * tm
                        mag += abs(tm)
                    # rounding of the sum: at most (terms + 1) ulp of the magnitudes
                    return tot, dtot, (len(terms) + 1) * _EPS * mag
                ac, bc, fac, fbc = float(a[c]), float(b[c]), float(fa[c]), float(fb[c])
                s_star[r] = _rtsafe(f1, ac, bc, fac, fbc, float(xtol[r]), noise=True,
                                    x0=_hermite_root(ac, bc, fac, fbc, float(da[c]),
                                                     float(db[c])))
        else:
            s_star = _bracketed_newton(lambda s, idx: fp(ok[idx], s), a[ok], b[ok], fa[ok],
                                       fb[ok], xtol=xtol)
        k_ok = ck[ok]
        q, _, _ = self._seg_states(q0s[:, ok], s_star, lv[ok], sl[ok], q_only=True)
        vv = (Pp @ q).T + (lv[ok] + s_star[:, None] * sl[ok]) @ Dp.T
        self.n_eval += ok.size
        return merge_samples(t, v, edges[k_ok] + s_star, vv)

    # -- periodic steady state --------------------------------------------------------
    def _period_increment(self, edges, level, slope) -> np.ndarray:
        """r = Σ_k e^{−λ(T − t_{k+1})} ρ_k: the end-of-period state from a zero start (ρ_k
        the forced increment of segment k), folded block by block as in :meth:`_scan`."""
        _, nblk, _, _, _, _, _, dec, inc = self._blocks(edges, level, slope)
        if nblk == 1:
            return inc[:, 0].copy()             # = e^{−λT}·0 + increment
        r = np.zeros(self.lam.size)
        for b in range(nblk):
            r = dec[:, b] * r + inc[:, b]
        return r

    def periodic_start(self, edges, level, slope) -> np.ndarray:
        """Start-of-period modal state of the periodic steady state: r/(1 − e^{−λT})."""
        if self.n_float:
            raise ValueError("periodic steady state: the network has parts with no path to "
                             "a boundary (adiabatic); there is none")
        r = self._period_increment(edges, level, slope)
        return r / (-np.expm1(-self.lam * edges[-1]))

    def _mean_power(self, edges, level, slope) -> np.ndarray:
        """Mean power per input over the run, W, (m,)."""
        return segment_energy(edges, level, slope) / edges[-1]

    def periodic(self, edges, level, slope, probes) -> RawResponse:
        """Exact periodic steady state over one period ``edges[-1]``.

        Start q(0) = r/(1 − e^{−λT}) (module docstring), samples and extremes from the
        closed-form segment advance, period mean from G T̄ = Gb T_b + B P̄ (exact).
        edges (N+1,) s, level/slope (N, m) W and W/s, probes (p,) rows; theta (k, p) K.
        """
        edges, level, slope, rows = as_arrays(edges, level, slope, probes)
        q0 = self.periodic_start(edges, level, slope)
        t, theta, q_end, _ = self._sample(q0, edges, level, slope, rows, need_integral=False)
        Pbar = self._mean_power(edges, level, slope)
        # Exact period mean: averaging C dT/dt + G T = Gb T_b + B P over a period (the
        # state returns to its start) gives G T̄ = Gb T_b + B P̄, i.e. the modal integral
        # q̄ = W P̄/λ; solved directly (sparse LU), which is more accurate than summing modes.
        mean_full = static_field(self.system, Pbar)
        start = self.state(q0, level[0])
        # the state propagated through the period (not a copy of the start): the energy
        # balance of the response then checks the periodicity q(T) = q(0) as well
        end = self.state(q_end, level[-1] + slope[-1] * (edges[-1] - edges[-2]))
        info = {"method": "modal", "modes": int(self.lam.size), "segments": int(edges.size - 1),
                "mean_full": mean_full, "evaluations": self.n_eval, "q_start": q0,
                "tau_min": float(1.0 / self.lam.max()) if self.lam.max() > 0 else math.inf,
                "tau_max": float(1.0 / self.lam.min()) if self.lam.min() > 0 else math.inf}
        return RawResponse(t, theta, start, end, mean_full[rows], info)

    # -- transients -------------------------------------------------------------------
    def transient(self, edges, level, slope, initial, probes) -> RawResponse:
        """Exact transient over ``edges[-1]`` from ``initial`` (n,) K (None: the static
        field); mean = T_ref + Φ·(∫q dt)/t_end + D·P̄ with ∫q from ψ₀, ψ₁, ψ₂ per segment
        (module docstring).  Shapes as in :meth:`periodic`."""
        edges, level, slope, rows = as_arrays(edges, level, slope, probes)
        q0 = self.q_from_state(initial)
        t, theta, q_end, integral = self._sample(q0, edges, level, slope, rows)
        dur = edges[-1]
        Pbar = self._mean_power(edges, level, slope)
        mean_full = self.T_ref + self.Phi @ (integral / dur) + self.Dp @ Pbar
        p_end = level[-1] + slope[-1] * (edges[-1] - edges[-2])
        info = {"method": "modal", "modes": int(self.lam.size), "segments": int(edges.size - 1),
                "mean_full": mean_full, "evaluations": self.n_eval}
        return RawResponse(t, theta, self.state(q0, level[0]), self.state(q_end, p_end),
                           mean_full[rows], info)

    def transient_periods(self, edges, level, slope, initial, probes, periods: int,
                          detail: int = 24) -> RawResponse:
        """``periods`` identical periods from ``initial``, jumping whole periods exactly.

        With E = e^{−λT} and r the period increment, the start of period n is
        q_n = Eⁿ q_0 + (1 − Eⁿ)/(1 − E)·r.  Only a selection of periods is sampled in detail
        (the first ones, log-spaced ones, the last, and the one where each probe's
        departure from the periodic state is largest); means are exact over all periods.
        """
        edges, level, slope, rows = as_arrays(edges, level, slope, probes)
        Nper = int(periods)
        T = edges[-1]
        y = self.lam * T
        one_m_E = -np.expm1(-y)
        q0 = self.q_from_state(initial)
        # one period from a zero start: its samples z(t) (absolute K), its end state r (the
        # period increment) and its integral j0.  From any start q_n the samples are
        # z(t) + Pp·(e^{−λt} ⊙ q_n): the interior offsets repeat, only that product changes
        kept: dict = {}
        t1, v1, r, j0 = self._sample(np.zeros_like(q0), edges, level, slope, rows,
                                     refine=False, keep=kept)
        Pp = self.Phi[rows]
        Dp = self.Dp[rows]
        Tr = self.T_ref[rows][None, :]
        # segment (or block) start times of the stored zero-start states
        N = edges.size - 1
        t_st = edges[:-1] if kept["store"] else \
            edges[np.arange(kept["starts"].shape[1]) * max(1, int(math.ceil(math.sqrt(N))))]
        H_st = np.exp(-np.multiply.outer(self.lam, t_st))     # (modes, starts)

        def S(nn):
            """(1 − Eⁿ)/(1 − E), λ = 0 limit n."""
            nn = np.asarray(nn, dtype=np.float64)
            with np.errstate(invalid="ignore", divide="ignore"):
                val = -np.expm1(-np.multiply.outer(nn, y)) / np.where(one_m_E > 0, one_m_E, 1.0)
            return np.where(one_m_E > 0, val, nn[..., None] * np.ones_like(y))

        def q_at(nn):
            # e^{−nλT} directly: powers of tiny E (fast modes) crawl through subnormals
            return np.exp(-nn * y) * q0 + S(nn) * r

        # which periods to sample
        sel = set(range(min(Nper, 4))) | {Nper - 1}
        if Nper > 4:
            sel |= set(np.unique(np.geomspace(4, Nper - 1, detail).astype(int)).tolist())
        # period where each probe's departure from the first-sampled pattern is extreme:
        # departure at phase 0 of period n is Σ_i Φ_pi Eⁿ_i (q0 − q_ps)_i (0 for λ=0 modes)
        if Nper > 4 and self.n_float == 0:
            q_ps = r / one_m_E
            dq = q0 - q_ps
            nn = np.unique(np.geomspace(1, Nper - 1, 400).astype(int))
            dev = (self.Phi[rows] * dq[None, :]) @ np.exp(-np.multiply.outer(y, nn))
            for j in range(rows.size):
                sel.add(int(nn[np.argmax(dev[j])]))
                sel.add(int(nn[np.argmin(dev[j])]))
        sel = sorted(s for s in sel if 0 <= s < Nper)
        sel_f = np.asarray(sel, dtype=np.float64)
        Qsel = np.exp(-np.multiply.outer(sel_f, y)) * q0 + S(sel_f) * r   # (periods, modes)
        vals = np.empty((len(sel), t1.size, rows.size))        # (periods, samples, p)
        cs = max(1, 1_000_000 // max(self.lam.size, 1))        # e^{−λt} rows per block
        for i in range(0, t1.size, cs):
            H = np.exp(-np.multiply.outer(t1[i:i + cs], self.lam))
            for j in range(rows.size):
                vals[:, i:i + cs, j] = v1[i:i + cs, j][None, :] + (Qsel * Pp[j]) @ H.T
        ts, vs = {}, {}
        for i, n in enumerate(sel):
            ts[n], vs[n] = t1 + n * T, vals[i]
        # refine the extremes only in the periods holding each probe's best samples
        best = set()
        for j in range(rows.size):
            best.add(sel[int(np.argmax(vals[:, :, j].max(axis=1)))])
            best.add(sel[int(np.argmin(vals[:, :, j].min(axis=1)))])
        for n in best:
            # the same samples and start states, shifted by the decaying start q_n
            qn = q_at(n)
            starts_n = kept["starts"] + H_st * qn[:, None]
            t, th = self._extremes(t1, vs[n] - Tr, qn, edges, level, slope, starts_n,
                                   kept["store"], Pp, Dp, q_at(n + 1))
            ts[n], vs[n] = t + n * T, th + Tr
        ts = [ts[n] for n in sel]
        vs = [vs[n] for n in sel]
        # exact integral over all periods: ∫_period q = J q_n + j0, J = ψ₀(λ, T)
        J = _psi(0, self.lam, T)
        sumE = S(Nper)                                  # Σ_{n<N} Eⁿ
        sumS = self._sum_S(Nper, y, one_m_E)            # Σ_{n<N} (1 − Eⁿ)/(1 − E)
        integral = J * (sumE * q0 + sumS * r) + Nper * j0
        dur = Nper * T
        Pbar = self._mean_power(edges, level, slope)
        mean_full = self.T_ref + self.Phi @ (integral / dur) + self.Dp @ Pbar
        q_end = q_at(Nper)
        p_end = level[-1] + slope[-1] * (edges[-1] - edges[-2])
        t = np.concatenate(ts)
        th = np.vstack(vs)
        # drop repeated samples (a period's end = the next one's start) but keep the right
        # limits of massless probes at power jumps (same time, another value)
        keep = (np.concatenate([[True], (np.diff(t) > 0) | np.any(np.diff(th, axis=0) != 0,
                                                                   axis=1)])
                if t.size else np.ones(0, bool))
        info = {"method": "modal", "modes": int(self.lam.size), "segments": int(edges.size - 1),
                "periods": Nper, "periods_sampled": len(sel), "mean_full": mean_full,
                "evaluations": self.n_eval}
        return RawResponse(t[keep], th[keep], self.state(q0, level[0]),
                           self.state(q_end, p_end), mean_full[rows], info)

    @staticmethod
    def _sum_S(N: int, y: np.ndarray, one_m_E: np.ndarray) -> np.ndarray:
        """Σ_{n=0}^{N−1} (1 − e^{−ny})/(1 − e^{−y}) = (N − S_N)/(1 − e^{−y}), S_N = Σ e^{−ny};
        two-term series in y when N·y < 1e-5 (avoids cancellation), N(N−1)/2 at y = 0."""
        out = np.empty_like(y)
        small = N * y < 1e-5
        ys = y[small]
        # Σ_{k=0}^{N-2} (N−1−k) e^{−ky} ≈ Σ (N−1−k)(1 − ky + k²y²/2)
        s0 = N * (N - 1) / 2.0                          # Σ (N−1−k)
        s1 = (N - 2) * (N - 1) * N / 6.0                # Σ (N−1−k)·k
        s2 = (N - 1) ** 2 * (N - 2) * N / 12.0        # Σ (N−1−k)·k²
        out[small] = s0 - ys * s1 + 0.5 * ys * ys * s2
        big = ~small
        yb = y[big]
        SN = -np.expm1(-N * yb) / one_m_E[big]
        out[big] = (N - SN) / one_m_E[big]
        return out

    # -- impedances -------------------------------------------------------------------
    def residues(self, row: int, col: int) -> tuple[np.ndarray, float]:
        """Step-response residues r_i (K/W) at free-node row for input column, and the
        direct (instantaneous) part: Z(t) = D + Σ r_i (1 − e^{−λ_i t}).

        With C-normalised modes the response to a unit step is
        T − T_ref = Σ_i Φ_{row,i} w_i (1 − e^{−λ_i t})/λ_i + D,  w = Vᵀ B[:, col]
        (Carslaw & Jaeger 1959, expansion in normal modes)."""
        if self.n_float:
            raise ValueError("thermal impedance: the network has parts with no path to a "
                             "boundary (adiabatic); Zth grows without bound")
        r = self.Phi[row] * self.W[:, col] / self.lam
        return r, float(self.Dp[row, col])

    def zth(self, row: int, col: int, t: np.ndarray) -> np.ndarray:
        """Step response Zth(t), K/W (t in s, ≥ 0)."""
        r, d = self.residues(row, col)
        t = np.asarray(t, dtype=np.float64)
        z = (-np.expm1(-np.multiply.outer(t, self.lam))) @ r
        return z + np.where(t > 0, d, 0.0)

    def warmup_crossing(self, edges, level, slope, row: int, target_rise: float,
                        phase_t: np.ndarray, phase_v: np.ndarray, initial=None,
                        q_ps: np.ndarray | None = None) -> float:
        """First time (s) at which the probe's rise over the static field reaches
        ``target_rise`` when the periodic drive starts from ``initial`` (None: ambient).

        From the start state the response is the periodic one plus a decaying part,
        θ(t) = θ_ps(t mod T) + Σ_i a_i e^{−λ_i t},  a_i = Φ_i (q0 − q_ps)_i,
        so whole periods are jumped: at the sample phases s_j of period n the decaying part
        is Σ_i a_i e^{−λ_i s_j}·(e^{−λ_i T})ⁿ, one matrix product for many n at once.  The
        first period with a sample over the target is found by a vectorised search over n
        (doubling, then 256-point grids; the rise per phase grows monotonically with n for
        non-negative power from ambient: the system is positive, its matrix exponential has
        no negative entries), then the crossing time by a safeguarded Newton iteration on
        the closed form, whose time derivative is exact too.
        ``phase_t``/``phase_v`` are the periodic samples (times in [0, T], rises in K);
        ``q_ps`` the periodic start state when already known.
        """
        T = float(edges[-1])
        if q_ps is None:
            q_ps = self.periodic_start(edges, level, slope)
        dq = self.q_from_state(initial) - q_ps
        a = self.Phi[row] * dq                        # decaying amplitudes
        lam = self.lam
        phase_t = np.asarray(phase_t, dtype=np.float64)
        phase_v = np.asarray(phase_v, dtype=np.float64)
        M = np.exp(-np.multiply.outer(phase_t, lam)) * a[None, :]   # (phases, modes)

        def first_over(nn: np.ndarray) -> np.ndarray:
            """Whether period n (float array) has a sample at or over the target."""
            decay = np.exp(-np.multiply.outer(lam * T, nn))          # (modes, len(nn))
            return np.max(phase_v[:, None] + M @ decay, axis=0) >= target_rise

        # period 0 and the powers of two 1 .. 2^60 in one product
        pw = np.concatenate([[0.0], 2.0 ** np.arange(61)])
        over = first_over(pw)
        if over[0]:
            n = 0
        else:
            hit = np.flatnonzero(over)
            if hit.size == 0:
                return math.inf
            hi = int(pw[hit[0]])
            lo = int(pw[hit[0] - 1])
            # invariant: period lo is below the target, period hi reaches it
            while hi - lo > 1:
                if hi - lo + 1 <= 258:
                    inner = np.arange(lo + 1, hi, dtype=np.int64)
                else:   # 256 interior points, spacing > 1 so strictly increasing
                    inner = np.linspace(lo, hi, 258)[1:-1].astype(np.int64)
                ok = first_over(inner.astype(np.float64))
                over = np.flatnonzero(ok)
                if over.size:
                    hi = int(inner[over[0]])
                    lo = int(inner[over[0] - 1]) if over[0] > 0 else lo
                else:
                    lo = int(inner[-1])
            n = hi
        vals = phase_v + M @ np.exp(-lam * T * n)
        i = int(np.flatnonzero(vals >= target_rise)[0])
        if i == 0 and n == 0:
            return 0.0
        if i == 0:
            ta, tb = (n - 1) * T + phase_t[-1], n * T + phase_t[0]
        else:
            ta, tb = n * T + phase_t[i - 1], n * T + phase_t[i]
        if tb <= ta:
            return float(tb)
        # the periodic part in closed form inside the segment holding the bracket
        mid = 0.5 * (ta + tb)
        ph_mid = mid - math.floor(mid / T) * T
        k = int(np.clip(np.searchsorted(edges, ph_mid, side="right") - 1, 0, edges.size - 2))
        t_k = math.floor(mid / T) * T + edges[k]      # absolute start of that segment
        if k <= 16:
            q_k = q_ps.copy()
            for kk in range(k):
                Wa, Wb = self._forcing(level[kk:kk + 1], slope[kk:kk + 1])
                q_k = self._advance(q_k[:, None], edges[kk + 1] - edges[kk], Wa, Wb)[:, 0]
            q_k = q_k[:, None]
        else:
            q_k = self._start_of(q_ps, k, edges, level, slope)[:, None]
        lv, sl = level[k:k + 1], slope[k:k + 1]
        P_row, D_row = self.Phi[row], self.Dp[row]
        d_dir = float(D_row @ level[k]), float(D_row @ slope[k])

        def theta(tt):
            tt = np.atleast_1d(tt)
            s = tt - t_k
            q, dq, _ = self._seg_states(np.repeat(q_k, tt.size, axis=1), s,
                                        np.repeat(lv, tt.size, axis=0),
                                        np.repeat(sl, tt.size, axis=0))
            ed = np.exp(-np.multiply.outer(tt, lam)) * a[None, :]
            f = P_row @ q + d_dir[0] + d_dir[1] * s + ed.sum(axis=1) - target_rise
            df = P_row @ dq + d_dir[1] - ed @ lam
            return f, df

        if np.any(self.Dp[row] != 0) or i == 0:
            fa, _ = theta(ta)
            fb, _ = theta(tb)
        else:
            # the samples are exact closed-form values of θ (no jumps at a massive node)
            fa = np.array([vals[i - 1] - target_rise])
            fb = np.array([vals[i] - target_rise])
        if fa[0] >= 0:
            return float(ta)
        if fb[0] < 0:
            return float(tb)
        # root of −θ + target (positive at ta, negative at tb)
        def g(x):
            f, df = theta(x)
            return -float(f[0]), -float(df[0])

        return float(_rtsafe(g, float(ta), float(tb), -float(fa[0]), -float(fb[0]),
                             xtol=1e-15 * max(tb, 1e-300)))

    def _start_of(self, q: np.ndarray, k: int, edges, level, slope) -> np.ndarray:
        """State at the start of segment k from the period-start state q (vectorised
        through the blocked scan machinery when k is large)."""
        if k == 0:
            return q
        _, q_k, _, _ = self._scan(q, edges[:k + 1], level[:k], slope[:k],
                                  self.Phi[:1], self.Dp[:1], False, False)
        return q_k
