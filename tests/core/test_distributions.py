"""Critical values and power of F tests (samplewright.core.distributions).

Closed forms are used where the central F has one; elsewhere the reference is an mpmath
evaluation at 50 (series) or 30 (quadrature) digits, written out here so that nothing is
shared with the code under test.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from scipy import stats

from samplewright.core import distributions as dist
from samplewright.core import planning
from samplewright.core.designs.one_way import OneWayAnova

ALPHAS = [1e-12, 1e-10, 1e-6, 1e-3, 0.01, 0.05, 0.1, 0.5]


# -- mpmath references ----------------------------------------------------------------


def mp_ncf_sf_series(x, df1, df2, nc, dps=50):
    """P(F'(df1, df2, λ) > x) = Σ_j e^{-λ/2}(λ/2)^j/j! · I_{1−z}(df2/2, df1/2 + j), z = df1·x/(df1·x + df2)."""
    with mp.workdps(dps):
        x, df1, df2, nc = (mp.mpf(float(v)) for v in (x, df1, df2, nc))
        one_minus_z = df2 / (df1 * x + df2)
        half = nc / 2
        weight = mp.exp(-half)
        total = mp.mpf(0)
        # Poisson mass beyond mean + 12 SD + 60 terms is far below 1e-40.
        for j in range(int(half + 12 * mp.sqrt(half) + 60) + 1):
            total += weight * mp.betainc(df2 / 2, df1 / 2 + j, 0, one_minus_z, regularized=True)
            weight *= half / (j + 1)
        return total


def mp_ncf_sf_quadrature(x, df1, df2, nc, dps=20):
    """P(F' > x) = ∫ f_V(v) · P(df2/2, df2·v/(2·df1·x)) dv, V ~ χ'²(df1, λ) with its Bessel-function density.

    For huge λ, where the Poisson series would need ~λ/2 terms; P is the regularised lower
    incomplete gamma function (the central χ²(df2) distribution function at df2·v/(df1·x)).
    """
    with mp.workdps(dps):
        x, df1, df2, nc = (mp.mpf(float(v)) for v in (x, df1, df2, nc))
        nu = df1 / 2 - 1

        def density(v):
            return mp.exp(-(v + nc) / 2) * (v / nc) ** (nu / 2) * mp.besseli(nu, mp.sqrt(nc * v)) / 2

        def integrand(v):
            return density(v) * mp.gammainc(df2 / 2, 0, df2 * v / (2 * df1 * x), regularized=True)

        mean, sd = nc + df1, mp.sqrt(2 * (df1 + 2 * nc))
        # V's mass beyond 12 SD is below 1e-30.
        return mp.quad(integrand, [mean - 12 * sd, mean, mean + 12 * sd])


def mp_ncf_sf_df1_df2_one(x, nc, dps=40):
    """P(F'(1, 1, λ) > x) = E[erf(|Z + √λ| / √(2x))], Z ~ N(0, 1): exact for one numerator and one error df.

    (V = (Z + √λ)² and P(χ²₁ < v/x) = erf(√(v/(2x))).) Needs no Bessel function, so it
    reaches λ = 1e20, where the density form needs more digits than is practical.
    """
    with mp.workdps(dps):
        x, root = mp.mpf(float(x)), mp.sqrt(mp.mpf(float(nc)))
        scale = 1 / mp.sqrt(2 * x)
        return mp.quad(lambda z: mp.npdf(z) * mp.erf(abs(z + root) * scale), [-12, 0, 12])


# -- central F critical values --------------------------------------------------------


@pytest.mark.parametrize("alpha", ALPHAS)
@pytest.mark.parametrize("df2", [1, 2, 3, 7, 30, 1000, 1e6, 1e9])
def test_critical_value_df1_2_closed_form(alpha, df2):
    """F(2, df2) critical value equals the closed form x = (df2/2)(α^(−2/df2) − 1) to 1e-12."""
    # Closed form, exact: P(F(2, ν) > x) = (1 + 2x/ν)^(−ν/2). Written with expm1 so that
    # the reference itself keeps full precision when ν is large.
    expected = (df2 / 2) * math.expm1(-(2 / df2) * math.log(alpha))
    assert dist.f_critical_value(alpha, 2, df2) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("alpha", [*ALPHAS, 0.9, 0.999])
def test_critical_value_df1_1_df2_2_via_t(alpha):
    """F(1, 2) critical value equals t² with 2 df: 2(1−α)²/(α(2−α)), to 1e-12."""
    # Closed form, exact: for t with 2 df, P(|T| > t) = 1 − t/√(t² + 2).
    expected = 2 * (1 - alpha) ** 2 / (alpha * (2 - alpha))
    assert dist.f_critical_value(alpha, 1, 2) == pytest.approx(expected, rel=1e-12)


def test_critical_value_vectorised_matches_scalar():
    """An array of (α, df1, df2) gives the same critical values as scalar calls."""
    alpha = np.array([1e-12, 0.05, 0.5, 0.01])
    df1 = np.array([2.0, 1.0, 5.0, 99.0])
    df2 = np.array([3.0, 2.0, 1e7, 40.0])
    together = dist.f_critical_value(alpha, df1, df2)
    one_by_one = [dist.f_critical_value(a, d1, d2) for a, d1, d2 in zip(alpha, df1, df2, strict=True)]
    np.testing.assert_allclose(together, one_by_one, rtol=1e-15, atol=0)


@pytest.mark.parametrize(
    "alpha, df1, df2",
    [(1e-12, 3, 8), (1e-10, 99, 4), (0.05, 5, 1e7), (0.01, 1, 1), (0.3, 40, 17)],
)
def test_critical_value_tail_is_alpha_by_mpmath(alpha, df1, df2):
    """The central F tail at the returned critical value is α to 1e-13 (mpmath 50-digit incomplete beta)."""
    x = dist.f_critical_value(alpha, df1, df2)
    with mp.workdps(50):
        tail = mp.betainc(mp.mpf(df2) / 2, mp.mpf(df1) / 2, 0, df2 / (df1 * mp.mpf(x) + df2), regularized=True)
    # mpmath 50-digit incomplete beta; 1e-13 allows the rounding of x itself.
    assert float(tail) == pytest.approx(alpha, rel=1e-13)


# -- power at λ = 0 ---------------------------------------------------------------------


@pytest.mark.parametrize("alpha", ALPHAS)
@pytest.mark.parametrize("df1, df2", [(1, 1), (1, 2), (3, 8), (99, 3), (4, 1e8)])
def test_power_is_alpha_exactly_at_zero_noncentrality(alpha, df1, df2):
    """With λ = 0 the power is α exactly (not an approximation of it)."""
    assert dist.f_test_power(alpha, df1, df2, 0.0) == alpha  # definition of the level, exact


def test_power_at_zero_in_arrays_is_alpha_exactly():
    """λ = 0 entries of an array come back as α exactly, next to entries with λ > 0."""
    nc = np.array([0.0, 5.0, 0.0, 50.0])
    power = dist.f_test_power(0.05, 3, 20, nc)
    assert power[0] == 0.05 and power[2] == 0.05  # definition of the level, exact
    assert np.all(power[[1, 3]] > 0.05)


def test_noncentral_sf_at_zero_is_central_sf():
    """noncentral_f_sf with λ = 0 is the central tail, never scipy's negative value."""
    x = np.array([0.5, 3.0, 19.0, 400.0])
    got = dist.noncentral_f_sf(x, 2, 7, 0.0)
    want = stats.f.sf(x, 2, 7)  # scipy central F, reliable at these arguments
    np.testing.assert_allclose(got, want, rtol=1e-13, atol=0)
    assert np.all(got > 0)


# -- tiny noncentrality --------------------------------------------------------------------


@pytest.mark.parametrize("nc", [5e-324, 1e-310, 1e-200, 1e-158, 1e-100, 1e-30, 1e-21, 1e-19])
@pytest.mark.parametrize("df1, df2", [(1, 1), (2, 10), (5, 1500), (99, 3), (3, 2e6)])
def test_tiny_noncentrality_power_is_alpha_to_rounding(nc, df1, df2):
    """For 0 < λ ≤ 1e-19 the power is α to rounding, with no warning (pytest turns warnings into errors)."""
    for alpha in (1e-12, 0.05, 0.5):
        power = dist.f_test_power(alpha, df1, df2, nc)
        # P(F' > x) − α ≤ 26·λ·α for α ≥ 1e-12 (d log P/dλ at 0, mpmath), plus rounding
        assert alpha <= power <= alpha * (1 + 26 * nc + 1e-13)


@pytest.mark.parametrize("alpha, df1, df2, nc", [(0.05, 1, 1, 1e-8), (1e-12, 2, 10, 1e-5), (0.5, 4, 30, 1e-3)])
def test_small_noncentrality_agrees_with_mpmath(alpha, df1, df2, nc):
    """Small but non-negligible λ (1e-8 … 1e-3) matches the mpmath series to 1e-12 relative."""
    x = dist.f_critical_value(alpha, df1, df2)
    expected = mp_ncf_sf_series(x, df1, df2, nc)  # mpmath 50-digit series
    assert dist.f_test_power(alpha, df1, df2, nc, critical=x) == pytest.approx(float(expected), rel=1e-12)


# -- large noncentrality ------------------------------------------------------------------


def test_power_is_one_for_k2_n200_f195():
    """k = 2, n = 200 per group, f = 1.95, α = .05 (λ = 1521) gives power 1.0, not NaN."""
    result = planning.power(OneWayAnova.from_f(1.95, 2), sizes=[200, 200], alpha=0.05)
    assert result.noncentrality == pytest.approx(1521.0, rel=1e-14)  # λ = N f² = 400 · 1.95²
    # mpmath 50-digit series: 1 − power < 1e-200, so the double result is exactly 1.
    assert result.power == 1.0


@pytest.mark.parametrize("alpha", [1e-12, 1e-6, 0.05, 0.5])
@pytest.mark.parametrize("df1", [1, 2, 5, 99])
@pytest.mark.parametrize("df2", [1, 2, 3, 10, 398, 1e4, 2e6, 1e9])
def test_power_never_nan_and_within_alpha_one_on_large_noncentrality_grid(alpha, df1, df2):
    """Over λ from 1e-3 to ∞ the power is finite, in [α, 1] and non-decreasing in λ."""
    lam = np.concatenate([np.logspace(-3, 300, 61), [np.inf]])
    power = dist.f_test_power(alpha, df1, df2, lam)
    assert not np.any(np.isnan(power))
    assert np.all((power >= alpha) & (power <= 1.0))
    # Monotone up to 1e-10 relative: the Poisson-mixture path for df2 > 1e6 carries
    # ~1e-11 rounding near power 1 (common practice, no source).
    assert np.all(np.diff(power) >= -1e-10 * power[1:])
    assert power[-1] == 1.0  # λ → ∞: the test always rejects (limit, exact)


@pytest.mark.parametrize(
    "alpha, df1, df2, nc",
    [
        (1e-12, 1, 1, 1e11),  # scipy's Boost value is about half of this, with a warning
        (1e-12, 3, 2, 1e12),  # Boost: 0.12 instead of 0.28
        (1e-12, 2, 4, 4.2e6),  # Boost: relative error 4e-11
    ],
)
def test_huge_noncentrality_agrees_with_mpmath_quadrature(alpha, df1, df2, nc):
    """For λ from 4e6 to 1e12 with tiny error df the power matches mpmath to 1e-12 relative."""
    x = dist.f_critical_value(alpha, df1, df2)
    expected = mp_ncf_sf_quadrature(x, df1, df2, nc)  # mpmath 20-digit quadrature
    assert dist.noncentral_f_sf(x, df1, df2, nc) == pytest.approx(float(expected), rel=1e-12)


@pytest.mark.parametrize("alpha, nc", [(1e-12, 1e20), (1e-12, 1e15), (1e-6, 1e13), (0.05, 1e8)])
def test_huge_noncentrality_df_1_1_agrees_with_mpmath(alpha, nc):
    """F'(1, 1, λ) up to λ = 1e20 (where scipy gives NaN) matches mpmath to 1e-12 relative."""
    x = dist.f_critical_value(alpha, 1, 1)
    expected = mp_ncf_sf_df1_df2_one(x, nc)  # mpmath 40-digit quadrature of the exact normal integral
    assert dist.f_test_power(alpha, 1, 1, nc, critical=x) == pytest.approx(float(expected), rel=1e-12)


# -- very large error degrees of freedom ---------------------------------------------------


@pytest.mark.parametrize(
    "alpha, df1, df2, nc",
    [
        (0.05, 3, 2e6, 20.0),
        (0.05, 1, 1e7, 7.85),
        (0.05, 4, 1e8, 50.0),
        (1e-10, 2, 2e7, 40.0),  # scipy's Boost value is off by 1.6e-11 relative here
        (1e-3, 20, 1e7, 10.0),  # and by 2.8e-12 here
        (1e-10, 1, 1e8, 1.0),
        (0.5, 5, 1e8, 2.0),
    ],
)
def test_large_df2_path_agrees_with_mpmath(alpha, df1, df2, nc):
    """With df2 > 1e6 (the Poisson-mixture path) the power matches mpmath to 1e-12 relative."""
    assert df2 > dist.LARGE_DF2
    x = dist.f_critical_value(alpha, df1, df2)
    expected = mp_ncf_sf_series(x, df1, df2, nc)  # mpmath 50-digit series
    assert dist.f_test_power(alpha, df1, df2, nc, critical=x) == pytest.approx(float(expected), rel=1e-12)


def test_large_df2_critical_value_agrees_with_mpmath():
    """At df2 = 1e8 the critical value puts exactly α in the tail (mpmath 50-digit incomplete beta)."""
    for alpha, df1 in [(0.05, 3), (1e-12, 10)]:
        x = dist.f_critical_value(alpha, df1, 1e8)
        with mp.workdps(50):
            tail = mp.betainc(mp.mpf(5e7), mp.mpf(df1) / 2, 0, mp.mpf(1e8) / (df1 * mp.mpf(x) + mp.mpf(1e8)),
                              regularized=True)
        assert float(tail) == pytest.approx(alpha, rel=1e-12)  # mpmath 50-digit incomplete beta


def _array_power_and_critical(alpha, df1, df2, nc):
    """What a Rows of one evaluates: f_critical_value, then f_test_power, on one-element arrays."""
    a, d1, d2, lam = (np.array([float(v)]) for v in (alpha, df1, df2, nc))
    crit = np.atleast_1d(dist.f_critical_value(a, d1, d2))
    power = np.atleast_1d(dist.f_test_power(a, d1, d2, lam, critical=crit))
    return float.hex(power.item(0)), float.hex(crit.item(0))


def test_scalar_f_power_equals_the_one_element_array_path():
    """f_power_one gives the bits of f_critical_value + f_test_power on one-element arrays, every guard region too."""
    # Source: the array functions of this module (independent of f_power_one's code path);
    # tolerance 0 (float.hex), with the critical-value cache cold and warm.
    rng = np.random.default_rng(41)
    cases = [(0.05, 2.0, 30.0, 0.0), (0.05, 2.0, 30.0, 1e-25), (0.05, 2.0, 30.0, dist.TINY_NONCENTRALITY),
             (0.05, 3.0, 40.0, dist.LARGE_NONCENTRALITY), (0.05, 3.0, 40.0, 2e6), (1e-10, 2.0, 2e7, 40.0),
             (0.05, 3.0, dist.LARGE_DF2, 12.0), (0.01, 1.0, 1.0, 3.0), (0.3, 40.0, 17.0, 1e5),
             (0.05, 4.0, 60.0, float("inf")), (0.05, 4.0, 60.0, float("nan"))]
    for _ in range(3000):
        cases.append((float(rng.choice([0.05, 0.01, 0.1, rng.uniform(1e-6, 0.5)])), float(rng.integers(1, 12)),
                      float(rng.choice([rng.integers(1, 400), rng.integers(1, 10**7)])),
                      float(rng.choice([rng.uniform(0, 60), 10 ** rng.uniform(-30, 8)]))))
    for alpha, df1, df2, nc in cases:
        for cold in (True, False):
            if cold:
                dist._CRITICAL_CACHE.clear()
            power, crit = dist.f_power_one(alpha, df1, df2, nc)
            assert type(power) is float and type(crit) is float
            assert (float.hex(power), float.hex(crit)) == _array_power_and_critical(alpha, df1, df2, nc)
