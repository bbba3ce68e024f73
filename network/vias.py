"""Thermal vias: one plated barrel, and via arrays smeared into an anisotropic layer.

One plated via of drill d, plating thickness t_pl and length L (the board thickness)
conducts through its copper barrel and, when filled, through the fill inside it::

    R_barrel = L / (k_Cu·π·t_pl·(d − t_pl))           (annulus area π·t_pl·(d − t_pl))
    G_fill   = k_fill·π·(d/2 − t_pl)² / L
    R_via    = 1 / (1/R_barrel + G_fill)

An array of vias under a footprint is replaced by a homogeneous layer with the area
fractions of copper and hole in one pitch cell (f_Cu, f_hole)::

    k_z,eff = k_Cu·f_Cu + k_fill·f_hole + k_lam·(1 − f_Cu − f_hole)

(common practice, physics brief §7; the fields of a real array are analysed in Lee,
Lemczyk & Yovanovich, IEEE SEMI-THERM 1992).  In-plane the vias are isolated columns: the
estimate :attr:`ViaArray.k_inplane` uses the 2-D Maxwell Garnett formula for parallel
cylinders of area fraction f = f_Cu + f_hole and area-averaged conductivity k_v in the
laminate (in-plane conductivity k_m)::

    k_xy ≈ k_m·[(k_v + k_m) + f(k_v − k_m)] / [(k_v + k_m) − f(k_v − k_m)]

a rough estimate (dilute arrays; copper pads and planes joining the vias belong to the
copper layers, not to this figure).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from .materials import Material, MaterialLibrary

__all__ = ["Via", "ViaArray", "ViaError", "FILLS", "barrel_resistance"]

#: Via fills and the library material each one uses (``none``: empty hole, k = 0).
FILLS = {"none": None, "epoxy": "epoxy-via-fill", "solder": "sac305",
         "copper": "pcb-copper"}
_GRIDS = ("square", "staggered")
_GRID_ALIASES = {"hex": "staggered", "hexagonal": "staggered", "triangular": "staggered"}


class ViaError(ValueError):
    """Bad via input; the message names the field, the value and what is expected."""


def _pos(field: str, value: object, *, zero_ok: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ViaError(f"{field} = {value!r}: expected a number in SI units")
    v = float(value)
    if not math.isfinite(v) or v < 0 or (v == 0 and not zero_ok):
        raise ViaError(f"{field} = {value!r}: expected a finite number "
                       f"{'>= 0' if zero_ok else '> 0'}")
    return v


def barrel_resistance(drill: float, plating: float, length: float,
                      k_copper: float = 390.0) -> float:
    """Resistance of the plated barrel alone, K/W: R = L/(k_Cu·π·t_pl·(d − t_pl)).

    Common practice (physics brief §7).  0.3 mm drill, 25 µm plating, 1.6 mm board,
    k_Cu = 390 W/(m·K): 189.9 K/W.
    """
    return Via(drill=drill, plating=plating, k_copper=k_copper).resistance(length)


@dataclass(frozen=True)
class Via:
    """One plated through via.

    Parameters
    ----------
    drill
        Finished hole diameter d (outer diameter of the barrel), m.
    plating
        Barrel wall thickness t_pl, m, 0 < t_pl ≤ d/2 (d/2: solid copper post).
    fill
        ``"none"``, ``"epoxy"``, ``"solder"`` or ``"copper"`` (see :data:`FILLS`).
    k_copper
        Barrel conductivity, W/(m·K); 390 is common practice for board copper.
    k_fill
        Fill conductivity, W/(m·K); ``None`` takes the library value of the fill (0 for
        ``"none"``).
    """

    drill: float
    plating: float
    fill: str = "none"
    k_copper: float = 390.0
    k_fill: float | None = None

    def __post_init__(self) -> None:
        d = _pos("drill", self.drill)
        t = _pos("plating", self.plating)
        if t > d / 2 * (1 + 1e-12):
            raise ViaError(f"plating = {self.plating!r}: expected at most half the drill "
                           f"({d / 2:g} m)")
        object.__setattr__(self, "drill", d)
        object.__setattr__(self, "plating", min(t, d / 2))
        object.__setattr__(self, "k_copper", _pos("k_copper", self.k_copper))
        fill = self.fill.strip().lower() if isinstance(self.fill, str) else self.fill
        if fill not in FILLS:
            raise ViaError(f"fill = {self.fill!r}: expected one of {', '.join(FILLS)}")
        object.__setattr__(self, "fill", fill)
        if self.k_fill is None:
            name = FILLS[fill]
            k = 0.0 if name is None else MaterialLibrary.default().get(name).k
        else:
            k = _pos("k_fill", self.k_fill, zero_ok=True)
            if fill == "none" and k != 0.0:
                raise ViaError(f"k_fill = {self.k_fill!r}: an unfilled via ('none') has "
                               "no fill conductivity; choose a fill")
        object.__setattr__(self, "k_fill", k)

    @property
    def copper_area(self) -> float:
        """Barrel cross-section π·t_pl·(d − t_pl), m²."""
        return math.pi * self.plating * (self.drill - self.plating)

    @property
    def hole_area(self) -> float:
        """Open (or filled) core π·(d/2 − t_pl)², m²."""
        return math.pi * (self.drill / 2 - self.plating) ** 2

    def conductance(self, length: float) -> float:
        """Barrel plus fill conductance, W/K:
        (k_Cu·π·t_pl·(d − t_pl) + k_fill·π·(d/2 − t_pl)²) / L."""
        L = _pos("length", length)
        return (self.k_copper * self.copper_area + self.k_fill * self.hole_area) / L

    def resistance(self, length: float) -> float:
        """R_via = L / (k_Cu·π·t_pl·(d − t_pl) + k_fill·π·(d/2 − t_pl)²), K/W (barrel and
        fill in parallel)."""
        return 1.0 / self.conductance(length)


@dataclass(frozen=True)
class ViaArray:
    """A regular array of identical vias, smeared into an anisotropic layer.

    Parameters
    ----------
    via
        The via.
    pitch
        Centre-to-centre distance of nearest neighbours, m (> drill).
    laminate
        The laminate between the vias: a :class:`Material` (through-plane ``k`` and
        ``k_inplane`` used) or a through-plane conductivity in W/(m·K).
    grid
        ``"square"`` (cell pitch²) or ``"staggered"`` (triangular, cell (√3/2)·pitch²;
        ``"hex"`` and ``"triangular"`` are accepted for it).
    """

    via: Via
    pitch: float
    laminate: Material | float
    grid: str = "square"

    def __post_init__(self) -> None:
        if not isinstance(self.via, Via):
            raise ViaError(f"via = {self.via!r}: expected a Via")
        p = _pos("pitch", self.pitch)
        if p <= self.via.drill:
            raise ViaError(f"pitch = {self.pitch!r}: expected more than the drill "
                           f"({self.via.drill:g} m)")
        object.__setattr__(self, "pitch", p)
        if not isinstance(self.laminate, Material):
            object.__setattr__(self, "laminate", _pos("laminate", self.laminate))
        grid = _GRID_ALIASES.get(self.grid, self.grid) if isinstance(self.grid, str) \
            else self.grid
        if grid not in _GRIDS:
            raise ViaError(f"grid = {self.grid!r}: expected one of {', '.join(_GRIDS)} "
                           "('hex' and 'triangular' read as staggered)")
        object.__setattr__(self, "grid", grid)

    @property
    def k_laminate(self) -> float:
        """Through-plane conductivity of the laminate, W/(m·K)."""
        lam = self.laminate
        return lam.k if isinstance(lam, Material) else float(lam)

    @property
    def k_laminate_inplane(self) -> float:
        """In-plane conductivity of the laminate, W/(m·K)."""
        lam = self.laminate
        return lam.k_inplane if isinstance(lam, Material) else float(lam)

    @property
    def cell_area(self) -> float:
        """Board area per via, m²: pitch² (square) or (√3/2)·pitch² (staggered)."""
        if self.grid == "square":
            return self.pitch ** 2
        return math.sqrt(3.0) / 2.0 * self.pitch ** 2

    @property
    def f_copper(self) -> float:
        """Area fraction of barrel copper, f_Cu = π·t_pl·(d − t_pl) / cell."""
        return self.via.copper_area / self.cell_area

    @property
    def f_hole(self) -> float:
        """Area fraction of the hole core, f_hole = π·(d/2 − t_pl)² / cell."""
        return self.via.hole_area / self.cell_area

    @property
    def k_z(self) -> float:
        """Through-plane effective conductivity, W/(m·K):
        k_Cu·f_Cu + k_fill·f_hole + k_lam·(1 − f_Cu − f_hole) (physics brief §7)."""
        fc, fh = self.f_copper, self.f_hole
        return (self.via.k_copper * fc + self.via.k_fill * fh
                + self.k_laminate * (1.0 - fc - fh))

    @property
    def k_inplane(self) -> float:
        """Rough in-plane effective conductivity, W/(m·K): 2-D Maxwell Garnett for
        cylinders (area fraction f_Cu + f_hole, area-averaged via conductivity) in the
        laminate's in-plane conductivity.  An estimate only (see the module notes)."""
        f = self.f_copper + self.f_hole
        kv = (self.via.k_copper * self.via.copper_area + self.via.k_fill
              * self.via.hole_area) / (self.via.copper_area + self.via.hole_area)
        km = self.k_laminate_inplane
        return km * ((kv + km) + f * (kv - km)) / ((kv + km) - f * (kv - km))

    def material(self, name: str = "via-field", rho_c_laminate: tuple[float, float]
                 | None = None) -> Material:
        """The smeared via field as an anisotropic :class:`Material` (k = k_z,
        k_inplane = the rough estimate; ρ and c volume-weighted from copper, fill and
        laminate).  A laminate given as a number needs ``rho_c_laminate = (ρ, c)``."""
        lib = MaterialLibrary.default()
        if isinstance(self.laminate, Material):
            rho_l, c_l = self.laminate.rho, self.laminate.c
        elif rho_c_laminate is not None:
            rho_l, c_l = (_pos("rho_c_laminate[0]", rho_c_laminate[0]),
                          _pos("rho_c_laminate[1]", rho_c_laminate[1]))
        else:
            raise ViaError("rho_c_laminate = None: expected (rho, c) of the laminate when "
                           "it is given as a number")
        cu = lib.get("pcb-copper")
        fill_name = FILLS[self.via.fill]
        fill = lib.get(fill_name) if fill_name else None
        fc, fh = self.f_copper, self.f_hole
        fl = 1.0 - fc - fh
        mass = cu.rho * fc + (fill.rho * fh if fill else 0.0) + rho_l * fl
        heat = cu.rho_c * fc + (fill.rho_c * fh if fill else 0.0) + rho_l * c_l * fl
        return Material(name=name, k=self.k_z, k_inplane=self.k_inplane, rho=mass,
                        c=heat / mass,
                        source="smeared via field: area-fraction mixture (common practice)",
                        description=f"{self.grid} via array, pitch {self.pitch:g} m, drill "
                                    f"{self.via.drill:g} m, plating {self.via.plating:g} m, "
                                    f"fill {self.via.fill}")

    def count(self, wx: float, wy: float) -> int:
        """Vias that fit a wx × wy footprint (m) with whole pitch cells (square grid:
        floor(wx/p)·floor(wy/p); staggered: rows (√3/2)·p apart, alternate rows one
        fewer when shifted)."""
        wx, wy = _pos("wx", wx), _pos("wy", wy)
        eps = 1e-9
        nx = int(math.floor(wx / self.pitch + eps))
        if self.grid == "square":
            return nx * int(math.floor(wy / self.pitch + eps))
        ny = int(math.floor(wy / (math.sqrt(3.0) / 2.0 * self.pitch) + eps))
        shifted_fits = wx / self.pitch + eps >= nx + 0.5
        per_shifted = nx if shifted_fits else max(nx - 1, 0)
        return (ny + 1) // 2 * nx + ny // 2 * per_shifted

    def resistance(self, length: float, area: float) -> float:
        """Through-plane resistance of the smeared field over ``area`` (m²): L/(k_z·A),
        K/W."""
        return _pos("length", length) / (self.k_z * _pos("area", area))
