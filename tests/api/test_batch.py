"""POST /v1/batch: every item equals the single endpoint's answer, bit for bit.

The mixed batch is built from every design registered in ADAPTERS (its ``example``,
``example_sizes`` and detectable-effect layout, as the catalogue builds them), varied in
size, α, target and dropout, plus one-way designs varied in their effect, plus invalid
items of every kind; each item is compared with the same body sent to its single route.
No expected number here comes from outside the service: the reference is the single
endpoint itself (exact equality, tolerance 0).
"""

from __future__ import annotations

import copy
import json
import random

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from marshmallow import ValidationError

from samplewright.api import batch as batch_module
from samplewright.api.designs import ADAPTERS, SCHEMAS
from samplewright.api.fastload import FastLoader
from samplewright.api.schemas import DETECTABLE_REQUEST, POWER_REQUEST, SAMPLE_SIZE_REQUEST
from samplewright.app import create_app
from samplewright.config import Settings

ROUTES = {"power": "/v1/power", "sample-size": "/v1/sample-size", "detectable-effect": "/v1/detectable-effect"}
BATCH = "/v1/batch"
#: Settings of the test app: the defaults, stated, with a small batch limit for the limit tests.
LIMITS = Settings(max_body_bytes=64 * 1024, max_batch_items=10_000, max_batch_bytes=4 * 1024 * 1024)


@pytest.fixture(scope="module")
def client():
    """A test client of an app built from explicit settings."""
    return create_app(LIMITS).test_client()


def _post(client, path: str, body) -> tuple[int, dict]:
    response = client.post(path, data=json.dumps(body), content_type="application/json")
    return response.status_code, json.loads(response.get_data())


def _detectable_design(adapter) -> dict | None:
    candidate = getattr(adapter, "example_detectable", None)
    if candidate is None:
        candidate = {k: v for k, v in adapter.example.items() if k not in set(adapter.effect_fields)}
    try:
        adapter.layout(SCHEMAS[adapter.type].load(copy.deepcopy(candidate)), None)
    except (ValidationError, ValueError):
        return None
    return candidate


def _registered_items(rng: random.Random, per_design: int) -> list[dict]:
    """Varied valid questions for every registered design that has an example."""
    items = []
    for kind in sorted(ADAPTERS):
        adapter = ADAPTERS[kind]
        example = getattr(adapter, "example", None)
        n0 = getattr(adapter, "example_sizes", None)
        if example is None or n0 is None:
            continue
        detectable = _detectable_design(adapter)
        for _ in range(per_design):
            n = max(2, n0 + rng.randint(-n0 // 2, n0))
            alpha = rng.choice([0.05, 0.01, 0.1])
            op = rng.choice(["power", "sample-size", "detectable-effect"] if detectable else ["power", "sample-size"])
            if op == "power":
                request = {"design": example, "n_per_group": n, "alpha": alpha}
            elif op == "sample-size":
                request = {"design": example, "alpha": alpha, "target_power": rng.choice([0.7, 0.8, 0.9]),
                           "dropout_rate": rng.choice([0.0, 0.15, 0.4])}
            else:
                request = {"design": detectable, "n_per_group": n, "alpha": alpha,
                           "target_power": rng.choice([0.8, 0.9])}
            items.append({"operation": op, "request": request})
    return items


def _one_way_items(rng: random.Random, count: int) -> list[dict]:
    """One-way questions with every form of the effect, allocations and explicit sizes."""
    items = []
    for _ in range(count):
        k = rng.randint(2, 5)
        form = rng.random()
        if form < 0.35:
            design = {"type": "one_way_anova", "group_means": [rng.randint(0, 30) for _ in range(k)],
                      "sd": rng.choice([3, 5.5, 8])}
        elif form < 0.7:
            design = {"type": "one_way_anova", "cohens_f": rng.choice([0.1, 0.25, 0.4, 0.9]), "groups": k}
        elif form < 0.85:
            design = {"type": "one_way_anova", "eta_squared": rng.choice([0.02, 0.06, 0.14]), "groups": k}
        else:
            design = {"type": "one_way_anova", "min_range": rng.choice([2, 5]), "sd": 4, "groups": k}
        if form < 0.7 and rng.random() < 0.25:
            design["allocation"] = [rng.choice([1, 2, 3]) for _ in range(k)]
        op = rng.choice(["power", "sample-size", "detectable-effect"])
        if op == "sample-size":
            items.append({"operation": op, "request": {"design": design, "target_power": rng.choice([0.8, 0.95]),
                                                       "alpha": rng.choice([0.05, 0.001])}})
            continue
        size = ({"group_sizes": [rng.randint(2, 40) for _ in range(k)]} if rng.random() < 0.3
                else {"n_per_group": rng.randint(2, 60)})
        if op == "detectable-effect":
            layout = {"type": "one_way_anova", "groups": k, "sd": 4}
            if "allocation" in design:
                layout["allocation"] = design["allocation"]
            items.append({"operation": op, "request": {"design": layout, "target_power": 0.8, **size}})
        else:
            items.append({"operation": op, "request": {"design": design, **size}})
    return items


#: Items the single endpoints refuse, each in its own way (validation, build, sizes, no solution).
INVALID = [
    {"operation": "power", "request": {"design": {"type": "one_way_anova", "cohens_f": 0.3, "groups": 3}, "n_per_group": 0}},
    {"operation": "power", "request": {"design": {"type": "one_way_anova", "cohens_f": 0.3, "groups": 3}, "n_per_group": 1}},
    {"operation": "power", "request": {"design": {"type": "one_way_anova", "cohens_f": 0.3, "groups": 3}, "alhpa": 0.05, "n_per_group": 5}},
    {"operation": "power", "request": {"design": {"type": "one_way_anova", "group_means": [1, 2], "sd": -1}, "n_per_group": 5}},
    {"operation": "power", "request": {"design": {"type": "no_such_design"}, "n_per_group": 5}},
    {"operation": "power", "request": {"design": {"type": "one_way_anova", "groups": 3}, "n_per_group": 5}},
    {"operation": "power", "request": {"design": {"type": "one_way_anova", "cohens_f": 0.3}, "group_sizes": [5, 5, 0]}},
    {"operation": "power", "request": {"design": {"type": "one_way_anova", "cohens_f": 0.3, "groups": 3}, "group_sizes": [5, 5]}},
    {"operation": "sample-size", "request": {"design": {"type": "one_way_anova", "cohens_f": 0.0, "groups": 3}, "target_power": 0.8}},
    {"operation": "sample-size", "request": {"design": {"type": "one_way_anova", "cohens_f": 1e-6, "groups": 3}, "target_power": 0.8}},
    {"operation": "sample-size", "request": {"design": {"type": "one_way_anova", "cohens_f": 0.3, "groups": 3}, "target_power": 0.01}},
    {"operation": "sample-size", "request": {"design": {"type": "one_way_anova", "cohens_f": 0.3, "groups": 3}, "target_power": "0.8"}},
    {"operation": "detectable-effect", "request": {"design": {"type": "one_way_anova", "cohens_f": 0.3, "groups": 3}, "n_per_group": 5, "target_power": 0.8}},
    {"operation": "detectable-effect", "request": {"design": {"type": "one_way_anova", "groups": 3}, "n_per_group": 5}},
    {"operation": "detectable-effect", "request": {"design": {"type": "one_way_anova", "groups": 3}, "n_per_group": 5, "target_power": 0.8, "dropout_rate": 0.1}},
]


def _strip(problem: dict) -> dict:
    return {k: v for k, v in problem.items() if k not in ("instance", "request_id")}


@pytest.fixture(scope="module")
def mixed():
    """About 2,400 items: every registered design, one-way forms, invalid ones; shuffled with ids."""
    rng = random.Random(4)
    items = _registered_items(rng, 60) + _one_way_items(rng, 1500)
    items += [copy.deepcopy(INVALID[i % len(INVALID)]) for i in range(150)]
    rng.shuffle(items)
    for i, item in enumerate(items):
        item["id"] = f"q-{i:05d}-{rng.randint(0, 10**6)}"
    return items


def test_mixed_batch_equals_single_endpoints_item_by_item(client, mixed):
    """Every item of a ≥ 2,000-item mixed batch equals its single call: result or problem, exactly."""
    assert len(mixed) >= 2000
    assert len({item["request"]["design"]["type"] for item in mixed}) >= min(3, len(ADAPTERS))
    status, body = _post(client, BATCH, {"items": mixed})
    assert status == 200
    assert [a["id"] for a in body["items"]] == [item["id"] for item in mixed]
    failed = 0
    for item, answer in zip(mixed, body["items"], strict=True):
        single_status, single = _post(client, ROUTES[item["operation"]], item["request"])
        assert answer["status"] == single_status, (item, answer)
        if single_status == 200:
            assert answer["result"] == single, item
            assert "problem" not in answer
        else:
            failed += 1
            assert answer["problem"] == _strip(single), item
            assert "result" not in answer
    assert body["summary"] == {"succeeded": len(mixed) - failed, "failed": failed}
    assert failed >= 150  # every invalid item carries its problem


def test_operations_covered(mixed):
    """The mixed batch asks all three questions of more than one design (a guard on the test itself)."""
    ops = {(item["operation"], item["request"]["design"]["type"]) for item in mixed}
    assert {op for op, _ in ops} == set(ROUTES)
    assert "one_way_anova" in {kind for _, kind in ops}


def test_invalid_items_carry_their_own_problem(client):
    """Each invalid item gets the single endpoint's problem, with its field named; the valid one is answered."""
    good = {"id": "good", "operation": "power",
            "request": {"design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 3}, "n_per_group": 20}}
    items = [dict(item, id=f"bad-{i}") for i, item in enumerate(INVALID)] + [good]
    status, body = _post(client, BATCH, {"items": items})
    assert status == 200
    assert body["items"][-1]["status"] == 200 and body["items"][-1]["id"] == "good"
    for answer in body["items"][:-1]:
        assert answer["status"] == 422
        problem = answer["problem"]
        assert problem["status"] == 422 and problem["title"] and problem["detail"] and problem["errors"]
    named = {a["id"]: a["problem"]["errors"] for a in body["items"][:-1]}
    assert "n_per_group" in named["bad-0"]
    assert "alhpa" in named["bad-2"]
    assert "design.sd" in named["bad-3"]
    assert body["summary"] == {"succeeded": 1, "failed": len(INVALID)}


@pytest.mark.parametrize("raw, field", [
    ("not an object", "items.1"),
    ({"operation": "power", "request": {}}, "items.1.id"),
    ({"id": "", "operation": "power", "request": {}}, "items.1.id"),
    ({"id": 7, "operation": "power", "request": {}}, "items.1.id"),
    ({"id": "x" * 201, "operation": "power", "request": {}}, "items.1.id"),
    ({"id": "x", "operation": "simulate", "request": {}}, "items.1.operation"),
    ({"id": "x", "operation": ["power"], "request": {}}, "items.1.operation"),
    ({"id": "x", "operation": "power", "request": [1]}, "items.1.request"),
    ({"id": "x", "operation": "power"}, "items.1.request"),
    ({"id": "x", "operation": "power", "request": {}, "extra": 1}, "items.1.extra"),
])
def test_malformed_envelope_is_a_422_naming_the_item(client, assert_problem, raw, field):
    """An item that is not {id, operation, request} makes the batch a 422 naming its place (the document's contract)."""
    good = {"id": "ok", "operation": "power",
            "request": {"design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 2}, "n_per_group": 10}}
    response = client.post(BATCH, data=json.dumps({"items": [good, raw]}), content_type="application/json")
    assert_problem(response, 422, field)


def test_an_unanswerable_request_is_only_its_items_problem(client):
    """A well-formed item whose request the single endpoint refuses is a 422 item; the batch is a 200."""
    items = [{"id": "empty", "operation": "power", "request": {}},
             {"id": "ok", "operation": "power",
              "request": {"design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 2}, "n_per_group": 10}}]
    status, body = _post(client, BATCH, {"items": items})
    assert status == 200
    assert [a["status"] for a in body["items"]] == [422, 200]
    assert "design" in body["items"][0]["problem"]["errors"]


def test_order_and_duplicate_ids_are_kept(client):
    """Answers come back in the order sent, ids echoed as given (duplicates too), whatever the grouping."""
    designs = [{"type": "one_way_anova", "cohens_f": f, "groups": 3} for f in (0.1, 0.2, 0.3)]
    items = []
    for i in range(30):
        op = ("power", "sample-size")[i % 2]
        req = {"design": designs[i % 3], "n_per_group": 10 + i} if op == "power" else \
            {"design": designs[i % 3], "target_power": 0.8}
        items.append({"id": "same" if i % 7 == 0 else f"i{i}", "operation": op, "request": req})
    status, body = _post(client, BATCH, {"items": items})
    assert status == 200
    assert [a["id"] for a in body["items"]] == [item["id"] for item in items]
    for item, answer in zip(items, body["items"], strict=True):
        key = "power" if item["operation"] == "power" else "achieved_power"
        assert key in answer["result"]
        if item["operation"] == "power":
            assert answer["result"]["group_sizes"] == [item["request"]["n_per_group"]] * 3


@pytest.mark.parametrize("body, status, field", [
    ({}, 422, "items"),
    ({"items": {}}, 422, "items"),
    ({"items": []}, 422, "items"),
    ({"items": [], "extra": 1}, 422, "extra"),
])
def test_batch_envelope_errors(client, assert_problem, body, status, field):
    """A body that is not a list of items is a 422 problem naming the field."""
    response = client.post(BATCH, data=json.dumps(body), content_type="application/json")
    assert_problem(response, status, field)


def test_more_items_than_the_limit_is_413(assert_problem):
    """More items than max_batch_items is a 413 problem that states the limit."""
    small = create_app(Settings(max_batch_items=5)).test_client()
    item = {"id": "x", "operation": "power",
            "request": {"design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 2}, "n_per_group": 10}}
    ok = small.post(BATCH, data=json.dumps({"items": [item] * 5}), content_type="application/json")
    assert ok.status_code == 200
    response = small.post(BATCH, data=json.dumps({"items": [item] * 6}), content_type="application/json")
    problem = assert_problem(response, 413, "items")
    assert "at most 5" in problem["detail"]


def test_body_over_the_batch_limit_is_413(assert_problem):
    """A body over max_batch_bytes is a 413 problem, while the single routes keep their own smaller limit."""
    app = create_app(Settings(max_body_bytes=2048, max_batch_bytes=64 * 1024))
    client = app.test_client()
    item = {"id": "x", "operation": "power",
            "request": {"design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 2}, "n_per_group": 10}}
    fits = json.dumps({"items": [item] * 100})  # ~ 13 KB: over the single limit, within the batch limit
    assert 2048 < len(fits) < 64 * 1024
    assert client.post(BATCH, data=fits, content_type="application/json").status_code == 200
    too_big = json.dumps({"items": [item] * 600})
    assert_problem(client.post(BATCH, data=too_big, content_type="application/json"), 413)


def test_settings_read_batch_limits_from_the_environment():
    """SAMPLEWRIGHT_MAX_BATCH_ITEMS and _BYTES set the limits; out-of-range values are refused."""
    got = Settings.from_environ({"SAMPLEWRIGHT_MAX_BATCH_ITEMS": "500", "SAMPLEWRIGHT_MAX_BATCH_BYTES": "1048576"})
    assert (got.max_batch_items, got.max_batch_bytes) == (500, 1048576)
    assert (Settings.from_environ({}).max_batch_items, Settings.from_environ({}).max_batch_bytes) == (10_000, 4 * 1024 * 1024)
    with pytest.raises(ValueError, match="MAX_BATCH_ITEMS"):
        Settings.from_environ({"SAMPLEWRIGHT_MAX_BATCH_ITEMS": "0"})


def test_an_unexpected_failure_fails_only_its_item(client, monkeypatch, caplog):
    """If one item's report raises unexpectedly, that item is a 500 problem and the rest are answered."""
    adapter = ADAPTERS["one_way_anova"]
    original = adapter.effect_report

    def fragile(design, sizes):
        if int(sizes[0]) == 13:
            raise RuntimeError("secret-detail")
        return original(design, sizes)

    monkeypatch.setattr(adapter, "effect_report", fragile)
    # Take the item-by-item report path (the adapter's many-rows hook would bypass ``fragile``).
    monkeypatch.setattr(adapter, "effect_reports", None)
    design = {"type": "one_way_anova", "cohens_f": 0.25, "groups": 3}
    items = [{"id": f"n{n}", "operation": "power", "request": {"design": design, "n_per_group": n}}
             for n in (11, 12, 13, 14)]
    with caplog.at_level("ERROR", logger="samplewright"):
        response = client.post(BATCH, data=json.dumps({"items": items}), content_type="application/json")
    body = json.loads(response.get_data())
    assert response.status_code == 200
    assert [a["status"] for a in body["items"]] == [200, 200, 500, 200]
    assert "secret-detail" not in response.get_data(as_text=True)
    assert body["items"][2]["problem"]["title"] == "Internal error"
    assert body["summary"] == {"succeeded": 3, "failed": 1}


def test_identical_items_give_identical_answers(client):
    """The same question asked many times in one batch is answered identically each time (shared work)."""
    item = {"id": "same", "operation": "sample-size",
            "request": {"design": {"type": "one_way_anova", "group_means": [61, 64, 66], "sd": 5},
                        "target_power": 0.9, "dropout_rate": 0.1}}
    status, body = _post(client, BATCH, {"items": [item] * 50})
    assert status == 200
    results = [a["result"] for a in body["items"]]
    assert all(r == results[0] for r in results)
    _, single = _post(client, ROUTES["sample-size"], item["request"])
    assert results[0] == single
    # README example: 27 per group, enrol 30 (ceil(27/0.9)); the service's own computation.
    assert results[0]["group_sizes"] == [27, 27, 27] and results[0]["enrolment"]["group_sizes"] == [30, 30, 30]


def test_repeated_and_nearly_repeated_questions_each_get_the_single_answer(client):
    """Questions answered once for many items: each item still equals its single call, digest included.

    Near repeats differ only in what the digest sees (0.0 against -0.0, a key order, an
    invalid value), so sharing must not merge them. Source: common practice, no source.
    """
    design = {"type": "one_way_anova", "cohens_f": 0.3, "groups": 4}
    bodies = [{"design": design, "target_power": 0.8}, {"design": design, "target_power": 0.8, "dropout_rate": 0.0},
              {"design": design, "target_power": 0.8, "dropout_rate": -0.0}, {"target_power": 0.8, "design": design},
              {"design": design, "target_power": 0.8, "dropout_rate": 2}, {"design": design, "target_power": 0.9}]
    items = [{"id": f"q{i}", "operation": op, "request": bodies[i % len(bodies)]}
             for i in range(60) for op in ("sample-size", "detectable-effect")]
    for item in items:
        if item["operation"] == "detectable-effect":
            item["request"] = {"design": {"type": "one_way_anova", "groups": 4}, "n_per_group": 20,
                               **{k: v for k, v in item["request"].items() if k not in ("design", "dropout_rate")}}
    status, body = _post(client, BATCH, {"items": items})
    assert status == 200
    for item, answer in zip(items, body["items"], strict=True):
        single_status, single = _post(client, ROUTES[item["operation"]], item["request"])
        assert answer["status"] == single_status
        if single_status == 200:
            assert answer["result"] == single
        else:
            assert answer["problem"] == _strip(single)


# -- the fast loader loads exactly as marshmallow does ---------------------------------------


_json = st.recursive(
    st.none() | st.booleans() | st.integers(-10**6, 10**6) | st.floats(allow_nan=False, allow_infinity=False)
    | st.sampled_from(["one_way_anova", "x", "0.05", "", "two_sample_t"]),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.sampled_from(["a", "type", "sd"]), inner, max_size=3),
    max_leaves=8,
)
_keys = st.sampled_from(["design", "alpha", "n_per_group", "group_sizes", "target_power", "dropout_rate", "alhpa"])
_design_keys = st.sampled_from(["type", "group_means", "sd", "cohens_f", "eta_squared", "min_range", "groups",
                                "allocation", "extra"])
_values = st.one_of(
    _json,
    st.sampled_from([0.05, 0.8, 0.0, 1, 2, 3, 20, 20.0, 1e-13, 0.9999, 0.5, -1, 10**7, 10**8]),
    st.lists(st.sampled_from([1, 2, 3, 2.5, 0, -1, "1", True]), min_size=0, max_size=5),
)


@st.composite
def _bodies(draw):
    design = {"type": draw(st.sampled_from(["one_way_anova", "one_way_anova", *sorted(ADAPTERS), "nope"]))}
    for key in draw(st.lists(_design_keys, max_size=4, unique=True)):
        design[key] = draw(_values)
    body = {"design": design}
    for key in draw(st.lists(_keys, max_size=4, unique=True)):
        body[key] = draw(_values) if key != "design" else design
    return body


@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_bodies(), st.sampled_from([POWER_REQUEST, SAMPLE_SIZE_REQUEST, DETECTABLE_REQUEST]))
def test_fast_loader_equals_marshmallow(body, schema):
    """FastLoader.load returns what schema.load returns, or raises the same messages (hypothesis, 400 bodies)."""
    fast = FastLoader(schema)
    try:
        expected = schema.load(copy.deepcopy(body))
    except ValidationError as exc:
        with pytest.raises(ValidationError) as got:
            fast.load(copy.deepcopy(body))
        assert got.value.messages == exc.messages
    else:
        assert fast.load(copy.deepcopy(body)) == expected


def test_fast_loader_takes_the_fast_path_for_valid_bodies():
    """A valid body is loaded without calling Schema.load (the point of the loader)."""
    class Counting(type(POWER_REQUEST)):
        calls = 0

        def load(self, *args, **kwargs):
            Counting.calls += 1
            return super().load(*args, **kwargs)

    schema = Counting()
    out = FastLoader(schema).load({"design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 3}, "n_per_group": 20})
    assert out["n_per_group"] == 20 and out["alpha"] == 0.05
    assert Counting.calls == 0


def test_engine_answers_groups_in_one_pass(monkeypatch):
    """Items of one design class go to the row engine together (one power_rows call), not one by one."""
    calls = []
    real = batch_module.planning.power_rows

    def spy(rows, **kwargs):
        calls.append(rows.count)
        return real(rows, **kwargs)

    monkeypatch.setattr(batch_module.planning, "power_rows", spy)
    bodies = [{"design": {"type": "one_way_anova", "cohens_f": 0.05 * (1 + i % 9), "groups": 3}, "n_per_group": 5 + i}
              for i in range(200)]
    items = batch_module.answer_many("power", bodies)
    assert all(item.result is not None for item in items)
    assert calls == [200]


def test_adapter_row_hooks_are_used_once_per_group(client, monkeypatch):
    """An adapter's warnings_rows / effect_reports answer a whole group in one call, with the same results.

    (Without effect_columns, which the batch route prefers when an adapter has it.)
    """
    adapter = ADAPTERS["one_way_anova"]
    design = {"type": "one_way_anova", "group_means": [1, 2, 4], "sd": 2}
    items = [{"id": f"n{n}", "operation": "power", "request": {"design": design, "n_per_group": n}} for n in range(3, 23)]
    _, before = _post(client, BATCH, {"items": items})
    calls = []

    def warnings_rows(designs, sizes):
        calls.append(("warnings", len(designs)))
        return [adapter.warnings(d, s) for d, s in zip(designs, sizes, strict=True)]

    def effect_reports(designs, sizes, noncentrality):
        calls.append(("effect", len(designs)))
        return [adapter.effect_report(d, s) for d, s in zip(designs, sizes, strict=True)]

    monkeypatch.setattr(adapter, "warnings_rows", warnings_rows, raising=False)
    monkeypatch.setattr(adapter, "effect_reports", effect_reports, raising=False)
    monkeypatch.setattr(adapter, "effect_columns", None, raising=False)
    _, after = _post(client, BATCH, {"items": items})
    assert after == before
    assert calls == [("warnings", 20), ("effect", 20)]
    _, single = _post(client, ROUTES["power"], items[0]["request"])
    assert single == before["items"][0]["result"] and calls[-2:] == [("warnings", 1), ("effect", 1)]
