"""HTTP adapters for the t tests: two independent samples, one sample, paired samples."""

from __future__ import annotations

import math

import numpy as np
from marshmallow import ValidationError, validates_schema

from ...core.designs.base import normalised_allocation
from ...core.designs.t_tests import (
    ALTERNATIVES,
    MAX_STANDARDISED_EFFECT,
    OneSampleT,
    PairedT,
    TTestDesign,
    TwoSampleT,
    sd_of_differences,
)
from ..fields import Bounded, StrictFloat, StrictSchema, choice
from .common import MEAN_BOUND, SD_BOUND, Layout, allocation_field

_ONE_SIDED_FORMULA = (
    "two-sided: power = P(F'(1, ν, δ²) > F_crit(1, ν; α)); one-sided: power = P(T'(ν, ±δ) > t_α), "
    "T' the noncentral t"
)


def alternative_field():
    return choice(
        list(ALTERNATIVES),
        load_default="two-sided",
        metadata={
            "description": "Alternative hypothesis: `two-sided` (default), `greater` (the effect is positive) "
            "or `less` (negative). A one-sided test needs an effect of the matching sign.",
            "default": "two-sided",
        },
    )


def standardised_field(name: str, description: str):
    return StrictFloat(
        validate=Bounded(min=-MAX_STANDARDISED_EFFECT, max=MAX_STANDARDISED_EFFECT),
        metadata={"description": description},
    )


def mean_difference_field(description: str):
    return StrictFloat(validate=Bounded(min=-MEAN_BOUND, max=MEAN_BOUND), metadata={"description": description})


def sd_field(description: str):
    return StrictFloat(validate=Bounded(min=0, max=SD_BOUND, min_inclusive=False), metadata={"description": description})


def _one_of(data: dict, names: tuple[str, ...]) -> None:
    given = [name for name in names if name in data]
    if len(given) > 1:
        raise ValidationError(f"give exactly one of {' and '.join(names)} (got {', '.join(given)})", given[-1])


def _reject_effect(fields: dict, effect_fields: tuple[str, ...]) -> None:
    given = [name for name in effect_fields if name in fields]
    if given:
        raise ValidationError(
            "is what detectable-effect solves for; leave the effect out of the design", f"design.{given[0]}"
        )


def _check_count(sizes_count: int | None, expected: int, what: str) -> None:
    if sizes_count is not None and sizes_count != expected:
        raise ValidationError(f"{what} (got {sizes_count})", "group_sizes")


class _EffectInSdUnits(StrictSchema):
    """The effect as Cohen's d, or as a mean difference with its SD (two- and one-sample t)."""

    @validates_schema
    def _effect(self, data, **kwargs):
        _one_of(data, ("cohens_d", "mean_difference"))
        if "mean_difference" in data and "sd" not in data:
            raise ValidationError("is required with mean_difference", "sd")


class TFamilyAdapter:
    """What the three t adapters share: reports on the t scale and warnings."""

    effect_fields: tuple[str, ...] = ()

    @staticmethod
    def _sign(alternative: str) -> float:
        return -1.0 if alternative == "less" else 1.0

    def extras(self, design: TTestDesign, sizes: np.ndarray, alpha: float) -> dict:
        """The t-scale view: ν, signed δ, critical t and rejection region."""
        return design.t_details(sizes, alpha)

    def warnings(self, design, sizes: np.ndarray) -> list[str]:
        out = []
        if sizes.min() < 5:
            out.append(
                f"The smallest group has {int(sizes.min())} units: with so few, the t test's robustness "
                "to non-normal errors is weak."
            )
        if design is not None and design.alternative != "two-sided":
            out.append(
                f"A one-sided test ({design.alternative}): it has power only for an effect in that direction; "
                "the direction must be chosen before the data are seen."
            )
        return out


# -- two independent samples ------------------------------------------------------------


class TwoSampleTDesignSchema(_EffectInSdUnits):
    """Two independent groups compared by the pooled-variance t test of μ₁ − μ₂."""

    type = choice(["two_sample_t"], required=True, metadata={"description": "Design family."})
    cohens_d = standardised_field("cohens_d", "Cohen's d = (μ₁ − μ₂)/σ, the standardised mean difference.")
    mean_difference = mean_difference_field(
        "Expected mean of group 1 minus that of group 2, in data units (with `sd`)."
    )
    sd = sd_field("Common within-group standard deviation σ, in data units.")
    allocation = allocation_field(min_items=2, max_items=2)
    alternative = alternative_field()


class TwoSampleTAdapter(TFamilyAdapter):
    """Turns validated two-sample fields into a core design and its effect reports."""

    type = "two_sample_t"
    schema = TwoSampleTDesignSchema
    method_id = TwoSampleT.method_id
    reference = TwoSampleT.reference
    title = "Two-sample t test (independent groups, pooled variance)"
    formula = "ν = n₁ + n₂ − 2, δ = Δ/(σ√(1/n₁ + 1/n₂)) = d/√(1/n₁ + 1/n₂); " + _ONE_SIDED_FORMULA
    effect_fields = ("cohens_d", "mean_difference")
    #: Invented example: two diets, weight gain differing by 4 g with an SD of 8 g (d = 0.5).
    example = {"type": "two_sample_t", "mean_difference": 4, "sd": 8}
    example_sizes = 40
    assumptions = (
        "Observations are independent, within and between the two groups.",
        "Within each group the response is normally distributed.",
        "Both groups have the same standard deviation σ (pooled-variance t test).",
        "The assumed effect is the true effect; power is only as good as that assumption.",
    )

    def build(self, fields: dict, sizes_count: int | None) -> TwoSampleT:
        """The core design, for power and sample-size questions."""
        _check_count(sizes_count, 2, "needs two sizes, group 1 then group 2")
        if not any(name in fields for name in self.effect_fields):
            raise ValidationError("give cohens_d, or mean_difference with sd", "design")
        return TwoSampleT.create(
            cohens_d=fields.get("cohens_d"), mean_difference=fields.get("mean_difference"), sd=fields.get("sd"),
            allocation=fields.get("allocation"), alternative=fields["alternative"],
        )

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Allocation, alternative and SD, for the detectable-effect question."""
        _reject_effect(fields, self.effect_fields)
        _check_count(sizes_count, 2, "needs two sizes, group 1 then group 2")
        probe = TwoSampleT(ratios=normalised_allocation(fields.get("allocation"), 2), cohens_d=0.0,
                           alternative=fields["alternative"])
        return Layout(design=probe, sd=fields.get("sd"))

    def effect_report(self, design: TwoSampleT, sizes: np.ndarray) -> dict:
        """Cohen's d, the mean difference when an SD is known, and δ at these sizes."""
        report = {"cohens_d": design.cohens_d}
        if design.sd is not None:
            report["mean_difference"] = (
                design.mean_difference if design.mean_difference is not None else design.cohens_d * design.sd
            )
        report["t_noncentrality"] = float(design.t_at(sizes.reshape(1, -1))[1][0])
        return report

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable d (negative for "less"), in data units with an SD, and δ."""
        delta = self._sign(layout.design.alternative) * math.sqrt(noncentrality)
        d = delta * math.sqrt(1.0 / sizes[0] + 1.0 / sizes[1])
        report = {"cohens_d": d, "t_noncentrality": delta}
        if layout.sd is not None:
            report["mean_difference"] = d * layout.sd
        return report

    def warnings(self, design, sizes: np.ndarray) -> list[str]:
        out = super().warnings(design, sizes)
        if sizes[0] != sizes[1]:
            out.append(
                "The groups have unequal sizes: the pooled t test is then sensitive to unequal variances "
                "(welch_anova with two groups does not assume them equal)."
            )
        return out


# -- one sample -------------------------------------------------------------------------


class OneSampleTDesignSchema(_EffectInSdUnits):
    """One sample's mean against a reference value by the one-sample t test (n = subjects)."""

    type = choice(["one_sample_t"], required=True, metadata={"description": "Design family."})
    mean_difference = mean_difference_field(
        "Expected mean minus the reference value, in data units (with `sd`)."
    )
    sd = sd_field("Standard deviation σ of the observations, in data units.")
    cohens_d = standardised_field("cohens_d", "Cohen's d = (μ − μ₀)/σ, the standardised difference from the reference value.")
    alternative = alternative_field()


class OneSampleTAdapter(TFamilyAdapter):
    """Turns validated one-sample fields into a core design and its effect reports."""

    type = "one_sample_t"
    schema = OneSampleTDesignSchema
    method_id = OneSampleT.method_id
    reference = OneSampleT.reference
    title = "One-sample t test (mean against a reference value)"
    formula = "ν = n − 1, δ = μ_d√n/σ = d√n; " + _ONE_SIDED_FORMULA
    effect_fields = ("mean_difference", "cohens_d")
    #: Invented example: fill weights expected 2.5 g above the label, SD 10 g, testing for an excess.
    example = {"type": "one_sample_t", "mean_difference": 2.5, "sd": 10, "alternative": "greater"}
    example_sizes = 50
    assumptions = (
        "Observations are independent.",
        "The response is normally distributed.",
        "The reference value is a known constant, not an estimate.",
        "n_per_group (or the single group size) is the number of subjects.",
        "The assumed effect is the true effect; power is only as good as that assumption.",
    )

    def build(self, fields: dict, sizes_count: int | None) -> OneSampleT:
        """The core design, for power and sample-size questions."""
        _check_count(sizes_count, 1, "has one entry for this design: the number of subjects")
        if not any(name in fields for name in self.effect_fields):
            raise ValidationError("give mean_difference with sd, or cohens_d", "design")
        return OneSampleT.create(
            cohens_d=fields.get("cohens_d"), mean_difference=fields.get("mean_difference"), sd=fields.get("sd"),
            alternative=fields["alternative"],
        )

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Alternative and SD, for the detectable-effect question."""
        _reject_effect(fields, self.effect_fields)
        _check_count(sizes_count, 1, "has one entry for this design: the number of subjects")
        return Layout(design=OneSampleT(cohens_d=0.0, alternative=fields["alternative"]), sd=fields.get("sd"))

    def effect_report(self, design: OneSampleT, sizes: np.ndarray) -> dict:
        """Cohen's d, the difference in data units when an SD is known, and δ at n."""
        report = {"cohens_d": design.cohens_d}
        if design.sd is not None:
            report["mean_difference"] = (
                design.mean_difference if design.mean_difference is not None else design.cohens_d * design.sd
            )
        report["t_noncentrality"] = float(design.t_at(sizes.reshape(1, -1))[1][0])
        return report

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable d = δ/√n (negative for "less"), in data units with an SD, and δ."""
        delta = self._sign(layout.design.alternative) * math.sqrt(noncentrality)
        d = delta / math.sqrt(float(sizes[0]))
        report = {"cohens_d": d, "t_noncentrality": delta}
        if layout.sd is not None:
            report["mean_difference"] = d * layout.sd
        return report


# -- paired samples ---------------------------------------------------------------------


class PairedTDesignSchema(StrictSchema):
    """n pairs (two measurements per subject) compared by the paired t test (n = pairs)."""

    type = choice(["paired_t"], required=True, metadata={"description": "Design family."})
    mean_difference = mean_difference_field(
        "Expected mean of the within-pair differences (first minus second measurement), in data units "
        "(with `sd_difference`, or with `sd` and `correlation`)."
    )
    sd_difference = sd_field("Standard deviation σ_d of the within-pair differences, in data units.")
    sd = sd_field("Standard deviation σ of each measurement (with `correlation`; σ_d = σ√(2(1 − ρ))).")
    correlation = StrictFloat(
        validate=Bounded(min=-1, max=1, min_inclusive=False, max_inclusive=False),
        metadata={"description": "Correlation ρ between the two measurements of a pair (with `sd`), "
                                 "strictly between −1 and 1."},
    )
    cohens_dz = standardised_field("cohens_dz", "Cohen's d_z = μ_d/σ_d, the standardised mean difference of the pairs.")
    alternative = alternative_field()

    @validates_schema
    def _effect(self, data, **kwargs):
        _one_of(data, ("cohens_dz", "mean_difference"))
        if "sd_difference" in data and ("sd" in data or "correlation" in data):
            raise ValidationError("give either sd_difference, or sd with correlation, not both", "sd_difference")
        if "sd" in data and "correlation" not in data:
            raise ValidationError("is required with sd (σ_d = σ√(2(1 − ρ)))", "correlation")
        if "correlation" in data and "sd" not in data:
            raise ValidationError("is required with correlation (σ_d = σ√(2(1 − ρ)))", "sd")
        if "mean_difference" in data and "sd_difference" not in data and "sd" not in data:
            raise ValidationError("is required with mean_difference (or give sd with correlation)", "sd_difference")


class PairedTAdapter(TFamilyAdapter):
    """Turns validated paired fields into a core design and its effect reports."""

    type = "paired_t"
    schema = PairedTDesignSchema
    method_id = PairedT.method_id
    reference = PairedT.reference
    title = "Paired t test (two measurements per subject)"
    formula = "ν = n − 1 (n pairs), δ = μ_d√n/σ_d = d_z√n, σ_d = σ√(2(1 − ρ)); " + _ONE_SIDED_FORMULA
    effect_fields = ("mean_difference", "cohens_dz")
    #: Invented example: grip strength before and after a programme, 3 kg gain, SD 10 kg, ρ = 0.6.
    example = {"type": "paired_t", "mean_difference": 3, "sd": 10, "correlation": 0.6}
    example_sizes = 30
    assumptions = (
        "Pairs are independent of one another.",
        "The within-pair differences are normally distributed.",
        "n_per_group (or the single group size) is the number of pairs.",
        "With sd and correlation: both measurements have the same SD σ and correlation ρ.",
        "The assumed effect is the true effect; power is only as good as that assumption.",
    )

    @staticmethod
    def _sd_of_differences(fields: dict) -> float | None:
        if "sd_difference" in fields:
            return fields["sd_difference"]
        if "sd" in fields and "correlation" in fields:
            return sd_of_differences(fields["sd"], fields["correlation"])
        return None

    def build(self, fields: dict, sizes_count: int | None) -> PairedT:
        """The core design, for power and sample-size questions."""
        _check_count(sizes_count, 1, "has one entry for this design: the number of pairs")
        if not any(name in fields for name in self.effect_fields):
            raise ValidationError("give mean_difference with sd_difference (or sd and correlation), or cohens_dz",
                                  "design")
        return PairedT.create(
            cohens_dz=fields.get("cohens_dz"), mean_difference=fields.get("mean_difference"),
            sd_difference=fields.get("sd_difference"), sd=fields.get("sd"), correlation=fields.get("correlation"),
            alternative=fields["alternative"],
        )

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Alternative and σ_d, for the detectable-effect question."""
        _reject_effect(fields, self.effect_fields)
        _check_count(sizes_count, 1, "has one entry for this design: the number of pairs")
        probe = PairedT(cohens_dz=0.0, alternative=fields["alternative"])
        return Layout(design=probe, sd=self._sd_of_differences(fields))

    def effect_report(self, design: PairedT, sizes: np.ndarray) -> dict:
        """d_z, the mean difference and σ_d when known, and δ at n."""
        report = {"cohens_dz": design.cohens_dz}
        if design.sd_difference is not None:
            report["mean_difference"] = (
                design.mean_difference if design.mean_difference is not None
                else design.cohens_dz * design.sd_difference
            )
            report["sd_difference"] = design.sd_difference
        report["t_noncentrality"] = float(design.t_at(sizes.reshape(1, -1))[1][0])
        return report

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable d_z = δ/√n (negative for "less"), in data units with σ_d, and δ."""
        delta = self._sign(layout.design.alternative) * math.sqrt(noncentrality)
        dz = delta / math.sqrt(float(sizes[0]))
        report = {"cohens_dz": dz, "t_noncentrality": delta}
        if layout.sd is not None:
            report["mean_difference"] = dz * layout.sd
            report["sd_difference"] = layout.sd
        return report
