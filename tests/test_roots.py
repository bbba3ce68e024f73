"""The bracketed root finder (Brent's method, network/roots.py) against known roots and
against scipy's ``brentq`` on the same brackets and tolerances."""
from __future__ import annotations

import math

import pytest
from scipy.optimize import brentq as scipy_brentq

from pulsetherm.network.roots import RTOL, brentq

# (function, bracket, root): roots known in closed form ("common practice, no source":
# √2, the cube root of 2, π, ln 2, and 0.739085133215161, the fixed point of cos — the
# Dottie number, value from memory, checked here against scipy's brentq as well).
CASES = {
    "sqrt2": (lambda x: x * x - 2.0, (0.0, 2.0), math.sqrt(2.0)),
    "cbrt2": (lambda x: x ** 3 - 2.0, (-1.0, 3.0), 2.0 ** (1.0 / 3.0)),
    "sin_pi": (math.sin, (3.0, 4.0), math.pi),
    "exp_ln2": (lambda x: math.exp(x) - 2.0, (-5.0, 5.0), math.log(2.0)),
    "cos_fixed": (lambda x: math.cos(x) - x, (0.0, 1.0), 0.739085133215161),
    # flat near the root (multiple root of order 3): interpolation is slow, bisection saves it
    "triple": (lambda x: (x - 0.3) ** 3, (0.0, 1.0), 0.3),
    # a step: the root is the jump itself; only the bracket shrinking finds it
    "step": (lambda x: -1.0 if x < 0.123456 else 1.0, (0.0, 1.0), 0.123456),
    # wide bracket, root near one end
    "steep": (lambda x: math.expm1(50.0 * (x - 0.01)), (0.0, 10.0), 0.01),
}


@pytest.mark.parametrize("name", list(CASES))
@pytest.mark.parametrize("xtol", [2e-12, 1e-6, 1e-4])
def test_known_roots_within_tolerance(name, xtol):
    f, (a, b), root = CASES[name]
    calls = []

    def counted(x):
        calls.append(x)
        return f(x)

    x = brentq(counted, a, b, xtol=xtol)
    assert abs(x - root) <= xtol + 4 * RTOL * abs(root) + 1e-15, (name, x, root)
    # Brent (1973) ch. 4: never much worse than bisection, here at most ~log2(range/xtol)²
    assert len(calls) <= 2 + math.ceil(math.log2((b - a) / xtol)) ** 2


@pytest.mark.parametrize("name", list(CASES))
@pytest.mark.parametrize("xtol, rtol", [(2e-12, RTOL), (1e-6, 1e-10), (1e-13, 1e-13)])
def test_agrees_with_scipy_brentq(name, xtol, rtol):
    """Same bracket and tolerances as scipy.optimize.brentq: both answers within the
    tolerance of each other (the two implementations may round differently; the triple
    root at the tightest tolerance needs more than scipy's default 100 iterations in both)."""
    f, (a, b), _ = CASES[name]
    ours = brentq(f, a, b, xtol=xtol, rtol=rtol)
    theirs = scipy_brentq(f, a, b, xtol=xtol, rtol=rtol, maxiter=500)
    assert abs(ours - theirs) <= 2 * (xtol + rtol * abs(theirs)), (name, ours, theirs)


def test_root_at_an_end_returned_exactly():
    assert brentq(lambda x: x - 1.0, 1.0, 3.0) == 1.0
    assert brentq(lambda x: x - 3.0, 1.0, 3.0) == 3.0


def test_reversed_bracket():
    assert brentq(lambda x: x * x - 2.0, 2.0, 0.0) == pytest.approx(math.sqrt(2.0), abs=1e-11)


def test_errors_name_the_problem():
    with pytest.raises(ValueError, match="same sign"):
        brentq(lambda x: x * x + 1.0, -1.0, 1.0)
    with pytest.raises(ValueError, match="finite"):
        brentq(lambda x: math.nan, -1.0, 1.0)
    with pytest.raises(ValueError, match="rtol"):
        brentq(lambda x: x, -1.0, 1.0, rtol=1e-20)
    with pytest.raises(RuntimeError, match="no convergence"):
        brentq(lambda x: (x - 0.3) ** 3, 0.0, 1.0, maxiter=5)
