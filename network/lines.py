"""Heat along an RF line and the thermal network that carries it to the ground plane.

An :class:`RFLine` is a microstrip (:class:`~pulsetherm.network.microstrip.Microstrip`) of a
given length on a laminate, optionally mismatched at its load and carrying point heaters
(chip resistors, terminations).  :meth:`RFLine.build` writes it into a
:class:`~pulsetherm.network.model.ThermalNetwork`:

* the line is cut into segments along x (graded finer near the point heaters); each segment
  has a copper node ``<prefix>.x[k]`` at its centre and ``sublayers`` laminate nodes
  ``<prefix>.x[k].z[j]`` at the centres of equal sub-layers of the laminate below it;
* copper nodes are joined along x through the trace copper (k·W·t), laminate nodes through
  the in-plane conductivity of their sub-layer;
* under each segment heat crosses the laminate to ``ground`` (the ground-plane node of the
  board or a boundary) through a trapezoid whose top is the strip width W and whose bottom
  width is chosen so that its conductance equals the exact two-dimensional conductance of a
  strip on a slab (:func:`strip_shape_factor`: fringing and lateral spreading in the
  laminate, anisotropy included);
* heat capacities: trace copper on the copper node, each laminate sub-layer's trapezoid on its
  node;
* the RF heat is one input ``<prefix>.rf``: conductor loss on the copper nodes, dielectric
  loss over the laminate sub-layers in proportion to their thermal resistance, with weights from the exact integral of the
  local loss over each segment (:func:`segment_heat`), so that the weights times the line's
  total heat reproduce the loss profile; the input's power is the line's RF (forward) power
  times :attr:`RFLine.loss_fraction` (:meth:`RFLine.heat_waveform`);
* dielectric heat: in a laminate of high εr the field under and beside the strip is the
  gradient of the same potential φ (strip 1, ground 0, adiabatic top) as the temperature
  field, so the loss density is ∝ |∇φ|²; since ∇·(φ²∇φ) = 2φ|∇φ|², the loss-weighted mean of
  φ is exactly ½ in any cross-section: the dielectric heat raises the strip by half as much as
  the same heat put at the strip, over the same two-dimensional width (the 1-D volume-source
  "half" of Bahl & Gupta 1979, extended to the fringing field; derivation ours);
* each point heater is its own input ``<prefix>.<name>`` on the copper nodes under its
  footprint, or on its own node joined to them through a given resistance.

Units: SI inside; temperatures degC at the API edge (limits, reports).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any, Mapping

import numpy as np
from scipy.constants import c as C0
from scipy.special import ellipk, ellipkm1

from .microstrip import Microstrip

__all__ = [
    "LineError", "PointHeater", "RFLine", "BuiltLine", "LineReport",
    "strip_shape_factor", "segment_heat", "bahl_gupta_rise", "graded_edges",
]

KELVIN_OFFSET = 273.15
#: Most segments the automatic grading puts across one heater footprint (the laminate
#: thickness sets the fine step, so a thin laminate asked for thousands: a 2 mm termination
#: on a 2 um laminate gave 1044 segments and a 49 s run, on 1 um a 2046-segment network).
#: Heat enters a footprint evenly, so the copper is flat inside it but near its ends.
#: Measured on the termination example with thin laminates (common practice, no source):
#: 10 um / 5 um / 2 um laminate, 237 / 440 / 1044 -> 97 segments, hottest +0.25 / +0.36 /
#: +0.13 K on rises of 126 / 134 / 631 K (<= 0.3 %); 128 steps: within 0.12 %, 163 segments.
FOOTPRINT_SEGMENTS = 64


class LineError(ValueError):
    """Bad line input; the message names the field, the value and what is expected."""


def _num(name: str, value, unit: str, low: float | None = 0.0, strict: bool = True) -> float:
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise LineError(f"{name} = {value!r}: expected a number in {unit}") from None
    if not math.isfinite(x) or (low is not None and (x <= low if strict else x < low)):
        rel = ">" if strict else ">="
        want = f"a finite value {rel} {low:g} {unit}" if low is not None else f"a finite {unit}"
        raise LineError(f"{name} = {value!r}: expected {want}")
    return x


# ======================================================================================
# Physics helpers
# ======================================================================================
def strip_shape_factor(u) -> np.ndarray:
    """Conductance per unit length of a strip on a slab, in units of k (dimensionless).

    A strip of width W lies on a laminate of thickness h (u = W/h) over an isothermal ground
    plane; the rest of the top surface is adiabatic and the laminate extends far to both
    sides.  Mirroring across the adiabatic top gives a zero-thickness strip centred between
    two planes 2h apart, whose exact conformal-mapping solution (Cohn's stripline, 1954) gives

        S = G'/k = 2·K(k')/K(k),  k = sech(πu/4),  k' = tanh(πu/4),

    K the complete elliptic integral of the first kind.  S → u + 4·ln2/π = u + 0.8825 for wide
    strips (the fringing adds 0.44h per edge), S → π/ln(16/(πu)) for narrow ones.
    S. B. Cohn, "Characteristic impedance of the shielded-strip transmission line", IRE Trans.
    MTT 2(2), 1954 (the electrostatic–thermal analogy: common practice).
    """
    u = np.asarray(u, dtype=float)
    if not np.all(np.isfinite(u) & (u > 0)):
        bad = u[~(np.isfinite(u) & (u > 0))].ravel()[0] if u.ndim else u
        raise LineError(f"u = {bad!r}: expected a finite width-to-height ratio W/h > 0")
    k = 1.0 / np.cosh(np.pi * u / 4.0)
    m = k * k
    # K(k') with k'^2 = 1 - m: ellipkm1(p) = K(1 - p) keeps precision for wide strips
    return 2.0 * ellipkm1(m) / ellipk(m)


def thermal_width(width: float, height: float, k_z: float, k_xy: float) -> float:
    """Width W_th with G' = k_z·W_th/h: the two-dimensional conductance per unit length of a
    strip on an anisotropic laminate (through-plane k_z, in-plane k_xy), m.

    Stretching y by √(k_z/k_xy) makes the laminate isotropic with conductivity √(k_xy·k_z)
    (Carslaw & Jaeger 1959, §1.17), so G' = √(k_xy·k_z)·S(u·√(k_z/k_xy)).
    """
    width, height = _num("width", width, "m"), _num("height", height, "m")
    k_z, k_xy = _num("k_z", k_z, "W/(m·K)"), _num("k_xy", k_xy, "W/(m·K)")
    r = math.sqrt(k_z / k_xy)
    return height * float(strip_shape_factor(width / height * r)) / r


def _trapezoid_bottom(w_top: float, w_th: float) -> float:
    """Bottom width b of a linear taper of top width w_top whose 1-D conductance equals
    that of a slab of width w_th: h·ln(b/w)/(b − w) = h/w_th."""
    target = w_top / w_th  # ln(r)/(r − 1) with r = b/w
    if target >= 1.0 - 1e-12:
        return w_top
    lo, hi = 1.0 + 1e-12, 2.0
    while math.log(hi) / (hi - 1.0) > target:
        hi *= 2.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if math.log(mid) / (mid - 1.0) > target:
            lo = mid
        else:
            hi = mid
        if hi - lo < 1e-14 * hi:
            break
    return w_top * 0.5 * (lo + hi)


def _taper_conductance(wa: np.ndarray, wb: np.ndarray, dz: float) -> np.ndarray:
    """1-D conductance (per unit length along the line, per unit k) of a layer of thickness
    dz whose width tapers linearly from wa to wb: (wb − wa)/(dz·ln(wb/wa))."""
    ratio = wb / wa
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.where(np.abs(ratio - 1.0) < 1e-9, 0.5 * (wa + wb) / dz,
                     (wb - wa) / (dz * np.log(ratio)))
    return g


def segment_heat(edges: np.ndarray, alpha_c: float, alpha_d: float, beta: float = 0.0,
                 gamma_load: complex = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """Exact heat released in each segment per watt of forward power at the line input.

    Forward wave |a(x)|² = e^(−2αx); reflected |b(x)|² = |Γ_L|²·e^(−2α(2L−x)); cross term
    Re[a·b*] = |Γ_L|·e^(−2αL)·cos(φ_L − 2β(L − x)).  Conductor loss follows |I|² (∝ F + R − 2X),
    dielectric loss |V|² (∝ F + R + 2X), each times 2α_c or 2α_d (low-loss line, real Z0;
    Pozar §2.7 for the standing wave, §3.8 for α).  Integrated in closed form over each
    segment [x_k, x_k+1], so on a matched line Σ = 1 − e^(−2αL) exactly.

    Parameters
    ----------
    edges
        Segment edges from 0 to L, m, shape (n+1,).
    alpha_c, alpha_d
        Conductor and dielectric attenuation, Np/m.
    beta
        Phase constant 2π√ε_eff·f/c, rad/m (only used with a reflection).
    gamma_load
        Complex load reflection coefficient Γ_L (|Γ_L| <= 1).

    Returns
    -------
    q_c, q_d
        Conductor and dielectric heat per segment, W per W of forward input, shapes (n,).
    """
    x = np.asarray(edges, dtype=float)
    a, b = x[:-1], x[1:]
    L = float(x[-1])
    alpha = alpha_c + alpha_d
    dx = b - a
    two_a = 2.0 * alpha
    if two_a > 0.0:
        span = -np.expm1(-two_a * dx) / two_a  # ∫_a^b e^{-2α(x-a)} dx
    else:
        span = dx
    i_f = np.exp(-two_a * a) * span
    g = complex(gamma_load)
    mag, phi = abs(g), math.atan2(g.imag, g.real)
    if mag > 0.0:
        i_r = mag ** 2 * np.exp(-two_a * (2.0 * L - b)) * span
        if beta > 0.0:
            i_x = mag * math.exp(-two_a * L) * (np.sin(phi - 2.0 * beta * (L - b))
                                                - np.sin(phi - 2.0 * beta * (L - a))) / (2.0 * beta)
        else:
            i_x = mag * math.exp(-two_a * L) * math.cos(phi) * dx
    else:
        i_r = np.zeros_like(dx)
        i_x = np.zeros_like(dx)
    q_c = 2.0 * alpha_c * (i_f + i_r - 2.0 * i_x)
    q_d = 2.0 * alpha_d * (i_f + i_r + 2.0 * i_x)
    return q_c, q_d


def bahl_gupta_rise(line: Microstrip, k: float, power: float = 1.0) -> float:
    """One-dimensional temperature rise of a long, matched line (parallel-plate bound), K.

    ΔT = P·(0.2303·h/K)·[α_c/W_e′ + α_d/(2·W_e(f))], α in dB/m,
    W_e′ = W + (t/π)·(1 + ln(2h/t)), W_e(f) = W + (W_eff(0) − W)/(1 + f/f_p),
    W_eff(0) = η0·h/(Z0·√ε_eff), f_p = Z0/(2μ0h).
    I. J. Bahl & K. C. Gupta, "Average power-handling capability of microstrip lines", IEE J.
    Microwaves, Optics & Acoustics 3(1), 1979 (exact forms of the widths: physics brief §2,
    from memory).
    """
    from scipy.constants import mu_0

    from .microstrip import ETA0
    h, w, t = line.height, line.w, line.thickness
    we1 = w + (t / math.pi) * (1.0 + math.log(2.0 * h / t)) if t > 0 else w
    weff0 = ETA0 * h / (line.z0 * math.sqrt(line.eps_eff))
    fp = line.z0 / (2.0 * mu_0 * h)
    wef = w + (weff0 - w) / (1.0 + line.frequency / fp)
    return power * 0.2303 * h / k * (line.alpha_c_db / we1 + line.alpha_d_db / (2.0 * wef))


def graded_edges(length: float, max_step: float, fine: list[tuple[float, float, float]],
                 breaks: list[float] = (), growth: float = 1.25) -> np.ndarray:
    """Segment edges on [0, length], fine near given zones, growing geometrically away.

    ``fine`` holds (start, end, step) zones: inside a zone the step is at most ``step``; at a
    distance d outside it the wanted step is s(x) = step + (growth − 1)·d, never more than
    ``max_step``.  ``breaks`` and the zone ends are always edges.  Between two such marks the
    edges are equally spaced in N(x) = ∫dx/s(x), with ⌈N⌉ segments, so each step is at most
    s(x) and neighbouring steps differ by about the factor ``growth``.
    """
    g = growth - 1.0
    zones = [(max(0.0, a), min(length, b), s) for a, b, s in fine]

    def size(x):
        x = np.asarray(x, dtype=float)
        s = np.full(x.shape, float(max_step))
        for a, b, st in zones:
            d = np.maximum(np.maximum(a - x, 0.0), x - b)
            s = np.minimum(s, st + g * d)
        return s

    pts = {0.0, float(length)}
    for a, b, _ in zones:
        pts.update((a, b))
    pts.update(float(p) for p in breaks if 0.0 < p < length)
    marks = sorted(pts)
    edges = [0.0]
    for a, b in zip(marks[:-1], marks[1:]):
        if b - a <= 1e-12 * length:
            continue
        # sample N(x) finely (steps of s/8: s changes by < 4 % over one), then invert it
        xs = [a]
        x = a
        while x < b:
            x = min(b, x + float(size(x)) / (8.0 * growth))
            xs.append(x)
        xs = np.array(xs)
        dens = 1.0 / size(xs)
        N = np.concatenate([[0.0], np.cumsum(0.5 * (dens[1:] + dens[:-1]) * np.diff(xs))])
        n = max(1, int(math.ceil(N[-1] - 1e-6)))
        edges.extend(np.interp(np.linspace(0.0, N[-1], n + 1)[1:-1], N, xs).tolist())
        edges.append(b)
    return np.array(edges)


# ======================================================================================
# Inputs
# ======================================================================================
@dataclass(frozen=True)
class PointHeater:
    """A localised heat source on the line (chip resistor, termination, bond, ...).

    Parameters
    ----------
    name
        Input name (the network input is ``<prefix>.<name>``).
    position
        Centre of the footprint along the line, m from the start.
    length
        Footprint length along the line, m (0 = a point: the finest segment takes it).
    resistance
        K/W from the part's own node ``<prefix>.<name>`` to the line copper under its
        footprint (the part's body and solder joints); None = heat enters the line copper
        directly.
    capacity
        Heat capacity of the part's own node, J/K (with ``resistance`` only).
    """

    name: str
    position: float
    length: float = 0.0
    resistance: float | None = None
    capacity: float = 0.0

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name.strip() or "." in self.name:
            raise LineError(f"heater name = {self.name!r}: expected a non-empty name "
                            "without dots")
        object.__setattr__(self, "position",
                           _num(f"heater {self.name!r}: position", self.position, "m", 0.0,
                                strict=False))
        object.__setattr__(self, "length",
                           _num(f"heater {self.name!r}: length", self.length, "m", 0.0,
                                strict=False))
        if self.resistance is not None:
            object.__setattr__(self, "resistance",
                               _num(f"heater {self.name!r}: resistance", self.resistance, "K/W"))
        object.__setattr__(self, "capacity",
                           _num(f"heater {self.name!r}: capacity", self.capacity, "J/K", 0.0,
                                strict=False))
        if self.capacity > 0.0 and self.resistance is None:
            raise LineError(f"heater {self.name!r}: capacity = {self.capacity!r} J/K needs a "
                            "resistance (K/W) to its own node; expected resistance")


def _material(name: str, obj) -> tuple[float, float, float, float | None]:
    """(k_z, k_xy, ρc, t_max degC) from a Material-like object or a mapping."""
    get = obj.get if isinstance(obj, Mapping) else (lambda key, d=None: getattr(obj, key, d))
    # a missing field reads as None and is refused by _num, naming it
    k = _num(f"{name}.k", get("k"), "W/(m·K)")
    kxy = get("k_inplane", None)
    kxy = k if kxy is None else _num(f"{name}.k_inplane", kxy, "W/(m·K)")
    rho = _num(f"{name}.rho", get("rho"), "kg/m³")
    c = _num(f"{name}.c", get("c"), "J/(kg·K)")
    tmax = get("t_max_K", None)
    return k, kxy, rho * c, (None if tmax is None else float(tmax) - KELVIN_OFFSET)


#: Board copper when none is given: k 390 W/(m·K) (common practice for board copper, value
#: from memory), ρ 8933 kg/m³, c 385 J/(kg·K) (Incropera et al., Table A.1, pure copper).
DEFAULT_COPPER = {"k": 390.0, "k_inplane": 390.0, "rho": 8933.0, "c": 385.0}


@dataclass(frozen=True)
class RFLine:
    """A microstrip line as a heat source and a thermal network.

    Parameters
    ----------
    microstrip
        The line's cross-section and RF figures (width, laminate height, thickness,
        frequency).  A zero copper thickness is refused here (the trace copper conducts the
        heat along the line).
    length
        Line length, m.
    laminate
        Laminate material: an object or mapping with ``k`` (through-plane), ``k_inplane``,
        ``rho``, ``c`` and optionally ``t_max_K`` (e.g. a
        :class:`~pulsetherm.network.materials.Material`).
    copper
        Trace copper material (same fields); board copper by default.
    gamma_load
        Complex reflection coefficient of the load at the far end (0 = matched).
    heaters
        Point heaters along the line.
    sublayers
        Laminate nodes per segment (>= 1; 3 by default).
    max_segment
        Largest segment length, m (default: L/24, and λ_g/16 on a mismatched line).
    fine_segment
        Segment length at point heaters, m (default: the smallest of a quarter of the
        copper's spreading length :attr:`fin_length`, the laminate thickness and
        ``max_segment``; at most half the heater's footprint and, by default, at least
        1/:data:`FOOTPRINT_SEGMENTS` of it).
    growth
        Grading ratio of the segment lengths away from point heaters (1 < growth <= 2).
    limit
        Temperature limit of the line, degC (default: the laminate's ``t_max_K``).
    """

    microstrip: Microstrip
    length: float
    laminate: Any
    copper: Any = None
    gamma_load: complex = 0.0
    heaters: tuple[PointHeater, ...] = ()
    sublayers: int = 3
    max_segment: float | None = None
    fine_segment: float | None = None
    growth: float = 1.25
    limit: float | None = None
    _props: tuple = field(default=(), init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        if not isinstance(self.microstrip, Microstrip):
            raise LineError(f"microstrip = {self.microstrip!r}: expected a Microstrip")
        if self.microstrip.thickness <= 0.0:
            raise LineError("microstrip.thickness = 0: expected the copper thickness (m) > 0; "
                            "the trace copper carries heat along the line")
        L = _num("length", self.length, "m")
        object.__setattr__(self, "length", L)
        lam = _material("laminate", self.laminate)
        cu = _material("copper", DEFAULT_COPPER if self.copper is None else self.copper)
        object.__setattr__(self, "_props", (lam, cu))
        try:
            g = complex(self.gamma_load)
        except (TypeError, ValueError):
            raise LineError(f"gamma_load = {self.gamma_load!r}: expected a complex reflection "
                            "coefficient with |Γ| <= 1") from None
        if not (math.isfinite(g.real) and math.isfinite(g.imag) and abs(g) <= 1.0):
            raise LineError(f"gamma_load = {self.gamma_load!r}: expected a complex reflection "
                            "coefficient with |Γ| <= 1")
        object.__setattr__(self, "gamma_load", g)
        heaters = tuple(self.heaters)
        names = set()
        for hp in heaters:
            if not isinstance(hp, PointHeater):
                raise LineError(f"heaters: {hp!r}: expected PointHeater entries")
            if hp.name in names or hp.name == "rf":
                raise LineError(f"heaters: name {hp.name!r} used twice (or 'rf', the line's own "
                                "input); expected unique names")
            names.add(hp.name)
            if hp.position - hp.length / 2 < -1e-12 * L or hp.position + hp.length / 2 > L * (1 + 1e-12):
                raise LineError(f"heater {hp.name!r}: footprint {hp.position - hp.length / 2:.4g}"
                                f"..{hp.position + hp.length / 2:.4g} m: expected it within the "
                                f"line, 0..{L:.4g} m")
        object.__setattr__(self, "heaters", heaters)
        n = self.sublayers
        if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or not 1 <= n <= 20:
            raise LineError(f"sublayers = {n!r}: expected a whole number from 1 to 20")
        object.__setattr__(self, "sublayers", int(n))
        if self.max_segment is not None:
            object.__setattr__(self, "max_segment", _num("max_segment", self.max_segment, "m"))
        if self.fine_segment is not None:
            object.__setattr__(self, "fine_segment",
                               _num("fine_segment", self.fine_segment, "m"))
        gr = _num("growth", self.growth, "")
        if not 1.0 < gr <= 2.0:
            raise LineError(f"growth = {self.growth!r}: expected 1 < growth <= 2")
        object.__setattr__(self, "growth", gr)
        if self.limit is not None:
            object.__setattr__(self, "limit", _num("limit", self.limit, "degC", -KELVIN_OFFSET))

    # -- materials and cross-section ------------------------------------------------------
    @property
    def k_laminate(self) -> tuple[float, float]:
        """(through-plane, in-plane) laminate conductivity, W/(m·K)."""
        return self._props[0][0], self._props[0][1]

    @cached_property
    def thermal_width(self) -> float:
        """Width W_th of the laminate conductance under the strip, G' = k_z·W_th/h, m."""
        kz, kxy = self.k_laminate
        return thermal_width(self.microstrip.w, self.microstrip.height, kz, kxy)

    @property
    def conductance_per_length(self) -> float:
        """Strip to ground-plane conductance per unit length, W/(m·K)."""
        return self.k_laminate[0] * self.thermal_width / self.microstrip.height

    @property
    def fin_length(self) -> float:
        """Decay length √(k_cu·W·t/G') of heat spreading along the trace copper, m."""
        ms = self.microstrip
        kcu = self._props[1][1]
        return math.sqrt(kcu * ms.w * ms.thickness / self.conductance_per_length)

    @property
    def limit_c(self) -> float | None:
        """Temperature limit, degC (given, or the laminate's ``t_max_K``)."""
        return self.limit if self.limit is not None else self._props[0][3]

    # -- RF heat --------------------------------------------------------------------------
    @property
    def beta(self) -> float:
        """Phase constant, rad/m."""
        ms = self.microstrip
        return 2.0 * math.pi * ms.frequency * math.sqrt(ms.eps_eff) / C0

    @cached_property
    def edges(self) -> np.ndarray:
        """Segment edges along the line, m, shape (n+1,)."""
        L = self.length
        step = self.max_segment if self.max_segment is not None else L / 24.0
        if abs(self.gamma_load) > 0.0 and self.max_segment is None:
            step = min(step, self.microstrip.wavelength / 16.0)
        fine = (min(0.25 * self.fin_length, self.microstrip.height, step)
                if self.fine_segment is None else min(self.fine_segment, step))
        zones = []
        for hp in self.heaters:
            if hp.length > 0.0:
                a, b = hp.position - hp.length / 2, hp.position + hp.length / 2
                st = min(fine, hp.length / 2)
                if self.fine_segment is None:
                    # at most FOOTPRINT_SEGMENTS across a footprint: on a thin laminate the
                    # laminate thickness would otherwise set thousands of segments under it
                    st = max(st, hp.length / FOOTPRINT_SEGMENTS)
                zones.append((a, b, st))
            else:
                a, b = hp.position - fine / 2, hp.position + fine / 2
                zones.append((max(a, 0.0), min(b, L), fine))
        return graded_edges(L, step, zones, growth=self.growth)

    @property
    def x(self) -> np.ndarray:
        """Segment centres (the copper nodes' positions), m."""
        e = self.edges
        return 0.5 * (e[:-1] + e[1:])

    def _heat(self, ms: Microstrip) -> tuple[np.ndarray, np.ndarray]:
        return segment_heat(self.edges, ms.alpha_c, ms.alpha_d, self.beta, self.gamma_load)

    @cached_property
    def heat_profile(self) -> tuple[np.ndarray, np.ndarray]:
        """(conductor, dielectric) heat per segment, W per W of forward RF input."""
        return self._heat(self.microstrip)

    @property
    def loss_fraction(self) -> float:
        """Line heat per watt of forward RF power at the input (1 − e^(−2αL) when matched)."""
        qc, qd = self.heat_profile
        return float(qc.sum() + qd.sum())

    def heat_per_length(self, power: float = 1.0) -> np.ndarray:
        """Mean heat per metre in each segment for ``power`` W forward input, W/m."""
        qc, qd = self.heat_profile
        return (qc + qd) / np.diff(self.edges) * float(power)

    def heat_temp_coeff(self, step: float = 1.0) -> float:
        """(1/Q)·dQ/dT of the line heat with copper temperature at the microstrip's
        ``copper_temperature``, 1/K (central difference of ±``step`` K; see
        :meth:`Microstrip.heat_temp_coeff`)."""
        ms = self.microstrip
        hot = self._heat(ms.at_temperature(ms.copper_temperature + step))
        cold = self._heat(ms.at_temperature(ms.copper_temperature - step))
        q0 = self.loss_fraction
        dq = (hot[0].sum() + hot[1].sum() - cold[0].sum() - cold[1].sum()) / (2.0 * step)
        return float(dq / q0) if q0 > 0.0 else 0.0

    def heat_waveform(self, rf):
        """The line-heat waveform of the ``<prefix>.rf`` input: RF forward power × loss
        fraction (a float W, or anything :func:`as_piecewise` accepts)."""
        from pulsetherm.waveforms.canonical import as_piecewise

        f = self.loss_fraction
        if isinstance(rf, (int, float, np.floating)) and not isinstance(rf, bool):
            return float(rf) * f
        return as_piecewise(rf, name="rf").scaled(f)

    # -- network --------------------------------------------------------------------------
    def build(self, net, ground: str, prefix: str = "line", start: str | None = None,
              end: str | None = None, start_resistance: float = 0.0,
              end_resistance: float = 0.0, temp_coeff: bool = False) -> "BuiltLine":
        """Write the line into ``net`` (a ThermalNetwork) and return its layout.

        Parameters
        ----------
        net
            The network; ``ground`` (and ``start``/``end`` if given) must exist in it.
        ground
            Node or boundary of the ground plane under the line.
        prefix
            Name prefix of the created nodes and inputs.
        start, end
            Nodes the two line ends are joined to through the trace copper (half a segment)
            plus ``start_resistance`` / ``end_resistance`` K/W (device terminal, pad);
            None = open (adiabatic) end.
        temp_coeff
            True: the RF input carries the copper-temperature coefficient of the line heat
            (:meth:`heat_temp_coeff`, reference the microstrip's copper temperature); the
            network then needs the nonlinear solver.  False (default): constant heat, the
            network stays linear (exact modal solutions).

        Returns
        -------
        BuiltLine
            Node names, positions and inputs; ``.report(result)`` for the line's figures.
        """
        if ground not in net.graph:
            raise LineError(f"ground = {ground!r}: unknown node; add the ground-plane node or "
                            "boundary first")
        for nm, node in (("start", start), ("end", end)):
            if node is not None and node not in net.graph:
                raise LineError(f"{nm} = {node!r}: unknown node; add it first or give None "
                                "(open end)")
        ms = self.microstrip
        (kz, kxy, rc_lam, _), (_, kcu, rc_cu, _) = self._props
        e = self.edges
        dx = np.diff(e)
        xc = 0.5 * (e[:-1] + e[1:])
        n = dx.size
        nz = self.sublayers
        h, w, t = ms.height, ms.w, ms.thickness
        # linear taper of the heat path from W (top) to w_b (ground) matching G' exactly
        w_b = _trapezoid_bottom(w, self.thermal_width)
        dz = h / nz
        # widths at the sub-layer faces (top to bottom) and centres
        zf = np.linspace(0.0, h, nz + 1)
        wf = w + (w_b - w) * zf / h
        zc = 0.5 * (zf[:-1] + zf[1:])
        wc = w + (w_b - w) * zc / h
        # per unit length, per unit k_z: top half-layer, centre-to-centre, bottom half-layer
        g_top = _taper_conductance(wf[:1], wc[:1], dz / 2)[0]
        g_mid = (1.0 / (1.0 / _taper_conductance(wc[:-1], wf[1:-1], dz / 2)
                        + 1.0 / _taper_conductance(wf[1:-1], wc[1:], dz / 2))
                 if nz > 1 else np.zeros(0))
        g_bot = _taper_conductance(wc[-1:], wf[-1:], dz / 2)[0]
        area = 0.5 * (wf[:-1] + wf[1:]) * dz  # sub-layer cross-section, m²
        # Dielectric heat: in the taper the loss density |E|²·W(z) ∝ 1/W(z) ∝ dR/dz, uniform
        # in the resistance coordinate R (in which the taper is a uniform 1-D rod).  Each
        # element of the chain copper - z[1] - ... - z[nz] - ground gets heat ∝ its
        # resistance, split half to each end (consistent load of linear elements: nodally
        # exact for a uniform source), so the copper rise is exactly half that of the same
        # heat at the strip, as in the exact 2-D field (module docstring).  The half element
        # at the ground goes to the ground node when it is free, else to z[nz] (then the
        # dielectric rise is high by (r_bottom/R)², 3 % for 3 sub-layers).
        r_el = 1.0 / np.concatenate([[g_top], g_mid, [g_bot]])
        load = np.zeros(nz + 2)
        load[:-1] += 0.5 * r_el
        load[1:] += 0.5 * r_el
        load /= r_el.sum()
        d_top, d_share, d_ground = load[0], load[1:-1].copy(), load[-1]
        ground_free = not net.graph.nodes[ground]["boundary"]
        if not ground_free:
            d_share[-1] += d_ground

        top = [f"{prefix}.x[{k}]" for k in range(n)]
        sub = [[f"{prefix}.x[{k}].z[{j + 1}]" for j in range(nz)] for k in range(n)]
        label = f"{prefix}"
        for k in range(n):
            net.add_node(top[k], capacity=rc_cu * w * t * dx[k], label=f"{label} copper")
            for j in range(nz):
                net.add_node(sub[k][j], capacity=rc_lam * area[j] * dx[k],
                             label=f"{label} laminate")
        for k in range(n):
            col = [top[k]] + sub[k] + [ground]
            gz = np.concatenate([[g_top], g_mid, [g_bot]]) * kz * dx[k]
            for a_, b_, g in zip(col[:-1], col[1:], gz):
                net.connect(a_, b_, conductance=float(g))
        dist = 0.5 * (dx[:-1] + dx[1:])
        for k in range(n - 1):
            net.connect(top[k], top[k + 1], conductance=float(kcu * w * t / dist[k]))
            for j in range(nz):
                net.connect(sub[k][j], sub[k + 1][j], conductance=float(kxy * area[j] / dist[k]))
        for node, r_extra, k in ((start, start_resistance, 0), (end, end_resistance, n - 1)):
            if node is None:
                continue
            r = dx[k] / 2.0 / (kcu * w * t) + _num("end resistance", r_extra, "K/W", 0.0,
                                                    strict=False)
            net.connect(top[k], node, resistance=float(r))

        # RF heat: conductor loss on the copper, dielectric loss evenly over the sub-layers
        qc, qd = self.heat_profile
        weights: dict[str, float] = {}
        for k in range(n):
            weights[top[k]] = float(qc[k] + qd[k] * d_top)
            for j in range(nz):
                weights[sub[k][j]] = float(qd[k] * d_share[j])
        if ground_free:
            weights[ground] = weights.get(ground, 0.0) + float(qd.sum() * d_ground)
        rf_input = f"{prefix}.rf"
        if self.loss_fraction > 0.0:
            tc = self.heat_temp_coeff() if temp_coeff else 0.0
            net.add_input(rf_input, nodes=weights, temp_coeff=tc,
                          t_ref=ms.copper_temperature)
        else:
            rf_input = None

        heater_inputs, heater_nodes = {}, {}
        for hp in self.heaters:
            share = self._footprint_shares(hp)
            name = f"{prefix}.{hp.name}"
            if hp.resistance is None:
                net.add_input(name, nodes={top[k]: s for k, s in share.items()})
            else:
                net.add_node(name, capacity=hp.capacity, label=f"{label} {hp.name}")
                for k, s in share.items():
                    net.connect(name, top[k], conductance=s / hp.resistance)
                net.add_input(name, nodes={name: 1.0})
                heater_nodes[hp.name] = name
            heater_inputs[hp.name] = name
        return BuiltLine(line=self, prefix=prefix, x=xc, edges=e, top_nodes=tuple(top),
                         laminate_nodes=tuple(tuple(s) for s in sub), ground=ground,
                         rf_input=rf_input, heater_inputs=heater_inputs,
                         heater_nodes=heater_nodes)

    def _footprint_shares(self, hp: PointHeater) -> dict[int, float]:
        """Segment index -> share of the heater's footprint (sums to 1)."""
        e = self.edges
        if hp.length > 0.0:
            a, b = hp.position - hp.length / 2, hp.position + hp.length / 2
            ov = np.clip(np.minimum(e[1:], b) - np.maximum(e[:-1], a), 0.0, None)
            total = ov.sum()
            if total > 0.0:
                return {int(k): float(ov[k] / total) for k in np.flatnonzero(ov > 0)}
        k = int(np.clip(np.searchsorted(e, hp.position, side="right") - 1, 0, e.size - 2))
        return {k: 1.0}


# ======================================================================================
# Outputs
# ======================================================================================
@dataclass(frozen=True)
class LineReport:
    """Hottest point of a line, its profile and the RF figures behind its heat.

    Attributes
    ----------
    x
        Positions of the copper nodes along the line, m, shape (n,).
    temperature
        Copper temperature at each position, degC, shape (n,) (peak over time for a
        time response, the steady value otherwise).
    mean
        Time-averaged copper temperature, degC, shape (n,) (equal to ``temperature`` for a
        steady result).
    hottest
        Highest copper (or heater-part) temperature, degC.
    hottest_at
        Position of the hottest point, m.
    hottest_node
        Node name of the hottest point.
    limit
        Temperature limit, degC, or None.
    margin
        limit − hottest, K (negative: over the limit), or None.
    z0, eps_eff, alpha_c_db, alpha_d_db
        RF figures: Ω, —, dB/m, dB/m.
    loss_fraction
        Line heat per watt of forward RF power.
    heat_per_length
        Mean heat per metre in each segment per watt of forward RF power, W/m per W.
    """

    x: np.ndarray
    temperature: np.ndarray
    mean: np.ndarray
    hottest: float
    hottest_at: float
    hottest_node: str
    limit: float | None
    margin: float | None
    z0: float
    eps_eff: float
    alpha_c_db: float
    alpha_d_db: float
    loss_fraction: float
    heat_per_length: np.ndarray

    def to_dict(self) -> dict[str, Any]:
        """Plain dict (lists for arrays)."""
        out = {}
        for k, v in self.__dict__.items():
            out[k] = v.tolist() if isinstance(v, np.ndarray) else v
        return out

    def summary(self) -> str:
        """A few lines of text."""
        lines = [f"hottest {self.hottest:.2f} degC at x = {self.hottest_at * 1e3:.3f} mm "
                 f"({self.hottest_node})"]
        if self.limit is not None:
            lines.append(f"limit {self.limit:.1f} degC, margin {self.margin:+.2f} K")
        lines.append(f"Z0 {self.z0:.2f} ohm, eps_eff {self.eps_eff:.4f}, alpha_c "
                     f"{self.alpha_c_db:.4g} dB/m, alpha_d {self.alpha_d_db:.4g} dB/m, "
                     f"loss {self.loss_fraction * 100:.3g} % of the forward power")
        return "\n".join(lines)


@dataclass(frozen=True)
class BuiltLine:
    """Where a line went in a network: node names, positions and input names."""

    line: RFLine
    prefix: str
    x: np.ndarray
    edges: np.ndarray
    top_nodes: tuple[str, ...]
    laminate_nodes: tuple[tuple[str, ...], ...]
    ground: str
    rf_input: str | None
    heater_inputs: dict[str, str]
    heater_nodes: dict[str, str]

    @property
    def probes(self) -> list[str]:
        """Copper nodes and heater-part nodes: the probes a report needs."""
        return list(self.top_nodes) + list(self.heater_nodes.values())

    def heat_waveform(self, rf):
        """See :meth:`RFLine.heat_waveform`."""
        return self.line.heat_waveform(rf)

    def report(self, result, limit: float | None = None) -> LineReport:
        """Line figures from a steady result or a time response (peak over time).

        ``limit`` (degC) overrides the line's limit.
        """
        def values(name: str) -> tuple[float, float]:
            if hasattr(result, "peak"):
                return float(result.peak(name)), float(result.mean(name))
            v = float(result.T(name))
            return v, v

        pk, mn = zip(*(values(nm) for nm in self.top_nodes))
        pk, mn = np.array(pk), np.array(mn)
        k = int(np.argmax(pk))
        hottest, where, node = float(pk[k]), float(self.x[k]), self.top_nodes[k]
        for hname, nm in self.heater_nodes.items():
            v, _ = values(nm)
            if v > hottest:
                hp = next(h for h in self.line.heaters if h.name == hname)
                hottest, where, node = v, hp.position, nm
        lim = limit if limit is not None else self.line.limit_c
        ms = self.line.microstrip
        return LineReport(x=self.x.copy(), temperature=pk, mean=mn, hottest=hottest,
                          hottest_at=where, hottest_node=node, limit=lim,
                          margin=None if lim is None else lim - hottest, z0=ms.z0,
                          eps_eff=ms.eps_eff, alpha_c_db=ms.alpha_c_db,
                          alpha_d_db=ms.alpha_d_db, loss_fraction=self.line.loss_fraction,
                          heat_per_length=self.line.heat_per_length(1.0))
