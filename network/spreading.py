"""Spreading (constriction) resistance of a heat source on a plate or layer stack.

A source of area A_s heats the top of a plate (or a stack of layers) of area A_p; the
bottom loses heat through a film coefficient h (``h = inf``: isothermal bottom).  The mean
source temperature rise over the sink (or fluid) temperature is Q·R_total with

    R_total = R_1D + R_sp,    R_1D = Σ t_i/(k_i·A_p) + 1/(h·A_p),

R_1D the one-dimensional resistance over the full plate area and R_sp the spreading
resistance.  This module gives R_sp by

* :func:`lee_1995`: the closed form of Lee, Song, Au & Moran (1995), equal-area circles;
* :func:`circular_series`: the exact Fourier-Bessel series of Yovanovich, Culham & Teertstra
  (1998), circular isoflux source on a coaxial disk, one or several layers;
* :func:`rectangular_series`: the exact double Fourier series for an isoflux rectangle on a
  rectangular (compound, multi-layer) flux channel (Yovanovich, Muzychka & Culham 1999;
  eccentric position as in Muzychka, Culham & Yovanovich 2003);
* :func:`half_space_circle`, :func:`half_space_rectangle`: the half-space limits;

and the helpers that fit a 1-D frustum to a spreading result, used to calibrate the
sub-layers of a stack-up network (:func:`frustum_resistance`, :func:`frustum_area`,
:func:`calibrate_angle`, :func:`effective_area`).

The series are summed until a Richardson extrapolation of the truncation error (which
falls as 1/N² for the averages) changes by less than ``rtol``.

References
----------
Lee, S., Song, S., Au, V., Moran, K. P., "Constriction/spreading resistance model for
electronics packaging", ASME/JSME Thermal Engineering Joint Conference, 1995, vol. 4,
pp. 199-206.

Yovanovich, M. M., Culham, J. R., Teertstra, P., "Analytical modeling of spreading
resistance in flux tubes, half spaces, and compound disks", IEEE Trans. Components,
Packaging and Manufacturing Technology A 21(1), 1998, pp. 168-176.

Yovanovich, M. M., Muzychka, Y. S., Culham, J. R., "Spreading resistance of isoflux
rectangles and strips on compound flux channels", J. Thermophysics and Heat Transfer 13(4),
1999, pp. 495-500.

Muzychka, Y. S., Culham, J. R., Yovanovich, M. M., "Thermal spreading resistance of
eccentric heat sources on rectangular flux channels", J. Electronic Packaging 125(2), 2003.
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np
from .roots import brentq  # Brent (1973); scipy.optimize costs ~0.1 s to import
from scipy.special import j0, j1

__all__ = [
    "SpreadingError", "SpreadingResult", "lee_1995", "circular_series",
    "rectangular_series", "half_space_circle", "half_space_rectangle",
    "circular_depth_profile", "layer_phi", "one_d_resistance", "frustum_resistance", "frustum_area",
    "calibrate_angle",
    "effective_area", "HALF_SPACE_CIRCLE_AVG", "HALF_SPACE_SQUARE_AVG",
]

#: k·a·R of an isoflux circle (radius a) on a half-space, average temperature: 8/(3π²).
HALF_SPACE_CIRCLE_AVG = 8.0 / (3.0 * math.pi ** 2)
#: k·√A·R of an isoflux square on a half-space, average temperature (0.4732).
HALF_SPACE_SQUARE_AVG = (2.0 * math.asinh(1.0) + (2.0 - 2.0 ** 1.5) / 3.0) / math.pi

_MAX_BESSEL_TERMS = 1 << 20
_CENTRE_BESSEL_TERMS = 1 << 14
_MAX_RECT_TERMS = 4096
_CHUNK = 1 << 20   # largest block of double-series terms evaluated at once
_CACHE_BLOCK = 1 << 15  # series terms per block of depths (the arrays stay in cache)
#: tanh(x) is 1.0 in double precision for x above ~19.06 (1 − tanh x ≈ 2e^(−2x) < 2^-54)
_TANH_ONE = 20.0


class SpreadingError(ValueError):
    """Bad spreading-resistance input or a series that does not converge; the message
    names the field, the value and what is expected."""


@dataclass(frozen=True)
class SpreadingResult:
    """Spreading resistance of a source on a plate or layer stack (all K/W).

    Attributes
    ----------
    r_spreading
        Spreading resistance R_sp referred to the mean source temperature.
    r_1d
        One-dimensional resistance over the plate area: Σ t_i/(k_i·A_p) + 1/(h·A_p).
    r_spreading_centre
        Spreading part at the source centre (hottest point of a centred isoflux source), or
        ``None`` where the method gives none.
    terms
        Series terms used per direction (0 for closed forms).
    rel_error
        Estimated relative truncation error of ``r_spreading`` (0 for closed forms).
    method
        Which formula produced the numbers.
    rel_error_centre
        Estimated relative truncation error of ``r_spreading_centre`` (the series are
        converged on the average; the point value is less accurate).
    """

    r_spreading: float
    r_1d: float
    r_spreading_centre: float | None = None
    terms: int = 0
    rel_error: float = 0.0
    method: str = ""
    rel_error_centre: float = 0.0

    @property
    def total(self) -> float:
        """Mean source temperature rise per watt: R_sp + R_1D, K/W."""
        return self.r_spreading + self.r_1d

    @property
    def total_centre(self) -> float | None:
        """Source-centre temperature rise per watt, K/W (``None`` if not available)."""
        if self.r_spreading_centre is None:
            return None
        return self.r_spreading_centre + self.r_1d


# -- input checks -----------------------------------------------------------------------
def _pos(field: str, value: object, *, inf_ok: bool = False) -> float:
    try:
        v = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise SpreadingError(f"{field} = {value!r}: expected a number") from None
    if math.isnan(v) or v <= 0 or (math.isinf(v) and not inf_ok):
        want = "a number > 0 (inf allowed)" if inf_ok else "a finite number > 0"
        raise SpreadingError(f"{field} = {value!r}: expected {want}")
    return v


def _layers(k, t) -> tuple[np.ndarray, np.ndarray]:
    ks = np.atleast_1d(np.asarray(k, dtype=object))
    ts = np.atleast_1d(np.asarray(t, dtype=object))
    if ks.ndim != 1 or ts.ndim != 1 or ks.size != ts.size or ks.size == 0:
        raise SpreadingError(f"k = {k!r}, t = {t!r}: expected one conductivity per layer "
                             "thickness (two numbers, or two sequences of equal length, "
                             "top layer first)")
    many = ks.size > 1 or np.ndim(k) > 0
    kk = np.array([_pos(f"k[{i}]" if many else "k", v) for i, v in enumerate(ks)])
    tt = np.array([_pos(f"t[{i}]" if many else "t", v) for i, v in enumerate(ts)])
    return kk, tt


def layer_phi(zeta: np.ndarray, k: Sequence[float] | float, t: Sequence[float] | float,
              h: float) -> np.ndarray:
    """Spreading function φ(ζ) of a layer stack (top layer first) over a film ``h``.

    Bottom layer (conductivity k_N, thickness t_N) over the film::

        φ_N = [tanh(ζ t_N) + k_N ζ/h] / [1 + (k_N ζ/h)·tanh(ζ t_N)]

    and upwards, layer i over the stack below it (transmission-line form, Yovanovich,
    Muzychka & Culham 1999)::

        φ_i = [tanh(ζ t_i) + (k_i/k_{i+1}) φ_{i+1}] / [1 + (k_i/k_{i+1}) φ_{i+1} tanh(ζ t_i)]

    A surface flux mode of wavenumber ζ (1/m) and amplitude q raises the surface by
    q·φ_1/(k_1 ζ).  ``h = inf`` is an isothermal bottom.

    Parameters
    ----------
    zeta
        Wavenumbers ζ > 0, 1/m, any shape.
    k, t
        Conductivity W/(m·K) and thickness m of each layer, top first.
    h
        Film coefficient under the bottom layer, W/(m²·K), > 0, may be ``inf``.
    """
    ks, ts = _layers(k, t)
    h = _pos("h", h, inf_ok=True)
    return _phi(np.asarray(zeta, dtype=float), ks, ts, h)


def _phi(zeta: np.ndarray, ks: np.ndarray, ts: np.ndarray, h: float) -> np.ndarray:
    return _phi_up(np.tanh(zeta * ts[-1]), zeta, ks, ts, h)


def _phi_up(th: np.ndarray, zeta: np.ndarray, ks: np.ndarray, ts: np.ndarray,
           h: float) -> np.ndarray:
    """The recursion of :func:`layer_phi` from the bottom layer's tanh(ζ·t) ``th`` (any
    shape broadcasting against ``zeta``: rows of stacks that differ only in their last
    thickness run it together) up through the layers above it."""
    if math.isinf(h):
        p = th
    else:
        x = ks[-1] * zeta / h
        p = (th + x) / (1.0 + x * th)
    for i in range(ks.size - 2, -1, -1):
        r = (ks[i] / ks[i + 1]) * p
        th = np.tanh(zeta * ts[i])
        p = (th + r) / (1.0 + r * th)
    return p


def one_d_resistance(area: float, k, t, h: float = math.inf) -> float:
    """R_1D = Σ t_i/(k_i·A) + 1/(h·A), K/W: 1-D conduction through the layers and the film
    over the area ``area`` (m²)."""
    area = _pos("area", area)
    ks, ts = _layers(k, t)
    h = _pos("h", h, inf_ok=True)
    return _one_d(area, ks, ts, h)


def _one_d(area: float, ks: np.ndarray, ts: np.ndarray, h: float) -> float:
    """:func:`one_d_resistance` of checked numbers (float arrays)."""
    return float(np.sum(ts / ks) / area + (0.0 if math.isinf(h) else 1.0 / (h * area)))


def _richardson(partial: Callable[[int], tuple[float, ...]], n0: int, n_max: int,
                rtol: float, orders: tuple[float, ...], field: str,
                soft_rtol: float = math.inf
                ) -> tuple[tuple[float, ...], int, tuple[float, ...]]:
    """Sum a series with truncation N, 2N, 4N ... ; each result is extrapolated with
    R∞ ≈ R_2N + (R_2N − R_N)/(2^p − 1) (error ∝ N^-p) until two successive extrapolations
    of the first value agree to ``rtol`` and those of the other values to ``soft_rtol``
    (the latter only while N stays within ``n_max``).  Returns (values, N, relative change
    of each value between the last two extrapolations, an error estimate)."""
    n = n0
    prev_raw = partial(n)
    prev_ext: tuple[float, ...] | None = None
    err = math.inf
    while True:
        n2 = 2 * n
        if n2 > n_max:
            raise SpreadingError(
                f"{field}: the series did not converge to rtol = {rtol:g} within {n_max} "
                f"terms (estimated relative error {err:.2g}); the source is very small "
                "against the plate: relax rtol, or use circular_series / lee_1995")
        raw = partial(n2)
        ext = tuple(r2 + (r2 - r1) / (2.0 ** p - 1.0)
                    for r1, r2, p in zip(prev_raw, raw, orders))
        if prev_ext is not None:
            errs = [abs(e - p) / abs(e) if e != 0 else abs(e - p)
                    for e, p in zip(ext, prev_ext)]
            err = errs[0]
            if err <= rtol and (4 * n2 > n_max or all(e <= soft_rtol for e in errs[1:])):
                return tuple(float(e) for e in ext), n2, tuple(float(e) for e in errs)
        prev_raw, prev_ext, n = raw, ext, n2


def _fixed_terms(partial: Callable[[int], tuple[float, float]], terms: object, n_max: int,
                 r_1d: float, method: str) -> SpreadingResult:
    """Plain truncated sums; the error estimate compares with half as many terms."""
    if isinstance(terms, bool) or not isinstance(terms, int) or not 2 <= terms <= n_max:
        raise SpreadingError(f"terms = {terms!r}: expected a whole number from 2 to {n_max}")
    (a1, c1), (a2, c2) = partial(terms // 2), partial(terms)
    return SpreadingResult(a2, r_1d, c2, terms, abs(a2 - a1) / abs(a2), method,
                           abs(c2 - c1) / abs(c2))


# -- closed form --------------------------------------------------------------------------
def lee_1995(source_area: float, plate_area: float, k: float, t: float,
             h: float) -> SpreadingResult:
    """Closed-form spreading resistance of Lee, Song, Au & Moran (1995).

    Source and plate are replaced by coaxial circles of equal area, a = √(A_s/π),
    b = √(A_p/π); with ε = a/b, τ = t/b, Bi = h·b/k, λ = π + 1/(ε√π)::

        Φ = [tanh(λτ) + λ/Bi] / [1 + (λ/Bi)·tanh(λτ)]
        ψ_avg = ½·(1 − ε)^{3/2}·Φ,      R_sp = ψ_avg/(k·a·√π)
        R_1D = t/(k·π·b²) + 1/(h·π·b²)

    An engineering fit of the exact series: within about ±5 %, about 10 % high for small
    sources on thin plates.

    Parameters
    ----------
    source_area, plate_area
        Areas A_s ≤ A_p, m².
    k
        Plate conductivity, W/(m·K).
    t
        Plate thickness, m.
    h
        Film coefficient under the plate, W/(m²·K) (``inf``: isothermal bottom).

    References
    ----------
    Lee, Song, Au & Moran, ASME/JSME Thermal Engineering Joint Conference 1995, vol. 4,
    199-206.
    """
    As = _pos("source_area", source_area)
    Ap = _pos("plate_area", plate_area)
    k = _pos("k", k)
    t = _pos("t", t)
    h = _pos("h", h, inf_ok=True)
    if As > Ap:
        raise SpreadingError(f"source_area = {source_area!r}: expected at most plate_area "
                             f"= {plate_area!r}")
    a = math.sqrt(As / math.pi)
    b = math.sqrt(Ap / math.pi)
    eps, tau = a / b, t / b
    lam = math.pi + 1.0 / (eps * math.sqrt(math.pi))
    th = math.tanh(lam * tau)
    # λ/Bi = λk/(hb); an isothermal bottom (h = inf) gives Φ = tanh(λτ).
    x = 0.0 if math.isinf(h) else lam * k / (h * b)
    Phi = (th + x) / (1.0 + x * th)
    psi = 0.5 * (1.0 - eps) ** 1.5 * Phi
    r_sp = psi / (k * a * math.sqrt(math.pi))
    return SpreadingResult(r_spreading=float(r_sp), r_1d=one_d_resistance(Ap, k, t, h),
                           method="lee_1995")


# -- exact series: circle on a disk -----------------------------------------------------
_J1_EXACT_ROOTS = 64
_MAX_CENTRE_TERMS = 1 << 20
_TAIL_X, _TAIL_W = np.polynomial.legendre.leggauss(48)
_TAIL_X = 0.5 * (_TAIL_X + 1.0)     # Gauss-Legendre nodes and weights on [0, 1]
_TAIL_W = 0.5 * _TAIL_W


#: The first 64 positive roots of J1, as ``scipy.special.jn_zeros(1, 64)`` gives them, to
#: the last bit (its first k roots equal ``jn_zeros(1, k)`` for every k ≤ 64;
#: tests/test_spreading.py compares): written out, since jn_zeros costs ~1.4 ms a process.
_J1_HEAD = (
    3.8317059702075125, 7.015586669815619, 10.173468135062722, 13.323691936314223,
    16.470630050877634, 19.615858510468243, 22.760084380592772, 25.903672087618382,
    29.046828534916855, 32.189679910974405, 35.33230755008386, 38.474766234771614,
    41.61709421281445, 44.75931899765282, 47.90146088718545, 51.043535183571514,
    54.18555364106132, 57.32752543790101, 60.46945784534749, 63.61135669848123,
    66.75322673409849, 69.89507183749578, 73.03689522557383, 76.17869958464146,
    79.3204871754763, 82.46225991437356, 85.60401943635023, 88.7457671449263,
    91.88750425169499, 95.0292318080447, 98.17095073079078, 101.31266182303874,
    104.45436579128275, 107.59606325950917, 110.73775478089921, 113.87944084759499,
    117.02112189889243, 120.16279832814901, 123.30447048863572, 126.44613869851659,
    129.587803245104, 132.72946438850963, 135.871122364789, 139.0127773886597,
    142.15442965585902, 145.29607934519592, 148.43772662034223, 151.57937163140144,
    154.72101451628595, 157.8626554019303, 161.004294405362, 164.14593163464963,
    167.2875671897441, 170.42920116322662, 173.57083364097593, 176.71246470276375,
    179.8540944227884, 182.99572287015297, 186.1373501092955, 189.278976200376,
    192.4206011996257, 195.56222515966257, 198.70384812977704, 201.84547015619088,
)


@functools.lru_cache(maxsize=1)
def _j1_exact_roots() -> np.ndarray:
    """The first 64 roots of J1 (:data:`_J1_HEAD`) as a read-only array."""
    roots = np.array(_J1_HEAD)
    roots.setflags(write=False)
    return roots


@functools.lru_cache(maxsize=8)
def _j1_roots(n: int) -> np.ndarray:
    """First n positive roots λ_m of J1 (read-only array).

    The first 64 as :func:`scipy.special.jn_zeros` gives them (:data:`_J1_HEAD`); beyond,
    McMahon's expansion (Abramowitz & Stegun 9.5.12, ν = 1, μ = 4ν² = 4) with
    β = (m + 1/4)π::

        λ_m ≈ β − (μ − 1)/(8β) − 4(μ − 1)(7μ − 31)/[3(8β)³]
                − 32(μ − 1)(83μ² − 982μ + 3779)/[15(8β)⁵]

    which agrees with the exact roots to about 2e-13 from m = 61 on (checked in
    tests/test_spreading.py) and costs nothing, where jn_zeros iterates root by root.
    """
    head = _j1_exact_roots()[:min(n, _J1_EXACT_ROOTS)]
    if n > _J1_EXACT_ROOTS:
        m = np.arange(_J1_EXACT_ROOTS + 1, n + 1, dtype=float)
        beta = (m + 0.25) * math.pi
        mu = 4.0
        b8 = 8.0 * beta
        tail = (beta - (mu - 1.0) / b8 - 4.0 * (mu - 1.0) * (7.0 * mu - 31.0) / (3.0 * b8 ** 3)
                - 32.0 * (mu - 1.0) * (83.0 * mu ** 2 - 982.0 * mu + 3779.0) / (15.0 * b8 ** 5))
        head = np.concatenate([head, tail])
    head.setflags(write=False)
    return head


@functools.lru_cache(maxsize=64)
def _avg_weights(a: float, b: float, n: int) -> tuple[np.ndarray, np.ndarray]:
    """δ_n = λ_n/b and the source-average weights w_n = 4·J1²(δ_n a)/(π a² b² δ_n³ J0²(λ_n))
    of the first n modes (R_sp,avg = Σ w_n·φ_n/k_1).  Cached (read-only arrays): a pure
    function of the radii, asked for again by every column build of a sweep."""
    lam = _j1_roots(n)
    d = lam / b
    j1a = j1(d * a)
    w = 4.0 * j1a * j1a / (math.pi * a * a * b * b * d ** 3 * j0(lam) ** 2)
    d.flags.writeable = False
    w.flags.writeable = False
    return d, w


def _tail_factor(a: float, b: float, n: int) -> tuple[float, np.ndarray]:
    """Asymptotic tail of the average series past n terms, as a quadrature.

    For large λ: J0²(λ_n) → 2/(πλ_n) and J1²(δa) averages to 1/(πδa), so a term tends to
    g(λ) = 2b²·φ(λ/b)/(π k_1 a³ λ³); the roots are spaced π apart, so
    Σ_{m>n} g(λ_m) ≈ (1/π)∫_Λ^∞ g(λ)dλ with Λ = λ_n + π/2 (midpoint rule).  With
    x = Λ²/λ² (λ⁻³dλ = dx/(2Λ²)) the integral has a smooth integrand on [0, 1]:

        tail = b²/(π² k_1 a³ Λ²) · ∫_0^1 φ(Λ/(b√x)) dx

    (φ = 1 gives the closed form b²/(π⁴ k_1 a³ n²)).  Returns the factor b²/(π² a³ Λ²)
    and the wavenumbers Λ/(b√x) at the 48 Gauss-Legendre nodes (weights ``_TAIL_W``).
    """
    lam_n = float(_j1_roots(n)[-1]) + 0.5 * math.pi
    return b * b / (math.pi ** 2 * a ** 3 * lam_n ** 2), lam_n / (b * np.sqrt(_TAIL_X))


def _avg_sum(a: float, b: float, ks: np.ndarray, ts: np.ndarray, h: float,
             n: int, known: np.ndarray | None = None) -> tuple[float, np.ndarray]:
    """R_sp,avg from n terms plus the asymptotic tail (:func:`_tail_factor`), and the φ of
    the n modes; ``known``: the φ of the first modes from a shorter sum (the same numbers:
    the modes of n terms begin with those of fewer)."""
    d, w = _avg_weights(a, b, n)
    fac, zq = _tail_factor(a, b, n)
    m = 0 if known is None else known.size
    both = _phi(np.concatenate([d[m:], zq]), ks, ts, h)  # new modes and tail, one recursion
    new, tail = both[:n - m], both[n - m:]
    phi = new if m == 0 else np.concatenate([known, new])
    return (float(np.sum(w * phi) + fac * float(_TAIL_W @ tail)) / float(ks[0]), phi)



def _disk(a, b, k, t) -> tuple[float, float, np.ndarray, np.ndarray]:
    """Validated source radius a, disk radius b (0 < a ≤ b) and layer arrays (k, t)."""
    a = _pos("a", a)
    b = _pos("b", b)
    if a > b:
        raise SpreadingError(f"a = {a!r}: expected a source radius at most the disk radius "
                             f"b = {b!r}")
    ks, ts = _layers(k, t)
    return a, b, ks, ts

def circular_series(a: float, b: float, k, t, h: float, *,
                    rtol: float = 1e-7, terms: int | None = None,
                    centre: bool = True) -> SpreadingResult:
    """Exact spreading resistance of a circular isoflux source on a coaxial disk.

    Source radius a on a disk (or compound disk) of radius b with an adiabatic rim, layers
    (k_i, t_i) top first, film h below.  With λ_n the positive roots of J1 and
    δ_n = λ_n/b (Yovanovich, Culham & Teertstra 1998)::

        R_sp,avg    = Σ 4·J1²(δ_n a)·φ_n / [π k_1 a² b² δ_n³ J0²(λ_n)]
        R_sp,centre = Σ 2·J1(δ_n a)·φ_n  / [π k_1 a  b² δ_n² J0²(λ_n)]

    φ_n = φ(δ_n) from :func:`layer_phi`; for one layer
    φ_n = [tanh(δ_n t) + kδ_n/h]/[1 + (kδ_n/h)·tanh(δ_n t)].  The centre value follows from
    the same surface temperature, θ(0) = Σ C_n with C_n = 2qaJ1(δ_n a)φ_n/(k b² δ_n² J0²).

    Summation.  The average is summed to N = 2^p ≥ 8·b/a terms (beyond n ≈ b/a the terms
    are asymptotic) and the rest added as the asymptotic tail of :func:`_tail_factor`
    (terms → 2b²φ(δ)/(π k_1 a³ λ³), summed as an integral over the root density 1/π); the
    error estimate is the change when N doubles, and N doubles until it is below ``rtol``.
    The centre series converges as N^-1.5 only and oscillates: it is summed to at least
    max(N, 16384, 64·b/a) terms and Richardson-extrapolated (R∞ ≈ R_2N + (R_2N −
    R_N)/(2^1.5 − 1)); its error estimate is reported in ``rel_error_centre`` and never
    makes the call fail.  ``centre=False`` skips it (the fast path for the average).

    Parameters
    ----------
    a, b
        Source and disk radii, m, a ≤ b.
    k, t
        Conductivity W/(m·K) and thickness m: numbers, or sequences for a compound disk
        (top layer first).
    h
        Film coefficient under the bottom, W/(m²·K) (``inf``: isothermal bottom).
    rtol
        Relative tolerance on the average.
    terms
        Sum exactly this many terms, without tail or extrapolation (to study truncation);
        the default converges to ``rtol``.
    centre
        Also sum the source-centre series (default); ``False`` leaves
        ``r_spreading_centre`` as ``None``.

    References
    ----------
    Yovanovich, Culham & Teertstra, IEEE Trans. CPMT-A 21(1), 1998.
    """
    a, b, ks, ts = _disk_fast(a, b, k, t)
    h = _pos("h", h, inf_ok=True)
    rtol = _pos("rtol", rtol)
    r_1d = _one_d(math.pi * b * b, ks, ts, h)
    if a == b:
        return SpreadingResult(0.0, r_1d, 0.0 if centre else None, 0, 0.0,
                               "circular_series", 0.0)

    def partial(n: int) -> tuple[float, float]:
        lam = _j1_roots(n)
        d = lam / b
        phi = _phi(d, ks, ts, h)
        j1a = j1(d * a)
        w = phi / (math.pi * ks[0] * b * b * d * d * j0(lam) ** 2)
        avg = float(np.sum(4.0 * j1a * j1a * w / (a * a * d)))
        cen = float(np.sum(2.0 * j1a * w / a)) if centre else math.nan
        return avg, cen

    if terms is not None:
        res = _fixed_terms(partial, terms, _MAX_BESSEL_TERMS, r_1d, "circular_series")
        if not centre:
            res = SpreadingResult(res.r_spreading, r_1d, None, res.terms, res.rel_error,
                                  res.method, 0.0)
        return res
    n = int(2 ** math.ceil(math.log2(max(128.0, 4.0 * b / a))))
    prev, phi = _avg_sum(a, b, ks, ts, h, n)
    err = math.inf
    while True:
        if 2 * n > _MAX_BESSEL_TERMS:
            raise SpreadingError(
                f"circular_series: the series did not converge to rtol = {rtol:g} within "
                f"{_MAX_BESSEL_TERMS} terms (estimated relative error {err:.2g}); the "
                "source is very small against the plate: relax rtol, or use lee_1995")
        n *= 2
        avg, phi = _avg_sum(a, b, ks, ts, h, n, phi)
        err = abs(avg - prev) / abs(avg)
        if err <= rtol:
            break
        prev = avg
    if not centre:
        return SpreadingResult(avg, r_1d, None, n, err, "circular_series", 0.0)
    # The centre series oscillates and converges as N^-1.5 only; terms are cheap, so it is
    # summed much further than the average needs and extrapolated.
    nc = int(min(_MAX_CENTRE_TERMS,
                 max(n, _CENTRE_BESSEL_TERMS, 2 ** math.ceil(math.log2(64.0 * b / a)))))
    c1, c2 = partial(nc // 2)[1], partial(nc)[1]
    cen = c2 + (c2 - c1) / (2.0 ** 1.5 - 1.0)
    return SpreadingResult(avg, r_1d, float(cen), n, err, "circular_series",
                           abs(c2 - c1) / abs(cen) / (2.0 ** 1.5 - 1.0))


def _compose_down(zeta: np.ndarray, ks: np.ndarray, ts: np.ndarray
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The upward recursion of :func:`layer_phi` through the layers above a cut in layer j,
    composed into one linear fractional map per mode ζ, for every layer j.

    Layer i maps the φ below it to φ_i = (c_i·φ + T_i)/(c_i·T_i·φ + 1),
    c_i = k_i/k_{i+1}, T_i = tanh(ζt_i): the matrix [[c_i, T_i], [c_i·T_i, 1]] acting on
    (φ, 1).  For a cut in layer j the product M = M_0·M_1···M_{j−1} = [[α, β], [γ, δ]]
    gives φ_0 = (αφ_j + β)/(γφ_j + δ) and dφ_0/dφ_j = det M/(γφ_j + δ)²,
    det M = Π c_i(1 − T_i²) (a linear fractional map composes by matrix products; common
    practice, no source).  The products are built from the top, one layer more for each
    j, and rescaled to δ = 1 after each layer (the map is unchanged, det M by the square
    of the scale), so they stay finite for any number of layers.  Returns α, β, γ and
    det M with δ = 1, each of shape (len(ks), ζ.size), row j for a cut in layer j (row 0
    the identity)."""
    n = ks.size
    al = np.empty((n, zeta.size))
    be = np.empty((n, zeta.size))
    ga = np.empty((n, zeta.size))
    det = np.empty((n, zeta.size))
    al[0], be[0], ga[0], det[0] = 1.0, 0.0, 0.0, 1.0
    for jj in range(n - 1):
        c = ks[jj] / ks[jj + 1]
        th = np.tanh(zeta * ts[jj])
        # [[α, β], [γ, 1]]·[[c, T], [cT, 1]], then divided by its new δ = γT + 1
        s = 1.0 / (ga[jj] * th + 1.0)
        al[jj + 1] = (al[jj] + be[jj] * th) * c * s
        be[jj + 1] = (al[jj] * th + be[jj]) * s
        ga[jj + 1] = (ga[jj] + th) * c * s
        det[jj + 1] = det[jj] * (c * (1.0 - th * th)) * s * s
    return al, be, ga, det


def circular_depth_profile(a: float, b: float, k, t, z, *, terms: int | None = None,
                           slope_only=None) -> tuple[np.ndarray, np.ndarray]:
    """Cached front of :func:`_circular_depth_profile` (same arguments and results; the
    arrays returned are fresh copies).  Sweeps rebuild the same columns many times."""
    zz = np.asarray(z, dtype=np.float64)
    so = None if slope_only is None else np.broadcast_to(
        np.asarray(slope_only, dtype=bool), zz.shape).tobytes()
    key = (float(a), float(b), tuple(np.atleast_1d(np.asarray(k, dtype=np.float64)).tolist()),
           tuple(np.atleast_1d(np.asarray(t, dtype=np.float64)).tolist()),
           zz.shape, zz.tobytes(), terms, so)   # the depths by their bytes (cheap to hash)
    R, dR = _depth_profile_cached(key)
    return R.copy(), dR.copy()


@functools.lru_cache(maxsize=256)   # an entry holds a column's depths (~500): ~30 kB
def _depth_profile_cached(key):
    a, b, k, t, shape, z, terms, so = key
    return _circular_depth_profile(a, b, list(k), list(t),
                                   np.frombuffer(z, dtype=np.float64).reshape(shape),
                                   terms=terms,
                                   slope_only=None if so is None
                                   else np.frombuffer(so, dtype=bool).reshape(shape))


def _circular_depth_profile(a: float, b: float, k, t, z, *, terms: int | None = None,
                            slope_only=None) -> tuple[np.ndarray, np.ndarray]:
    """Mean source rise R(z) of the compound disk cut at depth z over an isothermal plane,
    and its depth derivative dR/dz.

    Isoflux circle a on a disk of radius b (adiabatic rim), layers (k_i, t_i) top first;
    the stack is cut at depth z (0 < z ≤ Σt_i) and the cut held at the sink temperature.
    With the series of :func:`circular_series` (Yovanovich, Culham & Teertstra 1998;
    compound layers by the recursion of :func:`layer_phi`, Yovanovich, Muzychka & Culham
    1999) for the cut stack, i.e. the bottom layer j cut to thickness z − z_j, h = ∞::

        R(z) = Σ_n w_n·φ_n(z)/k_1 + [Σ_{i<j} t_i/k_i + (z − z_j)/k_j]/(πb²)
        w_n  = 4·J1²(δ_n a)/(π a² b² δ_n³ J0²(λ_n))
        dR/dz = Σ_n w_n·φ_n'(z)/k_1 + 1/(k_j πb²)

    φ_j = tanh(δ(z − z_j)) in the cut layer, φ_j' = δ·(1 − φ_j²), and upwards
    φ_i = (T + r)/(1 + rT), r = (k_i/k_{i+1})φ_{i+1}, T = tanh(δt_i), so
    dφ_i/dz = (k_i/k_{i+1})·(1 − T²)/(1 + rT)²·dφ_{i+1}/dz.  The layers above the cut
    are one linear fractional map per mode (:func:`_compose_down`), composed once for all
    depths in layer j; a mode with δ(z − z_j) ≥ 20 has φ_j = 1 to the last bit and
    φ_j' = 0, and a mode with δt_i ≥ 20 in a layer i above the cut has φ_i = 1 whatever
    lies below (the map is singular, det = 0), so only the modes below both are evaluated
    depth by depth (under a thick flange a few tens of the N).

    R(z) is the resistance the stack down to z puts between the source and a plane at z;
    A_eff(z) = 1/(k(z)·dR/dz) is the area of a 1-D path with the same resistance per unit
    depth there: the source area at z → 0, the disk area deep down.  The series is summed
    to N = max(512, 32·b/a) terms (``terms`` overrides) plus the asymptotic tail of
    :func:`circular_series`.

    Parameters
    ----------
    a, b
        Source and disk radii, m, a ≤ b.
    k, t
        Conductivities W/(m·K) and thicknesses m, top layer first.
    z
        Depths, m, in (0, Σt], any shape.
    slope_only
        Optional booleans like ``z``: where true only dR/dz is needed, and R may be
        returned as NaN (the series for R is not summed there: quadrature points).

    Returns
    -------
    R, dRdz
        Arrays of the shape of ``z``: K/W and K/(W·m).
    """
    a, b, ks, ts = _disk_fast(a, b, k, t)
    z = np.asarray(z, dtype=float)
    zf = z.ravel()
    setup = _depth_modes(a, b, tuple(ks.tolist()), tuple(ts.tolist()), terms)
    zb = setup.zb
    if zf.size and not (np.all(np.isfinite(zf)) and zf.min() > 0
                        and zf.max() <= zb[-1] * (1 + 1e-12)):
        raise SpreadingError(f"z = {z!r}: expected depths in (0, {zb[-1]:g}] m")
    zf = np.minimum(zf, zb[-1])
    j_of = np.minimum(np.searchsorted(zb, zf, side="right") - 1, ks.size - 1)
    x = zf - zb[j_of]
    area = math.pi * b * b
    one_d = (setup.cum[j_of] + x / ks[j_of]) / area
    one_d_slope = 1.0 / (ks[j_of] * area)
    if a == b:
        return one_d.reshape(z.shape), one_d_slope.reshape(z.shape)
    R = np.empty(zf.size)
    dR = np.empty(zf.size)
    dd, ww = setup.dd, setup.ww
    so = (np.zeros(zf.size, bool) if slope_only is None
          else np.broadcast_to(np.asarray(slope_only, dtype=bool), z.shape).ravel())
    # a mode with δ·(z − z_j) ≥ _TANH_ONE has tanh = 1 exactly and dφ_j/dz = 0: only the
    # first `live` modes are evaluated at each depth, and none past `cap` of its layer (a
    # layer above the cut saturates them: φ_1 is their saturated value); the depths of a
    # layer are grouped by that count rounded up to a power of two (at least 64)
    lim = np.full(x.shape, np.inf)
    np.divide(_TANH_ONE, x, out=lim, where=x > 0)
    live = np.maximum(np.searchsorted(dd, lim, side="left"), 64)
    group = np.minimum(np.left_shift(1, np.ceil(np.log2(live)).astype(int)),
                       setup.cap[j_of])
    # the depths of each (layer, group) in their order, found with one stable sort; the
    # layers above the cut act as one map per mode, φ_1 = (α·φ_j + β)/(γ·φ_j + 1) and
    # dφ_1/dz = det·δ(1 − φ_j²)/(γ·φ_j + 1)² (``ddet`` = δ·det), φ_j = tanh(δ(z − z_j))
    key = j_of * (2 * dd.size + 2) + group
    order = np.argsort(key, kind="stable")
    ks_ = key[order]
    cut = np.flatnonzero(ks_[1:] != ks_[:-1]) + 1
    value_all = ~so
    k1 = ks[0]
    for lo, hi in zip([0] + cut.tolist(), cut.tolist() + [ks_.size]) if ks_.size else ():
        sel_g = order[lo:hi]
        j, g = divmod(int(ks_[lo]), 2 * dd.size + 2)
        al, be, ga = setup.al[j, :g], setup.be[j, :g], setup.ga[j, :g]
        ddet, wg, dg = setup.ddet[j, :g], ww[:g], dd[:g]
        rest = setup.rest(j, g)   # the modes past g, constant at these depths
        rows = max(1, _CACHE_BLOCK // g)
        for s in range(0, sel_g.size, rows):
            sel = sel_g[s:s + rows]
            pj = np.multiply(dg, x[sel][:, None])
            np.tanh(pj, out=pj)
            inv = np.multiply(ga, pj)
            inv += 1.0
            np.reciprocal(inv, out=inv)
            value = value_all[sel]
            if value.all():
                R[sel] = ((al * pj + be) * inv @ wg + rest) / k1
            else:
                R[sel] = np.nan
                if value.any():
                    R[sel[value]] = ((al * pj[value] + be) * inv[value] @ wg + rest) / k1
            dp = np.multiply(pj, pj, out=pj)
            np.subtract(1.0, dp, out=dp)
            dp *= ddet
            inv *= inv
            dp *= inv
            dR[sel] = dp @ wg / k1
    return (R + one_d).reshape(z.shape), (dR + one_d_slope).reshape(z.shape)


def _disk_fast(a, b, k, t) -> tuple[float, float, np.ndarray, np.ndarray]:
    """:func:`_disk` without its per-number checks when every number is a finite float
    > 0 (the build's own calls); anything else goes through :func:`_disk` and its
    messages."""
    try:
        ks = np.array(k, dtype=float, ndmin=1)
        ts = np.array(t, dtype=float, ndmin=1)
        af, bf = float(a), float(b)
    except (TypeError, ValueError):
        return _disk(a, b, k, t)
    if (ks.ndim == 1 and ks.shape == ts.shape and ks.size and 0 < af <= bf < math.inf
            and np.all(np.isfinite(ks)) and np.all(np.isfinite(ts)) and ks.min() > 0
            and ts.min() > 0):
        return af, bf, ks, ts
    return _disk(a, b, k, t)


class _DepthModes:
    """The parts of :func:`_circular_depth_profile` that depend on the disk, its layers
    and the term count only (not on the depths): the modes by wavenumber and their
    weights, the layer faces, and for a cut in each layer j the map of the layers above
    it (:func:`_compose_down`: α, β, γ, δ·det M), its saturated value p_sat = (α + β)/(γ + 1)
    and ``cap[j]``, the modes past which det M = 0 (a layer above saturates them).
    Read-only."""

    def __init__(self, a: float, b: float, ks: np.ndarray, ts: np.ndarray,
                 terms: int | None) -> None:
        self.zb = np.concatenate([[0.0], np.cumsum(ts)])
        self.cum = np.concatenate([[0.0], np.cumsum(ts / ks)])
        if a == b:
            return
        n = terms if terms is not None else int(max(512, math.ceil(32.0 * b / a)))
        self.dd, self.ww = _sorted_modes(a, b, min(n, _MAX_BESSEL_TERMS))
        self.al, self.be, self.ga, det = _compose_down(self.dd, ks, ts)
        self.ddet = self.dd * det
        self.p_sat = (self.al + self.be) / (self.ga + 1.0)
        nz = det != 0.0
        m = self.dd.size
        self.cap = np.maximum(np.where(nz.any(axis=1), m - np.argmax(nz[:, ::-1], axis=1), 1),
                              1)
        self._rest: dict = {}
        for x in (self.zb, self.cum, self.dd, self.ww, self.al, self.be, self.ga, self.ddet,
                  self.p_sat, self.cap):
            x.flags.writeable = False

    def rest(self, j: int, g: int) -> float:
        """Σ_{m ≥ g} p_sat,m·w_m for a cut in layer j: the modes past g, constant there."""
        key = (j, g)
        r = self._rest.get(key)
        if r is None:
            r = self._rest[key] = float(self.p_sat[j, g:] @ self.ww[g:])
        return r


@functools.lru_cache(maxsize=32)
def _sorted_modes(a: float, b: float, n: int) -> tuple[np.ndarray, np.ndarray]:
    """The wavenumbers of the depth series (n modes of :func:`_avg_weights`, then the tail
    nodes of :func:`_tail_factor`) by size and their weights (read-only; a pure function of
    the radii and n)."""
    d, w = _avg_weights(a, b, n)
    fac, zq = _tail_factor(a, b, n)
    dd = np.concatenate([d, zq])
    ww = np.concatenate([w, fac * _TAIL_W])
    order = np.argsort(dd, kind="stable")   # modes by wavenumber (the tail descends)
    dd, ww = dd[order], ww[order]
    dd.flags.writeable = False
    ww.flags.writeable = False
    return dd, ww


@functools.lru_cache(maxsize=16)    # an entry ~40 kB a layer
def _depth_modes(a: float, b: float, ks: tuple[float, ...], ts: tuple[float, ...],
                 terms: int | None) -> _DepthModes:
    """:class:`_DepthModes` of a disk and its layers, cached (the build reads one stack
    at several sets of depths, and a sweep of another layer keeps a run's own)."""
    return _DepthModes(a, b, np.array(ks), np.array(ts), terms)


# -- exact series: rectangle on a rectangular compound channel ---------------------------
def rectangular_series(source: tuple[float, float], plate: tuple[float, float], k, t,
                       h: float, *, centre: tuple[float, float] | None = None,
                       rtol: float = 1e-6, terms: int | None = None) -> SpreadingResult:
    """Exact spreading resistance of an isoflux rectangle on a rectangular flux channel.

    Plate Lx × Ly with adiabatic sides, layers (k_i, t_i) top first, film h below; source
    wx × wy centred at (xc, yc) (default: plate centre).  With δ_m = mπ/Lx, λ_n = nπ/Ly,
    β = √(δ_m² + λ_n²) and φ from :func:`layer_phi` (Yovanovich, Muzychka & Culham 1999;
    eccentric form of Muzychka, Culham & Yovanovich 2003)::

        S_m = sin(δ_m(xc + wx/2)) − sin(δ_m(xc − wx/2)),  S_n likewise in y
        R_sp = Σ_m 2 S_m² φ(δ_m)/(Lx Ly wx² k_1 δ_m³)
             + Σ_n 2 S_n² φ(λ_n)/(Lx Ly wy² k_1 λ_n³)
             + Σ_m Σ_n 4 S_m² S_n² φ(β)/(Lx Ly wx² wy² k_1 δ_m² λ_n² β)

    (cosine expansion of the source flux, surface response q·φ/(kζ) per mode, averaged over
    the source).  The temperature at the source centre (xc, yc) is the same sum of modes
    evaluated at that point::

        R_c = Σ_m 2 S_m C_m φ(δ_m)/(Lx Ly wx k_1 δ_m²) + Σ_n (same in y)
            + Σ_m Σ_n 4 S_m C_m S_n C_n φ(β)/(Lx Ly wx wy k_1 δ_m λ_n β),
        C_m = cos(δ_m xc), C_n = cos(λ_n yc).

    Truncated at N terms per direction the sums err by O(N^-2); N doubles until the
    Richardson-extrapolated average changes by less than ``rtol``.

    Parameters
    ----------
    source
        (wx, wy), source size, m.
    plate
        (Lx, Ly), plate size, m.
    k, t
        Conductivity W/(m·K) and thickness m; sequences for a compound channel, top first.
    h
        Film coefficient under the bottom, W/(m²·K) (``inf``: isothermal bottom).
    centre
        (xc, yc), source centre from the plate corner, m; default the plate centre.
    rtol
        Relative tolerance on the average.
    terms
        Sum exactly this many terms per direction (modes m, n = 1 ... terms), without
        extrapolation; the default converges to ``rtol``.

    References
    ----------
    Yovanovich, Muzychka & Culham, J. Thermophysics and Heat Transfer 13(4), 1999;
    Muzychka, Culham & Yovanovich, J. Electronic Packaging 125(2), 2003.
    """
    wx, wy = _pair("source", source)
    Lx, Ly = _pair("plate", plate)
    if wx > Lx or wy > Ly:
        raise SpreadingError(f"source = {source!r}: expected a source no larger than the "
                             f"plate {plate!r}")
    if centre is None:
        xc, yc = Lx / 2.0, Ly / 2.0
    else:
        xc, yc = _pair("centre", centre)
        tol = 1e-12 * max(Lx, Ly)
        if (xc - wx / 2 < -tol or xc + wx / 2 > Lx + tol or yc - wy / 2 < -tol
                or yc + wy / 2 > Ly + tol):
            raise SpreadingError(f"centre = {centre!r}: expected the source {source!r} to "
                                 f"lie inside the plate {plate!r}")
    ks, ts = _layers(k, t)
    h = _pos("h", h, inf_ok=True)
    rtol = _pos("rtol", rtol)
    r_1d = one_d_resistance(Lx * Ly, ks, ts, h)
    k1 = ks[0]
    area = Lx * Ly

    def axis(n: int, L: float, w: float, c: float):
        m = np.arange(1, n + 1, dtype=float)
        d = m * np.pi / L
        S = np.sin(d * (c + w / 2.0)) - np.sin(d * (c - w / 2.0))
        C = np.cos(d * c)
        keep = np.abs(S) > 1e-13   # a centred source has no odd modes
        return d[keep], S[keep], C[keep]

    def partial(n: int) -> tuple[float, float]:
        dx, Sx, Cx = axis(n, Lx, wx, xc)
        dy, Sy, Cy = axis(n, Ly, wy, yc)
        px, py = _phi(dx, ks, ts, h), _phi(dy, ks, ts, h)
        avg = (np.sum(2.0 * Sx ** 2 * px / (wx ** 2 * dx ** 3))
               + np.sum(2.0 * Sy ** 2 * py / (wy ** 2 * dy ** 3)))
        cen = (np.sum(2.0 * Sx * Cx * px / (wx * dx ** 2))
               + np.sum(2.0 * Sy * Cy * py / (wy * dy ** 2)))
        # Double sum in blocks of rows to bound memory.
        ax = (Sx / (wx * dx)) ** 2
        cx = Sx * Cx / (wx * dx)
        ay = (Sy / (wy * dy)) ** 2
        cy = Sy * Cy / (wy * dy)
        rows = max(1, _CHUNK // max(1, dy.size))
        for i in range(0, dx.size, rows):
            beta = np.hypot(dx[i:i + rows, None], dy[None, :])
            g = 4.0 * _phi(beta, ks, ts, h) / beta
            avg += float(ax[i:i + rows] @ (g @ ay))
            cen += float(cx[i:i + rows] @ (g @ cy))
        return float(avg) / (area * k1), float(cen) / (area * k1)

    if terms is not None:
        return _fixed_terms(partial, terms, _MAX_RECT_TERMS, r_1d, "rectangular_series")
    ratio = max(Lx / wx, Ly / wy)
    n0 = int(min(_MAX_RECT_TERMS // 4, max(32, 2 ** math.ceil(math.log2(4 * ratio)))))
    # The centre (a point value) converges more slowly than the average: it is carried
    # along to 1e-4 where that costs no more than _MAX_RECT_TERMS terms.
    (avg, cen), n, errs = _richardson(partial, n0, _MAX_RECT_TERMS, rtol, (2.0, 2.0),
                                      "rectangular_series", soft_rtol=1e-4)
    return SpreadingResult(avg, r_1d, cen, n, errs[0], "rectangular_series", errs[1])


def _pair(field: str, value) -> tuple[float, float]:
    try:
        x, y = value
    except (TypeError, ValueError):
        raise SpreadingError(f"{field} = {value!r}: expected two lengths (x, y) in m") from None
    return _pos(f"{field}[0]", x), _pos(f"{field}[1]", y)


# -- half-space limits ------------------------------------------------------------------
def half_space_circle(k: float, a: float, where: str = "average") -> float:
    """Spreading resistance of an isoflux circle of radius ``a`` on a half-space, K/W.

    ``where="average"``: R = 8/(3π²·k·a) (k·a·R = 0.2702); ``"centre"``: R = 1/(π·k·a).
    The b → ∞, t → ∞ limits of :func:`circular_series` (Yovanovich, Culham & Teertstra
    1998).
    """
    k, a = _pos("k", k), _pos("a", a)
    if where == "average":
        return HALF_SPACE_CIRCLE_AVG / (k * a)
    if where == "centre":
        return 1.0 / (math.pi * k * a)
    raise SpreadingError(f"where = {where!r}: expected 'average' or 'centre'")


def half_space_rectangle(k: float, wx: float, wy: float) -> float:
    """Average spreading resistance of an isoflux rectangle wx × wy on a half-space, K/W.

    With ε = wy/wx (any ratio; the formula is symmetric) and A = wx·wy
    (Yovanovich, Muzychka & Culham 1999)::

        k√A·R = (√ε/π)·[asinh(1/ε) + asinh(ε)/ε + (ε/3)·(1 + 1/ε³ − (1 + 1/ε²)^{3/2})]

    which is 0.4732 for a square.
    """
    k, wx, wy = _pos("k", k), _pos("wx", wx), _pos("wy", wy)
    e = wy / wx
    psi = (math.sqrt(e) / math.pi) * (math.asinh(1.0 / e) + math.asinh(e) / e
                                      + (e / 3.0) * (1.0 + e ** -3 - (1.0 + e ** -2) ** 1.5))
    return psi / (k * math.sqrt(wx * wy))


# -- 1-D frustum equivalents --------------------------------------------------------------
def _angle(angle: object) -> float:
    try:
        theta = float(angle)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise SpreadingError(f"angle = {angle!r}: expected an angle in radians") from None
    if not (0.0 <= theta < math.pi / 2):
        raise SpreadingError(f"angle = {angle!r}: expected radians in [0, π/2) "
                             "(45° is 0.785)")
    return theta


def frustum_resistance(k: float, t: float, a0, angle: float,
                       shape: str = "square") -> float:
    """1-D resistance of a layer whose heated area grows with depth at ``angle``, K/W.

    Each side moves out by z·tan θ at depth z (θ = ``angle`` in radians from the normal;
    0 gives the 1-D prism t/(kA₀)).  Integrating dz/(k·A(z)) over the thickness t:

    * circle, radius r₀ = a0:        R = t / [k π r₀ (r₀ + t tan θ)]
    * square, side s₀ = a0:          R = t / [k s₀ (s₀ + 2 t tan θ)]
    * rectangle, sides a0 = (x₀, y₀): R = ln[(y₀/x₀)·(x₀ + 2t tan θ)/(y₀ + 2t tan θ)]
      / [2 k tan θ (y₀ − x₀)]  (the square form when x₀ = y₀)

    Common practice (the "spreading angle" model), no source.

    Parameters
    ----------
    k
        Conductivity, W/(m·K).
    t
        Layer thickness, m.
    a0
        Radius (circle), side (square) or (x₀, y₀) (rectangle) at the top of the layer, m.
    angle
        Spreading angle θ, radians, 0 ≤ θ < π/2.
    shape
        ``"square"``, ``"circle"`` or ``"rectangle"``.
    """
    k, t = _pos("k", k), _pos("t", t)
    theta = _angle(angle)
    g = t * math.tan(theta)
    if shape == "circle":
        r0 = _pos("a0", a0)
        return t / (k * math.pi * r0 * (r0 + g))
    if shape == "square":
        s0 = _pos("a0", a0)
        return t / (k * s0 * (s0 + 2.0 * g))
    if shape == "rectangle":
        x0, y0 = _pair("a0", a0)
        if g == 0.0:
            return t / (k * x0 * y0)
        if math.isclose(x0, y0, rel_tol=1e-9):
            return t / (k * x0 * (x0 + 2.0 * g))
        return math.log((y0 / x0) * (x0 + 2.0 * g) / (y0 + 2.0 * g)) / (
            2.0 * k * math.tan(theta) * (y0 - x0))
    raise SpreadingError(f"shape = {shape!r}: expected 'square', 'circle' or 'rectangle'")


def frustum_area(a0, depth: float, angle: float, shape: str = "square") -> float:
    """Heated area of a frustum at ``depth`` (m) below its top, m²: each side moved out by
    depth·tan θ (the area where a frustum layer hands its heat to what lies below)."""
    depth = float(depth)
    if not (math.isfinite(depth) and depth >= 0):
        raise SpreadingError(f"depth = {depth!r}: expected a finite length >= 0 in m")
    theta = _angle(angle)
    g = depth * math.tan(theta)
    if shape == "circle":
        return math.pi * (_pos("a0", a0) + g) ** 2
    if shape == "square":
        return (_pos("a0", a0) + 2.0 * g) ** 2
    if shape == "rectangle":
        x0, y0 = _pair("a0", a0)
        return (x0 + 2.0 * g) * (y0 + 2.0 * g)
    raise SpreadingError(f"shape = {shape!r}: expected 'square', 'circle' or 'rectangle'")


def calibrate_angle(k: float, t: float, a0, resistance: float, shape: str = "square",
                    h: float | None = None,
                    max_angle: float = math.radians(89.0)) -> float:
    """Spreading angle θ (radians) at which a frustum layer matches ``resistance``.

    The model resistance is ``frustum_resistance(k, t, a0, θ, shape)``, plus, when ``h`` is
    given, the film 1/(h·A_bottom(θ)) acting on the frustum's bottom area (see
    :func:`frustum_area`).  Used to give a stack-up layer the resistance found from a
    spreading solution: for a plate on a film, ``resistance = R_sp + R_1D`` of
    :func:`rectangular_series` and ``h`` the same film (the film is part of what spreads
    the heat, so the plate alone must not be matched to ``R_sp``).

    The model falls monotonically from its value at θ = 0; the root is found by Brent's
    method.  A ``resistance`` above the θ = 0 value (the heat cannot spread: a thin layer
    limited by lateral conduction) or below the value at ``max_angle`` raises
    :class:`SpreadingError`.  The caller checks that the bottom area stays within the
    plate.
    """
    target = _pos("resistance", resistance)
    if h is not None:
        h = _pos("h", h, inf_ok=True)

    def model(theta: float) -> float:
        r = frustum_resistance(k, t, a0, theta, shape)
        if h is not None and not math.isinf(h):
            r += 1.0 / (h * frustum_area(a0, t, theta, shape))
        return r

    r0 = model(0.0)
    if math.isclose(target, r0, rel_tol=1e-12):
        return 0.0
    if target > r0:
        raise SpreadingError(
            f"resistance = {resistance!r}: expected at most {r0:.6g} K/W, the 1-D value of "
            "the source area through this layer (and film); no spreading angle can raise "
            "the resistance (model the layer's lateral conduction explicitly instead)")
    r_max = model(max_angle)
    if target < r_max:
        raise SpreadingError(
            f"resistance = {resistance!r}: expected at least {r_max:.6g} K/W, the frustum "
            f"resistance at max_angle = {max_angle:.4g} rad")
    return float(brentq(lambda th: model(th) - target, 0.0, max_angle, xtol=1e-14,
                        rtol=1e-12))


def effective_area(k: float, t: float, resistance: float) -> float:
    """Area A = t/(k·R), m², whose 1-D resistance through a layer of thickness t equals
    ``resistance`` (K/W)."""
    return _pos("t", t) / (_pos("k", k) * _pos("resistance", resistance))
