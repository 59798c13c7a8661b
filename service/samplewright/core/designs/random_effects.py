"""One-way random-effects analysis of variance: are the k sampled groups' effects variable?

Model y_ij = μ + τ_i + ε_ij with τ_i ~ N(0, σ_τ²) and ε_ij ~ N(0, σ²), k groups of n
units each; the hypothesis is σ_τ² = 0. With θ = σ_τ²/σ² (the variance ratio; the
intraclass correlation is ρ_I = θ/(1 + θ), so θ = ρ_I/(1 − ρ_I)), the expected mean
squares are E[MS_between] = σ²(1 + nθ) and E[MS_within] = σ², and

    F / (1 + nθ) ~ F(k − 1, k(n − 1))   (central F, exactly),

so the power of the level-α test is exact, with no noncentral distribution:

    power = P(F(k − 1, k(n − 1)) > F_crit / (1 + nθ)),

F_crit the upper-α point of F(k − 1, k(n − 1)) (Scheffé, *The Analysis of Variance*, 1959,
ch. 7, random-effects models; Montgomery, *Design and Analysis of Experiments*, 8th ed.,
§3.9, the random effects model — section numbers recalled, not re-read). At θ = 0 the
power is α.

The "noncentrality" this design reports, and which the detectable-effect solve inverts,
is θ itself: power is increasing in θ, from α at θ = 0. The result is exact only for equal
group sizes (the F ratio is not a scaled F otherwise), so unequal sizes are refused.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..distributions import central_f_sf, f_critical_value
from ..errors import InvalidParameter
from .base import Evaluation, FTestDesign

METHOD_ID = "random_effects_anova.central_f"
REFERENCE = (
    "Scheffé (1959) The Analysis of Variance, ch. 7; "
    "Montgomery, Design and Analysis of Experiments, 8th ed., §3.9"
)


def theta_from_icc(icc: float) -> float:
    """θ = ρ_I / (1 − ρ_I)."""
    return icc / (1.0 - icc)


def icc_from_theta(theta):
    """ρ_I = θ / (1 + θ)."""
    theta = np.asarray(theta, dtype=float)
    out = theta / (1.0 + theta)
    return out[()] if out.ndim == 0 else out


def random_effects_power(alpha: float, groups: int, n, theta):
    """Exact power P(F(k−1, k(n−1)) > F_crit/(1 + nθ)); α where θ = 0."""
    n = np.asarray(n, dtype=float)
    theta = np.asarray(theta, dtype=float)
    df1 = float(groups - 1)
    df2 = groups * (n - 1.0)
    crit = f_critical_value(alpha, df1, df2)
    scaled = crit / (1.0 + n * theta)
    power = np.where(theta > 0, central_f_sf(scaled, df1, df2), alpha)
    power = np.clip(power, alpha, 1.0)
    return power, crit


@dataclass(frozen=True)
class RandomEffectsAnova(FTestDesign):
    """k groups of n units sampled from a population of groups; effect θ = σ_τ²/σ²."""

    groups: int
    ratios: np.ndarray
    theta: float
    effect_source: str = "variance_ratio"

    method_id = METHOD_ID
    reference = REFERENCE

    @classmethod
    def from_theta(cls, groups: int, theta: float, source: str = "variance_ratio") -> RandomEffectsAnova:
        if groups < 2:
            raise InvalidParameter("design.groups", groups, "needs at least 2 groups")
        if not (np.isfinite(theta) and theta >= 0):
            raise InvalidParameter("design.variance_ratio", theta, "must be finite and at least 0")
        return cls(groups=groups, ratios=np.ones(groups), theta=float(theta), effect_source=source)

    def smallest_unit(self) -> int:
        """Two units per group: one leaves no within-group degrees of freedom."""
        return 2

    def _per_group(self, sizes: np.ndarray) -> np.ndarray:
        sizes = np.atleast_2d(np.asarray(sizes, dtype=np.int64))
        if not np.all(sizes == sizes[:, :1]):
            raise InvalidParameter(
                "group_sizes", sizes[0].tolist() if sizes.shape[0] == 1 else "unequal rows",
                "the random-effects power is exact only for equal group sizes; give equal sizes or n_per_group",
            )
        return sizes[:, 0].astype(float)

    def evaluate(self, sizes: np.ndarray, alpha: float) -> Evaluation:
        """Exact power at each row of (equal) group sizes; ``noncentrality`` holds θ."""
        n = self._per_group(sizes)
        power, crit = random_effects_power(alpha, self.groups, n, self.theta)
        df1 = np.full(n.shape, self.groups - 1.0)
        return Evaluation(
            power=np.atleast_1d(power), df1=df1, df2=self.groups * (n - 1.0),
            noncentrality=np.full(n.shape, self.theta), critical_value=np.atleast_1d(crit),
        )

    def power_at_noncentrality(self, lam: np.ndarray, sizes_row: np.ndarray, alpha: float) -> np.ndarray:
        """Power at variance ratios θ = ``lam`` with the sizes of ``sizes_row``."""
        n = self._per_group(np.asarray(sizes_row).reshape(1, -1))[0]
        power, _ = random_effects_power(alpha, self.groups, n, np.asarray(lam, dtype=float))
        return np.atleast_1d(power)

    def power_table(self, n: int, alpha: float) -> list[dict]:
        """Power if groups rather than units are added, at the same n and at the same total.

        For k' in (k, k + 1, k + 2, 2k): the power with k' groups of n units, and the power
        with the original k groups sharing the same total k'·n (⌊k'n/k⌋ units each).
        """
        k = self.groups
        rows = []
        for k2 in sorted({k, k + 1, k + 2, 2 * k}):
            total = k2 * n
            more_groups, _ = random_effects_power(alpha, k2, float(n), self.theta)
            n_alt = total // k
            more_units, _ = random_effects_power(alpha, k, float(n_alt), self.theta)
            rows.append({
                "groups": k2,
                "n_per_group": n,
                "n_total": total,
                "power": float(more_groups),
                "same_total_with_original_groups": {
                    "groups": k, "n_per_group": int(n_alt), "n_total": int(n_alt * k),
                    "power": float(more_units),
                },
            })
        return rows
