"""Certified extremes of the exact modal response: a branch and bound over time intervals.

Inside a segment (power ``a + b·s``) a probe's rise is θ(s) = Pp·q(s) + Dp·(a + b s) with
q(s) = e^{−λs} q₀ + ψ₀ Wa + ψ₁ Wb (:mod:`pulsetherm.network.modal`).  Each modal term of its
slope,

    Pp_i q'_i(s) = Pp_i [Wb_i/λ_i + (q'_i(0) − Wb_i/λ_i) e^{−λ_i s}]      (Pp_i(q'_i(0) + Wb_i s) at λ = 0),

and of its curvature, Pp_i q''_i(s) = Pp_i q''_i(0) e^{−λ_i s}, and of its third derivative
(−λ_i times the curvature term), is monotone in s, so on an interval [s_a, s_b] each term
lies between its end values.  Summed over the modes (with Σ max(x, y) = (Σx + Σy)/2 +
Σ|x − y|/2, one matrix product):

    L ≤ θ'(s) ≤ U,   Kl ≤ θ''(s) ≤ K,   m3 ≤ θ'''(s) ≤ M3   on [s_a, s_b].

Three upper bounds of θ on the interval follow, and the smallest is used:

* two lines, θ(s) ≤ min(θ(s_a) + U (s − s_a), θ(s_b) − L (s_b − s));
* the chord plus a parabola: θ − (Kl/2)(s − s_a)(s − s_b) is convex, so it lies under its
  chord (a convex stretch, Kl ≥ 0, has its maximum at an end);
* third-order Taylor expansions with the Lagrange remainder about each end, each over its
  half of the interval (:func:`_taylor_bound`).  These use the exact θ, θ', θ'' at the
  ends, so the cancellation between the modal terms of a slow probe (terms of 10⁴ K/s
  summing to a few K/s) does not enter; only the third derivative is bounded mode by mode,
  with a factor x³.

An interval whose bound is under the best value found is cleared; an interval with K ≤ 0
is concave, so its maximum is an end or, when θ'(s_a) > 0 > θ'(s_b), the single root of θ'
(found by safeguarded Newton); any other interval is halved.  The search starts from whole
segments, then from the intervals between the samples, cut as well at 10⁻¹-10⁻³ of the
segment on both sides of each probe's best sample, after the sample-based refinement has
found the usual maximum; it exists for responses with two nearly equal local maxima, where
the samples alone can point at the wrong one.  Minima are the maxima of −θ.

The per-candidate work of small problems is mostly fixed cost, so the first level is fused:
every segment (with few segments, after the two slope lines over whole segments; with many,
every segment that the whole-segment bounds leave open, when their cut points are few
enough) is cut at all its samples and at the graded offsets around every probe's best
samples, and every interval is bounded for every probe and both signs at once (probe rows
of a few matrix products over the unique cut points).  Open intervals of a small level are
then cut in quarters rather than halves (one level instead of two), larger levels in
halves; the convex ones that the fused level leaves open, when few, are cut in quarters by
a second fused level (each interval once for all its open slots, the same matrix
products), and only what stays open goes on to the search.

This is interval bounding of a sum of monotone terms (common practice, no source); the
monotone-term form follows from the modal solution (Carslaw and Jaeger, *Conduction of Heat
in Solids*, 2nd ed., 1959, normal-mode expansions).
"""
from __future__ import annotations

import numpy as np

#: Bound slack, relative to the largest rise: intervals within it of the best are cleared.
REL_TOL = 1e-10
#: Most halvings of an interval (the bound's excess shrinks about 4x per halving).
MAX_DEPTH = 60
#: Largest modes x candidates block bounded at once (memory: a few such float64 arrays).
CHUNK_ELEMENTS = 1_000_000


def _derivs(solver, q0s, s, lv, sl, out=None):
    """q, q', q'' as one (3, modes, c) array at offsets s (c,) in segments with start
    states q0s (one array: the interval ends are gathered and joined in one step each);
    written into ``out`` when given."""
    if out is None:
        out = np.empty((3,) + q0s.shape)
    solver._seg_states(q0s, s, lv, sl, out=out)
    return out


def _interval_bounds(Pj, dj, lv, sl, sa, sb, ends_a, ends_b, lam):
    """θ, θ' at both ends, the bounds L ≤ θ' ≤ U and Kl ≤ θ'' ≤ K for intervals of segments,
    θ'' at both ends and bounds m3 ≤ θ''' ≤ M3 (q''' = −λ q'', each term monotone).

    Pj (c, modes) signed probe rows, dj (c, m) signed direct rows; ``ends_a``/``ends_b``
    the modal state and its two derivatives (q, q', q'') as (3, modes, c) arrays at the
    interval ends.  Returns th_a, th_b, d_a, d_b, U, L, K, Kl, c2a, c2b, M3, m3."""
    aPj = np.abs(Pj)
    direct_slope = np.sum(dj * sl, axis=1)
    pa = np.einsum("ci,kic->kc", Pj, ends_a)            # Pj·q, Pj·q', Pj·q'' at the ends
    pb = np.einsum("ci,kic->kc", Pj, ends_b)
    dif = np.abs(ends_a[1:] - ends_b[1:])                # |Δq'|, |Δq''| per mode
    spread, c_spread = 0.5 * np.einsum("ci,kic->kc", aPj, dif)
    th_a = pa[0] + np.sum(dj * (lv + sa[:, None] * sl), axis=1)
    th_b = pb[0] + np.sum(dj * (lv + sb[:, None] * sl), axis=1)
    d_a = pa[1] + direct_slope
    d_b = pb[1] + direct_slope
    mid = 0.5 * (d_a + d_b)
    c2a, c2b = pa[2], pb[2]
    c_mid = 0.5 * (c2a + c2b)
    lam = lam[:, None]
    t3_mid = -0.5 * np.einsum("ci,ic->c", Pj, lam * (ends_a[2] + ends_b[2]))
    t3_spread = 0.5 * np.einsum("ci,ic->c", aPj, lam * dif[1])
    return (th_a, th_b, d_a, d_b, mid + spread, mid - spread, c_mid + c_spread,
            c_mid - c_spread, c2a, c2b, t3_mid + t3_spread, t3_mid - t3_spread)


def _line_bound(th_a, th_b, U, L, w, Kl=None):
    """Upper bound of θ on [0, w] from θ(0), θ(w), L ≤ θ' ≤ U and (when given) Kl ≤ θ''.

    The slope bounds give two lines through the ends, θ ≤ θ(0) + max(U, 0)·x and
    θ ≤ θ(w) − min(L, 0)·(w − x) (slopes widened to 0: the same bound, one formula for
    every sign); the curvature bound gives the chord plus a parabola: θ − (Kl/2)·x(x − w)
    is convex, so it lies under its chord, and θ(x) ≤ θ(0) + m x + (−Kl/2)·x(w − x) with
    m the chord's slope (≤ max(θ(0), θ(w)) when Kl ≥ 0).  The smaller bound is returned
    (the lines alone where the parabola's overflows)."""
    dth = th_b - th_a
    top = np.maximum(th_a, th_b)
    Up, Ln = np.maximum(U, 0.0), np.minimum(L, 0.0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # the lines' crossing, clipped into the interval (Up = Ln = 0: 0/0 → nan → 0)
        x = np.fmin(np.fmax((dth - Ln * w) / (Up - Ln), 0.0), w)
        ub = np.maximum(th_a + Up * x, top)
        if Kl is None:
            return ub
        c = -0.5 * Kl                               # the parabola's weight where > 0
        m = dth / w
        xs = np.fmin(np.fmax(0.5 * w + m / (2.0 * c), 0.0), w)
        ub2 = th_a + xs * (m + c * (w - xs))
    # Kl ≥ 0 (convex): the larger end; a parabola's nan (overflow) leaves the lines
    return np.fmin(ub, np.where(c > 0, np.maximum(ub2, top), top))


def _curvature_terms(Pp, aP, lam, ca, cb):
    """Row bounds from q'' at the two ends of intervals (columns of ``ca``, ``cb``; rows of
    ``Pp`` the probes, ``aP`` = |Pp|, ``lam`` (modes, 1)): the half-spread of the second
    derivative and the middle and half-spread of the third (-λ q'' per mode), each term
    monotone between its end values (module docstring), as matrix products."""
    dc = np.abs(ca - cb)
    return 0.5 * (aP @ dc), -0.5 * (Pp @ (lam * (ca + cb))), 0.5 * (aP @ (lam * dc))


def _cubic_max(A, B, C, D, h):
    """Largest value of A + B x + C x² + D x³ on [0, h] (arrays): the ends and the real
    roots of B + 2C x + 3D x² = 0 (clipped into the interval), elementwise.  Any point of
    [0, h] is a valid candidate, so the roots are not screened: a complex pair (disc < 0,
    √ taken of 0), a root of a vanishing D or C (±inf, nan) only adds a point that is
    clipped (``fmin``/``fmax`` map nan to the bound) and evaluated."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        sq = np.sqrt(np.fmax(C * C - 3.0 * D * B, 0.0))
        # stable roots of 3D x² + 2C x + B: with q = −(C + sign(C)·√disc), q/(3D) and B/q
        qq = -(C + np.copysign(sq, C))
        # both roots (when D = 0: q = −2C, and B/q = −B/2C is the one root), clipped
        # into [0, h], and h
        x = np.empty((3,) + qq.shape)
        np.divide(qq, 3.0 * D, out=x[0])
        np.divide(B, qq, out=x[1])
        x[2] = h
        np.fmin(np.fmax(x, 0.0, out=x), h, out=x)
        inner = (A + x * (B + x * (C + x * D))).max(axis=0)
        return np.maximum(A, inner)


def _taylor_bound(th_a, th_b, d_a, d_b, c2a, c2b, M3, m3, w):
    """Upper bound of θ on [0, w] from third-order Taylor expansions with the Lagrange
    remainder, about the left end on [0, w/2] and about the right end on [w/2, w]:

        θ(x) ≤ θ(0) + θ'(0) x + θ''(0) x²/2 + M3 x³/6,
        θ(w − y) ≤ θ(w) − θ'(w) y + θ''(w) y²/2 − m3 y³/6,   with m3 ≤ θ‴ ≤ M3.

    The exact derivatives at the ends carry the cancellation between modes that sums of
    per-mode bounds lose (a slow probe's fast modes nearly cancel); only the third
    derivative is bounded mode by mode, and it enters with x³ (Taylor models, common
    practice, no source)."""
    n = th_a.size
    h = 0.5 * w
    if th_a.ndim == 1 and np.ndim(h) == 1:      # both expansions in one pass
        both = _cubic_max(np.concatenate([th_a, th_b]), np.concatenate([d_a, -d_b]),
                          0.5 * np.concatenate([c2a, c2b]), np.concatenate([M3, -m3]) / 6.0,
                          np.concatenate([h, h]))
        ub = np.maximum(both[:n], both[n:])
    else:
        ub = np.maximum(_cubic_max(th_a, d_a, 0.5 * c2a, M3 / 6.0, h),
                        _cubic_max(th_b, -d_b, 0.5 * c2b, -m3 / 6.0, h))
    return np.where(np.isnan(ub), np.inf, ub)


#: The signs of the two Taylor expansions' odd terms (about the left end, the right end).
_SIDES = np.array([1.0, -1.0])


def _taylor_stacked(Va, Vb, S, w):
    """:func:`_taylor_bound` with both expansions as one stack: ``Va``/``Vb`` (4, ...)
    signed θ, θ', θ'' and Pp·λq'' (θ''' = −Pp·λq'') at the intervals' ends, ``S`` (3, ...)
    the half-spreads of θ', θ'', θ''' over each interval (each modal term monotone, module
    docstring), ``w`` the widths (broadcast).  nan where the bound fails."""
    T = np.stack([Va, Vb])                                   # (2, 4, ...)
    sd = _SIDES.reshape((2,) + (1,) * (T.ndim - 2))
    t3_mid = -0.5 * (T[0, 3] + T[1, 3])
    return _cubic_max(T[:, 0], T[:, 1] * sd, 0.5 * T[:, 2], (sd * t3_mid + S[2]) / 6.0,
                      0.5 * w).max(axis=0)


def _stacked_open(Va, Vb, S, w, bar, mask, lines_first):
    """Which intervals stay open (within ``mask``, against ``bar``): the Taylor bounds
    (:func:`_taylor_stacked`) and the lines with the curvature (:func:`_line_bound`), the
    second only where the first fails (``lines_first``: the lines, cheaper, first).  The
    arguments as :func:`_taylor_stacked`, their trailing shapes broadcast to the mask's.
    Returns the open mask and K (the upper bound of θ'') at its open entries (None when
    none is open)."""
    if lines_first:
        mid = 0.5 * (Va[1] + Vb[1])
        c_mid = 0.5 * (Va[2] + Vb[2])
        live = mask & (_line_bound(Va[0], Vb[0], mid + S[0], mid - S[0], w,
                                   c_mid - S[1]) > bar)
        if not live.any():
            return live, None
        K = (c_mid + S[1])[live]
        ub = _taylor_stacked(Va[:, live], Vb[:, live], S[:, live],
                             np.broadcast_to(w, live.shape)[live])
        ok = ~(ub <= np.broadcast_to(bar, live.shape)[live])           # nan: open
        live[live] = ok
        return live, K[ok]
    live = mask & ~(_taylor_stacked(Va, Vb, S, w) <= bar)
    if not live.any():
        return live, None
    bar = np.broadcast_to(bar, live.shape)[live]
    w = np.broadcast_to(w, live.shape)[live]
    Vl, Wl, Sl = Va[:, live], Vb[:, live], S[:, live]
    mid = 0.5 * (Vl[1] + Wl[1])
    c_mid = 0.5 * (Vl[2] + Wl[2])
    ok = _line_bound(Vl[0], Wl[0], mid + Sl[0], mid - Sl[0], w, c_mid - Sl[1]) > bar
    live[live] = ok
    return live, (c_mid + Sl[1])[ok]


def _coarse(solver, starts, q_end, level, slope, h, Pp, Dp, best, tol, lines_only=False):
    """Whole-segment bounds for every probe and sign at once (matrix products; the end
    states are the next segments' starts).  Returns (slot, segment) of the segments whose
    bound exceeds the best value (slot j: maximum of probe j, p + j: its minimum), or None;
    with ``lines_only`` the two slope lines alone, as a (2p, N) mask of the open ones."""
    lam = solver.lam[:, None]
    if q_end is None:
        q_end, _, _ = solver._seg_states(starts[:, -1:], h[-1:], level[-1:], slope[-1:])
        q_end = q_end[:, 0]
    Wa = solver.W @ level.T
    Wb = solver.W @ slope.T
    qa = starts
    qb = np.concatenate([starts[:, 1:], q_end[:, None]], axis=1)
    da = -lam * qa + Wa
    db = -lam * qb + Wa + Wb * h[None, :]
    aP = np.abs(Pp)
    dsl = Dp @ slope.T
    th_a = Pp @ qa + Dp @ level.T
    th_b = Pp @ qb + Dp @ (level + slope * h[:, None]).T
    d_a = Pp @ da + dsl
    d_b = Pp @ db + dsl
    mid = 0.5 * (d_a + d_b)
    spread = 0.5 * (aP @ np.abs(da - db))
    U, L = mid + spread, mid - spread
    # both signs in one call: the minimum of θ is the maximum of −θ (slope bounds −L, −U)
    w = h[None, :]                               # broadcast against (2p, N)
    live = _line_bound(np.concatenate([th_a, -th_a]), np.concatenate([th_b, -th_b]),
                       np.concatenate([U, -L]), np.concatenate([L, -U]), w) > best[:, None] + tol
    if not live.any():
        return None
    if lines_only:
        return live
    # where the two lines leave a segment open: the chord plus parabola, then the Taylor
    # bounds (their products only for the open segments)
    ca = -lam * da + Wb
    cb = -lam * db + Wb
    c2a, c2b = Pp @ ca, Pp @ cb
    c_spread, t3_mid, t3_spread = _curvature_terms(Pp, aP, lam, ca, cb)
    M3, m3 = t3_mid + t3_spread, t3_mid - t3_spread
    p = th_a.shape[0]
    for lo, sg in ((0, 1.0), (p, -1.0)):
        jj, kk = np.nonzero(live[lo:lo + p])
        if jj.size == 0:
            continue
        ta, tb, da_, db_ = (sg * x[jj, kk] for x in (th_a, th_b, d_a, d_b))
        ca_, cb_ = sg * c2a[jj, kk], sg * c2b[jj, kk]
        Ul, Ll = (U[jj, kk], L[jj, kk]) if sg > 0 else (-L[jj, kk], -U[jj, kk])
        hi3, lo3 = (M3[jj, kk], m3[jj, kk]) if sg > 0 else (-m3[jj, kk], -M3[jj, kk])
        kl = 0.5 * (ca_ + cb_) - c_spread[jj, kk]
        ub = np.minimum(_line_bound(ta, tb, Ul, Ll, h[kk], kl),
                        _taylor_bound(ta, tb, da_, db_, ca_, cb_, hi3, lo3, h[kk]))
        live[lo + jj, kk] = ub > best[lo + jj] + tol
    if not live.any():
        return None
    slot, ck = np.nonzero(live)
    return slot, ck


#: Cuts at these fractions of a segment on both sides of a probe's best sample (the
#: maximum or minimum found by the refinement): graded intervals clear, or prove concave,
#: in a level or two where halvings from the sample intervals would take ten.
GRADED_CUTS = 10.0 ** -np.arange(1, 4)
#: The graded cuts on both sides (before, after), as fractions of the segment.
_GRADED_BOTH = np.concatenate([-GRADED_CUTS, GRADED_CUTS])


def _sample_intervals(t, edges, ck, cj, sg, slot, t_best):
    """Split each candidate segment k at the sample times inside it, and at graded offsets
    around its probe's best sample ``t_best[slot]`` when that lies in the segment: the
    intervals (offsets from the segment start) with their candidate labels repeated, and
    whether each interval starts at a graded cut (a point that is not a sample)."""
    segs = np.unique(ck)
    cuts = {}
    for k in segs.tolist():
        lo = int(np.searchsorted(t, edges[k], side="left"))
        hi = int(np.searchsorted(t, edges[k + 1], side="right"))
        hk = edges[k + 1] - edges[k]
        s = np.minimum(np.maximum(t[lo:hi] - edges[k], 0.0), hk)
        cuts[k] = np.unique(np.concatenate([[0.0], s, [hk]]))
    cut_list, new_list, lens = [], [], []
    for c, k in enumerate(ck.tolist()):
        s = cuts[k]
        new = np.zeros(s.size, dtype=bool)
        tb = t_best[slot[c]] - edges[k]
        hk = edges[k + 1] - edges[k]
        if 0.0 <= tb <= hk:
            g = hk * GRADED_CUTS
            extra = np.concatenate([tb - g, tb + g])
            extra = extra[(extra > 0.0) & (extra < hk)]
            s = np.unique(np.concatenate([s, extra]))
            new = ~np.isin(s, cuts[k])
        cut_list.append(s)
        new_list.append(new)
        lens.append(s.size - 1)
    rep = np.repeat(np.arange(ck.size), lens)
    allc = np.concatenate(cut_list)
    ends = np.cumsum([n + 1 for n in lens])
    left = np.ones(allc.size, dtype=bool)
    left[ends - 1] = False                 # the last cut of a candidate starts no interval
    right = np.roll(left, 1)
    new_left = np.concatenate(new_list)[left]
    return ck[rep], cj[rep], sg[rep], slot[rep], allc[left], allc[right], new_left


def _fused_level(solver, t, edges, level, slope, starts, Pp, Dp, best, tol, t_best, record,
                 open_, segs=None):
    """The first level of the search over many segments at once: each segment is cut at
    the samples inside it and at the graded offsets around every slot's best sample that
    lies in it, and every interval is bounded for every probe and both signs together
    (probe rows of matrix products over the unique cut points, instead of one column per
    candidate).  The graded cuts are exact values: they are recorded, and raise the best,
    before the bounds are compared; ``open_`` (2p, N) marks the (slot, segment) pairs that
    the whole-segment bounds leave open (the others are cleared; None: all open) and
    ``segs`` the segments to cut (None: all).  Returns the intervals left open as
    candidates (ck, cj, sg, slot, sa, sb, ia, ib, E, d_a, d_b, K), then the cut points'
    segments and offsets and G (q, q', q'', λq'' at every cut point), or None: the
    candidates' end states are E[:, :, ia] and E[:, :, ib] (E = G[:3]; gathered by the
    caller a pass at a time).  The bounds are the Taylor and line bounds of
    :func:`_stacked_open` (the lines first: they clear most intervals of a level this
    wide)."""
    N = edges.size - 1
    p = Pp.shape[0]
    h = edges[1:] - edges[:-1]
    lam = solver.lam[:, None]
    # cut points (segment, offset): both ends, the samples strictly inside, the graded cuts
    kl = np.searchsorted(edges, t, side="left")
    kr = np.searchsorted(edges, t, side="right")
    inner = (kl == kr) & (kr >= 1) & (kr <= N)           # not on an edge, inside the span
    ki = kr[inner] - 1
    si = np.minimum(t[inner] - edges[ki], h[ki])
    kb = np.minimum(np.maximum(np.searchsorted(edges, t_best, side="right") - 1, 0), N - 1)
    kb = np.concatenate([kb, np.maximum(kb - 1, 0)])       # a best at an edge: both sides
    tb = np.concatenate([t_best, t_best]) - edges[kb]
    hb = h[kb]
    at = (tb >= 0.0) & (tb <= hb)
    kb, tb, hb = kb[at], tb[at], hb[at]
    sgc = (tb[:, None] + hb[:, None] * _GRADED_BOTH).ravel()
    kg = np.repeat(kb, _GRADED_BOTH.size)
    ing = (sgc > 0.0) & (sgc < np.repeat(hb, _GRADED_BOTH.size))
    kg, sgc = kg[ing], sgc[ing]
    if segs is None:
        segs = np.arange(N)
    else:                                                 # only the open segments
        use = np.zeros(N, dtype=bool)
        use[segs] = True
        ui, ug = use[ki], use[kg]
        ki, si, kg, sgc = ki[ui], si[ui], kg[ug], sgc[ug]
    ns = segs.size
    seg = np.concatenate([segs, segs, ki, kg])
    off = np.concatenate([np.zeros(ns), h[segs], si, sgc])
    # a stable sort: of equal points the first (a sample before a graded cut) is kept
    order = np.lexsort((off, seg))
    seg, off = seg[order], off[order]
    keep = np.ones(seg.size, dtype=bool)
    keep[1:] = (seg[1:] != seg[:-1]) | (off[1:] != off[:-1])
    seg, off, new = seg[keep], off[keep], order[keep] >= 2 * ns + ki.size
    lv, sl = level[seg], slope[seg]
    q0s = starts[:, seg]
    G = np.empty((4,) + q0s.shape)                        # q, q', q'', λq'' at the points
    E = _derivs(solver, q0s, off, lv, sl, out=G[:3])
    np.multiply(lam, G[2], out=G[3])
    V = np.matmul(Pp, G)                                  # (4, p, points)
    if Dp.any():
        V[0] += Dp @ (lv + off[:, None] * sl).T
        V[1] += Dp @ sl.T
    th = V[0]
    VV = np.concatenate([V, -V], axis=1)                  # both signs: (4, 2p, points)
    if new.any():                                         # the graded cuts: exact values
        gi = np.flatnonzero(new)
        vals = VV[0][:, gi]                               # (2p, cuts)
        gain = vals > best[:, None] + tol
        if gain.any():
            record(edges[seg[gi]] + off[gi], th[:, gi].T, gain.any(axis=0))
            np.maximum(best, np.where(gain, vals, -np.inf).max(axis=1), out=best)
    ia = np.flatnonzero(seg[1:] == seg[:-1])
    ib = ia + 1
    S = 0.5 * np.matmul(np.abs(Pp), np.abs(G[1:, :, ia] - G[1:, :, ib]))
    live, K = _stacked_open(VV[:, :, ia], VV[:, :, ib], np.concatenate([S, S], axis=1),
                            off[ib] - off[ia], best[:, None] + tol,
                            True if open_ is None else open_[:, seg[ia]], True)
    if K is None or not live.any():
        return None
    slot, c = np.nonzero(live)
    a, b = ia[c], ib[c]
    return (seg[a], slot % p, np.where(slot < p, 1.0, -1.0), slot, off[a], off[b], a, b, E,
            VV[1, slot, a], VV[1, slot, b], K, seg, off, G)


def _fused_pieces(solver, edges, level, slope, starts, Pp, Dp, best, tol, record, first,
                  rows, k):
    """The second level after :func:`_fused_level`, fused the same way: the open intervals
    ``rows`` of ``first`` (its candidates; none concave) are cut into ``k`` equal pieces,
    each interval once for all its slots; the new points' states in one call, every probe's
    θ, θ', θ'', Pp·λq'' at the pieces' ends and the half-spreads of θ', θ'', θ''' over each
    piece by matrix products, bounded for the slots open on the parent (Taylor, then the
    lines: :func:`_stacked_open`).  The new points are exact values: recorded, and they
    raise the best, before the bounds are compared.  Returns False when some interval's
    cut points are not distinct floats inside it, or the slots x pieces exceed
    ``PIECES_ELEMENTS`` (every slot is bounded: the caller takes the general path), None
    when every piece clears, else the open pieces as candidates (ck, cj, sg, slot, sa, sb,
    ends_a, ends_b, d_a, d_b, K)."""
    slot, ia, seg_all, off_all, G0 = (first[i] for i in (3, 6, 12, 13, 14))
    slot, ia = slot[rows], ia[rows]
    mark = np.zeros(off_all.size, dtype=bool)
    mark[ia] = True
    u = np.flatnonzero(mark)                               # the intervals, by left point
    inv = (np.cumsum(mark) - 1)[ia]
    seg, oa, ob = seg_all[u], off_all[u], off_all[u + 1]
    og = oa[:, None] + (ob - oa)[:, None] * (np.arange(k + 1) / k)
    og[:, k] = ob
    w = np.diff(og, axis=1)                                # (nu, k)
    nu, nm, p = u.size, G0.shape[1], Pp.shape[0]
    if 2 * p * nu * k > PIECES_ELEMENTS or not (w > 0).all():
        return False
    # states at every piece end: (4, modes, intervals, k + 1), the 4th row λ q''
    G = np.empty((4, nm, nu, k + 1))
    G[:, :, :, 0] = G0[:, :, u]
    G[:, :, :, k] = G0[:, :, u + 1]
    kr = np.repeat(seg, k - 1)
    G[:3, :, :, 1:k] = _derivs(solver, starts[:, kr], og[:, 1:k].ravel(), level[kr],
                               slope[kr]).reshape(3, nm, nu, k - 1)
    np.multiply(solver.lam[:, None, None], G[2, :, :, 1:k], out=G[3, :, :, 1:k])
    V = np.matmul(Pp, G.reshape(4, nm, nu * (k + 1))).reshape(4, p, nu, k + 1)
    if Dp.any():
        dl, ds = Dp @ level[seg].T, Dp @ slope[seg].T                  # (p, nu)
        V[0] += dl[:, :, None] + ds[:, :, None] * og[None]
        V[1] += ds[:, :, None]
    th = V[0, :, :, 1:k].reshape(p, -1)                                # the new points
    vals = np.concatenate([th, -th])
    gain = vals > best[:, None] + tol
    if gain.any():
        record((edges[seg][:, None] + og[:, 1:k]).ravel(), th.T, gain.any(axis=0))
        np.maximum(best, np.where(gain, vals, -np.inf).max(axis=1), out=best)
    # half-spreads of q', q'', λq'' over each piece, mode by mode, then the probe rows
    S = 0.5 * np.matmul(np.abs(Pp), np.abs(G[1:, :, :, 1:] - G[1:, :, :, :-1])
                        .reshape(3, nm, nu * k)).reshape(3, p, nu, k)
    VV = np.concatenate([V, -V], axis=1)                               # (4, 2p, nu, k + 1)
    mask = np.zeros((2 * p, nu, 1), dtype=bool)
    mask[slot, inv] = True                                             # open on the parent
    live, K = _stacked_open(VV[..., :-1], VV[..., 1:], np.concatenate([S, S], axis=1), w,
                            best[:, None, None] + tol, mask, False)
    if K is None or not live.any():
        return None
    r, ui, j = np.nonzero(live)
    return (seg[ui], r % p, np.where(r < p, 1.0, -1.0), r, og[ui, j], og[ui, j + 1],
            G[:3, :, ui, j], G[:3, :, ui, j + 1], VV[1, r, ui, j], VV[1, r, ui, j + 1], K)


#: Open intervals of the fused first level cut into pieces by a fused second level
#: (:func:`_fused_pieces`) when modes x open intervals is at most SMALL_LEVEL (False: by
#: the general search).
FUSED_PIECES = True
#: The fused second level's largest slots x pieces (its bounds cover every slot).
PIECES_ELEMENTS = 50_000


#: At most this many segments take the fused first level (:func:`_fused_level`); longer
#: waveforms are bounded whole segment by whole segment first (:func:`_coarse`).
FUSED_SEGMENTS = 16
#: The fused first level's largest modes x cut points array.
FUSED_ELEMENTS = 400_000
#: Pieces an open interval is cut into when modes x open intervals is at most
#: SMALL_LEVEL (a level's cost is then mostly fixed: one level of quarters instead of two
#: of halves); larger levels halve.
SPLIT_PIECES = 4
SMALL_LEVEL = 50_000


def certify(solver, t, v, edges, level, slope, starts, Pp, Dp, newton, q_end=None):
    """Add to the samples t (k,), v (k, p) (rises, sorted) every local extreme that the
    sample-based refinement missed, so that the largest and smallest samples of each probe
    are the true extremes (to ``REL_TOL`` of the largest rise).

    ``starts`` (modes, N) holds every segment's start state and ``q_end`` the state at the
    last edge (None: computed); ``newton(fun, a, b, fa, fb, xtol)`` is the bracketed root
    finder.  Returns the merged t, v."""
    N = edges.size - 1
    p = Pp.shape[0]
    if N == 0 or p == 0 or v.size == 0:
        return t, v
    scale = float(np.abs(v).max())
    tol = REL_TOL * scale if scale > 0 else 0.0
    h = edges[1:] - edges[:-1]
    nm = solver.lam.size
    # candidates: (probe, sign) x interval; sign +1 maximum, −1 minimum
    best = np.concatenate([v.max(axis=0), -v.min(axis=0)])          # (2p,)
    t_best = t[np.concatenate([v.argmax(axis=0), v.argmin(axis=0)])]
    new_t, new_v = [], []

    def record(sel, s, q, ck, cj, sg, slot, lv, sl):
        """Exact values at offsets s (states q) of candidates sel; kept where they beat
        the best."""
        vals = (Pp @ q).T + (lv[sel] + s[:, None] * sl[sel]) @ Dp.T    # (c, p)
        mine = vals[np.arange(sel.size), cj[sel]] * sg[sel]
        gain = mine > best[slot[sel]] + tol
        if gain.any():
            new_t.append(edges[ck[sel][gain]] + s[gain])
            new_v.append(vals[gain])
            np.maximum.at(best, slot[sel][gain], mine[gain])

    def record_points(tt, vals, gain):
        new_t.append(tt[gain])
        new_v.append(vals[gain])

    # candidates per pass, so that the (modes, candidates) arrays stay near CHUNK_ELEMENTS
    chunk = max(1, CHUNK_ELEMENTS // max(nm, 1))

    def take(ends, sel):
        return ends[:, :, sel]

    def descend(ck, cj, sg, slot, sa, sb, ends_a, ends_b, d_a, d_b, K, live, depth):
        """The open intervals (``live``) of a level: a concave one (K ≤ 0) holds its
        maximum at an end or at the one root of θ' (safeguarded Newton, recorded); the
        others are cut into pieces whose new ends are recorded.  Returns the pieces
        (ck, cj, sg, slot, sa, sb, ends_a, ends_b, depth) or None."""
        q0s = starts[:, ck]
        lv, sl = level[ck], slope[ck]
        concave = live & (K <= 0)
        root = np.flatnonzero(concave & (d_a > 0) & (d_b < 0))
        if root.size:
            Pj = Pp[cj[root]] * sg[root, None]
            dj = Dp[cj[root]] * sg[root, None]

            def fun(s, idx, root=root):
                r = root[idx]
                _, dq, cq = _derivs(solver, q0s[:, r], s, lv[r], sl[r])
                return (np.einsum("ci,ic->c", Pj[idx], dq) + np.sum(dj[idx] * sl[r], axis=1),
                        np.einsum("ci,ic->c", Pj[idx], cq))
            xtol = np.maximum((sb[root] - sa[root]) * 1e-14, 1e-300)
            s_star = newton(fun, sa[root], sb[root], d_a[root], d_b[root], xtol)
            q_star = _derivs(solver, q0s[:, root], s_star, lv[root], sl[root])[0]
            record(root, s_star, q_star, ck, cj, sg, slot, lv, sl)
        split = np.flatnonzero(live & ~concave)
        if split.size == 0 or depth <= 0:
            return None
        k = SPLIT_PIECES if split.size * nm <= SMALL_LEVEL and depth >= 2 else 2
        a, b = sa[split], sb[split]
        frac = np.arange(1, k) / k
        pts = a[:, None] + (b - a)[:, None] * frac[None, :]            # (n, k − 1)
        # pieces only where the new ends are distinct floats inside the interval (else
        # halves, else the interval is at the resolution of its ends and is dropped)
        full = (pts[:, 0] > a) & (pts[:, -1] < b)
        if k > 2:
            full &= np.all(pts[:, 1:] > pts[:, :-1], axis=1)
        mid = 0.5 * (a + b)
        half = ~full & (mid > a) & (mid < b)
        fi, hi = np.flatnonzero(full), np.flatnonzero(half)
        n, nf, nh = split.size, fi.size, hi.size
        if nf + nh == 0:
            return None
        s_new = np.concatenate([pts[fi].ravel(), mid[hi]])
        par = np.concatenate([np.repeat(fi, k - 1), hi])                 # into split
        ends_n = _derivs(solver, q0s[:, split[par]], s_new, lv[split[par]],
                         sl[split[par]])
        record(split[par], s_new, ends_n[0], ck, cj, sg, slot, lv, sl)
        # the pieces' ends index a pool: [left ends (n), right ends (n), new points]
        base = 2 * n + np.arange(nf)[:, None] * (k - 1) + np.arange(k - 1)[None, :]
        hb = 2 * n + nf * (k - 1) + np.arange(nh)
        left = np.concatenate([np.concatenate([fi[:, None], base], axis=1).ravel(), hi, hb])
        right = np.concatenate([np.concatenate([base, n + fi[:, None]], axis=1).ravel(), hb,
                                n + hi])
        owner = split[np.concatenate([np.repeat(fi, k), hi, hi])]
        pool_s = np.concatenate([a, b, s_new])
        pool = np.concatenate([take(ends_a, split), take(ends_b, split), ends_n], axis=2)
        return (ck[owner], cj[owner], sg[owner], slot[owner], pool_s[left], pool_s[right],
                pool[:, :, left], pool[:, :, right],
                depth - (k.bit_length() - 1))          # log2 of the pieces (2 or 4)

    def search(ck, cj, sg, slot, sa, sb, ends_a, ends_b, depth, graded=None):
        """Branch and bound; ``ends_a``/``ends_b`` are the states (q, q', q'') at the
        interval ends (None: computed), so a cut evaluates only its new points;
        ``graded`` marks the intervals that start at a graded cut (first level only)."""
        while depth > 0 and ck.size:
            if ck.size > chunk:
                for i in range(0, ck.size, chunk):
                    part = np.arange(i, min(i + chunk, ck.size))
                    search(ck[part], cj[part], sg[part], slot[part], sa[part], sb[part],
                           None if ends_a is None else take(ends_a, part),
                           None if ends_b is None else take(ends_b, part), depth,
                           None if graded is None else graded[part])
                return
            depth -= 1
            Pj = Pp[cj] * sg[:, None]
            dj = Dp[cj] * sg[:, None]
            lv, sl = level[ck], slope[ck]
            if ends_a is None:
                q0s = starts[:, ck]
                ends_a = _derivs(solver, q0s, sa, lv, sl)
                ends_b = _derivs(solver, q0s, sb, lv, sl)
                # the graded cuts are exact values too (every other end is a sample)
                if graded is not None and graded.any():
                    g = np.flatnonzero(graded)
                    record(g, sa[g], ends_a[0][:, g], ck, cj, sg, slot, lv, sl)
            graded = None                   # first level only (the intervals split below)
            (th_a, th_b, d_a, d_b, U, L, K, Kl, c2a, c2b, M3,
             m3) = _interval_bounds(Pj, dj, lv, sl, sa, sb, ends_a, ends_b, solver.lam)
            w = sb - sa
            live = _taylor_bound(th_a, th_b, d_a, d_b, c2a, c2b, M3, m3, w) > best[slot] + tol
            if live.any():      # the slope and curvature lines where the expansion fails
                lv_ = np.flatnonzero(live)
                live[lv_] = _line_bound(th_a[lv_], th_b[lv_], U[lv_], L[lv_], w[lv_],
                                        Kl[lv_]) > best[slot[lv_]] + tol
            if not live.any():
                return
            kids = descend(ck, cj, sg, slot, sa, sb, ends_a, ends_b, d_a, d_b, K, live,
                           depth + 1)
            if kids is None:
                return
            ck, cj, sg, slot, sa, sb, ends_a, ends_b, depth = kids

    def fused(open_, segs=None):
        """The fused first level, then the search from its open intervals a pass at a
        time; False when it leaves nothing open."""
        first = _fused_level(solver, t, edges, level, slope, starts, Pp, Dp, best, tol,
                             t_best, record_points, open_, segs)
        if first is None:
            return False
        ck, cj, sg, slot, sa, sb, ia, ib, E, d_a, d_b, K = first[:12]
        convex = ~(K <= 0)                          # as descend: nan is cut
        n_convex = np.count_nonzero(convex)
        if FUSED_PIECES and ck.size <= chunk and n_convex * nm <= SMALL_LEVEL:
            # a small level: the concave intervals as descend has them (their roots), the
            # others cut by the fused second level, its open pieces on to the search
            rows = np.flatnonzero(convex)
            kids = (_fused_pieces(solver, edges, level, slope, starts, Pp, Dp, best, tol,
                                  record_points, first, rows, SPLIT_PIECES)
                    if rows.size else None)
            if kids is not False:
                c = (np.flatnonzero(~convex & (d_a > 0) & (d_b < 0)) if rows.size < K.size
                     else rows[:0])
                if c.size:
                    descend(ck[c], cj[c], sg[c], slot[c], sa[c], sb[c], E[:, :, ia[c]],
                            E[:, :, ib[c]], d_a[c], d_b[c], K[c],
                            np.ones(c.size, dtype=bool), MAX_DEPTH)
                if kids is not None:
                    depth = MAX_DEPTH - (SPLIT_PIECES.bit_length() - 1)
                    kids = descend(*kids, np.ones(kids[0].size, dtype=bool), depth)
                    if kids is not None:
                        search(*kids)
                return True
        for i in range(0, ck.size, chunk):          # passes bound the (modes, c) arrays
            part = slice(i, i + chunk)
            kids = descend(ck[part], cj[part], sg[part], slot[part], sa[part], sb[part],
                           E[:, :, ia[part]], E[:, :, ib[part]], d_a[part], d_b[part],
                           K[part], np.ones(ck[part].size, dtype=bool), MAX_DEPTH)
            if kids is not None:
                search(*kids)
        return True

    n_cuts = t.size + 2 * N + 12 * p
    if N <= FUSED_SEGMENTS and n_cuts * nm <= FUSED_ELEMENTS:
        # the two slope lines over whole segments first (no new states: often all clear),
        # unless they left segments open at the solver's last call with these probes (a
        # sweep's rows are alike): then straight to the fused level, every slot open (the
        # lines only ever clear; the certificate does not depend on this choice)
        key = Pp.tobytes()
        hint = getattr(solver, "_lines_open", None)
        if hint is not None and hint[0] == key and hint[1]:
            open_ = None                        # every slot of every segment open
        else:
            open_ = _coarse(solver, starts, q_end, level, slope, h, Pp, Dp, best, tol,
                            lines_only=True)
            solver._lines_open = (key, open_ is not None)
            if open_ is None:
                return t, v
        if not fused(open_):
            solver._lines_open = None           # try the lines again next time
    else:
        # the segments whose whole-segment bound beats the best are bounded again over
        # the intervals between their samples (much tighter than one line pair): fused
        # when their cut points are few enough, else candidate by candidate
        live = _coarse(solver, starts, q_end, level, slope, h, Pp, Dp, best, tol)
        if live is None:
            return t, v
        slot, ck = live
        segs = np.unique(ck)
        use = np.zeros(N, dtype=bool)
        use[segs] = True
        n_in = int(np.count_nonzero(use[np.minimum(np.searchsorted(edges, t, side="right") - 1,
                                                   N - 1)]))
        if (n_in + 2 * segs.size + 12 * p) * nm <= FUSED_ELEMENTS:
            open_ = np.zeros((2 * p, N), dtype=bool)
            open_[slot, ck] = True
            fused(open_, segs)
        else:
            cj = slot % p
            sg = np.where(slot < p, 1.0, -1.0)
            ck, cj, sg, slot, sa, sb, graded = _sample_intervals(t, edges, ck, cj, sg, slot,
                                                                 t_best)
            search(ck, cj, sg, slot, sa, sb, None, None, MAX_DEPTH, graded)
    if not new_t:
        return t, v
    from .solvers import merge_samples
    return merge_samples(t, v, np.concatenate(new_t), np.vstack(new_v))
