"""Contract of each endpoint: the fields every response carries and the rules that tie them.

Expected values are the service's contract (common practice, no source) unless a comment
names an independent computation or a publication.
"""

from __future__ import annotations

import math
import platform
import re

import numpy
import pytest
import scipy
from scipy import stats

import samplewright

POWER, SAMPLE, DETECT = "/v1/power", "/v1/sample-size", "/v1/detectable-effect"

COMMON = {"alpha", "design_type", "df_numerator", "df_denominator", "noncentrality", "critical_value",
          "group_sizes", "n_total", "method", "assumptions", "warnings", "cautions"}
POWER_FIELDS = COMMON | {"power", "effect"}
SAMPLE_FIELDS = COMMON | {"target_power", "achieved_power", "n_per_group", "smallest_group",
                          "one_step_smaller", "enrolment", "effect"}
DETECT_FIELDS = COMMON | {"target_power", "achieved_power", "cohens_f", "eta_squared"}


def _design(**fields):
    return {"type": "one_way_anova", **fields}


def _scipy_power(alpha: float, df1: float, df2: float, lam: float) -> float:
    """Power of the F test from scipy's central and noncentral F (an independent computation)."""
    return float(stats.ncf.sf(stats.f.isf(alpha, df1, df2), df1, df2, lam))


# -- required fields ---------------------------------------------------------------------


def _check_common(body: dict, k: int) -> None:
    assert body["design_type"] == "one_way_anova"
    assert body["df_numerator"] == k - 1
    assert body["n_total"] == sum(body["group_sizes"])
    assert body["df_denominator"] == body["n_total"] - k
    assert len(body["group_sizes"]) == k and all(type(n) is int for n in body["group_sizes"])
    assert set(body["method"]) == {"id", "reference"} and all(body["method"].values())
    for key in ("assumptions", "cautions"):
        assert body[key] and all(isinstance(s, str) and s for s in body[key])
    assert isinstance(body["warnings"], list)
    # critical value: scipy's central F at an ordinary alpha (independent computation)
    assert body["critical_value"] == pytest.approx(
        stats.f.isf(body["alpha"], body["df_numerator"], body["df_denominator"]), rel=1e-9)


def test_power_response_fields(post_json, assert_ok):
    """Power: every required field is present and the numbers agree with scipy's noncentral F."""
    body = assert_ok(post_json(POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 20}))
    assert POWER_FIELDS <= set(body)
    _check_common(body, 3)
    assert body["group_sizes"] == [20, 20, 20]
    assert body["noncentrality"] == pytest.approx(60 * 0.25**2, rel=1e-12)  # λ = N f²
    # independent computation: scipy.stats.ncf
    assert body["power"] == pytest.approx(_scipy_power(0.05, 2, 57, 3.75), rel=1e-9)
    assert set(body["effect"]) >= {"cohens_f", "eta_squared"}
    assert body["effect"]["cohens_f"] == pytest.approx(0.25, rel=1e-12)
    assert body["effect"]["eta_squared"] == pytest.approx(0.0625 / 1.0625, rel=1e-12)  # η² = f²/(1+f²)


def test_power_from_means_reports_the_effect_in_data_units(post_json, assert_ok):
    """Power from means and SD: effect has f, η², sd_of_means = f·σ and the range of the means."""
    body = assert_ok(post_json(POWER, {"design": _design(group_means=[1, 2, 3], sd=2.0), "n_per_group": 20}))
    # σ_m = √(2/3) for means 1, 2, 3; f = σ_m/σ (Cohen 1988, eq. 8.2.1)
    f = math.sqrt(2 / 3) / 2
    assert body["effect"]["cohens_f"] == pytest.approx(f, rel=1e-12)
    assert body["effect"]["sd_of_means"] == pytest.approx(f * 2.0, rel=1e-12)
    assert body["effect"]["range_of_means"] == 2.0
    assert body["noncentrality"] == pytest.approx(60 * f**2, rel=1e-12)


def test_sample_size_response_fields(post_json, assert_ok):
    """Sample size: every required field is present; the answer is minimal and reaches the target."""
    body = assert_ok(post_json(SAMPLE, {"design": _design(groups=3, cohens_f=0.25), "target_power": 0.8}))
    assert SAMPLE_FIELDS <= set(body)
    _check_common(body, 3)
    n = body["n_per_group"]
    assert body["group_sizes"] == [n] * 3 and body["smallest_group"] == n
    assert body["target_power"] == 0.8
    assert body["noncentrality"] == pytest.approx(3 * n * 0.25**2, rel=1e-12)
    assert body["achieved_power"] >= 0.8 > body["one_step_smaller"]["power"]
    assert body["one_step_smaller"]["group_sizes"] == [n - 1] * 3
    assert body["one_step_smaller"]["n_total"] == 3 * (n - 1)
    # independent computation: scipy.stats.ncf at n and n − 1
    assert _scipy_power(0.05, 2, 3 * n - 3, 3 * n / 16) >= 0.8 > _scipy_power(0.05, 2, 3 * n - 6, 3 * (n - 1) / 16)
    assert body["enrolment"] is None  # no dropout given


def test_sample_size_two_groups_matches_the_published_table(post_json, assert_ok):
    """Sample size: k = 2, f = .25 (d = .5), power .80, α .05 gives 64 per group."""
    # Cohen (1988), Table 2.4.1: n = 64 for d = .50, power .80, two-tailed α = .05 (f = d/2).
    body = assert_ok(post_json(SAMPLE, {"design": _design(groups=2, cohens_f=0.25), "target_power": 0.8}))
    assert body["group_sizes"] == [64, 64] and body["n_per_group"] == 64


@pytest.mark.parametrize(
    "dropout, per_group",
    [(0.2, 80), (0.1, 72), (0.5, 128), (0.9, 640), (0.25, 86), (0.3, 92)],
)
def test_sample_size_enrolment_is_ceil_n_over_one_minus_dropout(post_json, assert_ok, dropout, per_group):
    """Enrolment: ceil(n/(1 − d)) per group, so 64 at d = .2 is exactly 80 (not 81, not 77)."""
    # 64/(1 − d): 80, 71.1 → 72, 128, 640, 85.3 → 86, 91.4 → 92 (arithmetic; common practice, no source)
    body = assert_ok(post_json(SAMPLE, {"design": _design(groups=2, cohens_f=0.25), "target_power": 0.8,
                                        "dropout_rate": dropout}))
    assert body["group_sizes"] == [64, 64]  # the analysed sizes do not change
    assert body["enrolment"] == {"dropout_rate": dropout, "group_sizes": [per_group] * 2, "n_total": 2 * per_group}
    assert per_group == math.ceil(round(64 / (1 - dropout), 9))


def test_sample_size_high_dropout_warns(post_json, assert_ok):
    """Dropout above .3 adds a warning about treatment-dependent losses."""
    body = assert_ok(post_json(SAMPLE, {"design": _design(groups=2, cohens_f=0.25), "target_power": 0.8,
                                        "dropout_rate": 0.4}))
    assert any("dropout" in w.lower() for w in body["warnings"])


def test_sample_size_unequal_allocation_has_null_n_per_group(post_json, assert_ok):
    """Sample size with an unequal allocation: n_per_group is null and sizes are ceil(m·r_i/min r)."""
    body = assert_ok(post_json(SAMPLE, {"design": _design(cohens_f=0.25, allocation=[2, 4, 3]), "target_power": 0.8}))
    m = body["smallest_group"]
    assert body["n_per_group"] is None
    assert body["group_sizes"] == [m, 2 * m, math.ceil(1.5 * m)]
    assert body["one_step_smaller"]["group_sizes"] == [m - 1, 2 * (m - 1), math.ceil(1.5 * (m - 1))]
    assert body["achieved_power"] >= 0.8 > body["one_step_smaller"]["power"]


def test_detectable_effect_response_fields(post_json, assert_ok):
    """Detectable effect: f, η², λ present; with sd and equal sizes also sd_of_means and min_range."""
    body = assert_ok(post_json(DETECT, {"design": _design(groups=4, sd=2.0), "n_per_group": 20, "target_power": 0.8}))
    assert DETECT_FIELDS | {"sd_of_means", "min_range"} <= set(body)
    _check_common(body, 4)
    f = body["cohens_f"]
    assert f == pytest.approx(math.sqrt(body["noncentrality"] / 80), rel=1e-12)  # λ = N f²
    assert body["eta_squared"] == pytest.approx(f**2 / (1 + f**2), rel=1e-12)
    assert body["sd_of_means"] == pytest.approx(f * 2.0, rel=1e-12)
    # least-favourable configuration: Δ = f σ √(2k) (Cohen 1988, eq. 8.2.5)
    assert body["min_range"] == pytest.approx(f * 2.0 * math.sqrt(8), rel=1e-12)
    assert body["achieved_power"] == pytest.approx(0.8, abs=1e-9)
    # independent computation: scipy's power at the returned λ is the target
    assert _scipy_power(0.05, 3, 76, body["noncentrality"]) == pytest.approx(0.8, abs=1e-8)


def test_detectable_effect_without_sd_has_no_data_units(post_json, assert_ok):
    """Detectable effect without design.sd: no sd_of_means and no min_range."""
    body = assert_ok(post_json(DETECT, {"design": _design(groups=3), "n_per_group": 20, "target_power": 0.8}))
    assert "sd_of_means" not in body and "min_range" not in body


def test_detectable_effect_unequal_sizes_has_no_min_range(post_json, assert_ok):
    """Detectable effect with unequal sizes: sd_of_means is given but min_range (equal only) is not."""
    body = assert_ok(post_json(DETECT, {"design": _design(sd=1.0, allocation=[1, 1, 2]), "n_per_group": 10,
                                        "target_power": 0.8}))
    assert body["group_sizes"] == [10, 10, 20]
    assert "sd_of_means" in body and "min_range" not in body


def test_detectable_effect_refuses_an_effect_in_the_design(post_json, assert_problem):
    """Detectable effect solves for the effect, so an effect in the design is a 422 naming it."""
    body = {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 20, "target_power": 0.8}
    assert_problem(post_json(DETECT, body), 422, "design.cohens_f")


# -- alpha default -----------------------------------------------------------------------


@pytest.mark.parametrize(
    "route, body",
    [
        (POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 20}),
        (SAMPLE, {"design": _design(groups=3, cohens_f=0.25), "target_power": 0.8}),
        (DETECT, {"design": _design(groups=3), "n_per_group": 20, "target_power": 0.8}),
    ],
    ids=["power", "sample", "detect"],
)
def test_alpha_defaults_to_005(post_json, assert_ok, route, body):
    """Without alpha the answer is the one for alpha = 0.05, reported as such."""
    implicit = assert_ok(post_json(route, body))
    explicit = assert_ok(post_json(route, {**body, "alpha": 0.05}))
    assert implicit["alpha"] == 0.05
    assert implicit == explicit


# -- groups, sizes and allocation --------------------------------------------------------


@pytest.mark.parametrize(
    "route, body, field",
    [
        (POWER, {"design": _design(groups=3, cohens_f=0.25), "group_sizes": [20, 20]}, "group_sizes"),
        (POWER, {"design": _design(groups=2, cohens_f=0.25), "group_sizes": [20, 20, 20]}, "group_sizes"),
        (POWER, {"design": _design(group_means=[1, 2, 3], sd=1), "group_sizes": [20, 20]}, "group_sizes"),
        (POWER, {"design": _design(cohens_f=0.25, allocation=[1, 2]), "group_sizes": [20, 20, 20]}, "group_sizes"),
        (DETECT, {"design": _design(groups=3), "group_sizes": [20, 20], "target_power": 0.8}, "group_sizes"),
        (POWER, {"design": _design(groups=4, group_means=[1, 2, 3], sd=1), "n_per_group": 20}, "design.groups"),
        (SAMPLE, {"design": _design(groups=4, cohens_f=0.25, allocation=[1, 2]), "target_power": 0.8},
         "design.allocation"),
        (SAMPLE, {"design": _design(group_means=[1, 2, 3], sd=1, allocation=[1, 2]), "target_power": 0.8},
         "design.allocation"),
        (POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 20, "group_sizes": [20, 20, 20]},
         "n_per_group"),
    ],
    ids=["power-too-few-sizes", "power-too-many-sizes", "power-means-vs-sizes", "power-allocation-vs-sizes",
         "detect-too-few-sizes", "means-vs-groups", "allocation-vs-groups", "allocation-vs-means",
         "both-n-and-sizes"],
)
def test_groups_must_agree(post_json, assert_problem, route, body, field):
    """groups, group_means, allocation and group_sizes must agree on k, else 422 naming the field."""
    problem = assert_problem(post_json(route, body), 422, field)
    assert re.search(r"\(got \d", problem["errors"][field][0]) or "got" in problem["errors"][field][0]


def test_groups_implied_by_group_sizes(post_json, assert_ok):
    """Without groups, k comes from group_sizes (and agrees when both are given)."""
    implied = assert_ok(post_json(POWER, {"design": _design(cohens_f=0.25), "group_sizes": [20, 20, 20]}))
    stated = assert_ok(post_json(POWER, {"design": _design(groups=3, cohens_f=0.25), "group_sizes": [20, 20, 20]}))
    # The two requests differ in text, so their digests differ by design; the answers may not.
    implied.pop("provenance")
    stated.pop("provenance")
    assert implied == stated


@pytest.mark.parametrize("route", [POWER, SAMPLE], ids=["power", "sample"])
def test_min_range_with_unequal_allocation_is_422(post_json, assert_problem, route):
    """min_range (least-favourable configuration) with an unequal allocation is a 422 naming design.allocation."""
    design = _design(groups=3, min_range=1.0, sd=1.0, allocation=[1, 2, 3])
    body = {"design": design, "n_per_group": 10} if route == POWER else {"design": design, "target_power": 0.8}
    problem = assert_problem(post_json(route, body), 422, "design.allocation")
    assert "equal allocation" in problem["errors"]["design.allocation"][0]


def test_min_range_with_equal_allocation_is_least_favourable_f(post_json, assert_ok):
    """min_range with equal (or explicitly equal) allocation means f = Δ/(σ√(2k))."""
    # Cohen (1988), §8.2.1, pattern 1: f = Δ/(σ√(2k)) for two extreme means, the rest central.
    for allocation in (None, [2, 2, 2]):
        design = _design(groups=3, min_range=1.2, sd=2.0)
        if allocation:
            design["allocation"] = allocation
        body = assert_ok(post_json(POWER, {"design": design, "n_per_group": 10}))
        assert body["effect"]["cohens_f"] == pytest.approx(1.2 / (2.0 * math.sqrt(6)), rel=1e-12)


@pytest.mark.parametrize(
    "allocation, n, sizes",
    [
        ([1, 2, 1.5], 35, [35, 70, 53]),   # 52.5 → 53
        ([3, 1], 10, [30, 10]),            # the smallest ratio need not come first
        ([0.1, 1.1], 5, [5, 55]),          # 1.1/0.1 = 11.000000000000002 must not round up to 56
        ([1, 1, 1], 7, [7, 7, 7]),
        ([1, 1000], 3, [3, 3000]),         # the largest spread allowed
        ([2, 3], 1, [1, 2]),               # ceil(1.5) = 2
    ],
    ids=["half-up", "smallest-last", "float-ratio", "equal", "max-spread", "m1"],
)
def test_allocation_sizes_are_ceil_m_r_over_min_r(post_json, assert_ok, allocation, n, sizes):
    """Allocation: sizes are ceil(m·r_i/min r) with m = n_per_group the smallest group."""
    # arithmetic of the documented rule (common practice, no source)
    body = assert_ok(post_json(POWER, {"design": _design(cohens_f=0.25, allocation=allocation), "n_per_group": n}))
    assert body["group_sizes"] == sizes


def test_allocation_spread_above_1000_is_422(post_json, assert_problem):
    """An allocation whose largest ratio exceeds 1000× the smallest is a 422 stating the bound."""
    problem = assert_problem(post_json(POWER, {"design": _design(cohens_f=0.25, allocation=[1, 1000.5]),
                                              "n_per_group": 3}), 422, "design.allocation")
    assert "1000" in problem["errors"]["design.allocation"][0]


def test_allocation_spread_of_exactly_1000_in_floating_point_is_accepted(post_json, assert_ok):
    """[1e-6, 1e-3] has the ratio 1000.0000000000001 in floating point; it is the allowed 1000."""
    body = assert_ok(post_json(POWER, {"design": _design(cohens_f=0.25, allocation=[1e-6, 1e-3]), "n_per_group": 2}))
    assert body["group_sizes"] == [2, 2000]


def test_unequal_sizes_with_f_warn(post_json, assert_ok):
    """Cohen's f given directly with unequal sizes carries a warning on how it is read."""
    body = assert_ok(post_json(POWER, {"design": _design(cohens_f=0.25), "group_sizes": [10, 20, 30]}))
    assert any("unequal" in w for w in body["warnings"])
    small = assert_ok(post_json(POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 3}))
    assert any("smallest group has 3" in w for w in small["warnings"])


# -- error message shape -----------------------------------------------------------------


@pytest.mark.parametrize(
    "route, body, field, echo, allowed",
    [
        (POWER, {"design": _design(groups=3, cohens_f=11.5), "n_per_group": 20}, "design.cohens_f", "11.5", "at most 10"),
        (POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 20, "alpha": 0.7}, "alpha", "0.7", "at most 0.5"),
        (SAMPLE, {"design": _design(groups=3, cohens_f=0.25), "target_power": 0.8, "dropout_rate": 0.95},
         "dropout_rate", "0.95", "at most 0.9"),
        (DETECT, {"design": _design(groups=3, sd=-1), "n_per_group": 20, "target_power": 0.8}, "design.sd", "-1",
         "greater than 0"),
        (POWER, {"design": {"type": "two_way", "groups": 3}, "n_per_group": 20}, "design.type", "two_way", "one_way_anova"),
        (POWER, {"design": _design(groups=3, cohens_f=0.25), "alhpa": 0.05, "n_per_group": 20}, "alhpa", "alhpa",
         "alpha"),
    ],
    ids=["cohens-f", "alpha", "dropout", "sd", "design-type", "unknown"],
)
def test_error_messages_name_field_echo_value_and_say_what_is_allowed(post_json, assert_problem, route, body, field, echo, allowed):
    """Validation messages are keyed by the field path, echo the value and state the allowed range."""
    problem = assert_problem(post_json(route, body), 422, field)
    text = " ".join(problem["errors"][field]) + " " + field
    assert echo in text and allowed in text
    assert problem["type"] == "urn:samplewright:problem:invalid-request"
    assert field in problem["detail"]


def test_no_solution_has_its_own_problem_type(post_json, assert_problem):
    """An answer beyond the service's bounds is a 422 with the no-solution type and the cap in the detail."""
    problem = assert_problem(post_json(SAMPLE, {"design": _design(groups=3, cohens_f=1e-4), "target_power": 0.8}),
                             422, "target_power")
    assert problem["type"] == "urn:samplewright:problem:no-solution"
    assert "10000000" in problem["detail"]


# -- headers, service routes -------------------------------------------------------------


def test_request_id_is_echoed(post_json):
    """A supplied X-Request-ID comes back unchanged in the response header."""
    response = post_json(POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 20},
                         headers={"X-Request-ID": "trace-abc-123"})
    assert response.headers["X-Request-ID"] == "trace-abc-123"


@pytest.mark.parametrize("supplied", ["", "x" * 129, "a\tb", "caf\u00e9"], ids=["empty", "too-long", "control", "non-ascii"])
def test_unusable_request_id_is_replaced(post_json, supplied):
    """An empty, over-long, non-printable or non-ASCII X-Request-ID is replaced by a generated one."""
    response = post_json(POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 20},
                         headers={"X-Request-ID": supplied})
    assert re.fullmatch(r"[0-9a-f]{32}", response.headers["X-Request-ID"])


def test_request_id_is_in_problem_body(post_json, assert_problem):
    """A problem carries the request id and the request path as instance."""
    problem = assert_problem(post_json(POWER, {}, headers={"X-Request-ID": "rid-7"}), 422)
    assert problem["request_id"] == "rid-7" and problem["instance"] == POWER


def test_security_and_cache_headers(client, post_json):
    """Every response is no-store and nosniff, success or problem."""
    for response in (client.get("/healthz"), post_json(POWER, {}), client.get("/nope")):
        assert response.headers["Cache-Control"] == "no-store"
        assert response.headers["X-Content-Type-Options"] == "nosniff"


def test_version_fields(client, assert_ok):
    """/v1/version reports the service, scipy, numpy and Python versions actually running."""
    body = assert_ok(client.get("/v1/version"))
    assert body == {"service": samplewright.__version__, "scipy": scipy.__version__,
                    "numpy": numpy.__version__, "python": platform.python_version()}


def test_healthz(client, assert_ok):
    """/healthz answers {"status": "ok"}."""
    assert assert_ok(client.get("/healthz")) == {"status": "ok"}


def test_openapi_route_serves_the_document(client, assert_ok):
    """/openapi.json serves the generated document as JSON."""
    body = assert_ok(client.get("/openapi.json"))
    assert body["openapi"].startswith("3.1") and "/v1/power" in body["paths"]


@pytest.mark.parametrize("route", [POWER, SAMPLE, DETECT])
def test_method_not_allowed_keeps_allow_header(client, assert_problem, route):
    """GET on a compute route is a 405 problem whose Allow header lists POST."""
    response = client.get(route)
    assert_problem(response, 405)
    assert "POST" in {m.strip() for m in response.headers["Allow"].split(",")}
