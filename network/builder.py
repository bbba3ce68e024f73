"""Build a thermal RC network from a stack-up (the ladder model).

Each part becomes a *column*: its heated footprint on top, then its own stack, the board
layers under it and the mounting interface, down to the sink.  Heat spreads downward:

* **Frustum spreading.**  In a layer whose top cross-section is w0 × l0 the heat path
  widens with depth z as w(z) = min(w0 + 2z·tanθ, W), l(z) = min(l0 + 2z·tanθ, L), θ the
  spreading half-angle (45° by common practice, adjustable per layer) and W × L the layer's
  own size.  A sub-layer [z0, z1] has the exact 1-D conductance and capacity of that
  frustum, ``G = 1/∫dz/(k·A(z))`` and ``C = ρc·∫A(z)dz`` (Gauss-Legendre quadrature on the
  pieces between the kinks where the path meets the layer edges).
* **Calibrated spreading** (``spreading="calibrated"``): the heat path follows the
  exact steady spreading solution of the stack at every depth (equivalent flow area).
  Derivation: cut the column at depth z and hold the cut at the sink temperature; the mean
  source rise per watt of what lies above, R(z), follows the exact compound-disk series
  (Yovanovich, Culham & Teertstra 1998; compound layers by the transmission-line recursion
  of Yovanovich, Muzychka & Culham 1999; equal-area circles), run by run: consecutive
  layers of one lateral size (die, flange, board) form a run on its own plate, heated
  through the base of the narrower run above, with the coupling of :func:`depth_profile`
  (a narrower flange runs hotter).  Adding a slab dz adds dR = dz/(k·A_eff(z)), so

      A_eff(z) = 1/(k(z)·dR/dz),

  the area of the 1-D path with the same resistance per unit depth: the source area at
  z → 0 (early heat flows straight down), the plate area deep down.  Each sub-layer
  [z_i, z_{i+1}] gets G = 1/(R(z_{i+1}) − R(z_i)), so the ladder's cumulative resistance
  equals R(z) at every face, and the capacity ρc·∫A_eff dz of the same path.  This is the
  1-D "equivalent flow area" reading of a structure function (dC_Σ/dR_Σ = ρ·c·k·A², JEDEC
  JESD51-14; Székely & Van Bien 1988), with conductance and capacity sharing one area.
  Over a finite sink the rest of the exact resistance (the film, and the extra
  constriction R_sp(h) − R_sp(∞) it causes) joins the bottom face to the sink in two
  halves around a node holding the layers' remaining heat capacity (their volume outside
  the equivalent path).  Steady values equal the exact series for one-size columns by
  construction (tests/test_builder.py); the r-z finite elements of
  tests/test_fem_crosscheck.py agree within 10 % from 1e-5 s to 1 s, the r-z finite volumes
  within 10 % for flanges narrower than the board (tests/test_builder_runs.py).  With ``reference="lee"`` (or no sized layer) one
  angle per layer is fitted instead (:func:`calibrate_angles`).
* **Graded sub-layers.**  Thickness is measured in the diffusion coordinate s = ∫dz/√α
  (√s units; a signal reaches depth s after a time ≈ s²).  The first sub-layer at the
  source spans s0 = f·√t_min, with t_min the shortest waveform feature, and sub-layers grow
  geometrically by the ratio r with depth: boundaries sit at equal steps of
  ln(s0 + (r − 1)·s).  Microseconds are resolved near the junction, minutes in the sink,
  with tens to a few hundred nodes per part.  ``fidelity`` sets f and r.
* **Nodes** sit on sub-layer faces (vertex-centred): the top face node is the junction (the
  mean temperature of the heated footprint, isoflux), each sub-layer's capacity is split to
  its two face nodes with the linear weights (1 − ξ, ξ), ξ = (z − z0)/(z1 − z0).

Several parts on one board: each has its own column through the board; the columns meet at
the shared sink node and are joined in each board layer by in-plane conduction
``g = k_inplane·t·w̄/d`` (w̄ the mean width of the two heat paths in that layer, d the
centre distance, at least w̄).  This is a coarse lateral model: it ignores overlap of the
spreading cones and the heat spreading into board area outside the columns.

References
----------
JEDEC JESD51-14, 2010; Székely & Van Bien, Solid-State Electronics 31(9), 1988
(structure functions, dC_Σ/dR_Σ = ρ·c·k·A²).
Carslaw & Jaeger, *Conduction of Heat in Solids*, 2nd ed., 1959 (slab series used in tests).
Yovanovich, Culham & Teertstra, IEEE Trans. CPMT-A 21(1), 1998.
Yovanovich, Muzychka & Culham, J. Thermophysics & Heat Transfer 13(4), 1999.
Lee, Song, Au & Moran, ASME/JSME Thermal Eng. Joint Conf. 1995, vol. 4, 199-206.
"""
from __future__ import annotations

import functools
import math
import threading
from collections import OrderedDict
from dataclasses import dataclass, field
from typing import Any, Callable, Mapping, Sequence

import numpy as np

from .materials import Material
from .model import ThermalNetwork
from .stackup import (AreaResistance, Assembly, FixedBase, Layer, LumpedSink, Part, StackupError,
                      resolve_material)

__all__ = ["build", "BuiltModel", "NodeInfo", "LayerInfo", "ColumnInfo", "Grading",
           "grading", "FIDELITY", "frustum_sublayer", "sublayer_edges", "DEFAULT_ANGLE",
           "DEFAULT_T_MIN", "depth_profile", "via_field_size", "via_fields"]

#: Default spreading half-angle, degrees (common practice, no source).
DEFAULT_ANGLE = 45.0
#: Default shortest waveform feature resolved near the source, s.
DEFAULT_T_MIN = 1e-6
#: Largest number of sub-layers in one layer.
MAX_SUBLAYERS = 80

_GL_X, _GL_W = np.polynomial.legendre.leggauss(10)


# --------------------------------------------------------------------------------------
# discretisation
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Grading:
    """Sub-layer grading: first sub-layer ``first``·√(α·t_min), growth ratio ``growth``."""

    first: float
    growth: float

    def __post_init__(self) -> None:
        if not (math.isfinite(self.first) and self.first > 0):
            raise StackupError(f"Grading.first = {self.first!r}: expected a number > 0")
        if not (math.isfinite(self.growth) and 1.0 < self.growth <= 4.0):
            raise StackupError(f"Grading.growth = {self.growth!r}: expected a ratio in "
                               "(1, 4]")


#: Named fidelity settings.  "normal" resolves a 1 µs step response of a slab within
#: 1 % (tests/test_builder.py); each step finer roughly halves the sub-layer size.
FIDELITY = {
    "coarse": Grading(first=0.6, growth=1.6),
    "normal": Grading(first=0.2, growth=1.2),
    "fine": Grading(first=0.1, growth=1.1),
}


def grading(fidelity: str | float | Grading = "normal") -> Grading:
    """The :class:`Grading` for a fidelity name, a refinement number or a Grading.

    A number x refines the "normal" setting x times: first = 0.2/x, growth = 1 + 0.2/x
    (x = 1 is "normal", x = 2 about halves every sub-layer and is "fine").
    """
    if isinstance(fidelity, Grading):
        return fidelity
    if isinstance(fidelity, str):
        try:
            return FIDELITY[fidelity]
        except KeyError:
            raise StackupError(f"fidelity = {fidelity!r}: expected one of "
                               f"{', '.join(FIDELITY)}, a number > 0 or a Grading") from None
    if isinstance(fidelity, (int, float)) and not isinstance(fidelity, bool) \
            and math.isfinite(fidelity) and 0.1 <= fidelity <= 50:
        base = FIDELITY["normal"]
        return Grading(base.first / fidelity, 1.0 + (base.growth - 1.0) / fidelity)
    raise StackupError(f"fidelity = {fidelity!r}: expected one of {', '.join(FIDELITY)} "
                       "or a refinement number in [0.1, 50]")


def sublayer_edges(s_lengths: Sequence[float], s0: float, growth: float,
                   max_per_layer: int = MAX_SUBLAYERS) -> list[np.ndarray]:
    """Sub-layer boundaries of consecutive layers, graded geometrically from the top.

    Parameters
    ----------
    s_lengths
        Length of each layer in the diffusion coordinate s = ∫dz/√α, √s, shape (L,);
        0 for an interface without thickness.
    s0
        First cell size at the top, √s.
    growth
        Ratio r > 1 of successive cells.

    Returns
    -------
    For each layer, the relative positions ξ in [0, 1] of its sub-layer faces (n + 1 values,
    0 and 1 included); a zero-length layer gives ``[0, 1]``.

    Notes
    -----
    Geometric cells s0·r^k have faces at s_k = s0·(r^k − 1)/(r − 1), i.e. at equal steps
    of u(s) = ln(s0 + (r − 1)s) of size ln r.  Each layer gets n = ⌈Δu/ln r⌉ cells placed
    at equal steps of u inside it, so the grading continues smoothly across layers.
    """
    out = []
    s = 0.0
    lr = math.log(growth)
    for length in s_lengths:
        if length <= 0:
            out.append(np.array([0.0, 1.0]))
            continue
        ua = math.log(s0 + (growth - 1.0) * s)
        ub = math.log(s0 + (growth - 1.0) * (s + length))
        n = min(max(1, math.ceil((ub - ua) / lr - 1e-9)), max_per_layer)
        u = np.linspace(ua, ub, n + 1)
        pos = (np.exp(u) - s0) / (growth - 1.0)
        xi = (pos - s) / length
        xi[0], xi[-1] = 0.0, 1.0
        out.append(xi)
        s += length
    return out


def _linear_roots(a0: float, slope: float, cap: float, lo: float, hi: float) -> list[float]:
    if slope <= 0 or a0 >= cap:
        return []
    z = (cap - a0) / slope
    return [z] if lo < z < hi else []


def frustum_sublayer(z0: float, z1: float, w0: float, l0: float, tan_theta: float,
                     cap: tuple[float, float] | None, k: float, rho_c: float,
                     via: tuple[float, float] | None = None) -> tuple[float, float, float]:
    """Cached front of :func:`_frustum_sublayer` (a pure function of its numbers: sweeps
    rebuild the same columns row after row)."""
    return _frustum_cached(float(z0), float(z1), float(w0), float(l0), float(tan_theta),
                           None if cap is None else (float(cap[0]), float(cap[1])),
                           float(k), float(rho_c),
                           None if via is None else (float(via[0]), float(via[1])))


@functools.lru_cache(maxsize=65536)
def _frustum_cached(z0, z1, w0, l0, tan_theta, cap, k, rho_c, via):
    return _frustum_sublayer(z0, z1, w0, l0, tan_theta, cap, k, rho_c, via)


def _frustum_sublayer(z0: float, z1: float, w0: float, l0: float, tan_theta: float,
                      cap: tuple[float, float] | None, k: float, rho_c: float,
                      via: tuple[float, float] | None = None) -> tuple[float, float, float]:
    """Conductance and capacities of one sub-layer of a spreading frustum.

    The heat path at depth z (from the layer top) is w(z) × l(z),
    w = min(w0 + 2z·tanθ, W), l = min(l0 + 2z·tanθ, L); conduction per unit length is
    q(z) = k·A(z) (+ (k_v − k)·min(A, A_v) in a via field of area A_v and conductivity k_v).

    Returns
    -------
    g
        1/∫_{z0}^{z1} dz/q(z), W/K.
    c_top, c_bottom
        ρc·∫A(z)(1 − ξ)dz and ρc·∫A(z)ξ dz, ξ = (z − z0)/(z1 − z0), J/K.
    """
    W, L = cap if cap is not None else (math.inf, math.inf)
    w0, l0 = min(w0, W), min(l0, L)
    sl = 2.0 * tan_theta
    br = {z0, z1}
    br.update(_linear_roots(w0, sl, W, z0, z1))
    br.update(_linear_roots(l0, sl, L, z0, z1))
    if via is not None and sl > 0:
        # A(z) = A_v on the uncapped pyramid: (w0 + sl z)(l0 + sl z) = A_v.
        kv, av = via
        b = sl * (w0 + l0)
        c = w0 * l0 - av
        disc = b * b - 4 * sl * sl * c
        if disc >= 0:
            for r in ((-b + math.sqrt(disc)) / (2 * sl * sl),):
                if z0 < r < z1:
                    br.add(r)
    edges = np.array(sorted(br))
    a, b_ = edges[:-1, None], edges[1:, None]
    z = 0.5 * (a + b_) + 0.5 * (b_ - a) * _GL_X[None, :]
    wq = 0.5 * (b_ - a) * _GL_W[None, :]
    w = np.minimum(w0 + sl * z, W)
    l = np.minimum(l0 + sl * z, L)
    A = w * l
    q = k * A
    if via is not None:
        kv, av = via
        q = q + (kv - k) * np.minimum(A, av)
    g = 1.0 / float(np.sum(wq / q))
    xi = (z - z0) / (z1 - z0)
    c_bot = rho_c * float(np.sum(wq * A * xi))
    c_top = rho_c * float(np.sum(wq * A)) - c_bot
    return g, c_top, c_bot


def path_size(z: float, w0: float, l0: float, tan_theta: float,
              cap: tuple[float, float] | None) -> tuple[float, float]:
    """Width and length of the heat path at depth z in a frustum layer, m."""
    W, L = cap if cap is not None else (math.inf, math.inf)
    return (min(min(w0, W) + 2 * z * tan_theta, W), min(min(l0, L) + 2 * z * tan_theta, L))


# --------------------------------------------------------------------------------------
# resolved column description
# --------------------------------------------------------------------------------------
@dataclass
class _Seg:
    """One element of a column, with its material resolved."""

    group: str                      # "part" | "board" | "mount"
    name: str
    element: Layer | AreaResistance
    material: Material | None = None
    cap: tuple[float, float] | None = None
    k_eff: float = 0.0              # through-plane conductivity times (1 - voids)
    rho_c: float = 0.0
    k_via: float | None = None      # effective conductivity in the via area
    via_area: float | None = None
    via_size: tuple[float, float] | None = None  # (width, length) of the via field, m
    angle: float = DEFAULT_ANGLE
    cap_angle: float | None = None  # angle of the heat-storing geometry (None = angle)

    @property
    def thickness(self) -> float:
        return self.element.thickness if isinstance(self.element, Layer) else 0.0

    @property
    def alpha(self) -> float:
        return self.k_eff / self.rho_c if self.rho_c > 0 else math.inf


@dataclass(frozen=True)
class NodeInfo:
    """Where a node sits: part, layer, sub-layer face index (0 = top face of the layer)."""

    part: str
    layer: str
    sublayer: int
    depth: float          # m below the footprint
    area: float           # heat-path area at this face, m²


@dataclass(frozen=True)
class LayerInfo:
    """One layer of a column after discretisation.

    The spreading half-angle (:attr:`angle`) is given as a number, or, for a calibrated
    layer, as a function that finds it (the equivalent frustum, a root search that a
    sweep row never reads): it runs on first access, once.  Equality ignores the angle
    (it follows from the layer's resistance, thickness and areas)."""

    part: str
    name: str
    group: str                 # "device" | "part" | "board" | "mount" | "sink"
    material: str
    thickness: float           # m (0 for interfaces)
    nodes: tuple[str, ...]     # face nodes, top first (shared with the neighbours)
    resistance: float          # K/W along the path through this layer
    capacity: float            # J/K stored in this layer
    _angle: float | None | Callable[[], float] = field(compare=False)  # see angle
    area_top: float            # m²
    area_bottom: float         # m²
    limit_C: float | None      # material limit, degC

    @property
    def angle(self) -> float | None:
        """Spreading half-angle used, degrees (None where nothing spreads)."""
        a = self._angle
        if callable(a):
            a = a()
            object.__setattr__(self, "_angle", a)
        return a

    @property
    def time_constant(self) -> float:
        """R·C of the layer, s."""
        return self.resistance * self.capacity


@dataclass(frozen=True)
class ColumnInfo:
    """A part's heat path from its junction to the sink."""

    part: str
    junction: str
    top: str                   # first node of the stack (junction, or case for data sheets)
    bottom: str                # last node (sink node / base boundary for a merged bottom)
    layers: tuple[LayerInfo, ...]


# --------------------------------------------------------------------------------------
# result
# --------------------------------------------------------------------------------------
@dataclass(eq=False)
class BuiltModel:
    """A stack-up turned into a :class:`ThermalNetwork`, with its bookkeeping.

    Attributes
    ----------
    network
        The RC network (temperatures in degC at its API).
    assembly
        The description it was built from.
    node_map
        Node name -> :class:`NodeInfo` (part, layer, sub-layer face).
    probes
        Junction node names (one per part), then the nodes watched for material limits.
    limits
        Probe -> temperature limit, degC: device junction limits, laminate maximum service
        temperature, solder melting point (hottest face of the layer in each column).
    inputs
        Part name -> input name of its heat (the input is named like the part).
    columns
        Part name -> :class:`ColumnInfo`.
    sink_node
        The shared sink node or boundary.
    ambient
        The boundary the rises are referred to.
    options
        Build options (spreading, angle, fidelity, t_min).
    via_fields
        The via fields used, one row per part and via layer (:func:`_via_rows`): size,
        area, through-plane conductivity and whether the size was given.
    """

    network: ThermalNetwork
    assembly: Assembly
    node_map: dict[str, NodeInfo]
    probes: tuple[str, ...]
    limits: dict[str, float]
    inputs: dict[str, str]
    columns: dict[str, ColumnInfo]
    sink_node: str
    ambient: str
    options: dict[str, Any] = field(default_factory=dict)
    via_fields: list[dict[str, Any]] = field(default_factory=list)

    @property
    def junctions(self) -> dict[str, str]:
        """Part name -> junction node."""
        return {p: c.junction for p, c in self.columns.items()}

    @property
    def node_count(self) -> int:
        """Number of free nodes of the network."""
        return len(self.network.nodes)

    def steady_resistance(self, part: str | None = None) -> float:
        """Junction rise per watt of the part's own input (others off), K/W."""
        part = part if part is not None else next(iter(self.columns))
        res = self.network.steady({self.inputs[part]: 1.0})
        return res.T(self.columns[part].junction) - res.T(self.ambient)

    def report(self, powers: Mapping[str, float] | None = None):
        """Where the heat is held up: see :func:`pulsetherm.network.report.stack_report`."""
        from .report import stack_report
        return stack_report(self, powers)


# --------------------------------------------------------------------------------------
# build
# --------------------------------------------------------------------------------------
def _resolve(group: str, e: Layer | AreaResistance, library, angle: float,
             default_cap: tuple[float, float] | None) -> _Seg:
    if isinstance(e, AreaResistance):
        return _Seg(group, e.name, e)
    mat = resolve_material(e.material, library)
    keep = 1.0 - e.void_fraction
    cap = e.size if e.size is not None else default_cap
    seg = _Seg(group, e.name, e, mat, cap, k_eff=mat.k * keep, rho_c=mat.rho_c * keep,
               angle=e.spreading_angle if e.spreading_angle is not None else angle)
    if e.vias is not None:
        seg.k_via = _via_k(e, mat)
        if e.via_area is not None:
            seg.via_size = e.via_area
    return seg


def via_field_size(part: Part, layer: Layer,
                   board_size: tuple[float, float] | None = None) -> tuple[float, float]:
    """Size (width, length) in m of the via field a part gets in ``layer``.

    The layer's own ``via_area`` when given; otherwise the footprint of the part above the
    field: the lateral size of the lowest sized layer of the part's stack (a flange, a
    package's solder pad), or the part's ``footprint`` when no stack layer has a size (a
    data-sheet device's case, a bare die's heated region).  Either is capped by the
    layer's own size (``board_size`` for a board layer without one).  Rule of this project
    (a designer fills the area under a part with vias; common practice, no source).
    """
    if layer.via_area is not None:
        w, l = layer.via_area
    else:
        sized = [e.size for e in part.stack if isinstance(e, Layer) and e.size is not None
                 and e is not layer]
        w, l = sized[-1] if sized else part.footprint
    cap = layer.size if layer.size is not None else board_size
    if cap is not None:
        w, l = min(w, cap[0]), min(l, cap[1])
    return (float(w), float(l))


def _via_k(layer: Layer, mat: Material) -> float:
    """Effective through-plane conductivity of the via field in ``layer``."""
    v = layer.vias
    for attr in ("k_z_eff", "k_eff", "k_z"):
        f = getattr(v, attr, None)
        if f is None:
            continue
        try:
            val = f(mat.k) if callable(f) else f
        except TypeError:
            val = f(k_laminate=mat.k)
        return float(val)
    if isinstance(v, (int, float)) and not isinstance(v, bool) and v > 0:
        return float(v)
    raise StackupError(f"Layer({layer.name}).vias = {v!r}: expected a via field with an "
                       "effective through-plane conductivity (k_z_eff) or a number in W/(m·K)")


def _column_segments(part: Part, asm: Assembly, library, angle: float) -> list[_Seg]:
    segs = [_resolve("part", e, library, angle, None) for e in part.stack]
    board_cap = asm.board.size if asm.board is not None else None
    if asm.board is not None:
        for e in asm.board.layers:
            s = _resolve("board", e, library, angle, board_cap)
            s.name = f"board-{s.name}"
            segs.append(s)
    for e in asm.mount.interface:
        s = _resolve("mount", e, library, angle, board_cap)
        s.name = f"mount-{s.name}"
        segs.append(s)
    for s in segs:  # every via field gets its size here, one rule for every mode
        if s.k_via is not None:
            s.via_size = via_field_size(part, s.element, s.cap)
            s.via_area = s.via_size[0] * s.via_size[1]
    return segs


def via_fields(assembly: Assembly, library=None) -> list[dict[str, Any]]:
    """The via fields every part of ``assembly`` gets (sizes by :func:`via_field_size`),
    as the rows of :attr:`BuiltModel.via_fields`, without building a network."""
    rows: list[dict[str, Any]] = []
    for part in assembly.parts:
        rows += _via_rows(part, _column_segments(part, assembly, library, DEFAULT_ANGLE))
    return rows


def _via_rows(part: Part, segs: list[_Seg]) -> list[dict[str, Any]]:
    """The via fields of one column: ``{"part", "layer", "width_m", "length_m", "area_m2",
    "k_z", "given"}`` (``given`` False when the size came from :func:`via_field_size`'s
    default rule)."""
    return [{"part": part.name, "layer": s.name, "width_m": s.via_size[0],
             "length_m": s.via_size[1], "area_m2": s.via_area,
             "k_z": s.k_via * (1.0 - s.element.void_fraction),
             "given": s.element.via_area is not None} for s in segs if s.k_via is not None]


class _Net:
    """Netlist collected while building (capacities accumulate), emitted once."""

    def __init__(self) -> None:
        self.boundaries: dict[str, float] = {}
        self.caps: dict[str, float] = {}
        self.labels: dict[str, str] = {}
        self.edges: list[tuple[str, str, float, float]] = []
        self.cauers: list[tuple[Any, str, str, str, str]] = []
        self.inputs: dict[str, dict[str, float]] = {}

    def node(self, name: str, cap: float = 0.0, label: str = "") -> str:
        if name in self.caps or name in self.boundaries:
            raise StackupError(f"node {name!r} defined twice (layer names clash in a column)")
        self.caps[name] = cap
        self.labels[name] = label
        return name

    def nodes(self, names: list[str], label: str = "") -> None:
        """:meth:`node` of several massless nodes with one label."""
        caps, labels = self.caps, self.labels
        if any(n in caps or n in self.boundaries for n in names) or \
                len(set(names)) < len(names):
            for n in names:   # the message of the first clash
                self.node(n)
        for n in names:
            caps[n] = 0.0
            labels[n] = label

    def add_cap(self, name: str, cap: float) -> None:
        if name in self.caps:
            self.caps[name] += cap

    def connect(self, a: str, b: str, g: float, a_exp: float = 0.0) -> None:
        self.edges.append((a, b, g, a_exp))

    def is_boundary(self, name: str) -> bool:
        return name in self.boundaries

    def emit(self) -> ThermalNetwork:
        net = ThermalNetwork()
        for b, T in self.boundaries.items():
            net.add_boundary(b, T)
        for n, c in self.caps.items():
            net.add_node(n, c, label=self.labels[n])
        for a, b, g, ae in self.edges:
            net.connect(a, b, conductance=g, k_exponent=ae)
        for ladder, top, bottom, prefix, label in self.cauers:
            net.add_cauer(ladder, top, bottom, prefix=prefix, label=label)
        for name, nodes in self.inputs.items():
            net.add_input(name, nodes=nodes)
        return net


def build(assembly: Assembly, *, t_min: float = DEFAULT_T_MIN,
          fidelity: str | float | Grading = "normal", spreading: str = "angle",
          angle: float = DEFAULT_ANGLE, library=None, nonlinear: bool = False,
          reference: str = "series") -> BuiltModel:
    """Turn a stack-up into a thermal RC network.

    Parameters
    ----------
    assembly
        Parts, board and mounting.
    t_min
        Shortest waveform feature to resolve near the sources, s (first sub-layer
        ``first``·√(α·t_min)).
    fidelity
        "coarse", "normal", "fine", a refinement number (2 = twice as fine as normal) or a
        :class:`Grading`.
    spreading
        "angle": frustum with each layer's angle (default ``angle``); "calibrated": the
        heat path follows the exact spreading series at every depth (equivalent flow area,
        :func:`depth_profile`; module notes), so the steady resistance of each column
        equals the published solution; "none": 1-D columns of the footprint's size.
    angle
        Default spreading half-angle, degrees (45° by common practice, no source).
    library
        Material library for layer material names (default library if ``None``).
    nonlinear
        Give each conductance its material's k(T) exponent (used by the nonlinear solver).
    reference
        Calibration reference: "series" (exact series, Yovanovich et al. 1998, with the
        compound-layer recursion of Yovanovich et al. 1999; equivalent flow area) or "lee"
        (Lee et al. 1995; one fitted angle per layer, :func:`calibrate_angles`).

    Returns
    -------
    BuiltModel
        Network, node map, probes, limits and inputs (one input per part, named like it).
    """
    if not isinstance(assembly, Assembly):
        raise StackupError(f"assembly = {assembly!r}: expected an Assembly")
    if isinstance(t_min, bool) or not isinstance(t_min, (int, float)) \
            or not (math.isfinite(t_min) and 0 < t_min < 1e4):
        raise StackupError(f"t_min = {t_min!r}: expected the shortest waveform feature in "
                           "s, > 0 and < 1e4")
    if spreading not in ("angle", "calibrated", "none"):
        raise StackupError(f"spreading = {spreading!r}: expected 'angle', 'calibrated' or "
                           "'none'")
    if isinstance(angle, bool) or not isinstance(angle, (int, float)) \
            or not 0 <= angle < 90:
        raise StackupError(f"angle = {angle!r}: expected a half-angle in degrees, [0, 90)")
    if reference not in ("series", "lee"):
        raise StackupError(f"reference = {reference!r}: expected 'series' or 'lee'")
    grade = grading(fidelity)
    nl = _Net()
    sink = assembly.mount.sink
    node_map: dict[str, NodeInfo] = {}

    # -- sink -------------------------------------------------------------------------
    if isinstance(sink, FixedBase):
        nl.boundaries["base"] = sink.temperature
        sink_node, ambient, merge = "base", "base", True
    elif isinstance(sink, LumpedSink):
        nl.boundaries["ambient"] = sink.ambient
        nl.node("sink", sink.capacity, label="sink")
        nl.connect("sink", "ambient", 1.0 / sink.resistance)
        sink_node, ambient, merge = "sink", "ambient", True
    else:
        nl.boundaries["ambient"] = sink.ambient
        ambient = "ambient"
        if sink.area is not None:
            nl.node("sink", sink.capacity, label="sink")
            nl.connect("sink", "ambient", sink.h * sink.area)
            sink_node, merge = "sink", True
        else:
            sink_node, merge = "ambient", False

    columns: dict[str, ColumnInfo] = {}
    inputs: dict[str, str] = {}
    probes: list[str] = []
    limits: dict[str, float] = {}
    board_faces: dict[str, dict[str, list[tuple[str, float, float]]]] = {}
    vias: list[dict[str, Any]] = []
    for part in assembly.parts:
        segs = _column_segments(part, assembly, library, angle)
        vias += _via_rows(part, segs)
        if spreading == "none":
            for s in segs:
                s.angle = 0.0
        profile = None
        xis = _column_xis(segs, grade, t_min)
        if spreading == "calibrated":
            if reference == "series":
                profile = depth_profile(segs, part.footprint, sink,
                                        lambda pr: _profile_points(pr, segs, xis))
            if profile is None:
                for s in segs:
                    s.cap_angle = s.angle
                calibrate_angles(segs, part.footprint, sink, reference=reference)
        col = _build_column(nl, part, segs, grade, t_min, sink, sink_node, merge,
                            nonlinear, node_map, board_faces, profile, xis)
        columns[part.name] = col
        inputs[part.name] = part.name
        probes.append(col.junction)
        if part.junction_limit is not None:
            limits[col.junction] = part.junction_limit
    for part in assembly.parts:
        for lay in columns[part.name].layers:
            if lay.limit_C is None or not lay.nodes:
                continue
            probe = lay.nodes[0]
            if nl.is_boundary(probe) or probe == sink_node:
                continue
            if probe not in limits:
                probes.append(probe)
                limits[probe] = lay.limit_C
            else:
                limits[probe] = min(limits[probe], lay.limit_C)
    if assembly.board is not None and len(assembly.parts) > 1:
        _couple_columns(nl, assembly, board_faces, library)
    net = nl.emit()
    opts = dict(t_min=t_min, fidelity=fidelity, grading=grade, spreading=spreading,
                angle=angle, nonlinear=nonlinear, reference=reference)
    return BuiltModel(net, assembly, node_map, tuple(probes), limits, inputs, columns,
                      sink_node, ambient, opts, vias)


def _via_field(seg: _Seg) -> tuple[float, float] | None:
    """(k_via, A_via) of a layer's via field (its size set by :func:`via_field_size`)."""
    if seg.k_via is None:
        return None
    return (seg.k_via * (1.0 - seg.element.void_fraction), seg.via_area)


def _column_xis(segs: list[_Seg], grade: Grading, t_min: float) -> list[np.ndarray]:
    """Sub-layer faces of a column's elements (:func:`sublayer_edges`; first sub-layer
    ``grade.first``·√t_min in the diffusion coordinate)."""
    s_len = [s.thickness / math.sqrt(s.alpha) if s.thickness > 0 else 0.0 for s in segs]
    return sublayer_edges(s_len, grade.first * math.sqrt(t_min), grade.growth)


def _build_column(nl: _Net, part: Part, segs: list[_Seg], grade: Grading, t_min: float,
                  sink, sink_node: str, merge: bool, nonlinear: bool,
                  node_map: dict, board_faces: dict,
                  profile: _Profile | None = None,
                  xis: list[np.ndarray] | None = None) -> ColumnInfo:
    p = part.name
    junction = part.junction
    top = f"{p}.case" if part.datasheet else junction
    w, l = part.footprint
    if xis is None:
        xis = _column_xis(segs, grade, t_min)
    # profile mode: the profile read at every depth the ladder needs, in one evaluation
    # (:func:`_profile_points`, in element order)
    reads = iter(profile.readings) if profile is not None and profile.readings else None
    # profile mode: every layer's sub-layers from those readings in one evaluation
    subs = _column_sublayers(profile, segs, xis) if reads is not None else None
    if subs is not None:   # and the face sizes of every layer (:meth:`_Profile.paths`)
        lay = [si for si, x in enumerate(subs) if x is not None]
        counts = [subs[si][3].size - 1 for si in lay]
        plates = np.array([profile.run_of(si).plate for si in lay]).reshape(-1, 2)
        pw_all, pl_all = profile.paths(
            np.concatenate([subs[si][3][1:] for si in lay]) if lay else np.zeros(0),
            w, l, (np.repeat(plates[:, 0], counts), np.repeat(plates[:, 1], counts)))
        pw_all, pl_all = pw_all.tolist(), pl_all.tolist()
        face_at = dict(zip(lay, np.cumsum([0] + counts).tolist()))
    layers: list[LayerInfo] = []

    if not segs:
        if merge:
            top = sink_node
        else:
            nl.node(top, 0.0, label=f"{p}/case")
            nl.connect(top, sink_node, sink.h * w * l)
            node_map[top] = NodeInfo(p, "case", 0, 0.0, w * l)
            layers.append(LayerInfo(p, "film", "sink", "film", 0.0, (top, sink_node),
                                    1.0 / (sink.h * w * l), 0.0, None, w * l, w * l, None))
    else:
        nl.node(top, 0.0, label=f"{p}/{segs[0].name}")
        node_map[top] = NodeInfo(p, segs[0].name, 0, 0.0, w * l)

    current = top
    depth = 0.0
    wc, lc = w, l
    w0, l0 = w, l
    # profile mode: resistance the ladder still owes between the stack's bottom face and
    # the sink (R_exact − R_stack − the sink's own resistance); the bottom face is merged
    # into the sink node only when nothing is owed
    extra = 0.0
    if profile is not None:
        extra = profile.r_exact - profile.r_stack
        if merge:
            extra -= _sink_r(sink, profile.plate[0] * profile.plate[1])
        extra = max(extra, 0.0)
    merge_bottom = merge and extra <= 1e-12 * (profile.r_exact if profile else 1.0)
    run_c = run_v = run_kt = 0.0  # profile mode: capacity placed / held, k·t of the run
    for si, (seg, xi) in enumerate(zip(segs, xis)):
        last_seg = si == len(segs) - 1
        label = f"{p}/{seg.name}"
        faces = [current]
        area_top = w * l
        if isinstance(seg.element, AreaResistance):
            name = sink_node if (last_seg and merge_bottom) else nl.node(
                f"{p}.{seg.name}", 0.0, label=label)
            if name != sink_node:
                node_map[name] = NodeInfo(p, seg.name, 1, depth, w * l)
            r = seg.element.r_area / (w * l)
            if profile is not None:
                zv0 = profile.top[si]
                rr, _ = next(reads) if reads is not None else profile(
                    np.array([zv0, zv0 + profile.ts[si]]))
                r = float(rr[1] - rr[0])
            nl.connect(current, name, 1.0 / r)
            faces.append(name)
            layers.append(LayerInfo(p, seg.name, seg.group, "area resistance", 0.0,
                                    tuple(faces), r, 0.0, None, area_top, area_top, None))
            current = name
            continue
        t = seg.thickness
        tan = math.tan(math.radians(seg.angle))
        tan_c = tan if seg.cap_angle is None else math.tan(math.radians(seg.cap_angle))
        via = _via_field(seg)
        mat = seg.material
        a_exp = mat.k_exponent if nonlinear else 0.0
        R_layer, C_layer = 0.0, 0.0
        z = xi * t
        if profile is not None:
            if subs is not None:
                pg, pct, pcb, pA = subs[si]
                next(reads), next(reads)   # its two readings (faces, points), used there
            else:
                pg, pct, pcb, pA = _profile_sublayers(profile, seg, profile.top[si], z, via,
                                                      profile.ts[si] / t)
            if via is not None:
                # never above a 1-D column of the footprint through the layer (a field
                # smaller than the part: the flow area of the via-filled series can be
                # narrower than the footprint where it leaves a wide plate)
                kv, av = via
                fp = w0 * l0
                r_col = t / (seg.k_eff * fp + (kv - seg.k_eff) * min(fp, av))
                r_sum = float(np.sum(1.0 / pg))
                if r_sum > r_col:
                    pg = pg * (r_sum / r_col)
        if profile is not None:
            # the faces of the layer at once: the sums, capacities and edges of the loop
            # below in its order
            pg_l, pct_l, pcb_l = pg.tolist(), pct.tolist(), pcb.tolist()
            if subs is not None:
                f0 = face_at[si]
                pw, pl = pw_all[f0:f0 + pg.size], pl_all[f0:f0 + pg.size]
            else:
                pw, pl = profile.paths(pA[1:], w0, l0, profile.run_of(si).plate)
                pw, pl = pw.tolist(), pl.tolist()
            zl = z.tolist()
            for g in pg_l:
                R_layer += 1.0 / g
            for c_top, c_bot in zip(pct_l, pcb_l):
                C_layer += c_top + c_bot
            n_sub = len(pg_l)
            names = [f"{p}.{seg.name}.{kk}" for kk in range(1, n_sub + 1)]
            if last_seg and merge_bottom:
                names[-1] = sink_node
            new = names[:-1] if last_seg and merge_bottom else names
            nl.nodes(new, label=label)
            for kk, name in enumerate(new):
                node_map[name] = NodeInfo(p, seg.name, kk + 1, depth + zl[kk + 1],
                                          pw[kk] * pl[kk])
            caps = nl.caps
            for name, c_bot in zip(names, pcb_l):
                if name in caps:
                    caps[name] += c_bot
            for name, c_top in zip([current] + names[:-1], pct_l):
                if name in caps:
                    caps[name] += c_top
            nl.edges.extend((a, b_, g, a_exp) for a, b_, g in zip([current] + names[:-1], names,
                                                                  pg_l))
            faces.extend(names)
            current = names[-1]
        for kk in range(len(xi) - 1) if profile is None else ():
            g, c_top, c_bot = frustum_sublayer(z[kk], z[kk + 1], w, l, tan, seg.cap,
                                               seg.k_eff, seg.rho_c, via)
            if seg.cap_angle is not None:
                # calibrated: conduction through the fitted frustum, heat stored in the
                # default-angle one (a wide fitted angle must not add early capacity)
                _, c_top, c_bot = frustum_sublayer(z[kk], z[kk + 1], wc, lc, tan_c,
                                                   seg.cap, seg.k_eff, seg.rho_c, via)
            R_layer += 1.0 / g
            C_layer += c_top + c_bot
            ww, ll = path_size(z[kk + 1], w, l, tan, seg.cap)
            if kk == len(xi) - 2 and last_seg and merge_bottom:
                name = sink_node
            else:
                name = nl.node(f"{p}.{seg.name}.{kk + 1}", 0.0, label=label)
                node_map[name] = NodeInfo(p, seg.name, kk + 1, depth + z[kk + 1], ww * ll)
            nl.add_cap(name, c_bot)
            nl.add_cap(current, c_top)
            nl.connect(current, name, g, a_exp)
            faces.append(name)
            current = name
        if profile is not None:
            w_new, l_new = pw[-1], pl[-1]
            seg.angle = functools.partial(_equivalent_angle, R_layer, t, w, l, seg)
        else:
            w_new, l_new = path_size(t, w, l, tan, seg.cap)
        wc, lc = path_size(t, wc, lc, tan_c, seg.cap)
        if profile is not None:
            run = profile.run_of(si)
            run_c += C_layer
            run_v += seg.rho_c * t * run.plate[0] * run.plate[1]
            run_kt += mat.k_inplane * (1.0 - seg.element.void_fraction) * t
            if si == run.last and run is not profile.runs[-1]:
                rim = max(run_v - run_c, 0.0)
                rim *= _rim_share(profile, run, run_kt, float(pA[-1]))
                C_layer += _rim_rings(nl, node_map, p, seg.name, current, rim, run_kt,
                                      float(pA[-1]), run.b, depth + t)
                run_c = run_v = run_kt = 0.0
        layers.append(LayerInfo(p, seg.name, seg.group, mat.name, t, tuple(faces), R_layer,
                                C_layer, seg.angle, area_top, w_new * l_new, mat.t_max_C))
        if seg.group == "board":
            # thickness each face stands for (half of each neighbouring sub-layer)
            share = np.zeros(len(xi))
            d = np.diff(xi) * t
            share[:-1] += 0.5 * d
            share[1:] += 0.5 * d
            board_faces.setdefault(seg.name, {})[p] = [
                (f, float(share[i]), 0.5 * (w + w_new)) for i, f in enumerate(faces)]
        w, l = w_new, l_new
        depth += t
    if segs and profile is not None and not merge_bottom and extra > 0:
        # profile mode over a finite sink: the resistance still owed (the sink's extra
        # constriction R_sp(h) − R_sp(∞), plus the film itself when it is not a node)
        # as two halves around a node that holds the heat capacity of the layers' volume
        # the equivalent flow area leaves out (the lateral spreading toward the film)
        c_real = sum(sg.rho_c * sg.thickness * (sg.cap[0] * sg.cap[1] if sg.cap
                                                 else profile.plate[0] * profile.plate[1])
                     for sg in segs if isinstance(sg.element, Layer))
        c_rest = max(c_real - sum(lay.capacity for lay in layers), 0.0)
        last = profile.runs[-1]
        kt_last = sum(sg.material.k_inplane * (1.0 - sg.element.void_fraction) * sg.thickness
                      for sg in segs[last.first:last.last + 1] if isinstance(sg.element, Layer))
        mid = nl.node(f"{p}.spread", 0.0 if not merge else c_rest, label=f"{p}/spread")
        node_map[mid] = NodeInfo(p, "spread", 1, depth, profile.plate[0] * profile.plate[1])
        if not merge:  # the rim of the plate over the film: rings fed from the path
            _rim_rings(nl, node_map, p, "spread", mid, c_rest, kt_last, w * l, last.b, depth)
        # a film under the plate itself: that volume sits above the film, behind only the
        # extra constriction (halves around it held the plate's rim half a film away:
        # step responses 30-100 % high over a 2000 W/m²K film)
        r_film = 0.0 if merge else min(_sink_r(sink, profile.plate[0] * profile.plate[1]),
                                       extra)
        r_up = extra - r_film if r_film > 0 else 0.5 * extra
        if r_up <= 1e-9 * extra:
            r_up = 1e-9 * extra
        nl.connect(current, mid, 1.0 / r_up)
        nl.connect(mid, sink_node, 1.0 / max(extra - r_up, 1e-9 * extra))
        layers.append(LayerInfo(p, "film" if not merge else "sink-constriction", "sink",
                                "film", 0.0, (current, mid, sink_node), extra, c_rest, None,
                                w * l, profile.plate[0] * profile.plate[1], None))
    elif segs and not merge:
        r_film = 1.0 / (sink.h * w * l)
        nl.connect(current, sink_node, 1.0 / r_film)
        layers.append(LayerInfo(p, "film", "sink", "film", 0.0, (current, sink_node),
                                r_film, 0.0, None, w * l, w * l, None))
    elif sink_node == "sink":
        r = sink.resistance if isinstance(sink, LumpedSink) else 1.0 / (sink.h * sink.area)
        layers.append(LayerInfo(p, "sink", "sink", "sink", 0.0, ("sink", "ambient"), r,
                                sink.capacity, None, w * l, w * l, None))

    if part.datasheet:
        ladder = part.foster.to_cauer() if part.foster is not None else _SingleR(part.rth)
        nl.cauers.append((ladder, junction, top, f"{p}.jc", f"{p}/device"))
        n = len(ladder.R)
        names = [junction] + [f"{p}.jc.{k}" for k in range(1, n)]
        for k, nm in enumerate(names):
            node_map[nm] = NodeInfo(p, "device", k, 0.0, part.footprint[0] * part.footprint[1])
        a0 = part.footprint[0] * part.footprint[1]
        layers.insert(0, LayerInfo(p, "device", "device", "junction-to-case", 0.0,
                                   tuple(names) + (top,), float(np.sum(ladder.R)),
                                   float(np.sum(ladder.C)), None, a0, a0, None))
    nl.inputs[p] = {junction: 1.0}
    return ColumnInfo(p, junction, top, current, tuple(layers))


def _rim_share(profile: _Profile, run: _Run, kt: float, path_area: float) -> float:
    """Share of a run's rim capacity the ladder hangs as dead-end rings: the rim sits on
    the wider run below and drains into it, so it warms only as far as lateral conduction
    feeds it faster than the run below takes the heat away,

        G_lat / (G_lat + G_down),  G_lat = 2π·Σk_r·t / ln(b/r_0),
        G_down = π(b² − r_0²) / Σ(t/k) of the next run's layers down to (b − r_0)/2

    (r_0 the path radius, b the plate's; two conductances in competition, common
    practice, no source).  A flange on laminate keeps nearly all of it (the board drains
    little); a die on a copper or CuW base keeps about a tenth (all of it read 12 % low
    against the r-z mesh at 10 ms for a 1 mm source on a 3 mm SiC die on a 6 mm base)."""
    i = profile.runs.index(run)
    nxt = profile.runs[i + 1]
    r0 = math.sqrt(min(path_area, 0.99 * math.pi * run.b ** 2) / math.pi)
    if kt <= 0.0 or r0 >= 0.95 * run.b:
        return 1.0
    g_lat = 2.0 * math.pi * kt / math.log(run.b / r0)
    ks, ts = _truncate(nxt.ks, nxt.ts, 0.5 * (run.b - r0))  # drains ~ half its width deep
    r_area = sum(t / k for k, t in zip(ks, ts))
    g_down = math.pi * (run.b ** 2 - r0 ** 2) / max(r_area, 1e-300)
    return g_lat / (g_lat + g_down)


def _rim_rings(nl: _Net, node_map: dict, p: str, layer: str, face: str, rim: float,
               kt: float, path_area: float, b: float, depth: float, n: int = 3) -> float:
    """Heat capacity of a run's rim (its volume outside the equivalent flow path: a
    flange's outer part) as ``n`` rings hung on the run's bottom face ``face``.

    The annulus from the path radius r_0 = √(A_path/π) to the plate radius b is cut at
    geometric radii r_i = r_0·(b/r_0)^{i/n}; ring i holds the share π(r_{i+1}² − r_i²)/
    π(b² − r_0²) of ``rim`` at its mean radius ρ_i = √((r_i² + r_{i+1}²)/2) and is joined
    to its inner neighbour (the face at r_0 for the first) by the radial conductance of the
    run's layers, 2π·Σk_r·t/ln(ρ_i/ρ_{i−1}) (cylindrical shells; common practice, no
    source).  The rings are dead ends: the steady state is unchanged, while the rim fills
    as lateral diffusion reaches it.  Returns the capacity placed, J/K.
    """
    if rim <= 0.0:
        return 0.0
    r0 = math.sqrt(min(path_area, math.pi * b * b) / math.pi)
    if r0 >= 0.95 * b or kt <= 0.0 or nl.is_boundary(face):
        if nl.is_boundary(face):
            return 0.0
        nl.add_cap(face, rim)
        return rim
    r = r0 * (b / r0) ** (np.arange(n + 1) / n)
    share = np.diff(r ** 2) / (b * b - r0 * r0)
    rho = np.sqrt(0.5 * (r[:-1] ** 2 + r[1:] ** 2))
    prev, prev_r = face, r0
    for i in range(n):
        name = nl.node(f"{p}.{layer}.rim{i + 1}", rim * float(share[i]),
                       label=f"{p}/{layer} rim")
        node_map[name] = NodeInfo(p, f"{layer} rim", i + 1, depth,
                                  math.pi * float(r[i + 1] ** 2 - r[i] ** 2))
        nl.connect(prev, name, 2.0 * math.pi * kt / math.log(rho[i] / prev_r))
        prev, prev_r = name, float(rho[i])
    return rim


@dataclass(frozen=True)
class _SingleR:
    """A junction-to-case resistance alone: one massless stage."""

    rth: float

    @property
    def R(self) -> np.ndarray:
        return np.array([self.rth])

    @property
    def C(self) -> np.ndarray:
        return np.array([0.0])


def _couple_columns(nl: _Net, asm: Assembly, board_faces: dict, library) -> None:
    """In-plane conduction of the board layers between part columns.

    g = k_inplane·t·w̄/d between each pair of columns in each board layer: a strip of the
    mean heat-path width w̄ over the centre distance d (at least w̄), spread over the
    layer's face nodes in proportion to the thickness each face stands for (a coarse
    lateral model; common practice, no source).
    """
    parts = asm.parts
    for e in asm.board.layers:
        if not isinstance(e, Layer):
            continue
        name = f"board-{e.name}"
        mat = resolve_material(e.material, library)
        k_in = mat.k_inplane * (1.0 - e.void_fraction)
        faces = board_faces.get(name, {})
        for i in range(len(parts)):
            for j in range(i + 1, len(parts)):
                fa, fb = faces.get(parts[i].name), faces.get(parts[j].name)
                if not fa or not fb:
                    continue
                (xa, ya), (xb, yb) = parts[i].position, parts[j].position
                wbar = 0.5 * (np.mean([f[2] for f in fa]) + np.mean([f[2] for f in fb]))
                d = max(math.hypot(xb - xa, yb - ya), wbar)
                ta = np.array([f[1] for f in fa])
                tb = np.array([f[1] for f in fb])
                g = k_in * float(ta.sum()) * wbar / d
                # the layer-mean temperature of each column: faces weighted by thickness
                wa, wb = ta / ta.sum(), tb / tb.sum()
                for (na, _, _), xa_ in zip(fa, wa):
                    for (nb, _, _), xb_ in zip(fb, wb):
                        if xa_ * xb_ > 0 and not (nl.is_boundary(na) and nl.is_boundary(nb)) \
                                and na != nb:
                            nl.connect(na, nb, g * xa_ * xb_)


# --------------------------------------------------------------------------------------
# calibrated spreading: equivalent flow area from the exact layered series
# --------------------------------------------------------------------------------------
_GL6_X, _GL6_W = np.polynomial.legendre.leggauss(6)


@dataclass
class _Run:
    """A run of consecutive column elements of one lateral size (see :func:`depth_profile`).

    Depths are virtual (an area resistance r is a layer of the material below of thickness
    r·k_below); ``z0`` is where the run starts in that coordinate.
    """

    first: int
    last: int
    a: float                   # source radius (equal-area circle of the heat entry), m
    b: float                   # plate radius (equal-area circle of the run's size), m
    plate: tuple[float, float]
    ks: list[float]
    ts: list[float]
    z0: float
    offset: float = 0.0
    r_1d: float = 0.0          # 1-D resistance of the run's layers over its plate
    r_cut: float = 0.0         # R of the run alone over an isothermal plane at its bottom
    #                            (set for the last run only: the chain needs no other)
    cross: float = 0.0         # coupling with the wider run below (:func:`_cross_term`)

    def local(self, z: np.ndarray, slope_only: np.ndarray | None = None
              ) -> tuple[np.ndarray, np.ndarray]:
        """R and dR/dz of the run alone, cut at local depths ``z`` (0 < z ≤ Σt, or 0);
        where ``slope_only`` is true R may be NaN (not summed)."""
        from .spreading import circular_depth_profile
        R = np.zeros(z.shape)
        dR = np.full(z.shape, 1.0 / (self.ks[0] * math.pi * self.a * self.a))
        pos = z > 0
        if np.any(pos):
            R[pos], dR[pos] = circular_depth_profile(
                self.a, self.b, self.ks, self.ts, np.minimum(z[pos], sum(self.ts)),
                slope_only=None if slope_only is None else slope_only[pos])
        return R, dR


@dataclass
class _Profile:
    """Depth profile of a column's exact steady spreading (see :func:`depth_profile`).

    Depths here are *virtual*: an area resistance r is a layer of the material below of
    thickness r·k_below, so ``top[j]`` is where element j starts in that coordinate.
    """

    a: float
    b: float
    ks: list[float]
    ts: list[float]
    top: list[float]
    plate: tuple[float, float]  # the last run's plate (what the sink sees)
    r_exact: float            # mean source rise of the whole stack over the real sink, K/W
    r_stack: float            # the ladder's resistance at the column's bottom face, K/W
    runs: list[_Run] = field(default_factory=list)
    _cross_tab: dict = field(default_factory=dict, repr=False)
    readings: list = field(default_factory=list, repr=False)  # see :func:`depth_profile`

    def run_of(self, j: int) -> _Run:
        """The run element ``j`` belongs to."""
        return next(r for r in self.runs if r.first <= j <= r.last)

    def _sp_merged(self, j: int, d: np.ndarray, slope_only: np.ndarray | None = None
                   ) -> tuple[np.ndarray, np.ndarray]:
        """Spreading part (total minus 1-D) of run j's source over the whole stack below it
        taken at run j's radius, cut at depth ``d`` below the run's top; and its slope
        (where ``slope_only`` is true the part itself may be NaN)."""
        from .spreading import circular_depth_profile
        run = self.runs[j]
        if run.a >= run.b * (1 - 1e-12):
            return np.zeros(d.shape), np.zeros(d.shape)
        ks, ts = self.ks[run.first:], self.ts[run.first:]
        R, dR = circular_depth_profile(run.a, run.b, ks, ts, d, slope_only=slope_only)
        zb = np.concatenate([[0.0], np.cumsum(ts)])
        cum = np.concatenate([[0.0], np.cumsum(np.array(ts) / np.array(ks))])
        i = np.minimum(np.searchsorted(zb, d, side="right") - 1, len(ks) - 1)
        area = math.pi * run.b * run.b
        k_at = np.array(ks)[i]
        return R - (cum[i] + (d - zb[i]) / k_at) / area, dR - 1.0 / (k_at * area)

    def _cross(self, j: int, m: int, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Coupling term of run j with the wider run below (:func:`_cross_term`) for the
        column cut at depth z inside run m, and its slope: tabulated at every layer face of
        run m and at the middle of each layer, piecewise linear in z (0 at the top
        of the run right below run j, where nothing lies under it).  Tabulating by layer
        keeps a thin copper layer (where the term hardly moves) apart from the laminate
        under it (where it does)."""
        key = (j, m)
        if key not in self._cross_tab:
            run, nxt = self.runs[j], self.runs[j + 1]
            zq, start, stacks = _table_stacks(self.runs, j, m, self.ks, self.ts)
            vals = np.zeros(zq.size)
            if nxt.b > run.b * (1 + 1e-9):
                vals[start:] = _cross_terms(run.a, run.b, nxt.b, stacks,
                                            run.last + 1 - run.first, math.inf)
            self._cross_tab[key] = (zq, vals)
        zq, vals = self._cross_tab[key]
        zc = np.clip(z, zq[0], zq[-1])
        i = np.clip(np.searchsorted(zq, zc, side="right") - 1, 0, zq.size - 2)
        slope = (vals[i + 1] - vals[i]) / (zq[i + 1] - zq[i])
        return vals[i] + slope * (zc - zq[i]), slope

    def __call__(self, zv: np.ndarray, slope_only: np.ndarray | None = None
                 ) -> tuple[np.ndarray, np.ndarray]:
        """The ladder's cumulative resistance R(z) and dR/dz at virtual depths ``zv``
        (R(0) = 0): the column cut at z, every run above the cut complete, evaluated by the
        chain of :func:`depth_profile` over an isothermal cut plane.  For z in run m

            R(z) = R_cut,m(z − z0_m) + Σ_{j<m} [R_1D,j + R_sp,j(z) + X_j(z)]

        with R_cut,m the run alone over the cut, R_sp,j the spreading part of run j's
        source over the stack below it at run j's radius, cut at z, and X_j the coupling
        term with the wider run below (:func:`_cross_term`, negative where run j carries
        heat to its rim); dR/dz is kept at or above the 1-D slope over run m's plate.  A
        depth on a run boundary belongs to the run above; R is continuous there."""
        zv = np.asarray(zv, dtype=float)
        R = np.zeros(zv.shape)
        dR = np.zeros(zv.shape)
        bottoms = np.array([r.z0 + sum(r.ts) for r in self.runs])
        idx = np.minimum(np.searchsorted(bottoms, zv * (1 - 1e-12), side="left"),
                         len(self.runs) - 1)
        # run j's spreading part at every depth below run j, in one series evaluation
        below = []
        for j, up in enumerate(self.runs[:-1]):
            deeper = idx > j
            below.append((deeper, *self._sp_merged(
                j, np.maximum(zv[deeper] - up.z0, 1e-300),
                None if slope_only is None else slope_only[deeper])
                           ) if np.any(deeper) else None)
        for m, run in enumerate(self.runs):
            sel = idx == m
            if not np.any(sel):
                continue
            z = np.maximum(zv[sel] - run.z0, 0.0)
            Rl, dRl = run.local(z, None if slope_only is None else slope_only[sel])
            for j in range(m):
                up = self.runs[j]
                deeper, sp_j, dsp_j = below[j]
                pick = sel[deeper]
                sp, dsp = sp_j[pick], dsp_j[pick]
                x, dx = self._cross(j, m, z)
                Rl = Rl + up.r_1d + sp + x
                dRl = dRl + dsp + dx
            # a slab dz adds at least its 1-D resistance over the plate (Thomson's
            # principle: uniform flux dissipates least); guards the tabulated coupling
            k_at = np.array(self.ks)[np.minimum(
                np.searchsorted(np.array(self.top), zv[sel] * (1 - 1e-12),
                                side="right") - 1, len(self.ks) - 1)]
            dR[sel] = np.maximum(dRl, 1.0 / (k_at * math.pi * run.b * run.b))
            R[sel] = Rl
        return R, dR

    def read(self, sets: Sequence[tuple[np.ndarray, bool]]
             ) -> list[tuple[np.ndarray, np.ndarray]]:
        """:meth:`__call__` at several sets of depths ``(depths, slope_only)`` in one
        evaluation (the series are summed once for all of them); one (R, dR/dz) pair per
        set, R NaN in a set read for its slope only."""
        R, dR = self(np.concatenate([np.ravel(x) for x, _ in sets]),
                     np.concatenate([np.full(np.size(x), bool(so)) for x, so in sets]))
        ends = np.cumsum([np.size(x) for x, _ in sets])[:-1]
        return list(zip(np.split(R, ends), np.split(dR, ends)))

    def paths(self, areas: np.ndarray, w0: float, l0: float,
              plate: tuple[float, float] | None = None) -> tuple[np.ndarray, np.ndarray]:
        """w × l rectangles of ``areas`` grown from the footprint w0 × l0 as frustums (both
        sides out by the same amount, capped by ``plate``, default the last run's; one
        plate, or arrays of one per area): node bookkeeping only."""
        W, L = plate if plate is not None else self.plate
        areas = np.asarray(areas, dtype=float)
        f = np.sqrt(areas / (w0 * l0))
        s = 0.5 * (-(w0 + l0) + np.sqrt((w0 - l0) ** 2 + 4.0 * areas))
        small = areas <= w0 * l0
        w = np.where(small, w0 * f, w0 + s)
        l = np.where(small, l0 * f, l0 + s)
        wide = ~small & (w > W)
        long_ = ~small & ~wide & (l > L)
        w, l = (np.where(wide, W, np.where(long_, np.minimum(areas / L, W), w)),
                np.where(wide, np.minimum(areas / W, L), np.where(long_, L, l)))
        return w, l


def _series_layer(seg: _Seg) -> tuple[float, float]:
    """Conductivity and (virtual) thickness of a layer in the layered spreading series.

    The series needs one uniform, isotropic conductivity per layer across its plate.  A
    layer of through-plane k_z and in-plane k_r becomes the isotropic layer √(k_z·k_r),
    t·√(k_r/k_z) (below).  A
    via field conducts through-plane at its k_z and in-plane hardly better than the
    laminate (k_r, the laminate's in-plane value): an orthotropic layer, which the series
    takes as the isotropic layer of conductivity √(k_z·k_r) and thickness t·√(k_r/k_z)
    (same through-plane resistance, same lateral spreading; the standard stretching of an
    orthotropic layer, e.g. Muzychka, Culham & Yovanovich, J. Electronic Packaging 125,
    2003).  The field's k_z is taken across the whole plate, so the profile is a lower
    bound of the resistance (raising a conductivity never raises it: Rayleigh's
    monotonicity law, Doyle & Snell 1984); :func:`_profile_sublayers` then takes the
    field's finite area back, depth by depth.  (Smearing k_z over the plate by area
    fraction, the rule before, kept too little of it under the part: an LDMOS flange over
    a via field read 85.5 K through the laminate against 9.8 K for a 1-D column; taken
    isotropic, k_z spread the heat across the board to a film under it: 33 % low.)
    """
    keep = 1.0 - seg.element.void_fraction
    if seg.k_via is None:
        # a plain orthotropic layer (a glass-weave laminate conducts better in-plane)
        # is stretched the same way; an isotropic one is unchanged
        kr = seg.material.k_inplane * keep
        if math.isclose(kr, seg.k_eff, rel_tol=1e-12):
            return seg.k_eff, seg.thickness
        return math.sqrt(seg.k_eff * kr), seg.thickness * math.sqrt(kr / seg.k_eff)
    kz = seg.k_via * keep
    kr = min(seg.material.k_inplane * keep, kz)
    return math.sqrt(kz * kr), seg.thickness * math.sqrt(kr / kz)


def _same_plate(p: tuple[float, float], q: tuple[float, float]) -> bool:
    """One lateral size: |p − q| ≤ 1e-8 m + 1e-9·|q| side by side (the test of
    ``numpy.allclose(p, q, rtol=1e-9)``, without its array set-up)."""
    return all(abs(x - y) <= 1e-8 + 1e-9 * abs(y) for x, y in zip(p, q))


def _element_plates(segs: list[_Seg]) -> list[tuple[float, float]] | None:
    """Lateral size of every element: its own; a layer with no size takes the nearest
    sized layer below (above if none); an area resistance joins the element above it.
    ``None`` when no layer has a size."""
    caps = [s.cap for s in segs]
    if not any(c is not None for c in caps):
        return None
    plates = []
    for j in range(len(segs)):
        p = next((c for c in caps[j:] if c is not None), None)
        if p is None:
            p = next(c for c in reversed(caps[:j]) if c is not None)
        plates.append(p)
    for j in range(1, len(segs)):
        if isinstance(segs[j].element, AreaResistance):
            plates[j] = plates[j - 1]
    return plates


def _phi_stacks(zeta: np.ndarray, stacks: Sequence[tuple[np.ndarray, np.ndarray]],
                h: float | Sequence[float]) -> np.ndarray:
    """:func:`pulsetherm.network.spreading.layer_phi` of several stacks (top first) over
    the film ``h`` (one for all, or one per stack), shape (len(stacks), ζ.size), each row
    seeing exactly the operations of its own stack.

    Stacks that are one column cut at several depths (each the layers of the longest down
    to its last one, that one thinner or as thick) run the recursion together, bottom up
    through the longest stack's layers: a row starts at its own last layer and follows the
    shared layers above it (:func:`_phi_cut_stacks`).  Other stacks run it in groups of the
    same layers and film that differ only in the thickness of their last layer."""
    from .spreading import _phi_up

    hs = [h] * len(stacks) if np.ndim(h) == 0 else list(h)
    if len(stacks) > 1:
        out = _phi_cut_stacks(zeta, stacks, hs)
        if out is not None:
            return out
    out = np.empty((len(stacks), zeta.size))
    groups: dict = {}
    for q, (ks, ts) in enumerate(stacks):
        groups.setdefault((ks.tobytes(), ts[:-1].tobytes(), hs[q]), []).append(q)
    for (_, _, hq), rows in groups.items():
        ks, ts = stacks[rows[0]]
        t_last = np.array([stacks[q][1][-1] for q in rows])
        out[rows] = _phi_up(np.tanh(zeta[None, :] * t_last[:, None]), zeta, ks, ts, hq)
    return out


def _phi_cut_stacks(zeta: np.ndarray, stacks: Sequence[tuple[np.ndarray, np.ndarray]],
                    hs: Sequence[float]) -> np.ndarray | None:
    """The recursion of :func:`_phi_stacks` for stacks that are one column cut at several
    depths, or ``None`` when they are not.  Row q starts at its last layer j_q,
    φ = tanh(ζt) (over a film h: [tanh(ζt) + kζ/h]/[1 + (kζ/h)·tanh(ζt)]), and takes
    φ ← [T_i + (k_i/k_{i+1})φ]/[1 + (k_i/k_{i+1})φ·T_i] for each layer i above it: the
    operations of :func:`pulsetherm.network.spreading._phi_up` on its own stack."""
    sp_k, sp_t = max(stacks, key=lambda st: st[0].size)
    n = sp_k.size
    kb, tb = sp_k.tobytes(), sp_t.tobytes()
    last = np.empty(len(stacks), dtype=int)
    for q, (ks, ts) in enumerate(stacks):
        m = ks.size
        if ks.tobytes() != kb[:8 * m] or ts[:-1].tobytes() != tb[:8 * (m - 1)]:
            return None
        last[q] = m - 1
    # rows by their last layer, deepest first: the rows under way at layer i are a head
    order = np.argsort(-last, kind="stable")
    last = last[order]
    t_last = np.array([stacks[q][1][-1] for q in order.tolist()])
    p = np.tanh(zeta[None, :] * t_last[:, None])     # each row's own last layer
    for r_, q in enumerate(order.tolist()):
        if not math.isinf(hs[q]):
            x = sp_k[last[r_]] * zeta / hs[q]
            p[r_] = (p[r_] + x) / (1.0 + x * p[r_])
    ends = np.searchsorted(-last, -np.arange(n), side="left")  # rows with last > i: [:ends[i]]
    for i in range(n - 2, -1, -1):
        k = int(ends[i])
        if k:
            th = np.tanh(zeta * sp_t[i])
            r = (sp_k[i] / sp_k[i + 1]) * p[:k]
            p[:k] = (th + r) / (1.0 + r * th)
    out = np.empty_like(p)
    out[order] = p
    p = out
    return p


def _admittance_up(zeta: np.ndarray, ks: Sequence[float],
                   ts: Sequence[float]) -> np.ndarray:
    """Admittance Y = q/θ a surface flux mode of wavenumber ζ sees at the *bottom* of a
    stack of layers (top first) whose top is adiabatic, W/(m²·K): layer by layer from the
    top,

        Y_i = k_i ζ·[tanh(ζt_i) + Y_{i−1}/(k_i ζ)] / [1 + (Y_{i−1}/(k_i ζ))·tanh(ζt_i)],
        Y_0 = 0

    (the transmission-line transform of Yovanovich, Muzychka & Culham 1999 run upwards)."""
    Y = np.zeros_like(zeta)
    for k, t in zip(ks, ts):
        th = np.tanh(zeta * t)
        kz = k * zeta
        y = Y / kz
        Y = kz * (th + y) / (1.0 + y * th)
    return Y


def _transfer(zeta: np.ndarray, ks: Sequence[float], ts: Sequence[float]) -> np.ndarray:
    """Flux transmission q_bottom/q_top of a stack (top first) over an isothermal bottom
    for a surface flux mode of wavenumber ζ.

    Layer i over the layers below it (spreading function φ_{i+1} of
    :func:`pulsetherm.network.spreading.layer_phi`, isothermal bottom) passes

        q_b/q_t = 1/[cosh(ζt_i) + (k_i/k_{i+1})·φ_{i+1}·sinh(ζt_i)]

    (the last layer: 1/cosh(ζt); written with e^{−ζt} to stay finite)."""
    from .spreading import _phi
    ks = np.asarray(ks, dtype=float)
    ts = np.asarray(ts, dtype=float)
    out = np.ones_like(zeta)
    for i in range(len(ks)):
        if i + 1 < len(ks):
            ratio = ks[i] / ks[i + 1]
            phi = _phi(zeta, ks[i + 1:], ts[i + 1:], math.inf)
        else:
            ratio, phi = 0.0, np.zeros_like(zeta)
        e = np.exp(-2.0 * zeta * ts[i])
        out = out * 2.0 * np.sqrt(e) / ((1.0 + e) + ratio * phi * (1.0 - e))
    return out


#: modes of the narrow run in the coupled interface solution of :func:`_cross_term`, and
#: wide-run modes per narrow mode and radius ratio (at most _COUPLED_WIDE_MAX)
_COUPLED_MODES = 32
_COUPLED_WIDE = 4.0
_COUPLED_WIDE_MAX = 4096


def _cross_term(a: float, b: float, b2: float, ks: Sequence[float], ts: Sequence[float],
                n_run: int, h: float, n_up: int | None = None) -> float:
    """:func:`_cross_term_uncached` through the cache of :func:`_cross_terms` (one stack)."""
    return float(_cross_terms(a, b, b2, [(ks, ts)], n_run, h, n_up)[0])


def _cross_terms(a: float, b: float, b2: float,
                 stacks: Sequence[tuple[Sequence[float], Sequence[float]]], n_run: int,
                 h: float | Sequence[float], n_up: int | None = None) -> np.ndarray:
    """:func:`_cross_term_uncached` for several stacks ``(ks, ts)`` that share the run (their
    first ``n_run`` layers) and differ below it (the column cut at several depths), cached
    as a pure function of its numbers: sweeps that vary power, timing or the sink rebuild
    the same columns, and this series is the costly part of a calibrated build.  ``h``: the
    film under every stack, or one per stack.  Returns a fresh array, one value per
    stack."""
    if n_up is None:
        n_up = _COUPLED_MODES
    key = tuple((tuple(map(float, k)), tuple(map(float, t))) for k, t in stacks)
    hk = float(h) if np.ndim(h) == 0 else tuple(map(float, h))
    return np.array(_cross_terms_cached(float(a), float(b), float(b2), key, int(n_run),
                                        hk, int(n_up)))


@functools.lru_cache(maxsize=1024)
def _cross_terms_cached(a, b, b2, stacks, n_run, h, n_up) -> tuple[float, ...]:
    return tuple(_cross_terms_uncached(a, b, b2, stacks, n_run, h, n_up))


def _cross_term_uncached(a: float, b: float, b2: float, ks: Sequence[float],
                         ts: Sequence[float], n_run: int, h: float,
                         n_up: int = _COUPLED_MODES) -> float:
    """Coupling of a narrow run and the wider region below it, K/W: one stack of
    :func:`_cross_terms_uncached` (the equations are there)."""
    return _cross_terms_uncached(a, b, b2, [(ks, ts)], n_run, h, n_up)[0]


def _cross_terms_uncached(a: float, b: float, b2: float,
                          stacks: Sequence[tuple[Sequence[float], Sequence[float]]],
                          n_run: int, h: float | Sequence[float],
                          n_up: int = _COUPLED_MODES) -> list[float]:
    """Coupling of a narrow run (radius ``b``, its ``n_run`` layers at the head of ``ks``,
    ``ts``) and the wider region below it (radius ``b2``, the remaining layers over the
    film ``h``, one for all stacks or one per stack): the exact mean source rise minus the
    modal split of :func:`depth_profile`, K/W (negative when the run carries heat to its
    rim, where the wider layers take it up: a flange on a board); one value for each
    stack ``(ks, ts)`` of ``stacks``, which must share their first ``n_run`` layers (the
    parts of the run alone are computed once).

    Interface r < b between the run and the region below, solved in the run's modes
    J0(δ_n r), δ_n = λ_n/b (λ_0 = 0, λ_n the roots of J1), n = 0 ... N:

    * source (isoflux, radius a, 1 W): flux amplitudes A_0 = 1/(πb²),
      A_n = 2J1(δ_n a)/(π a b² δ_n J0²(λ_n)); interface flux c_n (c_0 = A_0);
    * the run, mode by mode (two-port of its layers, isothermal-bottom transmission T_n
      of :func:`_transfer`, input impedance Z_n = φ_n/(k_1δ_n) and bottom admittance Y_n
      of :func:`_admittance_up`): c_n = T_n A_n − Y_n θ_n and top θ_t,n = T_n θ_n + Z_n A_n,
      θ_n the interface temperature in mode n;
    * the region below (modes δ'_k = λ'_k/b2 of the wide disk, response
      Z'_k = φ'(δ'_k)/(k'_1 δ'_k), Z'_0 = Σt/k + 1/h): projected on the run's modes,
      θ_n = Σ_m G_nm c_m / N_n with N_n = b²J0²(λ_n)/2 (N_0 = b²/2),
      G_nm = Σ_k Z'_k I_kn I_km / N'_k, N'_k = b2²J0²(λ'_k)/2, and Lommel's integral
      I_kn = ∫_0^b J0(δ'_k r)J0(δ_n r) r dr = b δ'_k J1(δ'_k b)J0(λ_n)/(δ'_k² − δ_n²).

    Eliminating θ gives the symmetric positive definite system
    (G + diag(N_n/Y_n))·c = diag(N_n/Y_n)·T·A − G_{·0}·c_0 for n ≥ 1 (a Galerkin solution of
    temperature and flux continuity across the interface; exact as N → ∞), and the mean
    source rise R = Σ_n θ_t,n·s_n, s_0 = 1, s_n = 2J1(δ_n a)/(δ_n a) (Yovanovich, Culham &
    Teertstra 1998 for the disk modes; the two-port form of Yovanovich, Muzychka & Culham
    1999).  The split it corrects, in the same modes, is R_1D + R[q_u] + R_sp: the uniform
    flux entering the wide region over r < b (G_00) and the source's non-uniform modes over
    the whole stack taken at radius b.  Checked against the r-z finite volumes of
    :mod:`pulsetherm.network.axisym` (tests/test_ladder_vs_rz.py): a flange of 0.1-3 mm
    on a board, split +11 to +21 %, coupled within 0.3 % of the refined mesh.
    """
    k0 = np.asarray(stacks[0][0], dtype=float)
    t0 = np.asarray(stacks[0][1], dtype=float)
    kr, tr = k0[:n_run], t0[:n_run]
    d, d2, j0lam, inv_n, I, inv_k = _cross_kernel(b, b2, n_up)
    N = d.size
    A0 = 1.0 / (math.pi * b * b)
    if a < b * (1 - 1e-12):
        from scipy.special import j1 as J1
        j1a = J1(d * a)
        A = 2.0 * j1a / (math.pi * a * b * b * d * j0lam ** 2)
        s = 2.0 * j1a / (d * a)
    else:
        A = np.zeros(N)
        s = np.zeros(N)
    # the run alone: the same for every stack
    T, Zu, D = _run_alone(b, n_up, tuple(kr.tolist()), tuple(tr.tolist()))
    r_run = np.sum(tr / kr) * A0
    stacks = [(np.asarray(ks, dtype=float), np.asarray(ts, dtype=float))
              for ks, ts in stacks]
    hs = [float(h)] * len(stacks) if np.ndim(h) == 0 else [float(x) for x in h]
    live = [q for q, (ks, _) in enumerate(stacks) if ks.size > n_run]
    out = [0.0] * len(stacks)   # nothing below the run: no coupling
    if not live:
        return out
    st = [stacks[q] for q in live]
    hl = [hs[q] for q in live]
    G = np.array(_below_gs(b, b2, n_up, [(tuple(ks[n_run:].tolist()), tuple(ts[n_run:].tolist()),
                                          hq) for (ks, ts), hq in zip(st, hl)]))
    c = np.linalg.solve(G[:, 1:, 1:] + np.diag(D),
                        (D * T * A - G[:, 1:, 0] * A0)[:, :, None])[:, :, 0]
    theta = (G[:, 1:, 0] * A0 + np.einsum("qnm,qm->qn", G[:, 1:, 1:], c)) * inv_n
    r_coupled = ((G[:, 0, 0] * A0 + np.einsum("qm,qm->q", G[:, 0, 1:], c)) / (0.5 * b * b)
                 + r_run + np.sum((T * theta + Zu * A) * s, axis=1))
    phi_all = _phi_stacks(d, st, hl) / (st[0][0][0] * d)
    r_split = G[:, 0, 0] * A0 / (0.5 * b * b) + r_run + np.sum(A * s * phi_all, axis=1)
    for q, x in zip(live, r_coupled - r_split):
        out[q] = float(x)
    return out


@functools.lru_cache(maxsize=64)
def _run_alone(b: float, n_up: int, kr: tuple[float, ...], tr: tuple[float, ...]
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The run's own two-port in its modes δ_n (:func:`_cross_terms_uncached`): the
    isothermal-bottom transmission T_n (:func:`_transfer`), the input impedance
    Z_n = φ_n/(k_1δ_n) and N_n/Y_n with the bottom admittance Y_n (:func:`_admittance_up`).
    A pure function of the run's layers and radius, cached (read-only arrays): a sweep of
    another layer keeps it."""
    from scipy.special import j0 as J0
    from .spreading import _j1_roots, _phi
    lam = _j1_roots(n_up)            # the run's modes, as :func:`_cross_kernel` has them
    d = lam / b
    inv_n = 1.0 / (0.5 * b * b * J0(lam) ** 2)
    kr_a, tr_a = np.array(kr), np.array(tr)
    T = _transfer(d, kr_a, tr_a)
    Zu = _phi(d, kr_a, tr_a, math.inf) / (kr_a[0] * d)
    D = 1.0 / (_admittance_up(d, kr_a, tr_a) * inv_n)
    for x in (T, Zu, D):
        x.flags.writeable = False
    return T, Zu, D


def _below_g(b: float, b2: float, n_up: int, kl: tuple[float, ...], tl: tuple[float, ...],
             h: float) -> np.ndarray:
    """The region below a run as the run's modes see it: G_nm = Σ_k Z'_k I_kn I_km / N'_k
    plus Z'_0 = Σt/k + 1/h on the uniform mode (:func:`_cross_terms_uncached`), for the
    layers ``kl``, ``tl`` (top first) over the film ``h``: one stack, computed alone (the
    build asks :func:`_below_gs`, which caches and batches; this is its reference).

    The wide modes that the first layer below saturates (tanh(δ'_k t_1) = 1 to the last
    bit: φ' = 1 whatever lies under it) are the last ones; their part depends on k_1 and
    where they start only (:func:`_below_g_saturated`)."""
    from .spreading import _phi
    d, d2, j0lam, inv_n, I, inv_k = _cross_kernel(b, b2, n_up)
    kl_a, tl_a = np.array(kl), np.array(tl)
    # a wide mode with tanh(δ'_k t_1) = 1 to the last bit has φ' = (1 + r)/(1 + r) = 1
    # exactly, whatever lies below: the recursion runs over the modes up to the last one
    # the first layer leaves unsaturated only (under a flange a few tens of the K)
    unsat = np.flatnonzero(np.tanh(d2 * tl_a[0]) != 1.0)
    phi = _phi(d2[:int(unsat[-1]) + 1 if unsat.size else 0], kl_a, tl_a, h)
    own = np.flatnonzero(phi != 1.0)
    ks_ = int(own[-1]) + 1 if own.size else 0
    w = phi[:ks_] / (kl_a[0] * d2[:ks_]) * inv_k[:ks_]
    G = _below_g_saturated(b, b2, n_up, kl[0], ks_) + I[:ks_].T @ (I[:ks_] * w[:, None])
    z0 = float(np.sum(tl_a / kl_a)) + (0.0 if math.isinf(h) else 1.0 / h)
    G[0, 0] += z0 * (0.5 * b * b) ** 2 / (0.5 * b2 * b2)
    G.flags.writeable = False
    return G


#: :func:`_below_gs` cache: (b, b2, n_up, kl, tl, h) -> G (read-only), least recently used
#: dropped past _BELOW_MAX entries (a board's cuts are ~10 entries of 9 kB)
_BELOW_CACHE: OrderedDict = OrderedDict()
_BELOW_MAX = 512
_BELOW_LOCK = threading.Lock()


def _below_gs(b: float, b2: float, n_up: int,
              lowers: Sequence[tuple[tuple[float, ...], tuple[float, ...], float]]
              ) -> list[np.ndarray]:
    """:func:`_below_g` of several lower stacks ``(kl, tl, h)``, each a pure function of
    its numbers and the two radii, cached one by one (read-only arrays): a sweep of the
    run's own layers (a flange thickness) keeps the board under it.  The stacks not in the
    cache are summed together (:func:`_below_g_batch`)."""
    out: list = [None] * len(lowers)
    miss: dict = {}
    with _BELOW_LOCK:
        for q, (kl, tl, h) in enumerate(lowers):
            key = (b, b2, n_up, kl, tl, h)
            G = _BELOW_CACHE.get(key)
            if G is None:
                miss.setdefault(key, []).append(q)
            else:
                _BELOW_CACHE.move_to_end(key)
                out[q] = G
    if miss:
        keys = list(miss)
        found = _below_g_batch(b, b2, n_up, [k[3:] for k in keys])
        with _BELOW_LOCK:
            for key, G in zip(keys, found):
                _BELOW_CACHE[key] = G
                for q in miss[key]:
                    out[q] = G
            while len(_BELOW_CACHE) > _BELOW_MAX:
                _BELOW_CACHE.popitem(last=False)
    return out


def _below_g_batch(b: float, b2: float, n_up: int,
                   lowers: Sequence[tuple[tuple[float, ...], tuple[float, ...], float]]
                   ) -> list[np.ndarray]:
    """:func:`_below_g` of several stacks at once (the same sums; a mode past the last one
    a stack's first layer leaves unsaturated has φ' = 1 exactly, so the stacks share the
    recursion over the modes before the last of them (:func:`_phi_stacks`); each stack's
    own modes and saturated rest are then summed as :func:`_below_g` sums them, to the
    last bit)."""
    d, d2, j0lam, inv_n, I, inv_k = _cross_kernel(b, b2, n_up)
    nk = d2.size
    stacks = [(np.array(kl), np.array(tl)) for kl, tl, _ in lowers]
    t1 = np.array([tl[0] for _, tl, _ in lowers])
    unsat = np.tanh(d2[None, :] * t1[:, None]) != 1.0
    last = np.where(unsat.any(axis=1), nk - np.argmax(unsat[:, ::-1], axis=1), 0)
    m = int(last.max())
    phi = _phi_stacks(d2[:m], stacks, [h for _, _, h in lowers])
    own = phi != 1.0
    ks_ = np.where(own.any(axis=1), m - np.argmax(own[:, ::-1], axis=1), 0).tolist()
    out = []
    for q, (kl, tl, h) in enumerate(lowers):
        k = ks_[q]
        w = phi[q, :k] / (kl[0] * d2[:k]) * inv_k[:k]
        G = _below_g_saturated(b, b2, n_up, kl[0], k) + I[:k].T @ (I[:k] * w[:, None])
        z0 = float(np.sum(stacks[q][1] / stacks[q][0])) + (0.0 if math.isinf(h) else 1.0 / h)
        G[0, 0] += z0 * (0.5 * b * b) ** 2 / (0.5 * b2 * b2)
        G.flags.writeable = False
        out.append(G)
    return out


@functools.lru_cache(maxsize=64)
def _below_g_saturated(b: float, b2: float, n_up: int, k1: float, start: int) -> np.ndarray:
    """Σ_{k ≥ start} Z'_k I_kn I_km / N'_k with φ' = 1 (Z'_k = 1/(k_1 δ'_k)): the part of
    :func:`_below_g` of the wide modes that the first layer below saturates (a fresh
    array)."""
    d, d2, j0lam, inv_n, I, inv_k = _cross_kernel(b, b2, n_up)
    w = 1.0 / (k1 * d2[start:]) * inv_k[start:]
    out = I[start:].T @ (I[start:] * w[:, None])
    out.flags.writeable = False
    return out


@functools.lru_cache(maxsize=8)
def _cross_kernel(b: float, b2: float, n_up: int):
    """The parts of :func:`_cross_term_uncached` that depend on the two radii only (a pure
    function, cached: a sweep of thicknesses or materials keeps the radii, and one build
    asks for the same pair many times).

    Returns δ_n (n = 1 ... N), δ'_k (k = 1 ... K, K = 4·N·b2/b, 256 to 4096, so the wide
    modes resolve the narrow ones; against N = 96, K = 16·N·b2/b the steady resistance of
    flanges and random stacks moves by at most 0.2 % with N = 32), J0(λ_n), 1/N_n, the
    Lommel matrix I_kn (K, N + 1) with column 0 the uniform mode (I_k0 = b J1(δ'_k b)/δ'_k;
    coincident modes δ'_k = δ_n in closed form, b²J0²(λ_n)/2) and 1/N'_k."""
    from scipy.special import j0 as J0, j1 as J1
    from .spreading import _j1_roots
    lam = _j1_roots(n_up)
    d = lam / b
    n2 = int(min(_COUPLED_WIDE_MAX, max(256, math.ceil(_COUPLED_WIDE * n_up * b2 / b))))
    lam2 = _j1_roots(n2)
    d2 = lam2 / b2
    j0lam, j0lam2 = J0(lam), J0(lam2)
    j1b = J1(d2 * b)
    den = np.subtract.outer(d2 * d2, d * d)
    close = np.abs(den) < 1e-9 * (d2 * d2)[:, None]
    den[close] = np.inf
    I = np.empty((n2, n_up + 1))
    I[:, 0] = b * j1b / d2
    I[:, 1:] = (b * d2 * j1b)[:, None] * j0lam[None, :] / den
    kk, nn = np.nonzero(close)
    I[kk, nn + 1] = 0.5 * b * b * j0lam[nn] ** 2
    inv_n = 1.0 / (0.5 * b * b * j0lam ** 2)
    inv_k = 1.0 / (0.5 * b2 * b2 * j0lam2 ** 2)
    out = (d, d2, j0lam, inv_n, I, inv_k)
    for x in out:
        x.flags.writeable = False
    return out


def depth_profile(segs: list[_Seg], footprint: tuple[float, float], sink,
                  points: Callable[[_Profile], list[tuple[np.ndarray, bool]]] | None = None
                  ) -> _Profile | None:
    """The exact steady spreading of a column as a function of depth, run by run.

    ``points(profile)``: more sets of virtual depths ``(depths, slope_only)`` to read the
    profile at, in the same evaluation as the column's bottom face (:meth:`_Profile.read`);
    the readings are left in ``profile.readings``, one (R, dR/dz) pair per set.

    The column is split, top to bottom, into *runs* of consecutive elements of one lateral
    size (die → flange → board; a layer with no size takes the nearest sized layer below,
    an area resistance joins the run above and counts as a layer of the material below of
    thickness r·k_below).  Run m is a compound disk of radius b_m = √(W·L/π) (equal-area
    circles) heated through a_m: the footprint for the first run, the whole base of the
    narrower run above for the next ones (a run narrower than the one above is entered
    over its whole area).  Source-mean rise of the column, bottom up (Yovanovich, Culham &
    Teertstra 1998, compound layers by the recursion of Yovanovich, Muzychka & Culham 1999):

        R_m = R_1D,m + R_m+1 + R_sp(a_m, b_m; run m and everything below at radius b_m)
              + X_m,

    * the uniform flux mode of run m crosses its layers (R_1D,m over its plate) and enters
      the rest of the column as an isoflux disk b_m, exactly (R_m+1; under the last run
      the sink as :func:`_sink_h` presents it, a direct film spreading in the series);
    * the non-uniform (zero-mean) modes of run m see the whole remaining stack at run m's
      radius: the wider layers below receive these local patterns as if unbounded (they
      decay within ~b_m/3.8 of the boundary);
    * X_m corrects the split to the coupled solution of the interface between run m and
      the wider run below (:func:`_cross_term`, temperature and flux continuous across
      r < b_m): the flux leaving a thin die is peaked under its source (X_m > 0), a thick
      flange carries its heat to its rim, where the wider board takes it up (X_m < 0; the
      split without it read a flange on a board 11-21 % warm, and random die / base / board
      stacks up to +12.7 %).

    Approximations (stated): the wider run below is a compound disk of its own radius
    with every layer under it taken at that radius, and the source of the column is
    isoflux.  Measured against the r-z finite volumes of :mod:`pulsetherm.network.axisym`
    (refined grid): die on a 3 / 10 / 30 mm flange on a 40 mm board −0.1 / −0.0 / −0.1 %,
    random die / attach / base / board stacks without via fields −2.7 to +1.0 %; against the
    finite elements of tests/test_fem_crosscheck.py (thin die on a 3 mm flange) +0.3 %
    steady, Zth within 3.5 % from 1e-5 s to 1 s (a run's rim capacity hangs on its bottom
    face as rings, :func:`_rim_rings`).

    The ladder follows the cut profile R(z) (the column cut at depth z, held at the sink
    temperature below the cut; :meth:`_Profile.__call__`), continuous across run
    boundaries and equal to the chain above at the bottom over an isothermal sink (a direct
    film's extra share is added by the ladder under the column).  Returns ``None`` when no
    layer has a size (nothing to spread into).
    """
    from .spreading import circular_series
    plates = _element_plates(segs) if segs else None
    if plates is None:
        return None
    ks, ts = [], []
    for i, s in enumerate(segs):
        if isinstance(s.element, AreaResistance):
            # a film of thickness ε and conductivity ε/r: the interface's resistance
            # with no lateral conduction of its own (as a layer of the material below,
            # r·k_below thick, it spread heat like millimetres of copper: a 17 K·mm²/W
            # attach read 21 % low against the r-z mesh)
            eps = 1e-3 * min([x.thickness for x in segs if x.thickness > 0] or [1e-3])
            ks.append(eps / s.element.r_area)
            ts.append(eps)
        else:
            k_s, t_s = _series_layer(s)
            ks.append(k_s)
            ts.append(t_s)
    top = [0.0] + list(np.cumsum(ts)[:-1])
    runs: list[_Run] = []
    j = 0
    a_in = math.sqrt(footprint[0] * footprint[1] / math.pi)
    while j < len(segs):
        e = j
        while e + 1 < len(segs) and _same_plate(plates[e + 1], plates[j]):
            e += 1
        P = plates[j]
        b = math.sqrt(P[0] * P[1] / math.pi)
        # a source within 1e-4 of its plate's radius spreads by (1 − a/b)^1.5 ≈ 1e-6 of
        # the source's own resistance (Lee et al. 1995): taken as the whole plate (the
        # series for such a source did not converge)
        a = b if a_in >= b * (1 - 1e-4) else a_in
        runs.append(_Run(j, e, a, b, P, ks[j:e + 1], ts[j:e + 1], top[j]))
        j = e + 1
        if j < len(segs):
            a_in = b
    # coupling of each run with the wider run below: the chain's term (the column over the
    # sink) and the tables of :meth:`_Profile._cross` (the column cut inside every run
    # below) in one batch per run (one run-alone two-port, one stacked solve)
    cross_tab: dict = {}
    for jr in range(len(runs) - 1):
        run, nxt = runs[jr], runs[jr + 1]
        if not nxt.b > run.b * (1 + 1e-9):
            continue
        stacks = [(ks[run.first:], ts[run.first:])]
        hs = [_sink_h(sink, plates[-1][0] * plates[-1][1])]
        spans = []
        for m in range(jr + 1, len(runs)):
            zq, start, st = _table_stacks(runs, jr, m, ks, ts)
            spans.append((m, zq, start, len(stacks), len(stacks) + len(st)))
            stacks += st
            hs += [math.inf] * len(st)
        vals = _cross_terms(run.a, run.b, nxt.b, stacks, run.last + 1 - run.first, hs)
        run.cross = float(vals[0])
        for m, zq, start, lo, hi in spans:
            v = np.zeros(zq.size)
            v[start:] = vals[lo:hi]
            cross_tab[(jr, m)] = (zq, v)
    # exact chain, bottom up
    r_below = None
    totals: list[float] = [0.0] * len(runs)
    films: list[float] = [0.0] * len(runs)
    for m in range(len(runs) - 1, -1, -1):
        run = runs[m]
        Ap = math.pi * run.b * run.b
        if m == len(runs) - 1:  # the chain needs the last run's alone
            run.r_cut = float(run.local(np.array([sum(run.ts)]))[0][0])
        if r_below is None:
            h = _sink_h(sink, run.plate[0] * run.plate[1])
        else:
            h = 1.0 / (Ap * r_below)
        films[m] = 0.0 if math.isinf(h) else 1.0 / (h * Ap)
        if m == len(runs) - 1:
            if math.isinf(h):
                tot = run.r_cut
            elif run.a >= run.b * (1 - 1e-12):
                tot = run.r_cut + films[m]
            else:
                tot = circular_series(run.a, run.b, run.ks, run.ts, h, rtol=1e-7,
                                      centre=False).total
        else:
            # uniform mode: the run's 1-D resistance plus the film (everything below);
            # the non-uniform modes of the run see the whole remaining stack at the run's
            # radius (they are zero-mean patterns that the wider layers below receive
            # locally, as if unbounded)
            r1d = sum(t / k for k, t in zip(run.ks, run.ts)) / Ap
            tot = r1d + films[m] + run.cross
            if run.a < run.b * (1 - 1e-12):
                h_sink = _sink_h(sink, runs[-1].plate[0] * runs[-1].plate[1])
                tot += circular_series(run.a, run.b, ks[run.first:], ts[run.first:],
                                       h_sink, rtol=1e-7, centre=False).r_spreading
        totals[m] = tot
        r_below = tot
    for run in runs:
        run.r_1d = sum(t / k for k, t in zip(run.ks, run.ts)) / (math.pi * run.b * run.b)
    prof = _Profile(runs[0].a, runs[0].b, ks, ts, top, runs[-1].plate, totals[0], 0.0, runs,
                    cross_tab)
    sets = [(np.array([sum(ts)]), False)] + (points(prof) if points is not None else [])
    readings = prof.read(sets)
    prof.r_stack = float(readings[0][0][0])
    prof.readings = readings[1:]
    return prof


def _truncate(ks: Sequence[float], ts: Sequence[float], depth: float
              ) -> tuple[list[float], list[float]]:
    """The layers of a stack (top first) down to ``depth``, the last one cut there."""
    out_k, out_t, z = [], [], 0.0
    for k, t in zip(ks, ts):
        if z + t >= depth * (1 - 1e-12):
            if depth - z > 0:
                out_k.append(k)
                out_t.append(depth - z)
            break
        out_k.append(k)
        out_t.append(t)
        z += t
    return out_k, out_t


def _table_stacks(runs: list[_Run], j: int, m: int, ks: list[float], ts: list[float]
                  ) -> tuple[np.ndarray, int, list[tuple[list[float], list[float]]]]:
    """Where :meth:`_Profile._cross` tabulates the coupling term of run j for cuts inside
    run m (every layer face of run m and the middle of each layer, local depths ``zq``),
    and the stacks (run j and everything below it down to each cut) for ``zq[start:]``
    (the top of the run right below run j has nothing under it: its term is 0)."""
    run, cut = runs[j], runs[m]
    faces = np.concatenate([[0.0], np.cumsum(cut.ts)])
    zq = np.unique(np.concatenate([faces, 0.5 * (faces[:-1] + faces[1:])]))
    start = 0 if m > j + 1 else 1
    stacks = [_truncate(ks[run.first:], ts[run.first:], cut.z0 + zq[q] - run.z0)
              for q in range(start, zq.size)]
    return zq, start, stacks


def _equivalent_angle(r_layer: float, t: float, w: float, l: float, seg: _Seg) -> float:
    """Half-angle (degrees) of the frustum from w × l whose resistance through the layer is
    ``r_layer`` (reported in :class:`LayerInfo`; clamped to [0, 89])."""
    from .roots import brentq

    def f(theta: float) -> float:
        g, _, _ = frustum_sublayer(0.0, t, w, l, math.tan(math.radians(theta)), seg.cap,
                                   seg.k_eff, 1.0)
        return 1.0 / g - r_layer
    lo, hi = f(0.0), f(89.0)
    if lo <= 0.0:
        return 0.0
    if hi >= 0.0:
        return 89.0
    return float(brentq(f, 0.0, 89.0, xtol=1e-4))


def _gauss6(z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """6-point Gauss-Legendre nodes and weights on each sub-layer [z_i, z_{i+1}], shape
    (n, 6)."""
    zq = 0.5 * (z[:-1, None] + z[1:, None]) + 0.5 * (z[1:, None] - z[:-1, None]) * _GL6_X
    wq = 0.5 * (z[1:, None] - z[:-1, None]) * _GL6_W
    return zq, wq


def _profile_points(prof: _Profile, segs: list[_Seg], xis: list[np.ndarray]
                    ) -> list[tuple[np.ndarray, bool]]:
    """The virtual depths at which the ladder reads the profile, element by element, as
    ``(depths, slope_only)``: the two faces of an area resistance; a layer's sub-layer
    faces and then their Gauss points, where only the slope is used (as
    :func:`_profile_sublayers` asks for them)."""
    out = []
    for si, (seg, xi) in enumerate(zip(segs, xis)):
        zv0 = prof.top[si]
        if isinstance(seg.element, AreaResistance):
            out.append((np.array([zv0, zv0 + prof.ts[si]]), False))
            continue
        t = seg.thickness
        z = xi * t
        scale = prof.ts[si] / t
        out.append((zv0 + scale * z, False))
        out.append((zv0 + scale * _gauss6(z)[0].ravel(), True))
    return out


def _column_sublayers(prof: _Profile, segs: list[_Seg], xis: list[np.ndarray]
                      ) -> list[tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray] | None]:
    """:func:`_profile_sublayers` of every layer of a column (None for an area
    resistance), from the profile's readings at the depths of :func:`_profile_points`: the
    sub-layers of all layers stacked as rows and computed in one pass, row by row the
    arithmetic of :func:`_profile_sublayers` (the same numbers to the last bit)."""
    readings = iter(prof.readings)
    top = np.array(prof.top)
    rows = []       # per layer: si, n, face R, face dR, point dR, z, scale, k, floor denominator
    for si, (seg, xi) in enumerate(zip(segs, xis)):
        if isinstance(seg.element, AreaResistance):
            next(readings)
            continue
        (Rf, dRf), (_, dRq) = next(readings), next(readings)
        t = seg.thickness
        z = xi * t
        via = _via_field(seg)
        k = seg.k_eff if via is None else via[0]
        sj = int(np.argmin(np.abs(top - prof.top[si])))
        run = prof.run_of(sj)
        rows.append((si, z.size - 1, Rf, dRf, dRq, z, prof.ts[si] / t, k,
                     prof.ks[sj] * math.pi * run.b * run.b, seg.rho_c, via, seg.k_eff))
    out: list = [None] * len(segs)
    if not rows:
        return out
    ns = [r[1] for r in rows]
    rep = lambda i: np.repeat([r[i] for r in rows], ns)   # noqa: E731 (one value a sub-layer)
    za = np.concatenate([r[5][:-1] for r in rows])
    zb = np.concatenate([r[5][1:] for r in rows])
    zq = 0.5 * (za[:, None] + zb[:, None]) + 0.5 * (zb[:, None] - za[:, None]) * _GL6_X
    wq = 0.5 * (zb[:, None] - za[:, None]) * _GL6_W
    scale, k = rep(6), rep(7)
    dRq = scale[:, None] * np.concatenate([r[4] for r in rows]).reshape(-1, _GL6_X.size)
    A = 1.0 / (k[:, None] * dRq)
    floor = scale * (zb - za) / rep(8)
    ra = np.concatenate([r[2][:-1] for r in rows])
    rb = np.concatenate([r[2][1:] for r in rows])
    g = 1.0 / np.maximum(rb - ra, floor)
    xi = (zq - za[:, None]) / (zb[:, None] - za[:, None])
    rho = rep(9)
    c_bot = rho * np.sum(wq * A * xi, axis=1)
    c_top = rho * np.sum(wq * A, axis=1) - c_bot
    lo = 0
    for r, n in zip(rows, ns):
        si, via, k_eff = r[0], r[10], r[11]
        sl = slice(lo, lo + n)
        gl = g[sl]
        if via is not None:
            kv, av = via
            Al, wl, dl = A[sl], wq[sl], dRq[sl]
            q = k_eff * Al + (kv - k_eff) * np.minimum(Al, av)
            plain = np.sum(wl * dl, axis=1)
            gl = gl * plain / np.sum(wl * dl * kv * Al / q, axis=1)
        out[si] = (gl, c_top[sl], c_bot[sl], 1.0 / (r[7] * (r[6] * r[3])))
        lo += n
    return out


def _profile_sublayers(prof: _Profile, seg: _Seg, zv0: float, z: np.ndarray,
                       via: tuple[float, float] | None, scale: float = 1.0,
                       at: tuple | None = None
                       ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Conductances, top/bottom capacities and face areas of a layer's sub-layers on the
    equivalent flow area A_eff(z) = 1/(k·dR/dz) of the exact depth profile (k the layer's
    through-plane conductivity; real depth z is virtual depth zv0 + ``scale``·z in the
    series, :func:`_series_layer`).

    Sub-layer [z_i, z_{i+1}]: G = 1/(R(z_{i+1}) − R(z_i)) (so the ladder's cumulative
    resistance equals R(z) at every face), C = ρc·∫A_eff dz split (1 − ξ, ξ) to its faces
    (6-point Gauss-Legendre).

    A via field (conductivity k_v over the area A_v, laminate k around it) entered the
    series at k_v across the whole plate; where the flow area is wider than the field the
    path conducts k·A + (k_v − k)·min(A, A_v) per unit depth instead of k_v·A (parallel
    paths, common practice, no source), so

        G = 1/∫ dR/dz · k_v·A/(k·A + (k_v − k)·min(A, A_v)) dz

    (never above 1/ΔR: the finite field only takes conduction away).

    ``at``: the profile already read at the faces and at the Gauss points
    (``((R, dR) at the faces, (R, dR) at the points)``, :func:`_profile_points`).
    """
    n = len(z) - 1
    zq, wq = _gauss6(z)
    if at is None:
        at = (prof(zv0 + scale * z), prof(zv0 + scale * zq.ravel()))
    (Rf, dRf), (_, dRq) = at
    dRq = scale * dRq.reshape(n, -1)
    dRf = scale * dRf
    k = seg.k_eff if via is None else via[0]
    A = 1.0 / (k * dRq)
    # never below the 1-D resistance over the run's plate (Thomson's principle; the
    # tabulated coupling term of :meth:`_Profile._cross` must not make a step negative)
    si = int(np.argmin(np.abs(np.array(prof.top) - zv0)))
    run = prof.run_of(si)
    floor = scale * np.diff(z) / (prof.ks[si] * math.pi * run.b * run.b)
    g = 1.0 / np.maximum(np.diff(Rf), floor)
    if via is not None:
        kv, av = via
        q = seg.k_eff * A + (kv - seg.k_eff) * np.minimum(A, av)
        plain = np.sum(wq * dRq, axis=1)
        g = g * plain / np.sum(wq * dRq * kv * A / q, axis=1)
    xi = (zq - z[:-1, None]) / (z[1:, None] - z[:-1, None])
    c_bot = seg.rho_c * np.sum(wq * A * xi, axis=1)
    c_top = seg.rho_c * np.sum(wq * A, axis=1) - c_bot
    return g, c_top, c_bot, 1.0 / (k * dRf)


# --------------------------------------------------------------------------------------
# calibrated spreading
# --------------------------------------------------------------------------------------
def _disk_total(a: float, b: float, k: Sequence[float], t: Sequence[float],
                   h: float) -> float:
    """Mean-source-temperature resistance R_sp + R_1D of an isoflux circle on a compound
    disk, K/W: :func:`pulsetherm.network.spreading.circular_series` (Yovanovich, Culham &
    Teertstra 1998; compound layers: Yovanovich, Muzychka & Culham 1999), average only,
    rtol 1e-7; a source wider than the disk counts as the whole disk."""
    from .spreading import circular_series
    if a >= b * (1 - 1e-12):
        a = b
    return circular_series(a, b, k, t, h, rtol=1e-7, centre=False).total


def _sink_h(sink, plate_area: float) -> float:
    """The sink as a film coefficient under a plate of ``plate_area`` (m²).

    A fixed base, a lumped sink and a film over a sink body of its own area (a finned sink)
    all present one node, one temperature, to the plate: its bottom face is isothermal for
    the spreading calculation (h = ∞) and the sink's own resistance follows in series
    (:func:`_sink_r`).  Only a film directly on the plate (no body area) spreads as a film.
    """
    if isinstance(sink, (FixedBase, LumpedSink)) or sink.area is not None:
        return math.inf
    return sink.h


def _sink_r(sink, area: float) -> float:
    """Resistance the ladder puts under a heat path of ``area`` (m²), K/W."""
    if isinstance(sink, FixedBase):
        return 0.0
    if isinstance(sink, LumpedSink):
        return sink.resistance
    if sink.area is not None:
        return 1.0 / (sink.h * sink.area)
    return 1.0 / (sink.h * area)


def calibrate_angles(segs: list[_Seg], footprint: tuple[float, float], sink,
                     reference: str = "series", plate: str = "widest") -> list[float]:
    """Fit each layer's spreading angle to the published spreading solution (in place).

    Method (telescoping).  Let R_ref(j, A) be the reference resistance (mean source rise per
    watt) of a source of area A on top of element j and everything below it.  Layer j with
    incoming heat path A_j gets the angle θ_j that solves

        R_frustum,j(θ_j) + R_ref(j + 1, A_{j+1}(θ_j)) = R_ref(j, A_j),

    A_{j+1}(θ) the frustum's bottom area; below the last element R_ref is the sink as the
    ladder builds it.  Summed over the column the terms telescope, so the ladder's steady
    resistance equals R_ref(1, footprint) (up to area-resistance interfaces, which keep
    their exact r/A).

    ``plate="widest"`` (default): every element is taken as wide as the widest sized layer
    of the column and R_ref is the compound-disk series of the whole remaining stack
    (:func:`_disk_total`).  Good when the narrow layers on top are thin against their
    width (die and attach on a flange: steady within 4 % of the r-z mesh,
    tests/test_fem_crosscheck.py).  ``plate="runs"``: R_ref of a run of consecutive
    elements of one lateral size (the plate) is the
    compound-disk series (:func:`_disk_total`, equal-area circles a = √(A/π),
    b = √(A_p/π)) over an effective film h = 1/(A_p·R_ref(next run, plate area)) that
    stands for the rest of the stack (a wider layer below sees the run's plate as its
    source): the superposition practice of package spreading estimates.  An area resistance
    r enters the series as a layer of the material below of thickness r·k_below.  With
    ``reference="lee"`` single-layer runs use Lee et al. (1995) instead.  A layer with no
    size takes the size of the nearest sized layer below (above if none).

    In the network the conduction follows the fitted frustum while the heat capacity stays
    in the default-angle frustum (a wide fitted angle would otherwise put capacity next
    to the source and lower the early Zth).

    Returns the angles, degrees (also stored on the segments).
    """
    from .spreading import lee_1995
    if plate not in ("widest", "runs"):
        raise StackupError(f"plate = {plate!r}: expected 'widest' or 'runs'")
    nseg = len(segs)
    if nseg == 0:
        return []
    # plate of every element
    caps = [s.cap for s in segs]
    plates: list[tuple[float, float] | None] = []
    for j in range(nseg):
        p = next((c for c in caps[j:] if c is not None), None)
        if p is None:
            p = next((c for c in reversed(caps[:j]) if c is not None), None)
        plates.append(p)
    if plates[0] is None:                      # nothing sized: keep the default angles
        return [s.angle for s in segs]
    if plate == "widest":
        big = max(plates, key=lambda c: c[0] * c[1])
        plates = [big] * nseg
    for j in range(nseg):                      # interfaces join the run above them
        if isinstance(segs[j].element, AreaResistance) and j > 0:
            plates[j] = plates[j - 1]
    runs: list[tuple[int, int]] = []
    j = 0
    while j < nseg:
        e = j
        while e + 1 < nseg and _same_plate(plates[e + 1], plates[j]):
            e += 1
        runs.append((j, e))
        j = e + 1
    run_of = {j: r for r, (s, e) in enumerate(runs) for j in range(s, e + 1)}

    def layer_kt(j0: int, j1: int) -> tuple[list[float], list[float]]:
        ks, ts = [], []
        for i in range(j0, j1 + 1):
            s = segs[i]
            if isinstance(s.element, AreaResistance):
                kb = next((x.k_eff for x in segs[i + 1:] if x.material is not None),
                          next((x.k_eff for x in reversed(segs[:i]) if x.material
                                is not None), 1.0))
                ks.append(kb)
                ts.append(s.element.r_area * kb)
            else:
                ks.append(s.k_eff)
                ts.append(s.thickness)
        return ks, ts

    below_cache: dict[int, float] = {}

    def run_below(r: int) -> float:
        """R_ref of everything below run r, for a source the size of run r's plate."""
        if r in below_cache:
            return below_cache[r]
        s, e = runs[r]
        P = plates[s]
        if r + 1 == len(runs):
            val = _sink_r(sink, P[0] * P[1])
        else:
            ns = runs[r + 1][0]
            Pn = plates[ns]
            src = (min(P[0], Pn[0]), min(P[1], Pn[1]))
            val = r_ref(ns, src)
        below_cache[r] = val
        return val

    def r_ref(j: int, src: tuple[float, float]) -> float:
        if j >= nseg:
            return _sink_r(sink, src[0] * src[1])
        r = run_of[j]
        s, e = runs[r]
        P = plates[j]
        Ap = P[0] * P[1]
        As = min(src[0], P[0]) * min(src[1], P[1])
        rb = run_below(r)
        h = math.inf if rb == 0.0 else 1.0 / (Ap * rb)
        ks, ts = layer_kt(j, e)
        if reference == "lee" and len(ks) == 1:
            return lee_1995(As, Ap, ks[0], ts[0], h).total
        return _disk_total(math.sqrt(As / math.pi), math.sqrt(Ap / math.pi), ks, ts, h)

    from .roots import brentq
    w, l = footprint
    angles = []
    for j, seg in enumerate(segs):
        if isinstance(seg.element, AreaResistance):
            angles.append(seg.angle)
            continue
        target = r_ref(j, (w, l))
        t = seg.thickness

        def f(theta_deg: float) -> float:
            tan = math.tan(math.radians(theta_deg))
            g, _, _ = frustum_sublayer(0.0, t, w, l, tan, seg.cap, seg.k_eff, 1.0)
            wn, ln = path_size(t, w, l, tan, seg.cap)
            return 1.0 / g + r_ref(j + 1, (wn, ln)) - target

        lo, hi = 0.0, 89.0
        flo, fhi = f(lo), f(hi)
        if flo <= 0.0:
            theta = lo
        elif fhi >= 0.0:
            theta = hi
        else:
            theta = brentq(f, lo, hi, xtol=1e-6, rtol=1e-10)
        seg.angle = theta
        angles.append(theta)
        w, l = path_size(t, w, l, math.tan(math.radians(theta)), seg.cap)
    return angles
