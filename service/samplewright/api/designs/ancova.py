"""HTTP adapter for the one-way ANCOVA (covariate-adjusted F test): its schema and reports."""

from __future__ import annotations

import math

import numpy as np
from marshmallow import ValidationError, validates_schema

from ...core.designs.ancova import OPTIMISM_PER_COVARIATE, OneWayAncova, optimism_bound
from ...core.designs.base import is_equal, normalised_allocation
from ..fields import Bounded, StrictFloat, StrictInteger, StrictSchema, choice
from .common import (
    MAX_GROUPS,
    Layout,
    allocation_field,
    group_count,
    means_field,
    sd_field,
)
from .one_way import MAX_COHENS_F

EFFECT_FIELDS = ("group_means",)
MAX_R2 = 0.99
MAX_COVARIATES = 10


class OneWayAncovaDesignSchema(StrictSchema):
    """One-way ANCOVA: k covariate-adjusted means compared by the F test after q covariates."""

    type = choice(["one_way_ancova"], required=True, metadata={"description": "Design family."})
    group_means = means_field("Expected covariate-adjusted mean of each group, in data units (with `sd`).")
    sd = sd_field("Unadjusted within-group standard deviation σ of the response, in data units "
                                 "(the SD before the covariates explain part of it).")
    covariate_r2 = StrictFloat(
        required=True, validate=Bounded(min=0, max=MAX_R2),
        metadata={"description": "R², the proportion of the within-group variance of the response the "
                                 f"covariates explain jointly (0 to {MAX_R2:g}); the error variance is σ²(1 − R²)."},
    )
    covariates = StrictInteger(
        load_default=1, validate=Bounded(min=1, max=MAX_COVARIATES),
        metadata={"description": "Number of covariates q; each costs one error degree of freedom.", "default": 1},
    )
    groups = StrictInteger(
        validate=Bounded(min=2, max=MAX_GROUPS),
        metadata={"description": "Number of groups k (implied by `group_means` or `allocation`; for detectable effect)."},
    )
    allocation = allocation_field()

    @validates_schema
    def _consistent(self, data, **kwargs):
        if "group_means" in data:
            if "sd" not in data:
                raise ValidationError("is required with group_means", "sd")
            if "groups" in data and data["groups"] != len(data["group_means"]):
                raise ValidationError(
                    f"must equal the number of group_means ({len(data['group_means'])}) (got {data['groups']})",
                    "groups",
                )
        groups = len(data["group_means"]) if "group_means" in data else data.get("groups")
        if groups is not None and "allocation" in data and len(data["allocation"]) != groups:
            raise ValidationError(f"needs one ratio per group ({groups}) (got {len(data['allocation'])})", "allocation")


class OneWayAncovaAdapter:
    """Turns validated ANCOVA fields into a core design and its effect reports."""

    type = "one_way_ancova"
    schema = OneWayAncovaDesignSchema
    method_id = OneWayAncova.method_id
    reference = OneWayAncova.reference
    title = "One-way ANCOVA: covariate-adjusted F test of k group means"
    formula = (
        "df1 = k − 1, df2 = N − k − q, λ = Σ n_i(μ_i − μ̄_w)²/(σ²(1 − R²)); "
        "power = P(F'(df1, df2, λ) > F_crit(α)); covariates treated as fixed (slightly optimistic)"
    )
    effect_fields = EFFECT_FIELDS
    #: Documented error of the analytic power against the real test with random normal
    #: covariates, when N − k − q ≥ 25q (measured; see core.designs.ancova).
    approximation_tolerance = 0.02
    #: Invented example: three teaching methods, adjusted exam means 62, 66, 68 points, SD 12,
    #: one pretest explaining half the variance.
    example = {"type": "one_way_ancova", "group_means": [62, 66, 68], "sd": 12, "covariate_r2": 0.5, "covariates": 1}
    example_sizes = 30
    example_detectable = {"type": "one_way_ancova", "groups": 3, "sd": 12, "covariate_r2": 0.5, "covariates": 1}
    assumptions = (
        "Units are randomised to groups, so the covariates' distribution does not depend on the group.",
        "The response is linear in the covariates, with the same slopes in every group (no group × covariate interaction).",
        "Errors are independent and normally distributed with the same variance in every group.",
        "The covariates are measured without error; R² is their pooled within-group multiple correlation with the response.",
        "The covariates are treated as fixed: with random covariates the power is slightly lower, most at small N.",
    )

    def build(self, fields: dict, sizes_count: int | None) -> OneWayAncova:
        """The core design, for power and sample-size questions."""
        if "group_means" not in fields:
            raise ValidationError("is required (the expected adjusted mean of every group)", "design.group_means")
        group_count(fields, sizes_count)
        design = OneWayAncova.from_means(
            fields["group_means"], fields["sd"], fields["covariate_r2"], fields["covariates"], fields.get("allocation")
        )
        p = design.ratios / design.ratios.sum()
        means = design.means - np.sum(p * design.means)
        sd_of_means = float(np.sqrt(np.sum(p * means**2)))
        if sd_of_means > MAX_COHENS_F * design.sd:
            raise ValidationError(
                f"imply Cohen's f = σ_m/σ above {MAX_COHENS_F:g}: the SD of the means is {sd_of_means:.6g} "
                f"with sd {design.sd:.6g}; it may be at most {MAX_COHENS_F * design.sd:.6g}",
                "design.group_means",
            )
        return design

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Groups, allocation, covariates and SD, for the detectable-effect question."""
        if "group_means" in fields:
            raise ValidationError(
                "is what detectable-effect solves for; leave the effect out of the design", "design.group_means"
            )
        k = group_count(fields, sizes_count)
        ratios = normalised_allocation(fields.get("allocation"), k)
        probe = OneWayAncova(
            groups=k, ratios=ratios, means=np.zeros(k), sd=1.0,
            covariate_r2=fields["covariate_r2"], covariates=fields["covariates"],
        )
        return Layout(design=probe, sd=fields.get("sd"))

    def effect_report(self, design: OneWayAncova, sizes: np.ndarray) -> dict:
        """Cohen's f on the unadjusted and the adjusted error SD, and the SD of the means."""
        lam = float(design.test_at(sizes.reshape(1, -1)).noncentrality[0])
        adjusted_f = math.sqrt(lam / float(sizes.sum()))
        f = adjusted_f * math.sqrt(1.0 - design.covariate_r2)
        return {
            "cohens_f": f,
            "eta_squared": f * f / (1.0 + f * f),
            "adjusted_cohens_f": adjusted_f,
            "adjusted_sd": design.adjusted_sd,
            "sd_of_means": f * design.sd,
            "range_of_means": float(np.ptp(design.means)),
        }

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable effect as adjusted and unadjusted Cohen's f and, with an SD, in data units."""
        design: OneWayAncova = layout.design
        adjusted_f = math.sqrt(noncentrality / float(sizes.sum()))
        f = adjusted_f * math.sqrt(1.0 - design.covariate_r2)
        report = {"cohens_f": f, "eta_squared": f * f / (1.0 + f * f), "adjusted_cohens_f": adjusted_f}
        if layout.sd is not None:
            report["sd_of_means"] = f * layout.sd
            report["adjusted_sd"] = layout.sd * math.sqrt(1.0 - design.covariate_r2)
            if is_equal(sizes / sizes.min()):
                report["min_range"] = f * layout.sd * math.sqrt(2 * len(sizes))
        return report

    def warnings(self, design, sizes: np.ndarray) -> list[str]:
        if design is not None:
            df2 = float(sizes.sum()) - design.groups - design.covariates
            bound = optimism_bound(design.covariates, df2)
            size_note = (
                f"here (N − k − q = {df2:g}, q = {design.covariates}) by up to about {bound:.2g}"
                if bound >= 0.005 else f"here by less than 0.005 (N − k − q = {df2:g})"
            )
        else:
            size_note = (
                f"by up to about {OPTIMISM_PER_COVARIATE:g}·q/(N − k − q) (so the detectable effect is "
                "slightly understated)"
            )
        return [
            "The ANCOVA formula treats the covariates as fixed; with random covariates it is slightly optimistic "
            f"for small N, overstating power {size_note}. POST /v1/simulate runs the real covariate-adjusted "
            "test on simulated data as the check."
        ]
