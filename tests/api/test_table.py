"""POST /v1/table: every row equals the single endpoint's answer, bit for bit, and its errors.

The reference is the single endpoint itself (exact equality, tolerance 0): a few hundred
seeded, mixed rows are sent as one table and each row again to /v1/power, /v1/sample-size
or /v1/detectable-effect. Invalid rows must carry the message the single endpoint gives for
the same field, and leave the other rows answered.
"""

from __future__ import annotations

import json
import random

import numpy as np
import pytest

from samplewright.api import table as table_module
from samplewright.api.provenance import request_digest
from samplewright.app import create_app
from samplewright.config import Settings
from samplewright.core.designs.one_way import OneWayAnova
from samplewright.core.vectorised import Rows

TABLE = "/v1/table"
LIMITS = Settings(max_body_bytes=64 * 1024, max_batch_items=10_000, max_batch_bytes=4 * 1024 * 1024)
DESIGN = {"type": "one_way_anova"}


@pytest.fixture(scope="module")
def client():
    """A test client of an app built from explicit settings."""
    return create_app(LIMITS).test_client()


def _post(client, path: str, body) -> tuple[int, dict]:
    data = body if isinstance(body, str | bytes) else json.dumps(body)
    response = client.post(path, data=data, content_type="application/json")
    return response.status_code, json.loads(response.get_data())


def _table(client, operation: str, columns: dict, **extra) -> dict:
    status, body = _post(client, TABLE, {"operation": operation, "design": DESIGN, "columns": columns, **extra})
    assert status == 200, body
    return body


def _single_body(operation: str, columns: dict, i: int) -> dict:
    def at(name):
        value = columns[name]
        return value[i] if isinstance(value, list) else value

    design = {"type": "one_way_anova", "groups": at("groups")}
    for effect in ("cohens_f", "eta_squared"):
        if effect in columns:
            design[effect] = at(effect)
    body = {"design": design}
    for name in ("n_per_group", "alpha", "target_power", "dropout_rate"):
        if name in columns:
            body[name] = at(name)
    return body


def _power_columns(rng: random.Random, count: int, effect: str) -> dict:
    values = ([round(rng.uniform(0.0, 1.2), 4) for _ in range(count)] if effect == "cohens_f"
              else [round(rng.uniform(0.0, 0.5), 4) for _ in range(count)])
    return {
        effect: values,
        "groups": [rng.randint(2, 9) for _ in range(count)],
        "n_per_group": [rng.choice([2, 3, 5, rng.randint(2, 400), 20.0]) for _ in range(count)],
        "alpha": [rng.choice([0.05, 0.01, 0.1, 1e-6, 0.5]) for _ in range(count)],
    }


@pytest.mark.parametrize("effect", ["cohens_f", "eta_squared"])
def test_power_rows_equal_single_calls_bit_for_bit(client, effect):
    """Each of 300 mixed power rows equals /v1/power for that row, every number exactly."""
    rng = random.Random(f"power-{effect}")
    columns = _power_columns(rng, 300, effect)
    got = _table(client, "power", columns,
                 results=["power", "noncentrality", "critical_value", "df_numerator", "df_denominator",
                          "n_total", "cohens_f", "eta_squared"])
    assert got["summary"] == {"rows": 300, "succeeded": 300, "failed": 0, "errors_listed": 0, "errors_omitted": 0}
    out = got["columns"]
    for i in range(300):
        status, single = _post(client, "/v1/power", _single_body("power", columns, i))
        assert status == 200
        for name in ("power", "noncentrality", "critical_value", "df_numerator", "df_denominator", "n_total"):
            assert out[name][i] == single[name], (i, name)
        assert out["cohens_f"][i] == single["effect"]["cohens_f"]
        assert out["eta_squared"][i] == single["effect"]["eta_squared"]


def test_default_power_results_and_integer_counts(client):
    """power returns its six default columns; counts and degrees of freedom are JSON integers."""
    got = _table(client, "power", {"cohens_f": 0.25, "groups": 4, "n_per_group": [45, 10]})
    assert list(got["columns"]) == ["power", "noncentrality", "critical_value", "df_numerator",
                                    "df_denominator", "n_total"]
    assert got["columns"]["df_denominator"] == [176, 36]
    assert got["columns"]["power"][0] == 0.8039869128651759


def test_sample_size_rows_equal_single_calls_bit_for_bit(client):
    """Each of 200 sample-size rows (with dropout, unreachable targets) equals /v1/sample-size."""
    rng = random.Random("sample-size")
    count = 200
    columns = {
        "cohens_f": [rng.choice([0.0, 0.002, round(rng.uniform(0.05, 1.5), 3)]) for _ in range(count)],
        "groups": [rng.randint(2, 7) for _ in range(count)],
        "alpha": [rng.choice([0.05, 0.01, 0.1]) for _ in range(count)],
        "target_power": [rng.choice([0.8, 0.9, 0.95, 0.5]) for _ in range(count)],
        "dropout_rate": [rng.choice([0.0, 0.0, 0.1, 0.35]) for _ in range(count)],
    }
    got = _table(client, "sample-size", columns)
    out = got["columns"]
    errors = {e["row"]: e for e in got["errors"]}
    assert got["summary"]["failed"] == len(errors) > 0
    for i in range(count):
        status, single = _post(client, "/v1/sample-size", _single_body("sample-size", columns, i))
        if status != 200:
            entry = errors[i]
            assert single["errors"][entry["field"] if entry["field"] == "target_power" else "design"] == [
                entry["message"]]
            assert all(out[name][i] is None for name in out)
            continue
        assert i not in errors
        for name in ("n_per_group", "n_total", "noncentrality", "critical_value", "df_numerator",
                     "df_denominator"):
            assert out[name][i] == single[name], (i, name)
        assert out["achieved_power"][i] == single["achieved_power"]
        step = single["one_step_smaller"]
        assert out["one_step_smaller_power"][i] == (None if step is None else step["power"])
        enrol = single["enrolment"]
        assert out["enrolment_n_per_group"][i] == (None if enrol is None else enrol["group_sizes"][0])
        assert out["enrolment_n_total"][i] == (None if enrol is None else enrol["n_total"])
        assert out["cohens_f"][i] == single["effect"]["cohens_f"]
        assert out["eta_squared"][i] == single["effect"]["eta_squared"]


def test_detectable_rows_equal_single_calls_bit_for_bit(client):
    """Each of 150 detectable-effect rows equals /v1/detectable-effect for that row."""
    rng = random.Random("detectable")
    count = 150
    columns = {
        "groups": [rng.randint(2, 8) for _ in range(count)],
        "n_per_group": [rng.choice([2, 4, rng.randint(2, 500)]) for _ in range(count)],
        "alpha": [rng.choice([0.05, 0.01, 0.1]) for _ in range(count)],
        "target_power": [rng.choice([0.8, 0.9, 0.99]) for _ in range(count)],
    }
    out = _table(client, "detectable-effect", columns)["columns"]
    for i in range(count):
        status, single = _post(client, "/v1/detectable-effect", _single_body("detectable-effect", columns, i))
        assert status == 200
        for name in ("cohens_f", "eta_squared", "noncentrality", "achieved_power", "critical_value",
                     "df_numerator", "df_denominator", "n_total"):
            assert out[name][i] == single[name], (i, name)


BAD_ENTRIES = [
    ("cohens_f", 11), ("cohens_f", -0.5), ("cohens_f", "0.3"), ("cohens_f", True), ("cohens_f", None),
    ("groups", 1), ("groups", 2.5), ("groups", 101), ("groups", "3"),
    ("n_per_group", 0), ("n_per_group", 1), ("n_per_group", 3.5), ("n_per_group", 10_000_001),
    ("alpha", 0.6), ("alpha", 0), ("alpha", [0.05]),
]


def test_invalid_rows_carry_the_single_endpoints_messages(client):
    """A bad entry's row lists the message /v1/power gives for that field; the other rows are answered."""
    count = len(BAD_ENTRIES) * 2
    columns = {"cohens_f": [0.25] * count, "groups": [3] * count, "n_per_group": [20] * count,
               "alpha": [0.05] * count}
    for j, (name, value) in enumerate(BAD_ENTRIES):
        columns[name][2 * j] = value  # odd rows stay valid
    got = _table(client, "power", columns)
    by_row = {e["row"]: e for e in got["errors"]}
    assert sorted(by_row) == list(range(0, count, 2))
    assert got["summary"]["failed"] == len(BAD_ENTRIES)
    for j, (name, value) in enumerate(BAD_ENTRIES):
        entry = by_row[2 * j]
        status, single = _post(client, "/v1/power", _single_body("power", columns, 2 * j))
        assert status == 422
        assert entry["field"] == name
        assert single["errors"][table_module.SINGLE_FIELD[name]] == [entry["message"]], (name, value)
        assert entry["value"] == (value if not isinstance(value, list) else repr(value))
        assert got["columns"]["power"][2 * j] is None
        assert got["columns"]["power"][2 * j + 1] == got["columns"]["power"][1]


def test_target_below_alpha_is_that_rows_error(client):
    """target_power not above alpha gets the schemas' message for that row only."""
    columns = {"cohens_f": 0.3, "groups": 3, "alpha": [0.05, 0.2], "target_power": [0.8, 0.1]}
    got = _table(client, "sample-size", columns)
    status, single = _post(client, "/v1/sample-size", _single_body("sample-size", columns, 1))
    assert status == 422
    assert got["errors"] == [{"row": 1, "field": "target_power", "value": 0.1,
                              "message": single["errors"]["target_power"][0]}]
    assert got["columns"]["n_per_group"][0] is not None


def test_tiny_number_in_a_column_is_refused_as_the_single_endpoint_refuses_it(client):
    """1e-400 (too small for a double) is that row's error, with the single endpoint's message."""
    text = ('{"operation":"power","design":{"type":"one_way_anova"},'
            '"columns":{"cohens_f":[0.25,1e-400],"groups":3,"n_per_group":20}}')
    status, got = _post(client, TABLE, text)
    assert status == 200
    single_text = '{"design":{"type":"one_way_anova","cohens_f":1e-400,"groups":3},"n_per_group":20}'
    _, single = _post(client, "/v1/power", single_text)
    assert [e["message"] for e in got["errors"]] == single["errors"]["design.cohens_f"]


@pytest.mark.parametrize("text", [
    '{"operation":"power","operation":"power"}',
    '{"operation":"power","design":{"type":"one_way_anova"},"columns":{"cohens_f":[NaN],"groups":2}}',
    '{"operation":"power","columns":{"groups":[' + "1" * 31 + "]}}",
    "[" * 40 + "]" * 40,
])
def test_body_is_read_as_strictly_as_every_route(client, text):
    """Duplicate keys, NaN, over-long integers and deep nesting are 400s, as on /v1/power."""
    status, got = _post(client, TABLE, text)
    single_status, single = _post(client, "/v1/power", text)
    assert status == single_status == 400
    assert got["detail"] == single["detail"]


@pytest.mark.parametrize("columns, where", [
    ({"cohens_f": [0.2], "groups": [2], "n_per_group": [5], "sd": [1.0]}, "columns.sd"),
    ({"cohens_f": [0.2], "n_per_group": [5]}, "columns.groups"),
    ({"cohens_f": [0.2], "eta_squared": [0.1], "groups": 2, "n_per_group": 5}, "columns"),
    ({"cohens_f": [0.2, 0.3], "groups": [2], "n_per_group": 5}, "columns.groups"),
    ({"cohens_f": [0.2], "groups": 2, "n_per_group": 5, "alpha": 0.7}, "columns.alpha"),
    ({"cohens_f": [], "groups": 2, "n_per_group": 5}, "columns.cohens_f"),
])
def test_a_malformed_table_is_refused_whole(client, columns, where):
    """Unknown, missing, doubled, unequal, empty or invalid broadcast columns make a 422 naming them."""
    status, got = _post(client, TABLE, {"operation": "power", "design": DESIGN, "columns": columns})
    assert status == 422
    assert where in got["errors"]


def test_broadcast_message_is_the_single_endpoints(client):
    """An invalid broadcast value is refused with the field's own message."""
    _, got = _post(client, TABLE, {"operation": "power", "design": DESIGN,
                                   "columns": {"cohens_f": 0.2, "groups": 2, "n_per_group": 5, "alpha": 0.7}})
    _, single = _post(client, "/v1/power", {"design": {"type": "one_way_anova", "cohens_f": 0.2, "groups": 2},
                                            "n_per_group": 5, "alpha": 0.7})
    assert got["errors"]["columns.alpha"] == single["errors"]["alpha"]


def test_envelope_errors(client):
    """A wrong operation, design or results list is a 422 naming it."""
    status, got = _post(client, TABLE, {"operation": "simulate", "design": {"type": "welch"}, "columns": {},
                                        "extra": 1})
    assert status == 422 and {"operation", "design", "extra"} <= set(got["errors"])
    status, got = _post(client, TABLE, {"operation": "power", "design": DESIGN,
                                        "columns": {"cohens_f": 0.2, "groups": 2, "n_per_group": 5},
                                        "results": ["power", "achieved_power"]})
    assert status == 422 and "results" in got["errors"]


def test_too_many_rows_is_a_413(client, monkeypatch):
    """More rows than MAX_TABLE_ROWS is refused before any row is looked at."""
    monkeypatch.setattr(table_module, "MAX_TABLE_ROWS", 50)
    status, got = _post(client, TABLE, {"operation": "power", "design": DESIGN,
                                        "columns": {"cohens_f": [0.2] * 51, "groups": 2, "n_per_group": 5}})
    assert status == 413
    assert got["errors"]["columns"] == ["must have at most 50 rows (got 51)"]


def test_body_over_the_batch_limit_is_a_413():
    """The route reads at most the batch body limit (SAMPLEWRIGHT_MAX_BATCH_BYTES)."""
    small = create_app(Settings(max_batch_bytes=64 * 1024)).test_client()
    columns = {"cohens_f": [0.123456789] * 10_000, "groups": 2, "n_per_group": 5}
    status, got = _post(small, TABLE, {"operation": "power", "design": DESIGN, "columns": columns})
    assert status == 413 and got["type"].endswith("too-large")


def test_row_errors_are_capped_and_counted(client):
    """At most MAX_TABLE_ERRORS row errors are listed; the rest are counted; all bad rows are null."""
    count = table_module.MAX_TABLE_ERRORS + 30
    got = _table(client, "power", {"cohens_f": [20.0] * count, "groups": 2, "n_per_group": [5] * count})
    assert len(got["errors"]) == table_module.MAX_TABLE_ERRORS
    assert got["summary"]["errors_omitted"] == 30
    assert got["summary"]["failed"] == count
    assert got["columns"]["power"] == [None] * count


def test_digest_is_the_canonical_digest_of_the_validated_table(client):
    """provenance.request_digest is the SHA-256 of the validated table's canonical JSON."""
    body = {"operation": "power", "design": DESIGN,
            "columns": {"cohens_f": [0.25, -0.0, 5, "x"] * 100, "groups": [3, 2.0, 4, 2] * 100, "n_per_group": 7}}
    got = _table(client, "power", body["columns"])
    operation, columns, _, results = table_module._read_request(json.loads(json.dumps(body)))
    validated = table_module.validated_request(operation, columns, results)
    assert validated["columns"]["groups"][:2] == [3, 2] and validated["columns"]["alpha"] == 0.05
    assert got["provenance"]["request_digest"] == request_digest(validated)


def test_rows_from_columns_match_rows_of_designs():
    """Rows.from_columns evaluates every row exactly as a Rows of the design objects does."""
    rng = np.random.default_rng(7)
    f = np.round(rng.uniform(0, 1, 2000), 3)
    alpha = rng.choice([0.05, 0.01], 2000)
    sizes = rng.integers(2, 50, (2000, 1)).repeat(3, axis=1)
    fast = Rows.from_columns(OneWayAnova, 2000, groups=3, ratios=np.ones((2000, 3)), cohens_f=f)
    slow = Rows([OneWayAnova.from_f(v, 3) for v in f.tolist()])
    a, b = fast.evaluate(sizes, alpha), slow.evaluate(sizes, alpha)
    for name in ("power", "df1", "df2", "noncentrality", "critical_value"):
        assert np.array_equal(getattr(a, name), getattr(b, name))
    part = fast.take(np.arange(0, 2000, 7))
    assert np.array_equal(part.evaluate(sizes[::7], alpha[::7]).power, a.power[::7])
    assert part.designs[3].cohens_f == float(f[21]) and part.designs[3] is part.designs[3]


@pytest.mark.parametrize("operation, columns", [
    ("power", {"eta_squared": [0.06, 2.0], "groups": 3, "n_per_group": [10, 20]}),
    ("sample-size", {"cohens_f": [0.25, 0.0], "groups": 3, "target_power": 0.8, "dropout_rate": [0.1, 0.0]}),
    ("detectable-effect", {"groups": [3, 4], "n_per_group": 12, "target_power": 0.9}),
])
def test_responses_and_requests_validate_against_the_document(client, operation, columns):
    """A table request and its response validate against the OpenAPI document's schemas."""
    from openapi_schema_validator import OAS31Validator
    from referencing import Registry, Resource
    from referencing.jsonschema import DRAFT202012

    from samplewright.api.openapi import document

    spec = json.loads(document())
    uri = "urn:samplewright:openapi"
    registry = Registry().with_resource(uri, Resource.from_contents(spec, default_specification=DRAFT202012))
    op = spec["paths"][TABLE]["post"]
    body = {"operation": operation, "design": DESIGN, "columns": columns}
    for schema, value in ((op["requestBody"]["content"]["application/json"]["schema"], body),
                          (op["responses"]["200"]["content"]["application/json"]["schema"],
                           _table(client, operation, columns))):
        ref = schema["$ref"] if "$ref" in schema else None
        OAS31Validator({"$ref": uri + ref} if ref else schema, registry=registry).validate(value)
