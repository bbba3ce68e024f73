"""Build and simulate a scenario: the Python equivalent of ``pulsetherm run``.

:func:`build` turns a :class:`~pulsetherm.network.scenario.Scenario` into a
:class:`ScenarioModel` (the thermal network with its heat inputs, waveforms, probes and
limits); :func:`simulate` solves the periodic steady state and returns a :class:`RunResult`
(probe peak / mean / minimum / ripple against their limits, each layer's share of the mean
rise, the warm-up time).  :func:`thermal_impedance` gives the Zth curve, the pulsed-Zth
family, Foster and Cauer coefficients and the structure function at one probe.

Errors from the lower layers (stack-up, waveforms, materials, network) are re-raised as
:class:`~pulsetherm.network.scenario.ScenarioError` naming the scenario key they came from.
"""
from __future__ import annotations

import csv
import difflib
import io
import math
from dataclasses import dataclass, field
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np

from .scenario import (LayerSpec, Quantity, Scenario, ScenarioError, WaveformSpec, _WAVE_FIELD,
                       _join, parse_quantity)

__all__ = ["build", "simulate", "ScenarioModel", "RunResult", "ProbeStats",
           "thermal_impedance", "ImpedanceResult", "CAUTION", "make_waveform"]

#: Caution attached to every output that judges limits.
CAUTION = ("engineering estimates; verify by measurement; follow the device maker's ratings "
           "and derating, local codes and licensed practice")


#: Caution for a ladder with a via field: the field enters the 1-D calibration smeared over
#: the board and is taken back depth by depth, so its accuracy is that measured against the
#: r-z mesh on random stacks (tests/test_ladder_vs_rz.py; README, Known limits).
VIA_FIELD_NOTE = ("via field(s) in the ladder model: against the r-z mesh within -16 to +16 % "
                  "for a field the size of the part above it or wider, -26 to +34 % for a "
                  "smaller one; cross-check with model.fidelity = \"axisymmetric\"")


def massless_caution(scn: Scenario) -> list[str]:
    """One caution per device given by ``rth`` alone (no ``capacity``): its junction has
    no heat capacity, so it jumps by P·rth at every power edge and its peak is an upper
    bound (any real junction-to-case path has mass)."""
    names = [d.name for d in scn.devices or ()
             if d.rth is not None and not (d.capacity is not None and d.capacity.value > 0)]
    if not names:
        return []
    return [f"device(s) {', '.join(map(repr, names))} given by 'rth' alone have no thermal "
            "mass between junction and case: the junction follows the power at once, so "
            "its peak is an upper bound; give 'foster' (R and tau), a die 'stack', or "
            "'capacity' (junction-to-case heat capacity) for the mass"]


# ======================================================================================
# Waveforms
# ======================================================================================
def _wave_error(exc: ValueError, path: str, spec: WaveformSpec | None) -> ScenarioError:
    """Map a waveform class's message (``PulseTrain.width = ...``) to the scenario key."""
    import re

    msg = " ".join(str(exc).split())
    m = re.match(r"^(\w+)\.(\w+)", msg)
    key = None
    if m:
        key = _WAVE_FIELD.get(f"{m.group(1)}.{m.group(2)}", m.group(2))
        if spec is not None and getattr(spec, key, None) is None:
            key = None
    p = _join(path, key) if key else path
    value = _as_written(getattr(spec, key)) if key and spec is not None else None
    return ScenarioError(p, value, msg)


def _as_written(v: Any) -> Any:
    """A schema value as the user wrote it: unit strings for quantities (one or a list),
    plain scalars as they are, None for tables (they are not echoed in a message)."""
    if isinstance(v, Quantity):
        return v.text
    if isinstance(v, (tuple, list)):
        items = [_as_written(x) for x in v]
        return None if any(x is None for x in items) else items
    if isinstance(v, (str, int, float)):
        return v
    return None


def make_waveform(spec: WaveformSpec | str, scenario: Scenario, path: str,
                  _seen: tuple[str, ...] = ()):
    """The waveform object (:mod:`pulsetherm.waveforms`) of a spec or a named reference."""
    from pulsetherm.waveforms.pulses import Burst, Constant, PulseTrain, Stagger

    if isinstance(spec, str):
        named = scenario.waveforms or {}
        if spec in named:
            if spec in _seen:
                raise ScenarioError(path, spec, "a waveform that does not refer to itself")
            return make_waveform(named[spec], scenario, f"waveforms.{spec}", _seen + (spec,))
        q = parse_quantity(spec, "power", path)
        if q.value < 0:
            raise ScenarioError(path, spec, "a power >= 0")
        return Constant(q.value)

    def v(key):
        x = getattr(spec, key)
        return None if x is None else (x.value if isinstance(x, Quantity) else x)

    try:
        k = spec.kind
        if k == "constant":
            w = Constant(v("power"), period=v("period"))
        elif k in ("pulses", "burst"):
            opts = dict(idle=v("idle") or 0.0, rise=v("rise") or 0.0, fall=v("fall") or 0.0)
            if k == "pulses":
                w = PulseTrain(v("peak"), v("width"), period=v("period"), prf=v("prf"),
                               duty=v("duty"), **opts)
            else:
                train = PulseTrain(v("peak"), v("width"), period=v("pri"), prf=v("prf"), **opts)
                w = Burst(train, v("pulses"), period=v("period"), gap=v("gap"))
        elif k == "stagger":
            widths = tuple(q.value for q in spec.widths)
            w = Stagger(v("peak"), tuple(q.value for q in spec.intervals),
                        widths[0] if len(widths) == 1 else widths, idle=v("idle") or 0.0,
                        rise=v("rise") or 0.0, fall=v("fall") or 0.0)
        elif k == "profile":
            from pulsetherm.waveforms.profile import Profile, Stretch

            stretches = []
            for i, s in enumerate(spec.stretches):
                sp = _join(_join(path, "stretches"), i)
                p = make_waveform(s.power, scenario, _join(sp, "power"), _seen)
                stretches.append(Stretch(s.duration.value, p, s.label or ""))
            periodic = True if spec.periodic is None else spec.periodic
            w = Profile(tuple(stretches), periodic=periodic, after=v("after") or 0.0)
        elif k == "table":
            w = _table_waveform(spec, scenario, path)
        else:  # pragma: no cover - the schema restricts kind
            raise AssertionError(k)
        if spec.delay is not None and spec.delay.value > 0:
            w = w.delayed(spec.delay.value)
        w.compile()
    except ScenarioError:
        raise
    except ValueError as exc:
        raise _wave_error(exc, path, spec) from None
    return w


def _table_waveform(spec: WaveformSpec, scenario: Scenario, path: str):
    """A measured power envelope: ``file`` (CSV with a units header, read by
    :meth:`pulsetherm.waveforms.table.Table.from_csv`) relative to the scenario file."""
    from pathlib import Path

    from pulsetherm.waveforms.table import Table

    from .safe_io import MAX_TABLE_BYTES, read_text, resolve_inside

    base = Path(scenario.source).parent if scenario.source else Path.cwd()
    key = _join(path, "file")
    try:
        # inside the scenario's folder (or --allow-path), regular files only, size capped
        f = resolve_inside(base, spec.file, getattr(scenario, "allow_paths", ()))
        if not f.is_file():
            raise ScenarioError(key, spec.file, f"a CSV power envelope that exists (looked "
                                f"for {f})")
        text = read_text(f, "CSV envelope", MAX_TABLE_BYTES)
    except OSError as exc:
        raise ScenarioError(key, spec.file,
                            f"a readable CSV file ({exc.strerror or exc})") from None
    except ScenarioError:
        raise
    except ValueError as exc:
        raise ScenarioError(key, spec.file, str(exc)) from None
    try:
        return Table.from_csv(io.StringIO(text), interp=spec.interp, periodic=spec.periodic,
                              period=None if spec.period is None else spec.period.value)
    except ValueError as exc:
        if str(exc).startswith("Table."):
            raise          # a key of the waveform (period ...): named by the caller
        raise ScenarioError(key, spec.file, f"a CSV power envelope ({exc})") from None


def _reads_files(specs) -> bool:
    """True when any waveform spec (profiles included) reads a CSV envelope."""
    for sp in specs:
        if isinstance(sp, WaveformSpec):
            if sp.kind == "table":
                return True
            if sp.stretches and _reads_files([st.power for st in sp.stretches]):
                return True
    return False


#: Waveform objects of recently built scenarios, keyed by the waveform specs (a sweep
#: rebuilds the same waveforms for every row; the objects are frozen, so they are shared).
_WAVES: dict[Any, dict[str, Any]] = {}


def _waveforms(scn: Scenario) -> dict[str, Any]:
    """Heat source name -> waveform object of every device, line and heater; the named
    waveforms of ``[waveforms]`` are all made (and so checked) even when unused."""
    items = tuple((sec, i, item.name, item.power)
                  for sec, group in (("devices", scn.devices), ("lines", scn.lines),
                                     ("heaters", scn.heaters))
                  for i, item in enumerate(group or ()))
    key = (items, tuple((scn.waveforms or {}).items()))
    specs = [p for *_, p in items] + list((scn.waveforms or {}).values())
    try:
        # envelopes read from files are read afresh (the file may have changed)
        hit = None if _reads_files(specs) else _WAVES.get(key)
        if hit is None and _reads_files(specs):
            key = None
    except TypeError:  # an unhashable spec: no caching
        key, hit = None, None
    if hit is not None:
        return dict(hit)
    waves: dict[str, Any] = {}
    named = scn.waveforms or {}
    made: dict[str, Any] = {}          # a named waveform made once, however often referred to
    for sec, i, name, power in items:
        if isinstance(power, str) and power in named:
            if power not in made:
                made[power] = make_waveform(power, scn, f"{sec}[{i}].power")
            waves[name] = made[power]
        else:
            waves[name] = make_waveform(power, scn, f"{sec}[{i}].power")
    for name, spec in named.items():  # unused ones are checked too
        if name not in made:
            make_waveform(spec, scn, f"waveforms.{name}")
    if key is not None:
        if len(_WAVES) > 64:
            _WAVES.clear()
        _WAVES[key] = dict(waves)
    return waves


def _shortest_feature(waves: Iterable[Any]) -> float:
    """Shortest segment of the compiled waveforms, s (resolves the first sub-layers).

    At least 1 ns: a sliver shorter than that (a delay of 0.99999999 ms on a 1 ms train
    leaves one of 1e-11 s) would grade the ladder down to layers whose time constants
    span 1e12 and cost the modal solution its precision (the plate of the four-channel
    example then read 0.11 K over its own mean with no ripple)."""
    best = math.inf
    for w in waves:
        pw = w.compile()
        widths = np.diff(pw.edges)
        if widths.size:
            best = min(best, float(widths.min()))
    return max(best, 1e-9) if math.isfinite(best) else 1e-6


# ======================================================================================
# Scenario -> stack-up
# ======================================================================================
def _library(scn: Scenario):
    from .materials import default_library

    lib = default_library()
    if scn.materials:
        try:
            lib.update(scn.materials)
        except ValueError as exc:
            raise ScenarioError("materials", None, " ".join(str(exc).split())) from None
    return lib


def _material(lib, name: str, path: str):
    try:
        return lib.get(name)
    except ValueError as exc:
        msg = " ".join(str(exc).split())
        hint = msg.split(";", 1)[1].strip() if ";" in msg else msg
        raise ScenarioError(path, name, f"a material of the library ({hint}); list them "
                            "with 'pulsetherm materials'") from None


def _layer(spec: LayerSpec, lib, path: str, used: dict):
    from .stackup import AreaResistance, Layer

    try:
        if spec.area_resistance is not None:
            return AreaResistance(spec.area_resistance.value, name=spec.name or "interface")
        mat = _material(lib, spec.material, _join(path, "material"))
        used[mat.name] = mat
        vias = via_area = None
        if spec.vias is not None:
            vias = _vias(spec.vias, lib, _join(path, "vias"), used, mat)
            if spec.vias.area is not None:  # an area reads as a square of that area
                via_area = tuple(math.sqrt(q.value) if q.kind == "area" else q.value
                                 for q in spec.vias.area)
        size = None if spec.size is None else tuple(q.value for q in spec.size)
        angle = None if spec.spreading_angle is None else spec.spreading_angle.value
        return Layer(mat, spec.thickness.value, size, spec.name, angle,
                     spec.void_fraction or 0.0, vias, via_area)
    except ScenarioError:
        raise
    except ValueError as exc:
        raise _field_error(exc, path, spec) from None


def _field_error(exc: ValueError, path: str, spec: Any) -> ScenarioError:
    """Map ``Layer.thickness = ...`` style messages onto ``path.thickness``."""
    import re

    msg = " ".join(str(exc).split())
    m = re.search(r"\b[A-Z]\w*(?:\([^)]*\))?\.(\w+)", msg)
    key = m.group(1) if m else None
    if key is not None and spec is not None and key in getattr(type(spec), "__dataclass_fields__", {}):
        v = getattr(spec, key)
        return ScenarioError(_join(path, key), _as_written(v), msg)
    return ScenarioError(path, None, msg)


def _vias(spec, lib, path: str, used: dict, laminate=None):
    """The via field of a laminate layer: a :class:`~pulsetherm.network.vias.ViaArray`
    (effective through-plane conductivity by the area-fraction rule, physics brief §7).
    ``fill`` names a library material whose conductivity fills the holes (empty when not
    given); the barrels are board copper."""
    from .vias import Via, ViaArray

    copper = lib.get("pcb-copper")
    used[copper.name] = copper
    fill_label, k_fill = "none", None
    if spec.fill is not None:
        fill = _material(lib, spec.fill, _join(path, "fill"))
        used[fill.name] = fill
        fill_label, k_fill = "epoxy", fill.k  # label only: k_fill sets the conductivity
    try:
        via = Via(spec.drill.value, spec.plating.value, fill=fill_label, k_copper=copper.k,
                  k_fill=k_fill)
        return ViaArray(via, spec.pitch.value, laminate if laminate is not None else 0.0,
                        grid="square" if (spec.pattern or "square") == "square" else "hex")
    except ValueError as exc:
        raise _field_error(exc, path, spec) from None


def _sink(scn: Scenario):
    from .stackup import Film, FixedBase, LumpedSink

    s = scn.mount.sink
    t = scn.ambient_C
    if s.kind == "fixed":
        return FixedBase(t)
    if s.kind == "lumped":
        return LumpedSink(s.resistance.value, s.capacity.value if s.capacity else 0.0, t)
    return Film(s.h.value, t, s.area.value if s.area else None,
                s.capacity.value if s.capacity else 0.0)


def to_assembly(scn: Scenario, lib=None, used: dict | None = None):
    """The :class:`~pulsetherm.network.stackup.Assembly` of the scenario's devices."""
    from .stackup import Assembly, Board, Mount, Part

    lib = lib if lib is not None else _library(scn)
    used = {} if used is None else used
    parts = []
    for i, d in enumerate(scn.devices or ()):
        path = f"devices[{i}]"
        stack = [_layer(l, lib, f"{path}.stack[{j}]", used) for j, l in enumerate(d.stack or ())]
        foster = None
        if d.foster is not None:
            from .foster import Foster

            try:
                foster = Foster(np.array([q.value for q in d.foster.R]),
                                np.array([q.value for q in d.foster.tau]))
            except ValueError as exc:
                raise ScenarioError(f"{path}.foster", None, " ".join(str(exc).split())) from None
        rth = None if d.rth is None else d.rth.value
        if rth is not None and d.capacity is not None and d.capacity.value > 0:
            # rth with a junction-to-case capacity: one stage, R·C = τ (a one-term Foster
            # network is the one-stage Cauer ladder: the capacity sits on the junction)
            from .foster import Foster

            foster, rth = Foster(np.array([rth]), np.array([rth * d.capacity.value])), None
        try:
            parts.append(Part(d.name, tuple(q.value for q in d.footprint), stack,
                              (0.0, 0.0) if d.position is None
                              else tuple(q.value for q in d.position),
                              None if d.limit is None else d.limit.degC, rth, foster))
        except ValueError as exc:
            raise _field_error(exc, path, d) from None
    board = None
    if scn.board is not None:
        layers = [_layer(l, lib, f"board.layers[{j}]", used)
                  for j, l in enumerate(scn.board.layers)]
        try:
            board = Board(layers, tuple(q.value for q in scn.board.size))
        except ValueError as exc:
            raise _field_error(exc, "board", scn.board) from None
    iface = [_layer(l, lib, f"mount.interface[{j}]", used)
             for j, l in enumerate(scn.mount.interface or ())]
    try:
        mount = Mount(iface, _sink(scn))
    except ValueError as exc:
        raise _field_error(exc, "mount.sink", scn.mount.sink) from None
    if not parts:
        return None
    try:
        return Assembly(parts, board, mount, name=scn.name)
    except ValueError as exc:
        raise ScenarioError("devices", None, " ".join(str(exc).split())) from None


# ======================================================================================
# The built model
# ======================================================================================
@dataclass(eq=False)
class ScenarioModel:
    """A scenario turned into a network, ready to solve.

    Attributes
    ----------
    scenario
        The scenario it was built from.
    network
        :class:`~pulsetherm.network.model.ThermalNetwork` (degC at its API).
    built
        The stack-up build (:class:`~pulsetherm.network.builder.BuiltModel`) or None when
        the scenario has no device.
    waveforms
        Input name -> waveform object.
    probes
        Probe name -> node name (device junctions ``<device>.junction``, line hot spots
        ``<line>.hottest``, material-limit nodes, the scenario's own probes).
    limits
        Probe name -> limit, degC.
    ambient
        The boundary node the rises are referred to.
    materials
        Materials used, name -> :class:`~pulsetherm.network.materials.Material`.
    """

    scenario: Scenario
    network: Any
    built: Any
    waveforms: dict[str, Any]
    probes: dict[str, str]
    limits: dict[str, float]
    ambient: str
    materials: dict[str, Any] = field(default_factory=dict)
    lines: dict[str, Any] = field(default_factory=dict)
    groups: dict[str, list[str]] = field(default_factory=dict)
    via_fields: list[dict[str, Any]] = field(default_factory=list)
    #: shortest time the stack-up network resolves, s (None: no stack-up was built)
    t_min: float | None = None
    #: statements about defaults taken (shown with the cautions)
    notes: list[str] = field(default_factory=list)

    @property
    def method(self) -> str:
        m = self.scenario.model
        if m is not None and m.method:
            return m.method
        if m is not None and m.nonlinear:
            return "nonlinear"
        return "auto"

    def cautions(self) -> list[str]:
        """The general caution (whenever limits are judged), material cautions and the
        massless data-sheet devices (:func:`massless_caution`)."""
        out = [CAUTION]
        out += massless_caution(self.scenario)
        out += [n for n in self.notes if n not in out]
        for mat in self.materials.values():
            if mat.caution and mat.caution not in out:
                out.append(mat.caution)
        return out


#: Steps per decade of the time the ladder is graded for (see :func:`waveform_t_min`).
T_MIN_STEPS_PER_DECADE = 4


def waveform_t_min(scn: Scenario, waves: dict[str, Any]) -> float:
    """All the network build takes from the waveforms, s: the shortest feature of the
    devices' power, rounded *down* onto a grid of four steps a decade (1, 1.78, 3.16,
    5.62 × 10^k s).  It sets the thinnest ladder sub-layer (√(α·t_min) scaling), so the
    rounding only ever makes the ladder finer (the first sub-layer at most 1.33× thinner),
    and waveforms whose shortest features fall in one step (a pulse-width sweep from 60 to
    99 µs) share one network: sweeps key their reuse of a built network on this value
    (:mod:`pulsetherm.network.sweepcache`), keep the two in step."""
    t = min(_shortest_feature(waves[d.name] for d in scn.devices or ()), 1e3)
    k = math.floor(T_MIN_STEPS_PER_DECADE * math.log10(t) + 1e-9)
    return 10.0 ** (k / T_MIN_STEPS_PER_DECADE)


def build(scn: Scenario, t_min: float | None = None) -> ScenarioModel:
    """Turn a scenario into a :class:`ScenarioModel` (network, inputs, probes, limits).

    ``t_min`` (s): the shortest time the ladder resolves; default the shortest waveform
    feature (``zth`` passes its own earliest time instead)."""
    from .builder import build as build_stack
    from .model import ThermalNetwork

    lib = _library(scn)
    used: dict[str, Any] = {}
    waves = _waveforms(scn)
    asm = to_assembly(scn, lib, used)
    m = scn.model
    fidelity = (m.fidelity if m is not None else None) or "ladder"
    built = None
    if asm is not None:
        t_min = waveform_t_min(scn, waves) if t_min is None else float(t_min)
        opts = dict(t_min=t_min, fidelity=(m.grading if m and m.grading else "normal"),
                    spreading=(m.spreading if m and m.spreading else "calibrated"),
                    nonlinear=bool(m and m.nonlinear), library=lib)
        if fidelity == "axisymmetric":
            built, net, ambient, probes, limits = _axisymmetric(scn, asm, opts)
        else:
            try:
                built = build_stack(asm, **opts)
            except ValueError as exc:
                raise ScenarioError("devices", None, " ".join(str(exc).split())) from None
            net = built.network
            ambient = built.ambient
            probes, limits = _stack_probes(built)
        if built is not None and built.inputs != {d.name: d.name for d in scn.devices}:
            waves = {built.inputs.get(k, k): w for k, w in waves.items()}
    else:
        net = ThermalNetwork()
        ambient = "base" if scn.mount.sink.kind == "fixed" else "ambient"
        net.add_boundary(ambient, scn.ambient_C)
        probes, limits = {}, {}
    model = ScenarioModel(scn, net, built, waves, probes, limits, ambient, used)
    if asm is not None:  # the via fields used (sizes by builder.via_field_size)
        from .builder import via_fields
        model.via_fields = via_fields(asm, lib)
        if model.via_fields and fidelity != "axisymmetric":
            model.notes.append(VIA_FIELD_NOTE)
    model.t_min = t_min if asm is not None else None
    _add_lines(model, lib)
    _add_elements(model)
    _add_heaters(model)
    _add_probes(model)
    floating = net.floating_parts()
    if floating:
        raise ScenarioError(_owner(scn, floating[0]), None,
                            f"nodes {', '.join(floating[0][:5])} have no path to the sink; "
                            "connect them (elements of kind 'resistance')")
    return model


def _axisymmetric(scn: Scenario, asm, opts: dict):
    """The axisymmetric r-z accuracy mode (:func:`pulsetherm.network.axisym.build_axisym`):
    one die-stack device, no lines.  Its ``<device>.junction`` probe is the mean
    temperature of the heated footprint, as in the ladder (the limit is judged there);
    ``<device>.centre`` is the footprint's centre, its hottest point.  No layer budget."""
    from .axisym import build_axisym

    if len(scn.devices) != 1 or scn.lines:
        raise ScenarioError("model.fidelity", "axisymmetric", "one device and no lines (the "
                            "axisymmetric mode models one part's stack); use 'ladder'")
    try:
        ax = build_axisym(asm, t_min=opts["t_min"], fidelity=opts["fidelity"],
                          library=opts["library"])
    except ValueError as exc:
        raise ScenarioError("model.fidelity", "axisymmetric",
                            " ".join(str(exc).split())) from None
    d = scn.devices[0]
    probes = {f"{d.name}.junction": ax.junction, f"{d.name}.centre": ax.centre}
    limits = {} if d.limit is None else {f"{d.name}.junction": d.limit.degC}
    return None, ax.network, ax.ambient, probes, limits


def _stack_probes(built) -> tuple[dict[str, str], dict[str, float]]:
    """Junction probes ``<part>.junction`` and, for each layer with a material limit
    (laminate service temperature, solder melting point), ``<part>.<layer>`` at the layer's
    top face (its hottest face under heat flowing down)."""
    net = built.network
    bounds = set(net.boundaries)
    probes: dict[str, str] = {}
    limits: dict[str, float] = {}
    for part, col in built.columns.items():
        probes[col.junction] = col.junction
        lim = built.limits.get(col.junction)
        if lim is not None:
            limits[col.junction] = float(lim)
    for part, col in built.columns.items():
        for lay in col.layers:
            if lay.limit_C is None or not lay.nodes:
                continue
            node = lay.nodes[0]
            if node in bounds or node == built.sink_node:
                continue
            name = f"{part}.{lay.name}"
            probes[name] = node
            limits[name] = float(lay.limit_C)
    return probes, limits


def _known_nodes(model: ScenarioModel) -> list[str]:
    return list(model.network.nodes) + list(model.network.boundaries)


def _node(model: ScenarioModel, name: str, path: str) -> str:
    nodes = _known_nodes(model)
    if name in nodes:
        return name
    if name in model.probes:
        return model.probes[name]
    close = difflib.get_close_matches(name, nodes + list(model.probes), n=3, cutoff=0.5)
    hint = f"did you mean {' or '.join(repr(c) for c in close)}?" if close else \
        f"e.g. {', '.join(nodes[:4])}"
    raise ScenarioError(path, name, f"a node of the network; {hint}")


def _owner(scn: Scenario, nodes: list[str]) -> str:
    """Scenario key of the element or heater that made a floating group of nodes."""
    for i, e in enumerate(scn.elements or ()):
        if e.name in nodes or (e.between and set(e.between) & set(nodes)):
            return f"elements[{i}]"
    for i, h in enumerate(scn.heaters or ()):
        if h.node in nodes:
            return f"heaters[{i}].node"
    return "elements"


def _is_metal(mat) -> bool:
    """Board copper and other metals (k > 50 W/(m·K)) against laminates and fills."""
    return mat.k > 50.0


def _line_ground(model: ScenarioModel, lib, below: list) -> str:
    """The ground-plane node under the lines.

    The layers below the line's laminate (ground copper, further laminates) and the mount
    interface are lumped in one 1-D conduction over the board area, R = Σ t/(k·A) (plus
    area resistances r/A), with their heat capacity Σ ρ·c·t·A on the ground node.  This is
    a coarse model of the board under a line (no spreading): it is right when the board is
    thin against its width, as line boards are.
    """
    scn = model.scenario
    net = model.network
    W, L = (q.value for q in scn.board.size)
    area = W * L
    if model.built is not None:
        sink = model.built.sink_node
    else:
        s = scn.mount.sink
        if s.kind == "fixed":
            sink = model.ambient
        else:
            net.add_node("sink", capacity=s.capacity.value if s.capacity else 0.0, label="sink")
            if s.kind == "lumped":
                net.connect("sink", model.ambient, resistance=s.resistance.value)
            else:
                wet = s.area.value if s.area is not None else area
                net.connect("sink", model.ambient, conductance=s.h.value * wet)
            sink = "sink"
    R, C = 0.0, 0.0
    for path, lay in below:
        if lay.area_resistance is not None:
            R += lay.area_resistance.value / area
            continue
        mat = _material(lib, lay.material, _join(path, "material"))
        model.materials[mat.name] = mat
        R += lay.thickness.value / (mat.k * area)
        C += mat.rho * mat.c * lay.thickness.value * area
    if R <= 0.0:
        return sink
    net.add_node("board.ground", capacity=C, label="board/ground")
    net.connect("board.ground", sink, resistance=R)
    return "board.ground"


def _add_lines(model: ScenarioModel, lib) -> None:
    """Write each line (:class:`~pulsetherm.network.lines.RFLine`) into the network.

    The line's laminate is its ``dielectric`` or the first non-metal board layer; the trace
    copper is ``conductor`` thick or the board's top layer when that is a metal.  Heaters
    with ``line = ...`` become the line's point heaters.
    """
    scn = model.scenario
    if not scn.lines:
        return
    from .lines import PointHeater, RFLine
    from .microstrip import Microstrip

    layers = list(scn.board.layers)
    lam_index = None
    for j, lay in enumerate(layers):
        if lay.material is None:
            continue
        mat = _material(lib, lay.material, f"board.layers[{j}].material")
        if not _is_metal(mat):
            lam_index = j
            break
    if lam_index is None:
        raise ScenarioError("board.layers", None, "a laminate layer (a line needs a dielectric "
                            "between its strip and the ground plane)")
    lam_spec = layers[lam_index]
    top = layers[0]
    top_mat = _material(lib, top.material, "board.layers[0].material") if top.material else None
    below = [(f"board.layers[{j}]", lay) for j, lay in enumerate(layers) if j > lam_index]
    below += [(f"mount.interface[{j}]", lay) for j, lay in enumerate(scn.mount.interface or ())]
    ground = _line_ground(model, lib, below)
    net = model.network
    W_board, L_board = (q.value for q in scn.board.size)
    for i, spec in enumerate(scn.lines):
        path = f"lines[{i}]"
        if spec.dielectric is not None:
            lam = _material(lib, spec.dielectric, _join(path, "dielectric"))
        else:
            lam = _material(lib, lam_spec.material, f"board.layers[{lam_index}].material")
        model.materials[lam.name] = lam
        if spec.conductor is not None:
            t_cu = spec.conductor.value
        elif lam_index > 0 and top_mat is not None and _is_metal(top_mat):
            t_cu = top.thickness.value
        else:
            raise ScenarioError(_join(path, "conductor"), None, "missing; the board has no top "
                                "copper layer, give the strip's copper thickness")
        copper = top_mat if top_mat is not None and _is_metal(top_mat) else None
        heaters = [(j, h) for j, h in enumerate(scn.heaters or ()) if h.line == spec.name]
        eps_r, tan_d = _line_dielectric(model, spec, path, lam)
        try:
            ms = Microstrip(lam_spec.thickness.value, eps_r,
                            width=spec.width.value if spec.width else None,
                            z0_target=spec.impedance.value if spec.impedance else None,
                            tan_delta=tan_d, thickness=t_cu,
                            frequency=spec.frequency.value,
                            roughness=spec.roughness.value if spec.roughness else 0.0)
            _strip_not_narrower_than_copper(ms, t_cu, path, spec, lam_index, lam_spec)
            if ms.w * spec.length.value > W_board * L_board:
                raise ScenarioError(_join(path, "length"), spec.length.text,
                                    f"a line that fits on the board: its strip covers "
                                    f"{ms.w * spec.length.value * 1e6:.4g} mm2 ({ms.w * 1e3:.3g}"
                                    f" mm wide), the board only {W_board * L_board * 1e6:.4g} "
                                    "mm2 (board.size)")
            pts = [PointHeater(h.name, h.position.value,
                               h.length.value if h.length else 0.0,
                               h.resistance.value if h.resistance else None,
                               h.capacity.value if h.capacity else 0.0) for _, h in heaters]
            # segments = N: no segment longer than L/N (finer ones near point heaters)
            rl = RFLine(ms, spec.length.value, lam, copper=copper, heaters=tuple(pts),
                        limit=spec.limit.degC if spec.limit else None,
                        max_segment=(spec.length.value / spec.segments
                                     if spec.segments else None))
            nonlinear = bool(model.scenario.model and model.scenario.model.nonlinear)
            # nonlinear: copper loss rises with the line temperature (0.00393 /K, IACS)
            bl = rl.build(net, ground, prefix=spec.name, temp_coeff=nonlinear)
        except ScenarioError:
            raise
        except ValueError as exc:
            raise _line_error(exc, path, spec, heaters) from None
        rf = model.waveforms.pop(spec.name)
        if bl.rf_input is not None:
            model.waveforms[bl.rf_input] = bl.heat_waveform(rf)
        for j, h in heaters:
            model.waveforms[bl.heater_inputs[h.name]] = model.waveforms.pop(h.name)
            if h.name in bl.heater_nodes:
                node = bl.heater_nodes[h.name]
            else:
                # the hottest copper node under the footprint (resolved after the solve,
                # as a line's hot spot); until then the one under the heater's centre
                hp = pts[[x.name for x in pts].index(h.name)]
                under = [bl.top_nodes[k] for k in sorted(rl._footprint_shares(hp))]
                model.groups[h.name] = under
                k = int(np.clip(np.searchsorted(bl.edges, hp.position, side="right") - 1,
                                0, len(bl.top_nodes) - 1))
                node = bl.top_nodes[k] if bl.top_nodes[k] in under else under[0]
            model.probes[h.name] = node
            if h.limit is not None:
                model.limits[h.name] = h.limit.degC
        model.lines[spec.name] = bl
        probe = f"{spec.name}.hottest"
        model.groups[probe] = list(bl.top_nodes) + list(bl.heater_nodes.values())
        model.probes[probe] = bl.top_nodes[0]
        if rl.limit_c is not None:
            model.limits[probe] = float(rl.limit_c)


def _line_dielectric(model: ScenarioModel, spec, path: str, lam) -> tuple[float, float]:
    """The line's εr and tan δ: its own ``permittivity``/``loss_tangent``, else the values
    of the laminate beneath it (library class values, stated in the run's notes), so a
    change of laminate changes the line's electrical properties as well as its k."""
    eps_r, tan_d = spec.permittivity, spec.loss_tangent
    taken = []
    if eps_r is None:
        if lam.permittivity is None:
            raise ScenarioError(_join(path, "permittivity"), None,
                                f"missing; the laminate {lam.name!r} has no permittivity in "
                                "the material library, give the line's (e.g. 3.0)")
        eps_r = lam.permittivity
        taken.append(f"permittivity {eps_r:g}")
    if tan_d is None:
        tan_d = lam.loss_tangent if lam.loss_tangent is not None else 0.0
        if lam.loss_tangent is not None:
            taken.append(f"loss tangent {tan_d:g}")
    if taken:
        model.notes.append(f"line {spec.name!r}: {' and '.join(taken)} from the laminate "
                           f"{lam.name!r} (library class values; give the line's "
                           "permittivity/loss_tangent from the laminate's data sheet)")
    return float(eps_r), float(tan_d)


def _strip_not_narrower_than_copper(ms, t_cu: float, path: str, spec, lam_index: int,
                                    lam_spec) -> None:
    """Refuse a strip narrower than its copper is thick (W < t).

    The microstrip formulas (Hammerstad & Jensen 1980, with their thickness correction) are
    fits for strips wider than they are thick, and an etched trace is no narrower than its
    copper (common practice, no source).  A 50-ohm line on a 1 um laminate under 35 um
    copper (W = 0.5 um) is not a transmission line; it also asked for a 2046-segment network
    that took minutes (fuzz cases 8310 and 13843)."""
    if ms.w >= t_cu:
        return
    if spec.width is not None:
        key, text = _join(path, "width"), spec.width.text
    else:
        key, text = f"board.layers[{lam_index}].thickness", lam_spec.thickness.text
    raise ScenarioError(key, text, f"a strip at least as wide as its copper is thick "
                        f"(W >= t, the range of the microstrip formulas): line {spec.name!r} "
                        f"gets W = {ms.w * 1e6:.4g} um on a {ms.height * 1e6:.4g} um laminate "
                        f"under {t_cu * 1e6:.4g} um copper; give a thicker laminate, thinner "
                        "copper or a wider strip (lower impedance)")


def _line_error(exc: ValueError, path: str, spec, heaters) -> ScenarioError:
    msg = " ".join(str(exc).split())
    for j, h in heaters:
        if f"heater {h.name!r}" in msg:
            key = "position" if "footprint" in msg or "position" in msg else None
            return ScenarioError(f"heaters[{j}]" + (f".{key}" if key else ""),
                                 h.position.text if key else None, msg)
    for word, key in (("width", "width"), ("z0_target", "impedance"), ("eps_r", "permittivity"),
                      ("tan_delta", "loss_tangent"), ("frequency", "frequency"),
                      ("length", "length"), ("thickness", "conductor"),
                      ("roughness", "roughness")):
        if msg.startswith(word) or f" {word} =" in msg:
            v = getattr(spec, key, None)
            return ScenarioError(_join(path, key), getattr(v, "text", v), msg)
    return ScenarioError(path, None, msg)


def _add_elements(model: ScenarioModel) -> None:
    net = model.network
    pending = []
    for i, e in enumerate(model.scenario.elements or ()):
        path = f"elements[{i}]"
        if e.kind == "mass":
            net.add_node(e.name, capacity=e.capacity.value, label=f"{e.name}/mass")
            pending.append((path, e))
        else:
            pending.append((path, e))
    for path, e in pending:
        if e.kind == "mass":
            node = _node(model, e.node, _join(path, "node"))
            net.connect(e.name, node, resistance=e.resistance.value)
        else:
            a = _node(model, e.between[0], _join(path, "between") + "[0]")
            b = _node(model, e.between[1], _join(path, "between") + "[1]")
            net.connect(a, b, resistance=e.resistance.value)


def _add_heaters(model: ScenarioModel) -> None:
    for i, h in enumerate(model.scenario.heaters or ()):
        path = f"heaters[{i}]"
        if h.line is not None:
            continue
        node = _node(model, h.node, _join(path, "node"))
        if node in model.network.boundaries:
            raise ScenarioError(_join(path, "node"), h.node, "a free node (heat put into a "
                                "fixed-temperature boundary goes nowhere)")
        model.network.add_input(h.name, {node: 1.0})
        model.probes.setdefault(h.name, node)
        if h.limit is not None:
            model.limits[h.name] = h.limit.degC


def _add_probes(model: ScenarioModel) -> None:
    own = set(model.probes)  # junctions, line hot spots, material limits, heaters
    for i, p in enumerate(model.scenario.probes or ()):
        path = f"probes[{i}]"
        if p.name in own:
            raise ScenarioError(_join(path, "name"), p.name,
                                "a probe name the scenario does not already use (it is one of "
                                "the scenario's own probes; change its limit at the device, "
                                "line or heater instead)")
        node = _node(model, p.node or p.name, _join(path, "node" if p.node else "name"))
        if node in model.network.boundaries:
            raise ScenarioError(_join(path, "node"), p.node or p.name,
                                "a free node (a boundary's temperature is fixed)")
        model.probes[p.name] = node
        if p.limit is not None:
            model.limits[p.name] = p.limit.degC


# ======================================================================================
# Run
# ======================================================================================
@dataclass(frozen=True)
class ProbeStats:
    """Periodic-steady-state figures at one probe, degC / K."""

    peak_C: float
    mean_C: float
    min_C: float
    ripple_K: float
    limit_C: float | None
    margin_K: float | None

    def to_dict(self) -> dict[str, float | None]:
        return {"peak_C": self.peak_C, "mean_C": self.mean_C, "min_C": self.min_C,
                "ripple_K": self.ripple_K, "limit_C": self.limit_C, "margin_K": self.margin_K}


def violations(probes: Mapping[str, ProbeStats], margin: float = 0.0) -> list[str]:
    """Names of the probes whose margin to their limit is below ``margin`` K."""
    return [n for n, p in probes.items() if p.margin_K is not None and p.margin_K < margin]


@dataclass(eq=False)
class RunResult:
    """Result of :func:`simulate`.

    Attributes
    ----------
    scenario
        Scenario name.
    ambient_C
        Coolant or ambient temperature, degC.
    probes
        Probe name -> :class:`ProbeStats`.
    warmup_s
        Time from a cold start to 99 % of the periodic state at the hottest probe, s.
    budget
        Rows ``{"part", "layer", "share", "rise_K"}``: each layer's part of the mean rise
        of its part's junction (shares of one part sum to 1).
    cautions
        Texts to show with any judgement of limits.
    response
        The periodic :class:`~pulsetherm.network.result.Response` (one period).
    model
        The :class:`ScenarioModel` solved.
    """

    scenario: str
    ambient_C: float
    probes: dict[str, ProbeStats]
    warmup_s: float
    budget: list[dict[str, Any]]
    cautions: list[str]
    response: Any = None
    model: ScenarioModel | None = None
    budget_probe: str | None = None
    #: signal and cycling figures of devices with [devices.rf] / [devices.cycling]
    #: (:class:`~pulsetherm.network.device_effects.DeviceEffects`), else None
    effects: Any = None

    def violations(self, margin: float = 0.0) -> list[str]:
        """Probes whose margin to their limit is below ``margin`` K."""
        return violations(self.probes, margin)

    @property
    def ok(self) -> bool:
        return not self.violations()

    def to_dict(self) -> dict[str, Any]:
        """The stable JSON form of ``pulsetherm run --json``."""
        return {"scenario": self.scenario, "ambient_C": self.ambient_C,
                "probes": {n: p.to_dict() for n, p in self.probes.items()},
                "warmup_s": self.warmup_s, "budget": list(self.budget),
                "via_fields": [] if self.model is None else list(self.model.via_fields),
                "cautions": list(self.cautions),
                **(self.effects.to_dict() if self.effects is not None else {})}

    def summary(self) -> str:
        from_lines = [f"{self.scenario}: ambient {self.ambient_C:.1f} degC, warm-up "
                      f"{self.warmup_s:.3g} s"]
        for n, p in self.probes.items():
            lim = "" if p.limit_C is None else f", limit {p.limit_C:.1f} degC, margin " \
                                               f"{p.margin_K:.1f} K"
            from_lines.append(f"  {n}: peak {p.peak_C:.2f}, mean {p.mean_C:.2f}, min "
                              f"{p.min_C:.2f} degC{lim}")
        if any(p.limit_C is not None for p in self.probes.values()):
            from_lines += [f"Caution: {c}" for c in self.cautions]
        return "\n".join(from_lines)

    # -- time series -------------------------------------------------------------------
    def warmup_series(self, periods: int | None = None):
        """Transient from ambient (cold start) over the warm-up, a Response."""
        m = self.model
        T = _period(m)
        if periods is None:
            spec = m.scenario.model
            periods = spec.periods if spec is not None and spec.periods else None
        if periods is None:
            periods = int(min(max(math.ceil(1.2 * self.warmup_s / T), 1), 20000))
        return m.network.transient(m.waveforms, periods=periods,
                                   probes=list(dict.fromkeys(m.probes.values())),
                                   method=m.method)

    def to_csv(self, fh) -> None:
        """One period of the periodic steady state: time (s) and each probe (degC)."""
        r = self.response
        names = list(self.probes)
        w = csv.writer(fh)
        w.writerow(["t_s"] + [f"{n}_C" for n in names])
        cols = [r.T(self.model.probes[n]) for n in names]
        for k, t in enumerate(r.t):
            w.writerow([repr(float(t))] + [repr(float(c[k])) for c in cols])


def _period(model: ScenarioModel) -> float:
    from pulsetherm.waveforms.canonical import align, as_piecewise

    edges, _, _ = align([as_piecewise(w) for w in model.waveforms.values()])
    return float(edges[-1])


def _refuse_single_shot(scn: Scenario) -> None:
    """A periodic steady state needs periodic heat: name the key of a single-shot waveform
    (a table or profile with ``periodic = false``) instead of the solver's input index."""
    waves = _waveforms(scn)
    named = scn.waveforms or {}
    for sec, group in (("devices", scn.devices), ("lines", scn.lines),
                       ("heaters", scn.heaters)):
        for i, item in enumerate(group or ()):
            w = waves.get(item.name)
            if w is None or w.compile().periodic:
                continue
            ref = item.power
            key = (f"waveforms.{ref}.periodic" if isinstance(ref, str) and ref in named
                   else f"{sec}[{i}].power.periodic")
            raise ScenarioError(key, None, "a periodic waveform: 'run' gives the periodic "
                                "steady state, and this one plays once (set periodic = true)")


def simulate(scn: Scenario | ScenarioModel) -> RunResult:
    """Periodic steady state of a scenario: probe figures, budget, warm-up, cautions."""
    model, resp, probes = probe_figures(scn)
    s = model.scenario
    amb = s.ambient_C
    hottest = max(model.probes, key=lambda n: probes[n].peak_C) if probes else None
    warm = _warmup(model, resp, hottest)
    budget, bprobe = _budget(model)
    effects = None
    if any(d.rf or d.cycling for d in s.devices or ()):      # [devices.rf] / [devices.cycling]
        from .device_effects import device_effects

        effects = device_effects(model)
    cautions = model.cautions() + (effects.cautions if effects is not None else [])
    return RunResult(s.name, amb, probes, warm, budget, cautions, resp, model, bprobe,
                     effects=effects)


def probe_figures(scn: Scenario | ScenarioModel):
    """The periodic solve of a scenario and its probes' figures, without the warm-up time,
    layer budget and device-effect figures :func:`simulate` adds to them (what a sweep row
    reads; sizing reads the device-effect limits too, so it runs :func:`simulate`).
    Returns (model, periodic response, probe name -> :class:`ProbeStats`)."""
    model = scn if isinstance(scn, ScenarioModel) else build(scn)
    s = model.scenario
    net = model.network
    graph = net.graph
    if not any(graph.nodes[n].get("capacity", 0.0) > 0 for n in net.nodes):
        raise ScenarioError("devices", None, "at least one heat capacity for a transient "
                            "answer: a device 'foster' network or die 'stack', an rth "
                            "device's 'capacity', a sink 'capacity' or a 'mass' element "
                            "('rth' alone has none)")
    _refuse_single_shot(s)
    extra = [n for group in model.groups.values() for n in group]
    nodes = list(dict.fromkeys(list(model.probes.values()) + extra))
    _check_periodic_work(model, nodes)
    try:
        with np.errstate(over="ignore", invalid="ignore"):  # refused below, by name
            resp = net.periodic(model.waveforms, probes=nodes, method=model.method)
    except ValueError as exc:
        raise ScenarioError("model", None, " ".join(str(exc).split())) from None
    for name, group in model.groups.items():  # a line's hot spot: its hottest node
        model.probes[name] = max(group, key=lambda n: float(resp.peak(n)))
    probes: dict[str, ProbeStats] = {}
    for name, node in model.probes.items():
        pk, mn, lo = float(resp.peak(node)), float(resp.mean(node)), float(resp.min(node))
        if not all(map(math.isfinite, (pk, mn, lo))):
            raise ScenarioError("waveforms", None, f"finite temperatures; probe {name!r} gets "
                                f"peak {pk!r} degC (check the powers: they overflow)")
        lim = model.limits.get(name)
        probes[name] = ProbeStats(pk, mn, lo, pk - lo, lim, None if lim is None else lim - pk)
    return model, resp, probes


def _check_periodic_work(model: ScenarioModel, nodes: list[str]) -> None:
    """Refuse, before the solve, a periodic run whose exact extremes search would take
    minutes: (probe nodes, a line's every copper node among them) x (nodes with heat
    capacity) x (segments of the common period + ``PERIODIC_WORK_CUTS``) above
    ``limits.MAX_PERIODIC_WORK`` (measured rates in :mod:`~pulsetherm.network.limits`)."""
    from .limits import MAX_PERIODIC_WORK, PERIODIC_WORK_CUTS
    from .model import _aligned_period

    net = model.network
    try:
        edges = _aligned_period(net._power_pieces(model.waveforms))[0]
    except ValueError:
        return                      # the solve names the problem (as before)
    n_seg = int(edges.size - 1)
    n_cap = int(np.count_nonzero(net.system().C > 0))
    work = len(nodes) * n_cap * (n_seg + PERIODIC_WORK_CUTS)
    if work <= MAX_PERIODIC_WORK:
        return
    lines = sum(len(bl.top_nodes) for bl in model.lines.values())
    key = "waveforms" if n_seg >= PERIODIC_WORK_CUTS else ("lines" if lines else "probes")
    raise ScenarioError(key, None,
                        f"a periodic solve of at most {MAX_PERIODIC_WORK:.0e} probe nodes x "
                        f"capacities x (segments + {PERIODIC_WORK_CUTS}); here {len(nodes)} "
                        f"probe nodes ({lines} of them line segments), {n_cap} capacities and "
                        f"{n_seg} segments in the common period {float(edges[-1]):.4g} s of "
                        f"the waveforms: {work:.2g}; give periods with a shorter common period "
                        "(one a small multiple of the others), fewer line segments or a "
                        "smaller network")


def _warmup(model: ScenarioModel, resp, probe: str | None) -> float:
    if probe is None:
        return 0.0
    w = getattr(resp, "warmup_s", None)
    if w is not None and not callable(w):
        try:
            return float(w[model.probes[probe]]) if isinstance(w, Mapping) else float(w)
        except (TypeError, KeyError):
            pass
    return float(model.network.warmup_time(model.waveforms, model.probes[probe]))


def _budget(model: ScenarioModel) -> tuple[list[dict[str, Any]], str | None]:
    """Each layer's share of the mean rise of its part's junction.

    Mean powers drive a steady solve (the mean of the periodic state equals the steady
    state under mean power for a linear network); the rise across a layer is the
    temperature of its top face minus that of its bottom face.
    """
    built = model.built
    if built is None:
        return [], None
    mean = {name: float(_mean_power(w)) for name, w in model.waveforms.items()}
    st = model.network.steady(mean)
    rows = []
    amb = st.T(model.ambient)
    hottest, top = None, -math.inf
    for part, col in built.columns.items():
        rise = st.T(col.junction) - amb
        if rise > top:
            hottest, top = col.junction, rise
        for lay in col.layers:
            if not lay.nodes:
                continue
            r = st.T(lay.nodes[0]) - st.T(lay.nodes[-1])
            rows.append({"part": part, "layer": lay.name, "share": r / rise if rise > 0
                         else 0.0, "rise_K": r})
        # the rise from the bottom of the column to the ambient (sink and film)
        tail = st.T(col.layers[-1].nodes[-1]) - amb if col.layers else rise
        if abs(tail) > 1e-12 * max(abs(rise), 1.0):
            rows.append({"part": part, "layer": "sink", "share": tail / rise if rise > 0
                         else 0.0, "rise_K": tail})
    return rows, hottest


def _mean_power(w) -> float:
    from pulsetherm.waveforms.canonical import as_piecewise

    return as_piecewise(w).mean


# ======================================================================================
# Thermal impedance
# ======================================================================================
def __getattr__(name: str) -> Any:
    """``ImpedanceResult`` and ``thermal_impedance`` (re-exported from
    :mod:`~pulsetherm.network.impedance`), imported on first use: ``run`` needs neither."""
    if name in ("ImpedanceResult", "thermal_impedance"):
        from . import impedance

        return getattr(impedance, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

