"""The OpenAPI document: committed = generated, valid 3.1, in step with the app, and true.

"True" means real responses of every endpoint validate against the response schemas the
document gives, and every problem body validates against the Problem schema.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from openapi_schema_validator import OAS31Validator
from openapi_spec_validator import validate as validate_spec
from referencing import Registry, Resource
from referencing.jsonschema import DRAFT202012

from samplewright.api.openapi import document

ROOT = Path(__file__).resolve().parents[2]
SPEC_FILE = ROOT / "openapi" / "openapi.json"
SPEC_URI = "urn:samplewright:openapi"
POWER, SAMPLE, DETECT = "/v1/power", "/v1/sample-size", "/v1/detectable-effect"
IGNORED_METHODS = {"HEAD", "OPTIONS"}  # added by Flask to every rule, not documented


@pytest.fixture(scope="module")
def spec() -> dict:
    """The generated document as a dict."""
    return json.loads(document())


@pytest.fixture(scope="module")
def registry(spec) -> Registry:
    """A registry in which the document's ``#/components/...`` references resolve."""
    return Registry().with_resource(SPEC_URI, Resource.from_contents(spec, default_specification=DRAFT202012))


def _pointer(*parts: str) -> str:
    """A JSON pointer fragment (RFC 6901) into the document."""
    return "#/" + "/".join(p.replace("~", "~0").replace("/", "~1") for p in parts)


def validator_for(registry: Registry, fragment: str) -> OAS31Validator:
    """An OpenAPI 3.1 validator for the schema at ``fragment``; its own ``#/...`` references
    resolve in the document, since the schema is reached by reference into it."""
    return OAS31Validator({"$ref": SPEC_URI + fragment}, registry=registry)


def response_schema(path: str, method: str, status: str, media: str) -> str:
    """The fragment of a documented response schema."""
    return _pointer("paths", path, method, "responses", status, "content", media, "schema")


def _design(**fields):
    return {"type": "one_way_anova", **fields}


# -- the document itself -----------------------------------------------------------------


def test_committed_document_is_the_generated_one():
    """openapi/openapi.json is exactly what `samplewright spec --write` produces (no drift)."""
    assert SPEC_FILE.read_text(encoding="utf-8") == document(), "run `samplewright spec --write`"


def test_document_is_valid_openapi_31(spec):
    """The document validates as OpenAPI 3.1."""
    assert spec["openapi"].startswith("3.1")
    validate_spec(spec)


def test_served_document_is_the_generated_one(client):
    """GET /openapi.json serves the same document (compact) as the file."""
    response = client.get("/openapi.json")
    assert response.status_code == 200 and response.mimetype == "application/json"
    assert json.loads(response.get_data()) == json.loads(document())


def test_routes_and_documented_operations_are_the_same(app, spec):
    """The app's rules (without 'static') and the document's paths and methods are identical."""
    served = {
        (rule.rule, method.lower())
        for rule in app.url_map.iter_rules()
        if rule.endpoint != "static"
        for method in rule.methods - IGNORED_METHODS
    }
    documented = {(path, method) for path, ops in spec["paths"].items() for method in ops}
    assert served == documented


@pytest.mark.parametrize("path", [POWER, SAMPLE, DETECT])
def test_compute_routes_document_every_error_status(spec, path):
    """Each compute route documents 400, 405, 413, 415, 422 and 500 as problem+json."""
    responses = spec["paths"][path]["post"]["responses"]
    for status in ("400", "405", "413", "415", "422", "500"):
        assert responses[status]["content"]["application/problem+json"]["schema"] == {
            "$ref": "#/components/schemas/Problem"}
    assert spec["paths"][path]["post"]["requestBody"]["required"] is True


@pytest.mark.parametrize(
    "schema, field, bound, value",
    [
        ("SampleSizeRequest", "target_power", "exclusiveMinimum", 0),
        ("DetectableEffectRequest", "target_power", "exclusiveMinimum", 0),
        ("OneWayAnovaDesign", "sd", "exclusiveMinimum", 0),
        ("SampleSizeRequest", "target_power", "maximum", 0.9999),
        ("PowerRequest", "alpha", "minimum", 1e-12),
        ("PowerRequest", "alpha", "maximum", 0.5),
        ("SampleSizeRequest", "dropout_rate", "maximum", 0.9),
        ("OneWayAnovaDesign", "cohens_f", "maximum", 10),
    ],
    ids=lambda v: str(v),
)
def test_bounds_are_documented_exactly(spec, schema, field, bound, value):
    """Inclusive bounds are minimum/maximum; exclusive ones are numeric exclusiveMinimum (3.1 style)."""
    prop = spec["components"]["schemas"][schema]["properties"][field]
    assert prop[bound] == value
    if bound == "exclusiveMinimum":
        assert "minimum" not in prop and not isinstance(prop[bound], bool)


def test_exclusive_bound_inside_a_list_is_documented(spec):
    """Allocation ratios (items of a list) carry exclusiveMinimum 0 too."""
    items = spec["components"]["schemas"]["OneWayAnovaDesign"]["properties"]["allocation"]["items"]
    assert items["exclusiveMinimum"] == 0 and "minimum" not in items


def test_list_lengths_are_documented(spec):
    """List bounds appear as minItems/maxItems (checked before the items, see row 24)."""
    props = spec["components"]["schemas"]["PowerRequest"]["properties"]
    assert (props["group_sizes"]["minItems"], props["group_sizes"]["maxItems"]) == (1, 100)
    means = spec["components"]["schemas"]["OneWayAnovaDesign"]["properties"]["group_means"]
    assert (means["minItems"], means["maxItems"]) == (2, 100)


def test_requests_refuse_unknown_fields_in_the_document(spec):
    """Request schemas and design schemas say additionalProperties: false, as the service does."""
    schemas = spec["components"]["schemas"]
    for name in ("PowerRequest", "SampleSizeRequest", "DetectableEffectRequest", "OneWayAnovaDesign"):
        assert schemas[name]["additionalProperties"] is False


# -- real traffic against the document ---------------------------------------------------


SUCCESSES = [
    (POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 20}),
    (POWER, {"design": _design(group_means=[1, 2, 3], sd=2.0), "group_sizes": [10, 20, 30], "alpha": 0.01}),
    (POWER, {"design": _design(groups=3, eta_squared=0.06, allocation=[1, 2, 3]), "n_per_group": 4}),
    (POWER, {"design": _design(groups=2, min_range=1.0, sd=1.0), "n_per_group": 200}),
    (SAMPLE, {"design": _design(groups=3, cohens_f=0.25), "target_power": 0.8}),
    (SAMPLE, {"design": _design(groups=2, cohens_f=0.25), "target_power": 0.8, "dropout_rate": 0.2}),
    (SAMPLE, {"design": _design(group_means=[0, 1, 1], sd=1.0, allocation=[1, 2, 2]), "target_power": 0.9}),
    (SAMPLE, {"design": _design(groups=2, cohens_f=10), "target_power": 0.8}),  # one_step_smaller null
    (DETECT, {"design": _design(groups=4, sd=2.0), "n_per_group": 20, "target_power": 0.8}),
    (DETECT, {"design": _design(groups=3), "group_sizes": [5, 10, 15], "target_power": 0.9, "alpha": 0.01}),
    (DETECT, {"design": _design(sd=1.0, allocation=[1, 1, 2]), "n_per_group": 10, "target_power": 0.8}),
]
SUCCESS_IDS = [f"{p.rsplit('/', 1)[-1]}-{i}" for i, (p, _) in enumerate(SUCCESSES)]


@pytest.mark.parametrize("path, body", SUCCESSES, ids=SUCCESS_IDS)
def test_compute_responses_validate_against_the_document(post_json, assert_ok, registry, path, body):
    """A real 200 of each compute endpoint validates against the documented response schema."""
    out = assert_ok(post_json(path, body))
    validator_for(registry, response_schema(path, "post", "200", "application/json")).validate(out)


@pytest.mark.parametrize("path, body", SUCCESSES, ids=SUCCESS_IDS)
def test_requests_sent_validate_against_the_document(registry, path, body):
    """The valid requests above are valid by the documented request schema too."""
    fragment = _pointer("paths", path, "post", "requestBody", "content", "application/json", "schema")
    validator_for(registry, fragment).validate(body)


def test_null_fields_of_sample_size_are_documented_as_nullable(post_json, assert_ok, registry):
    """n_per_group, one_step_smaller and enrolment may be null, and the document allows it."""
    out = assert_ok(post_json(SAMPLE, {"design": _design(groups=2, cohens_f=10, allocation=[1, 2]),
                                       "target_power": 0.8}))
    assert out["n_per_group"] is None and out["enrolment"] is None and out["one_step_smaller"] is None
    validator_for(registry, response_schema(SAMPLE, "post", "200", "application/json")).validate(out)


@pytest.mark.parametrize("path", ["/v1/version", "/healthz", "/openapi.json"])
def test_service_responses_validate_against_the_document(client, registry, path):
    """GET /v1/version, /healthz and /openapi.json answer what the document says."""
    response = client.get(path)
    assert response.status_code == 200
    validator_for(registry, response_schema(path, "get", "200", "application/json")).validate(
        json.loads(response.get_data()))


PROBLEMS = [
    (POWER, b"", "application/json", 400),
    (SAMPLE, b'{"alpha": NaN}', "application/json", 400),
    (DETECT, b"{}", "text/plain", 415),
    (POWER, b" " * (1024 * 1024), "application/json", 413),  # 1 MiB, far over the 64 KiB test limit
    (POWER, b"{}", "application/json", 422),
    (SAMPLE, json.dumps({"design": _design(groups=3, cohens_f=1e-9), "target_power": 0.8}).encode(),
     "application/json", 422),
    (POWER, json.dumps({"design": _design(groups=3, cohens_f="x"), "group_sizes": ["y"] * 100}).encode(),
     "application/json", 422),  # capped, with errors_omitted
]


@pytest.mark.parametrize("path, data, content_type, status", PROBLEMS,
                         ids=[f"{s}-{i}" for i, (_, _, _, s) in enumerate(PROBLEMS)])
def test_problem_bodies_validate_against_the_problem_schema(client, assert_problem, registry, path, data, content_type, status):
    """Problem bodies (400, 413, 415, 422, capped 422) validate against the documented schema."""
    response = client.post(path, data=data, content_type=content_type)
    problem = assert_problem(response, status)
    validator_for(registry, response_schema(path, "post", str(status), "application/problem+json")).validate(problem)


def test_405_and_404_problems_validate_against_the_problem_schema(client, assert_problem, registry):
    """The framework's own errors (405, 404) are problems of the documented shape too."""
    schema = response_schema(POWER, "post", "405", "application/problem+json")
    validator_for(registry, schema).validate(assert_problem(client.get(POWER), 405))
    validator_for(registry, schema).validate(assert_problem(client.get("/nope"), 404))


def test_500_problem_validates_against_the_problem_schema(post_json, assert_problem, registry, monkeypatch):
    """An internal error's problem body matches the documented 500 response."""
    monkeypatch.setattr("samplewright.core.planning.power", lambda *a, **k: 1 / 0)
    problem = assert_problem(post_json(POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 20}), 500)
    validator_for(registry, response_schema(POWER, "post", "500", "application/problem+json")).validate(problem)


def test_validator_rejects_a_wrong_response(registry):
    """The schema check has teeth: a response missing `power` or with an extra key fails."""
    from jsonschema.exceptions import ValidationError

    validator = validator_for(registry, response_schema(POWER, "post", "200", "application/json"))
    with pytest.raises(ValidationError):
        validator.validate({"alpha": 0.05})
    problem = validator_for(registry, "#/components/schemas/Problem")
    with pytest.raises(ValidationError):
        problem.validate({"type": "about:blank", "title": "x", "status": "422", "detail": "d"})
