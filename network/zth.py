"""Thermal impedance from the modes: step response Zth(t), pulsed family Z(t_p, D), Foster.

With C-normalised modes (Vᵀ C V = I, Vᵀ G V = Λ; massless rows Φ reconstructed) a unit
power step of input j gives at node k

    Zth(t) = D_kj + Σ_i r_i (1 − e^{−λ_i t}),   r_i = Φ_ki (Vᵀ b_j)_i / λ_i,

(Carslaw & Jaeger, *Conduction of Heat in Solids*, 2nd ed., 1959, normal-mode expansion;
D_kj ≠ 0 only at a massless node heated directly).  For the driving point (k the heated
node) every r_i = Φ_ki²/λ_i ≥ 0; transfer impedances may have negative residues.

Pulsed thermal impedance, rectangular pulses of width t_p and period T = t_p/D, exact
periodic steady state per mode (a = e^{−λ t_p}, b = e^{−λT}):

    end of pulse  y_i = r_i (1 − a)/(1 − b),  start of pulse  y_i·e^{−λ(T − t_p)},
    on phase  r_i + (y_start − r_i) e^{−λs},  off phase  y_i e^{−λs}.

Z(t_p, D) is the peak over the period; with all r_i ≥ 0 it is at the end of the pulse,
otherwise it is searched on both phases (it may come after the pulse).  D = 0 is the single
pulse from ambient.  No duty-cycle approximation is used.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize_scalar

from .assemble import NetworkError

__all__ = ["ZthCurve", "PulsedZth", "zth_curve", "pulsed_zth", "foster_from_modes"]

DEFAULT_DUTIES = (0.0, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5)


@dataclass(frozen=True)
class ZthCurve:
    """Step-response thermal impedance.

    Attributes
    ----------
    t
        Times, s, (k,).
    K_per_W
        Zth(t), K/W, (k,).
    R, tau
        Modal residues (K/W) and time constants (s) it is built from.
    direct
        Instantaneous part, K/W (massless node heated directly; usually 0).
    """

    t: np.ndarray
    K_per_W: np.ndarray
    node: str
    input: str
    R: np.ndarray
    tau: np.ndarray
    direct: float = 0.0

    @property
    def R_th(self) -> float:
        """Steady-state thermal resistance, K/W."""
        return float(np.sum(self.R) + self.direct)

    def at(self, t) -> np.ndarray:
        """Zth at other times t (s), exact."""
        t = np.asarray(t, dtype=np.float64)
        z = (-np.expm1(-np.multiply.outer(t, 1.0 / self.tau))) @ self.R
        return z + np.where(t > 0, self.direct, 0.0)


@dataclass(frozen=True)
class PulsedZth:
    """Pulsed thermal impedance family.

    Attributes
    ----------
    widths
        Pulse widths t_p, s, (nw,).
    duties
        Duty cycles D, (nd,); 0 = single pulse.
    K_per_W
        Peak rise per watt of pulse power, K/W, (nd, nw).
    """

    widths: np.ndarray
    duties: np.ndarray
    K_per_W: np.ndarray
    node: str
    input: str

    def Z(self, duty: float) -> np.ndarray:
        """The curve Z(t_p) for one of the computed duties."""
        i = np.flatnonzero(np.isclose(self.duties, duty, rtol=1e-12, atol=1e-15))
        if i.size == 0:
            raise KeyError(f"duty {duty!r} was not computed (duties: {self.duties.tolist()})")
        return self.K_per_W[int(i[0])]

    def to_dict(self) -> dict:
        return {"node": self.node, "input": self.input, "widths_s": self.widths.tolist(),
                "duties": self.duties.tolist(),
                "K_per_W": {f"{d:g}": row.tolist() for d, row in zip(self.duties, self.K_per_W)}}


def _modes(solver, row: int, col: int):
    r, d = solver.residues(row, col)
    lam = solver.lam
    return r, d, lam


def zth_curve(solver, row: int, col: int, t=None, node: str = "", input: str = "",
              t_min: float = 1e-9, per_decade: int = 20) -> ZthCurve:
    """Zth(t) at free-node ``row`` for input ``col`` of a :class:`ModalSolver`."""
    r, d, lam = _modes(solver, row, col)
    tau = 1.0 / lam
    if t is None:
        big = np.abs(r) >= 1e-9 * np.abs(r).sum() if np.abs(r).sum() > 0 else np.ones_like(r, bool)
        t_end = 20.0 * float(tau[big].max()) if big.any() else 1.0
        t_end = max(t_end, 100 * t_min)
        n = int(np.ceil(np.log10(t_end / t_min) * per_decade)) + 1
        t = np.geomspace(t_min, t_end, n)
    else:
        t = np.asarray(t, dtype=np.float64)
        if t.ndim != 1 or not np.all(np.isfinite(t)) or np.any(t < 0):
            raise NetworkError(f"t: expected a 1-D array of finite times >= 0 s, got {t!r}")
    z = (-np.expm1(-np.multiply.outer(t, lam))) @ r + np.where(t > 0, d, 0.0)
    return ZthCurve(t=t, K_per_W=z, node=node, input=input, R=r, tau=tau, direct=d)


def _peak_search(f, lo: float, hi: float, n: int = 48) -> float:
    """Maximum of a smooth scalar function on [lo, hi]: log/linear grid then bounded Brent."""
    if hi <= lo:
        return float(f(lo))
    s = np.unique(np.concatenate([[lo, hi], np.linspace(lo, hi, n),
                                  lo + np.geomspace(max((hi - lo) * 1e-9, 1e-300), hi - lo, n)]))
    v = np.array([f(x) for x in s])
    i = int(np.argmax(v))
    a, b = s[max(i - 1, 0)], s[min(i + 1, s.size - 1)]
    best = float(v[i])
    if b > a:
        res = minimize_scalar(lambda x: -f(x), bounds=(a, b), method="bounded",
                              options={"xatol": (b - a) * 1e-12})
        best = max(best, float(-res.fun))
    return best


def pulsed_zth(solver, row: int, col: int, widths=None, duties=DEFAULT_DUTIES,
               node: str = "", input: str = "") -> PulsedZth:
    """Z(t_p, D), K/W: exact periodic peak per watt of pulse power (module docstring)."""
    r, d, lam = _modes(solver, row, col)
    if widths is None:
        widths = np.logspace(-7, 2, 91)
    widths = np.asarray(widths, dtype=np.float64).ravel()
    duties = np.asarray(duties, dtype=np.float64).ravel()
    if widths.size == 0 or np.any(~np.isfinite(widths)) or np.any(widths <= 0):
        raise NetworkError(f"widths = {widths!r}: expected pulse widths > 0 s")
    if duties.size == 0 or np.any(~np.isfinite(duties)) or np.any((duties < 0) | (duties >= 1)):
        raise NetworkError(f"duties = {duties!r}: expected duty cycles in [0, 1) (0 = single pulse)")
    scale = np.abs(r).sum()
    positive = bool(np.all(r >= -1e-12 * scale)) and d >= 0
    out = np.empty((duties.size, widths.size))
    tau_max = float(1.0 / lam.min())
    for a_i, D in enumerate(duties):
        x = np.multiply.outer(widths, lam)                    # λ t_p, (nw, modes)
        if D == 0:
            y_end = -np.expm1(-x) * r                         # single pulse from ambient
            y_start = np.zeros_like(y_end)
        else:
            y_end = np.expm1(-x) / np.expm1(-x / D) * r       # (1 − a)/(1 − b)
            y_start = y_end * np.exp(-x * (1.0 / D - 1.0))
        end_val = y_end.sum(axis=1) + d
        if positive:
            out[a_i] = end_val
            continue
        for w_i, tp in enumerate(widths):
            ye, ys = y_end[w_i], y_start[w_i]

            def on(s, ye=ye, ys=ys):
                return float(np.sum(r + (ys - r) * np.exp(-lam * s)) + d)

            def off(s, ye=ye):
                return float(np.sum(ye * np.exp(-lam * s)))

            off_len = 10.0 * tau_max if D == 0 else tp * (1.0 / D - 1.0)
            out[a_i, w_i] = max(end_val[w_i], _peak_search(on, 0.0, tp),
                                _peak_search(off, 0.0, off_len))
    return PulsedZth(widths=widths, duties=duties, K_per_W=out, node=node, input=input)


def foster_from_modes(solver, row: int, col: int):
    """Foster network (R_i = r_i, τ_i = 1/λ_i) of the impedance at ``row`` for input
    ``col``; a transfer impedance (negative residues) gives ``Foster(..., transfer=True)``.
    Terms below 1e-14 of Σ|r_i| are dropped."""
    from .foster import Foster

    r, d, lam = _modes(solver, row, col)
    if d != 0.0:
        raise NetworkError(f"foster: the node has an instantaneous response of {d:.6g} K/W "
                           "(a massless node heated directly), which no Foster term can "
                           "represent; give the node a heat capacity")
    scale = np.abs(r).sum()
    if not scale > 0:
        raise NetworkError("foster: the impedance is zero at every time (no heat from this "
                           "input reaches the node: it is held by boundaries); there is no "
                           "Foster network")
    keep = np.abs(r) > 1e-14 * scale
    r, lam = r[keep], lam[keep]
    transfer = bool(np.any(r < -1e-12 * scale))
    if not transfer:
        r = np.maximum(r, 0.0)
    return Foster(R=r, tau=1.0 / lam, transfer=transfer)
