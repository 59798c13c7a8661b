"""GET /v1/designs: every registered design, its generated parameters and working examples."""

from __future__ import annotations

import json

import pytest

from samplewright import create_app
from samplewright.api import catalogue as cat
from samplewright.api.designs import ADAPTERS, SCHEMAS
from samplewright.config import Settings

TYPES = sorted(ADAPTERS)


def _reject_constant(name):
    raise ValueError(f"{name} is not JSON")


@pytest.fixture(scope="module")
def client():
    """A test client of an app built from explicit default settings."""
    return create_app(Settings()).test_client()


@pytest.fixture(scope="module")
def listing(client) -> dict:
    """The catalogue as served."""
    response = client.get("/v1/designs")
    assert response.status_code == 200
    assert response.mimetype == "application/json"
    return json.loads(response.get_data(as_text=True), parse_constant=_reject_constant)


@pytest.fixture(scope="module")
def document(client) -> dict:
    """The OpenAPI document as served."""
    return json.loads(client.get("/openapi.json").get_data(as_text=True))


def entry(listing: dict, kind: str) -> dict:
    return next(d for d in listing["designs"] if d["type"] == kind)


def test_every_registered_design_is_listed(listing):
    """The catalogue lists exactly the registry's designs, sorted by type."""
    assert [d["type"] for d in listing["designs"]] == TYPES
    assert listing["count"] == len(TYPES)
    assert listing["operations"] == cat.OPERATIONS


def test_catalogue_matches_its_documented_schema(listing):
    """The body validates against CatalogueSchema (no undocumented or missing keys)."""
    assert cat.CatalogueSchema().validate(listing) == {}


@pytest.mark.parametrize("kind", TYPES)
def test_parameters_are_the_schema_fields(listing, kind):
    """Each design's parameters are its schema's fields, in order, with their required flags."""
    schema = SCHEMAS[kind]
    params = entry(listing, kind)["parameters"]
    assert [p["name"] for p in params] == [f.data_key or n for n, f in schema.load_fields.items()]
    assert {p["name"]: p["required"] for p in params} == {
        f.data_key or n: f.required for n, f in schema.load_fields.items()
    }


@pytest.mark.parametrize("kind", TYPES)
def test_parameters_are_generated_like_the_openapi_document(listing, document, kind):
    """Each parameter's JSON Schema is the OpenAPI component's property (the same generator)."""
    item = entry(listing, kind)
    name = item["schema_ref"].rsplit("/", 1)[1]
    component = document["components"]["schemas"][name]
    assert item["json_schema"] == component
    for p in item["parameters"]:
        prop = dict(component["properties"][p["name"]])
        assert p["description"] == prop.pop("description", None)
        assert p["schema"] == prop


@pytest.mark.parametrize("kind", TYPES)
def test_descriptions_are_the_adapters(listing, kind):
    """Title, method, formula, assumptions and effect fields come from the adapter."""
    adapter, item = ADAPTERS[kind], entry(listing, kind)
    assert item["title"] == adapter.title
    assert item["method"] == {"id": adapter.method_id, "reference": adapter.reference}
    assert item["formula"] == adapter.formula
    assert item["assumptions"] == list(adapter.assumptions)
    assert item["effect_fields"] == list(adapter.effect_fields)
    assert item["approximation_tolerance"] == getattr(adapter, "approximation_tolerance", None)
    assert {"power", "sample-size", "detectable-effect"} <= set(item["operations"])


def _example_cases():
    for kind in TYPES:
        for operation in cat.OPERATIONS:
            yield pytest.param(kind, operation, id=f"{kind}-{operation}")


@pytest.mark.parametrize(("kind", "operation"), list(_example_cases()))
def test_examples_answer_200(client, listing, kind, operation):
    """Each listed example request answers 200 on its route."""
    adapter, item = ADAPTERS[kind], entry(listing, kind)
    if getattr(adapter, "example", None) is None:
        pytest.skip(f"{kind}: adapter has no `example` yet")
    if operation not in item["examples"]:
        # Every design supports power and sample size, so those examples must exist.
        assert operation not in ("power", "sample-size"), f"{kind}: no {operation} example"
        pytest.skip(f"{kind}: no {operation} example (see test_detectable_example_is_listed)")
    assert operation in item["operations"]
    body = item["examples"][operation]
    response = client.post(cat.OPERATIONS[operation], data=json.dumps(body), content_type="application/json")
    assert response.status_code == 200, response.get_data(as_text=True)[:2000]
    answer = json.loads(response.get_data(as_text=True), parse_constant=_reject_constant)
    assert answer["design_type"] == kind


@pytest.mark.parametrize("kind", TYPES)
def test_example_is_a_valid_power_design(kind):
    """adapter.example loads with the design's schema and example_sizes is a positive integer."""
    adapter = ADAPTERS[kind]
    if getattr(adapter, "example", None) is None:
        pytest.skip(f"{kind}: adapter has no `example` yet")
    assert SCHEMAS[kind].validate(adapter.example) == {}
    assert isinstance(adapter.example_sizes, int) and adapter.example_sizes >= 1


@pytest.mark.parametrize("kind", TYPES)
def test_detectable_example_is_listed(listing, kind):
    """A design with an example also has a working detectable-effect example."""
    adapter = ADAPTERS[kind]
    if getattr(adapter, "example", None) is None:
        pytest.skip(f"{kind}: adapter has no `example` yet")
    assert "detectable-effect" in entry(listing, kind)["examples"], (
        f"{kind}: `example` without its effect fields is not a valid detectable-effect design; "
        "give the adapter an `example_detectable`"
    )


def test_catalogue_is_built_once():
    """The served text is built once per process and reused."""
    assert cat.catalogue_json() is cat.catalogue_json()
    fresh = cat.catalogue()
    fresh["designs"].clear()  # callers get a copy
    assert cat.catalogue()["designs"]


def test_post_is_405_problem(client):
    """POST on the catalogue is a 405 problem with Allow."""
    response = client.post("/v1/designs", data="{}", content_type="application/json")
    assert response.status_code == 405
    assert response.mimetype == "application/problem+json"
    assert "GET" in response.headers["Allow"]


def test_catalogue_is_in_the_openapi_document(document):
    """The generated document has GET /v1/designs with the catalogue schema."""
    op = document["paths"]["/v1/designs"]["get"]
    assert op["responses"]["200"]["content"]["application/json"]["schema"]["$ref"].endswith("/Catalogue")
