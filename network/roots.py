"""A bracketed scalar root finder: Brent's method.

The builder, the spreading calibration and the microstrip synthesis each solve one scalar
equation f(x) = 0 on an interval where f changes sign.  This module does that without
importing ``scipy.optimize`` (about 0.1 s of import time, more than the whole ``pulsetherm
run`` of a small scenario).

Source: R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall,
1973, chapter 4 ("An algorithm with guaranteed convergence for finding a zero of a
function"), procedure ``zero``.  Each step keeps a bracket [b, c] with f(b)·f(c) ≤ 0 and
|f(b)| ≤ |f(c)|, with a the previous iterate, and tries, in order,

* inverse quadratic interpolation through (a, f(a)), (b, f(b)), (c, f(c)) when the three
  are distinct, else the secant through a and b: with s = f(b)/f(a), m = (c − b)/2,

      secant:     p = 2·m·s,  q = 1 − s
      quadratic:  q' = f(a)/f(c), r = f(b)/f(c),
                  p = s·(2·m·q'·(q' − r) − (b − a)·(r − 1)),  q = (q' − 1)(r − 1)(s − 1)

  and the step d = p/q is accepted only when 2|d| < 3|m| − tol and |d| < |e|/2 (e the step
  before last), i.e. it stays well inside the bracket and the steps shrink;
* otherwise bisection, d = m.

A step shorter than tol is lengthened to tol towards c.  The loop stops when |m| ≤ tol
(or f(b) = 0), with tol = xtol/2 + rtol·|b|/2, so the returned b is within about
xtol + rtol·|b| of a root (Brent's theorem 4.2: at most about (log2((b−a)/tol))² calls).
"""
from __future__ import annotations

import math
from typing import Callable

__all__ = ["brentq"]

#: Default relative tolerance: 4 machine epsilons (2·eps·|b| in Brent's tol).
RTOL = 4.0 * 2.220446049250313e-16


def brentq(f: Callable[[float], float], a: float, b: float, xtol: float = 2e-12,
           rtol: float = RTOL, maxiter: int = 500) -> float:
    """A root of ``f`` in [a, b], where f(a) and f(b) differ in sign (Brent, 1973, ch. 4).

    Parameters
    ----------
    f
        Continuous function of one float returning a float.
    a, b
        Ends of the bracket; f(a)·f(b) ≤ 0 is required.
    xtol, rtol
        The answer x lies within about ``xtol + rtol·|x|`` of a root (xtol ≥ 0,
        rtol ≥ 4 machine epsilons).
    maxiter
        Most iterations (each one call of ``f``).  Brent's bound is about
        (log2((b − a)/tol))² calls; smooth functions with a simple root need ten or so, a
        multiple root (flat f) can need a hundred, so the default is generous.

    Raises
    ------
    ValueError
        f(a) and f(b) have the same sign, a tolerance is out of range, or f returned a value
        that is not finite.
    RuntimeError
        No convergence within ``maxiter`` iterations.
    """
    if not (xtol >= 0.0) or not (rtol >= RTOL):
        raise ValueError(f"brentq: xtol = {xtol!r}, rtol = {rtol!r}: expected xtol >= 0 and "
                         f"rtol >= {RTOL!r}")
    a, b = float(a), float(b)
    fa, fb = float(f(a)), float(f(b))
    for x, fx in ((a, fa), (b, fb)):
        if not math.isfinite(fx):
            raise ValueError(f"brentq: f({x!r}) = {fx!r}: expected a finite value")
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0.0) == (fb > 0.0):
        raise ValueError(f"brentq: f({a!r}) = {fa!r} and f({b!r}) = {fb!r} have the same "
                         "sign; expected a bracket where f changes sign")
    c, fc = a, fa
    d = e = b - a
    for _ in range(maxiter):
        if (fb > 0.0) == (fc > 0.0):        # keep the sign change inside [b, c]
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):               # b is the best estimate so far
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 0.5 * xtol + 0.5 * rtol * abs(b)
        m = 0.5 * (c - b)
        if abs(m) <= tol or fb == 0.0:
            return b
        if abs(e) < tol or abs(fa) <= abs(fb):
            d = e = m                       # bisection
        else:
            s = fb / fa
            if a == c:                      # secant
                p = 2.0 * m * s
                q = 1.0 - s
            else:                           # inverse quadratic interpolation
                q = fa / fc
                r = fb / fc
                p = s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0.0:
                q = -q
            else:
                p = -p
            s = e
            e = d
            if 2.0 * p < 3.0 * m * q - abs(tol * q) and p < abs(0.5 * s * q):
                d = p / q
            else:
                d = e = m
        a, fa = b, fb
        b += d if abs(d) > tol else (tol if m > 0.0 else -tol)
        fb = float(f(b))
        if not math.isfinite(fb):
            raise ValueError(f"brentq: f({b!r}) = {fb!r}: expected a finite value")
    raise RuntimeError(f"brentq: no convergence in {maxiter} iterations on [{a!r}, {b!r}]")
