"""Solver plug-in contract: the raw response every solver returns and the named registry.

A solver reads only the assembled :class:`~pulsetherm.network.system.ThermalSystem`
(``C dT/dt + G T = Gb T_b + B P(t)``, absolute kelvin inside) and the canonical
piecewise-linear power from :func:`pulsetherm.waveforms.canonical.align`.  It is chosen by
name through :data:`SOLVERS` (string entries are imported lazily, so a module that is not
there yet only fails when it is selected), or given directly as a class.

``method="auto"``: the nonlinear solver when the system is nonlinear (k(T) exponents or
temperature-dependent inputs), else the exact modal solver up to
:data:`MODAL_NODE_LIMIT` capacitive nodes, else the sparse solver.
"""
from __future__ import annotations

import importlib
from dataclasses import dataclass, field
from typing import Protocol, runtime_checkable

import numpy as np

from .system import ThermalSystem

__all__ = ["RawResponse", "Solver", "SOLVERS", "SolverError", "MODAL_NODE_LIMIT",
           "resolve_solver", "solver_names", "as_arrays", "segment_energy", "merge_samples"]

#: Largest number of capacitive nodes for which "auto" picks the dense modal solver.
MODAL_NODE_LIMIT = 3000


def as_arrays(edges, level, slope, probes):
    """The solver arguments as float64 arrays: edges (N+1,) s, level and slope (N, m)
    (W, W/s), probe rows (p,) int64."""
    edges = np.asarray(edges, dtype=np.float64)
    level = np.atleast_2d(np.asarray(level, dtype=np.float64))
    slope = np.atleast_2d(np.asarray(slope, dtype=np.float64))
    rows = np.asarray(probes, dtype=np.int64).reshape(-1)
    return edges, level, slope, rows


def segment_energy(edges: np.ndarray, level: np.ndarray, slope: np.ndarray) -> np.ndarray:
    """∫ P dt over all segments per input, J, (m,): Σ_k (a_k h_k + b_k h_k²/2) for the
    power a_k + b_k·s on segment k of width h_k (exact for piecewise-linear power)."""
    h = edges[1:] - edges[:-1]
    return h @ level + 0.5 * (h * h) @ slope


def merge_samples(t: np.ndarray, v: np.ndarray, new_t, new_v):
    """Samples t (k,), v (k, p) with extra samples new_t (j,), new_v (j, p) merged in time
    order (stable: an added sample follows an equal existing time)."""
    if len(new_t) == 0:
        return t, v
    t2 = np.concatenate([t, np.asarray(new_t, dtype=np.float64)])
    v2 = np.vstack([v, np.asarray(new_v, dtype=np.float64).reshape(len(new_t), -1)])
    order = np.argsort(t2, kind="stable")
    return t2[order], v2[order]


class SolverError(ValueError):
    """Unknown or unavailable solver; the message lists the valid names."""


@dataclass
class RawResponse:
    """What a solver returns, in absolute kelvin at the probe rows.

    Parameters
    ----------
    t
        Sample times, s, shape (k,), increasing; every segment end is included.
    theta
        Temperature at the probe rows, K (absolute), shape (k, p).
    state_start
        Full state at t = 0, K absolute, shape (n,) (periodic: start-of-period state).
    state_end
        Full state at the last time, K absolute, shape (n,).
    mean
        Exact time average over the run (or the period) at the probes, K, shape (p,).
    info
        Work counters and messages, e.g. ``{"modes": 120, "method": "modal"}``.  Optional
        keys read by the result object: ``"mean_full"`` (n,) K, the exact time-average of
        every free node (used for the energy balance of linear systems), ``"energy_error"``
        (relative; a solver of a nonlinear system computes its own balance, else NaN is
        reported) with ``"energy_J"`` (dict of its terms), ``"success"`` (bool),
        ``"message"``.
    """

    t: np.ndarray
    theta: np.ndarray
    state_start: np.ndarray
    state_end: np.ndarray
    mean: np.ndarray
    info: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        self.t = np.asarray(self.t, dtype=np.float64)
        self.theta = np.asarray(self.theta, dtype=np.float64)
        if self.theta.ndim == 1:
            self.theta = self.theta[:, None]
        if self.t.ndim != 1 or self.theta.shape[0] != self.t.size:
            raise ValueError(f"RawResponse: t has shape {self.t.shape} and theta "
                             f"{self.theta.shape}; expected (k,) and (k, p)")
        self.state_start = np.asarray(self.state_start, dtype=np.float64)
        self.state_end = np.asarray(self.state_end, dtype=np.float64)
        self.mean = np.asarray(self.mean, dtype=np.float64).reshape(-1)


@runtime_checkable
class Solver(Protocol):
    """A thermal solver bound to one assembled system.

    ``edges, level, slope`` are the output of ``align(...)``: edges (s+1,) s, level and slope
    (s, m) W and W/s, one column per input of the system (in ``system.input_names`` order).
    ``probes`` are integer rows of the system.
    """

    name: str

    def __init__(self, system: ThermalSystem, **options) -> None: ...

    def steady(self, power: np.ndarray) -> np.ndarray:
        """Constant power (m,) W -> steady temperatures (n,) K absolute."""
        ...

    def periodic(self, edges: np.ndarray, level: np.ndarray, slope: np.ndarray,
                 probes: np.ndarray) -> RawResponse:
        """Periodic steady state over one period ``edges[-1]``."""
        ...

    def transient(self, edges: np.ndarray, level: np.ndarray, slope: np.ndarray,
                  initial: np.ndarray | None, probes: np.ndarray) -> RawResponse:
        """From ``initial`` (n,) K absolute, or the zero-power static field when None."""
        ...


#: Registered solvers: a class, or "module:Class" imported when first selected.
SOLVERS: dict[str, type | str] = {
    "modal": "pulsetherm.network.modal:ModalSolver",
    "sparse": "pulsetherm.network.sparse:SparseSolver",
    "nonlinear": "pulsetherm.network.nonlinear:NonlinearSolver",
}


def solver_names() -> list[str]:
    """Valid values of ``method``: the registry names plus "auto"."""
    return ["auto", *SOLVERS]


def _load(name: str) -> type:
    entry = SOLVERS[name]
    if isinstance(entry, str):
        module_name, _, cls_name = entry.partition(":")
        try:
            module = importlib.import_module(module_name)
        except ModuleNotFoundError as exc:
            if exc.name != module_name:
                raise
            raise SolverError(f"method = {name!r}: solver module {module_name} is not "
                              "available in this installation; choose one of "
                              f"{', '.join(repr(n) for n in solver_names())}") from None
        try:
            entry = getattr(module, cls_name)
        except AttributeError:
            raise SolverError(f"method = {name!r}: {module_name} defines no {cls_name}") from None
        SOLVERS[name] = entry
    return entry


def _auto_name(system: ThermalSystem) -> str:
    if not system.is_linear:
        return "nonlinear"
    n_cap = int(np.count_nonzero(system.C > 0))
    return "modal" if n_cap <= MODAL_NODE_LIMIT else "sparse"


def resolve_solver(method, system: ThermalSystem) -> type:
    """The solver class for ``method`` (a registry name, "auto" or a class).

    Raises
    ------
    SolverError
        Unknown name (the message lists the valid ones) or a registered module that is
        not installed.
    """
    if isinstance(method, type):
        return method
    if not isinstance(method, str):
        raise SolverError(f"method = {method!r}: expected a solver name "
                          f"({', '.join(repr(n) for n in solver_names())}) or a solver class")
    key = method.strip().lower()
    if key == "auto":
        key = _auto_name(system)
        if key == "sparse":
            try:
                return _load("sparse")
            except SolverError:
                # Large linear system but no sparse solver installed: the modal one is
                # still exact, only slower.
                return _load("modal")
    if key not in SOLVERS:
        raise SolverError(f"method = {method!r}: unknown solver; expected one of "
                          f"{', '.join(repr(n) for n in solver_names())}")
    if key == "modal" and not system.is_linear:
        raise SolverError("method = 'modal': the network is nonlinear (k(T) exponents or "
                          "temperature-dependent inputs); use method='nonlinear' or 'auto'")
    return _load(key)
