"""The OpenAPI 3.1 document, generated from the schemas and the endpoint list.

``python -m samplewright.cli spec --write`` writes ``openapi/openapi.json``;
``--check`` exits non-zero when the committed file differs from the generated one.
"""

from __future__ import annotations

import functools
import json

from apispec import APISpec
from apispec.ext.marshmallow import MarshmallowPlugin

from .._version import __version__
from .designs import ADAPTERS
from .fields import Bounded, BoundedList
from .routes import ENDPOINTS
from .schemas import DesignField, ProblemSchema

DESCRIPTION = (
    "Power, required sample size and detectable effect for comparisons of group means. "
    "All computation endpoints take and return JSON; every error is RFC 9457 problem details "
    "(`application/problem+json`). Results rest on the stated assumptions and do not replace a "
    "statistician's review; local regulations and ethics boards decide what is acceptable."
)


def _schema_name(schema) -> str:
    cls = schema if isinstance(schema, type) else type(schema)
    name = cls.__name__
    return name[: -len("Schema")] if name.endswith("Schema") else name


def _design_union(self, field, **kwargs):
    """``design`` as a oneOf over the registered designs, discriminated on ``type``."""
    if not isinstance(field, DesignField):
        return {}
    refs = {name: f"#/components/schemas/{_schema_name(a.schema)}" for name, a in sorted(ADAPTERS.items())}
    return {
        "type": "object",
        "oneOf": [{"$ref": ref} for ref in refs.values()],
        "discriminator": {"propertyName": "type", "mapping": refs},
    }


def _exclusive_bounds(self, field, ret, **kwargs):
    """apispec writes inclusive bounds only; OpenAPI 3.1 wants numeric exclusive ones."""
    out = {}
    for v in field.validators:
        if isinstance(v, Bounded) and not isinstance(field, BoundedList):
            if v.min is not None and not v.min_inclusive:
                out["exclusiveMinimum"] = v.min
                ret.pop("minimum", None)
            if v.max is not None and not v.max_inclusive:
                out["exclusiveMaximum"] = v.max
                ret.pop("maximum", None)
    return out


def build_spec() -> dict:
    plugin = MarshmallowPlugin(schema_name_resolver=_schema_name)
    spec = APISpec(
        title="samplewright",
        version=__version__,
        openapi_version="3.1.0",
        plugins=[plugin],
        info={"description": DESCRIPTION, "license": {"name": "MIT", "identifier": "MIT"}},
    )
    plugin.converter.add_attribute_function(_design_union)
    plugin.converter.add_attribute_function(_exclusive_bounds)
    for adapter in sorted(ADAPTERS.values(), key=lambda a: a.type):
        spec.components.schema(_schema_name(adapter.schema), schema=adapter.schema)
    spec.components.schema("Problem", schema=ProblemSchema)
    # Documented, not required: API keys are a per-deployment choice (SAMPLEWRIGHT_API_KEYS).
    spec.components.security_scheme("bearerKey", {"type": "http", "scheme": "bearer",
                                                  "description": "An API key as a bearer token."})
    spec.components.security_scheme("headerKey", {"type": "apiKey", "in": "header", "name": "X-API-Key"})
    problem = {"application/problem+json": {"schema": {"$ref": "#/components/schemas/Problem"}}}
    by_path: dict[str, dict] = {}
    for ep in ENDPOINTS:
        op: dict = {"summary": ep.summary, "tags": [ep.tag], "operationId": ep.path.strip("/").replace("/", "_").replace("-", "_").replace(".", "_"), "responses": {}}
        if ep.response is not None:
            op["responses"]["200"] = {"description": "OK", "content": {ep.media_type: {"schema": ep.response}}}
        else:
            fallback = {"type": "object"} if ep.media_type == "application/json" else {"type": "string"}
            op["responses"]["200"] = {"description": "OK", "content": {ep.media_type: {"schema": fallback}}}
        for other in ep.also:  # a chart instead of the JSON points, chosen by Accept
            op["responses"]["200"]["content"][other] = {"schema": {"type": "string", "contentMediaType": other}}
        if ep.request is not None:
            op["requestBody"] = {"required": True, "content": {"application/json": {"schema": ep.request}}}
            for code, why in (("400", "Body is not valid JSON."), ("408", "Body not received in time."),
                              ("413", "Body too large."), ("415", "Body is not application/json."),
                              ("422", "Invalid or not computable.")):
                op["responses"][code] = {"description": why, "content": problem}
        for code, why in ep.problems:
            op["responses"][code] = {"description": why, "content": problem}
        op["responses"]["401"] = {"description": "API key missing or not accepted (only when the "
                                  "service is configured with API keys).", "content": problem}
        op["responses"]["405"] = {"description": "Method not allowed.", "content": problem}
        op["responses"]["500"] = {"description": "Internal error (never for client input).", "content": problem}
        by_path.setdefault(ep.path, {})[ep.method.lower()] = op
    for path, ops in by_path.items():
        spec.path(path=path, operations=ops)
    return spec.to_dict()


@functools.cache
def document(pretty: bool = True) -> str:
    """The document as deterministic JSON text (sorted keys)."""
    spec = build_spec()
    if pretty:
        return json.dumps(spec, indent=2, sort_keys=True, ensure_ascii=False) + "\n"
    return json.dumps(spec, sort_keys=True, separators=(",", ":"))
