"""What the junction's heat does to the RF signal: droop across a pulse, pulse-to-pulse
amplitude and phase variation, from the exact periodic response (no sampling).

The exact response of a node
----------------------------
In the periodic steady state of a linear network the modal solver
(:mod:`pulsetherm.network.modal`) gives, on a segment of width h where the power is
P = a + b·s, the modal state

    q(s) = e^{−λs} q_k + ψ₀(λ, s) W a + ψ₁(λ, s) W b,    ψ_j(λ, s) = s^{j+1} g_j(λs),

and at a node of row φ (mode shapes) and direct map d (massless nodes) the rise over the
zero-power static field θ(s) = φ·q(s) + d·(a + b s).  So, for every segment, exactly:

* the rise just after its start, θ⁺_k = φ·q_k + d·a, and just before its end,
  θ⁻_k = φ·q_{k+1} + d·(a + b h);
* its integral ∫₀^h θ ds = φ·(ψ₀(h) q_k + ψ₁(h) W a + ψ₂(h) W b) + d·(a h + b h²/2);
* its slope dθ/ds = Σ_i φ_i [e^{−λ_i s}(w_i·a − λ_i q_{k,i}) + ψ₀(λ_i, s) w_i·b] + d·b
  (from −λψ₀ + 1 = e^{−λs} and −λψ₁ + s = ψ₀), whose sign changes locate the turning
  points inside the segment (used by :mod:`pulsetherm.network.cycling`).

A pulse of a device is a run of segments in which its own power is above its minimum over
the period.  Its junction rise at the start is θ⁺ of its first segment, at the end θ⁻ of its
last, and its mean the sum of the segment integrals over its on-time: exact values of the
closed form, not samples.

From temperature to signal
--------------------------
With a gain temperature coefficient c_g (dB/K) and an insertion-phase coefficient c_φ
(deg/K) at the junction, taken constant over the rise (a first-order model: the user
supplies measured coefficients of the part at its operating point):

* droop across pulse k (dB): c_g·(θ_end − θ_start); phase drift (deg): c_φ·(θ_end − θ_start);
  the worst pulse is reported (signed: a negative droop is a gain that falls);
* pulse-to-pulse: each pulse is represented by its mean rise θ̄_k (so its gain
  g_k = c_g·θ̄_k and phase φ_k = c_φ·θ̄_k over the cold part), and over the N pulses of the
  period: peak-to-peak and rms (population standard deviation) of g and φ;
* stability ratios (dB), rms deviation over mean, 20·log10: amplitude
  20·log10(σ(A)/mean(A)) with A_k = 10^{g_k/20}; phase 20·log10(rms|e^{jφ_k} − v̄|/|v̄|)
  with v̄ the mean phasor (≈ 20·log10 σ_φ[rad] for small drifts); both together with
  v_k = A_k·e^{jφ_k}.  The ratio of rms pulse-to-pulse deviation to the mean, in dB, is how
  radar practice states pulse-to-pulse stability (common practice, no source for the exact
  form; the MTI limits it sets, I = 20·log10(A/ΔA) for amplitude and 20·log10(1/Δφ) for
  phase instability, are stated in M. I. Skolnik, *Introduction to Radar Systems*, 3rd ed.,
  McGraw-Hill, 2001, MTI chapter, "limitations to MTI performance").

A period with one pulse, or pulses that do not differ (their mean rises agree to 1e-9 of
the largest rise), has no pulse-to-pulse variation: the ratios are then ``None`` (−∞ dB)
and never break a limit.

These are relative, first-order figures: engineering estimates; verify by measurement.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["PulseEffectsError", "NodeTrace", "trace_node", "pulses_of", "PulseSet",
           "pulse_set", "RFEffects", "rf_effects", "stability_db"]

#: Work array budget (modes × segments × points) per chunk of segments.
_CHUNK_BUDGET = 4_000_000
#: Points of the per-segment grid on which slope sign changes are looked for.
_GRID = 24
#: Relative spread of the pulse means under which the pulses count as alike.
_ALIKE = 1e-9


class PulseEffectsError(ValueError):
    """Bad input to the pulse-effect figures; the message names the field and value."""


def _finite(name: str, value: Any) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise PulseEffectsError(f"{name} = {value!r}: expected a finite number") from None
    if not math.isfinite(v):
        raise PulseEffectsError(f"{name} = {value!r}: expected a finite number")
    return v


# ======================================================================================
# The exact periodic response of one node, segment by segment
# ======================================================================================
@dataclass(frozen=True)
class NodeTrace:
    """One period of the exact periodic steady state at one node.

    Attributes
    ----------
    node
        Node name.
    edges
        Segment edges of the common period, s, (N+1,).
    start, end
        Rise over the zero-power static field just after each segment's start (right limit)
        and just before its end (left limit), K, (N,).
    integral
        ∫ rise dt over each segment, K·s, (N,).
    ext_t, ext_v
        Turning points strictly inside segments: times (s, within the period) and rises
        (K), in time order.
    ext_seg
        Segment index of each turning point.
    ambient_K
        Zero-power static temperature of the node, K.
    level, slope
        The aligned power (N, m) W and W/s the response was computed for.
    """

    node: str
    edges: np.ndarray
    start: np.ndarray
    end: np.ndarray
    integral: np.ndarray
    ext_t: np.ndarray
    ext_v: np.ndarray
    ext_seg: np.ndarray
    ambient_K: float
    level: np.ndarray = field(repr=False)
    slope: np.ndarray = field(repr=False)

    @property
    def period(self) -> float:
        return float(self.edges[-1])

    @property
    def mean(self) -> float:
        """Exact mean rise over the period, K."""
        return float(self.integral.sum() / self.period)

    def sequence(self) -> tuple[np.ndarray, np.ndarray]:
        """Times and rises of every segment edge (both limits) and every turning point, in
        time order: the values the rise passes through, for cycle counting."""
        N = self.start.size
        t = np.concatenate([self.edges[:-1], self.edges[1:], self.ext_t])
        v = np.concatenate([self.start, self.end, self.ext_v])
        # order: segment start, its turning points, its end (stable by a rank key)
        seg = np.concatenate([np.arange(N), np.arange(N), self.ext_seg])
        rank = np.concatenate([np.zeros(N), np.full(N, 2.0), np.ones(self.ext_t.size)])
        order = np.lexsort((t, rank, seg))
        # inside one segment: start (rank 0), turning points by time (rank 1), end (rank 2)
        return t[order], v[order]


def _solver(network):
    """The network's exact modal solver (refused for a nonlinear network)."""
    sys_ = network.system()
    if not sys_.is_linear:
        raise PulseEffectsError("model.nonlinear = true: the pulse and cycling figures need "
                                "a linear network (the exact modal solution); set "
                                "model.nonlinear = false")
    return network._solver("modal")


def trace_node(network, waveforms, node: str) -> NodeTrace:
    """The exact periodic response at ``node`` (a free node of ``network``) under
    ``waveforms`` (input name -> periodic waveform), segment by segment (module docstring).
    """
    from .modal import gk
    from .model import _aligned_period

    solver = _solver(network)
    sys_ = network.system()
    if node not in sys_.node_names:
        raise PulseEffectsError(f"node = {node!r}: expected a free node of the network")
    row = sys_.index(node)
    edges, level, slope, _ = _aligned_period(network._power_pieces(waveforms))
    q = solver.periodic_start(edges, level, slope)
    lam = solver.lam
    nm = lam.size
    Pp = solver.Phi[row:row + 1]
    Dp = solver.Dp[row:row + 1]
    phi = Pp[0]
    d = Dp[0]
    W = solver.W
    N = edges.size - 1
    chunk = max(1, _CHUNK_BUDGET // max(nm * _GRID, 1))
    start = np.empty(N)
    end = np.empty(N)
    integral = np.empty(N)
    ext_t, ext_v, ext_s = [], [], []
    u = np.concatenate([[0.0], np.geomspace(1e-9, 1.0, _GRID - 1)])
    for i0 in range(0, N, chunk):
        i1 = min(N, i0 + chunk)
        e = edges[i0:i1 + 1]
        lv, sl = level[i0:i1], slope[i0:i1]
        ends, q_next, _, starts = solver._scan(q, e, lv, sl, Pp, Dp, True)
        h = np.diff(e)
        Wa = W @ lv.T                                   # (modes, n)
        Wb = W @ sl.T
        x = lam[:, None] * h[None, :]
        g0, g1, g2 = gk(0, x), gk(1, x), gk(2, x)
        psi0, psi1, psi2 = h * g0, h ** 2 * g1, h ** 3 * g2
        start[i0:i1] = phi @ starts + lv @ d
        end[i0:i1] = ends[:, 0]
        integral[i0:i1] = (phi @ (psi0 * starts + psi1 * Wa + psi2 * Wb)
                           + (lv * h[:, None] + 0.5 * sl * (h * h)[:, None]) @ d)
        # turning points: slope sign changes on a geometric grid, then bisection on the
        # exact slope dθ/ds = Σ φ_i[e^{−λs}(Wa − λq) + ψ₀(s) Wb] + d·b
        A = phi[:, None] * (Wa - lam[:, None] * starts)   # (modes, n)
        B = phi[:, None] * Wb
        db = sl @ d                                        # (n,)
        ramps = bool(np.any(B != 0))

        def slope_at(sel, s):
            xs = lam[:, None] * s[None, :]
            val = (A[:, sel] * np.exp(-xs)).sum(axis=0)
            if ramps:
                val = val + (B[:, sel] * (s[None, :] * gk(0, xs))).sum(axis=0)
            return val + db[sel]

        n = i1 - i0
        S = h[:, None] * u[None, :]                       # (n, M)
        sel = np.repeat(np.arange(n), u.size)
        D = slope_at(sel, S.ravel()).reshape(n, u.size)
        sg = np.sign(D)
        cross = (sg[:, :-1] * sg[:, 1:]) < 0
        kk, jj = np.nonzero(cross)
        if kk.size:
            a = S[kk, jj]
            b = S[kk, jj + 1]
            fa = D[kk, jj]
            for _ in range(80):
                mid = 0.5 * (a + b)
                fm = slope_at(kk, mid)
                same = np.sign(fm) == np.sign(fa)
                a = np.where(same, mid, a)
                fa = np.where(same, fm, fa)
                b = np.where(same, b, mid)
                if np.all(b - a <= 1e-15 * h[kk]):
                    break
            s_star = 0.5 * (a + b)
            xs = lam[:, None] * s_star[None, :]
            qs = (np.exp(-xs) * starts[:, kk] + s_star * gk(0, xs) * Wa[:, kk]
                  + s_star ** 2 * gk(1, xs) * Wb[:, kk])
            vals = phi @ qs + (lv[kk] + s_star[:, None] * sl[kk]) @ d
            ext_t.append(e[kk] + s_star)
            ext_v.append(vals)
            ext_s.append(kk + i0)
        q = q_next
    et = np.concatenate(ext_t) if ext_t else np.zeros(0)
    ev = np.concatenate(ext_v) if ext_v else np.zeros(0)
    es = np.concatenate(ext_s) if ext_s else np.zeros(0, dtype=np.int64)
    order = np.argsort(et, kind="stable")
    amb = float(solver.T_ref[row])
    for name, arr in (("start", start), ("end", end), ("integral", integral)):
        if not np.all(np.isfinite(arr)):
            raise PulseEffectsError(f"node {node!r}: the {name} rises are not finite (check "
                                    "the powers: they overflow)")
    return NodeTrace(node, edges, start, end, integral, et[order], ev[order], es[order], amb,
                     level, slope)


# ======================================================================================
# Pulses of a device and their junction rises
# ======================================================================================
def pulses_of(edges: np.ndarray, level: np.ndarray, slope: np.ndarray) -> list[np.ndarray]:
    """Segment indices of each pulse of one input's power (level, slope (N,)): maximal runs
    of segments where the power is above its minimum over the period; a run through the
    end of the period continues at its start (it is one pulse, listed where it starts).
    A constant power has no pulse."""
    level = np.asarray(level, dtype=np.float64)
    slope = np.asarray(slope, dtype=np.float64)
    endl = level + slope * np.diff(edges)
    low = min(float(level.min()), float(endl.min()))
    on = (level > low) | (endl > low)
    N = on.size
    if not on.any() or on.all():
        return []
    # rotate so that the run list starts at an off segment
    first_off = int(np.flatnonzero(~on)[0])
    idx = (np.arange(N) + first_off) % N
    runs, cur = [], []
    for k in idx:
        if on[k]:
            cur.append(k)
        elif cur:
            runs.append(np.array(cur, dtype=np.int64))
            cur = []
    if cur:
        runs.append(np.array(cur, dtype=np.int64))
    runs.sort(key=lambda r: edges[r[0]])
    return runs


@dataclass(frozen=True)
class PulseSet:
    """The junction rise of every pulse of one device in the common period (K over the
    zero-power static field; times in s within the period)."""

    node: str
    period: float
    t_start: np.ndarray
    t_end: np.ndarray
    rise_start: np.ndarray
    rise_end: np.ndarray
    rise_mean: np.ndarray
    ambient_K: float

    @property
    def count(self) -> int:
        return int(self.t_start.size)

    def to_dict(self) -> dict[str, Any]:
        return {"node": self.node, "period_s": self.period, "count": self.count,
                "t_start_s": self.t_start.tolist(), "t_end_s": self.t_end.tolist(),
                "rise_start_K": self.rise_start.tolist(), "rise_end_K": self.rise_end.tolist(),
                "rise_mean_K": self.rise_mean.tolist()}


def pulse_set(trace: NodeTrace, column: int) -> PulseSet:
    """Rise at the start and end of every pulse of input ``column`` and its mean over the
    pulse, from the exact segment values of ``trace`` (module docstring)."""
    e = trace.edges
    runs = pulses_of(e, trace.level[:, column], trace.slope[:, column])
    h = np.diff(e)
    ts, te, rs, re_, rm = [], [], [], [], []
    for r in runs:
        ts.append(e[r[0]])
        te.append(e[r[-1] + 1])
        rs.append(trace.start[r[0]])
        re_.append(trace.end[r[-1]])
        rm.append(trace.integral[r].sum() / h[r].sum())
    f = lambda x: np.array(x, dtype=np.float64)  # noqa: E731
    return PulseSet(trace.node, trace.period, f(ts), f(te), f(rs), f(re_), f(rm),
                    trace.ambient_K)


# ======================================================================================
# From rises to gain and phase
# ======================================================================================
def stability_db(values: np.ndarray) -> float | None:
    """20·log10(rms |v − v̄| / |v̄|) of real or complex pulse values v (rms deviation over
    the mean, in dB; module docstring); None when the deviation is exactly zero."""
    v = np.asarray(values)
    mean = v.mean()
    dev = math.sqrt(float(np.mean(np.abs(v - mean) ** 2)))
    if dev == 0.0:
        return None
    return 20.0 * math.log10(dev / abs(mean))


@dataclass(frozen=True)
class RFEffects:
    """Droop, phase drift and pulse-to-pulse figures of one device (module docstring).

    Per pulse (arrays over the pulses of the period): ``droop_dB`` and ``drift_deg``
    (end minus start), ``gain_dB`` and ``phase_deg`` (pulse means over the cold part).
    Figures: the worst droop and drift (signed, largest magnitude), peak-to-peak and rms of
    gain and phase over the pulses, stability ratios in dB (None: no variation)."""

    device: str
    pulses: PulseSet
    gain_tc: float
    phase_tc: float
    droop_dB: np.ndarray
    drift_deg: np.ndarray
    gain_dB: np.ndarray
    phase_deg: np.ndarray
    worst_droop_dB: float
    worst_drift_deg: float
    gain_pp_dB: float
    gain_rms_dB: float
    phase_pp_deg: float
    phase_rms_deg: float
    amplitude_stability_dB: float | None
    phase_stability_dB: float | None
    stability_dB: float | None

    def to_dict(self) -> dict[str, Any]:
        return {"device": self.device, "pulses": self.pulses.count,
                "gain_tc_dB_per_K": self.gain_tc, "phase_tc_deg_per_K": self.phase_tc,
                "droop_dB": self.worst_droop_dB, "phase_drift_deg": self.worst_drift_deg,
                "gain_pp_dB": self.gain_pp_dB, "gain_rms_dB": self.gain_rms_dB,
                "phase_pp_deg": self.phase_pp_deg, "phase_rms_deg": self.phase_rms_deg,
                "amplitude_stability_dB": self.amplitude_stability_dB,
                "phase_stability_dB": self.phase_stability_dB,
                "stability_dB": self.stability_dB,
                "per_pulse": {"t_start_s": self.pulses.t_start.tolist(),
                              "rise_start_K": self.pulses.rise_start.tolist(),
                              "rise_end_K": self.pulses.rise_end.tolist(),
                              "rise_mean_K": self.pulses.rise_mean.tolist(),
                              "droop_dB": self.droop_dB.tolist(),
                              "phase_drift_deg": self.drift_deg.tolist(),
                              "gain_dB": self.gain_dB.tolist(),
                              "phase_deg": self.phase_deg.tolist()}}


def _worst(x: np.ndarray) -> float:
    return float(x[int(np.argmax(np.abs(x)))]) if x.size else 0.0


def rf_effects(pulses: PulseSet, gain_tc: float, phase_tc: float,
               device: str = "") -> RFEffects:
    """Signal figures of a device's pulses from its gain (dB/K) and insertion-phase
    (deg/K) temperature coefficients at the junction (module docstring)."""
    cg = _finite("gain_tc", gain_tc)
    cp = _finite("phase_tc", phase_tc)
    if pulses.count == 0:
        raise PulseEffectsError(f"devices[{device}].power: a pulsed waveform (the RF figures "
                                "need pulses; this power is constant)")
    dT = pulses.rise_end - pulses.rise_start
    m = pulses.rise_mean
    droop, drift = cg * dT, cp * dT
    gain, phase = cg * m, cp * m
    spread = float(m.max() - m.min())
    scale = float(np.max(np.abs(np.concatenate([pulses.rise_start, pulses.rise_end, m]))))
    alike = pulses.count < 2 or spread <= _ALIKE * max(scale, 1e-300)
    mc = m - m.mean()           # deviations from the mean pulse (exact zero when alike)
    if alike:
        mc = np.zeros_like(m)
        spread = 0.0
    g_dev, p_dev = cg * mc, cp * mc
    amp = 10.0 ** (g_dev / 20.0)
    ph = np.exp(1j * np.radians(p_dev))
    sa = None if alike or cg == 0 else stability_db(amp)
    sp_ = None if alike or cp == 0 else stability_db(ph)
    sc = None if alike or (cg == 0 and cp == 0) else stability_db(amp * ph)
    rms = float(np.sqrt(np.mean(mc * mc)))
    return RFEffects(device, pulses, cg, cp, droop, drift, gain, phase, _worst(droop),
                     _worst(drift), abs(cg) * spread, abs(cg) * rms, abs(cp) * spread,
                     abs(cp) * rms, sa, sp_, sc)
