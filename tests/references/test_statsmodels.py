"""Cross-check of balanced one-way power against statsmodels' FTestAnovaPower.

What statsmodels computes (statsmodels/stats/power.py, ``ftest_anova_power``, read in the installed 0.15.0):
``effect_size`` is Cohen's f and ``nobs`` the TOTAL sample size N over all k groups, with
df_num = k − 1, df_denom = N − k and noncentrality f²·N, the same definitions as
samplewright's for equal allocation. Its numerical path differs: the critical value is
``scipy.stats.f.isf`` and the power is ``1 − scipy.special.ncfdtr`` (the complement of
the distribution function). The complement is accurate to ~1e-16 in absolute terms, so
wherever the power is not tiny the two agree to ~1e-13 relative (measured: 2.2e-13 at
worst on the grid below); 1e-9 leaves room for scipy versions while still catching any
difference in df or λ. Once λ is large (≈1,400 or more at α = .05) ``1 − ncfdtr`` is NaN;
there samplewright must give 1.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from statsmodels.stats.power import FTestAnovaPower

from samplewright.core import planning
from samplewright.core.designs.one_way import OneWayAnova

SM = FTestAnovaPower()
RTOL = 1e-9  # see the module docstring

KS = [2, 3, 4, 6, 10]
FS = [0.05, 0.25, 0.6, 1.0]  # Cohen's f
NS = [2, 5, 20, 100, 400]  # n per group
ALPHAS = [0.001, 0.05, 0.1]


def _ours(k, n, f, alpha):
    return planning.power(OneWayAnova.from_f(f, k), sizes=[n] * k, alpha=alpha)


@pytest.mark.parametrize("k", KS)
@pytest.mark.parametrize("f", FS)
def test_power_matches_statsmodels(k, f):
    """Balanced one-way power equals statsmodels' FTestAnovaPower to 1e-9 relative (or 1 where it gives NaN)."""
    for n, alpha in itertools.product(NS, ALPHAS):
        ours = _ours(k, n, f, alpha)
        theirs = SM.power(effect_size=f, nobs=k * n, alpha=alpha, k_groups=k)  # statsmodels
        assert (ours.df_numerator, ours.df_denominator) == (k - 1, k * n - k)
        assert ours.noncentrality == pytest.approx(f * f * k * n, rel=1e-14)  # statsmodels: f²·nobs
        if np.isnan(theirs):
            # statsmodels' 1 − ncfdtr breaks down at large λ; the true power is 1 to double precision.
            assert ours.noncentrality > 1000, (n, alpha)
            assert ours.power == 1.0, (n, alpha)
        else:
            assert ours.power == pytest.approx(float(theirs), rel=RTOL), (n, alpha)


def test_statsmodels_nan_region_is_exercised():
    """The grid includes a case where statsmodels' power is NaN, so that branch is tested."""
    theirs = SM.power(effect_size=1.0, nobs=4 * 400, alpha=0.05, k_groups=4)  # statsmodels
    assert np.isnan(theirs)
    assert _ours(4, 400, 1.0, 0.05).power == 1.0


@pytest.mark.parametrize(
    "k, f, alpha, target",
    list(itertools.product([2, 3, 5], [0.1, 0.25, 0.5], [0.01, 0.05], [0.8, 0.9])),
)
def test_sample_size_matches_statsmodels_solve(k, f, alpha, target):
    """The smallest n per group is the ceiling of statsmodels' continuous total N divided by k."""
    ours = planning.sample_size(OneWayAnova.from_f(f, k), alpha=alpha, target_power=target)
    total = SM.solve_power(effect_size=f, nobs=None, alpha=alpha, power=target, k_groups=k)  # statsmodels
    per_group = total / k
    # statsmodels' root finder is good to far better than 1e-6 in N; a per-group N that
    # close to an integer would make the ceiling ambiguous (none on this grid is).
    assert abs(per_group - round(per_group)) > 1e-6
    assert ours.smallest_group == math.ceil(per_group)


@pytest.mark.parametrize(
    "k, n, alpha, target",
    list(itertools.product([2, 3, 5], [10, 20, 100], [0.01, 0.05], [0.8, 0.9])),
)
def test_detectable_effect_matches_statsmodels_solve(k, n, alpha, target):
    """The detectable f = √(λ/N) equals statsmodels' solved effect size to 1e-9 relative."""
    found = planning.detectable_effect(OneWayAnova.from_f(0.3, k), sizes=[n] * k, alpha=alpha,
                                       target_power=target)
    f = math.sqrt(found.noncentrality / (k * n))
    # statsmodels solves f in (1e-8, 1 − 1e-8) by brentq (xtol 2e-12): measured agreement ≤ 1e-12.
    theirs = SM.solve_power(effect_size=None, nobs=k * n, alpha=alpha, power=target, k_groups=k)  # statsmodels
    assert f == pytest.approx(float(theirs), rel=RTOL)
