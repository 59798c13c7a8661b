"""The three operations as functions of a raw request dict: validate, compute, report.

These are shared by the single-question routes and anything that answers many
questions at once; they know nothing of Flask's request object.
"""

from __future__ import annotations

import numpy as np
from marshmallow import ValidationError

from ..core import planning
from .designs import ADAPTERS
from .problems import validation_problem
from .schemas import DETECTABLE_REQUEST, POWER_REQUEST, SAMPLE_SIZE_REQUEST

CAUTIONS = (
    "A power calculation rests on its assumptions, above all the assumed effect and variability; "
    "check them against pilot data or the literature.",
    "This result does not replace review by a statistician familiar with the study.",
    "Local regulations, ethics committees and animal-welfare bodies decide what sample size is acceptable.",
)


def _load(schema, body: dict) -> dict:
    try:
        return schema.load(body)
    except ValidationError as exc:
        raise validation_problem(exc.messages) from None


def _common(adapter, result: planning.PowerResult, warnings: list[str]) -> dict:
    return {
        "alpha": result.alpha,
        "design_type": adapter.type,
        "df_numerator": result.df_numerator,
        "df_denominator": result.df_denominator,
        "noncentrality": result.noncentrality,
        "critical_value": result.critical_value,
        "group_sizes": list(result.group_sizes),
        "n_total": result.n_total,
        "method": {"id": adapter.method_id, "reference": adapter.reference},
        "assumptions": list(adapter.assumptions),
        "warnings": warnings,
        "cautions": list(CAUTIONS),
    }


def _extras(adapter, design, sizes: np.ndarray, alpha: float, out: dict) -> dict:
    """Design-specific extras (an adapter may define ``extras``) under ``details``."""
    hook = getattr(adapter, "extras", None)
    if hook is not None:
        details = hook(design, sizes, alpha)
        if details:
            out["details"] = details
    return out


def _sizes(req: dict, design) -> np.ndarray:
    if "group_sizes" in req:
        return planning.check_sizes(design, req["group_sizes"])
    return planning.sizes_for(design, req["n_per_group"])


def _build(adapter, fields: dict, sizes_count: int | None):
    try:
        return adapter.build(fields, sizes_count)
    except ValidationError as exc:
        raise validation_problem({exc.field_name: exc.messages} if exc.field_name else exc.messages) from None


def power(body: dict) -> dict:
    """POST /v1/power."""
    req = _load(POWER_REQUEST, body)
    adapter = ADAPTERS[req["design"]["type"]]
    design = _build(adapter, req["design"], len(req["group_sizes"]) if "group_sizes" in req else None)
    sizes = _sizes(req, design)
    result = planning.power(design, sizes=sizes, alpha=req["alpha"])
    out = {"power": result.power, **_common(adapter, result, adapter.warnings(design, sizes))}
    out["effect"] = adapter.effect_report(design, sizes)
    return _extras(adapter, design, sizes, req["alpha"], out)


def sample_size(body: dict) -> dict:
    """POST /v1/sample-size."""
    req = _load(SAMPLE_SIZE_REQUEST, body)
    adapter = ADAPTERS[req["design"]["type"]]
    design = _build(adapter, req["design"], None)
    found = planning.sample_size(
        design, alpha=req["alpha"], target_power=req["target_power"], dropout_rate=req["dropout_rate"]
    )
    answer = found.answer
    sizes = np.asarray(answer.group_sizes)
    warnings = adapter.warnings(design, sizes)
    if req["dropout_rate"] > 0.3:
        warnings.append(
            f"A dropout rate of {req['dropout_rate']:g} is high: losses that depend on the treatment "
            "bias the comparison, which enrolling more units does not fix."
        )
    out = {
        **_common(adapter, answer, warnings),
        "target_power": found.target_power,
        "achieved_power": answer.power,
        "n_per_group": int(sizes[0]) if np.all(sizes == sizes[0]) else None,
        "smallest_group": found.smallest_group,
        "one_step_smaller": None,
        "enrolment": None,
        "effect": adapter.effect_report(design, sizes),
    }
    if found.one_step_smaller is not None:
        step = found.one_step_smaller
        out["one_step_smaller"] = {
            "group_sizes": list(step.group_sizes), "n_total": step.n_total, "power": step.power
        }
    if found.enrolment_sizes is not None:
        out["enrolment"] = {
            "dropout_rate": found.dropout_rate,
            "group_sizes": list(found.enrolment_sizes),
            "n_total": int(sum(found.enrolment_sizes)),
        }
    return _extras(adapter, design, sizes, req["alpha"], out)


def detectable_effect(body: dict) -> dict:
    """POST /v1/detectable-effect."""
    req = _load(DETECTABLE_REQUEST, body)
    adapter = ADAPTERS[req["design"]["type"]]
    try:
        layout = adapter.layout(req["design"], len(req["group_sizes"]) if "group_sizes" in req else None)
    except ValidationError as exc:
        raise validation_problem({exc.field_name: exc.messages} if exc.field_name else exc.messages) from None
    sizes = _sizes(req, layout.design)
    found = planning.detectable_effect(
        layout.design, sizes=sizes, alpha=req["alpha"], target_power=req["target_power"]
    )
    out = {
        **_common(adapter, found.check, adapter.warnings(None, sizes)),
        "target_power": found.target_power,
        "achieved_power": found.check.power,
        **adapter.detectable_report(layout, sizes, found.noncentrality),
    }
    return out
