"""Stack-up description: parts, layers, interfaces, board, mounting and sink.

Engineers describe hardware as a stack-up: a heated footprint (a transistor's gate region,
a package's case) on top of layers (die, attach, flange, solder), the board layers shared
by all parts, an interface material and a sink.  These dataclasses hold that description
in SI units (m, W/(m·K), K·m², K/W, J/K; temperatures in degC at this edge, as in the
engine API).  :func:`pulsetherm.network.builder.build` turns an :class:`Assembly` into a
thermal RC network.

Every class validates in ``__post_init__`` and raises :class:`StackupError` (a
``ValueError``) naming the field, the value and what is expected.  Change a description
with :func:`dataclasses.replace`.

Example
-------
>>> from pulsetherm.network.stackup import Layer, Part, Assembly, Mount, FixedBase
>>> die = Part("pa", footprint=(0.5e-3, 0.5e-3),
...            stack=[Layer("sic-4h", 100e-6, size=(2e-3, 2e-3)),
...                   Layer("ausn", 25e-6, size=(2e-3, 2e-3)),
...                   Layer("cuw-85-15", 1e-3, size=(10e-3, 10e-3))],
...            junction_limit=225.0)
>>> asm = Assembly(parts=[die], mount=Mount(sink=FixedBase(40.0)))
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any, Sequence

from .materials import Material, MaterialError, default_library

__all__ = [
    "StackupError", "Layer", "AreaResistance", "Part", "Board", "FixedBase", "Film",
    "LumpedSink", "Mount", "Assembly", "Element", "Sink", "resolve_material",
]


class StackupError(ValueError):
    """Bad stack-up input; the message names the field, the value and what is expected."""


# --------------------------------------------------------------------------------------
# validation helpers
# --------------------------------------------------------------------------------------
def _number(where: str, value: Any, *, lo: float | None = 0.0, lo_open: bool = True,
            hi: float | None = None, unit: str = "") -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise StackupError(f"{where} = {value!r}: expected a number{unit and ' in ' + unit}")
    v = float(value)
    bad = not math.isfinite(v)
    if lo is not None:
        bad |= v <= lo if lo_open else v < lo
    if hi is not None:
        bad |= v > hi
    if bad:
        rng = []
        if lo is not None:
            rng.append(f"{'>' if lo_open else '>='} {lo:g}")
        if hi is not None:
            rng.append(f"<= {hi:g}")
        raise StackupError(f"{where} = {value!r}: expected a finite number "
                           f"{' and '.join(rng)}{unit and ' ' + unit}")
    return v


def _size(where: str, value: Any) -> tuple[float, float] | None:
    if value is None:
        return None
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        v = _number(where, value, unit="m")
        return (v, v)
    try:
        w, l = value
    except (TypeError, ValueError):
        raise StackupError(f"{where} = {value!r}: expected (width, length) in m, a single "
                           "side in m for a square, or None") from None
    return (_number(f"{where}[0]", w, unit="m"), _number(f"{where}[1]", l, unit="m"))


def _name(where: str, value: Any) -> str:
    if not isinstance(value, str) or not value.strip() or any(c in value for c in ". \t\n"):
        raise StackupError(f"{where} = {value!r}: expected a non-empty name without dots "
                           "or spaces (node names are built as '<part>.<layer>.<k>')")
    return value


def resolve_material(material: Material | str, library=None) -> Material:
    """A :class:`Material` from a material or a library name (default library if none)."""
    if isinstance(material, Material):
        return material
    if isinstance(material, str):
        lib = library if library is not None else default_library()
        try:
            return lib.get(material)
        except MaterialError as exc:
            raise StackupError(f"material = {material!r}: {exc}") from None
    raise StackupError(f"material = {material!r}: expected a Material or a material name")


# --------------------------------------------------------------------------------------
# layers and interfaces
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Layer:
    """One layer of a stack: a material of given thickness, optionally of limited size.

    Parameters
    ----------
    material
        A :class:`~pulsetherm.network.materials.Material` or a name in the material
        library (``"copper"``, ``"fr4-class"``); names are resolved when the network is
        built.
    thickness
        m, > 0.
    size
        Lateral size (width, length) in m, a single side for a square, or ``None`` for no
        size of its own (the spreading cone is then not capped in this layer).
    name
        Label in node names and reports; default the material name.  No dots or spaces.
    spreading_angle
        Half-angle of the spreading cone in this layer, degrees in [0, 90); ``None`` takes
        the builder's default (45° by common practice).
    void_fraction
        Solder/attach voids as an area fraction in [0, 0.95): the layer's conductance and
        heat capacity are scaled by (1 − fraction) (voids hold no heat and carry none).
    vias
        Board laminates only: a via field (from :mod:`pulsetherm.network.vias`) under the
        part footprints, giving an effective through-plane conductivity in the via area.
    via_area
        Size (width, length) in m of the via field under each part; ``None`` = the
        footprint of the part above it: its lowest stack layer with a size (a flange),
        else its ``footprint`` (:func:`pulsetherm.network.builder.via_field_size`).
    """

    material: Material | str
    thickness: float
    size: tuple[float, float] | float | None = None
    name: str | None = None
    spreading_angle: float | None = None
    void_fraction: float = 0.0
    vias: Any = None
    via_area: tuple[float, float] | float | None = None

    def __post_init__(self) -> None:
        if not isinstance(self.material, (Material, str)):
            raise StackupError(f"Layer.material = {self.material!r}: expected a Material or "
                               "a material name")
        set_ = object.__setattr__
        set_(self, "thickness", _number("Layer.thickness", self.thickness, unit="m"))
        if self.thickness > 1.0:
            raise StackupError(f"Layer.thickness = {self.thickness!r}: expected metres "
                               "(a layer thicker than 1 m is surely a unit mix-up)")
        set_(self, "size", _size("Layer.size", self.size))
        if self.name is None:
            mat = self.material if isinstance(self.material, str) else self.material.name
            set_(self, "name", mat.strip().lower().replace(" ", "-").replace(".", "_"))
        _name("Layer.name", self.name)
        if self.spreading_angle is not None:
            set_(self, "spreading_angle", _number("Layer.spreading_angle",
                                                  self.spreading_angle, lo=0.0,
                                                  lo_open=False, hi=89.9, unit="degrees"))
        set_(self, "void_fraction", _number("Layer.void_fraction", self.void_fraction,
                                            lo=0.0, lo_open=False, hi=0.95))
        set_(self, "via_area", _size("Layer.via_area", self.via_area))
        if self.via_area is not None and self.vias is None:
            raise StackupError(f"Layer.via_area = {self.via_area!r}: given without a via "
                               "field (vias=None)")


@dataclass(frozen=True)
class AreaResistance:
    """A thin interface given as an area-specific resistance (K·m²), with no heat capacity.

    Use it for a thermal interface material known by its specific resistance, a contact
    resistance, or the thermal boundary resistance between an epitaxial layer and its
    substrate (typically 1e-9 to 5e-8 K·m² for GaN on SiC, value from memory).  The network
    gets a massless node pair joined by r_area / A, A the heat-path area at that depth.

    Parameters
    ----------
    r_area
        K·m², > 0.
    name
        Label in node names and reports.
    """

    r_area: float
    name: str = "interface"

    def __post_init__(self) -> None:
        object.__setattr__(self, "r_area", _number("AreaResistance.r_area", self.r_area,
                                                   unit="K·m²"))
        if self.r_area > 1.0:
            raise StackupError(f"AreaResistance.r_area = {self.r_area!r}: expected K·m² "
                               "(1 K·cm²/W is 1e-4 K·m²)")
        _name("AreaResistance.name", self.name)


Element = Layer | AreaResistance


def _elements(where: str, items: Any) -> tuple[Element, ...]:
    if items is None:
        return ()
    if isinstance(items, (Layer, AreaResistance)):
        items = (items,)
    try:
        out = tuple(items)
    except TypeError:
        raise StackupError(f"{where} = {items!r}: expected a sequence of Layer / "
                           "AreaResistance") from None
    for i, e in enumerate(out):
        if not isinstance(e, (Layer, AreaResistance)):
            raise StackupError(f"{where}[{i}] = {e!r}: expected a Layer or AreaResistance")
    _unique(where, [e.name for e in out], "layer names must be unique within a stack "
            "(give name='...' to repeated materials)")
    return out


def _unique(where: str, names: Sequence[str], expected: str,
            reserved: Sequence[str] = ()) -> None:
    """Refuse the first repeated (or reserved) name: ``<where>[i].name = ...``."""
    seen: set[str] = set()
    for i, n in enumerate(names):
        if n in seen:
            raise StackupError(f"{where}[{i}].name = {n!r}: {expected}")
        if n in reserved:
            raise StackupError(f"{where}[{i}].name = {n!r}: reserved name")
        seen.add(n)


# --------------------------------------------------------------------------------------
# parts
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Part:
    """A heated footprint on top of a stack of layers.

    Two kinds of device:

    * physical die stack: ``stack`` starts with the die; ``footprint`` is the heated
      (gate) region on its top surface, smaller than the die.  The junction is the mean
      temperature of the heated footprint.
    * data-sheet device: give ``rth`` (junction-to-case, K/W) or ``foster`` (a
      :class:`~pulsetherm.network.foster.Foster` network).  It becomes a Cauer ladder from
      ``"<name>.junction"`` to the case node; ``footprint`` is then the case (the heated
      area of the top of ``stack``, e.g. the package's solder layer).

    Parameters
    ----------
    name
        Device name: input ``name``, junction node ``"<name>.junction"``.
    footprint
        Heated area (width, length) in m (or one side of a square).
    stack
        Layers and interfaces below the footprint, top first (may be empty when the part
        sits on the board or directly on the sink).
    position
        Centre (x, y) on the board in m, for in-plane coupling between parts.
    junction_limit
        Junction temperature limit, degC, or ``None``.
    rth, foster
        Data-sheet junction-to-case description (at most one).
    """

    name: str
    footprint: tuple[float, float] | float
    stack: Sequence[Element] = ()
    position: tuple[float, float] = (0.0, 0.0)
    junction_limit: float | None = None
    rth: float | None = None
    foster: Any = None

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        _name("Part.name", self.name)
        set_(self, "footprint", _size(f"Part({self.name}).footprint", self.footprint))
        if self.footprint is None:
            raise StackupError(f"Part({self.name}).footprint = None: expected the heated "
                               "area (width, length) in m")
        set_(self, "stack", _elements(f"Part({self.name}).stack", self.stack))
        try:
            x, y = self.position
        except (TypeError, ValueError):
            raise StackupError(f"Part({self.name}).position = {self.position!r}: expected "
                               "(x, y) in m") from None
        set_(self, "position", (_number(f"Part({self.name}).position[0]", x, lo=None),
                                _number(f"Part({self.name}).position[1]", y, lo=None)))
        if self.junction_limit is not None:
            set_(self, "junction_limit", _number(f"Part({self.name}).junction_limit",
                                                 self.junction_limit, lo=-273.15,
                                                 unit="degC"))
        if self.rth is not None and self.foster is not None:
            raise StackupError(f"Part({self.name}): rth = {self.rth!r} and foster given; "
                               "expected at most one junction-to-case description")
        if self.rth is not None:
            set_(self, "rth", _number(f"Part({self.name}).rth", self.rth, unit="K/W"))
        if self.foster is not None and not (hasattr(self.foster, "to_cauer")
                                            and hasattr(self.foster, "R")):
            raise StackupError(f"Part({self.name}).foster = {self.foster!r}: expected a "
                               "Foster network (pulsetherm.network.foster.Foster)")

    @property
    def datasheet(self) -> bool:
        """True for a data-sheet (junction-to-case) device."""
        return self.rth is not None or self.foster is not None

    @property
    def junction(self) -> str:
        """Name of the junction node."""
        return f"{self.name}.junction"


# --------------------------------------------------------------------------------------
# board, sink, mount, assembly
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Board:
    """Layers shared by all parts (copper planes, laminates with optional via fields).

    Parameters
    ----------
    layers
        Top first.  A layer without ``size`` takes the board ``size``.
    size
        Board (width, length), m.
    """

    layers: Sequence[Element]
    size: tuple[float, float] | float

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        set_(self, "size", _size("Board.size", self.size))
        if self.size is None:
            raise StackupError("Board.size = None: expected the board (width, length) in m")
        layers = _elements("Board.layers", self.layers)
        if not layers:
            raise StackupError("Board.layers = (): expected at least one layer")
        out = []
        for e in layers:
            if isinstance(e, Layer) and e.size is None:
                e = replace(e, size=self.size)
            out.append(e)
        set_(self, "layers", tuple(out))


@dataclass(frozen=True)
class FixedBase:
    """Ideal cold plate: the bottom of the stack is held at ``temperature`` (degC)."""

    temperature: float = 25.0

    def __post_init__(self) -> None:
        object.__setattr__(self, "temperature", _number("FixedBase.temperature",
                                                        self.temperature, lo=-273.15,
                                                        unit="degC"))


@dataclass(frozen=True)
class Film:
    """Convection from the bottom face: film coefficient ``h`` (W/(m²·K)) to ``ambient``.

    With ``area=None`` the film acts on the bottom face of each part's heat path (area of
    the heat path there).  With ``area`` (m²) it is a sink body of that wetted area: one
    shared sink node (capacity ``capacity`` J/K) with conductance h·area to ambient.
    """

    h: float
    ambient: float = 25.0
    area: float | None = None
    capacity: float = 0.0

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        set_(self, "h", _number("Film.h", self.h, unit="W/(m²·K)"))
        set_(self, "ambient", _number("Film.ambient", self.ambient, lo=-273.15,
                                      unit="degC"))
        if self.area is not None:
            set_(self, "area", _number("Film.area", self.area, unit="m²"))
        set_(self, "capacity", _number("Film.capacity", self.capacity, lo=0.0,
                                       lo_open=False, unit="J/K"))
        if self.capacity > 0 and self.area is None:
            raise StackupError(f"Film.capacity = {self.capacity!r}: a sink capacity needs "
                               "a sink body (give area)")


@dataclass(frozen=True)
class LumpedSink:
    """Heat sink as one node: ``capacity`` (J/K) and ``resistance`` (K/W) to ambient."""

    resistance: float
    capacity: float = 0.0
    ambient: float = 25.0

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        set_(self, "resistance", _number("LumpedSink.resistance", self.resistance,
                                         unit="K/W"))
        set_(self, "capacity", _number("LumpedSink.capacity", self.capacity, lo=0.0,
                                       lo_open=False, unit="J/K"))
        set_(self, "ambient", _number("LumpedSink.ambient", self.ambient, lo=-273.15,
                                      unit="degC"))


Sink = FixedBase | Film | LumpedSink


@dataclass(frozen=True)
class Mount:
    """How the stack meets the sink: interface layers (under the board, or under the
    parts when there is no board), then the sink."""

    interface: Sequence[Element] = ()
    sink: Sink = field(default_factory=FixedBase)

    def __post_init__(self) -> None:
        object.__setattr__(self, "interface", _elements("Mount.interface", self.interface))
        if not isinstance(self.sink, (FixedBase, Film, LumpedSink)):
            raise StackupError(f"Mount.sink = {self.sink!r}: expected FixedBase, Film or "
                               "LumpedSink")


@dataclass(frozen=True)
class Assembly:
    """Parts (on an optional shared board) and the mounting: what :func:`build` takes."""

    parts: Sequence[Part]
    board: Board | None = None
    mount: Mount = field(default_factory=Mount)
    name: str = "assembly"

    def __post_init__(self) -> None:
        parts = (self.parts,) if isinstance(self.parts, Part) else tuple(self.parts)
        if not parts:
            raise StackupError("Assembly.parts = (): expected at least one Part")
        for i, p in enumerate(parts):
            if not isinstance(p, Part):
                raise StackupError(f"Assembly.parts[{i}] = {p!r}: expected a Part")
        _unique("Assembly.parts", [p.name for p in parts], "part names must be unique",
                reserved=("sink", "ambient", "base", "board"))
        object.__setattr__(self, "parts", parts)
        if self.board is not None and not isinstance(self.board, Board):
            raise StackupError(f"Assembly.board = {self.board!r}: expected a Board or None")
        if not isinstance(self.mount, Mount):
            raise StackupError(f"Assembly.mount = {self.mount!r}: expected a Mount")
        for p in parts:
            if not p.datasheet and not (p.stack or self.board is not None
                                        or self.mount.interface):
                raise StackupError(f"Part({p.name}).stack = (): a physical device needs at "
                                   "least one layer between its footprint and the sink")
