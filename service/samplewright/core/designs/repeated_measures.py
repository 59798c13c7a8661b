"""One within-subject factor (repeated measures): m level means, each subject measured at
every level, compared by the univariate repeated-measures F test.

With n subjects, level means μ_j, common SD σ at every level and compound-symmetric
correlation ρ between any two levels, the subject-by-level interaction is the error term,
with variance σ²(1 − ρ), and

    df1 = m − 1,   df2 = (n − 1)(m − 1),   λ = n Σ_j (μ_j − μ̄)² / (σ² (1 − ρ))

(Maxwell & Delaney, *Designing Experiments and Analyzing Data*, 2nd ed., 2004, ch. 11,
the univariate approach to one-way within-subjects designs). Compound symmetry needs
−1/(m − 1) < ρ < 1 for the covariance matrix to be positive definite.

Without sphericity the F ratio is approximately F(ε(m − 1), ε(n − 1)(m − 1)) (Box, *Ann.
Math. Statist.* 25, 1954; Greenhouse & Geisser, *Psychometrika* 24, 1959), with
1/(m − 1) ≤ ε ≤ 1; for power, the noncentrality is scaled by the same ε (Muller & Barton,
*JASA* 84, 1989), so an ``epsilon`` below 1 multiplies df1, df2 and λ by ε. That is an
approximation; at ε = 1 the formula is exact for compound-symmetric normal data.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InvalidParameter
from .base import FTest, FTestDesign

METHOD_ID = "repeated_measures.noncentral_f"
REFERENCE = (
    "Maxwell & Delaney (2004) Designing Experiments and Analyzing Data, 2nd ed., ch. 11; "
    "Box (1954) Ann. Math. Statist. 25; Greenhouse & Geisser (1959) Psychometrika 24; "
    "Muller & Barton (1989) JASA 84 (ε applied to λ)"
)


def correlation_bounds(levels: int) -> tuple[float, float]:
    """The open interval (−1/(m − 1), 1) of compound-symmetric correlations."""
    return -1.0 / (levels - 1), 1.0


@dataclass(frozen=True)
class RepeatedMeasuresAnova(FTestDesign):
    """n subjects each measured at m levels; one sized group (the subjects)."""

    level_means: np.ndarray
    sd: float
    correlation: float
    epsilon: float = 1.0
    groups: int = 1
    ratios: np.ndarray = field(default_factory=lambda: np.ones(1))

    method_id = METHOD_ID
    reference = REFERENCE

    @classmethod
    def from_means(cls, level_means, sd: float, correlation: float, epsilon: float = 1.0) -> RepeatedMeasuresAnova:
        means = np.asarray(level_means, dtype=float)
        m = len(means)
        if m < 2:
            raise InvalidParameter("design.level_means", means.tolist(), "needs at least 2 levels")
        lo, hi = correlation_bounds(m)
        if not lo < correlation < hi:
            raise InvalidParameter(
                "design.correlation", correlation,
                f"must lie strictly between −1/(m − 1) = {lo:.6g} and 1 for {m} levels (compound symmetry)",
            )
        if not 1.0 / (m - 1) - 1e-12 <= epsilon <= 1.0:
            raise InvalidParameter(
                "design.epsilon", epsilon, f"must lie between 1/(m − 1) = {1.0 / (m - 1):.6g} and 1 for {m} levels"
            )
        return cls(level_means=means, sd=float(sd), correlation=float(correlation), epsilon=float(epsilon))

    @property
    def levels(self) -> int:
        return len(self.level_means)

    def unit_noncentrality(self) -> float:
        """Σ(μ_j − μ̄)² / (σ²(1 − ρ)): λ per subject before the ε scaling."""
        centred = (self.level_means - self.level_means.mean()) / self.sd
        return float(np.sum(centred**2) / (1.0 - self.correlation))

    def test_at(self, sizes: np.ndarray) -> FTest:
        sizes = np.atleast_2d(np.asarray(sizes, dtype=float))
        n = sizes[:, 0]
        m1 = self.levels - 1.0
        eps = self.epsilon
        return FTest(
            df1=np.full(n.shape, eps * m1),
            df2=eps * (n - 1.0) * m1,
            noncentrality=eps * n * self.unit_noncentrality(),
        )

    def smallest_unit(self) -> int:
        """Two subjects: one leaves no error degrees of freedom."""
        return 2
