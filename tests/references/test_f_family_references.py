"""F-family designs against outside references: Montgomery's factorial example, statsmodels'
F-test power, and a 50-digit mpmath evaluation of the random-effects power.

Every expected number names its source beside it.
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
from statsmodels.stats.power import ftest_power

from samplewright.core import planning
from samplewright.core.designs.ancova import OneWayAncova
from samplewright.core.designs.factorial import FactorialAnova
from samplewright.core.designs.random_effects import RandomEffectsAnova
from samplewright.core.designs.repeated_measures import RepeatedMeasuresAnova

#: Montgomery §5.3.5 setting: 3 × 3, σ = 25, two row means D = 40 apart and the third midway
#: (α = (20, −20, 0)), so Σα² = D²/2 and Φ² = n b D²/(2aσ²); B and AB have no effect.
MONTGOMERY_CELLS = [[120.0] * 3, [80.0] * 3, [100.0] * 3]


@pytest.mark.parametrize(("n", "expected", "rel"), [
    (2, 0.5418, 1e-4),       # REFERENCES.md [computed], printed to 4 places
    (3, 0.8031, 1e-4),       # REFERENCES.md [computed], printed to 4 places
    (4, 0.922545, 1e-6),     # REFERENCES.md [computed] (λ = 15.36, df 2/27)
])
def test_montgomery_factorial_example(n, expected, rel):
    """Montgomery 8th ed. §5.3.5 two-factor example, factor A, α = .05: exact power at n = 2, 3, 4."""
    design = FactorialAnova.from_cells(MONTGOMERY_CELLS, 25.0, "factor_a")
    result = planning.power(design, sizes=np.full(9, n), alpha=0.05)
    assert result.power == pytest.approx(expected, rel=rel)
    assert (result.df_numerator, result.df_denominator) == (2, 9 * (n - 1))


def test_montgomery_factorial_phi_squared():
    """Φ² = λ/a = n b D²/(2aσ²) = 5.12 at n = 4 (Montgomery 8th ed. §5.3.5 [memory], closed form)."""
    design = FactorialAnova.from_cells(MONTGOMERY_CELLS, 25.0, "factor_a")
    lam = design.test_at(np.full((1, 9), 4)).noncentrality[0]
    assert lam == pytest.approx(15.36, rel=1e-12)  # REFERENCES.md [computed]
    assert lam / 3 == pytest.approx(4 * 3 * 40**2 / (2 * 3 * 25**2), rel=1e-12)  # the book's Φ² formula


def test_montgomery_factorial_sample_size_is_four_at_power_090():
    """Smallest n with power ≥ .90 is 4 (REFERENCES.md [computed]: 0.8031 at 3, 0.922545 at 4; the book picks n = 4, from memory)."""
    design = FactorialAnova.from_cells(MONTGOMERY_CELLS, 25.0, "factor_a")
    found = planning.sample_size(design, alpha=0.05, target_power=0.90)
    assert found.smallest_group == 4
    assert found.one_step_smaller.power == pytest.approx(0.8031, rel=1e-4)  # REFERENCES.md [computed]


@pytest.mark.parametrize(("effect", "n"), [("factor_a", 5), ("factor_b", 3), ("interaction", 9)])
def test_factorial_balanced_matches_statsmodels(effect, n):
    """Balanced factorial power equals statsmodels' ftest_power with f = σ_effect/σ and nobs = abn (statsmodels)."""
    cells = np.array([[10.0, 12.0, 11.0, 9.5], [11.0, 10.0, 14.0, 12.0], [9.0, 11.5, 12.0, 10.0]])
    design = FactorialAnova.from_cells(cells, 3.0, effect)
    result = planning.power(design, sizes=np.full(12, n), alpha=0.05)
    f = float(np.sqrt(np.mean(design.effect_values() ** 2)) / 3.0)
    df1, df2 = result.df_numerator, result.df_denominator
    expected = ftest_power(effect_size=f, df2=df2, df1=df1, alpha=0.05, ncc=12 * n - df1 - df2)  # statsmodels
    assert result.power == pytest.approx(expected, rel=1e-9)


def test_ancova_matches_statsmodels():
    """ANCOVA power equals statsmodels' ftest_power with the adjusted f and df2 = N − k − q (statsmodels)."""
    means, sd, r2, q, n = np.array([62.0, 66.0, 68.0]), 12.0, 0.5, 2, 25
    design = OneWayAncova.from_means(means, sd, r2, q)
    result = planning.power(design, sizes=np.full(3, n), alpha=0.05)
    f_adj = float(np.sqrt(np.mean((means - means.mean()) ** 2)) / (sd * np.sqrt(1 - r2)))
    expected = ftest_power(effect_size=f_adj, df2=3 * n - 3 - q, df1=2, alpha=0.05, ncc=q + 1)  # statsmodels
    assert result.power == pytest.approx(expected, rel=1e-9)


def test_repeated_measures_matches_statsmodels():
    """RM power equals statsmodels' ftest_power with f = σ_m/(σ√(1 − ρ)) and nobs = nm (statsmodels)."""
    means, sd, rho, n = np.array([420.0, 410.0, 400.0, 395.0]), 40.0, 0.6, 20
    result = planning.power(RepeatedMeasuresAnova.from_means(means, sd, rho), sizes=np.array([n]), alpha=0.05)
    f = float(np.sqrt(np.mean((means - means.mean()) ** 2)) / (sd * np.sqrt(1 - rho)))
    expected = ftest_power(effect_size=f, df2=(n - 1) * 3, df1=3, alpha=0.05, ncc=n)  # statsmodels
    assert result.power == pytest.approx(expected, rel=1e-9)


def _mp_central_f_sf(x, d1, d2):
    """P(F(d1, d2) > x) = I_{d2/(d2 + d1 x)}(d2/2, d1/2), at 50 digits (mpmath)."""
    y = mpmath.mpf(d2) / (d2 + d1 * x)
    return mpmath.betainc(mpmath.mpf(d2) / 2, mpmath.mpf(d1) / 2, 0, y, regularized=True)


def _mp_critical(alpha, d1, d2):
    return mpmath.findroot(lambda x: _mp_central_f_sf(x, d1, d2) - alpha, mpmath.mpf(3))


@pytest.mark.parametrize(("k", "n", "theta", "alpha"), [(6, 10, 0.25, 0.05), (3, 20, 0.08, 0.01), (12, 4, 1.5, 0.001)])
def test_random_effects_power_matches_mpmath(k, n, theta, alpha):
    """Exact random-effects power P(F > F_crit/(1 + nθ)) agrees with a 50-digit mpmath evaluation (mpmath)."""
    with mpmath.workdps(50):
        d1, d2 = k - 1, k * (n - 1)
        crit = _mp_critical(mpmath.mpf(alpha), d1, d2)
        expected = float(_mp_central_f_sf(crit / (1 + n * mpmath.mpf(theta)), d1, d2))  # mpmath 50 digits
    design = RandomEffectsAnova.from_theta(k, theta)
    assert planning.power(design, sizes=np.full(k, n), alpha=alpha).power == pytest.approx(expected, rel=1e-10)
