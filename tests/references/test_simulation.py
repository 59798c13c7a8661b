"""Analytic power against a seeded Monte Carlo of the actual one-way F test.

Each replicate draws normal data for every unit of an unbalanced design, computes the
classical F = [SS_between/(k − 1)] / [SS_within/(N − k)] and rejects when it exceeds the
central F critical value from scipy (so nothing here goes through samplewright's code
except the analytic power under test). The rejection rate p̂ over R replicates has
Monte Carlo standard error SE = √(p(1 − p)/R) at the true power p; the check is
|p̂ − p| ≤ 4·SE (two-sided chance of a false alarm about 6e-5 for a correct p, and the
seeds are fixed, so the outcome is reproducible).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from samplewright.core import planning
from samplewright.core.designs.one_way import OneWayAnova

REPLICATES = 500_000  # SE ≤ 0.00071 (at p = 0.5), 4·SE ≤ 0.0029; about 0.6 s per case
CHUNK = 25_000
SE_MULTIPLE = 4


def simulated_rejection_rate(means, sd, sizes, alpha, replicates, seed):
    """Fraction of seeded normal data sets on which the one-way F test rejects at level α."""
    rng = np.random.default_rng(seed)
    sizes = np.asarray(sizes)
    k, total = len(sizes), int(sizes.sum())
    crit = stats.f.isf(alpha, k - 1, total - k)  # scipy central F, independent of the core
    mu = np.repeat(np.asarray(means, dtype=float), sizes)
    starts = np.concatenate([[0], np.cumsum(sizes)])
    rejected = 0
    done = 0
    while done < replicates:
        r = min(CHUNK, replicates - done)
        y = mu + sd * rng.standard_normal((r, total))
        group_means = np.stack([y[:, a:b].mean(axis=1) for a, b in zip(starts[:-1], starts[1:], strict=True)], axis=1)
        grand = y.mean(axis=1, keepdims=True)
        ss_between = (sizes * (group_means - grand) ** 2).sum(axis=1)
        ss_within = sum(
            ((y[:, a:b] - group_means[:, [g]]) ** 2).sum(axis=1)
            for g, (a, b) in enumerate(zip(starts[:-1], starts[1:], strict=True))
        )
        f_stat = (ss_between / (k - 1)) / (ss_within / (total - k))
        rejected += int(np.count_nonzero(f_stat > crit))
        done += r
    return rejected / replicates


CASES = [
    # (means, sd, group sizes, α, seed)
    ([0.0, 0.5, 0.9], 1.0, [8, 12, 15], 0.05, 20_240_601),
    ([0.0, 0.5, 1.0, 1.6], 1.2, [5, 10, 6, 14], 0.01, 20_240_602),
]


@pytest.mark.slow
@pytest.mark.parametrize("means, sd, sizes, alpha, seed", CASES)
def test_unbalanced_power_matches_simulation(means, sd, sizes, alpha, seed):
    """Analytic power of an unbalanced design is within 4 Monte Carlo SE of the simulated F test."""
    power = planning.power(OneWayAnova.from_means(means, sd=sd), sizes=sizes, alpha=alpha).power
    assert 0.2 < power < 0.95  # a region where the simulation is informative
    se = math.sqrt(power * (1 - power) / REPLICATES)
    observed = simulated_rejection_rate(means, sd, sizes, alpha, REPLICATES, seed)  # seeded simulation
    assert abs(observed - power) <= SE_MULTIPLE * se, (observed, power, se)


@pytest.mark.slow
def test_null_rejection_rate_matches_alpha_by_simulation():
    """With equal means and unequal sizes the simulated rejection rate is α within 4 SE (and the power is α)."""
    means, sd, sizes, alpha = [2.0, 2.0, 2.0], 1.0, [3, 9, 20], 0.05
    power = planning.power(OneWayAnova.from_means(means, sd=sd), sizes=sizes, alpha=alpha).power
    assert power == alpha  # λ = 0: the level, exactly
    se = math.sqrt(alpha * (1 - alpha) / REPLICATES)
    observed = simulated_rejection_rate(means, sd, sizes, alpha, REPLICATES, seed=20_240_603)  # seeded simulation
    assert abs(observed - alpha) <= SE_MULTIPLE * se, (observed, alpha, se)
