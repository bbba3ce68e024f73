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


def _derivs(solver, q0s, s, lv, sl):
    """q, q', q'' (modes, c) at offsets s (c,) in segments with start states q0s."""
    return solver._seg_states(q0s, s, lv, sl)


def _interval_bounds(Pj, dj, lv, sl, sa, sb, ends_a, ends_b, lam):
    """θ, θ' at both ends, the bounds L ≤ θ' ≤ U and Kl ≤ θ'' ≤ K for intervals of segments,
    θ'' at both ends and bounds m3 ≤ θ''' ≤ M3 (q''' = −λ q'', each term monotone).

    Pj (c, modes) signed probe rows, dj (c, m) signed direct rows; ``ends_a``/``ends_b``
    the modal state and its two derivatives (q, q', q'') (modes, c) at the interval ends.
    Returns th_a, th_b, d_a, d_b, U, L, K, Kl, c2a, c2b, M3, m3."""
    qa, da, ca = ends_a
    qb, db, cb = ends_b
    aPj = np.abs(Pj)
    direct_slope = np.sum(dj * sl, axis=1)
    th_a = np.einsum("ci,ic->c", Pj, qa) + np.sum(dj * (lv + sa[:, None] * sl), axis=1)
    th_b = np.einsum("ci,ic->c", Pj, qb) + np.sum(dj * (lv + sb[:, None] * sl), axis=1)
    d_a = np.einsum("ci,ic->c", Pj, da)
    d_b = np.einsum("ci,ic->c", Pj, db)
    spread = 0.5 * np.einsum("ci,ic->c", aPj, np.abs(da - db))
    U = 0.5 * (d_a + d_b) + spread + direct_slope
    L = 0.5 * (d_a + d_b) - spread + direct_slope
    c2a = np.einsum("ci,ic->c", Pj, ca)
    c2b = np.einsum("ci,ic->c", Pj, cb)
    c_spread = 0.5 * np.einsum("ci,ic->c", aPj, np.abs(ca - cb))
    c_mid = 0.5 * (c2a + c2b)
    lam = lam[:, None]
    t3_mid = -0.5 * np.einsum("ci,ic->c", Pj, lam * (ca + cb))
    t3_spread = 0.5 * np.einsum("ci,ic->c", aPj, lam * np.abs(ca - cb))
    return (th_a, th_b, d_a + direct_slope, d_b + direct_slope, U, L, c_mid + c_spread,
            c_mid - c_spread, c2a, c2b, t3_mid + t3_spread, t3_mid - t3_spread)


def _line_bound(th_a, th_b, U, L, w, Kl=None):
    """Upper bound of θ on [0, w] from θ(0), θ(w), L ≤ θ' ≤ U and (when given) Kl ≤ θ''.

    The slope bounds give two lines through the ends; the curvature bound gives the chord
    plus a parabola: θ − (Kl/2)·x(x − w) is convex, so it lies under its chord, and
    θ(x) ≤ θ(0) + m x + (−Kl/2)·x(w − x) with m the chord's slope (≤ max(θ(0), θ(w)) when
    Kl ≥ 0).  The smaller bound is returned."""
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.minimum(np.maximum((th_b - th_a - L * w) / (U - L), 0.0), w)
    ub = np.where(U <= 0, th_a, np.where(L >= 0, th_b, th_a + U * x))
    top = np.maximum(th_a, th_b)
    ub = np.maximum(ub, top)
    if Kl is None:
        return ub
    c = np.maximum(-0.5 * Kl, 0.0)                  # the parabola's weight, ≥ 0
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        m = (th_b - th_a) / w
        xs = np.minimum(np.maximum(0.5 * w + m / (2.0 * c), 0.0), w)
        ub2 = th_a + m * xs + c * xs * (w - xs)
    ub2 = np.where((c > 0) & np.isfinite(ub2), np.maximum(ub2, top), top)
    return np.minimum(ub, ub2)


def _cubic_max(A, B, C, D, h):
    """Largest value of A + B x + C x² + D x³ on [0, h] (arrays): the ends and the real
    roots of B + 2C x + 3D x² = 0 (clipped into the interval), elementwise."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        disc = C * C - 3.0 * D * B
        sq = np.sqrt(np.maximum(disc, 0.0))
        # stable roots of 3D x² + 2C x + B: with q = −(C + sign(C)·√disc), q/(3D) and B/q
        qq = -(C + np.copysign(sq, C))
        # both roots (and −B/2C, the one root when D = 0), clipped into [0, h]
        x = np.stack([qq / (3.0 * D), B / qq, -B / (2.0 * C)])
        x = np.minimum(np.maximum(x, 0.0), h)
        x[~np.isfinite(x) | (disc < 0)] = 0.0
        inner = (A + x * (B + x * (C + x * D))).max(axis=0)
        return np.maximum(np.maximum(A, A + h * (B + h * (C + h * D))), inner)


def _taylor_bound(th_a, th_b, d_a, d_b, c2a, c2b, M3, m3, w):
    """Upper bound of θ on [0, w] from third-order Taylor expansions with the Lagrange
    remainder, about the left end on [0, w/2] and about the right end on [w/2, w]:

        θ(x) ≤ θ(0) + θ'(0) x + θ''(0) x²/2 + M3 x³/6,
        θ(w − y) ≤ θ(w) − θ'(w) y + θ''(w) y²/2 − m3 y³/6,   with m3 ≤ θ‴ ≤ M3.

    The exact derivatives at the ends carry the cancellation between modes that sums of
    per-mode bounds lose (a slow probe's fast modes nearly cancel); only the third
    derivative is bounded mode by mode, and it enters with x³ (Taylor models, common
    practice, no source)."""
    h = 0.5 * w
    left = _cubic_max(th_a, d_a, 0.5 * c2a, M3 / 6.0, h)
    right = _cubic_max(th_b, -d_b, 0.5 * c2b, -m3 / 6.0, h)
    ub = np.maximum(left, right)
    return np.where(np.isnan(ub), np.inf, ub)


def _coarse(solver, starts, q_end, level, slope, h, Pp, Dp, best, tol):
    """Whole-segment bounds for every probe and sign at once (matrix products; the end
    states are the next segments' starts).  Returns (slot, segment) of the segments whose
    bound exceeds the best value (slot j: maximum of probe j, p + j: its minimum), or None."""
    lam = solver.lam[:, None]
    N = h.size
    if q_end is None:
        q_end, _, _ = solver._seg_states(starts[:, -1:], h[-1:], level[-1:], slope[-1:])
        q_end = q_end[:, 0]
    Wa = solver.W @ level.T
    Wb = solver.W @ slope.T
    qa = starts
    qb = np.concatenate([starts[:, 1:], q_end[:, None]], axis=1)
    da = -lam * qa + Wa
    db = -lam * qb + Wa + Wb * h[None, :]
    ca = -lam * da + Wb
    cb = -lam * db + Wb
    aP = np.abs(Pp)
    dsl = Dp @ slope.T
    th_a = Pp @ qa + Dp @ level.T
    th_b = Pp @ qb + Dp @ (level + slope * h[:, None]).T
    d_a = Pp @ da + dsl
    d_b = Pp @ db + dsl
    mid = 0.5 * (d_a + d_b)
    spread = 0.5 * (aP @ np.abs(da - db))
    U, L = mid + spread, mid - spread
    w = np.broadcast_to(h[None, :], th_a.shape)
    live = np.concatenate([_line_bound(th_a, th_b, U, L, w),
                           _line_bound(-th_a, -th_b, -L, -U, w)]) > best[:, None] + tol
    if not live.any():
        return None
    # where the two lines leave a segment open: the chord plus parabola, then the Taylor
    # bounds (their products only for the open segments)
    c2a, c2b = Pp @ ca, Pp @ cb
    c_spread = 0.5 * (aP @ np.abs(ca - cb))
    t3_mid = -0.5 * (Pp @ (lam * (ca + cb)))
    t3_spread = 0.5 * (aP @ (lam * np.abs(ca - cb)))
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
        ub = np.minimum(_line_bound(ta, tb, Ul, Ll, w[jj, kk], kl),
                        _taylor_bound(ta, tb, da_, db_, ca_, cb_, hi3, lo3, w[jj, kk]))
        live[lo + jj, kk] = ub > best[lo + jj] + tol
    if not live.any():
        return None
    slot, ck = np.nonzero(live)
    return slot, ck


#: Cuts at these fractions of a segment on both sides of a probe's best sample (the
#: maximum or minimum found by the refinement): graded intervals clear, or prove concave,
#: in a level or two where halvings from the sample intervals would take ten.
GRADED_CUTS = 10.0 ** -np.arange(1, 4)


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
    scale = float(np.max(np.abs(v)))
    tol = REL_TOL * scale if scale > 0 else 0.0
    h = edges[1:] - edges[:-1]
    # candidates: (probe, sign) x segment; sign +1 maximum, −1 minimum; the segments whose
    # whole-segment bound beats the best are bounded again over the intervals between
    # their samples (much tighter than one line pair)
    best = np.concatenate([v.max(axis=0), -v.min(axis=0)])          # (2p,)
    live = _coarse(solver, starts, q_end, level, slope, h, Pp, Dp, best, tol)
    if live is None:
        return t, v
    slot, ck = live
    cj = slot % p
    sg = np.where(slot < p, 1.0, -1.0)
    t_best = t[np.concatenate([v.argmax(axis=0), v.argmin(axis=0)])]
    ck, cj, sg, slot, sa, sb, graded = _sample_intervals(t, edges, ck, cj, sg, slot,
                                                         t_best)
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

    # candidates per pass, so that the (modes, candidates) arrays stay near CHUNK_ELEMENTS
    chunk = max(1, CHUNK_ELEMENTS // max(solver.lam.size, 1))

    def take(ends, sel):
        return tuple(e[:, sel] for e in ends)

    def search(ck, cj, sg, slot, sa, sb, ends_a, ends_b, depth, graded=None):
        """Branch and bound; ``ends_a``/``ends_b`` are the states (q, q', q'') at the
        interval ends (None: computed), so a halving evaluates only its midpoints;
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
            q0s = starts[:, ck]
            lv, sl = level[ck], slope[ck]
            if ends_a is None:
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
            concave = live & (K <= 0)
            root = np.flatnonzero(concave & (d_a > 0) & (d_b < 0))
            if root.size:
                def fun(s, idx, root=root):
                    r = root[idx]
                    _, dq, cq = _derivs(solver, q0s[:, r], s, lv[r], sl[r])
                    return (np.einsum("ci,ic->c", Pj[r], dq) + np.sum(dj[r] * sl[r], axis=1),
                            np.einsum("ci,ic->c", Pj[r], cq))
                xtol = np.maximum((sb[root] - sa[root]) * 1e-14, 1e-300)
                s_star = newton(fun, sa[root], sb[root], d_a[root], d_b[root], xtol)
                q_star, _, _ = _derivs(solver, q0s[:, root], s_star, lv[root], sl[root])
                record(root, s_star, q_star, ck, cj, sg, slot, lv, sl)
            split = np.flatnonzero(live & ~concave)
            mid = 0.5 * (sa[split] + sb[split])
            ok = (mid > sa[split]) & (mid < sb[split])
            split, mid = split[ok], mid[ok]
            if split.size == 0:
                return
            # the midpoints are exact values: they raise the best found so far
            ends_m = _derivs(solver, q0s[:, split], mid, lv[split], sl[split])
            record(split, mid, ends_m[0], ck, cj, sg, slot, lv, sl)
            two = np.concatenate([split, split])
            cj, sg, slot, ck = cj[two], sg[two], slot[two], ck[two]
            sa, sb = np.concatenate([sa[split], mid]), np.concatenate([mid, sb[split]])
            ea, eb = take(ends_a, split), take(ends_b, split)
            ends_a = tuple(np.concatenate([x, m], axis=1) for x, m in zip(ea, ends_m))
            ends_b = tuple(np.concatenate([m, y], axis=1) for m, y in zip(ends_m, eb))

    search(ck, cj, sg, slot, sa, sb, None, None, MAX_DEPTH, graded)
    if not new_t:
        return t, v
    from .solvers import merge_samples
    return merge_samples(t, v, np.concatenate(new_t), np.vstack(new_v))
