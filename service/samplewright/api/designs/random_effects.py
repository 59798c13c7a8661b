"""HTTP adapter for the one-way random-effects ANOVA: its schema and its reports."""

from __future__ import annotations

import numpy as np
from marshmallow import ValidationError, validates_schema

from ...core.designs.random_effects import RandomEffectsAnova, icc_from_theta, theta_from_icc
from ..fields import Bounded, StrictFloat, StrictInteger, StrictSchema, choice
from .common import MAX_GROUPS, Layout

EFFECT_FIELDS = ("variance_ratio", "icc")
#: Largest variance ratio θ accepted (an ICC of 0.999); power is 1 long before.
MAX_VARIANCE_RATIO = 1000.0
MAX_ICC = 0.999


class RandomEffectsAnovaDesignSchema(StrictSchema):
    """One-way random effects: k sampled groups of n units; F test of σ²_between = 0 (exact, central F)."""

    type = choice(["random_effects_anova"], required=True, metadata={"description": "Design family."})
    groups = StrictInteger(
        required=True, validate=Bounded(min=2, max=MAX_GROUPS),
        metadata={"description": "Number of groups k sampled (batches, operators, sites, …)."},
    )
    variance_ratio = StrictFloat(
        validate=Bounded(min=0, max=MAX_VARIANCE_RATIO),
        metadata={"description": "θ = σ²_between/σ²_within, the between-group variance over the within-group "
                                 "variance (or give `icc`)."},
    )
    icc = StrictFloat(
        validate=Bounded(min=0, max=MAX_ICC),
        metadata={"description": "Intraclass correlation ρ = θ/(1 + θ), the share of the total variance "
                                 "between groups; below 1 (or give `variance_ratio`)."},
    )

    @validates_schema
    def _one_effect(self, data, **kwargs):
        given = [name for name in EFFECT_FIELDS if name in data]
        if len(given) > 1:
            raise ValidationError(f"give at most one of {', '.join(EFFECT_FIELDS)} (got both)", "icc")


class RandomEffectsAnovaAdapter:
    """Turns validated random-effects fields into a core design and its reports."""

    type = "random_effects_anova"
    schema = RandomEffectsAnovaDesignSchema
    method_id = RandomEffectsAnova.method_id
    reference = RandomEffectsAnova.reference
    title = "One-way random-effects ANOVA: F test of the between-group variance"
    formula = (
        "θ = σ²_between/σ²_within (= icc/(1 − icc)); F/(1 + nθ) ~ F(k − 1, k(n − 1)), so "
        "power = P(F(k − 1, k(n − 1)) > F_crit(α)/(1 + nθ)) under the central F (exact); "
        "the reported noncentrality is θ"
    )
    effect_fields = EFFECT_FIELDS
    #: Invented example: six production batches sampled, 10 tablets assayed per batch, batch
    #: variance a quarter of the within-batch variance.
    example = {"type": "random_effects_anova", "groups": 6, "variance_ratio": 0.25}
    example_sizes = 10
    assumptions = (
        "The groups are a random sample from a population of groups; conclusions are about that population.",
        "Group effects are normally distributed with variance σ²_between, independent of the errors.",
        "Errors are independent and normally distributed with the same variance σ²_within in every group.",
        "Every group has the same number of units (the power is exact only for equal sizes).",
    )

    def _check_count(self, fields: dict, sizes_count: int | None) -> None:
        if sizes_count is not None and sizes_count != fields["groups"]:
            raise ValidationError(
                f"needs one size per group ({fields['groups']}) (got {sizes_count})", "group_sizes"
            )

    def build(self, fields: dict, sizes_count: int | None) -> RandomEffectsAnova:
        """The core design, for power and sample-size questions."""
        self._check_count(fields, sizes_count)
        if "variance_ratio" in fields:
            return RandomEffectsAnova.from_theta(fields["groups"], fields["variance_ratio"])
        if "icc" in fields:
            return RandomEffectsAnova.from_theta(fields["groups"], theta_from_icc(fields["icc"]), source="icc")
        raise ValidationError(f"give exactly one of {', '.join(EFFECT_FIELDS)}", "design")

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """The number of groups, for the detectable-effect question."""
        given = [name for name in EFFECT_FIELDS if name in fields]
        if given:
            raise ValidationError(
                "is what detectable-effect solves for; leave the effect out of the design", f"design.{given[0]}"
            )
        self._check_count(fields, sizes_count)
        return Layout(design=RandomEffectsAnova.from_theta(fields["groups"], 0.0), sd=None)

    def effect_report(self, design: RandomEffectsAnova, sizes: np.ndarray) -> dict:
        """θ, the ICC and the factor 1 + nθ by which the F ratio is inflated."""
        return {
            "variance_ratio": design.theta,
            "icc": float(icc_from_theta(design.theta)),
            "scale_factor": 1.0 + float(sizes[0]) * design.theta,
        }

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable variance ratio θ and ICC."""
        return {
            "variance_ratio": noncentrality,
            "icc": float(icc_from_theta(noncentrality)),
            "scale_factor": 1.0 + float(sizes[0]) * noncentrality,
        }

    def extras(self, design: RandomEffectsAnova, sizes: np.ndarray, alpha: float) -> dict:
        """What adding groups, rather than units per group, would do to the power."""
        return {
            "noncentrality_is": "variance_ratio",
            "more_groups_or_more_units": design.power_table(int(sizes[0]), alpha),
        }

    def warnings(self, design, sizes: np.ndarray) -> list[str]:
        out = []
        k = len(sizes)
        if k < 5:
            out.append(
                f"Only {k} groups: the between-group variance rests on {k - 1} degrees of freedom, so power "
                "grows slowly with units per group; adding groups usually helps more (see details)."
            )
        if design is not None and design.theta == 0:
            out.append("The variance ratio is 0: the power equals alpha at every size.")
        return out
