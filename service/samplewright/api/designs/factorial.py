"""HTTP adapter for the two-factor (a × b) fixed-effects factorial: its schema and reports."""

from __future__ import annotations

import math

import numpy as np
from marshmallow import ValidationError, validates_schema

from ...core import planning
from ...core.designs.factorial import EFFECTS, FactorialAnova
from ..fields import Bounded, BoundedList, StrictFloat, StrictInteger, StrictSchema, choice
from .common import MAX_GROUPS, MEAN_BOUND, Layout, sd_field
from .one_way import MAX_COHENS_F

EFFECT_FIELDS = ("cell_means",)
#: Most levels of either factor; a·b is also bounded by the number of group sizes (MAX_GROUPS).
MAX_LEVELS = 20
MAX_CELLS = MAX_GROUPS
_NAMES = {"factor_a": "factor A (rows)", "factor_b": "factor B (columns)", "interaction": "the A × B interaction"}


class FactorialAnovaDesignSchema(StrictSchema):
    """Two crossed fixed factors (a × b cells, n per cell): F test of factor A, factor B or their interaction."""

    type = choice(["factorial_anova"], required=True, metadata={"description": "Design family."})
    cell_means = BoundedList(
        BoundedList(StrictFloat(validate=Bounded(min=-MEAN_BOUND, max=MEAN_BOUND)), min_items=2, max_items=MAX_LEVELS),
        min_items=2, max_items=MAX_LEVELS,
        metadata={"description": "Expected cell means as a rectangular table: one row per level of factor A, "
                                 "one column per level of factor B (2–20 each, at most "
                                 f"{MAX_CELLS} cells), in data units (with `sd`). `group_sizes`, when given, "
                                 "lists the cell sizes in the same row-major order."},
    )
    sd = sd_field("Common within-cell (error) standard deviation σ, in data units.")
    effect = choice(
        list(EFFECTS), required=True,
        metadata={"description": "The effect tested: `factor_a` (rows), `factor_b` (columns) or `interaction`."},
    )
    levels_a = StrictInteger(
        validate=Bounded(min=2, max=MAX_LEVELS),
        metadata={"description": "Levels of factor A (rows); implied by `cell_means`, needed without it "
                                 "(detectable effect)."},
    )
    levels_b = StrictInteger(
        validate=Bounded(min=2, max=MAX_LEVELS),
        metadata={"description": "Levels of factor B (columns); implied by `cell_means`, needed without it."},
    )

    @validates_schema
    def _shape(self, data, **kwargs):
        if "cell_means" in data:
            lengths = [len(row) for row in data["cell_means"]]
            if len(set(lengths)) > 1:
                raise ValidationError(
                    f"must be rectangular: every row (level of factor A) needs the same number of columns "
                    f"(got row lengths {lengths})", "cell_means",
                )
            a, b = len(lengths), lengths[0]
            for name, given, implied in (("levels_a", data.get("levels_a"), a), ("levels_b", data.get("levels_b"), b)):
                if given is not None and given != implied:
                    raise ValidationError(f"must match cell_means ({implied}) (got {given})", name)
            if "sd" not in data:
                raise ValidationError("is required with cell_means", "sd")
        else:
            a, b = data.get("levels_a"), data.get("levels_b")
        if a is not None and b is not None and a * b > MAX_CELLS:
            field = "cell_means" if "cell_means" in data else "levels_b"
            raise ValidationError(f"may have at most {MAX_CELLS} cells (got {a} × {b} = {a * b})", field)


class FactorialAnovaAdapter:
    """Turns validated factorial fields into a core design and its effect reports."""

    type = "factorial_anova"
    schema = FactorialAnovaDesignSchema
    method_id = FactorialAnova.method_id
    reference = FactorialAnova.reference
    title = "Two-factor factorial ANOVA (fixed effects): main effect or interaction F test"
    formula = (
        "α_i, β_j, (αβ)_ij from the unweighted marginal means; A: df1 = a − 1, λ = n b Σα_i²/σ²; "
        "B: df1 = b − 1, λ = n a Σβ_j²/σ²; AB: df1 = (a − 1)(b − 1), λ = n ΣΣ(αβ)_ij²/σ²; df2 = ab(n − 1); "
        "unequal cells: λ = ψ'(C D⁻¹ C')⁻¹ψ/σ²; power = P(F'(df1, df2, λ) > F_crit(α))"
    )
    effect_fields = EFFECT_FIELDS
    #: Invented example: three resin formulations (rows) × three curing temperatures (columns),
    #: bond strength in MPa, SD 25; the formulations differ, temperature and interaction do not.
    example = {
        "type": "factorial_anova", "effect": "factor_a", "sd": 25,
        "cell_means": [[120, 120, 120], [80, 80, 80], [100, 100, 100]],
    }
    example_sizes = 4
    #: The same layout without its effect, for the detectable-effect example.
    example_detectable = {"type": "factorial_anova", "effect": "factor_a", "sd": 25, "levels_a": 3, "levels_b": 3}
    assumptions = (
        "Observations are independent, within and between cells.",
        "Within each cell the response is normally distributed with the same SD σ.",
        "Both factors are fixed: their levels are exactly the levels of interest.",
        "The analysis fits the full two-way model (both main effects and the interaction).",
        "Group sizes are cell sizes, one per cell in row-major order (all of row 1, then row 2, …); "
        "with unequal cells the hypotheses are about the unweighted marginal means (Type III).",
        "The assumed cell means are the true ones; power is only as good as that assumption.",
    )

    # -- shape and sizes ------------------------------------------------------------

    @staticmethod
    def _shape(fields: dict) -> tuple[int, int]:
        if "cell_means" in fields:
            return len(fields["cell_means"]), len(fields["cell_means"][0])
        missing = [f"design.{name}" for name in ("levels_a", "levels_b") if name not in fields]
        if missing:
            raise ValidationError("is required without cell_means (the number of levels of each factor)", missing[0])
        return fields["levels_a"], fields["levels_b"]

    @staticmethod
    def _check_count(a: int, b: int, sizes_count: int | None) -> None:
        if sizes_count is not None and sizes_count != a * b:
            raise ValidationError(
                f"needs one size per cell ({a} × {b} = {a * b}, row-major: all cells of factor A's first "
                f"level, then its second, …) (got {sizes_count})", "group_sizes",
            )

    def build(self, fields: dict, sizes_count: int | None) -> FactorialAnova:
        """The core design, for power and sample-size questions."""
        if "cell_means" not in fields:
            raise ValidationError("is required (the expected mean of every cell)", "design.cell_means")
        a, b = self._shape(fields)
        self._check_count(a, b, sizes_count)
        design = FactorialAnova.from_cells(fields["cell_means"], fields["sd"], fields["effect"])
        sd_effect = float(np.sqrt(np.mean(design.effect_values() ** 2)))
        if sd_effect > MAX_COHENS_F * design.sd:
            raise ValidationError(
                f"imply Cohen's f above {MAX_COHENS_F:g} for {_NAMES[design.effect]}: the SD of its effects is "
                f"{sd_effect:.6g} with sd {design.sd:.6g}; it may be at most {MAX_COHENS_F * design.sd:.6g}",
                "design.cell_means",
            )
        return design

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Levels and SD, for the detectable-effect question."""
        if "cell_means" in fields:
            raise ValidationError(
                "is what detectable-effect solves for; leave the effect out and give levels_a and levels_b",
                "design.cell_means",
            )
        a, b = self._shape(fields)
        self._check_count(a, b, sizes_count)
        probe = FactorialAnova.from_cells(np.zeros((a, b)), 1.0, fields["effect"])
        return Layout(design=probe, sd=fields.get("sd"))

    # -- reports --------------------------------------------------------------------

    @staticmethod
    def _phi(noncentrality: float, df1: float) -> float:
        """Montgomery's operating-characteristic parameter Φ = √(λ / (df1 + 1))."""
        return math.sqrt(noncentrality / (df1 + 1.0))

    def effect_report(self, design: FactorialAnova, sizes: np.ndarray) -> dict:
        """Cohen's f of the tested effect, its SD and effects in data units, and Montgomery's Φ."""
        values = design.effect_values()
        sd_effect = float(np.sqrt(np.mean(values**2)))
        f = sd_effect / design.sd
        test = design.test_at(sizes.reshape(1, -1))
        return {
            "effect": design.effect,
            "cohens_f": f,
            "partial_eta_squared": f * f / (1.0 + f * f),
            "sd_of_effect": sd_effect,
            "range_of_effect": float(np.ptp(values)),
            "phi": self._phi(float(test.noncentrality[0]), float(test.df1[0])),
            "effects": values.tolist(),
        }

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable effect as Cohen's f (λ = N f²), Φ and, with an SD, in data units."""
        design: FactorialAnova = layout.design
        a, b = design.shape
        f = math.sqrt(noncentrality / float(sizes.sum()))
        report = {
            "effect": design.effect,
            "cohens_f": f,
            "partial_eta_squared": f * f / (1.0 + f * f),
            "phi": self._phi(noncentrality, float(design.contrast.shape[0])),
        }
        if layout.sd is not None:
            report["sd_of_effect"] = f * layout.sd
            n = float(sizes[0])
            if np.all(sizes == sizes[0]) and design.effect != "interaction":
                # Two levels D apart and the rest midway: Σα² = D²/2, so D = σ√(2λ/(n·other levels)).
                other = b if design.effect == "factor_a" else a
                report["min_range"] = layout.sd * math.sqrt(2.0 * noncentrality / (n * other))
        return report

    def extras(self, design: FactorialAnova, sizes: np.ndarray, alpha: float) -> dict:
        """Power of all three tests of the two-way model at these cell sizes."""
        out = {}
        for effect in EFFECTS:
            other = design if effect == design.effect else FactorialAnova.from_cells(design.cell_means, design.sd, effect)
            result = planning.power(other, sizes=sizes, alpha=alpha)
            out[effect] = {
                "power": result.power,
                "df_numerator": result.df_numerator,
                "df_denominator": result.df_denominator,
                "noncentrality": result.noncentrality,
            }
        return {"cells": [int(v) for v in design.shape], "tests": out}

    def warnings(self, design, sizes: np.ndarray) -> list[str]:
        out = []
        if sizes.min() < 3:
            out.append(
                f"The smallest cell has {int(sizes.min())} units: with so few, the F test's robustness to "
                "non-normal errors and unequal variances is weak."
            )
        if not np.all(sizes == sizes[0]):
            out.append(
                "Cell sizes are unequal: the tests are of the unweighted marginal means (Type III hypotheses); "
                "other sums of squares (sequential, Type II) test other hypotheses and have other power."
            )
            if design is None:
                out.append(
                    "With unequal cells the detectable Cohen's f is the f of a balanced design with the same "
                    "total and noncentrality (λ = N f²); the means that reach it depend on which cells differ."
                )
        return out
