"""Power of one-way designs, balanced and unbalanced, against a 50-digit mpmath evaluation.

Everything on the reference side is computed in mpmath from the raw inputs (means, SD,
group sizes, α): the noncentrality λ = Σ n_i(μ_i − μ̄_w)²/σ², the critical value (root of
the central F tail), and the noncentral F upper tail as the Poisson mixture

    P(F' > x) = Σ_j e^{−λ/2}(λ/2)^j/j! · I_{1−z}(df2/2, df1/2 + j),  z = df1·x/(df1·x + df2).
"""

from __future__ import annotations

import mpmath as mp
import pytest

from samplewright.core import planning
from samplewright.core.designs.one_way import OneWayAnova

DPS = 50
RTOL_POWER = 1e-9  # required agreement on power (measured: a few 1e-15)
RTOL_EXACT = 1e-12  # λ and the critical value, which involve no series


def mp_noncentrality(means, sd, sizes):
    """λ = Σ n_i (μ_i − μ̄_w)² / σ², μ̄_w the size-weighted grand mean (50 digits)."""
    means = [mp.mpf(m) for m in means]
    sizes = [mp.mpf(n) for n in sizes]
    total = sum(sizes)
    grand = sum(n * m for n, m in zip(sizes, means, strict=True)) / total
    return sum(n * (m - grand) ** 2 for n, m in zip(sizes, means, strict=True)) / mp.mpf(sd) ** 2


def mp_central_tail(x, df1, df2):
    """P(F(df1, df2) > x) = I_{df2/(df1·x + df2)}(df2/2, df1/2)."""
    return mp.betainc(df2 / 2, df1 / 2, 0, df2 / (df1 * x + df2), regularized=True)


def mp_critical_value(alpha, df1, df2):
    """The x with P(F(df1, df2) > x) = α, by root finding on log tails from a double start."""
    from scipy import stats

    start = mp.mpf(float(stats.f.isf(alpha, float(df1), float(df2))))
    log_alpha = mp.log(mp.mpf(alpha))
    return mp.findroot(lambda x: mp.log(mp_central_tail(x, df1, df2)) - log_alpha, start)


def mp_noncentral_tail(x, df1, df2, nc):
    """The Poisson mixture above; terms beyond mean + 12 SD + 60 add less than 1e-40."""
    one_minus_z = df2 / (df1 * x + df2)
    half = nc / 2
    weight = mp.exp(-half)
    total = mp.mpf(0)
    for j in range(int(half + 12 * mp.sqrt(half) + 60) + 1):
        total += weight * mp.betainc(df2 / 2, df1 / 2 + j, 0, one_minus_z, regularized=True)
        weight *= half / (j + 1)
    return total


CASES = [
    # (means, sd, group sizes, α)
    ([0.0, 0.5, 1.2], 1.3, [5, 9, 14], 0.05),
    ([10.0, 12.0, 11.0, 15.0], 4.0, [3, 20, 7, 11], 0.01),
    ([0.0, 1.0], 2.0, [2, 40], 0.1),
    ([1.0, 2.0, 3.0, 4.0, 5.0, 6.0], 3.0, [2, 2, 3, 50, 4, 9], 1e-4),
    ([0.0, 3.0, 0.0, 1.0], 1.0, [8, 6, 10, 7], 1e-10),  # tiny α: far upper tail
    ([0.0, 0.01], 1.0, [4, 4], 1e-8),  # power barely above α
    ([1e6, 1e6 + 1.0, 1e6 + 0.5], 1.0, [4, 7, 5], 0.05),  # large common offset
    ([-2.0, 0.0, 0.0, 0.0, 2.0], 1.5, [12, 3, 3, 3, 12], 0.05),  # balanced extremes, small middle
]


@pytest.mark.parametrize("means, sd, sizes, alpha", CASES)
def test_unbalanced_power_matches_mpmath_series(means, sd, sizes, alpha):
    """Power of an (un)balanced one-way design equals the 50-digit mpmath series to 1e-9 relative."""
    design = OneWayAnova.from_means(means, sd=sd)
    result = planning.power(design, sizes=sizes, alpha=alpha)
    with mp.workdps(DPS):
        k, total = len(sizes), sum(sizes)
        df1, df2 = mp.mpf(k - 1), mp.mpf(total - k)
        lam = mp_noncentrality(means, sd, sizes)  # mpmath 50-digit arithmetic
        crit = mp_critical_value(alpha, df1, df2)  # mpmath 50-digit root of the central tail
        power = mp_noncentral_tail(crit, df1, df2, lam)  # mpmath 50-digit series
    assert (result.df_numerator, result.df_denominator) == (k - 1, total - k)
    assert result.noncentrality == pytest.approx(float(lam), rel=RTOL_EXACT)
    assert result.critical_value == pytest.approx(float(crit), rel=RTOL_EXACT)
    assert result.power == pytest.approx(float(power), rel=RTOL_POWER)


@pytest.mark.parametrize(
    "f, k, n, alpha",
    [(0.25, 4, 45, 0.05), (0.4, 3, 21, 0.05), (0.1, 2, 394, 0.05), (1.2, 5, 3, 1e-6)],
)
def test_balanced_power_from_f_matches_mpmath_series(f, k, n, alpha):
    """Balanced power from Cohen's f (λ = N f²) equals the 50-digit mpmath series to 1e-9 relative."""
    result = planning.power(OneWayAnova.from_f(f, k), sizes=[n] * k, alpha=alpha)
    with mp.workdps(DPS):
        df1, df2 = mp.mpf(k - 1), mp.mpf(k * n - k)
        lam = k * n * mp.mpf(f) ** 2
        crit = mp_critical_value(alpha, df1, df2)
        power = mp_noncentral_tail(crit, df1, df2, lam)  # mpmath 50-digit series
    assert result.noncentrality == pytest.approx(float(lam), rel=RTOL_EXACT)
    assert result.power == pytest.approx(float(power), rel=RTOL_POWER)


def test_unbalanced_allocation_sample_size_matches_mpmath():
    """With allocation 1:2:3 the sample-size answer and the step below straddle the target in mpmath too."""
    means, sd, alpha, target = [0.0, 0.4, 0.9], 1.0, 0.05, 0.9
    design = OneWayAnova.from_means(means, sd=sd, allocation=[1, 2, 3])
    found = planning.sample_size(design, alpha=alpha, target_power=target)
    powers = []
    for step in (found.answer, found.one_step_smaller):
        sizes = step.group_sizes
        with mp.workdps(DPS):
            df1, df2 = mp.mpf(len(sizes) - 1), mp.mpf(sum(sizes) - len(sizes))
            crit = mp_critical_value(alpha, df1, df2)
            powers.append(mp_noncentral_tail(crit, df1, df2, mp_noncentrality(means, sd, sizes)))
        assert step.power == pytest.approx(float(powers[-1]), rel=RTOL_POWER)  # mpmath 50-digit series
    m = found.smallest_group
    assert found.answer.group_sizes == (m, 2 * m, 3 * m)
    assert powers[0] >= target > powers[1]
