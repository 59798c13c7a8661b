"""t tests of one mean, of paired means and of two independent means.

Each design reduces to a t statistic with ν degrees of freedom and noncentrality δ
(Cohen, *Statistical Power Analysis for the Behavioral Sciences*, 2nd ed., 1988, ch. 2;
the noncentral t: Johnson, Kotz & Balakrishnan, *Continuous Univariate Distributions*,
vol. 2, 2nd ed., 1995, ch. 31):

* two independent samples, pooled variance, sizes n₁ and n₂, mean difference
  Δ = μ₁ − μ₂ and common SD σ (Cohen's d = Δ/σ)::

      ν = n₁ + n₂ − 2,   δ = Δ / (σ √(1/n₁ + 1/n₂)) = d / √(1/n₁ + 1/n₂);

* one sample of n, mean μ_d from the reference value, SD σ (d = μ_d/σ)::

      ν = n − 1,   δ = μ_d √n / σ;

* n pairs, mean difference μ_d, SD of the differences σ_d (Cohen's d_z = μ_d/σ_d); with
  both measurements of SD σ and correlation ρ, σ_d = σ √(2(1 − ρ)) (Cohen 1988, §2.3)::

      ν = n − 1,   δ = μ_d √n / σ_d.

A two-sided test rejects when T² > F_crit(1, ν; α), so its power is that of the F test with
df1 = 1 and λ = δ² (``f_test_power``). A one-sided test rejects when T > t_α ("greater") or
T < −t_α ("less"); its power is P(T'(ν, ±δ) > t_α) under the noncentral t
(``t_test_power``), and it needs an effect whose sign matches the alternative.

For every alternative the engine sees the F-scale quantities (df1 = 1, df2 = ν,
noncentrality λ = δ², critical value t_crit²); the effect parameter solved for in the
detectable-effect question is λ, and ``t_details`` gives the t-scale view (signed δ and
the critical t).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InvalidParameter
from .base import Evaluation, FTest, FTestDesign, normalised_allocation

ALTERNATIVES = ("two-sided", "greater", "less")
#: Largest standardised effect (|d|, |d_z|) accepted: power is 1 long before.
MAX_STANDARDISED_EFFECT = 20.0

REFERENCE = (
    "Cohen (1988) Statistical Power Analysis for the Behavioral Sciences, 2nd ed., ch. 2; "
    "noncentral t: Johnson, Kotz & Balakrishnan (1995) Continuous Univariate Distributions, "
    "vol. 2, 2nd ed., ch. 31"
)


def direction(alternative: str) -> int:
    """+1 for "greater", −1 for "less", 0 for "two-sided"."""
    if alternative not in ALTERNATIVES:
        raise InvalidParameter("design.alternative", alternative, f"must be one of {list(ALTERNATIVES)}")
    return {"two-sided": 0, "greater": 1, "less": -1}[alternative]


def check_effect_sign(value: float, alternative: str, field: str, name: str = "effect") -> None:
    """Refuse an effect whose sign contradicts a one-sided alternative (zero is allowed)."""
    sign = direction(alternative)
    if sign * value < 0:
        wanted = "positive" if sign > 0 else "negative"
        raise InvalidParameter(
            field, value,
            f"the {name} is {'negative' if value < 0 else 'positive'}, which contradicts alternative "
            f"{alternative!r} (a test for a {wanted} effect); give a {wanted} {name}, the opposite "
            "alternative, or 'two-sided'",
        )


def check_standardised(value: float, field: str, name: str, raw=None) -> None:
    """Refuse a standardised effect beyond ±MAX_STANDARDISED_EFFECT (or not finite)."""
    if not math.isfinite(value) or abs(value) > MAX_STANDARDISED_EFFECT:
        shown = value if raw is None else raw
        raise InvalidParameter(
            field, shown,
            f"implies a standardised effect {name} = {value:.6g}; its magnitude may be at most "
            f"{MAX_STANDARDISED_EFFECT:g} (the power is 1 long before)",
        )


def standardised_difference(cohens_d, mean_difference, sd) -> tuple[float, str, str]:
    """(d, the field it came from, its source name): Cohen's d as given, or d = Δ/σ (Cohen 1988, ch. 2)."""
    if cohens_d is not None:
        d, field, source = float(cohens_d), "design.cohens_d", "cohens_d"
        check_standardised(d, field, "d")
        return d, field, source
    if mean_difference is None or sd is None or not sd > 0:
        raise InvalidParameter("design.sd", sd, "a positive sd is required with mean_difference")
    d, field = float(mean_difference) / float(sd), "design.mean_difference"
    check_standardised(d, field, "d = mean_difference/sd", raw=mean_difference)
    return d, field, "mean_difference"


class TTestDesign(FTestDesign):
    """A design tested by a t statistic: subclasses give ``t_at(sizes) -> (ν, δ)``.

    δ is signed (positive when the effect points in the "greater" direction).
    """

    alternative: str

    def t_at(self, sizes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:  # pragma: no cover - abstract
        raise NotImplementedError

    @property
    def sign(self) -> int:
        return direction(self.alternative)

    def test_at(self, sizes: np.ndarray) -> FTest:
        """F-scale form: df1 = 1, df2 = ν, λ = δ² (exact for the two-sided test)."""
        df, delta = self.t_at(np.asarray(sizes, dtype=float))
        return FTest(df1=np.ones_like(df), df2=df, noncentrality=delta**2)

    def evaluate(self, sizes: np.ndarray, alpha: float) -> Evaluation:
        """Power at each row of ``sizes``: the F test with df1 = 1 two-sided, the noncentral t one-sided."""
        if self.sign == 0:
            return super().evaluate(sizes, alpha)
        from ..distributions import t_critical_value, t_test_power

        df, delta = self.t_at(np.asarray(sizes, dtype=float))
        df = np.atleast_1d(df)
        delta = np.atleast_1d(delta)
        power = np.full(df.shape, float(alpha))
        crit = np.full(df.shape, np.nan)
        ok = df >= 1  # rows without error df are only probed by the size checks
        if ok.any():
            crit[ok] = t_critical_value(alpha, df[ok])
            power[ok] = t_test_power(alpha, df[ok], self.sign * delta[ok], critical=crit[ok])
        return Evaluation(power, np.ones_like(df), df, delta**2, crit**2)

    def power_at_noncentrality(self, lam: np.ndarray, sizes_row: np.ndarray, alpha: float) -> np.ndarray:
        """Power at λ = δ² (array) with the df of ``sizes_row``; for the detectable-effect solve."""
        if self.sign == 0:
            return super().power_at_noncentrality(lam, sizes_row, alpha)
        from ..distributions import t_critical_value, t_test_power

        df = float(self.t_at(np.asarray(sizes_row, dtype=float).reshape(1, -1))[0][0])
        crit = t_critical_value(alpha, df)
        lam = np.maximum(np.asarray(lam, dtype=float), 0.0)
        return np.atleast_1d(t_test_power(alpha, df, np.sqrt(lam), critical=crit))

    def t_details(self, sizes: np.ndarray, alpha: float) -> dict:
        """The t-scale view at one row of sizes: ν, signed δ, critical t and rejection region."""
        from ..distributions import t_critical_value

        df, delta = self.t_at(np.asarray(sizes, dtype=float).reshape(1, -1))
        df, delta = float(df[0]), float(delta[0])
        if self.sign == 0:
            crit = float(t_critical_value(alpha / 2, df))
            region = f"|T| > {crit:.6g}"
        else:
            crit = float(self.sign * t_critical_value(alpha, df))
            region = f"T {'>' if self.sign > 0 else '<'} {crit:.6g}"
        return {
            "statistic": "t",
            "alternative": self.alternative,
            "df": df,
            "t_noncentrality": delta,
            "critical_t": crit,
            "rejection_region": region,
        }


@dataclass(frozen=True)
class TwoSampleT(TTestDesign):
    """Two independent groups compared by the pooled-variance t test.

    ``cohens_d`` is (μ₁ − μ₂)/σ; ``mean_difference`` and ``sd`` are kept when given (for
    reports and simulation).
    """

    ratios: np.ndarray
    cohens_d: float
    alternative: str = "two-sided"
    mean_difference: float | None = None
    sd: float | None = None
    effect_source: str = "cohens_d"

    groups = 2
    method_id = "two_sample_t.pooled"
    reference = REFERENCE

    @classmethod
    def create(cls, *, cohens_d=None, mean_difference=None, sd=None, allocation=None,
               alternative: str = "two-sided") -> TwoSampleT:
        """From Cohen's d, or from the mean difference μ₁ − μ₂ and the common SD."""
        ratios = normalised_allocation(allocation, 2)
        d, field, source = standardised_difference(cohens_d, mean_difference, sd)
        check_effect_sign(d, alternative, field, "mean difference μ₁ − μ₂")
        return cls(
            ratios=ratios, cohens_d=d, alternative=alternative,
            mean_difference=None if mean_difference is None else float(mean_difference),
            sd=None if sd is None else float(sd), effect_source=source,
        )

    def t_at(self, sizes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        sizes = np.asarray(sizes, dtype=float).reshape(-1, 2)
        n1, n2 = sizes[:, 0], sizes[:, 1]
        return n1 + n2 - 2, self.cohens_d / np.sqrt(1 / n1 + 1 / n2)


@dataclass(frozen=True)
class OneSampleT(TTestDesign):
    """One sample's mean compared with a reference value by the one-sample t test.

    ``cohens_d`` is μ_d/σ, μ_d the mean minus the reference value.
    """

    cohens_d: float
    alternative: str = "two-sided"
    mean_difference: float | None = None
    sd: float | None = None
    effect_source: str = "cohens_d"

    groups = 1
    ratios = np.ones(1)
    method_id = "one_sample_t"
    reference = REFERENCE

    @classmethod
    def create(cls, *, cohens_d=None, mean_difference=None, sd=None,
               alternative: str = "two-sided") -> OneSampleT:
        """From Cohen's d, or from the mean difference from the reference value and the SD."""
        d, field, source = standardised_difference(cohens_d, mean_difference, sd)
        check_effect_sign(d, alternative, field, "mean difference from the reference value")
        return cls(
            cohens_d=d, alternative=alternative,
            mean_difference=None if mean_difference is None else float(mean_difference),
            sd=None if sd is None else float(sd), effect_source=source,
        )

    def t_at(self, sizes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        n = np.asarray(sizes, dtype=float).reshape(-1, 1)[:, 0]
        return n - 1, self.cohens_d * np.sqrt(n)


def sd_of_differences(sd: float, correlation: float) -> float:
    """σ_d = σ √(2(1 − ρ)) for two measurements of SD σ and correlation ρ (Cohen 1988, §2.3)."""
    if not -1 < correlation < 1:
        raise InvalidParameter("design.correlation", correlation, "must be greater than -1 and less than 1")
    return float(sd) * math.sqrt(2.0 * (1.0 - float(correlation)))


@dataclass(frozen=True)
class PairedT(TTestDesign):
    """n pairs compared by the paired t test (the one-sample t on the differences).

    ``cohens_dz`` is μ_d/σ_d; σ_d is known when ``sd_difference`` or ``sd`` with
    ``correlation`` were given.
    """

    cohens_dz: float
    alternative: str = "two-sided"
    mean_difference: float | None = None
    sd_difference: float | None = None
    sd: float | None = None
    correlation: float | None = None
    effect_source: str = "cohens_dz"

    groups = 1
    ratios = np.ones(1)
    method_id = "paired_t"
    reference = REFERENCE

    @classmethod
    def create(cls, *, cohens_dz=None, mean_difference=None, sd_difference=None, sd=None,
               correlation=None, alternative: str = "two-sided") -> PairedT:
        """From d_z, or from μ_d with σ_d, or from μ_d with σ and ρ (σ_d = σ√(2(1 − ρ)))."""
        sigma_d = None
        if sd_difference is not None:
            sigma_d = float(sd_difference)
        elif sd is not None and correlation is not None:
            sigma_d = sd_of_differences(sd, correlation)
        if cohens_dz is not None:
            dz, field, source = float(cohens_dz), "design.cohens_dz", "cohens_dz"
            check_standardised(dz, field, "d_z")
        else:
            if mean_difference is None or sigma_d is None or not sigma_d > 0:
                raise InvalidParameter(
                    "design.sd_difference", sd_difference,
                    "mean_difference needs the SD of the differences: sd_difference, or sd with correlation",
                )
            dz, field, source = float(mean_difference) / sigma_d, "design.mean_difference", "mean_difference"
            check_standardised(dz, field, "d_z = mean_difference/σ_d", raw=mean_difference)
        check_effect_sign(dz, alternative, field, "mean difference")
        return cls(
            cohens_dz=dz, alternative=alternative,
            mean_difference=None if mean_difference is None else float(mean_difference),
            sd_difference=sigma_d, sd=None if sd is None else float(sd),
            correlation=None if correlation is None else float(correlation), effect_source=source,
        )

    def t_at(self, sizes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        n = np.asarray(sizes, dtype=float).reshape(-1, 1)[:, 0]
        return n - 1, self.cohens_dz * np.sqrt(n)
