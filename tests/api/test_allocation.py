"""POST /v1/allocation over HTTP: answers consistent with the single endpoints, the two-group
rule beside the integer answer, the response schema, and clear 422s for bad input."""

from __future__ import annotations

import json

import pytest
from openapi_schema_validator import OAS31Validator
from referencing import Registry, Resource
from referencing.jsonschema import DRAFT202012

from samplewright.api.openapi import document

URL = "/v1/allocation"
TWO = {"type": "one_way_anova", "group_means": [0.0, 0.5], "sd": 1.0}
THREE = {"type": "one_way_anova", "group_means": [61, 64, 66], "sd": 5}


@pytest.fixture(scope="module")
def response_validator():
    """The documented 200 schema of /v1/allocation, with the document's references resolvable."""
    spec = json.loads(document())
    uri = "urn:samplewright:openapi"
    registry = Registry().with_resource(uri, Resource.from_contents(spec, default_specification=DRAFT202012))
    pointer = "#/paths/~1v1~1allocation/post/responses/200/content/application~1json/schema"
    return OAS31Validator({"$ref": uri + pointer}, registry=registry)


def test_least_cost_two_groups_with_the_rule_beside(post_json, assert_ok, response_validator):
    """Costs 1:4, d = 0.5, 80 %: about twice as many cheap units (rule 2:1, Cochran 1977 §5.5, from memory); balanced 64 (Cohen 1988 Table 2.4.1, from memory)."""
    body = assert_ok(post_json(URL, {"design": TWO, "costs": [1, 4], "target_power": 0.8}))
    response_validator.validate(body)
    assert body["goal"] == "least_cost_for_power"
    n1, n2 = body["optimal"]["group_sizes"]
    assert n1 / n2 == pytest.approx(2.0, rel=0.03)
    assert body["rule"]["ratios"] == [2.0, 1.0]
    assert body["balanced"]["group_sizes"] == [64, 64]
    assert body["optimal"]["cost"] == n1 * 1 + n2 * 4
    assert body["comparison"]["cost_saving"] == pytest.approx(body["balanced"]["cost"] - body["optimal"]["cost"], abs=1e-9)
    assert body["comparison"]["cost_saving"] > 0
    assert body["optimal"]["power"] >= 0.8


def test_optimal_power_equals_the_power_endpoint(post_json, assert_ok):
    """The power reported for the split is /v1/power's at those group sizes (same engine, exactly)."""
    body = assert_ok(post_json(URL, {"design": THREE, "costs": [1, 1, 3], "target_power": 0.9, "min_group_size": 5}))
    sizes = body["optimal"]["group_sizes"]
    assert min(sizes) >= 5
    single = assert_ok(post_json("/v1/power", {"design": THREE, "group_sizes": sizes}))
    assert body["optimal"]["power"] == single["power"]


def test_balanced_equals_the_sample_size_endpoint(post_json, assert_ok):
    """The balanced comparison is /v1/sample-size's equal design (27 per group, README tour)."""
    body = assert_ok(post_json(URL, {"design": THREE, "costs": [2, 1, 1], "target_power": 0.9}))
    single = assert_ok(post_json("/v1/sample-size", {"design": THREE, "target_power": 0.9}))
    assert body["balanced"]["group_sizes"] == single["group_sizes"] == [27, 27, 27]
    assert body["balanced"]["power"] == single["achieved_power"]
    assert body["optimal"]["cost"] <= body["balanced"]["cost"]


def test_most_power_for_a_budget(post_json, assert_ok, response_validator):
    """Within a budget of 300: cost within it, power at least the balanced design's (common practice, no source)."""
    body = assert_ok(post_json(URL, {"design": THREE, "costs": [1, 2, 3], "budget": 300}))
    response_validator.validate(body)
    assert body["goal"] == "most_power_for_budget"
    assert body["budget"] == 300
    assert body["optimal"]["cost"] <= 300
    assert body["optimal"]["power"] >= body["balanced"]["power"]
    assert body["comparison"]["power_gain"] >= 0


def test_most_power_for_a_fixed_total(post_json, assert_ok):
    """A total of 60 is used exactly, and the even split is shown beside it (common practice, no source)."""
    body = assert_ok(post_json(URL, {"design": THREE, "n_total": 60}))
    assert body["goal"] == "most_power_for_total"
    assert sum(body["optimal"]["group_sizes"]) == 60
    assert body["balanced"]["group_sizes"] == [20, 20, 20]
    assert body["optimal"]["power"] >= body["balanced"]["power"]
    assert body["costs"] == [1.0, 1.0, 1.0]
    assert body["rule"] is None


def test_unequal_variances_follow_the_rule(post_json, assert_ok):
    """Welch design, SDs 2:1, equal costs: n1/n2 ≈ σ1/σ2 = 2 (Cochran 1977 §5.5, from memory), within 5 %."""
    design = {"type": "welch_anova", "group_means": [0.0, 0.6], "group_sds": [2.0, 1.0]}
    body = assert_ok(post_json(URL, {"design": design, "costs": [1, 1], "target_power": 0.9}))
    n1, n2 = body["optimal"]["group_sizes"]
    assert body["rule"]["ratios"] == [2.0, 1.0]
    assert n1 / n2 == pytest.approx(2.0, rel=0.05)
    assert body["optimal"]["cost"] < body["balanced"]["cost"]


def test_the_same_request_gives_the_same_answer(post_json, assert_ok):
    """Deterministic: two identical requests give identical bodies."""
    request = {"design": THREE, "costs": [1, 2, 4], "budget": 500}
    assert assert_ok(post_json(URL, request)) == assert_ok(post_json(URL, request))


@pytest.mark.parametrize(
    ("body", "field"),
    [
        ({"design": TWO, "costs": [1, 4]}, "target_power"),  # no goal
        ({"design": TWO, "target_power": 0.8, "budget": 100}, "target_power"),  # two goals
        ({"design": TWO, "costs": [1, 2, 3], "target_power": 0.8}, "costs"),  # one cost per group
        ({"design": TWO, "costs": [1, 0], "target_power": 0.8}, "costs.1"),
        ({"design": TWO, "costs": [1, -2], "target_power": 0.8}, "costs.1"),
        ({"design": TWO, "costs": [1, 1001], "target_power": 0.8}, "costs"),  # spread over 1000
        ({"design": TWO, "costs": [1, "2"], "target_power": 0.8}, "costs.1"),  # no coercion
        ({"design": TWO, "target_power": 0.04, "alpha": 0.05}, "target_power"),
        ({"design": TWO, "target_power": 1.0}, "target_power"),
        ({"design": TWO, "budget": -5}, "budget"),
        ({"design": TWO, "budget": 3}, "budget"),  # cannot buy 2 + 2 units
        ({"design": TWO, "n_total": 3}, "n_total"),
        ({"design": THREE, "n_total": 5}, "n_total"),  # fewer than 2 per group
        ({"design": TWO, "n_total": 20.5}, "n_total"),
        ({"design": TWO, "target_power": 0.8, "min_group_size": 1}, "min_group_size"),
        ({"design": TWO, "target_power": 0.8, "alhpa": 0.05}, "alhpa"),
        ({"design": {**TWO, "allocation": [1, 2]}, "target_power": 0.8}, "design.allocation"),
        ({"design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 2}, "target_power": 0.8}, "design.group_means"),
        ({"design": {"type": "random_effects_anova", "groups": 4, "variance_ratio": 0.5}, "target_power": 0.8}, "design.type"),
        ({"design": {"type": "one_way_anova", "group_means": list(range(11)), "sd": 3}, "target_power": 0.8}, "design"),
        ({"design": {**TWO, "sd": -1}, "target_power": 0.8}, "design.sd"),
    ],
)
def test_invalid_requests_are_422_naming_the_field(post_json, assert_problem, body, field):
    """Each bad request is a 422 problem whose errors name the field."""
    assert_problem(post_json(URL, body), 422, field)


def test_unreachable_target_is_a_422(post_json, assert_problem):
    """An effect too small for the size cap is a 422 'no solution', in well under the request timeout."""
    design = {"type": "one_way_anova", "group_means": [0.0, 1e-7], "sd": 1.0}
    assert_problem(post_json(URL, {"design": design, "target_power": 0.9}), 422, "target_power")


def test_not_json_and_wrong_method(post_json, client, assert_problem):
    """The body reader and the router treat /v1/allocation like every computation route."""
    assert_problem(post_json(URL, "{", content_type="application/json"), 400)
    assert_problem(post_json(URL, "x", content_type="text/plain"), 415)
    assert_problem(client.get(URL), 405)


def test_two_sample_t_agrees_with_the_two_group_layout(post_json, assert_ok):
    """Two-sided two-sample t and the two-group one-way F give the same split (same test, F = t²)."""
    t_design = {"type": "two_sample_t", "cohens_d": 0.5}
    by_t = assert_ok(post_json(URL, {"design": t_design, "costs": [1, 4], "target_power": 0.8}))
    by_f = assert_ok(post_json(URL, {"design": TWO, "costs": [1, 4], "target_power": 0.8}))
    assert by_t["optimal"]["group_sizes"] == by_f["optimal"]["group_sizes"]
    assert by_t["optimal"]["power"] == pytest.approx(by_f["optimal"]["power"], abs=1e-9)
    assert by_t["rule"]["ratios"] == [2.0, 1.0]


def test_contrast_puts_units_where_the_coefficients_are(post_json, assert_ok):
    """Contrast (−1, 0, 1), costs (1, 1, 4): the zero-weight group gets the minimum and n1/n3 ≈ 2 (n_i ∝ |a_i|/√c_i, Cochran 1977 §5.5, from memory)."""
    design = {"type": "contrast", "group_means": [0, 1, 3], "sd": 2, "coefficients": [-1, 0, 1]}
    body = assert_ok(post_json(URL, {"design": design, "costs": [1, 1, 4], "target_power": 0.9}))
    n1, n2, n3 = body["optimal"]["group_sizes"]
    assert n2 == body["min_group_size"] == 2
    assert n1 / n3 == pytest.approx(2.0, rel=0.1)


def test_provenance_digest_identifies_the_question(post_json, assert_ok):
    """The same question gives the same request digest, a changed cost another (provenance contract)."""
    request = {"design": TWO, "costs": [1, 4], "target_power": 0.8}
    first = assert_ok(post_json(URL, request))["provenance"]
    again = assert_ok(post_json(URL, {**request, "alpha": 0.05}))["provenance"]  # the default, stated
    other = assert_ok(post_json(URL, {**request, "costs": [1, 5]}))["provenance"]
    assert first["request_digest"] == again["request_digest"]
    assert first["request_digest"] != other["request_digest"]
    assert first["method_id"].startswith("allocation.integer_search+")
