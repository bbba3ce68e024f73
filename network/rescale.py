"""A periodic response reused for a power scaled by one factor (linearity, exact).

A linear network's rise over its zero-power field is linear in the heat input: with every
input's power multiplied by the same factor a > 0 (same segment edges, every level and
slope times a),

    T(t) − T_amb = a · (T₁(t) − T_amb)

at every node and time, where T₁ is the response to the unscaled power (the modal solution
T = T_amb + Φ q(t) + D P(t) with q linear in P; Carslaw and Jaeger, *Conduction of Heat in
Solids*, 2nd ed., 1959, superposition).  Peaks and minima stay at the same times (a
positive factor keeps their order), the period mean scales the same way, and the warm-up
time to a fraction of the peak rise is unchanged.  A drive-level sweep (one source, or all
sources together) therefore needs one periodic solve, not one per row.

Only the exact modal solver's responses are reused (the large-network paths carry their
own error estimates).  The factor is accepted when every level and slope agrees with it to
``RTOL`` (the waveforms are compiled from a peak times fixed shapes, so a changed peak
changes each level by the factor to within an ulp or two).
"""
from __future__ import annotations

import numpy as np

from .solvers import RawResponse

__all__ = ["RTOL", "power_factor", "scaled_raw"]

#: Relative agreement of every level and slope with the common factor.
RTOL = 1e-13


def power_factor(edges: np.ndarray, level: np.ndarray, slope: np.ndarray,
                 edges_c: np.ndarray, level_c: np.ndarray, slope_c: np.ndarray) -> float | None:
    """The factor a > 0 with level = a·level_c and slope = a·slope_c on the same edges, or
    None (other edges, other shapes, a zero or negative factor)."""
    if (edges.shape != edges_c.shape or level.shape != level_c.shape
            or slope.shape != slope_c.shape or not np.array_equal(edges, edges_c)):
        return None
    i = int(np.argmax(np.abs(level_c)))
    ref = float(level_c.flat[i])
    if ref == 0.0:
        return None
    a = float(level.flat[i]) / ref
    if not (np.isfinite(a) and a > 0.0):
        return None
    for x, xc in ((level, level_c), (slope, slope_c)):
        if np.any(np.abs(x - a * xc) > RTOL * np.maximum(np.abs(x), np.abs(a * xc))):
            return None
    return a


def scaled_raw(raw: RawResponse, a: float, ambient: np.ndarray, rows: np.ndarray
               ) -> RawResponse:
    """``raw`` (absolute K) with its rise over ``ambient`` (n,) K multiplied by ``a``; the
    modal start state ``q_start`` and the exact node means scale with it."""
    amb_p = ambient[rows]
    info = dict(raw.info)
    if info.get("mean_full") is not None:
        info["mean_full"] = ambient + a * (np.asarray(info["mean_full"]) - ambient)
    if info.get("q_start") is not None:
        info["q_start"] = a * np.asarray(info["q_start"])
    return RawResponse(raw.t.copy(), amb_p + a * (raw.theta - amb_p),
                       ambient + a * (raw.state_start - ambient),
                       ambient + a * (raw.state_end - ambient),
                       amb_p + a * (raw.mean - amb_p), info)
