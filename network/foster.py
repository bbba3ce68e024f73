"""Foster and Cauer thermal RC networks, the exact conversion between them, and Foster fits.

A **Foster** network is a sum of first-order terms: the driving-point (or transfer) thermal
impedance of any linear RC network,

    Zth(t) = Σ_i R_i·(1 − e^{−t/τ_i}),   Z(s) = Σ_i R_i / (1 + s·τ_i).

Its inner nodes are not temperatures, so it cannot be chained to another network.  A
**Cauer** ladder (series R_k, shunt C_k to thermal ground, stage 1 at the junction, the last
R to the reference) has the same Z(s) and *can* be chained.

Conversions (both exact up to rounding):

* Cauer → Foster: eigen-decomposition of the ladder's symmetric tridiagonal system, done as
  a singular value decomposition of its bidiagonal factor (high relative accuracy).
* Foster → Cauer: Lanczos (Stieltjes) tridiagonalisation, in its Golub–Kahan bidiagonal form
  so that every ladder element is a product or a ratio of computed norms (no subtraction).

Units: R in K/W, C in J/K, τ in s, t in s, P in W; temperature rises in K.

References
----------
G. H. Golub and G. Meurant, *Matrices, Moments and Quadrature with Applications*,
Princeton University Press, 2010 (Lanczos / Stieltjes; Golub–Kahan bidiagonalisation).
JEDEC JESD51-14, 2010 (Foster and Cauer models of a thermal impedance curve).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
import scipy.linalg as sla

__all__ = ["Foster", "Cauer", "FosterError", "FosterFit", "fit_foster"]

#: Negative driving-point terms down to -this·Σ|R| are rounding and are set to zero.
NEGATIVE_R_RTOL = 1e-12
#: Two Foster time constants closer than this (relative) are one term for the Cauer conversion.
TAU_MERGE_RTOL = 1e-9


class FosterError(ValueError):
    """Bad Foster/Cauer input; the message names the field, the value and what is expected."""


def _vector(name: str, values, n: int | None = None) -> np.ndarray:
    arr = np.array(values, dtype=np.float64, ndmin=1, copy=True)
    if arr.ndim != 1:
        raise FosterError(f"{name}: expected a 1-D sequence, got shape {arr.shape}")
    if arr.size == 0:
        raise FosterError(f"{name}: expected at least one value, got an empty sequence")
    if n is not None and arr.size != n:
        raise FosterError(f"{name}: expected {n} values (one per term), got {arr.size}")
    bad = ~np.isfinite(arr)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise FosterError(f"{name}[{i}] = {arr[i]!r}: expected a finite number")
    return arr


def _times(t) -> np.ndarray:
    arr = np.asarray(t, dtype=np.float64)
    bad = ~np.isfinite(arr) | (arr < 0.0)
    if bad.any():
        v = arr[bad].ravel()[0]
        raise FosterError(f"t = {v!r}: expected finite times >= 0 s")
    return arr


def _positive(name: str, x) -> float:
    v = float(x)
    if not (np.isfinite(v) and v > 0.0):
        raise FosterError(f"{name} = {x!r}: expected a finite value > 0")
    return v


# --------------------------------------------------------------------------------------
# Foster
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Foster:
    """Foster network Zth(t) = Σ R_i·(1 − e^{−t/τ_i}), terms sorted by τ.

    Parameters
    ----------
    R
        Term resistances, K/W, shape (n,).  Must be >= 0 unless ``transfer`` is true
        (terms in [−1e-12·Σ|R|, 0) are taken as rounding and set to 0).
    tau
        Time constants, s, shape (n,), > 0.
    transfer
        True for a *transfer* impedance (temperature at one node per watt at another):
        its terms may be negative.  Such a network has no Cauer equivalent.

    Notes
    -----
    Terms are sorted by increasing τ at construction (R follows).  Arrays are read-only.
    """

    R: np.ndarray
    tau: np.ndarray
    transfer: bool = False

    def __post_init__(self) -> None:
        tau = _vector("tau", self.tau)
        R = _vector("R", self.R, tau.size)
        if (tau <= 0.0).any():
            i = int(np.flatnonzero(tau <= 0.0)[0])
            raise FosterError(f"tau[{i}] = {tau[i]!r}: expected a time constant > 0 s")
        if not self.transfer:
            # rounding from a modal decomposition may leave -1e-17-sized terms: those are zero
            R[(R < 0.0) & (R >= -NEGATIVE_R_RTOL * np.abs(R).sum())] = 0.0
        if not self.transfer and (R < 0.0).any():
            i = int(np.flatnonzero(R < 0.0)[0])
            raise FosterError(f"R[{i}] = {R[i]!r}: expected >= 0 K/W for a driving-point "
                              "impedance (pass transfer=True for a transfer impedance)")
        order = np.argsort(tau, kind="stable")
        R, tau = R[order], tau[order]
        R.setflags(write=False)
        tau.setflags(write=False)
        object.__setattr__(self, "R", R)
        object.__setattr__(self, "tau", tau)
        object.__setattr__(self, "transfer", bool(self.transfer))

    # -- derived ------------------------------------------------------------------------
    @property
    def n(self) -> int:
        """Number of terms."""
        return self.R.size

    @property
    def C(self) -> np.ndarray:
        """Term capacities C_i = τ_i / R_i, J/K (inf where R_i = 0)."""
        with np.errstate(divide="ignore"):
            return self.tau / self.R

    @property
    def R_total(self) -> float:
        """Steady-state thermal resistance Σ R_i, K/W."""
        return float(self.R.sum())

    def __len__(self) -> int:
        return self.n

    def __repr__(self) -> str:
        return (f"Foster(n={self.n}, R_total={self.R_total:.6g} K/W, "
                f"tau={self.tau.min():.3g}..{self.tau.max():.3g} s"
                f"{', transfer' if self.transfer else ''})")

    # -- responses ----------------------------------------------------------------------
    def zth(self, t) -> np.ndarray:
        """Step response Zth(t) = Σ R_i·(1 − e^{−t/τ_i}), K/W, same shape as ``t`` (s, >= 0)."""
        t = _times(t)
        return -np.expm1(-t[..., None] / self.tau) @ self.R

    def impedance(self, s) -> np.ndarray:
        """Laplace-domain impedance Z(s) = Σ R_i / (1 + s·τ_i), K/W (s in 1/s, may be complex)."""
        s = np.asarray(s)
        return (1.0 / (1.0 + s[..., None] * self.tau)) @ self.R

    def _pulse_factors(self, width, period):
        width = np.asarray(width, dtype=np.float64)
        period = np.asarray(period, dtype=np.float64)
        if (~np.isfinite(width) | (width <= 0.0)).any():
            raise FosterError(f"width = {width!r}: expected pulse widths > 0 s")
        if (~np.isfinite(period) | (period < width)).any():
            raise FosterError(f"period = {period!r}: expected finite periods >= width {width!r} s")
        w = width[..., None] / self.tau
        T = period[..., None] / self.tau
        # 1 − e^{−x} written with expm1 so that t_p, T ≪ τ keep full precision
        rise = -np.expm1(-w)
        den = -np.expm1(-T)
        return rise, den, T - w

    def periodic_peak(self, P, width, period) -> np.ndarray:
        """Exact peak rise of the periodic steady state under a rectangular pulse train, K.

        ΔT_pk = P·Σ R_i (1 − e^{−t_p/τ_i}) / (1 − e^{−T/τ_i})  (end of each pulse).
        ``P`` (W), ``width`` t_p (s) and ``period`` T (s) broadcast together.

        References: superposition of the Foster step responses (physics brief §5); see e.g.
        Carslaw & Jaeger, *Conduction of Heat in Solids*, 2nd ed., 1959, for the method.
        """
        rise, den, _ = self._pulse_factors(width, period)
        return np.asarray(P, dtype=np.float64) * ((rise / den) @ self.R)

    def periodic_min(self, P, width, period) -> np.ndarray:
        """Exact minimum rise of the periodic steady state (start of each pulse), K.

        ΔT_min = P·Σ R_i (1 − e^{−t_p/τ_i})·e^{−(T − t_p)/τ_i} / (1 − e^{−T/τ_i}).
        """
        rise, den, off = self._pulse_factors(width, period)
        return np.asarray(P, dtype=np.float64) * ((rise * np.exp(-off) / den) @ self.R)

    def periodic_mean(self, P, width, period) -> np.ndarray:
        """Time-average rise of the periodic steady state, K: P·(t_p/T)·Σ R_i."""
        self._pulse_factors(width, period)
        return (np.asarray(P, dtype=np.float64) * np.asarray(width, dtype=np.float64)
                / np.asarray(period, dtype=np.float64) * self.R_total)

    # -- simplification -----------------------------------------------------------------
    def pruned(self, rel_tol: float = 1e-6, merge_ratio: float = 1.0) -> "Foster":
        """A smaller Foster network with the same total resistance.

        Parameters
        ----------
        rel_tol
            Terms with |R_i| < rel_tol·Σ|R| are folded into their neighbour nearest in log τ.
        merge_ratio
            Adjacent terms with τ_{i+1}/τ_i < merge_ratio are merged into one term
            (R summed, τ the R-weighted geometric mean).  1.0 merges only equal τ.

        Notes
        -----
        Both operations keep ΣR (the steady state) exactly and the area Σ R_i·τ_i (the
        integral of the step response's deficit) approximately.
        """
        if not (np.isfinite(rel_tol) and rel_tol >= 0.0):
            raise FosterError(f"rel_tol = {rel_tol!r}: expected a finite value >= 0")
        if not (np.isfinite(merge_ratio) and merge_ratio >= 1.0):
            raise FosterError(f"merge_ratio = {merge_ratio!r}: expected a finite value >= 1")
        R = list(self.R)
        lt = list(np.log(self.tau))
        # merge adjacent groups closer than merge_ratio (and exact duplicates)
        lim = np.log(merge_ratio)
        i = 0
        while i < len(R) - 1:
            if lt[i + 1] - lt[i] <= lim:
                R[i], lt[i] = _merge_terms(R[i], lt[i], R[i + 1], lt[i + 1])
                del R[i + 1], lt[i + 1]
            else:
                i += 1
        # fold small terms into the nearest neighbour (in log τ), smallest first
        scale = float(np.sum(np.abs(R)))
        while len(R) > 1:
            a = np.abs(R)
            j = int(np.argmin(a))
            if a[j] >= rel_tol * scale:
                break
            if j == 0:
                k = 1
            elif j == len(R) - 1:
                k = j - 1
            else:
                k = j - 1 if lt[j] - lt[j - 1] <= lt[j + 1] - lt[j] else j + 1
            R[k] += R[j]
            del R[j], lt[j]
        return Foster(np.array(R), np.exp(lt), transfer=self.transfer)

    # -- conversion ---------------------------------------------------------------------
    def to_cauer(self) -> "Cauer":
        """Equivalent Cauer ladder (same Z(s)), by Lanczos tridiagonalisation.

        Method.  The Foster network is the system C·u′ + G·u = P·1 with C = diag(C_i),
        G = diag(1/R_i), junction temperature 1ᵀu.  With A = diag(1/τ_i) and v_i = 1/√C_i,
        Z(s) = vᵀ(sI + A)⁻¹v.  Lanczos from v/‖v‖ gives the Jacobi matrix J (entries α_k,
        β_k) with Z(s) = ‖v‖²·e₁ᵀ(sI + J)⁻¹e₁.  The ladder has Z(s) = (1/C₁)·e₁ᵀ(sI + S)⁻¹e₁
        with S = C^{−1/2}·G_ladder·C^{−1/2} = BᵀB, B upper bidiagonal,
        B_kk = √(g_k/C_k), B_k,k+1 = −√(g_k/C_{k+1}), g_k = 1/R_k.  Hence

            C₁ = 1/Σ(1/C_i),  g_k = B_kk²·C_k,  C_{k+1} = g_k / B_k,k+1²,

        which is the same recursion as 1/R₁ = α₁C₁, C_{k+1} = (1/R_k)²/(β_k²C_k),
        1/R_{k+1} = α_{k+1}C_{k+1} − 1/R_k, but without its cancellation: B is built
        directly by Golub–Kahan bidiagonalisation of diag(1/√τ_i) started from v/‖v‖
        (JᵀJ-free, full re-orthogonalisation), so each element is a product/ratio of norms.
        The last R closes to thermal ground; ΣR_k = ΣR_i = Z(0).

        Zero-R terms are dropped and equal time constants merged first.

        References: Golub & Meurant, *Matrices, Moments and Quadrature*, 2010, ch. 3-4.
        """
        if self.transfer and (self.R < 0.0).any():
            raise FosterError("R: a transfer impedance with negative terms has no Cauer "
                              "ladder (only a driving-point impedance, all R >= 0, has one)")
        f = self.pruned(rel_tol=0.0, merge_ratio=1.0 + TAU_MERGE_RTOL)
        keep = f.R > 0.0
        if not keep.any():
            raise FosterError("R: all terms are zero; a Cauer ladder needs some R > 0 K/W")
        R, tau = f.R[keep], f.tau[keep]
        invC = R / tau                       # 1/C_i
        S = invC.sum()                       # ‖v‖² = 1/C₁
        q = np.sqrt(invC / S)                # Lanczos start vector v/‖v‖
        sig = 1.0 / np.sqrt(tau)             # A = diag(sig²)
        gam, dlt = _golub_kahan(sig, q)
        m = gam.size
        Cc = np.empty(m)
        Rc = np.empty(m)
        Cc[0] = 1.0 / S
        for k in range(m):
            g = gam[k] ** 2 * Cc[k]
            Rc[k] = 1.0 / g
            if k + 1 < m:
                Cc[k + 1] = g / dlt[k] ** 2
        return Cauer(Rc, Cc)


def _merge_terms(r1: float, lt1: float, r2: float, lt2: float) -> tuple[float, float]:
    r = r1 + r2
    w = abs(r1) + abs(r2)
    lt = (abs(r1) * lt1 + abs(r2) * lt2) / w if w > 0 else 0.5 * (lt1 + lt2)
    return r, lt


def _golub_kahan(sig: np.ndarray, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Golub–Kahan bidiagonalisation of diag(sig) started from unit vector q.

    Finds orthonormal V (v₁ = q), P and upper bidiagonal B (diagonal γ, super-diagonal δ)
    with diag(sig)·V = P·B, hence BᵀB = Vᵀ·diag(sig²)·V is the Lanczos (Jacobi) matrix of
    diag(sig²) from q.  Full re-orthogonalisation (classical Gram-Schmidt applied twice).
    Stops early if the Krylov space is exhausted (δ negligible).

    Returns γ (m,) and δ (m-1,).
    """
    n = sig.size
    scale = float(sig.max())
    V = np.zeros((n, n))
    Pm = np.zeros((n, n))
    gam = np.zeros(n)
    dlt = np.zeros(max(n - 1, 0))
    V[:, 0] = q
    p = sig * q
    gam[0] = np.linalg.norm(p)
    Pm[:, 0] = p / gam[0]
    m = n
    for k in range(n - 1):
        # δ_k v_{k+1} = Σ p_k − γ_k v_k
        v = sig * Pm[:, k] - gam[k] * V[:, k]
        for _ in range(2):
            v -= V[:, : k + 1] @ (V[:, : k + 1].T @ v)
        d = np.linalg.norm(v)
        if d <= 1e-13 * scale:
            m = k + 1
            break
        dlt[k] = d
        V[:, k + 1] = v / d
        # γ_{k+1} p_{k+1} = Σ v_{k+1} − δ_k p_k
        p = sig * V[:, k + 1] - d * Pm[:, k]
        for _ in range(2):
            p -= Pm[:, : k + 1] @ (Pm[:, : k + 1].T @ p)
        g = np.linalg.norm(p)
        if g <= 1e-13 * scale:
            raise FosterError("tau: the Foster to Cauer conversion broke down (time constants "
                              "too close together or terms too small); prune the network")
        gam[k + 1] = g
        Pm[:, k + 1] = p / g
    return gam[:m], dlt[: m - 1]


# --------------------------------------------------------------------------------------
# Cauer
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Cauer:
    """Cauer ladder: series R_k, shunt C_k to thermal ground; stage 1 is the junction.

    Node k carries C_k; R_k joins node k to node k+1, and the last R joins the last node to
    the reference (heat sink / ambient).  Power enters at node 1.

    Parameters
    ----------
    R
        Series resistances, K/W, shape (n,), > 0.
    C
        Shunt capacities, J/K, shape (n,), > 0.
    """

    R: np.ndarray
    C: np.ndarray

    def __post_init__(self) -> None:
        R = _vector("R", self.R)
        C = _vector("C", self.C, R.size)
        for name, arr, unit in (("R", R, "K/W"), ("C", C, "J/K")):
            if (arr <= 0.0).any():
                i = int(np.flatnonzero(arr <= 0.0)[0])
                raise FosterError(f"{name}[{i}] = {arr[i]!r}: expected > 0 {unit}")
        R.setflags(write=False)
        C.setflags(write=False)
        object.__setattr__(self, "R", R)
        object.__setattr__(self, "C", C)

    @property
    def n(self) -> int:
        return self.R.size

    @property
    def R_total(self) -> float:
        """Steady-state thermal resistance Σ R_k, K/W."""
        return float(self.R.sum())

    @property
    def C_total(self) -> float:
        """Total heat capacity Σ C_k, J/K."""
        return float(self.C.sum())

    def __len__(self) -> int:
        return self.n

    def __repr__(self) -> str:
        return f"Cauer(n={self.n}, R_total={self.R_total:.6g} K/W, C_total={self.C_total:.6g} J/K)"

    def bidiagonal(self) -> tuple[np.ndarray, np.ndarray]:
        """Diagonal (n,) and super-diagonal (n−1,) of B, 1/√s, with BᵀB = C^{−1/2}·G·C^{−1/2}."""
        g = 1.0 / self.R
        return np.sqrt(g / self.C), np.sqrt(g[:-1] / self.C[1:])

    @cached_property
    def _foster(self) -> Foster:
        # G = Lᵀ diag(g) L (L: differences along the ladder, last row to ground), so
        # S = C^{-1/2} G C^{-1/2} = BᵀB.  S = V Λ Vᵀ with Λ = Σ² from the SVD B = U Σ Vᵀ;
        # Z(s) = (1/C₁)·Σ_i V_1i²/(s + λ_i)  =>  τ_i = 1/λ_i, R_i = V_1i²/(C₁·λ_i).
        # The bidiagonal SVD keeps high relative accuracy of the small singular values.
        d, e = self.bidiagonal()
        B = np.diag(d)
        if e.size:
            B -= np.diag(e, 1)
        _, s, vt = sla.svd(B, lapack_driver="gesvd")
        lam = s * s
        w = vt[:, 0] ** 2
        return Foster(w / (self.C[0] * lam), 1.0 / lam)

    def to_foster(self) -> Foster:
        """Equivalent Foster network (exact: eigen-decomposition of the ladder system).

        The ladder obeys C·u′ + G·u = P·e₁ with tridiagonal G; its driving-point impedance is
        Z(s) = e₁ᵀ(sC + G)⁻¹e₁ = Σ_i R_i/(1 + sτ_i), with τ_i = 1/λ_i for the eigenvalues λ_i
        of C^{−1/2}GC^{−1/2} and R_i = τ_i·x_{1i}²/C₁ (x the orthonormal eigenvectors).
        """
        return self._foster

    def zth(self, t) -> np.ndarray:
        """Step response at the junction, K/W, same shape as ``t`` (s, >= 0)."""
        return self._foster.zth(t)

    def impedance(self, s) -> np.ndarray:
        """Laplace-domain driving-point impedance Z(s), K/W."""
        return self._foster.impedance(s)


# --------------------------------------------------------------------------------------
# Fit
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class FosterFit:
    """Result of :func:`fit_foster`.

    Attributes
    ----------
    foster
        The fitted network (all R >= 0).
    rms_rel, max_rel
        RMS and largest relative residual |Z_fit − Z|/Z over the data points.
    success, message
        Whether ``max_rel`` is within the requested tolerance, and a short explanation.
    nfev
        Function evaluations of the final nonlinear refit (0 if none).
    """

    foster: Foster
    rms_rel: float
    max_rel: float
    success: bool
    message: str
    nfev: int = 0
    info: dict = field(default_factory=dict)


def _fit_weights(zth: np.ndarray, weight: str) -> np.ndarray:
    if weight == "relative":
        floor = 1e-3 * float(np.max(np.abs(zth)))
        return 1.0 / np.maximum(np.abs(zth), floor)
    if weight == "absolute":
        return np.full(zth.shape, 1.0 / float(np.max(np.abs(zth))))
    raise FosterError(f"weight = {weight!r}: expected 'relative' or 'absolute'")


def _merge_runs(R: np.ndarray, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Merge each run of consecutive non-zero grid terms into one term (ΣR kept)."""
    nz = R > 0.0
    out_R, out_lt = [], []
    i, n = 0, R.size
    while i < n:
        if not nz[i]:
            i += 1
            continue
        j = i
        while j + 1 < n and nz[j + 1]:
            j += 1
        r = R[i: j + 1]
        out_R.append(r.sum())
        out_lt.append(float(r @ np.log(tau[i: j + 1]) / r.sum()))
        i = j + 1
    return np.array(out_R), np.exp(out_lt)


def _merge_to(R: np.ndarray, tau: np.ndarray, n_terms: int) -> tuple[np.ndarray, np.ndarray]:
    """Merge the two adjacent terms closest in log τ until at most ``n_terms`` remain."""
    R, lt = list(R), list(np.log(tau))
    while len(R) > n_terms:
        k = int(np.argmin(np.diff(lt)))
        R[k], lt[k] = _merge_terms(R[k], lt[k], R[k + 1], lt[k + 1])
        del R[k + 1], lt[k + 1]
    return np.array(R), np.exp(lt)


def fit_foster(t, zth, n_per_decade: int = 6, n_terms: int | None = None,
               tau_range: tuple[float, float] | None = None, weight: str = "relative",
               rtol: float = 5e-3, refit: bool = True) -> FosterFit:
    """Fit a Foster network with non-negative terms to a measured or data-sheet Zth curve.

    Method.  (1) Non-negative least squares for R_j on a fixed grid of time constants,
    log-spaced at ``n_per_decade`` per decade over ``tau_range`` (default: t_min/10 to
    3·t_max), minimising Σ_k w_k²·(Σ_j R_j(1 − e^{−t_k/τ_j}) − Z_k)² with relative weights
    w_k = 1/Z_k.  (2) Each run of adjacent non-zero grid terms is merged into one term
    (R summed, τ the R-weighted geometric mean); if ``n_terms`` is given the closest pairs
    are merged further.  (3) Refit of all R_j and τ_j (log-parametrised, so R_j > 0 stays
    true) by nonlinear least squares.  The better of (1) and (3) within ``rtol`` is returned,
    preferring the smaller network.

    Parameters
    ----------
    t
        Sample times, s, shape (k,), strictly increasing, > 0 (t = 0 points are ignored).
    zth
        Thermal impedance at ``t``, K/W, shape (k,).
    n_per_decade
        Grid density of the NNLS stage.
    n_terms
        Largest number of terms wanted (None: as many as the merged NNLS solution has).
    tau_range
        (τ_min, τ_max) of the grid, s.
    weight
        ``"relative"`` (default, residual / Z) or ``"absolute"``.
    rtol
        Largest relative residual regarded as a successful fit.
    refit
        Run stage (3).

    Returns
    -------
    FosterFit
        Network, residuals (relative to Z at each point, floor 1e-3·max Z), success flag.

    References
    ----------
    C. L. Lawson and R. J. Hanson, *Solving Least Squares Problems*, 1974, ch. 23 (NNLS).
    JEDEC JESD51-14, 2010 (time-constant spectrum of a Zth curve, Foster model).
    """
    t = _vector("t", t)
    z = _vector("zth", zth, t.size)
    if (t < 0.0).any() or (np.diff(t) <= 0.0).any():
        raise FosterError("t: expected strictly increasing sample times >= 0 s")
    keep = t > 0.0
    t, z = t[keep], z[keep]
    if t.size < 2:
        raise FosterError(f"t: expected at least 2 samples at t > 0, got {t.size}")
    if not (z > 0.0).any():
        raise FosterError("zth: expected some positive values (K/W)")
    if int(n_per_decade) < 1:
        raise FosterError(f"n_per_decade = {n_per_decade!r}: expected an integer >= 1")
    if n_terms is not None and int(n_terms) < 1:
        raise FosterError(f"n_terms = {n_terms!r}: expected an integer >= 1 or None")
    if tau_range is None:
        lo, hi = t[0] / 10.0, 3.0 * t[-1]
    else:
        lo, hi = _positive("tau_range[0]", tau_range[0]), _positive("tau_range[1]", tau_range[1])
        if hi <= lo:
            raise FosterError(f"tau_range = {tau_range!r}: expected (tau_min, tau_max), min < max")
    w = _fit_weights(z, weight)
    nd = np.log10(hi / lo)
    grid = np.logspace(np.log10(lo), np.log10(hi), max(int(np.ceil(nd * n_per_decade)) + 1, 2))

    from scipy.optimize import least_squares, nnls   # on use: ~0.1-0.3 s to import

    # (1) NNLS on the grid, columns scaled to unit norm for conditioning
    M = -np.expm1(-t[:, None] / grid) * w[:, None]
    cn = np.linalg.norm(M, axis=0)
    cn[cn == 0.0] = 1.0
    x, _ = nnls(M / cn, z * w, maxiter=50 * grid.size)
    R_grid = x / cn

    def resid(f: Foster) -> np.ndarray:
        return (f.zth(t) - z) * w

    candidates = []
    if (R_grid > 0).any():
        nz = R_grid > 0.0
        f_nnls = Foster(R_grid[nz], grid[nz])
        candidates.append(("nnls", f_nnls))
        # (2) merge runs, then down to n_terms
        Rm, tm = _merge_runs(R_grid, grid)
        if n_terms is not None and Rm.size > n_terms:
            Rm, tm = _merge_to(Rm, tm, int(n_terms))
        f0 = Foster(Rm, tm)
        candidates.append(("merged", f0))
    else:
        raise FosterError("zth: the NNLS fit found no positive term; check the data")
    nfev = 0
    if refit:
        # (3) refit log R, log τ of the merged terms
        p0 = np.concatenate([np.log(f0.R), np.log(f0.tau)])
        m = f0.n

        def fun(p):
            return (-np.expm1(-t[:, None] / np.exp(p[m:])) @ np.exp(p[:m]) - z) * w

        def jac(p):
            R, tau = np.exp(p[:m]), np.exp(p[m:])
            x_ = t[:, None] / tau
            e = np.exp(-x_)
            return np.hstack([-np.expm1(-x_) * R, -e * x_ * R]) * w[:, None]

        sol = least_squares(fun, p0, jac=jac, method="trf", x_scale="jac", max_nfev=200 * (2 * m + 1))
        nfev = int(sol.nfev)
        if np.all(np.isfinite(sol.x)):
            candidates.append(("refit", Foster(np.exp(sol.x[:m]), np.exp(sol.x[m:]))))

    scored = []
    for name, f in candidates:
        r = resid(f)
        scored.append((name, f, float(np.sqrt(np.mean(r * r))), float(np.max(np.abs(r)))))
    ok = [s for s in scored if s[3] <= rtol and (n_terms is None or s[1].n <= n_terms)]
    if ok:
        name, f, rms, mx = min(ok, key=lambda s: (s[1].n, s[3]))
    else:
        pool = [s for s in scored if n_terms is None or s[1].n <= n_terms] or scored
        name, f, rms, mx = min(pool, key=lambda s: s[3])
    success = mx <= rtol
    msg = (f"{name}: {f.n} terms, max relative residual {mx:.3g}"
           + ("" if success else f" exceeds rtol {rtol:g}"))
    return FosterFit(f, rms, mx, success, msg, nfev,
                     {"stage": name, "grid_terms": int(grid.size),
                      "candidates": {s[0]: (s[1].n, s[3]) for s in scored}})
