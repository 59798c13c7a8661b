"""Pairwise comparisons of the means of a one-way layout, each by a two-sided t test.

After (or instead of) the omnibus F test, every pair of groups (i, j) — or every group
against a control — is compared by the t statistic with the pooled error SD of the whole
layout,

    T_ij = (ȳ_j − ȳ_i) / (s √(1/n_i + 1/n_j)),   s² = SS_within/(N − k),   ν = N − k,

two-sided at the per-comparison level α′. Under normal errors T_ij is noncentral t with
δ_ij = (μ_j − μ_i)/(σ √(1/n_i + 1/n_j)), so the power of comparison (i, j) is the F test's
P(F'(1, ν, δ_ij²) > F_crit(1, ν; α′)) (Maxwell & Delaney, *Designing Experiments and
Analyzing Data*, 2nd ed., 2004, ch. 5; Cohen, *Statistical Power Analysis for the
Behavioral Sciences*, 2nd ed., 1988, ch. 2). For m comparisons the familywise error rate
is kept at α by

* Bonferroni: α′ = α/m (Dunn, "Multiple comparisons among means", *JASA* 56, 1961, 52–64);
* Šidák: α′ = 1 − (1 − α)^{1/m} (Šidák, "Rectangular confidence regions for the means of
  multivariate normal distributions", *JASA* 62, 1967, 626–633);
* none: α′ = α (no familywise protection).

All comparisons share ν and α′, so their powers are ordered like their δ_ij²: the design's
power (what sample size targets) is that of the smallest comparison, the one with the
smallest δ_ij². The per-comparison powers are reported beside it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InvalidParameter
from .base import Evaluation, FTest, FTestDesign, normalised_allocation
from .t_tests import MAX_STANDARDISED_EFFECT

ADJUSTMENTS = ("bonferroni", "sidak", "none")
METHOD_ID = "pairwise_comparisons.t"
#: Distinct noncentralities evaluated per call when reporting every comparison's power.
_POWER_CHUNK = 8
REFERENCE = (
    "Maxwell & Delaney (2004) Designing Experiments and Analyzing Data, 2nd ed., ch. 5; "
    "Dunn (1961) JASA 56, 52–64 (Bonferroni); Šidák (1967) JASA 62, 626–633"
)


def comparison_alpha(alpha: float, comparisons: int, adjustment: str) -> float:
    """Per-comparison level α′ for ``comparisons`` tests at familywise level α."""
    if adjustment == "bonferroni":
        return alpha / comparisons
    if adjustment == "sidak":
        # 1 − (1 − α)^{1/m} without cancellation for small α.
        return -math.expm1(math.log1p(-alpha) / comparisons)
    if adjustment == "none":
        return alpha
    raise InvalidParameter("design.adjustment", adjustment, f"must be one of {list(ADJUSTMENTS)}")


def comparison_pairs(groups: int, control: int | None) -> np.ndarray:
    """(first, second) index pairs: all i < j, or (control, j) for every other group j."""
    if control is None:
        first, second = np.triu_indices(groups, k=1)
        return np.stack([first, second], axis=1)
    others = np.array([j for j in range(groups) if j != control], dtype=np.int64)
    return np.stack([np.full(others.shape, control), others], axis=1)


@dataclass(frozen=True)
class PairwiseComparisons(FTestDesign):
    """Pairwise (or many-to-one) t comparisons with a familywise adjustment.

    ``standardised_means`` are (μ_i − μ̄)/σ (zeros for the detectable-effect layout);
    ``pairs`` lists (first, second) group indices, the difference being second − first.
    """

    groups: int
    ratios: np.ndarray
    standardised_means: np.ndarray
    adjustment: str
    control: int | None
    pairs: np.ndarray
    means: np.ndarray | None = None
    sd: float | None = None

    method_id = METHOD_ID
    reference = REFERENCE

    @classmethod
    def _checked(cls, groups: int, adjustment: str, control: int | None) -> np.ndarray:
        if adjustment not in ADJUSTMENTS:
            raise InvalidParameter("design.adjustment", adjustment, f"must be one of {list(ADJUSTMENTS)}")
        if control is not None and not 0 <= control < groups:
            raise InvalidParameter(
                "design.control_group", control,
                f"must be the index of a group, 0 to {groups - 1} (0-based, in the order of the groups)",
            )
        return comparison_pairs(groups, control)

    @classmethod
    def from_means(cls, means, sd: float, adjustment: str = "bonferroni", control_group: int | None = None,
                   allocation=None) -> PairwiseComparisons:
        means = np.asarray(means, dtype=float)
        k = len(means)
        if k < 2:
            raise InvalidParameter("design.group_means", means.tolist(), "needs at least 2 groups")
        pairs = cls._checked(k, adjustment, control_group)
        if not sd > 0:
            raise InvalidParameter("design.sd", sd, "must be positive")
        z = (means - means.mean()) / float(sd)
        largest = float(np.max(np.abs(z[pairs[:, 1]] - z[pairs[:, 0]])))
        if not math.isfinite(largest) or largest > MAX_STANDARDISED_EFFECT:
            raise InvalidParameter(
                "design.group_means", means.tolist(),
                f"imply a standardised difference |μ_j − μ_i|/σ = {largest:.6g} for a compared pair; it may be "
                f"at most {MAX_STANDARDISED_EFFECT:g} (the power is 1 long before)",
            )
        return cls(groups=k, ratios=normalised_allocation(allocation, k), standardised_means=z,
                   adjustment=adjustment, control=control_group, pairs=pairs, means=means, sd=float(sd))

    @classmethod
    def layout(cls, groups: int, adjustment: str = "bonferroni", control_group: int | None = None,
               allocation=None) -> PairwiseComparisons:
        """The comparisons without an effect, for the detectable-effect question."""
        pairs = cls._checked(groups, adjustment, control_group)
        return cls(groups=groups, ratios=normalised_allocation(allocation, groups),
                   standardised_means=np.zeros(groups), adjustment=adjustment, control=control_group,
                   pairs=pairs)

    @property
    def comparisons(self) -> int:
        return int(len(self.pairs))

    def alpha_per_comparison(self, alpha: float) -> float:
        return comparison_alpha(alpha, self.comparisons, self.adjustment)

    def pair_scales(self, sizes: np.ndarray) -> np.ndarray:
        """√(1/n_i + 1/n_j) for each row of ``sizes`` and each pair: shape (rows, m)."""
        sizes = np.asarray(sizes, dtype=float).reshape(-1, self.groups)
        return np.sqrt(1 / sizes[:, self.pairs[:, 0]] + 1 / sizes[:, self.pairs[:, 1]])

    def deltas_at(self, sizes: np.ndarray) -> np.ndarray:
        """Signed δ_ij = (μ_second − μ_first)/(σ √(1/n_i + 1/n_j)): shape (rows, m)."""
        z = self.standardised_means
        return (z[self.pairs[:, 1]] - z[self.pairs[:, 0]]) / self.pair_scales(sizes)

    def test_at(self, sizes: np.ndarray) -> FTest:
        """df1 = 1, df2 = N − k and the smallest comparison's λ = min δ_ij²."""
        sizes = np.asarray(sizes, dtype=float).reshape(-1, self.groups)
        lam = np.min(self.deltas_at(sizes) ** 2, axis=1)
        return FTest(df1=np.ones(len(sizes)), df2=sizes.sum(axis=1) - self.groups, noncentrality=lam)

    def evaluate(self, sizes: np.ndarray, alpha: float) -> Evaluation:
        """Power of the smallest comparison (level α′) at each row of ``sizes``."""
        from ..distributions import f_critical_value, f_test_power

        a = self.alpha_per_comparison(alpha)
        test = self.test_at(sizes)
        crit = np.atleast_1d(f_critical_value(a, test.df1, test.df2))
        power = np.atleast_1d(f_test_power(a, test.df1, test.df2, test.noncentrality, critical=crit))
        return Evaluation(power, test.df1, test.df2, test.noncentrality, crit)

    def power_at_noncentrality(self, lam: np.ndarray, sizes_row: np.ndarray, alpha: float) -> np.ndarray:
        """One comparison's power at λ (array), level α′, with the df of ``sizes_row``."""
        from ..distributions import f_critical_value, f_test_power

        a = self.alpha_per_comparison(alpha)
        df2 = float(np.sum(sizes_row)) - self.groups
        crit = f_critical_value(a, 1.0, df2)
        return np.atleast_1d(f_test_power(a, 1.0, df2, lam, critical=crit))

    def worst_pair(self, sizes_row: np.ndarray) -> int:
        """Index of the comparison with the smallest power (smallest δ², first on ties)."""
        return int(np.argmin(self.deltas_at(sizes_row)[0] ** 2))

    def comparison_powers(self, sizes_row: np.ndarray, alpha: float) -> list[dict]:
        """Each comparison's groups, difference, d, λ and power at ``sizes_row``."""
        from ..distributions import f_critical_value, f_test_power

        a = self.alpha_per_comparison(alpha)
        sizes_row = np.asarray(sizes_row, dtype=float).reshape(1, -1)
        df2 = float(sizes_row.sum()) - self.groups
        delta = self.deltas_at(sizes_row)[0]
        crit = f_critical_value(a, 1.0, df2)
        # Powers increase with λ: evaluate the distinct λ in ascending chunks and stop once one
        # reaches 1 (to 1e-15), so pairs far apart at huge df do not each pay for a long
        # series that can only return 1.
        distinct, inverse = np.unique(delta**2, return_inverse=True)
        found = np.ones(distinct.shape)
        for start in range(0, len(distinct), _POWER_CHUNK):
            chunk = distinct[start:start + _POWER_CHUNK]
            found[start:start + len(chunk)] = f_test_power(a, 1.0, df2, chunk, critical=crit)
            if found[start + len(chunk) - 1] >= 1.0 - 1e-15:
                found[start + len(chunk):] = 1.0
                break
        power = found[inverse]
        z = self.standardised_means
        out = []
        for index, (first, second) in enumerate(self.pairs):
            d = float(z[second] - z[first])
            item = {"groups": [int(first), int(second)], "cohens_d": d}
            if self.means is not None:
                item["mean_difference"] = float(self.means[second] - self.means[first])
            item.update({"t_noncentrality": float(delta[index]), "noncentrality": float(delta[index] ** 2),
                         "power": float(power[index])})
            out.append(item)
        return out
