"""HTTP adapter for a planned contrast in a one-way layout: its schema and reports."""

from __future__ import annotations

import math

import numpy as np
from marshmallow import ValidationError, validates_schema

from ...core.designs.contrast import SUM_TOLERANCE, Contrast
from ..fields import Bounded, BoundedList, StrictFloat, StrictSchema, choice
from .common import (
    MAX_GROUPS,
    Layout,
    allocation_field,
    means_field,
    sd_field,
)
from .t_tests import TFamilyAdapter, alternative_field

EFFECT_FIELDS = ("group_means",)
#: Largest absolute contrast coefficient (the scale does not matter; only the ratios do).
COEFFICIENT_BOUND = 1e6


def _sums_to_zero(values: list[float]) -> None:
    scale = sum(abs(v) for v in values)
    if scale == 0:
        raise ValidationError("at least two coefficients must be nonzero (got all zeros)")
    total = math.fsum(values)
    if abs(total) > SUM_TOLERANCE * scale:
        raise ValidationError(f"must sum to zero for a contrast (they sum to {total:.6g})")


class ContrastDesignSchema(StrictSchema):
    """A planned 1-df contrast ψ = Σ c_i μ_i among the groups of a one-way layout, tested by its t."""

    type = choice(["contrast"], required=True, metadata={"description": "Design family."})
    group_means = means_field("Expected mean of each group, in data units (with `sd`).")
    sd = sd_field("Common within-group (error) standard deviation σ, in data units.")
    coefficients = BoundedList(
        StrictFloat(validate=Bounded(min=-COEFFICIENT_BOUND, max=COEFFICIENT_BOUND)),
        min_items=2, max_items=MAX_GROUPS, required=True,
        validate=[_sums_to_zero],
        metadata={"description": "Contrast coefficients c_i, one per group, summing to zero "
                                 f"(to within {SUM_TOLERANCE:g} of Σ|c_i|); e.g. [-1, 0.5, 0.5] compares "
                                 "group 1 with the average of groups 2 and 3."},
    )
    allocation = allocation_field()
    alternative = alternative_field()

    @validates_schema
    def _shape(self, data, **kwargs):
        if "coefficients" not in data:
            return
        k = len(data["coefficients"])
        if "group_means" in data:
            if len(data["group_means"]) != k:
                raise ValidationError(
                    f"needs one coefficient per group ({len(data['group_means'])} group_means) (got {k})",
                    "coefficients",
                )
            if "sd" not in data:
                raise ValidationError("is required with group_means", "sd")
        if "allocation" in data and len(data["allocation"]) != k:
            raise ValidationError(f"needs one ratio per group ({k}) (got {len(data['allocation'])})", "allocation")


class ContrastAdapter(TFamilyAdapter):
    """Turns validated contrast fields into a core design and its effect reports."""

    type = "contrast"
    schema = ContrastDesignSchema
    method_id = Contrast.method_id
    reference = Contrast.reference
    title = "Planned contrast among group means (1-df t test in a one-way layout)"
    formula = (
        "ψ = Σ c_i μ_i (Σ c_i = 0), ν = N − k, δ = ψ/(σ√(Σ c_i²/n_i)); two-sided: power = "
        "P(F'(1, ν, δ²) > F_crit(1, ν; α)); one-sided: power = P(T'(ν, ±δ) > t_α)"
    )
    effect_fields = EFFECT_FIELDS
    #: Invented example: a control (20) against the average of two treatments (22, 25), SD 6.
    example = {"type": "contrast", "group_means": [20, 22, 25], "sd": 6, "coefficients": [-1, 0.5, 0.5]}
    example_sizes = 15
    assumptions = (
        "Observations are independent, within and between groups.",
        "Within each group the response is normally distributed with the same SD σ.",
        "The contrast is planned before the data are seen; for contrasts chosen after looking, "
        "the error rate needs a multiple-comparison adjustment.",
        "The error SD is pooled over all k groups (error df N − k), as in the one-way ANOVA.",
        "The assumed means are the true ones; power is only as good as that assumption.",
    )

    def _check_count(self, k: int, sizes_count: int | None) -> None:
        if sizes_count is not None and sizes_count != k:
            raise ValidationError(f"needs one size per group ({k} coefficients) (got {sizes_count})", "group_sizes")

    def build(self, fields: dict, sizes_count: int | None) -> Contrast:
        """The core design, for power and sample-size questions."""
        if "group_means" not in fields:
            raise ValidationError("is required (the expected mean of every group, with sd)", "design.group_means")
        self._check_count(len(fields["coefficients"]), sizes_count)
        return Contrast.from_means(
            fields["group_means"], fields["sd"], fields["coefficients"], fields.get("allocation"),
            fields["alternative"],
        )

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Coefficients, allocation, alternative and SD, for the detectable-effect question."""
        if "group_means" in fields:
            raise ValidationError(
                "is what detectable-effect solves for; leave the means out and give the coefficients",
                "design.group_means",
            )
        self._check_count(len(fields["coefficients"]), sizes_count)
        probe = Contrast.layout(fields["coefficients"], fields.get("allocation"), fields["alternative"])
        return Layout(design=probe, sd=fields.get("sd"))

    def effect_report(self, design: Contrast, sizes: np.ndarray) -> dict:
        """ψ in data units and in SD units, and δ at these sizes."""
        report = {}
        if design.sd is not None:
            report["contrast_value"] = design.psi_over_sd * design.sd
        report["standardised_contrast"] = design.psi_over_sd
        report["t_noncentrality"] = float(design.t_at(sizes.reshape(1, -1))[1][0])
        return report

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable ψ/σ = δ√(Σ c_i²/n_i) (negative for "less"), ψ with an SD, and δ."""
        design: Contrast = layout.design
        delta = self._sign(design.alternative) * math.sqrt(noncentrality)
        standardised = delta * float(design.scale_at(sizes.reshape(1, -1))[0])
        report = {"standardised_contrast": standardised, "t_noncentrality": delta}
        if layout.sd is not None:
            report["contrast_value"] = standardised * layout.sd
        return report

    def extras(self, design: Contrast, sizes: np.ndarray, alpha: float) -> dict:
        """The t-scale view and the coefficients used."""
        return {**design.t_details(sizes, alpha), "coefficients": design.coefficients.tolist()}
