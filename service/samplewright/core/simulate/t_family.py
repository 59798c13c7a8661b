"""Monte Carlo of the t-based designs: the real t statistics on generated data.

* two-sample: the pooled-variance t of group 1 minus group 2;
* one-sample: the one-sample t of the mean against the reference value;
* paired: pairs (X₁, X₂) with SD σ and correlation ρ, X₁ − X₂ of mean μ_d; the one-sample
  t of the differences. With only σ_d or d_z given, pairs are generated with ρ = ½ and
  σ = σ_d (any ρ gives the same differences under normal errors);
* contrast: ψ̂ = Σ c_i ȳ_i over its standard error from the pooled within-group variance;
* pairwise comparisons: every compared pair's t with the pooled SD of the layout, each at
  the adjusted level α′. The design's power is that of its smallest comparison, so the
  rejection returned per replicate is that comparison's (the one with the smallest
  analytic δ²); all comparisons are computed as the analysis would.

Rejection regions: two-sided T² > F_crit(1, ν; α) (the same critical value as the
analytic power), "greater" T > t_α, "less" T < −t_α. The statistics are invariant to a
common shift and scale of the data, so data are generated in SD units around zero, which
keeps means of 1e12 with an SD of 1 from losing their precision.
"""

from __future__ import annotations

import math

import numpy as np

from ..designs.contrast import Contrast
from ..designs.pairwise import PairwiseComparisons
from ..designs.t_tests import OneSampleT, PairedT, TTestDesign, TwoSampleT
from ..distributions import f_critical_value, t_critical_value
from . import simulator


def _rejects(t: np.ndarray, design: TTestDesign, df: float, alpha: float) -> np.ndarray:
    """The level-α decision of ``design``'s alternative for each t in ``t``."""
    if design.sign == 0:
        return t * t > f_critical_value(alpha, 1.0, df)
    return design.sign * t > t_critical_value(alpha, df)


def _group_stats(y: np.ndarray, sizes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Group means (R × k) and the pooled within-group variance (R) of rows of ``y``."""
    bounds = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    sums = np.add.reduceat(y, bounds, axis=1)
    means = sums / sizes
    centred = y - np.repeat(means, sizes, axis=1)
    pooled = (centred**2).sum(axis=1) / (sizes.sum() - len(sizes))
    return means, pooled


def _one_sample_t(x: np.ndarray) -> np.ndarray:
    """t = x̄/(s/√n) for each row of ``x``."""
    n = x.shape[1]
    mean = x.mean(axis=1)
    s = np.sqrt(((x - mean[:, None]) ** 2).sum(axis=1) / (n - 1))
    return mean / (s / math.sqrt(n))


@simulator(TwoSampleT)
def simulate_two_sample(design: TwoSampleT, sizes: np.ndarray, alpha: float, replicates: int, draw) -> np.ndarray:
    n1, n2 = int(sizes[0]), int(sizes[1])
    mu = np.repeat([design.cohens_d, 0.0], [n1, n2])
    y = mu + draw((replicates, n1 + n2))
    means, pooled = _group_stats(y, sizes)
    t = (means[:, 0] - means[:, 1]) / np.sqrt(pooled * (1 / n1 + 1 / n2))
    return _rejects(t, design, n1 + n2 - 2.0, alpha)


@simulator(OneSampleT)
def simulate_one_sample(design: OneSampleT, sizes: np.ndarray, alpha: float, replicates: int, draw) -> np.ndarray:
    n = int(sizes[0])
    t = _one_sample_t(design.cohens_d + draw((replicates, n)))
    return _rejects(t, design, n - 1.0, alpha)


def _paired_values(design, sizes) -> int:
    return 2 * int(sizes[0])


@simulator(PairedT, values_per_replicate=_paired_values)
def simulate_paired(design: PairedT, sizes: np.ndarray, alpha: float, replicates: int, draw) -> np.ndarray:
    n = int(sizes[0])
    rho = design.correlation if design.correlation is not None else 0.5
    # In units of σ_d: each measurement has SD σ = 1/√(2(1 − ρ)), the difference SD 1.
    sigma = 1.0 / math.sqrt(2.0 * (1.0 - rho))
    e = draw((replicates, 2, n))
    first = sigma * e[:, 0, :] + design.cohens_dz
    second = sigma * (rho * e[:, 0, :] + math.sqrt(1.0 - rho * rho) * e[:, 1, :])
    t = _one_sample_t(first - second)
    return _rejects(t, design, n - 1.0, alpha)


def _standardised_means(design: Contrast) -> np.ndarray:
    """Means in SD units: the given ones, or (no means) ψ/σ spread along the coefficients."""
    if design.means is not None and design.sd is not None:
        return (design.means - design.means.mean()) / design.sd
    c = design.coefficients
    return design.psi_over_sd * c / float(np.dot(c, c))


@simulator(Contrast)
def simulate_contrast(design: Contrast, sizes: np.ndarray, alpha: float, replicates: int, draw) -> np.ndarray:
    mu = np.repeat(_standardised_means(design), sizes)
    y = mu + draw((replicates, int(sizes.sum())))
    means, pooled = _group_stats(y, sizes)
    c = design.coefficients
    t = (means @ c) / np.sqrt(pooled * float(np.sum(c**2 / sizes)))
    return _rejects(t, design, float(sizes.sum() - len(sizes)), alpha)


@simulator(PairwiseComparisons)
def simulate_pairwise(design: PairwiseComparisons, sizes: np.ndarray, alpha: float, replicates: int,
                      draw) -> np.ndarray:
    mu = np.repeat(design.standardised_means, sizes)
    y = mu + draw((replicates, int(sizes.sum())))
    means, pooled = _group_stats(y, sizes)
    first, second = design.pairs[:, 0], design.pairs[:, 1]
    scale = np.sqrt(1 / sizes[first] + 1 / sizes[second])
    t = (means[:, second] - means[:, first]) / (np.sqrt(pooled)[:, None] * scale)
    df = float(sizes.sum() - len(sizes))
    rejected = t * t > f_critical_value(design.alpha_per_comparison(alpha), 1.0, df)
    return rejected[:, design.worst_pair(sizes)]
