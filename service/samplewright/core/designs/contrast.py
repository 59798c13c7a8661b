"""A planned single-degree-of-freedom contrast among the k means of a one-way layout.

For coefficients c_i with Σ c_i = 0, group sizes n_i, means μ_i and common error SD σ,
the contrast ψ = Σ c_i μ_i is estimated by ψ̂ = Σ c_i ȳ_i and tested by

    T = ψ̂ / (s √(Σ c_i²/n_i)),   s² the pooled within-group variance, ν = N − k,

with noncentrality δ = ψ / (σ √(Σ c_i²/n_i)) (Maxwell & Delaney, *Designing Experiments
and Analyzing Data*, 2nd ed., 2004, ch. 4, individual comparisons of means; power through
the noncentral t or F as in Cohen, *Statistical Power Analysis for the Behavioral
Sciences*, 2nd ed., 1988, ch. 2 and 8). Two-sided, T² is F(1, N − k) with λ = δ²; one-sided, T is noncentral t with
δ (``core.designs.t_tests``). Rescaling all coefficients rescales ψ and √(Σ c_i²/n_i)
alike, so δ and the power do not depend on the coefficients' scale.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InvalidParameter
from .base import normalised_allocation
from .t_tests import MAX_STANDARDISED_EFFECT, TTestDesign, check_effect_sign, direction

METHOD_ID = "contrast.t"
REFERENCE = (
    "Maxwell & Delaney (2004) Designing Experiments and Analyzing Data, 2nd ed., ch. 4; "
    "Cohen (1988) Statistical Power Analysis for the Behavioral Sciences, 2nd ed., ch. 2"
)
#: Σ c_i must vanish to within this fraction of Σ |c_i| (0.1 + 0.2 − 0.3 is 5.6e-17).
SUM_TOLERANCE = 1e-9


def check_coefficients(coefficients, groups: int, field: str = "design.coefficients") -> np.ndarray:
    """Contrast coefficients: one per group, finite, not all zero, summing to zero."""
    c = np.asarray(coefficients, dtype=float)
    if c.shape != (groups,):
        raise InvalidParameter(field, list(coefficients), f"needs one coefficient per group ({groups})")
    if not np.all(np.isfinite(c)):
        raise InvalidParameter(field, list(coefficients), "every coefficient must be finite")
    scale = float(np.sum(np.abs(c)))
    if scale == 0:
        raise InvalidParameter(field, list(coefficients), "at least two coefficients must be nonzero")
    total = float(np.sum(c))
    if abs(total) > SUM_TOLERANCE * scale:
        raise InvalidParameter(
            field, list(coefficients),
            f"must sum to zero for a contrast (they sum to {total:.6g})",
        )
    return c


@dataclass(frozen=True)
class Contrast(TTestDesign):
    """A planned contrast Σ c_i μ_i in a one-way layout, tested by its t statistic.

    ``psi_over_sd`` is ψ/σ, the contrast in units of the error SD; ``means`` and ``sd``
    are kept when given (for reports and simulation).
    """

    groups: int
    ratios: np.ndarray
    coefficients: np.ndarray
    psi_over_sd: float
    alternative: str = "two-sided"
    means: np.ndarray | None = None
    sd: float | None = None

    method_id = METHOD_ID
    reference = REFERENCE

    @classmethod
    def from_means(cls, means, sd: float, coefficients, allocation=None,
                   alternative: str = "two-sided") -> Contrast:
        means = np.asarray(means, dtype=float)
        k = len(means)
        c = check_coefficients(coefficients, k)
        direction(alternative)
        if not sd > 0:
            raise InvalidParameter("design.sd", sd, "must be positive")
        psi = float(np.dot(c, means))
        psi_over_sd = psi / float(sd)
        # Coefficients scaled so their positive part sums to 1 make ψ a difference of two
        # weighted means; bound that standardised difference like Cohen's d.
        d_equivalent = psi_over_sd / (0.5 * float(np.sum(np.abs(c))))
        if not np.isfinite(d_equivalent) or abs(d_equivalent) > MAX_STANDARDISED_EFFECT:
            raise InvalidParameter(
                "design.group_means", means.tolist(),
                f"imply a standardised contrast ψ/(σ·Σ|c_i|/2) = {d_equivalent:.6g}; its magnitude may be "
                f"at most {MAX_STANDARDISED_EFFECT:g} (the power is 1 long before)",
            )
        check_effect_sign(psi, alternative, "design.coefficients", "contrast value ψ = Σ c_i μ_i")
        return cls(
            groups=k, ratios=normalised_allocation(allocation, k), coefficients=c,
            psi_over_sd=psi_over_sd, alternative=alternative, means=means, sd=float(sd),
        )

    @classmethod
    def layout(cls, coefficients, allocation=None, alternative: str = "two-sided",
               groups: int | None = None) -> Contrast:
        """The contrast without an effect (ψ = 0), for the detectable-effect question."""
        k = len(coefficients) if groups is None else groups
        c = check_coefficients(coefficients, k)
        direction(alternative)
        return cls(groups=k, ratios=normalised_allocation(allocation, k), coefficients=c,
                   psi_over_sd=0.0, alternative=alternative)

    def scale_at(self, sizes: np.ndarray) -> np.ndarray:
        """√(Σ c_i²/n_i) for each row of ``sizes``: the SE of ψ̂ in units of σ."""
        sizes = np.asarray(sizes, dtype=float).reshape(-1, self.groups)
        return np.sqrt((self.coefficients**2 / sizes).sum(axis=-1))

    def t_at(self, sizes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        sizes = np.asarray(sizes, dtype=float).reshape(-1, self.groups)
        return sizes.sum(axis=-1) - self.groups, self.psi_over_sd / self.scale_at(sizes)
