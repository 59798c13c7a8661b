"""One-way analysis of covariance: k adjusted group means compared by the F test, after
adjusting for q covariates that explain a proportion R² of the error variance.

With group sizes n_i, covariate-adjusted means μ_i, unadjusted error SD σ and covariates
whose (pooled within-group) multiple correlation with the response is R, the error variance
of the adjusted comparison is σ²(1 − R²), and each covariate costs one error degree of
freedom:

    df1 = k − 1,   df2 = N − k − q,   λ = Σ n_i (μ_i − μ̄_w)² / (σ² (1 − R²)),

μ̄_w the size-weighted grand mean (Maxwell & Delaney, *Designing Experiments and Analyzing
Data*, 2nd ed., 2004, ch. 9, the variance reduction from a covariate; Cohen, *Statistical
Power Analysis for the Behavioral Sciences*, 2nd ed., 1988, ch. 9, where the error df
of a set of u predictors tested after w others is N − u − w − 1).

This treats the covariates as fixed. With random covariates (the usual case) the groups'
covariate means differ by chance, which costs a little information, so the formula is
slightly optimistic for small N; the seeded simulation of the real adjusted F test
(``POST /v1/simulate``) is the check. Measured against that simulation (normal covariates
and errors, α = .05, k = 2–5, q = 1–5, N − k − q = 3–144, power .2–.95; see the tests),
the formula overstates power by at most about 0.5 · q/(N − k − q), the largest gaps near
power .6–.8: under 0.02 once N − k − q ≥ 25q, under 0.01 once N − k − q ≥ 50q.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InvalidParameter
from .base import Evaluation, FTest, FTestDesign, normalised_allocation, sizes_from_smallest

METHOD_ID = "one_way_ancova.noncentral_f"
REFERENCE = (
    "Maxwell & Delaney (2004) Designing Experiments and Analyzing Data, 2nd ed., ch. 9; "
    "Cohen (1988) Statistical Power Analysis for the Behavioral Sciences, 2nd ed., ch. 9"
)
#: Measured bound on the optimism of the fixed-covariate formula, per unit of q/(N − k − q).
OPTIMISM_PER_COVARIATE = 0.5


def optimism_bound(covariates: int, error_df: float) -> float:
    """How much the formula may overstate power with random covariates: 0.5 · q/(N − k − q) (measured)."""
    return OPTIMISM_PER_COVARIATE * covariates / error_df if error_df > 0 else 1.0


@dataclass(frozen=True)
class OneWayAncova(FTestDesign):
    """A one-way layout analysed with q covariates explaining R² of the error variance."""

    groups: int
    ratios: np.ndarray
    means: np.ndarray
    sd: float
    covariate_r2: float
    covariates: int

    method_id = METHOD_ID
    reference = REFERENCE

    @classmethod
    def from_means(cls, means, sd: float, covariate_r2: float, covariates: int = 1,
                   allocation=None) -> OneWayAncova:
        means = np.asarray(means, dtype=float)
        if not 0 <= covariate_r2 < 1:
            raise InvalidParameter("design.covariate_r2", covariate_r2, "must be at least 0 and less than 1")
        if covariates < 1:
            raise InvalidParameter("design.covariates", covariates, "must be at least 1")
        return cls(
            groups=len(means), ratios=normalised_allocation(allocation, len(means)), means=means,
            sd=float(sd), covariate_r2=float(covariate_r2), covariates=int(covariates),
        )

    @property
    def adjusted_sd(self) -> float:
        """σ √(1 − R²), the error SD after adjustment."""
        return self.sd * float(np.sqrt(1.0 - self.covariate_r2))

    def test_at(self, sizes: np.ndarray) -> FTest:
        sizes = np.atleast_2d(np.asarray(sizes, dtype=float))
        total = sizes.sum(axis=-1)
        centred = self.means - self.means.mean()  # precision for means of 1e12
        grand = (sizes * centred).sum(axis=-1, keepdims=True) / total[:, None]
        lam = (sizes * (centred - grand) ** 2).sum(axis=-1) / (self.sd**2 * (1.0 - self.covariate_r2))
        df1 = np.full(total.shape, self.groups - 1.0)
        return FTest(df1=df1, df2=total - self.groups - self.covariates, noncentrality=lam)

    def smallest_unit(self) -> int:
        """Smallest m (smallest group) leaving N − k − q ≥ 1; at most q + 2 is ever needed."""
        for m in range(1, self.covariates + 3):
            if sizes_from_smallest([m], self.ratios)[0].sum() - self.groups - self.covariates >= 1:
                return m
        return self.covariates + 2  # pragma: no cover - k·(q + 2) − k − q ≥ 1 always holds

    def evaluate(self, sizes: np.ndarray, alpha: float) -> Evaluation:
        """Power at each row of sizes; sizes without error df are refused by name."""
        test = self.test_at(sizes)
        if np.any(test.df2 < 1):
            row = np.atleast_2d(sizes)[int(np.argmin(test.df2))]
            raise InvalidParameter(
                "group_sizes", [int(v) for v in row],
                f"leaves no error degrees of freedom: the total must exceed groups + covariates "
                f"({self.groups} + {self.covariates})",
            )
        return super().evaluate(sizes, alpha)
