"""Microstrip electrical model: impedance, effective permittivity and the losses that heat a line.

Pure numpy, vectorised: the module-level functions take arrays (broadcast together) and
return arrays; :class:`Microstrip` is the validated single-line front end with cached results.

Models (the equation sits in the docstring of the function that computes it):

* Quasi-static Z0 and ε_eff: Hammerstad & Jensen (1980), with their strip-thickness
  correction (:func:`hj_analysis`).
* Width synthesis: the closed form quoted by Pozar §3.8 (:func:`pozar_width`) as a start,
  refined by a bracketed root search on the same analysis the line reports
  (:func:`synthesize_width`), so synthesis and analysis agree to 1e-10.
* Dispersion (optional): Kirschning & Jansen (1982) for ε_eff(f) and Jansen & Kirschning
  (1983) for Z0(f) (:func:`kj_dispersion`).
* Conductor loss: α_c = Rs·K_i·K_r/(Z0·W) with the Hammerstad current-distribution factor
  K_i and a roughness factor K_r (Hammerstad or Huray "snowball"); Rs from the resistivity,
  which rises with copper temperature (IACS).
* Dielectric loss from the loss tangent (Pozar eq. 3.198 / HJ).

Units: SI (m, Hz, Ω, Ω·m, Np/m); dB/m only in the ``*_db`` results; copper temperature in degC
at this API edge (the only place it appears).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from scipy.constants import c as C0
from scipy.constants import epsilon_0, mu_0
from .roots import brentq  # Brent (1973); scipy.optimize costs ~0.1 s to import

__all__ = [
    "MicrostripError", "Microstrip", "HurayRoughness",
    "ETA0", "NP_TO_DB", "RHO_CU_20", "ALPHA_CU",
    "copper_resistivity", "skin_depth", "surface_resistance",
    "hj_z01", "hj_eps_eff0", "hj_analysis", "kj_dispersion",
    "pozar_width", "synthesize_width",
    "current_factor", "hammerstad_roughness", "huray_roughness",
    "conductor_loss", "dielectric_loss",
]

#: Impedance of free space, Ω (√(μ0/ε0) = 376.730 Ω).
ETA0 = math.sqrt(mu_0 / epsilon_0)
#: Nepers to decibels: 20/ln 10 = 8.686 dB/Np.
NP_TO_DB = 20.0 / math.log(10.0)
#: Resistivity of annealed copper at 20 degC, Ω·m (International Annealed Copper Standard).
RHO_CU_20 = 1.7241e-8
#: Temperature coefficient of the resistivity of annealed copper at 20 degC, 1/K (IACS).
ALPHA_CU = 0.00393


class MicrostripError(ValueError):
    """Bad microstrip input; the message names the field, the value and what is expected."""


def _arr(name: str, value, unit: str, low: float = 0.0, strict: bool = True) -> np.ndarray:
    """``value`` as a float array, refused (naming the field) unless every element is finite
    and above ``low`` (at least ``low`` when not ``strict``): no NaN leaves this module."""
    try:
        x = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise MicrostripError(f"{name} = {value!r}: expected a number in {unit}") from None
    ok = np.isfinite(x) & ((x > low) if strict else (x >= low))
    if not np.all(ok):
        bad = x[~ok].ravel()[0] if x.ndim else x
        raise MicrostripError(f"{name} = {bad!r} {unit}: expected a finite value "
                              f"{'>' if strict else '>='} {low:g}")
    return x


# ======================================================================================
# Conductor
# ======================================================================================
def copper_resistivity(temperature_c, rho20: float = RHO_CU_20,
                       alpha: float = ALPHA_CU) -> np.ndarray:
    """Resistivity of copper at ``temperature_c`` (degC), Ω·m.

    ρ(T) = ρ20·[1 + α·(T − 20 °C)], ρ20 = 1.7241e-8 Ω·m, α = 0.00393 /K (International Annealed
    Copper Standard; linear, good from about −50 to 200 °C).
    """
    # ρ must stay > 0: T above 20 − 1/α (−234 °C for copper), far outside the linear range
    t = _arr("temperature_c", temperature_c, "degC", low=20.0 - 1.0 / alpha)
    return rho20 * (1.0 + alpha * (t - 20.0))


def skin_depth(frequency, rho, mu_r=1.0) -> np.ndarray:
    """Skin depth δ = √(ρ/(π·f·μ0·μr)), m (any text on fields, e.g. Pozar §1.7)."""
    rho = _arr("rho", rho, "Ω·m")
    f = _arr("frequency", frequency, "Hz")
    return np.sqrt(rho / (np.pi * f * mu_0 * _arr("mu_r", mu_r, "")))


def surface_resistance(frequency, rho, mu_r=1.0, thickness=None) -> np.ndarray:
    """Surface resistance of a conductor, Ω per square.

    Thick conductor: Rs = √(π·f·μ0·μr·ρ) = ρ/δ (Pozar eq. 1.131).  With ``thickness`` t the
    one-sided slab form Rs·Re[(1+j)·coth((1+j)·t/δ)] is used, which tends to ρ/t at low
    frequency and to Rs when t ≫ δ (within 0.5 % for t ≥ 3δ) — the surface impedance of a
    plane conductor of finite thickness fed from one face (value from memory; Ramo, Whinnery
    & Van Duzer, *Fields and Waves in Communication Electronics*).
    """
    rho = np.asarray(rho, float)
    delta = skin_depth(frequency, rho, mu_r)
    rs = rho / delta
    if thickness is None:
        return rs
    x = (1.0 + 1.0j) * _arr("thickness", thickness, "m") / delta
    # coth x = (1 + e^{-2x})/(1 - e^{-2x}); stable for large t/δ
    e2 = np.exp(-2.0 * x)
    return rs * np.real((1.0 + 1.0j) * (1.0 + e2) / (1.0 - e2))


# ======================================================================================
# Quasi-static analysis (Hammerstad & Jensen 1980)
# ======================================================================================
def hj_z01(u) -> np.ndarray:
    """Impedance of the strip in air (homogeneous medium), Ω.

    Z01(u) = (η0/2π)·ln[f(u)/u + √(1 + (2/u)²)], f(u) = 6 + (2π − 6)·exp[−(30.666/u)^0.7528],
    u = W/h.  Hammerstad & Jensen, "Accurate models for microstrip computer-aided design",
    IEEE MTT-S Digest 1980, pp. 407-409, eq. (1)-(2); better than 0.01 % for u ≤ 1, 0.03 % to
    u = 1000.
    """
    u = _arr("u", u, "(W/h)")
    fu = 6.0 + (2.0 * np.pi - 6.0) * np.exp(-(30.666 / u) ** 0.7528)
    return ETA0 / (2.0 * np.pi) * np.log(fu / u + np.sqrt(1.0 + (2.0 / u) ** 2))


def hj_eps_eff0(u, eps_r) -> np.ndarray:
    """Quasi-static effective permittivity of a zero-thickness strip.

    ε_eff = (εr+1)/2 + (εr−1)/2·(1 + 10/u)^(−a·b),
    a = 1 + ln[(u⁴ + (u/52)²)/(u⁴ + 0.432)]/49 + ln[1 + (u/18.1)³]/18.7,
    b = 0.564·[(εr − 0.9)/(εr + 3)]^0.053.
    Hammerstad & Jensen 1980, eq. (3)-(5); better than 0.2 % for εr ≤ 128, 0.01 ≤ u ≤ 100.
    """
    u = _arr("u", u, "(W/h)")
    eps_r = _arr("eps_r", eps_r, "", low=1.0, strict=False)
    a = (1.0 + np.log((u ** 4 + (u / 52.0) ** 2) / (u ** 4 + 0.432)) / 49.0
         + np.log(1.0 + (u / 18.1) ** 3) / 18.7)
    b = 0.564 * ((eps_r - 0.9) / (eps_r + 3.0)) ** 0.053
    return (eps_r + 1.0) / 2.0 + (eps_r - 1.0) / 2.0 * (1.0 + 10.0 / u) ** (-a * b)


def hj_analysis(u, eps_r, t_over_h=0.0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Quasi-static Z0 (Ω), ε_eff and the corrected width ratio u_r of a strip of thickness t.

    With t̂ = t/h (Hammerstad & Jensen 1980, eq. (6)-(9)):
    Δu1 = (t̂/π)·ln[1 + 4e/(t̂·coth²√(6.517u))], Δur = ½·(1 + sech√(εr − 1))·Δu1,
    Z0 = Z01(u + Δur)/√ε_eff(u + Δur), ε_eff = ε_eff(u + Δur)·[Z01(u + Δu1)/Z01(u + Δur)]².
    ``t_over_h = 0`` gives the zero-thickness formulas.

    Returns
    -------
    z0, eps_eff, u_r
        Arrays broadcast from the inputs.
    """
    u = _arr("u", u, "(W/h)")
    eps_r = _arr("eps_r", eps_r, "", low=1.0, strict=False)
    t = _arr("t_over_h", t_over_h, "", strict=False)
    with np.errstate(divide="ignore", invalid="ignore"):
        # 1/coth² = tanh²; written so that t -> 0 gives Δu1 -> 0 without a 0·log(∞)
        du1 = np.where(t > 0.0,
                       t / np.pi * np.log1p(4.0 * np.e * np.tanh(np.sqrt(6.517 * u)) ** 2
                                            / np.where(t > 0.0, t, 1.0)),
                       0.0)
    dur = 0.5 * (1.0 + 1.0 / np.cosh(np.sqrt(eps_r - 1.0))) * du1
    u1 = u + du1
    ur = u + dur
    e_r = hj_eps_eff0(ur, eps_r)
    z_r = hj_z01(ur)
    z0 = z_r / np.sqrt(e_r)
    eps_eff = e_r * (hj_z01(u1) / z_r) ** 2
    return z0, eps_eff, ur


# ======================================================================================
# Dispersion (Kirschning & Jansen 1982; Jansen & Kirschning 1983)
# ======================================================================================
def kj_dispersion(u, eps_r, eps_eff0, z0_0, fh_ghz_mm) -> tuple[np.ndarray, np.ndarray]:
    """Frequency-dependent ε_eff(f) and Z0(f) of microstrip.

    ε_eff(f) = εr − (εr − ε_eff(0))/(1 + P(f)), P = P1·P2·[(0.1844 + P3·P4)·fn]^1.5763,
    P1 = 0.27488 + [0.6315 + 0.525/(1 + 0.0157·fn)^20]·u − 0.065683·exp(−8.7513u),
    P2 = 0.33622·[1 − exp(−0.03442εr)], P3 = 0.0363·exp(−4.6u)·{1 − exp[−(fn/38.7)^4.97]},
    P4 = 1 + 2.751·{1 − exp[−(εr/15.916)^8]}, fn = f·h in GHz·mm.
    M. Kirschning & R. H. Jansen, "Accurate model for effective dielectric constant of
    microstrip with validity up to millimetre-wave frequencies", Electronics Letters 18(6),
    1982, pp. 272-273 (0.6 % for 0.1 ≤ u ≤ 100, 1 ≤ εr ≤ 20, h/λ0 ≤ 0.13).

    Z0(f) = Z0(0)·(R13/R14)^R17 with R1 … R17 of R. H. Jansen & M. Kirschning, "Arguments and
    an accurate model for the power-current formulation of microstrip characteristic
    impedance", AEÜ 37, 1983, pp. 108-112.

    Parameters
    ----------
    u
        Width ratio W/h (the thickness-corrected u_r when t > 0).
    eps_r, eps_eff0, z0_0
        Substrate permittivity and the quasi-static ε_eff and Z0 (Ω).
    fh_ghz_mm
        Frequency times substrate height in GHz·mm.
    """
    u = np.asarray(u, float)
    er = np.asarray(eps_r, float)
    e0 = np.asarray(eps_eff0, float)
    fn = np.asarray(fh_ghz_mm, float)
    p1 = (0.27488 + (0.6315 + 0.525 / (1.0 + 0.0157 * fn) ** 20) * u
          - 0.065683 * np.exp(-8.7513 * u))
    p2 = 0.33622 * (1.0 - np.exp(-0.03442 * er))
    p3 = 0.0363 * np.exp(-4.6 * u) * (1.0 - np.exp(-((fn / 38.7) ** 4.97)))
    p4 = 1.0 + 2.751 * (1.0 - np.exp(-((er / 15.916) ** 8)))
    pf = p1 * p2 * ((0.1844 + p3 * p4) * fn) ** 1.5763
    ef = er - (er - e0) / (1.0 + pf)

    r1 = np.minimum(0.03891 * er ** 1.4, 20.0)
    r2 = np.minimum(0.2671 * u ** 7, 20.0)
    r3 = 4.766 * np.exp(-3.228 * u ** 0.641)
    r4 = 0.016 + (0.0514 * er) ** 4.524
    r5 = (fn / 28.843) ** 12
    r6 = np.minimum(22.2 * u ** 1.92, 20.0)
    r7 = 1.206 - 0.3144 * np.exp(-r1) * (1.0 - np.exp(-r2))
    r8 = 1.0 + 1.275 * (1.0 - np.exp(-0.004625 * r3 * er ** 1.674 * (fn / 18.365) ** 2.745))
    r9 = (5.086 * r4 * r5 / (0.3838 + 0.386 * r4) * np.exp(-r6) / (1.0 + 1.2992 * r5)
          * (er - 1.0) ** 6 / (1.0 + 10.0 * (er - 1.0) ** 6))
    r10 = 0.00044 * er ** 2.136 + 0.0184
    r11 = (fn / 19.47) ** 6 / (1.0 + 0.0962 * (fn / 19.47) ** 6)
    r12 = 1.0 / (1.0 + 0.00245 * u ** 2)
    r13 = 0.9408 * ef ** r8 - 0.9603
    r14 = (0.9408 - r9) * e0 ** r8 - 0.9603
    r15 = 0.707 * r10 * (fn / 12.3) ** 1.097
    r16 = 1.0 + 0.0503 * er ** 2 * r11 * (1.0 - np.exp(-((u / 15.0) ** 6)))
    r17 = r7 * (1.0 - 1.1241 * r12 / r16 * np.exp(-0.026 * fn ** 1.15656 - r15))
    zf = np.asarray(z0_0, float) * (r13 / r14) ** r17
    return ef, zf


# ======================================================================================
# Synthesis
# ======================================================================================
def pozar_width(z0, eps_r) -> np.ndarray:
    """Closed-form W/h for a target impedance (zero thickness, no dispersion).

    A = (Z0/60)·√((εr+1)/2) + (εr−1)/(εr+1)·(0.23 + 0.11/εr), B = 377π/(2·Z0·√εr);
    W/h = 8e^A/(e^{2A} − 2) when that is < 2, else
    W/h = (2/π)·[B − 1 − ln(2B − 1) + (εr−1)/(2εr)·(ln(B − 1) + 0.39 − 0.61/εr)].
    Pozar, *Microwave Engineering*, 3rd ed., 2005, §3.8 eq. (3.197) (after Wheeler 1977 and
    Hammerstad 1975); about 1 % against the analysis.
    """
    z0 = _arr("z0", z0, "Ω")
    er = _arr("eps_r", eps_r, "", low=1.0, strict=False)
    a = z0 / 60.0 * np.sqrt((er + 1.0) / 2.0) + (er - 1.0) / (er + 1.0) * (0.23 + 0.11 / er)
    b = 377.0 * np.pi / (2.0 * z0 * np.sqrt(er))
    narrow = 8.0 * np.exp(a) / (np.exp(2.0 * a) - 2.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        wide = 2.0 / np.pi * (b - 1.0 - np.log(2.0 * b - 1.0)
                              + (er - 1.0) / (2.0 * er) * (np.log(b - 1.0) + 0.39 - 0.61 / er))
    return np.where((narrow < 2.0) & (narrow > 0.0), narrow, wide)


def synthesize_width(z0_target: float, analysis, u_start: float | None = None) -> float:
    """W/h at which ``analysis(u)`` (a scalar impedance function, decreasing in u) equals Z0.

    Brent's method on ln u, bracketed by expanding a factor of 2 around ``u_start`` (the
    closed form of :func:`pozar_width`).  Agreement with the analysis is 1e-10 relative.
    """
    u0 = 1.0 if u_start is None or not np.isfinite(u_start) or u_start <= 0 else float(u_start)

    def g(log_u: float) -> float:
        return float(analysis(math.exp(log_u))) - z0_target

    lo = hi = math.log(u0)
    for _ in range(60):
        if g(lo) > 0.0:
            break
        lo -= math.log(2.0)
    for _ in range(60):
        if g(hi) < 0.0:
            break
        hi += math.log(2.0)
    if not (g(lo) > 0.0 > g(hi)):
        raise MicrostripError(f"z0_target = {z0_target!r} Ω: no width found between W/h = "
                              f"{math.exp(lo):.3g} and {math.exp(hi):.3g}; expected an "
                              "impedance a microstrip can reach (about 5-250 Ω)")
    return math.exp(brentq(g, lo, hi, xtol=1e-13, rtol=1e-13))


# ======================================================================================
# Losses
# ======================================================================================
def current_factor(z0) -> np.ndarray:
    """Hammerstad current-distribution factor K_i = exp[−1.2·(Z0/η0)^0.7] (HJ 1980)."""
    return np.exp(-1.2 * (_arr("z0", z0, "Ω") / ETA0) ** 0.7)


def hammerstad_roughness(rms, delta) -> np.ndarray:
    """Hammerstad roughness factor K_r = 1 + (2/π)·arctan[1.4·(Δ_rms/δ)²] (saturates at 2).

    E. Hammerstad & Ø. Jensen 1980 (after Morgan 1949); Δ_rms the RMS surface roughness.
    """
    rms = _arr("rms", rms, "m", strict=False)
    return 1.0 + 2.0 / np.pi * np.arctan(1.4 * (rms / _arr("delta", delta, "m")) ** 2)


@dataclass(frozen=True)
class HurayRoughness:
    """Copper surface described as "snowballs" (spheres) on a matte base.

    Parameters
    ----------
    radius
        Sphere radius r_i per size class, m (one value or a tuple).
    area_ratio
        f_i = N_i·4πr_i²/A_flat per class: total sphere surface over the flat area
        (same length as ``radius``).
    matte_ratio
        A_matte/A_flat, area of the base surface over the flat area (>= 1; 1 = flat base).
    """

    radius: tuple[float, ...] | float
    area_ratio: tuple[float, ...] | float
    matte_ratio: float = 1.0

    def __post_init__(self) -> None:
        r = tuple(float(x) for x in np.atleast_1d(self.radius))
        f = tuple(float(x) for x in np.atleast_1d(self.area_ratio))
        if len(r) != len(f) or not r:
            raise MicrostripError(f"area_ratio = {self.area_ratio!r}: expected one value per "
                                  f"radius ({len(r)} radii)")
        for i, x in enumerate(r):
            if not (math.isfinite(x) and x > 0.0):
                raise MicrostripError(f"radius[{i}] = {x!r} m: expected a positive radius")
        for i, x in enumerate(f):
            if not (math.isfinite(x) and x >= 0.0):
                raise MicrostripError(f"area_ratio[{i}] = {x!r}: expected a ratio >= 0")
        if not (math.isfinite(self.matte_ratio) and self.matte_ratio >= 1.0):
            raise MicrostripError(f"matte_ratio = {self.matte_ratio!r}: expected A_matte/A_flat "
                                  ">= 1")
        object.__setattr__(self, "radius", r)
        object.__setattr__(self, "area_ratio", f)
        object.__setattr__(self, "matte_ratio", float(self.matte_ratio))

    def factor(self, delta) -> np.ndarray:
        """K_H(δ); see :func:`huray_roughness`."""
        return huray_roughness(delta, self.radius, self.area_ratio, self.matte_ratio)


def huray_roughness(delta, radius, area_ratio, matte_ratio: float = 1.0) -> np.ndarray:
    """Huray "snowball" roughness factor.

    K_H = A_matte/A_flat + (3/2)·Σ_i f_i/[1 + δ/r_i + δ²/(2r_i²)],  f_i = N_i·4πr_i²/A_flat.
    P. G. Huray et al., "Impact of copper surface texture on loss: a model that works",
    DesignCon 2010; causal form: J. E. Bracken, DesignCon 2012.  → A_matte/A_flat at low
    frequency, A_matte/A_flat + 1.5·Σf_i at high frequency.
    """
    d = np.asarray(delta, float)[..., None]
    r = np.atleast_1d(np.asarray(radius, float))
    f = np.atleast_1d(np.asarray(area_ratio, float))
    return matte_ratio + 1.5 * np.sum(f / (1.0 + d / r + d ** 2 / (2.0 * r ** 2)), axis=-1)


def conductor_loss(z0, width, rs, k_rough=1.0) -> np.ndarray:
    """Conductor attenuation α_c = Rs·K_i·K_r/(Z0·W), Np/m.

    Rs/(Z0·W): Pozar §3.8 eq. (3.199) (strip resistance per length Rs/W, ground plane included
    through the Hammerstad current-distribution factor K_i = exp[−1.2(Z0/η0)^0.7], Hammerstad &
    Jensen 1980); K_r roughness factor.
    """
    z0 = _arr("z0", z0, "Ω")
    return (_arr("rs", rs, "Ω", strict=False) * current_factor(z0)
            * _arr("k_rough", k_rough, "", low=1.0, strict=False)
            / (z0 * _arr("width", width, "m")))


def dielectric_loss(frequency, eps_r, eps_eff, tan_delta) -> np.ndarray:
    """Dielectric attenuation α_d = k0·εr·(ε_eff − 1)·tanδ/[2·√ε_eff·(εr − 1)], Np/m.

    Pozar, *Microwave Engineering*, 3rd ed., §3.8 eq. (3.198); k0 = 2πf/c.  The filling factor
    (ε_eff − 1)/(εr − 1) weights the loss by the share of the field inside the laminate.
    """
    er = _arr("eps_r", eps_r, "", low=1.0, strict=False)
    ee = _arr("eps_eff", eps_eff, "", low=1.0, strict=False)
    if np.any(ee > er * (1 + 1e-12)):
        raise MicrostripError(f"eps_eff = {eps_eff!r}: expected at most eps_r = {eps_r!r}")
    k0 = 2.0 * np.pi * _arr("frequency", frequency, "Hz") / C0
    tan_delta = _arr("tan_delta", tan_delta, "", strict=False)
    # filling factor (ε_eff − 1)/(εr − 1); all the field in the dielectric (1) when εr = 1
    gap = er - 1.0
    fill = np.where(gap > 0, (ee - 1.0) / np.where(gap > 0, gap, 1.0), 1.0)
    return k0 * er * fill * tan_delta / (2.0 * np.sqrt(ee))


# ======================================================================================
# Front end
# ======================================================================================
def _positive(name: str, value, unit: str, allow_zero: bool = False) -> float:
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise MicrostripError(f"{name} = {value!r}: expected a number in {unit}") from None
    ok = math.isfinite(x) and (x >= 0.0 if allow_zero else x > 0.0)
    if not ok:
        what = ">= 0" if allow_zero else "> 0"
        raise MicrostripError(f"{name} = {value!r} {unit}: expected a finite value {what}")
    return x


@dataclass(frozen=True)
class Microstrip:
    """One microstrip line: geometry, laminate, copper, frequency; cached RF figures.

    Give exactly one of ``width`` and ``z0_target`` (the width is then synthesised so that
    :attr:`z0` equals the target, with the same model options).

    Parameters
    ----------
    height
        Laminate thickness between strip and ground plane h, m.
    eps_r
        Relative permittivity of the laminate (1 < εr <= 128).
    width
        Strip width W, m.
    z0_target
        Target characteristic impedance, Ω (instead of ``width``).
    tan_delta
        Loss tangent of the laminate (>= 0).
    thickness
        Copper thickness t, m (0 = zero-thickness strip; its surface resistance then uses
        the thick-conductor form).
    frequency
        Frequency, Hz.
    roughness
        RMS roughness Δ_rms, m, for the Hammerstad factor (0 = smooth), or a
        :class:`HurayRoughness`.
    dispersion
        True: Kirschning & Jansen ε_eff(f), Z0(f); False: quasi-static values.
    rho20
        Copper resistivity at 20 degC, Ω·m.
    alpha_rho
        Temperature coefficient of the resistivity, 1/K.
    copper_temperature
        Copper temperature, degC, at which the conductor loss is evaluated.
    """

    height: float
    eps_r: float
    width: float | None = None
    z0_target: float | None = None
    tan_delta: float = 0.0
    thickness: float = 35e-6
    frequency: float = 1e9
    roughness: float | HurayRoughness = 0.0
    dispersion: bool = False
    rho20: float = RHO_CU_20
    alpha_rho: float = ALPHA_CU
    copper_temperature: float = 20.0
    _w: float = field(default=0.0, init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        h = _positive("height", self.height, "m")
        er = _positive("eps_r", self.eps_r, "(relative permittivity)")
        if not 1.0 < er <= 128.0:
            raise MicrostripError(f"eps_r = {self.eps_r!r}: expected 1 < eps_r <= 128 "
                                  "(range of the Hammerstad-Jensen fit)")
        object.__setattr__(self, "height", h)
        object.__setattr__(self, "eps_r", er)
        object.__setattr__(self, "tan_delta", _positive("tan_delta", self.tan_delta, "",
                                                        allow_zero=True))
        object.__setattr__(self, "thickness", _positive("thickness", self.thickness, "m",
                                                        allow_zero=True))
        object.__setattr__(self, "frequency", _positive("frequency", self.frequency, "Hz"))
        object.__setattr__(self, "rho20", _positive("rho20", self.rho20, "Ω·m"))
        a = float(self.alpha_rho)
        if not math.isfinite(a):
            raise MicrostripError(f"alpha_rho = {self.alpha_rho!r}: expected a finite 1/K value")
        tc = float(self.copper_temperature)
        if not (math.isfinite(tc) and 1.0 + a * (tc - 20.0) > 0.0 and tc > -273.15):
            raise MicrostripError(f"copper_temperature = {self.copper_temperature!r} degC: "
                                  "expected a temperature giving a positive resistivity")
        object.__setattr__(self, "alpha_rho", a)
        object.__setattr__(self, "copper_temperature", tc)
        if not isinstance(self.roughness, HurayRoughness):
            object.__setattr__(self, "roughness", _positive("roughness", self.roughness, "m",
                                                            allow_zero=True))
        object.__setattr__(self, "dispersion", bool(self.dispersion))
        if (self.width is None) == (self.z0_target is None):
            raise MicrostripError(f"width = {self.width!r}, z0_target = {self.z0_target!r}: "
                                  "expected exactly one of them")
        if self.width is not None:
            w = _positive("width", self.width, "m")
            if not 0.01 <= w / h <= 1000.0:
                raise MicrostripError(f"width = {self.width!r} m: W/h = {w / h:.4g}, expected "
                                      "0.01 <= W/h <= 1000")
            object.__setattr__(self, "width", w)
        else:
            z = _positive("z0_target", self.z0_target, "Ω")
            object.__setattr__(self, "z0_target", z)
            u = synthesize_width(z, lambda u: self._analyse(u)[0],
                                 float(pozar_width(z, er)))
            w = u * h
        object.__setattr__(self, "_w", w)

    # -- electrical ----------------------------------------------------------------------
    def _analyse(self, u: float) -> tuple[float, float, float]:
        """(Z0, ε_eff, u_r) at width ratio u with this line's options."""
        z0, ee, ur = hj_analysis(u, self.eps_r, self.thickness / self.height)
        if self.dispersion:
            ee_f, z_f = kj_dispersion(ur, self.eps_r, ee, z0,
                                      self.frequency * 1e-9 * self.height * 1e3)
            return float(z_f), float(ee_f), float(ur)
        return float(z0), float(ee), float(ur)

    @property
    def w(self) -> float:
        """Strip width, m (given or synthesised)."""
        return self._w

    @property
    def u(self) -> float:
        """W/h."""
        return self._w / self.height

    @cached_property
    def _figures(self) -> tuple[float, float, float]:
        return self._analyse(self.u)

    @property
    def z0(self) -> float:
        """Characteristic impedance, Ω."""
        return self._figures[0]

    @property
    def eps_eff(self) -> float:
        """Effective permittivity."""
        return self._figures[1]

    @property
    def width_corrected(self) -> float:
        """Strip width with the HJ thickness correction W·u_r/u, m."""
        return self._figures[2] * self.height

    @property
    def wavelength(self) -> float:
        """Guided wavelength λ = c/(f·√ε_eff), m."""
        return C0 / (self.frequency * math.sqrt(self.eps_eff))

    def length_for(self, degrees: float) -> float:
        """Physical length of ``degrees`` of electrical length, m."""
        return self.wavelength * float(degrees) / 360.0

    # -- conductor -----------------------------------------------------------------------
    @cached_property
    def rho(self) -> float:
        """Copper resistivity at :attr:`copper_temperature`, Ω·m."""
        return float(copper_resistivity(self.copper_temperature, self.rho20, self.alpha_rho))

    @property
    def skin_depth(self) -> float:
        """Skin depth in the copper, m."""
        return float(skin_depth(self.frequency, self.rho))

    @property
    def rs(self) -> float:
        """Surface resistance, Ω/sq (finite-thickness form when ``thickness`` > 0)."""
        t = self.thickness if self.thickness > 0.0 else None
        return float(surface_resistance(self.frequency, self.rho, thickness=t))

    @property
    def k_rough(self) -> float:
        """Roughness factor of the conductor loss."""
        if isinstance(self.roughness, HurayRoughness):
            return float(self.roughness.factor(self.skin_depth))
        return float(hammerstad_roughness(self.roughness, self.skin_depth))

    @property
    def k_current(self) -> float:
        """Current-distribution factor K_i."""
        return float(current_factor(self.z0))

    # -- losses --------------------------------------------------------------------------
    @cached_property
    def alpha_c(self) -> float:
        """Conductor attenuation, Np/m."""
        return float(conductor_loss(self.z0, self._w, self.rs, self.k_rough))

    @cached_property
    def alpha_d(self) -> float:
        """Dielectric attenuation, Np/m."""
        return float(dielectric_loss(self.frequency, self.eps_r, self.eps_eff, self.tan_delta))

    @property
    def alpha(self) -> float:
        """Total attenuation α = α_c + α_d, Np/m."""
        return self.alpha_c + self.alpha_d

    @property
    def alpha_c_db(self) -> float:
        """Conductor attenuation, dB/m."""
        return self.alpha_c * NP_TO_DB

    @property
    def alpha_d_db(self) -> float:
        """Dielectric attenuation, dB/m."""
        return self.alpha_d * NP_TO_DB

    @property
    def alpha_db(self) -> float:
        """Total attenuation, dB/m."""
        return self.alpha * NP_TO_DB

    @property
    def conductor_share(self) -> float:
        """α_c/α: fraction of the line heat released in the copper (rest in the laminate)."""
        a = self.alpha
        return self.alpha_c / a if a > 0.0 else 1.0

    def heat_per_length(self, power: float) -> float:
        """Heat released per metre where the travelling power is ``power`` W: q' = 2α·P, W/m."""
        return 2.0 * self.alpha * float(power)

    def loss_fraction(self, length: float) -> float:
        """Share of the input power dissipated on a matched line of ``length`` m: 1 − e^(−2αL)."""
        return float(-np.expm1(-2.0 * self.alpha * _positive("length", length, "m")))

    def at_temperature(self, copper_temperature: float) -> "Microstrip":
        """The same line with its copper at ``copper_temperature`` degC (width kept)."""
        from dataclasses import replace
        return replace(self, width=self._w, z0_target=None,
                       copper_temperature=copper_temperature)

    def heat_temp_coeff(self, length: float | None = None, step: float = 1.0) -> float:
        """Relative change of the line heat with copper temperature, 1/K.

        c = (1/Q)·dQ/dT at :attr:`copper_temperature`, with Q = 1 − e^(−2αL) (or α when
        ``length`` is None), α_c ∝ Rs·K_r, Rs ∝ √ρ in the skin-effect regime (≈ 0.2 %/K for
        copper) and the loss tangent independent of temperature.  For
        ``ThermalNetwork.add_input(temp_coeff=c, t_ref=copper_temperature)``.  Central
        difference of ±``step`` K on the full model.
        """
        hot = self.at_temperature(self.copper_temperature + step)
        cold = self.at_temperature(self.copper_temperature - step)
        if length is None:
            q0, qp, qm = self.alpha, hot.alpha, cold.alpha
        else:
            q0, qp, qm = (s.loss_fraction(length) for s in (self, hot, cold))
        return (qp - qm) / (2.0 * step * q0) if q0 > 0.0 else 0.0

    def summary(self) -> dict[str, float]:
        """RF figures behind the line heat, SI units (dB/m for the ``*_db`` entries)."""
        return {"width_m": self._w, "z0_ohm": self.z0, "eps_eff": self.eps_eff,
                "alpha_c_db_per_m": self.alpha_c_db, "alpha_d_db_per_m": self.alpha_d_db,
                "alpha_db_per_m": self.alpha_db, "skin_depth_m": self.skin_depth,
                "rs_ohm": self.rs, "k_rough": self.k_rough}
