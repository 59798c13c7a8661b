"""POST /v1/allocation: group sizes under unequal costs or variances, a fixed total or a budget."""

from __future__ import annotations

import numpy as np
from marshmallow import Schema, ValidationError, fields, validates_schema

from ..core import allocation as core
from ..core.errors import InvalidParameter, NoSolution
from .designs import ADAPTERS
from .fields import Bounded, BoundedList, StrictFloat, StrictInteger, StrictSchema
from .operations import CAUTIONS
from .problems import core_problem, validation_problem
from .provenance import provenance
from .schemas import POWER_MAX, DesignField, MethodSchema, ProvenanceSchema, alpha_field

#: Designs whose groups are sized independently and whose power depends on the allocation,
#: with the effect fields an allocation needs (None: any). Only registered ones are served.
ALLOCATABLE = {
    "one_way_anova": ("group_means",),
    "welch_anova": None,
    "one_way_ancova": None,
    "two_sample_t": None,
    "contrast": None,
}
#: The search costs grow with the square of the number of groups.
MAX_ALLOCATION_GROUPS = 10
COST_MAX = 1e9
#: Largest ratio between the dearest and the cheapest unit.
COST_SPREAD = 1000.0
BUDGET_MAX = 1e15
TOTAL_MAX = core.TOTAL_CAP
MIN_GROUP_MAX = 100_000
GOALS = ("target_power", "budget", "n_total")
GOAL_NAMES = {"target_power": "least_cost_for_power", "budget": "most_power_for_budget",
              "n_total": "most_power_for_total"}
RULE_REFERENCE = (
    "Optimum allocation with a linear cost function, n_h ∝ S_h/√c_h (Cochran 1977, Sampling Techniques, "
    "3rd ed., §5.5), applied to the two samples of a comparison of means"
)
SEARCH_REFERENCE = (
    "Exact integer search: exhaustive for small problems; otherwise exchange moves between pairs of groups "
    "at halving step sizes from the balanced and the rule-based designs, then an exhaustive box around the result"
)


def allocatable_types() -> list[str]:
    """The registered designs /v1/allocation serves."""
    return [name for name in ALLOCATABLE if name in ADAPTERS]


def _cost_spread(costs: list[float]) -> None:
    if max(costs) / min(costs) > COST_SPREAD * (1 + 1e-12):
        raise ValidationError(
            f"the dearest unit may cost at most {COST_SPREAD:g} times the cheapest "
            f"(got {max(costs) / min(costs):.6g})"
        )


class AllocationRequestSchema(StrictSchema):
    """Group sizes reaching a power at least cost, or the most power for a budget or a total."""

    design = DesignField(
        required=True,
        metadata={"description": "The planned design, without `allocation` (that is the answer). Served: "
                                 "designs with independently sized groups whose power depends on the split "
                                 "(one_way_anova with group_means, welch_anova for unequal SDs, "
                                 "one_way_ancova, and two_sample_t and contrast where registered)."},
    )
    alpha = alpha_field()
    costs = BoundedList(
        StrictFloat(validate=Bounded(min=0, max=COST_MAX, min_inclusive=False)),
        min_items=2, max_items=MAX_ALLOCATION_GROUPS, validate=[_cost_spread],
        metadata={"description": "Cost of one unit in each group, in any currency or unit of effort "
                                 f"(default 1 each); the dearest at most {COST_SPREAD:g}× the cheapest."},
    )
    target_power = StrictFloat(
        validate=Bounded(min=0, max=POWER_MAX, min_inclusive=False),
        metadata={"description": "Goal: the least costly allocation reaching this power (must exceed alpha)."},
    )
    budget = StrictFloat(
        validate=Bounded(min=0, max=BUDGET_MAX, min_inclusive=False),
        metadata={"description": "Goal: the most power whose total cost Σ c_i n_i stays within this budget."},
    )
    n_total = StrictInteger(
        validate=Bounded(min=4, max=TOTAL_MAX),
        metadata={"description": "Goal: the most power with exactly this many units in all."},
    )
    min_group_size = StrictInteger(
        load_default=2, validate=Bounded(min=2, max=MIN_GROUP_MAX),
        metadata={"description": "Fewest units any group may have.", "default": 2},
    )

    @validates_schema(pass_original=True, skip_on_field_errors=False)
    def _one_goal(self, data, original_data, **kwargs):
        given = [name for name in GOALS if isinstance(original_data, dict) and name in original_data]
        if len(given) != 1:
            raise ValidationError(
                f"give exactly one of target_power, budget and n_total (got {' and '.join(given) or 'none'})",
                "target_power",
            )
        if "target_power" in data and data["target_power"] <= data.get("alpha", 0.05):
            raise ValidationError(
                f"must exceed alpha ({data.get('alpha', 0.05):g}) (got {data['target_power']:g})", "target_power"
            )


class AllocatedSchema(Schema):
    group_sizes = fields.List(fields.Integer(), required=True)
    n_total = fields.Integer(required=True)
    cost = fields.Float(required=True, metadata={"description": "Σ c_i n_i."})
    power = fields.Float(required=True)
    ratios = fields.List(fields.Float(), required=True, metadata={"description": "n_i divided by the smallest n."})


class RuleSchema(Schema):
    formula = fields.String(required=True)
    ratios = fields.List(fields.Float(), required=True, metadata={
        "description": "Continuous optimum n_i ∝ σ_i/√c_i, divided by its smallest entry."})
    reference = fields.String(required=True)


class ComparisonSchema(Schema):
    cost_saving = fields.Float(required=True, allow_none=True, metadata={
        "description": "Balanced cost minus optimal cost (null without a balanced design)."})
    cost_saving_fraction = fields.Float(required=True, allow_none=True)
    power_gain = fields.Float(required=True, allow_none=True, metadata={
        "description": "Optimal power minus balanced power (null without a balanced design)."})


class SearchSchema(Schema):
    exhaustive = fields.Boolean(required=True, metadata={"description": "Every candidate was evaluated."})
    truncated = fields.Boolean(required=True, metadata={"description": "The search stopped at its work limit."})
    power_evaluations = fields.Integer(required=True)
    method = fields.String(required=True)


class AllocationResponseSchema(Schema):
    goal = fields.String(required=True, metadata={"enum": sorted(GOAL_NAMES.values())})
    design_type = fields.String(required=True)
    alpha = fields.Float(required=True)
    costs = fields.List(fields.Float(), required=True)
    min_group_size = fields.Integer(required=True)
    target_power = fields.Float(metadata={"description": "The target (goal least_cost_for_power)."})
    budget = fields.Float(metadata={"description": "The budget (goal most_power_for_budget)."})
    n_total = fields.Integer(metadata={"description": "The fixed total (goal most_power_for_total)."})
    optimal = fields.Nested(AllocatedSchema, required=True)
    balanced = fields.Nested(AllocatedSchema, required=True, allow_none=True, metadata={
        "description": "Equal sizes for comparison: the smallest reaching the target, the largest within the "
                       "budget, or the fixed total split as evenly as possible (null if none fits)."})
    comparison = fields.Nested(ComparisonSchema, required=True)
    rule = fields.Nested(RuleSchema, required=True, allow_none=True, metadata={
        "description": "The published continuous rule (two groups), for comparison with the integer answer."})
    search = fields.Nested(SearchSchema, required=True)
    method = fields.Nested(MethodSchema, required=True, metadata={"description": "The design's power method."})
    assumptions = fields.List(fields.String(), required=True)
    warnings = fields.List(fields.String(), required=True)
    cautions = fields.List(fields.String(), required=True)
    provenance = fields.Nested(ProvenanceSchema, required=True)


ALLOCATION_REQUEST = AllocationRequestSchema()


def _problem_from(exc: ValidationError):
    return validation_problem({exc.field_name: exc.messages} if exc.field_name else exc.messages)


def _design(req: dict):
    kind = req["design"]["type"]
    served = allocatable_types()
    if kind not in served:
        raise validation_problem({"design.type": [
            f"must be one of {served} for an allocation: the others have no independently sized groups "
            f"whose split changes the power (got {kind!r})"]})
    if "allocation" in req["design"]:
        raise validation_problem({"design.allocation": [
            "is what /v1/allocation chooses; leave it out of the design"]})
    needs = ALLOCATABLE[kind]
    if needs and not all(name in req["design"] for name in needs):
        raise validation_problem({f"design.{needs[0]}": [
            f"is required for an allocation with {kind}: an effect given as a standardised size is defined at "
            "the design's own proportions, so the split could not change the power"]})
    adapter = ADAPTERS[kind]
    try:
        design = adapter.build(req["design"], None)
    except ValidationError as exc:
        raise _problem_from(exc) from None
    return adapter, design


def _allocated(a: core.Allocation) -> dict:
    sizes = np.asarray(a.group_sizes, dtype=float)
    return {"group_sizes": list(a.group_sizes), "n_total": a.n_total, "cost": a.cost, "power": a.power,
            "ratios": [float(v) for v in sizes / sizes.min()]}


def allocate(body: dict) -> dict:
    """POST /v1/allocation."""
    try:
        req = ALLOCATION_REQUEST.load(body)
    except ValidationError as exc:
        raise validation_problem(exc.messages) from None
    adapter, design = _design(req)
    k = int(design.groups)
    if k > MAX_ALLOCATION_GROUPS:
        raise validation_problem({"design": [
            f"an allocation is searched for at most {MAX_ALLOCATION_GROUPS} groups (got {k})"]})
    costs = req.get("costs", [1.0] * k)
    if len(costs) != k:
        raise validation_problem({"costs": [f"needs one cost per group ({k}) (got {len(costs)})"]})
    sds = getattr(design, "sds", None)
    alpha = req["alpha"]
    min_size = req["min_group_size"]

    def power_rows(rows: np.ndarray) -> np.ndarray:
        return design.evaluate(rows, alpha).power

    try:
        if "target_power" in req:
            result = core.cheapest(power_rows, costs=costs, target_power=req["target_power"], min_size=min_size,
                                   sds=sds)
        else:
            result = core.most_power(power_rows, costs=costs, budget=req.get("budget"), n_total=req.get("n_total"),
                                     min_size=min_size, sds=sds)
    except (InvalidParameter, NoSolution) as exc:
        raise core_problem(exc) from None

    goal = next(name for name in GOALS if name in req)
    best, balanced = result.best, result.balanced
    out: dict = {
        "goal": GOAL_NAMES[goal],
        "design_type": adapter.type,
        "alpha": alpha,
        "costs": [float(c) for c in costs],
        "min_group_size": min_size,
        goal: req[goal],
        "optimal": _allocated(best),
        "balanced": _allocated(balanced) if balanced is not None else None,
        "comparison": {
            "cost_saving": None if balanced is None else balanced.cost - best.cost,
            "cost_saving_fraction": None if balanced is None else (balanced.cost - best.cost) / balanced.cost,
            "power_gain": None if balanced is None else best.power - balanced.power,
        },
        "rule": None,
        "search": {"exhaustive": result.exhaustive, "truncated": result.truncated,
                   "power_evaluations": result.evaluations,
                   "method": SEARCH_REFERENCE},
        "method": {"id": adapter.method_id, "reference": adapter.reference},
        "assumptions": [
            *adapter.assumptions,
            "Costs are linear: every unit in a group costs the same, and there is no fixed cost per group.",
        ],
        "warnings": adapter.warnings(design, np.asarray(best.group_sizes)),
        "cautions": list(CAUTIONS),
        "provenance": provenance("allocation.integer_search+" + adapter.method_id, adapter.reference, req),
    }
    if k == 2:
        ratios = core.optimum_ratios(sds if sds is not None else [1.0, 1.0], costs)
        out["rule"] = {"formula": "n₁/n₂ = (σ₁/σ₂)·√(c₂/c₁)", "ratios": [float(r) for r in ratios],
                       "reference": RULE_REFERENCE}
    if result.truncated:
        out["warnings"].append(
            "The search reached its work limit: the allocation shown is the best found, at least as good as "
            "the balanced design, but a slightly better one may exist."
        )
    if best.power > 0.9999:
        out["warnings"].append(
            "The power is essentially 1: many allocations tie, and the cheapest of them is shown; "
            "a smaller budget or total would do."
        )
    if goal == "budget" and balanced is None:
        out["warnings"].append("The budget does not buy an equal design of the smallest group size; no balanced "
                               "comparison is shown.")
    return out
