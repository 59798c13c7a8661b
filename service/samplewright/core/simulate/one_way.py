"""Monte Carlo of the one-way ANOVA F test."""

from __future__ import annotations

import numpy as np

from ..designs.one_way import OneWayAnova
from ..distributions import f_critical_value
from . import simulator


def means_for(design: OneWayAnova, sizes: np.ndarray) -> tuple[np.ndarray, float]:
    """Group means and SD to simulate from.

    With means given, those; with only Cohen's f, equally spaced means scaled so that
    their size-weighted SD is f (SD 1): any configuration with that f has the same
    power, since λ = N f² depends on the means only through f.
    """
    if design.means is not None:
        return design.means, design.sd
    spacing = np.arange(design.groups, dtype=float)
    p = sizes / sizes.sum()
    centred = spacing - (p * spacing).sum()
    scale = np.sqrt((p * centred**2).sum())
    return design.cohens_f * centred / scale, 1.0


def f_statistic(y: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    """One-way F = [SS_between/(k−1)] / [SS_within/(N−k)] for each row of ``y`` (R × N)."""
    k, n_total = len(sizes), int(sizes.sum())
    bounds = np.concatenate([[0], np.cumsum(sizes)])
    sums = np.add.reduceat(y, bounds[:-1], axis=1)
    group_means = sums / sizes
    grand = y.sum(axis=1, keepdims=True) / n_total
    ss_between = (sizes * (group_means - grand) ** 2).sum(axis=1)
    ss_within = (y**2).sum(axis=1) - (sums**2 / sizes).sum(axis=1)
    return (ss_between / (k - 1)) / (ss_within / (n_total - k))


@simulator(OneWayAnova)
def simulate_one_way(design: OneWayAnova, sizes: np.ndarray, alpha: float, replicates: int, draw) -> np.ndarray:
    means, sd = means_for(design, sizes)
    # F is invariant to a common shift and scale: work in SD units around the grand mean
    # so that means of 1e12 with an SD of 1 keep their precision.
    mu = np.repeat((means - means.mean()) / sd, sizes)
    y = mu + draw((replicates, int(sizes.sum())))
    crit = f_critical_value(alpha, len(sizes) - 1, sizes.sum() - len(sizes))
    return f_statistic(y, sizes) > crit
