"""HTTP adapter for Welch's ANOVA (unequal variances): its schema and reports."""

from __future__ import annotations

import math

import numpy as np
from marshmallow import ValidationError, validates_schema

from ...core.designs.welch import APPROXIMATION_ERROR, WelchAnova
from ..fields import Bounded, BoundedList, StrictFloat, StrictSchema, choice
from .common import MAX_GROUPS, SD_BOUND, Layout, allocation_field, means_field
from .one_way import MAX_COHENS_F

EFFECT_FIELDS = ("group_means",)
#: Groups smaller than this leave the approximation outside its documented error.
APPROXIMATION_MIN_GROUP = 10


class WelchAnovaDesignSchema(StrictSchema):
    """Welch's ANOVA: k means compared without assuming equal variances (power by approximation)."""

    type = choice(["welch_anova"], required=True, metadata={"description": "Design family."})
    group_means = means_field("Expected mean of each group, in data units.")
    group_sds = BoundedList(
        StrictFloat(validate=Bounded(min=0, max=SD_BOUND, min_inclusive=False)),
        required=True, min_items=2, max_items=MAX_GROUPS,
        metadata={"description": "Standard deviation of each group, in data units (one per group)."},
    )
    allocation = allocation_field()

    @validates_schema
    def _consistent(self, data, **kwargs):
        k = len(data["group_sds"])
        if "group_means" in data and len(data["group_means"]) != k:
            raise ValidationError(
                f"needs one SD per group mean ({len(data['group_means'])}) (got {k})", "group_sds"
            )
        if "allocation" in data and len(data["allocation"]) != k:
            raise ValidationError(f"needs one ratio per group ({k}) (got {len(data['allocation'])})", "allocation")


class WelchAnovaAdapter:
    """Turns validated Welch fields into a core design and its effect reports."""

    type = "welch_anova"
    schema = WelchAnovaDesignSchema
    method_id = WelchAnova.method_id
    reference = WelchAnova.reference
    title = "Welch's ANOVA (unequal variances), approximate power"
    formula = (
        "w_i = n_i/σ_i², W = Σw_i, μ̃ = Σw_iμ_i/W; df1 = k − 1, df2 = ν = (k² − 1)/(3A) with "
        "A = Σ(1 − w_i/W)²/(n_i − 1); λ = Σ w_i(μ_i − μ̃)²; power ≈ P(F'(df1, ν, λ) > F_crit(α)) "
        "(an approximation; POST /v1/simulate is exact)"
    )
    effect_fields = EFFECT_FIELDS
    approximation_tolerance = APPROXIMATION_ERROR
    #: Invented example: three clinics' waiting times (min), means 30, 34, 38, SDs 6, 9, 12,
    #: larger samples where the spread is larger.
    example = {
        "type": "welch_anova", "group_means": [30, 34, 38], "group_sds": [6, 9, 12], "allocation": [1, 1.5, 2],
    }
    example_sizes = 12
    assumptions = (
        "Observations are independent, within and between groups.",
        "Within each group the response is normally distributed; the SDs may differ between groups.",
        "The power is an approximation (the noncentral F at the planned SDs, with Welch's df), within about "
        f"{APPROXIMATION_ERROR:g} of the real test when every group has {APPROXIMATION_MIN_GROUP} or more units.",
        "The assumed means and SDs are the true ones; power is only as good as that assumption.",
    )

    def build(self, fields: dict, sizes_count: int | None) -> WelchAnova:
        """The core design, for power and sample-size questions."""
        if "group_means" not in fields:
            raise ValidationError("is required (the expected mean of every group)", "design.group_means")
        self._check_count(fields, sizes_count)
        design = WelchAnova.from_means(fields["group_means"], fields["group_sds"], fields.get("allocation"))
        f = self._f_equivalent(design, design.ratios)
        if f > MAX_COHENS_F:
            raise ValidationError(
                f"imply an effect above Cohen's f = {MAX_COHENS_F:g} (√(λ/N) = {f:.6g} at the allocation given): "
                "the means are too far apart for their SDs",
                "design.group_means",
            )
        return design

    @staticmethod
    def _check_count(fields: dict, sizes_count: int | None) -> None:
        k = len(fields["group_sds"])
        if sizes_count is not None and sizes_count != k:
            raise ValidationError(f"needs one size per group ({k}) (got {sizes_count})", "group_sizes")

    @staticmethod
    def _f_equivalent(design: WelchAnova, sizes: np.ndarray) -> float:
        """√(λ/N): Cohen's f when the SDs are equal (λ/N does not depend on N at fixed proportions)."""
        # λ/N is the same at any multiple of the proportions; 2·ratios keeps every group ≥ 2.
        sizes = 2.0 * np.asarray(sizes, dtype=float).reshape(1, -1) / float(np.min(sizes))
        lam = float(design.test_at(sizes).noncentrality[0])
        return math.sqrt(lam / float(sizes.sum()))

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Group SDs and allocation, for the detectable-effect question."""
        if "group_means" in fields:
            raise ValidationError(
                "is what detectable-effect solves for; leave the effect out of the design", "design.group_means"
            )
        self._check_count(fields, sizes_count)
        k = len(fields["group_sds"])
        probe = WelchAnova.from_means(np.zeros(k), fields["group_sds"], fields.get("allocation"))
        return Layout(design=probe, sd=None)

    @staticmethod
    def _weight_total(design: WelchAnova, sizes: np.ndarray) -> float:
        return float(np.sum(np.asarray(sizes, dtype=float) / design.sds**2))

    def effect_report(self, design: WelchAnova, sizes: np.ndarray) -> dict:
        """√(λ/N), the precision-weighted SD of the means and their range."""
        lam = float(design.test_at(sizes.reshape(1, -1)).noncentrality[0])
        return {
            "cohens_f_equivalent": math.sqrt(lam / float(sizes.sum())),
            "weighted_sd_of_means": math.sqrt(lam / self._weight_total(design, sizes)),
            "range_of_means": float(np.ptp(design.means)),
        }

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable effect as √(λ/N) and as the precision-weighted SD of the means (data units)."""
        return {
            "cohens_f_equivalent": math.sqrt(noncentrality / float(sizes.sum())),
            "weighted_sd_of_means": math.sqrt(noncentrality / self._weight_total(layout.design, sizes)),
        }

    def warnings(self, design, sizes: np.ndarray) -> list[str]:
        out = [
            "Welch ANOVA power is an approximation (noncentral F at the planned SDs with Welch's df), within "
            f"about {APPROXIMATION_ERROR:g} of the real test for groups of {APPROXIMATION_MIN_GROUP} or more; "
            "POST /v1/simulate gives the exact power of Welch's test."
        ]
        if sizes.min() < APPROXIMATION_MIN_GROUP:
            out.append(
                f"The smallest group has {int(sizes.min())} units: below {APPROXIMATION_MIN_GROUP} the "
                "approximation can be off by more than that, and Welch's test's own type I error drifts from "
                "alpha; simulate to check."
            )
        return out
