"""One-way fixed-effects analysis of variance: k group means compared by the F test.

For k groups with sizes n_i, means μ_i and common error standard deviation σ:

    df1 = k − 1,   df2 = N − k,   λ = Σ n_i (μ_i − μ̄_w)² / σ²,

with μ̄_w = Σ n_i μ_i / N the size-weighted grand mean (Scheffé, *The Analysis of
Variance*, 1959, §2.8; Cohen, *Statistical Power Analysis for the Behavioral Sciences*,
2nd ed., 1988, ch. 8). In Cohen's effect size f = σ_m / σ, with
σ_m² = Σ p_i (μ_i − μ̄_w)² and p_i = n_i / N, the noncentrality is λ = N f², and
η² = f² / (1 + f²).

The least-favourable configuration for a range Δ between the extreme means (two means
Δ apart, the rest at their midpoint) has f = Δ / (σ √(2k)) under equal allocation
(Cohen 1988, §8.2.1, pattern 1), the smallest f any set of means with that range can
have, so a size that detects it detects every configuration with that range.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InvalidParameter
from .base import FTest, FTestDesign, is_equal, normalised_allocation

METHOD_ID = "one_way_anova.noncentral_f"
REFERENCE = (
    "Scheffé (1959) The Analysis of Variance, §2.8; Cohen (1988) Statistical Power "
    "Analysis for the Behavioral Sciences, 2nd ed., ch. 8"
)


def f_from_eta_squared(eta_squared: float) -> float:
    """Cohen's f from η²: f = √(η² / (1 − η²)) (Cohen 1988, eq. 8.2.19)."""
    return math.sqrt(eta_squared / (1.0 - eta_squared))


def eta_squared_from_f(f):
    """η² = f² / (1 + f²) (Cohen 1988, eq. 8.2.20)."""
    f2 = np.square(f)
    return f2 / (1.0 + f2)


def f_from_min_range(min_range: float, sd: float, groups: int) -> float:
    """Least-favourable f = Δ / (σ √(2k)) (Cohen 1988, eq. 8.2.5)."""
    return min_range / (sd * math.sqrt(2.0 * groups))


@dataclass(frozen=True)
class OneWayAnova(FTestDesign):
    """A one-way layout whose effect is given either by means and SD or by Cohen's f.

    Exactly one of ``means`` (with ``sd``) and ``cohens_f`` is set; the constructors
    below resolve η² and the least-favourable range into f.
    """

    groups: int
    ratios: np.ndarray  # allocation divided by its smallest entry
    means: np.ndarray | None = None
    sd: float | None = None
    cohens_f: float | None = None
    effect_source: str = "cohens_f"

    method_id = METHOD_ID
    reference = REFERENCE

    @classmethod
    def from_means(cls, means, sd: float, allocation=None) -> OneWayAnova:
        means = np.asarray(means, dtype=float)
        return cls(
            groups=len(means),
            ratios=normalised_allocation(allocation, len(means)),
            means=means,
            sd=float(sd),
            effect_source="group_means",
        )

    @classmethod
    def from_f(cls, cohens_f: float, groups: int, allocation=None, *, sd=None,
               source: str = "cohens_f") -> OneWayAnova:
        return cls(
            groups=groups,
            ratios=normalised_allocation(allocation, groups),
            cohens_f=float(cohens_f),
            sd=None if sd is None else float(sd),
            effect_source=source,
        )

    @classmethod
    def from_min_range(cls, min_range: float, sd: float, groups: int, allocation=None) -> OneWayAnova:
        ratios = normalised_allocation(allocation, groups)
        if not is_equal(ratios):
            raise InvalidParameter(
                "design.allocation", list(allocation),
                "min_range (least-favourable configuration) is defined for equal allocation only; "
                "give group_means for an unequal allocation",
            )
        f = f_from_min_range(min_range, sd, groups)
        return cls(groups=groups, ratios=ratios, cohens_f=f, sd=float(sd), effect_source="min_range")

    # -- what the engine needs -------------------------------------------------------

    def test_at(self, sizes: np.ndarray) -> FTest:
        """df and λ for each row of ``sizes`` (shape (designs, k))."""
        sizes = np.asarray(sizes, dtype=float)
        total = sizes.sum(axis=-1)
        if self.means is not None:
            grand = (sizes * self.means).sum(axis=-1, keepdims=True) / total[..., None]
            lam = (sizes * (self.means - grand) ** 2).sum(axis=-1) / self.sd**2
        else:
            lam = total * self.cohens_f**2
        df1 = np.full(total.shape, self.groups - 1.0)
        return FTest(df1=df1, df2=total - self.groups, noncentrality=lam)

    #: Longest row ``test_at_one`` sums in Python: numpy's pairwise summation adds fewer
    #: than 8 terms one after the other from 0.0, and 8 or more with eight accumulators.
    SEQUENTIAL_SUM_MAX = 7

    def test_at_one(self, sizes: tuple[int, ...]) -> tuple[float, float, float] | None:
        """(df1, df2, λ) of ``test_at`` for one row of sizes, in Python floats (None: use test_at).

        The formulas of ``test_at`` by the same IEEE operations in the same order, as the
        row of a stack (``vectorised.Rows``) evaluates them: squares as products (numpy's
        x**2 on arrays is x·x; Python's is pow), and each sum over the row added term by
        term from 0.0, which is what numpy's reduction does for fewer than 8 terms. Longer
        rows, and σ = 0 (numpy's inf or NaN with a warning, Python's ZeroDivisionError),
        return None. A single request's test then costs about a microsecond, not the twenty
        of numpy's dispatch on one-row arrays. Equality with a stack's ``test_at`` bit for
        bit is checked in tests/core/test_one_design.py.
        """
        if len(sizes) > self.SEQUENTIAL_SUM_MAX:
            return None
        total = 0.0
        for n in sizes:
            total += n  # int + float: n converted exactly (sizes are far below 2**53)
        if self.means is not None:
            means = self.means.tolist()
            weighted = 0.0
            for n, mu in zip(sizes, means, strict=True):
                weighted += n * mu
            grand = weighted / total
            spread = 0.0
            for n, mu in zip(sizes, means, strict=True):
                d = mu - grand
                spread += n * (d * d)
            variance = self.sd * self.sd
            if variance == 0:
                return None
            lam = spread / variance
        else:
            lam = total * (self.cohens_f * self.cohens_f)
        return self.groups - 1.0, total - self.groups, lam

    def cohens_f_at(self, sizes: np.ndarray) -> np.ndarray:
        """Cohen's f of the design at the given sizes: √(λ / N)."""
        sizes = np.asarray(sizes, dtype=float)
        return np.sqrt(self.test_at(sizes).noncentrality / sizes.sum(axis=-1))
