"""``GET /v1/designs``: every registered design, described from the schemas that validate it.

Nothing here is a second, hand-kept list: each design's parameters are its marshmallow
schema as the OpenAPI document renders it (the same apispec conversion, read back from
the generated document), in the schema's field order; the title, formula, reference,
method id and assumptions are the adapter's own attributes; the example requests are
built from the adapter's ``example`` (a valid ``design`` object with invented numbers)
and ``example_sizes`` (a valid ``n_per_group``). The detectable-effect example is the
adapter's ``example_detectable`` when it has one, otherwise ``example`` without its
effect fields; it is listed only when the schema and the adapter's ``layout`` accept it.

The catalogue is built once per process, on first use.
"""

from __future__ import annotations

import copy
import functools
import json
from typing import Any

from marshmallow import Schema, ValidationError, fields

from ..core import simulate as mc
from .designs import ADAPTERS, SCHEMAS
from .schemas import MethodSchema

#: Operation id → route; every design answers the first three through the generic engine.
OPERATIONS = {
    "power": "/v1/power",
    "sample-size": "/v1/sample-size",
    "detectable-effect": "/v1/detectable-effect",
    "simulate": "/v1/simulate",
}
EXAMPLE_ALPHA = 0.05
EXAMPLE_TARGET_POWER = 0.8
#: Depth bound when inlining ``$ref``s of the generated document (design schemas are flat).
_MAX_REF_DEPTH = 20


# -- response schema (documentation and contract tests) ---------------------------------


class ParameterSchema(Schema):
    name = fields.String(required=True, metadata={"description": "Field name inside `design`."})
    required = fields.Boolean(required=True)
    description = fields.String(required=True, allow_none=True)
    schema = fields.Dict(required=True, metadata={"description": "JSON Schema of the field (type, bounds, items)."})


class DesignEntrySchema(Schema):
    type = fields.String(required=True, metadata={"description": "The `design.type` value that selects it."})
    title = fields.String(required=True)
    description = fields.String(required=True)
    method = fields.Nested(MethodSchema, required=True)
    formula = fields.String(required=True, metadata={"description": "The formula in words."})
    assumptions = fields.List(fields.String(), required=True)
    effect_fields = fields.List(fields.String(), required=True,
                                metadata={"description": "Fields that state the effect (left out for detectable-effect)."})
    parameters = fields.List(fields.Nested(ParameterSchema), required=True,
                             metadata={"description": "Every field of `design`, generated from its schema."})
    json_schema = fields.Dict(required=True, metadata={"description": "The whole `design` object as JSON Schema."})
    schema_ref = fields.String(required=True, metadata={"description": "The same schema in this service's OpenAPI document."})
    operations = fields.List(fields.String(metadata={"enum": list(OPERATIONS)}), required=True)
    approximation_tolerance = fields.Float(
        required=True, allow_none=True,
        metadata={"description": "Documented error of the analytic power when it is an approximation (null: exact)."},
    )
    examples = fields.Dict(
        keys=fields.String(metadata={"enum": list(OPERATIONS)}), values=fields.Dict(), required=True,
        metadata={"description": "A valid request body per operation (invented numbers)."},
    )


class CatalogueSchema(Schema):
    """Every design the service plans, with the parameters its schema accepts."""

    count = fields.Integer(required=True)
    operations = fields.Dict(keys=fields.String(), values=fields.String(), required=True,
                             metadata={"description": "Operation id → route."})
    designs = fields.List(fields.Nested(DesignEntrySchema), required=True)


# -- building ------------------------------------------------------------------------------


def _inline(node: Any, components: dict, depth: int = 0) -> Any:
    """``node`` with every ``#/components/schemas/X`` reference replaced by X (bounded depth)."""
    if depth > _MAX_REF_DEPTH:
        raise RecursionError("schema references nest too deeply to inline")
    if isinstance(node, dict):
        ref = node.get("$ref")
        if isinstance(ref, str) and ref.startswith("#/components/schemas/"):
            return _inline(components[ref.rsplit("/", 1)[1]], components, depth + 1)
        return {key: _inline(value, components, depth + 1) for key, value in node.items()}
    if isinstance(node, list):
        return [_inline(item, components, depth + 1) for item in node]
    return node


def _parameters(schema: Schema, json_schema: dict) -> list[dict]:
    """One entry per load field of ``schema``, in declaration order, from its JSON Schema."""
    props = json_schema.get("properties", {})
    required = set(json_schema.get("required", []))
    out = []
    for name, field in schema.load_fields.items():
        key = field.data_key or name
        prop = dict(props.get(key, {}))
        description = prop.pop("description", None)
        out.append({"name": key, "required": key in required, "description": description, "schema": prop})
    return out


def _detectable_example(adapter, design: dict) -> dict | None:
    """``example_detectable`` or the example without its effect, if the schema and layout accept it."""
    candidate = getattr(adapter, "example_detectable", None)
    if candidate is None:
        candidate = {k: v for k, v in design.items() if k not in set(adapter.effect_fields)}
    try:
        fields_ = SCHEMAS[adapter.type].load(copy.deepcopy(candidate))
        adapter.layout(fields_, None)
    except (ValidationError, ValueError):
        return None
    return candidate


def _supports_simulation(adapter, design: dict) -> bool:
    try:
        built = adapter.build(SCHEMAS[adapter.type].load(copy.deepcopy(design)), None)
    except (ValidationError, ValueError):
        return False
    return mc.has_simulator(built)


def _examples(adapter) -> tuple[dict, list[str]]:
    """Example bodies per operation, and the operations the design supports."""
    ops = ["power", "sample-size", "detectable-effect"]
    design = getattr(adapter, "example", None)
    n = getattr(adapter, "example_sizes", None)
    if design is None or n is None:
        return {}, ops
    examples: dict[str, dict] = {
        "power": {"alpha": EXAMPLE_ALPHA, "n_per_group": n, "design": design},
        "sample-size": {"alpha": EXAMPLE_ALPHA, "target_power": EXAMPLE_TARGET_POWER, "design": design},
    }
    detectable = _detectable_example(adapter, design)
    if detectable is not None:
        examples["detectable-effect"] = {
            "alpha": EXAMPLE_ALPHA, "target_power": EXAMPLE_TARGET_POWER, "n_per_group": n, "design": detectable,
        }
    if _supports_simulation(adapter, design):
        ops.append("simulate")
        examples["simulate"] = {"alpha": EXAMPLE_ALPHA, "n_per_group": n, "design": design, "seed": 0}
    return examples, ops


def _entry(adapter, components: dict, name_of) -> dict:
    name = name_of(adapter.schema)
    json_schema = _inline(components[name], components)
    examples, ops = _examples(adapter)
    tolerance = getattr(adapter, "approximation_tolerance", None)
    doc = (adapter.schema.__doc__ or adapter.title).strip().splitlines()[0]
    return {
        "type": adapter.type,
        "title": adapter.title,
        "description": doc,
        "method": {"id": adapter.method_id, "reference": adapter.reference},
        "formula": adapter.formula,
        "assumptions": list(adapter.assumptions),
        "effect_fields": list(adapter.effect_fields),
        "parameters": _parameters(SCHEMAS[adapter.type], json_schema),
        "json_schema": json_schema,
        "schema_ref": f"#/components/schemas/{name}",
        "operations": ops,
        "approximation_tolerance": None if tolerance is None else float(tolerance),
        "examples": examples,
    }


@functools.cache
def _built() -> str:
    # The OpenAPI module imports the route list, which imports this module: import it here.
    from .openapi import _schema_name, document

    components = json.loads(document(pretty=False))["components"]["schemas"]
    designs = [_entry(ADAPTERS[t], components, _schema_name) for t in sorted(ADAPTERS)]
    body = {"count": len(designs), "operations": dict(OPERATIONS), "designs": designs}
    return json.dumps(body, allow_nan=False, ensure_ascii=False, separators=(",", ":"))


def catalogue_json() -> str:
    """The catalogue as JSON text (built once per process)."""
    return _built()


def catalogue() -> dict:
    """The catalogue as a fresh dict (callers may change it)."""
    return json.loads(_built())
