"""The thermal RC network model: named nodes, conductances, boundaries and heat inputs.

A :class:`ThermalNetwork` is a graph of named nodes (``net.graph``, a
:class:`~pulsetherm.network.graph.Graph` with the part of the networkx interface it needs;
``net.graph.to_networkx()`` for networkx's algorithms).  Free nodes carry a heat capacity C
(J/K, 0 for a massless node) and a part/layer label; boundary nodes are held
at a fixed temperature (several boundaries, at different temperatures, are allowed).  Edges
are thermal conductances g (W/K); parallel connections between one pair add.  Heat inputs
spread a power waveform over one or more nodes with weights (normalised to sum 1).

Temperatures at this API edge are degC; inside everything is kelvin.  The network is
assembled once into a :class:`~pulsetherm.network.system.ThermalSystem` (cached, rebuilt
after any change) that every solver reads.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from collections.abc import Mapping

import numpy as np

from pulsetherm.waveforms.canonical import Piecewise, align, as_piecewise

from .graph import Graph
from .assemble import NetworkError, assemble, static_field, floating_nodes
from .rescale import power_factor, scaled_raw
from .system import KELVIN_OFFSET, ThermalSystem

__all__ = ["ThermalNetwork", "NetworkError", "InputSpec"]


def _finite(name: str, value, what: str, low: float | None = None, strict: bool = False) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise NetworkError(f"{name} = {value!r}: expected {what}") from None
    if not math.isfinite(v):
        raise NetworkError(f"{name} = {value!r}: expected {what} (finite)")
    if low is not None and (v <= low if strict else v < low):
        raise NetworkError(f"{name} = {value!r}: expected {what}")
    return v


def _warmup_fraction(name: str, value) -> float:
    """A warm-up fraction f in (0, 1): the rise approaches its periodic peak only
    asymptotically (every mode decays as e^{−t/τ}), so f = 1 has no finite warm-up time
    and any answer would be set by rounding."""
    f = _finite(name, value, "a fraction in (0, 1) (1 is reached only asymptotically)",
                0.0, True)
    if f >= 1.0:
        raise NetworkError(f"{name} = {value!r}: expected a fraction in (0, 1) (1 is reached "
                           "only asymptotically)")
    return f


def _name(kind: str, name) -> str:
    if not isinstance(name, str) or not name.strip():
        raise NetworkError(f"{kind} name = {name!r}: expected a non-empty string")
    return name


@dataclass(frozen=True)
class InputSpec:
    """One named heat input.

    Parameters
    ----------
    weights
        Node name -> share of the input's power; normalised to sum 1 in ``__post_init__``.
    temp_coeff
        c, 1/K: the power is P·(1 + c·(T − t_ref)), T the weighted node temperature.
    t_ref
        Reference temperature of ``temp_coeff``, degC.
    """

    name: str
    weights: Mapping[str, float]
    temp_coeff: float = 0.0
    t_ref: float = 25.0

    def __post_init__(self) -> None:
        if not isinstance(self.weights, Mapping) or not self.weights:
            raise NetworkError(f"input {self.name!r}: nodes = {self.weights!r}: expected a "
                               "non-empty dict node name -> weight")
        w = {}
        for node, val in self.weights.items():
            w[node] = _finite(f"input {self.name!r}: nodes[{node!r}]", val, "a weight >= 0", 0.0)
        total = sum(w.values())
        if not total > 0:
            raise NetworkError(f"input {self.name!r}: nodes = {dict(self.weights)!r}: expected "
                               "weights with a positive sum")
        object.__setattr__(self, "weights", {k: v / total for k, v in w.items() if v > 0})
        object.__setattr__(self, "temp_coeff",
                           _finite(f"input {self.name!r}: temp_coeff", self.temp_coeff,
                                   "a temperature coefficient in 1/K"))
        object.__setattr__(self, "t_ref",
                           _finite(f"input {self.name!r}: t_ref", self.t_ref,
                                   "a reference temperature in degC", -KELVIN_OFFSET, True))

    @property
    def t_ref_K(self) -> float:
        return self.t_ref + KELVIN_OFFSET


@dataclass
class SteadyResult:
    """Steady temperatures under constant power.

    Attributes
    ----------
    temperatures
        Node name -> degC, every node including boundaries.
    heat_to_boundaries
        Boundary name -> heat flowing into it, W.
    power
        Input name -> W.
    """

    temperatures: dict[str, float]
    heat_to_boundaries: dict[str, float]
    power: dict[str, float] = field(default_factory=dict)

    def T(self, name: str) -> float:
        try:
            return self.temperatures[name]
        except KeyError:
            raise KeyError(f"node {name!r} is not in this network") from None

    def rise(self, name: str, boundary: str | None = None) -> float:
        """Temperature rise of ``name`` over a boundary (the first one by default), K."""
        ref = boundary if boundary is not None else next(iter(self.heat_to_boundaries))
        return self.T(name) - self.T(ref)


class ThermalNetwork:
    """Thermal RC network of named nodes.

    Examples
    --------
    >>> net = ThermalNetwork()
    >>> net.add_boundary("sink", temperature=25.0)
    >>> net.add_node("j", capacity=1e-3)
    >>> net.connect("j", "sink", resistance=1.0)
    >>> net.add_input("die", nodes={"j": 1.0})
    >>> round(net.steady({"die": 10.0}).T("j"), 6)
    35.0
    """

    def __init__(self) -> None:
        self.graph = Graph()
        self._inputs: dict[str, InputSpec] = {}
        self._system: ThermalSystem | None = None
        self._solvers: dict = {}
        self._solver_options: dict[str, dict] = {}

    # -- building ---------------------------------------------------------------------
    def _changed(self) -> None:
        self._system = None
        self._solvers = {}

    def _new_node(self, name: str) -> None:
        if name in self.graph:
            kind = "boundary" if self.graph.nodes[name]["boundary"] else "node"
            raise NetworkError(f"node {name!r} already exists (as a {kind}); names must be unique")

    def add_boundary(self, name: str, temperature: float = 25.0) -> None:
        """A node held at a fixed ``temperature`` (degC), e.g. a heat sink or coolant."""
        name = _name("boundary", name)
        self._new_node(name)
        t = _finite(f"boundary {name!r}: temperature", temperature,
                    "a temperature in degC above absolute zero", -KELVIN_OFFSET, True)
        self.graph.add_node(name, boundary=True, capacity=0.0, label="boundary",
                            temperature_K=t + KELVIN_OFFSET)
        self._changed()

    def add_node(self, name: str, capacity: float = 0.0, label: str | None = None) -> None:
        """A free node with heat ``capacity`` (J/K, >= 0; 0 = massless) and a part ``label``."""
        name = _name("node", name)
        self._new_node(name)
        c = _finite(f"node {name!r}: capacity", capacity, "a heat capacity >= 0 J/K", 0.0)
        self.graph.add_node(name, boundary=False, capacity=c,
                            label=str(label) if label is not None else "")
        self._changed()

    def connect(self, a: str, b: str, resistance: float | None = None,
                conductance: float | None = None, k_exponent: float = 0.0,
                t_ref: float = 300.0) -> None:
        """Join two existing nodes by a thermal conductance.

        Give exactly one of ``resistance`` (K/W, > 0) or ``conductance`` (W/K, > 0).  A
        second connection between the same pair adds in parallel.  ``k_exponent`` a makes the
        conductance temperature dependent, g(T) = g·(T/t_ref)^−a (t_ref in K), evaluated at
        the mean temperature of the two ends by the nonlinear solver.
        """
        for x in (a, b):
            if x not in self.graph:
                raise NetworkError(f"connect({a!r}, {b!r}): unknown node {x!r}; add it first "
                                   f"(known: {', '.join(map(repr, list(self.graph)[:12]))})")
        if a == b:
            raise NetworkError(f"connect({a!r}, {b!r}): a node cannot be connected to itself")
        if self.graph.nodes[a]["boundary"] and self.graph.nodes[b]["boundary"]:
            raise NetworkError(f"connect({a!r}, {b!r}): both are boundaries (fixed "
                               "temperatures); a conductance between them changes nothing")
        if (resistance is None) == (conductance is None):
            raise NetworkError(f"connect({a!r}, {b!r}): give exactly one of resistance (K/W) "
                               f"or conductance (W/K), got resistance={resistance!r}, "
                               f"conductance={conductance!r}")
        if resistance is not None:
            g = 1.0 / _finite(f"connect({a!r}, {b!r}): resistance", resistance,
                              "a resistance > 0 K/W", 0.0, True)
        else:
            g = _finite(f"connect({a!r}, {b!r}): conductance", conductance,
                        "a conductance > 0 W/K", 0.0, True)
        if not (math.isfinite(g) and g > 0):
            raise NetworkError(f"connect({a!r}, {b!r}): resistance = {resistance!r} gives a "
                               "conductance that is not finite; expected a resistance > 0 K/W")
        ka = _finite(f"connect({a!r}, {b!r}): k_exponent", k_exponent, "a finite exponent")
        tr = _finite(f"connect({a!r}, {b!r}): t_ref", t_ref, "a reference temperature > 0 K",
                     0.0, True)
        if self.graph.has_edge(a, b):
            data = self.graph.edges[a, b]
            data["branches"].append((g, ka, tr))
            data["conductance"] += g
        else:
            self.graph.add_edge(a, b, conductance=g, branches=[(g, ka, tr)])
        self._changed()

    def add_input(self, name: str, nodes: Mapping[str, float], temp_coeff: float = 0.0,
                  t_ref: float = 25.0) -> None:
        """A named heat input spread over free ``nodes`` (name -> weight, normalised to 1).

        ``temp_coeff`` c (1/K): power P·(1 + c·(T − t_ref)), T (degC) the weighted mean
        temperature of the input's nodes (nonlinear solver).
        """
        name = _name("input", name)
        if name in self._inputs:
            raise NetworkError(f"input {name!r} already exists; input names must be unique")
        spec = InputSpec(name, nodes, temp_coeff, t_ref)
        for node in spec.weights:
            if node not in self.graph:
                raise NetworkError(f"input {name!r}: unknown node {node!r}; add it first")
            if self.graph.nodes[node]["boundary"]:
                raise NetworkError(f"input {name!r}: node {node!r} is a boundary (fixed "
                                   "temperature); heat put there never reaches the network")
        self._inputs[name] = spec
        self._changed()

    def add_cauer(self, ladder, top: str, bottom: str, prefix: str | None = None,
                  label: str | None = None) -> list[str]:
        """Insert a Cauer ladder (``.R`` K/W, ``.C`` J/K) between ``top`` and ``bottom``.

        Creates nodes ``top`` (gets C[0]; if it already exists as a free node, C[0] is added
        to its capacity), ``<prefix>.1``, ... ``<prefix>.{n-1}``; R[k] joins stage k to stage
        k+1 and the last R joins the last stage to ``bottom`` (an existing node or boundary).

        Returns
        -------
        The names of the ladder's nodes, top first.
        """
        R = np.asarray(ladder.R, dtype=np.float64).ravel()
        C = np.asarray(ladder.C, dtype=np.float64).ravel()
        if R.size == 0 or R.size != C.size:
            raise NetworkError(f"add_cauer: ladder has {R.size} resistances and {C.size} "
                               "capacities; expected the same number >= 1")
        if bottom not in self.graph:
            raise NetworkError(f"add_cauer: bottom {bottom!r} is unknown; add it first")
        prefix = top if prefix is None else prefix
        names = [top] + [f"{prefix}.{k}" for k in range(1, R.size)]
        for k, nm in enumerate(names[1:], start=1):
            if nm in self.graph:
                raise NetworkError(f"add_cauer: node {nm!r} (stage {k}) already exists; "
                                   "give another prefix")
        if top in self.graph:
            if self.graph.nodes[top]["boundary"]:
                raise NetworkError(f"add_cauer: top {top!r} is a boundary; expected a free node")
            c0 = _finite("add_cauer: C[0]", C[0], "a capacity >= 0 J/K", 0.0)
            self.graph.nodes[top]["capacity"] += c0
        else:
            self.add_node(top, capacity=C[0], label=label)
        for k in range(1, R.size):
            self.add_node(names[k], capacity=C[k], label=label)
        for k in range(R.size):
            nxt = names[k + 1] if k + 1 < R.size else bottom
            self.connect(names[k], nxt, resistance=R[k])
        self._changed()
        return names

    def add_foster(self, foster, top: str, bottom: str, prefix: str | None = None,
                   label: str | None = None) -> list[str]:
        """Insert a Foster network, converted to its Cauer ladder first (a Foster network's
        inner nodes are not temperatures, so it cannot be chained); see :meth:`add_cauer`."""
        return self.add_cauer(foster.to_cauer(), top, bottom, prefix=prefix, label=label)

    # -- views ------------------------------------------------------------------------
    @property
    def nodes(self) -> list[str]:
        """Free (non-boundary) node names."""
        return [v for v, d in self.graph.nodes(data=True) if not d["boundary"]]

    @property
    def boundaries(self) -> list[str]:
        return [v for v, d in self.graph.nodes(data=True) if d["boundary"]]

    @property
    def inputs(self) -> list[str]:
        return list(self._inputs)

    def input_spec(self, name: str) -> InputSpec:
        try:
            return self._inputs[name]
        except KeyError:
            raise KeyError(f"input {name!r} is not defined (known: "
                           f"{', '.join(self._inputs) or 'none'})") from None

    def system(self) -> ThermalSystem:
        """The assembled :class:`ThermalSystem` (cached until the network changes)."""
        if self._system is None:
            self._system = assemble(self.graph, self._inputs)
        return self._system

    # -- helpers shared by the analyses -------------------------------------------------
    def _power_pieces(self, waveforms: Mapping) -> list[Piecewise]:
        sys_ = self.system()
        if not isinstance(waveforms, Mapping):
            raise NetworkError(f"waveforms = {waveforms!r}: expected a dict input name -> "
                               f"waveform (inputs: {', '.join(sys_.input_names) or 'none'})")
        for key in waveforms:
            if key not in sys_.input_names:
                raise NetworkError(f"waveforms: unknown input {key!r}; defined inputs: "
                                   f"{', '.join(map(repr, sys_.input_names)) or 'none'}")
        if not sys_.input_names:
            raise NetworkError("the network has no heat input: add_input(...) first")
        return [as_piecewise(waveforms.get(k, 0.0), name=f"waveforms[{k!r}]")
                for k in sys_.input_names]

    def _power_vector(self, powers: Mapping[str, float]) -> np.ndarray:
        sys_ = self.system()
        out = np.zeros(sys_.m)
        for key, val in powers.items():
            out[sys_.input_index(key) if key in sys_.input_names else self._bad_input(key)] = \
                _finite(f"powers[{key!r}]", val, "a power in W")
        return out

    def _bad_input(self, key):
        raise NetworkError(f"unknown input {key!r}; defined inputs: "
                           f"{', '.join(map(repr, self.system().input_names)) or 'none'}")

    def _probe_rows(self, probes) -> np.ndarray:
        sys_ = self.system()
        if probes is None:
            if sys_.n <= 200:
                return np.arange(sys_.n)
            rows = sorted({sys_.index(v) for spec in self._inputs.values() for v in spec.weights})
            return np.array(rows or [0], dtype=np.int64)
        if isinstance(probes, str):
            probes = [probes]
        rows = []
        for p in probes:
            if p in self.graph and self.graph.nodes[p]["boundary"]:
                raise NetworkError(f"probe {p!r} is a boundary (fixed temperature); "
                                   "expected a free node")
            if p not in self.graph:
                raise NetworkError(f"probe {p!r}: unknown node")
            rows.append(sys_.index(p))
        if not rows:
            raise NetworkError("probes = []: expected at least one node name")
        return np.array(rows, dtype=np.int64)

    def configure_solver(self, method: str, **options) -> None:
        """Options for a named solver, used from the next analysis on.

        For example ``net.configure_solver("sparse", tol=1e-8, max_modes=500)``; the options
        are those of the solver class (see :data:`pulsetherm.network.solvers.SOLVERS`).
        """
        from .solvers import SOLVERS

        if method not in SOLVERS:
            raise ValueError(f"configure_solver: method {method!r} is not a solver; expected "
                             f"one of {', '.join(SOLVERS)}")
        self._solver_options[method] = dict(options)
        self._solvers = {}

    def solver_options(self, method: str) -> dict:
        """The options set with :meth:`configure_solver` for a named solver (a copy)."""
        return dict(self._solver_options.get(method, {}))

    def _solver(self, method):
        from .solvers import resolve_solver

        sys_ = self.system()
        cls = resolve_solver(method, sys_)
        if cls not in self._solvers:
            options = self._solver_options.get(getattr(cls, "name", ""), {})
            try:
                self._solvers[cls] = cls(sys_, **options)
            except TypeError as exc:  # an option the solver does not take
                raise ValueError(f"solver {getattr(cls, 'name', cls)!r}: {exc}") from None
        return self._solvers[cls]

    # -- analyses ---------------------------------------------------------------------
    def steady(self, powers: Mapping[str, float] | None = None, method: str = "auto") -> SteadyResult:
        """Steady temperatures (degC) under constant powers (input name -> W)."""
        sys_ = self.system()
        P = self._power_vector(powers or {})
        if sys_.is_linear:
            T = static_field(sys_, P)
        else:
            T = np.asarray(self._solver(method).steady(P), dtype=np.float64)
        temps = {name: float(T[i]) - KELVIN_OFFSET for i, name in enumerate(sys_.node_names)}
        for b, name in enumerate(sys_.boundary_names):
            temps[name] = float(sys_.T_boundary[b]) - KELVIN_OFFSET
        Gb = sys_.Gb.toarray()
        heat = {}
        for b, name in enumerate(sys_.boundary_names):
            heat[name] = float(Gb[:, b] @ (T - sys_.T_boundary[b]))
        return SteadyResult(temps, heat, {k: float(P[i]) for i, k in enumerate(sys_.input_names)})

    def floating_parts(self) -> list[list[str]]:
        """Groups of free nodes with no conduction path to a boundary (adiabatic parts)."""
        return floating_nodes(self.system())

    def _initial_state(self, initial) -> np.ndarray | None:
        """Absolute K state (n,) from None / float degC / dict name -> degC / array degC."""
        sys_ = self.system()
        if initial is None:
            if floating_nodes(sys_):
                static_field(sys_)  # raises, naming the nodes
            return None
        if isinstance(initial, Mapping):
            base = static_field(sys_, floating="nan")
            out = base.copy()
            for name, val in initial.items():
                out[sys_.index(name) if name in sys_.node_names else self._bad_node(name)] = \
                    _finite(f"initial[{name!r}]", val, "a temperature in degC") + KELVIN_OFFSET
            if np.isnan(out).any():
                missing = [sys_.node_names[i] for i in np.flatnonzero(np.isnan(out))]
                raise NetworkError(f"initial: nodes {missing[:8]} have no path to a boundary "
                                   "so no ambient value; give their initial temperature")
            return out
        if np.ndim(initial) == 0:
            v = _finite("initial", initial, "a temperature in degC")
            return np.full(sys_.n, v + KELVIN_OFFSET)
        arr = np.asarray(initial, dtype=np.float64)
        if arr.shape != (sys_.n,):
            raise NetworkError(f"initial: shape {arr.shape}; expected ({sys_.n},) degC in "
                               "system().node_names order, a dict name -> degC or one value")
        if not np.isfinite(arr).all():
            raise NetworkError("initial: expected finite temperatures in degC")
        return arr + KELVIN_OFFSET

    def _bad_node(self, name):
        raise NetworkError(f"unknown free node {name!r}")

    def periodic(self, waveforms: Mapping, probes=None, method="auto",
                 warmup_fraction: float = 0.99):
        """Periodic steady state under periodic waveforms on their common period.

        Returns a :class:`~pulsetherm.network.result.Response` (degC at the probes; exact
        peak, minimum, period mean and ripple; warm-up time from ambient to
        ``warmup_fraction`` of the peak rise, per probe, when the solver provides it).
        """
        from .result import Response

        warmup_fraction = _warmup_fraction("warmup_fraction", warmup_fraction)
        sys_ = self.system()
        pieces = self._power_pieces(waveforms)
        edges, level, slope, e_in = _aligned_period(pieces)
        ambient = static_field(sys_)  # raises for adiabatic parts, naming them
        rows = self._probe_rows(probes)
        solver = self._solver(method)
        T = float(edges[-1])
        solver_name = getattr(solver, "name", str(method))
        # the solver's last response for these probes (the exact modal solver keeps one),
        # reused when the power is the same times one factor (linearity: rescale.py)
        memos = getattr(solver, "memo", None)
        memo_key = (rows.tobytes(), warmup_fraction)
        memo = None if memos is None else memos.get(memo_key)
        a = None if memo is None else power_factor(edges, level, slope, *memo[:3])
        raw = (solver.periodic(edges, level, slope, rows) if a is None
               else scaled_raw(memo[3], a, ambient, rows))
        res = Response.from_raw(raw, sys_, rows, periodic=True, method=solver_name,
                                energy_in=e_in, span=T, ambient_K=ambient)
        if a is not None:
            first = memo[4]
            res.warmup_fn = (None if first.warmup_fn is None
                             else (lambda probe: first.warmup_s[probe]))
            return res
        if hasattr(solver, "warmup_crossing"):
            q_ps = raw.info.get("q_start")

            def warmup(name):
                # one probe at a time, on first access (Response.warmup_s is lazy)
                j = res.probes.index(name)
                r = int(rows[j])
                rise = raw.theta[:, j] - ambient[r]
                target = warmup_fraction * float(rise.max())
                return solver.warmup_crossing(edges, level, slope, r, target, raw.t, rise,
                                              q_ps=q_ps)
            res.warmup_fn = warmup
        if memos is not None:
            memos.clear()                   # one response per solver: the latest
            memos[memo_key] = (edges, level, slope, raw, res)
        return res

    def warmup_time(self, waveforms: Mapping, node: str, fraction: float = 0.99,
                    initial=None, method: str = "auto") -> float:
        """Time (s) from ``initial`` (None: ambient) until the rise at ``node`` first reaches
        ``fraction`` of its periodic-steady-state peak rise (exact, whole periods jumped)."""
        fr = _warmup_fraction("fraction", fraction)
        res = self.periodic(waveforms, probes=[node], method=method, warmup_fraction=fr)
        if res.warmup_s is None and method == "auto":
            # the solver picked for a large network has no warm-up search: the exact modal
            # one has (was a TypeError on a 1 um laminate)
            res = self.periodic(waveforms, probes=[node], method="modal", warmup_fraction=fr)
        if res.warmup_s is None:
            raise NetworkError(f"warm-up time: method {method!r} does not compute one; "
                               "expected method 'auto' or 'modal'")
        if initial is None:
            return float(res.warmup_s[node])
        sys_ = self.system()
        solver = self._solver(method)
        if not hasattr(solver, "warmup_crossing"):
            raise NetworkError(f"warmup_time: the {getattr(solver, 'name', method)!r} solver "
                               "has no warm-up search; use method='modal' or 'nonlinear'")
        edges, level, slope = align(self._power_pieces(waveforms))
        r = sys_.index(node)
        amb = static_field(sys_)
        rise = res.T(node) + KELVIN_OFFSET - amb[r]
        return solver.warmup_crossing(edges, level, slope, r, fr * float(rise.max()), res.t,
                                      rise, initial=self._initial_state(initial))

    def transient(self, waveforms: Mapping, duration: float | None = None,
                  periods: int | None = None, initial=None, probes=None, method="auto"):
        """Transient from ``initial`` (None: the zero-power static field; a float: uniform
        degC; a dict name -> degC; or an array) over ``duration`` s or ``periods`` common
        periods of the (periodic) waveforms.

        Long runs of identical periods are jumped exactly by the modal solver (per-period
        propagator); only a selection of periods is sampled (the first ones, log-spaced
        ones, the last, and those holding each probe's extremes).  Means are exact over the
        run.  Massless nodes follow the others algebraically: initial values given for them
        are not used.
        """
        from .result import Response, energy_of

        sys_ = self.system()
        pieces = self._power_pieces(waveforms)
        if (duration is None) == (periods is None):
            raise NetworkError(f"transient: give exactly one of duration (s) or periods, got "
                               f"duration={duration!r}, periods={periods!r}")
        x0 = self._initial_state(initial)
        rows = self._probe_rows(probes)
        solver = self._solver(method)
        name = getattr(solver, "name", str(method))
        all_periodic = all(p.periodic for p in pieces)
        edges = None
        if periods is not None:
            n_per = int(periods) if float(periods) == int(periods) else -1
            if n_per < 1:
                raise NetworkError(f"transient: periods = {periods!r}; expected a whole number >= 1")
            if not all_periodic:
                raise NetworkError("transient: periods= needs periodic waveforms; a single-shot "
                                   "waveform has no period: give duration= instead")
            edges, level, slope = align(pieces)
            reps, rest = n_per, 0.0
        else:
            d = _finite("transient: duration", duration, "a duration > 0 s", 0.0, True)
            reps, rest = 0, d
            if all_periodic:
                edges, level, slope = align(pieces)
                T = edges[-1]
                reps = int(math.floor(d / T * (1 + 1e-12)))
                rest = d - reps * T
                if rest <= 1e-12 * d:
                    rest = 0.0
                if reps < 2:
                    reps, rest = 0, d
        raw = None
        t0 = 0.0
        if reps >= 1:
            t0 = reps * float(edges[-1])
            if hasattr(solver, "transient_periods"):
                raw = solver.transient_periods(edges, level, slope, x0, rows, reps)
            else:
                e2, l2, s2 = align(pieces, t0)
                raw = solver.transient(e2, l2, s2, x0, rows)
        if rest > 0:
            # the remainder after whole periods (or the whole single-shot run)
            e3, l3, s3 = align(pieces, rest)
            start = raw.state_end if raw is not None else x0
            raw_rest = solver.transient(e3, l3, s3, start, rows)
            raw = raw_rest if raw is None else _join(raw, raw_rest, t0)
        span = t0 + rest
        e_in = float(sum(energy_of(p, span) for p in pieces))
        ambient = static_field(sys_, floating="nan")
        return Response.from_raw(raw, sys_, rows, periodic=False, method=name, energy_in=e_in,
                                 span=span, ambient_K=ambient)

    # -- impedances -------------------------------------------------------------------
    def _zth_args(self, node: str, input: str | None):
        from .modal import ModalSolver

        sys_ = self.system()
        if not sys_.input_names:
            raise NetworkError("the network has no heat input: add_input(...) first")
        if input is None:
            if len(sys_.input_names) != 1:
                raise NetworkError(f"input = None but the network has inputs "
                                   f"{list(sys_.input_names)}; name one")
            input = sys_.input_names[0]
        if input not in sys_.input_names:
            self._bad_input(input)
        if node not in sys_.node_names:
            raise NetworkError(f"node {node!r}: expected a free node of the network")
        static_field(sys_)  # adiabatic parts: no Zth, raise naming them
        if ModalSolver not in self._solvers:
            self._solvers[ModalSolver] = ModalSolver(sys_, linearize=True)
        return self._solvers[ModalSolver], sys_.index(node), sys_.input_index(input), input

    def zth(self, node: str, input: str | None = None, t=None):
        """Step-response thermal impedance Zth(t) at ``node`` for a unit step of ``input``
        (K/W), on a log time axis from 1 ns to settling unless ``t`` (s) is given."""
        from .zth import zth_curve

        solver, row, col, inp = self._zth_args(node, input)
        return zth_curve(solver, row, col, t=t, node=node, input=inp)

    def pulsed_zth(self, node: str, input: str | None = None, widths=None,
                   duties=(0.0, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5)):
        """Pulsed thermal impedance family Z(t_p, D): exact periodic peak rise per watt of
        pulse power for rectangular pulses of width t_p at duty D (D = 0: single pulse)."""
        from .zth import pulsed_zth

        solver, row, col, inp = self._zth_args(node, input)
        return pulsed_zth(solver, row, col, widths=widths, duties=duties, node=node, input=inp)

    def foster(self, node: str, input: str | None = None):
        """Foster network of the (driving-point or transfer) impedance, from the modes."""
        from .zth import foster_from_modes

        solver, row, col, _ = self._zth_args(node, input)
        return foster_from_modes(solver, row, col)


#: Common-period alignment of recently used pieces, keyed by the pieces' identities (the
#: pieces are held too, so an identity cannot be reused while its entry lives): a sweep
#: rebuilds the network for every row but drives it with the same compiled waveforms.
_ALIGNED: dict[tuple[int, ...], tuple] = {}


def _aligned_period(pieces: list[Piecewise]):
    """``align(pieces)`` (edges, level, slope; fresh copies) and the energy per period, J."""
    from .result import energy_of

    key = tuple(id(p) for p in pieces)
    hit = _ALIGNED.get(key)
    if hit is None or any(a is not b for a, b in zip(hit[0], pieces)):
        edges, level, slope = align(pieces)
        T = float(edges[-1])
        e_in = float(sum(energy_of(p, T) for p in _tiled(pieces, edges)))
        if len(_ALIGNED) > 32:
            _ALIGNED.clear()
        hit = _ALIGNED[key] = (tuple(pieces), edges, level, slope, e_in)
    _, edges, level, slope, e_in = hit
    return edges.copy(), level.copy(), slope.copy(), e_in


def _tiled(pieces: list[Piecewise], edges: np.ndarray) -> list[Piecewise]:
    """The pieces as single periods of the common period (for the energy per period)."""
    T = float(edges[-1])
    out = []
    for p in pieces:
        if p.is_constant:
            out.append(Piecewise([0.0, T], [p.level[0]]))
        else:
            out.append(p)
    return out


def _join(a, b, t0: float):
    """Concatenate two raw responses, ``b`` starting at ``t0``; means weighted by duration."""
    from .solvers import RawResponse

    ta, tb = a.t, b.t + t0
    d_a = t0
    d_b = b.t[-1] if b.t.size else 0.0
    mean = (a.mean * d_a + b.mean * d_b) / (d_a + d_b)
    info = dict(a.info)
    for k, v in b.info.items():
        if isinstance(v, (int, float)) and isinstance(info.get(k), (int, float)) \
                and not isinstance(v, bool):
            info[k] = info[k] + v
    if "mean_full" in a.info and "mean_full" in b.info:
        info["mean_full"] = (a.info["mean_full"] * d_a + b.info["mean_full"] * d_b) / (d_a + d_b)
    else:
        info.pop("mean_full", None)
    if "energy_J" in a.info and "energy_J" in b.info:
        # energy terms of the two parts add; the balance is recomputed from the sums
        terms = {k: a.info["energy_J"][k] + b.info["energy_J"][k]
                 for k in ("input_J", "to_boundaries_J", "stored_J")}
        scale = max(abs(v) for v in terms.values())
        info["energy_J"] = terms
        info["energy_error"] = (abs(terms["input_J"] - terms["stored_J"]
                                    - terms["to_boundaries_J"]) / scale if scale > 0 else 0.0)
    # b's first sample repeats a's last unless a massless probe jumps there (right limit)
    skip = 1 if (tb.size and ta.size and abs(tb[0] - ta[-1]) <= 1e-12 * max(t0, 1e-300)
                 and np.array_equal(a.theta[-1], b.theta[0])) else 0
    return RawResponse(np.concatenate([ta, tb[skip:]]), np.vstack([a.theta, b.theta[skip:]]),
                       a.state_start, b.state_end, mean, info)
