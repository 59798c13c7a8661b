"""HTTP adapter for pairwise comparisons of group means: its schema and reports."""

from __future__ import annotations

import math

import numpy as np
from marshmallow import ValidationError, validates_schema

from ...core.designs.pairwise import ADJUSTMENTS, PairwiseComparisons
from ...core.distributions import f_critical_value
from ..fields import Bounded, StrictInteger, StrictSchema, choice
from .common import Layout, allocation_field, group_count, means_field, sd_field

EFFECT_FIELDS = ("group_means",)
#: Most groups: all pairs of 30 groups are 435 comparisons, each reported.
MAX_PAIRWISE_GROUPS = 30


class PairwiseComparisonsDesignSchema(StrictSchema):
    """Every pair of groups (or every group against a control) compared by a two-sided t test."""

    type = choice(["pairwise_comparisons"], required=True, metadata={"description": "Design family."})
    group_means = means_field("Expected mean of each group, in data units (with `sd`).", max_items=MAX_PAIRWISE_GROUPS)
    sd = sd_field("Common within-group (error) standard deviation σ, in data units.")
    groups = StrictInteger(
        validate=Bounded(min=2, max=MAX_PAIRWISE_GROUPS),
        metadata={"description": "Number of groups k (implied by `group_means`; needed without it for "
                                 "detectable-effect unless `allocation` or `group_sizes` imply it)."},
    )
    adjustment = choice(
        list(ADJUSTMENTS), load_default="bonferroni",
        metadata={"description": "Familywise adjustment of the per-comparison level for m comparisons: "
                                 "`bonferroni` α/m (default), `sidak` 1 − (1 − α)^(1/m), or `none` α.",
                  "default": "bonferroni"},
    )
    control_group = StrictInteger(
        validate=Bounded(min=0, max=MAX_PAIRWISE_GROUPS - 1),
        metadata={"description": "0-based index of a control group: compare every other group with it "
                                 "(k − 1 comparisons) instead of all k(k − 1)/2 pairs."},
    )
    allocation = allocation_field(max_items=MAX_PAIRWISE_GROUPS)

    @validates_schema
    def _shape(self, data, **kwargs):
        k = None
        if "group_means" in data:
            k = len(data["group_means"])
            if "groups" in data and data["groups"] != k:
                raise ValidationError(f"must equal the number of group_means ({k}) (got {data['groups']})", "groups")
            if "sd" not in data:
                raise ValidationError("is required with group_means", "sd")
        elif "groups" in data:
            k = data["groups"]
        elif "allocation" in data:
            k = len(data["allocation"])
        if k is not None and "allocation" in data and len(data["allocation"]) != k:
            raise ValidationError(f"needs one ratio per group ({k}) (got {len(data['allocation'])})", "allocation")
        if k is not None and "control_group" in data and not data["control_group"] < k:
            raise ValidationError(
                f"must be the 0-based index of a group, 0 to {k - 1} (got {data['control_group']})", "control_group"
            )


class PairwiseComparisonsAdapter:
    """Turns validated pairwise fields into a core design and its per-comparison reports."""

    type = "pairwise_comparisons"
    schema = PairwiseComparisonsDesignSchema
    method_id = PairwiseComparisons.method_id
    reference = PairwiseComparisons.reference
    title = "Pairwise comparisons of group means (t tests with a familywise adjustment)"
    formula = (
        "for each compared pair (i, j): ν = N − k, δ_ij = (μ_j − μ_i)/(σ√(1/n_i + 1/n_j)), power_ij = "
        "P(F'(1, ν, δ_ij²) > F_crit(1, ν; α′)), α′ = α/m (Bonferroni), 1 − (1 − α)^(1/m) (Šidák) or α; "
        "the design's power is the smallest power_ij"
    )
    effect_fields = EFFECT_FIELDS
    #: Invented example: three kiln temperatures, tile strengths 50, 55 and 60 with an SD of 8.
    example = {"type": "pairwise_comparisons", "groups": 3, "group_means": [50, 55, 60], "sd": 8,
               "adjustment": "bonferroni"}
    example_sizes = 30
    assumptions = (
        "Observations are independent, within and between groups.",
        "Within each group the response is normally distributed with the same SD σ.",
        "Each comparison uses the error SD pooled over all k groups (error df N − k).",
        "The power reported is that of each comparison separately and of the weakest one; the chance "
        "that every comparison rejects at once is lower.",
        "The assumed means are the true ones; power is only as good as that assumption.",
    )

    def groups_of(self, fields: dict, sizes_count: int | None) -> int:
        """k from the design fields, or from the number of group sizes."""
        return group_count(fields, sizes_count, MAX_PAIRWISE_GROUPS)

    def build(self, fields: dict, sizes_count: int | None) -> PairwiseComparisons:
        """The core design, for power and sample-size questions."""
        if "group_means" not in fields:
            raise ValidationError("is required (the expected mean of every group, with sd)", "design.group_means")
        self.groups_of(fields, sizes_count)
        return PairwiseComparisons.from_means(
            fields["group_means"], fields["sd"], fields["adjustment"], fields.get("control_group"),
            fields.get("allocation"),
        )

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Groups, comparisons, adjustment and SD, for the detectable-effect question."""
        if "group_means" in fields:
            raise ValidationError(
                "is what detectable-effect solves for; leave the means out and give groups", "design.group_means"
            )
        k = self.groups_of(fields, sizes_count)
        probe = PairwiseComparisons.layout(k, fields["adjustment"], fields.get("control_group"),
                                           fields.get("allocation"))
        return Layout(design=probe, sd=fields.get("sd"))

    def effect_report(self, design: PairwiseComparisons, sizes: np.ndarray) -> dict:
        """The smallest comparison's groups, d and difference, and the number of comparisons."""
        worst = design.worst_pair(sizes)
        first, second = (int(v) for v in design.pairs[worst])
        z = design.standardised_means
        report = {
            "comparisons": design.comparisons,
            "smallest_comparison": [first, second],
            "cohens_d": float(z[second] - z[first]),
        }
        if design.means is not None:
            report["mean_difference"] = float(design.means[second] - design.means[first])
        report["t_noncentrality"] = float(design.deltas_at(sizes)[0, worst])
        return report

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The smallest difference detectable for the worst-placed pair, in d and (with an SD) data units."""
        design: PairwiseComparisons = layout.design
        scales = design.pair_scales(sizes)[0]
        worst = int(np.argmax(scales))
        delta = math.sqrt(noncentrality)
        d = delta * float(scales[worst])
        report = {
            "comparisons": design.comparisons,
            "smallest_comparison": [int(v) for v in design.pairs[worst]],
            "cohens_d": d,
            "t_noncentrality": delta,
        }
        if layout.sd is not None:
            report["mean_difference"] = d * layout.sd
        return report

    def extras(self, design: PairwiseComparisons, sizes: np.ndarray, alpha: float) -> dict:
        """Per-comparison powers, the smallest one, and the adjusted level."""
        a = design.alpha_per_comparison(alpha)
        df = float(sizes.sum() - design.groups)
        items = design.comparison_powers(sizes, alpha)
        worst = design.worst_pair(sizes)
        return {
            "adjustment": design.adjustment,
            "comparisons": design.comparisons,
            "control_group": design.control,
            "alpha_per_comparison": a,
            "df": df,
            "critical_t": float(math.sqrt(f_critical_value(a, 1.0, df))),
            "smallest_power": items[worst]["power"],
            "smallest_comparison": items[worst]["groups"],
            "comparison_powers": items,
        }

    def warnings(self, design, sizes: np.ndarray) -> list[str]:
        out = []
        if sizes.min() < 5:
            out.append(
                f"The smallest group has {int(sizes.min())} units: with so few, the t tests' robustness "
                "to non-normal errors and unequal variances is weak."
            )
        if design is not None:
            z = design.standardised_means
            equal = [
                [int(i), int(j)] for i, j in design.pairs if z[i] == z[j]
            ]
            if equal and design.means is not None:
                out.append(
                    f"Compared groups with equal means ({', '.join(map(str, equal[:5]))}"
                    f"{', …' if len(equal) > 5 else ''}): such a comparison's power is its level α′ at every "
                    "size, so no sample size makes the smallest comparison reach a target."
                )
            if design.adjustment == "none" and design.comparisons > 1:
                out.append(
                    f"No adjustment for {design.comparisons} comparisons: the chance of at least one false "
                    f"positive is up to {design.comparisons} times α."
                )
        return out
