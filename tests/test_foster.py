"""Foster and Cauer networks: conversion, step response, pulsed closed forms, fitting.

Reference values tagged "deriv" come from /work/shared/physics-brief.md: regression values
derived from the stated formula by two methods (they check code against the formula).
"""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.polynomial import polynomial as P

from pulsetherm.network.foster import Cauer, Foster, FosterError, fit_foster

BRIEF_R = [0.2, 0.5, 1.3]          # K/W
BRIEF_TAU = [1e-5, 1e-3, 1e-1]     # s


# -- independent cross-checks (used only here) -----------------------------------------
def cauer_by_continued_fraction(foster: Foster) -> tuple[np.ndarray, np.ndarray]:
    """Classical Cauer synthesis by polynomial continued-fraction expansion (few stages only).

    Z(s) = 1/(sC₁ + 1/(R₁ + 1/(sC₂ + ...))); ill-conditioned beyond ~8 stages (physics brief §6),
    used here as an independent check for <= 4 stages.  Common practice, no source.
    """
    num = np.zeros(1)
    den = np.ones(1)
    for r, tau in zip(foster.R, foster.tau):     # Z = num/den, Σ r/(1 + sτ)
        num = P.polyadd(P.polymul(num, [1.0, tau]), r * den)
        den = P.polymul(den, [1.0, tau])
    def sub(a, b):                               # a - b, untrimmed, same length
        out = np.zeros(max(a.size, b.size))
        out[: a.size] += a
        out[: b.size] -= b
        return out

    Rs, Cs = [], []
    Ynum, Yden = den, num                        # Y = 1/Z, degrees k and k-1
    for _ in range(foster.n):
        c = Ynum[-1] / Yden[-1]                  # Y ~ sC as s -> inf
        Cs.append(c)
        rem = sub(Ynum, np.concatenate([[0.0], c * Yden]))[:-1]   # Y - sC: degree k-1
        r = Yden[-1] / rem[-1]                   # 1/(Y - sC) = Yden/rem = R + Z_next
        Rs.append(r)
        if rem.size == 1:
            break
        znum = sub(Yden, r * rem)[:-1]           # Z_next = znum/rem, degree k-2 over k-1
        Ynum, Yden = rem, znum
    return np.array(Rs), np.array(Cs)


def cauer_by_alpha_beta(foster: Foster) -> tuple[np.ndarray, np.ndarray]:
    """The α/β Lanczos recursion exactly as written in physics brief §6 (Golub & Meurant 2010)."""
    invC = foster.R / foster.tau
    A = np.diag(1.0 / foster.tau)
    v = np.sqrt(invC)
    n = v.size
    Q = np.zeros((n, n))
    Q[:, 0] = v / np.linalg.norm(v)
    alpha, beta = np.zeros(n), np.zeros(n - 1)
    for k in range(n):
        w = A @ Q[:, k]
        alpha[k] = Q[:, k] @ w
        w -= Q[:, : k + 1] @ (Q[:, : k + 1].T @ w)
        w -= Q[:, : k + 1] @ (Q[:, : k + 1].T @ w)
        if k + 1 < n:
            beta[k] = np.linalg.norm(w)
            Q[:, k + 1] = w / beta[k]
    C = np.zeros(n)
    g = np.zeros(n)
    C[0] = 1.0 / invC.sum()
    g[0] = alpha[0] * C[0]
    for k in range(n - 1):
        C[k + 1] = g[k] ** 2 / (beta[k] ** 2 * C[k])
        g[k + 1] = alpha[k + 1] * C[k + 1] - g[k]
    return 1.0 / g, C


# -- acceptance values ----------------------------------------------------------------
def test_brief_foster_to_cauer_values():
    """Physics brief §6 (deriv, two methods): Foster R [0.2, 0.5, 1.3] K/W, τ [10 µs, 1 ms,
    100 ms] -> Cauer R [0.21033899, 0.51612360, 1.27353741] K/W, C [4.87495734e-5,
    1.93913951e-3, 7.65129454e-2] J/K, 1e-7 relative (the reference has 9 digits)."""
    c = Foster(BRIEF_R, BRIEF_TAU).to_cauer()
    np.testing.assert_allclose(c.R, [0.21033899, 0.51612360, 1.27353741], rtol=1e-7)
    np.testing.assert_allclose(c.C, [4.87495734e-5, 1.93913951e-3, 7.65129454e-2], rtol=1e-7)
    np.testing.assert_allclose(c.R_total, 2.0, rtol=1e-14)


def test_cauer_matches_continued_fraction_and_alpha_beta():
    """Two independent syntheses (continued fraction, common practice, no source; the α/β
    recursion of physics brief §6) agree with the bidiagonal Lanczos on <= 4 stages."""
    for R, tau in [(BRIEF_R, BRIEF_TAU), ([1.0], [2e-3]),
                   ([0.3, 0.1, 0.8, 0.4], [3e-6, 2e-4, 5e-3, 0.4])]:
        f = Foster(R, tau)
        c = f.to_cauer()
        Rcf, Ccf = cauer_by_continued_fraction(f)
        Rab, Cab = cauer_by_alpha_beta(f)
        np.testing.assert_allclose(c.R, Rcf, rtol=1e-8)
        np.testing.assert_allclose(c.C, Ccf, rtol=1e-8)
        np.testing.assert_allclose(c.R, Rab, rtol=1e-8)
        np.testing.assert_allclose(c.C, Cab, rtol=1e-8)


def test_single_rc_is_its_own_cauer():
    """Lumped capacitance (Bergman et al. 2011, §5.1): one term R, τ is one stage R, C = τ/R."""
    c = Foster([2.5], [4e-3]).to_cauer()
    np.testing.assert_allclose(c.R, [2.5], rtol=1e-15)
    np.testing.assert_allclose(c.C, [4e-3 / 2.5], rtol=1e-15)


def test_twelve_stage_round_trip():
    """Foster (τ log-spaced 1 µs-10 s) -> Cauer -> Foster returns R and τ to 1e-8 relative
    (task acceptance; exact conversions, common practice, no source)."""
    rng = np.random.default_rng(12)
    tau = np.logspace(-6, 1, 12)
    R = rng.uniform(0.05, 2.0, 12)
    f = Foster(R, tau)
    c = f.to_cauer()
    g = c.to_foster()
    assert c.n == 12 and g.n == 12
    np.testing.assert_allclose(g.tau, tau, rtol=1e-8)
    np.testing.assert_allclose(g.R, R, rtol=1e-8)
    t = np.concatenate([[0.0], np.logspace(-9, 3, 400)])
    np.testing.assert_allclose(c.zth(t), f.zth(t), rtol=0, atol=1e-10)


def test_long_ladder_round_trip_is_unique():
    """A Cauer ladder is fixed by its Z(s): a 200-stage two-layer ladder survives
    Cauer -> Foster -> Cauer (uniqueness of the Jacobi matrix, Golub & Meurant 2010, ch. 3)."""
    n = 200
    R = np.r_[np.full(n // 2, 1.0), np.full(n // 2, 0.1)] / n
    C = np.r_[np.full(n // 2, 1e-3), np.full(n // 2, 1e-1)] / n
    c2 = Cauer(R, C).to_foster().to_cauer()
    np.testing.assert_allclose(c2.R, R, rtol=1e-10)
    np.testing.assert_allclose(c2.C, C, rtol=1e-10)


def test_brief_slab_zth():
    """Physics brief §4 (deriv; Carslaw & Jaeger 1959): Si slab L 1 mm (k 148, ρ 2330, c 712),
    q0 1e6 W/m²: 6.7568 K steady, 6.1507 K at 10 ms, 2.2772 K at 1 ms, from the exact series
    R_n = (L/kA)·8/((2n+1)²π²), τ_n = 4L²/((2n+1)²π²α); the Cauer ladder gives the same."""
    L, k, rho, c, A, q0 = 1e-3, 148.0, 2330.0, 712.0, 1.0, 1e6
    alpha = k / (rho * c)
    n = np.arange(2000)
    m = (2 * n + 1) ** 2 * np.pi ** 2
    R, tau = L / (k * A) * 8 / m, 4 * L * L / (m * alpha)
    # the truncated tail (ΣR_n = L/kA) has τ < τ_1999 ≈ 4 ns: fully risen at 1 ms
    f = Foster(np.r_[R, L / (k * A) - R.sum()], np.r_[tau, tau[-1] / 2])
    dT = q0 * A * f.zth([1e-3, 1e-2, 1e3])
    np.testing.assert_allclose(dT, [2.2772, 6.1507, 6.7568], atol=1e-4)
    head = Foster(R[:60], tau[:60])
    t = np.logspace(-5, 0, 50)
    np.testing.assert_allclose(head.to_cauer().zth(t), head.zth(t), rtol=0, atol=1e-10 * head.R_total)


# -- pulsed closed forms --------------------------------------------------------------
def superposed_periodic(f: Foster, P: float, tp: float, T: float, n_periods: int = 4000):
    """Peak and minimum of the periodic state by summing step responses of past pulses
    (superposition; common practice, no source): independent of the closed form."""
    k = np.arange(n_periods)
    peak = P * np.sum(f.zth(k * T + tp) - f.zth(k * T))
    mn = P * np.sum(f.zth((k + 1) * T) - f.zth(k * T + (T - tp)))
    return peak, mn


@pytest.mark.parametrize("R, tau, P, tp, T, peak, mn, mean", [
    # physics brief §5, deriv: single RC, 100 W, 0.1 ms in 1 ms
    ([1.0], [1e-3], 100.0, 1e-4, 1e-3, 15.0545, 6.1207, 10.0),
    # physics brief §5, deriv: three-term Foster, 50 W, 100 µs in 1 ms
    (BRIEF_R, BRIEF_TAU, 50.0, 1e-4, 1e-3, 20.2925, 8.0010, 10.0),
])
def test_periodic_closed_forms(R, tau, P, tp, T, peak, mn, mean):
    """Exact periodic steady state of a Foster network (physics brief §5, deriv)."""
    f = Foster(R, tau)
    assert f.periodic_peak(P, tp, T) == pytest.approx(peak, abs=1e-4)
    assert f.periodic_min(P, tp, T) == pytest.approx(mn, abs=1e-4)
    assert f.periodic_mean(P, tp, T) == pytest.approx(mean, rel=1e-12)
    sp, sm = superposed_periodic(f, P, tp, T, n_periods=int(50 * max(tau) / T) + 10)
    assert f.periodic_peak(P, tp, T) == pytest.approx(sp, rel=1e-9)
    assert f.periodic_min(P, tp, T) == pytest.approx(sm, rel=1e-9)


def test_periodic_broadcasts_and_limits():
    """Arrays of widths broadcast; D -> 1 gives the steady state P·ΣR; a very long period
    gives the single-pulse response P·Zth(t_p) (common practice, no source)."""
    f = Foster(BRIEF_R, BRIEF_TAU)
    w = np.array([1e-5, 1e-4, 1e-3])
    pk = f.periodic_peak(10.0, w, 1e-3)
    assert pk.shape == (3,)
    assert pk[-1] == pytest.approx(10.0 * 2.0, rel=1e-12)
    assert f.periodic_peak(10.0, 1e-4, 1e3) == pytest.approx(10.0 * f.zth(1e-4), rel=1e-9)
    with pytest.raises(FosterError, match="period"):
        f.periodic_peak(1.0, 2e-3, 1e-3)


# -- pruning, validation ----------------------------------------------------------------
def test_pruned_keeps_total_resistance():
    """Pruning folds tiny terms and merges close time constants; ΣR is kept exactly."""
    f = Foster([1.0, 1e-9, 0.5, 0.5, 2.0], [1e-4, 1e-3, 1e-2, 1.05e-2, 1.0])
    p = f.pruned(rel_tol=1e-6, merge_ratio=1.1)
    assert p.n == 3
    assert p.R_total == pytest.approx(f.R_total, rel=1e-15)
    np.testing.assert_allclose(p.tau[1], np.sqrt(1e-2 * 1.05e-2), rtol=1e-12)
    t = np.logspace(-6, 2, 100)
    assert np.max(np.abs(p.zth(t) - f.zth(t))) < 0.01 * f.R_total


def test_sorted_and_readonly():
    f = Foster([1.0, 2.0], [1.0, 1e-3])
    np.testing.assert_array_equal(f.tau, [1e-3, 1.0])
    np.testing.assert_array_equal(f.R, [2.0, 1.0])
    np.testing.assert_allclose(f.C, [0.5e-3, 1.0])
    with pytest.raises(ValueError):
        f.R[0] = 3.0


@pytest.mark.parametrize("kwargs, field", [
    (dict(R=[1.0, 2.0], tau=[1e-3]), "R"),
    (dict(R=[1.0], tau=[0.0]), "tau"),
    (dict(R=[1.0], tau=[np.nan]), "tau"),
    (dict(R=[-1.0], tau=[1e-3]), "R"),
    (dict(R=[], tau=[]), "tau"),
])
def test_foster_validation(kwargs, field):
    with pytest.raises(FosterError, match=field):
        Foster(**kwargs)


def test_rounding_negative_terms_are_zero():
    """Terms of -1e-15·ΣR (rounding of a modal decomposition) are taken as zero."""
    f = Foster([1.0, -1e-15, 2.0], [1e-3, 1e-2, 1e-1])
    np.testing.assert_array_equal(f.R, [1.0, 0.0, 2.0])
    assert f.to_cauer().n == 2


def test_transfer_impedance_negative_terms():
    """A transfer impedance may have negative terms but has no Cauer ladder."""
    f = Foster([1.0, -0.2], [1e-3, 1e-1], transfer=True)
    assert f.zth(1e3) == pytest.approx(0.8)
    with pytest.raises(FosterError, match="transfer"):
        f.to_cauer()


@pytest.mark.parametrize("R, C, field", [([1.0, 0.0], [1.0, 1.0], "R"),
                                         ([1.0], [-1.0], "C"),
                                         ([1.0, 1.0], [1.0], "C")])
def test_cauer_validation(R, C, field):
    with pytest.raises(FosterError, match=field):
        Cauer(R, C)


def test_zth_rejects_negative_time():
    with pytest.raises(FosterError, match="t ="):
        Foster([1.0], [1.0]).zth([-1.0])


# -- property tests -------------------------------------------------------------------
@st.composite
def foster_networks(draw):
    n = draw(st.integers(1, 12))
    lo = draw(st.floats(-7.0, 0.0))
    span = draw(st.floats(0.0, 8.0))
    ltau = draw(st.lists(st.floats(lo, lo + span), min_size=n, max_size=n))
    lR = draw(st.lists(st.floats(-3.0, 1.0), min_size=n, max_size=n))
    return Foster(10.0 ** np.array(lR), 10.0 ** np.array(ltau))


@settings(max_examples=150, deadline=None)
@given(foster_networks())
def test_property_cauer_positive_and_equivalent(f):
    """Random Foster networks (1-12 terms over up to 8 decades): the Cauer ladder has
    positive R and C, keeps ΣR and the step response (exact conversion; Golub & Meurant 2010)."""
    c = f.to_cauer()
    assert np.all(c.R > 0) and np.all(c.C > 0)
    assert c.R_total == pytest.approx(f.R_total, rel=1e-10)
    t = np.concatenate([[0.0], np.geomspace(f.tau[0] * 1e-3, f.tau[-1] * 1e3, 200)])
    assert np.max(np.abs(c.zth(t) - f.zth(t))) <= 1e-10 * f.R_total


# -- fit -------------------------------------------------------------------------------
def test_fit_recovers_known_foster():
    """NNLS fit (Lawson & Hanson 1974) of the Zth of a known 5-term Foster network: < 0.5 %
    over the range, all R >= 0 (task acceptance)."""
    f = Foster([0.05, 0.2, 0.5, 1.3, 0.4], [2e-6, 1e-5, 1e-3, 1e-1, 3.0])
    t = np.geomspace(1e-7, 30.0, 200)
    fit = fit_foster(t, f.zth(t))
    assert fit.success, fit.message
    assert np.all(fit.foster.R >= 0)
    assert np.max(np.abs(fit.foster.zth(t) / f.zth(t) - 1)) < 5e-3
    assert fit.max_rel < 5e-3
    assert fit.foster.R_total == pytest.approx(f.R_total, rel=5e-3)


def test_fit_continuous_spectrum_and_term_cap():
    """A slab's Zth (infinite Foster series, Carslaw & Jaeger 1959; physics brief §4) is
    fitted to < 0.5 % with at most 8 non-negative terms; noise of 0.1 % does not break it."""
    L, k, alpha = 1e-3, 148.0, 148.0 / (2330.0 * 712.0)
    n = np.arange(500)
    m = (2 * n + 1) ** 2 * np.pi ** 2
    slab = Foster(L / k * 8 / m, 4 * L * L / (m * alpha))
    t = np.geomspace(1e-6, 0.1, 150)
    z = slab.zth(t) * (1 + 1e-3 * np.random.default_rng(3).standard_normal(t.size))
    fit = fit_foster(t, z, n_terms=8)
    assert fit.foster.n <= 8
    assert np.all(fit.foster.R >= 0)
    assert np.max(np.abs(fit.foster.zth(t) / slab.zth(t) - 1)) < 5e-3, fit.message


def test_fit_reports_failure_honestly():
    """Too few terms for the curve: success is False and the residual is reported."""
    f = Foster([0.05, 0.2, 0.5, 1.3, 0.4], [2e-6, 1e-5, 1e-3, 1e-1, 3.0])
    t = np.geomspace(1e-7, 30.0, 100)
    fit = fit_foster(t, f.zth(t), n_terms=2)
    assert fit.foster.n <= 2
    assert not fit.success
    assert fit.max_rel > 5e-3
    assert "exceeds" in fit.message


@pytest.mark.parametrize("t, z, field", [([1.0, 0.5], [1.0, 2.0], "t"),
                                         ([1.0, 2.0], [1.0], "zth"),
                                         ([1.0, 2.0], [0.0, 0.0], "zth")])
def test_fit_validation(t, z, field):
    with pytest.raises(FosterError, match=field):
        fit_foster(t, z)
