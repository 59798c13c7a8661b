"""POST /v1/simulate through the test client: seeding, bounds, error distributions, agreement."""

from __future__ import annotations

import copy
import json
import math

import pytest

from samplewright import create_app
from samplewright.api.simulation import SimulateResponseSchema
from samplewright.config import Settings
from samplewright.core import simulate as mc

SIMULATE = "/v1/simulate"
#: Invented scenario: three curing times, means 61, 64, 66 MPa, SD 5 MPa, 12 specimens each.
BODY = {"n_per_group": 12, "design": {"type": "one_way_anova", "group_means": [61, 64, 66], "sd": 5}}


def _reject_constant(name):
    raise ValueError(f"{name} is not JSON")


@pytest.fixture(scope="module")
def client():
    """A test client of an app built from explicit default settings."""
    return create_app(Settings()).test_client()


def post(client, body):
    return client.post(SIMULATE, data=json.dumps(body), content_type="application/json")


def ok(response) -> dict:
    assert response.status_code == 200, response.get_data(as_text=True)[:2000]
    assert response.mimetype == "application/json"
    return json.loads(response.get_data(as_text=True), parse_constant=_reject_constant)


def problem(response, field: str) -> dict:
    assert response.status_code == 422, response.get_data(as_text=True)[:2000]
    assert response.mimetype == "application/problem+json"
    body = json.loads(response.get_data(as_text=True), parse_constant=_reject_constant)
    assert body["status"] == 422
    assert field in body["errors"], body
    return body


def with_(**changes) -> dict:
    body = copy.deepcopy(BODY)
    body.update(changes)
    return body


def test_same_seed_gives_the_same_answer(client):
    """Two calls with the same seed return identical bodies."""
    a = ok(post(client, with_(seed=7, replicates=2000)))
    b = ok(post(client, with_(seed=7, replicates=2000)))
    assert a == b
    assert a["seed"] == 7 and a["replicates"] == 2000


def test_different_seeds_give_different_runs(client):
    """Seeds 1 and 2 give different rejection counts."""
    a = ok(post(client, with_(seed=1, replicates=2000)))
    b = ok(post(client, with_(seed=2, replicates=2000)))
    assert a["rejections"] != b["rejections"]


def test_defaults_are_echoed(client):
    """Without options: seed 0, the default replicates, normal errors, all echoed."""
    body = ok(post(client, BODY))
    assert body["seed"] == 0
    assert body["replicates"] == mc.DEFAULT_REPLICATES
    assert body["error_distribution"] == "normal"
    assert body["group_sizes"] == [12, 12, 12] and body["n_total"] == 36
    assert body["values_per_replicate"] == 36
    assert body["design_type"] == "one_way_anova"


def test_response_matches_its_documented_schema(client):
    """The body has exactly the fields of SimulateResponseSchema, with valid types."""
    body = ok(post(client, with_(error_distribution="skewed", replicates=500)))
    assert SimulateResponseSchema().validate(body) == {}


def test_interval_contains_the_estimate(client):
    """low ≤ power ≤ high within [0, 1], and SE = √(p(1 − p)/R)."""
    body = ok(post(client, with_(replicates=3000, seed=4)))
    p, r = body["power"], body["replicates"]
    assert 0 <= body["interval"]["low"] <= p <= body["interval"]["high"] <= 1
    assert body["interval"]["level"] == 0.95
    assert body["rejections"] == round(p * r)
    # Binomial SE (common practice, no source); exact up to rounding.
    assert body["standard_error"] == pytest.approx(math.sqrt(p * (1 - p) / r), rel=1e-12)


def test_interval_at_power_one_is_not_a_point(client):
    """When every replicate rejects, the Wilson interval still has width."""
    body = ok(post(client, with_(n_per_group=200, replicates=500)))
    assert body["power"] == 1.0 and body["standard_error"] == 0.0
    assert body["interval"]["high"] == 1.0 and body["interval"]["low"] < 1.0
    assert math.isfinite(body["difference_in_se"])


def test_one_way_agrees_with_the_analytic_power(client):
    """One-way ANOVA: the simulated F test matches the noncentral-F power within 4 MC SE."""
    body = ok(post(client, with_(replicates=40_000, seed=2024)))
    power = ok(client.post("/v1/power", data=json.dumps(BODY), content_type="application/json"))
    assert body["analytic_power"] == power["power"]  # the same power operation
    a, r = body["analytic_power"], body["replicates"]
    se = math.sqrt(a * (1 - a) / r)
    # Seeded simulation, 4 MC SE (SE ≈ 0.0025 at power 0.549).
    assert abs(body["power"] - a) <= 4 * se
    assert body["difference_in_se"] == pytest.approx((body["power"] - a) / se, rel=1e-12)
    assert body["analytic_approximation_tolerance"] is None


@pytest.mark.parametrize("request_body", [
    {"group_sizes": [8, 12, 20], "design": {"type": "one_way_anova", "group_means": [10, 11, 12.5], "sd": 2.5}},
    {"group_sizes": [10, 10, 15, 15], "design": {"type": "one_way_anova", "cohens_f": 0.3, "groups": 4}},
    {"n_per_group": 9, "alpha": 0.01, "design": {"type": "one_way_anova", "min_range": 6, "sd": 4, "groups": 5}},
], ids=["unequal-means", "cohens-f-unequal", "min-range-alpha-01"])
def test_one_way_variants_agree(client, request_body):
    """Unequal sizes, Cohen's f and the least-favourable range: simulation within 4 MC SE."""
    body = ok(post(client, {**request_body, "replicates": 20_000, "seed": 99}))
    a, r = body["analytic_power"], body["replicates"]
    # Invented inputs; seeded simulation, 4 MC SE.
    assert abs(body["power"] - a) <= 4 * math.sqrt(a * (1 - a) / r)


def test_zero_effect_simulates_alpha(client):
    """Equal means: the simulated rejection rate is α, as is the analytic power."""
    body = ok(post(client, {"n_per_group": 6, "alpha": 0.1, "replicates": 20_000, "seed": 3,
                            "design": {"type": "one_way_anova", "group_means": [2, 2, 2], "sd": 1}}))
    assert body["analytic_power"] == pytest.approx(0.1, abs=1e-12)
    # Size α of the F test under normal errors (Scheffé 1959, §2.8); seeded simulation, 4 MC SE.
    assert abs(body["power"] - 0.1) <= 4 * math.sqrt(0.1 * 0.9 / 20_000)


@pytest.mark.parametrize("distribution", mc.ERROR_DISTRIBUTIONS)
def test_every_error_distribution_is_accepted(client, distribution):
    """normal, heavy_tailed and skewed are accepted and echoed; non-normal ones add a caution."""
    body = ok(post(client, with_(error_distribution=distribution, replicates=500)))
    assert body["error_distribution"] == distribution
    says_non_normal = any("assumes normal errors" in c for c in body["cautions"])
    assert says_non_normal == (distribution != "normal")


@pytest.mark.parametrize("value", ["cauchy", "Normal", "", 3, None, ["normal"]])
def test_unknown_error_distribution_is_refused(client, value):
    """Anything but the three names is a 422 naming error_distribution."""
    problem(post(client, with_(error_distribution=value)), "error_distribution")


@pytest.mark.parametrize("value", [0, mc.MIN_REPLICATES - 1, mc.MAX_REPLICATES + 1, 10**15, 2000.5, "2000",
                                   True, None, -5])
def test_replicates_out_of_bounds_are_refused(client, value):
    """replicates outside 100 … 200,000, or not an integer, is a 422 naming replicates."""
    problem(post(client, with_(replicates=value)), "replicates")


@pytest.mark.parametrize("value", [-1, mc.MAX_SEED + 1, 1.5, "0", True, None])
def test_bad_seeds_are_refused(client, value):
    """A seed outside 0 … 2³² − 1, or not an integer, is a 422 naming seed."""
    body = problem(post(client, with_(seed=value)), "seed")
    if value == mc.MAX_SEED + 1:
        assert str(mc.MAX_SEED) in body["errors"]["seed"][0]  # the bound in full, not 4.29497e+09


def test_integral_float_seed_is_an_integer(client):
    """seed 5.0 is the integer 5 (JSON Schema counts it as an integer)."""
    assert ok(post(client, with_(seed=5.0, replicates=200)))["seed"] == 5


def test_work_budget_is_a_422_naming_replicates(client):
    """replicates × total N above the budget is refused before any work, naming replicates."""
    body = problem(post(client, with_(n_per_group=100, replicates=mc.MAX_REPLICATES)), "replicates")
    allowed = mc.MAX_WORK // 300
    assert f"at most {allowed} replicates" in body["errors"]["replicates"][0]
    ok(post(client, with_(n_per_group=100, replicates=allowed)))  # the maximum itself runs


def test_default_replicates_shrink_to_fit_the_budget(client):
    """Without replicates, a large design gets as many as the budget allows, with a warning."""
    body = ok(post(client, with_(n_per_group=5000)))
    assert body["replicates"] == mc.MAX_WORK // 15_000
    assert any("replicates lowered" in w for w in body["warnings"])


def test_design_too_large_to_simulate_is_a_422(client):
    """A design so large that even the minimum replicates exceed the budget: 422 naming replicates."""
    n = mc.MAX_WORK // (3 * mc.MIN_REPLICATES) + 1
    body = problem(post(client, with_(n_per_group=n)), "replicates")
    assert "simulate fewer units" in body["errors"]["replicates"][0]


@pytest.mark.parametrize(("changes", "field"), [
    ({"alhpa": 0.05}, "alhpa"),
    ({"alpha": 0}, "alpha"),
    ({"n_per_group": 1}, "n_per_group"),
    ({"design": {"type": "one_way_anova", "group_means": [1, 2]}}, "design.sd"),
    ({"design": {"type": "no_such_design"}}, "design.type"),
])
def test_power_request_errors_are_the_power_endpoints(client, changes, field):
    """Invalid power-request fields are 422s naming the field, as on /v1/power."""
    problem(post(client, with_(**changes)), field)


def test_group_sizes_are_used_as_given(client):
    """group_sizes instead of n_per_group is simulated at exactly those sizes."""
    body = ok(post(client, {"group_sizes": [5, 9, 14], "replicates": 300,
                            "design": {"type": "one_way_anova", "group_means": [1, 2, 3], "sd": 2}}))
    assert body["group_sizes"] == [5, 9, 14] and body["n_total"] == 28


def test_get_is_405_problem(client):
    """GET on the simulate route is a 405 problem with Allow."""
    response = client.get(SIMULATE)
    assert response.status_code == 405
    assert response.mimetype == "application/problem+json"
    assert "POST" in response.headers["Allow"]


def test_simulate_is_in_the_openapi_document(client):
    """The generated document has the route with its request and response schemas."""
    doc = json.loads(client.get("/openapi.json").get_data(as_text=True))
    op = doc["paths"]["/v1/simulate"]["post"]
    assert op["requestBody"]["content"]["application/json"]["schema"]["$ref"].endswith("/SimulateRequest")
    props = doc["components"]["schemas"]["SimulateRequest"]["properties"]
    assert {"replicates", "seed", "error_distribution", "design", "alpha"} <= set(props)
    assert props["error_distribution"]["enum"] == list(mc.ERROR_DISTRIBUTIONS)


def test_provenance_digest_identifies_the_simulation(client):
    """The request digest covers seed and replicates: defaults and explicit values agree, a new seed differs."""
    default = ok(post(client, BODY))["provenance"]
    explicit = ok(post(client, with_(seed=0, replicates=mc.DEFAULT_REPLICATES, error_distribution="normal")))
    other_seed = ok(post(client, with_(seed=1)))["provenance"]
    assert default["method_id"] == "simulation.monte_carlo"
    assert default["request_digest"] == explicit["provenance"]["request_digest"]
    assert default["request_digest"] != other_seed["request_digest"]
