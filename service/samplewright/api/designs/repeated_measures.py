"""HTTP adapter for one within-subject factor (repeated measures): its schema and reports."""

from __future__ import annotations

import math

import numpy as np
from marshmallow import ValidationError, validates_schema

from ...core.designs.repeated_measures import RepeatedMeasuresAnova, correlation_bounds
from ..fields import Bounded, StrictFloat, StrictInteger, StrictSchema, choice
from .common import Layout, means_field, sd_field
from .one_way import MAX_COHENS_F

EFFECT_FIELDS = ("level_means",)
#: Most levels of the within-subject factor (each subject is measured at every level).
MAX_LEVELS = 20
#: Largest correlation accepted: at ρ → 1 the error variance σ²(1 − ρ) vanishes.
MAX_CORRELATION = 0.99


class RepeatedMeasuresDesignSchema(StrictSchema):
    """One within-subject factor: m level means, every subject measured at every level; univariate RM F test."""

    type = choice(["repeated_measures"], required=True, metadata={"description": "Design family."})
    level_means = means_field("Expected mean at each level (time point, condition), in data units (with `sd`).", max_items=MAX_LEVELS)
    sd = sd_field("Standard deviation σ at each level (the same at every level), in data units.")
    correlation = StrictFloat(
        required=True, validate=Bounded(min=-1, max=MAX_CORRELATION, min_inclusive=False),
        metadata={"description": "Correlation ρ between any two levels within a subject (compound symmetry); "
                                 f"must exceed −1/(m − 1) and be at most {MAX_CORRELATION:g}."},
    )
    epsilon = StrictFloat(
        validate=Bounded(min=0, max=1, min_inclusive=False),
        metadata={"description": "Sphericity correction ε in [1/(m − 1), 1] (Greenhouse–Geisser or Box); scales "
                                 "df1, df2 and λ. Default 1 (sphericity holds)."},
    )
    levels = StrictInteger(
        validate=Bounded(min=2, max=MAX_LEVELS),
        metadata={"description": "Number of levels m (implied by `level_means`; needed without it, for detectable effect)."},
    )

    @validates_schema
    def _consistent(self, data, **kwargs):
        if "level_means" in data:
            m = len(data["level_means"])
            if "levels" in data and data["levels"] != m:
                raise ValidationError(f"must equal the number of level_means ({m}) (got {data['levels']})", "levels")
            if "sd" not in data:
                raise ValidationError("is required with level_means", "sd")
        else:
            m = data.get("levels")
        if m is None:
            return
        lo, _ = correlation_bounds(m)
        if data["correlation"] <= lo:
            raise ValidationError(
                f"must exceed −1/(m − 1) = {lo:.6g} for {m} levels, or the compound-symmetric covariance "
                f"is not positive definite (got {data['correlation']:g})", "correlation",
            )
        if "epsilon" in data and data["epsilon"] < 1.0 / (m - 1) * (1 - 1e-12):
            raise ValidationError(
                f"must be at least 1/(m − 1) = {1.0 / (m - 1):.6g} for {m} levels (got {data['epsilon']:g})",
                "epsilon",
            )


class RepeatedMeasuresAdapter:
    """Turns validated repeated-measures fields into a core design and its effect reports."""

    type = "repeated_measures"
    schema = RepeatedMeasuresDesignSchema
    method_id = RepeatedMeasuresAnova.method_id
    reference = RepeatedMeasuresAnova.reference
    title = "One-way repeated-measures ANOVA (one within-subject factor), univariate F test"
    formula = (
        "df1 = ε(m − 1), df2 = ε(n − 1)(m − 1), λ = ε n Σ(μ_j − μ̄)²/(σ²(1 − ρ)), n subjects; "
        "power = P(F'(df1, df2, λ) > F_crit(α)); ε = 1 under sphericity"
    )
    effect_fields = EFFECT_FIELDS
    #: Invented example: reaction time (ms) at four sessions, SD 40, sessions correlated 0.6.
    example = {"type": "repeated_measures", "level_means": [420, 410, 400, 395], "sd": 40, "correlation": 0.6}
    example_sizes = 20
    example_detectable = {"type": "repeated_measures", "levels": 4, "sd": 40, "correlation": 0.6}
    assumptions = (
        "Subjects are independent; each is measured once at every level.",
        "Measurements are normally distributed with the same SD σ at every level.",
        "Compound symmetry: every pair of levels has the same correlation ρ (so sphericity holds), unless ε < 1 "
        "is given, which approximates the loss from non-sphericity.",
        "Group sizes: one entry, the number of subjects n (n_per_group is n).",
    )

    @staticmethod
    def _levels(fields: dict) -> int:
        if "level_means" in fields:
            return len(fields["level_means"])
        if "levels" in fields:
            return fields["levels"]
        raise ValidationError("is required without level_means (the number of levels m)", "design.levels")

    @staticmethod
    def _check_count(sizes_count: int | None) -> None:
        if sizes_count is not None and sizes_count != 1:
            raise ValidationError(
                f"needs exactly one entry, the number of subjects (got {sizes_count})", "group_sizes"
            )

    def build(self, fields: dict, sizes_count: int | None) -> RepeatedMeasuresAnova:
        """The core design, for power and sample-size questions."""
        if "level_means" not in fields:
            raise ValidationError("is required (the expected mean at every level)", "design.level_means")
        self._check_count(sizes_count)
        design = RepeatedMeasuresAnova.from_means(
            fields["level_means"], fields["sd"], fields["correlation"], fields.get("epsilon", 1.0)
        )
        means = design.level_means - design.level_means.mean()
        sd_of_means = float(np.sqrt(np.mean(means**2)))
        if sd_of_means > MAX_COHENS_F * design.sd:
            raise ValidationError(
                f"imply Cohen's f = σ_m/σ above {MAX_COHENS_F:g}: the SD of the level means is {sd_of_means:.6g} "
                f"with sd {design.sd:.6g}; it may be at most {MAX_COHENS_F * design.sd:.6g}",
                "design.level_means",
            )
        return design

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Levels, correlation, ε and SD, for the detectable-effect question."""
        if "level_means" in fields:
            raise ValidationError(
                "is what detectable-effect solves for; leave the effect out and give levels", "design.level_means"
            )
        m = self._levels(fields)
        self._check_count(sizes_count)
        probe = RepeatedMeasuresAnova.from_means(np.zeros(m), 1.0, fields["correlation"], fields.get("epsilon", 1.0))
        return Layout(design=probe, sd=fields.get("sd"))

    def effect_report(self, design: RepeatedMeasuresAnova, sizes: np.ndarray) -> dict:
        """Cohen's f on σ and on the within-subject error SD σ√(1 − ρ), and the means in data units."""
        means = design.level_means - design.level_means.mean()
        sd_of_means = float(np.sqrt(np.mean(means**2)))
        f = sd_of_means / design.sd
        return {
            "cohens_f": f,
            "cohens_f_within": f / math.sqrt(1.0 - design.correlation),
            "sd_of_means": sd_of_means,
            "range_of_means": float(np.ptp(design.level_means)),
            "error_sd": design.sd * math.sqrt(1.0 - design.correlation),
            "epsilon": design.epsilon,
        }

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable effect as Cohen's f (on σ and within subjects) and, with an SD, in data units."""
        design: RepeatedMeasuresAnova = layout.design
        n, m, rho, eps = float(sizes[0]), design.levels, design.correlation, design.epsilon
        f_within = math.sqrt(noncentrality / (eps * n * m))
        f = f_within * math.sqrt(1.0 - rho)
        report = {"cohens_f": f, "cohens_f_within": f_within, "epsilon": eps}
        if layout.sd is not None:
            report["sd_of_means"] = f * layout.sd
            # Two levels D apart, the rest midway: Σ(μ_j − μ̄)² = D²/2.
            report["min_range"] = layout.sd * math.sqrt(2.0 * noncentrality * (1.0 - rho) / (eps * n))
        return report

    def warnings(self, design, sizes: np.ndarray) -> list[str]:
        out = []
        if sizes[0] < 8:
            out.append(
                f"Only {int(sizes[0])} subjects: the F test's robustness to non-normality and to departures "
                "from sphericity is weak with so few."
            )
        if design is not None and design.epsilon < 1.0:
            out.append(
                f"ε = {design.epsilon:g} scales the df and λ (an approximation to the corrected test under "
                "non-sphericity); POST /v1/simulate checks the uncorrected test at ε = 1 only."
            )
        return out
