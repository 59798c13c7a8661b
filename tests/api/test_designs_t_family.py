"""The t-based designs over HTTP: the three questions, their reports, identities, hostile inputs.

Two-sample, one-sample and paired t, planned contrasts and pairwise comparisons, through
the test client.
"""

from __future__ import annotations

import copy
import math

import pytest
from statsmodels.stats.power import TTestIndPower, TTestPower

from samplewright.api.designs import ADAPTERS

TWO = {"type": "two_sample_t", "mean_difference": 4, "sd": 8}
ONE = {"type": "one_sample_t", "mean_difference": 2.5, "sd": 10, "alternative": "greater"}
PAIRED = {"type": "paired_t", "mean_difference": 3, "sd": 10, "correlation": 0.6}
CONTRAST = {"type": "contrast", "group_means": [20, 22, 25], "sd": 6, "coefficients": [-1, 0.5, 0.5]}
PAIRWISE = {"type": "pairwise_comparisons", "group_means": [50, 55, 60], "sd": 8, "adjustment": "bonferroni"}
DESIGNS = {d["type"]: d for d in (TWO, ONE, PAIRED, CONTRAST, PAIRWISE)}
#: The same designs without their effect, for detectable-effect.
LAYOUTS = {
    "two_sample_t": {"type": "two_sample_t", "sd": 8},
    "one_sample_t": {"type": "one_sample_t", "sd": 10, "alternative": "greater"},
    "paired_t": {"type": "paired_t", "sd": 10, "correlation": 0.6},
    "contrast": {"type": "contrast", "sd": 6, "coefficients": [-1, 0.5, 0.5]},
    "pairwise_comparisons": {"type": "pairwise_comparisons", "groups": 3, "sd": 8},
}

DROP = object()


def with_design(design: dict, **changes) -> dict:
    out = copy.deepcopy(design)
    out.update(changes)
    return {k: v for k, v in out.items() if v is not DROP}


@pytest.mark.parametrize("kind", sorted(DESIGNS))
def test_three_questions_answer(post_json, assert_ok, kind):
    """Power, sample size and detectable effect each answer 200 with the design's type and method."""
    power = assert_ok(post_json("/v1/power", {"n_per_group": 20, "design": DESIGNS[kind]}))
    assert power["design_type"] == kind and 0.0 < power["power"] <= 1
    assert power["method"]["id"] == ADAPTERS[kind].method_id
    assert power["df_numerator"] == 1.0
    assert "details" in power
    found = assert_ok(post_json("/v1/sample-size", {"target_power": 0.8, "design": DESIGNS[kind]}))
    assert found["achieved_power"] >= 0.8
    assert found["one_step_smaller"] is None or found["one_step_smaller"]["power"] < 0.8
    detect = assert_ok(post_json("/v1/detectable-effect",
                                 {"n_per_group": 20, "target_power": 0.8, "design": LAYOUTS[kind]}))
    assert detect["achieved_power"] == pytest.approx(0.8, abs=1e-9)  # definition of the solve
    assert detect["t_noncentrality"] ** 2 == pytest.approx(detect["noncentrality"], rel=1e-12)


def test_two_sample_power_matches_statsmodels_over_http(post_json, assert_ok):
    """/v1/power for a two-sample t with allocation [1, 2] equals statsmodels with ratio 2."""
    body = assert_ok(post_json("/v1/power", {"n_per_group": 25, "design": with_design(TWO, allocation=[1, 2])}))
    assert body["group_sizes"] == [25, 50]
    # Reference: statsmodels TTestIndPower (d = 4/8, ratio 2); rtol 1e-12.
    assert body["power"] == pytest.approx(TTestIndPower().power(0.5, 25, 0.05, ratio=2.0), rel=1e-12)


def test_one_sided_paired_power_matches_statsmodels_over_http(post_json, assert_ok):
    """/v1/power for a one-sided paired t equals statsmodels' TTestPower on d_z."""
    design = with_design(PAIRED, mean_difference=-3, alternative="less")
    body = assert_ok(post_json("/v1/power", {"group_sizes": [30], "design": design}))
    dz = -3 / (10 * math.sqrt(0.8))
    # Reference: statsmodels TTestPower, alternative "smaller"; rtol 1e-12.
    assert body["power"] == pytest.approx(TTestPower().power(dz, 30, 0.05, alternative="smaller"), rel=1e-12)
    assert body["effect"]["cohens_dz"] == pytest.approx(dz, rel=1e-15)
    assert body["details"]["rejection_region"].startswith("T <")
    assert body["details"]["critical_t"] < 0


def test_cohen_table_over_http(post_json, assert_ok):
    """d = .5, power .8, α .05 two-sided: 64 per group through /v1/sample-size."""
    body = assert_ok(post_json("/v1/sample-size", {"target_power": 0.8,
                                                   "design": {"type": "two_sample_t", "cohens_d": 0.5}}))
    # Reference: Cohen (1988), 2nd ed., Table 2.4.1, from memory (REFERENCES.md): 64 per group.
    assert body["n_per_group"] == 64 and body["group_sizes"] == [64, 64]


# -- identities over HTTP ------------------------------------------------------------------


@pytest.mark.parametrize("sizes", [[10, 10], [8, 21]])
def test_two_sample_t_equals_one_way_anova_with_two_groups(post_json, assert_ok, sizes):
    """Two-sided two_sample_t and one_way_anova with k = 2: the same power, df and λ."""
    t = assert_ok(post_json("/v1/power", {"group_sizes": sizes, "design": TWO}))
    f = assert_ok(post_json("/v1/power", {"group_sizes": sizes, "design": {
        "type": "one_way_anova", "group_means": [4, 0], "sd": 8}}))
    # Reference: this service's one-way ANOVA; identity, rtol 1e-12.
    assert t["power"] == pytest.approx(f["power"], rel=1e-12)
    assert t["noncentrality"] == pytest.approx(f["noncentrality"], rel=1e-12)
    assert (t["df_numerator"], t["df_denominator"]) == (f["df_numerator"], f["df_denominator"])


def test_two_sample_sample_size_equals_one_way_anova(post_json, assert_ok):
    """The smallest two-sided two-sample design equals one_way_anova's with k = 2."""
    t = assert_ok(post_json("/v1/sample-size", {"target_power": 0.9, "design": TWO}))
    f = assert_ok(post_json("/v1/sample-size", {"target_power": 0.9, "design": {
        "type": "one_way_anova", "group_means": [4, 0], "sd": 8}}))
    # Reference: this service's one-way ANOVA; identity.
    assert t["group_sizes"] == f["group_sizes"]
    assert t["achieved_power"] == pytest.approx(f["achieved_power"], rel=1e-12)


@pytest.mark.parametrize("alternative", ["two-sided", "greater"])
def test_contrast_minus_one_one_equals_two_sample_t(post_json, assert_ok, alternative):
    """contrast (−1, 1) on two groups equals two_sample_t of μ₂ − μ₁ (power and sample size)."""
    contrast = {"type": "contrast", "group_means": [10, 14], "sd": 8, "coefficients": [-1, 1],
                "alternative": alternative}
    two = {"type": "two_sample_t", "mean_difference": 4, "sd": 8, "alternative": alternative}
    a = assert_ok(post_json("/v1/power", {"n_per_group": 17, "design": contrast}))
    b = assert_ok(post_json("/v1/power", {"n_per_group": 17, "design": two}))
    # Reference: the two-sample t design; identity, rtol 1e-12.
    assert a["power"] == pytest.approx(b["power"], rel=1e-12)
    a = assert_ok(post_json("/v1/sample-size", {"target_power": 0.85, "design": contrast}))
    b = assert_ok(post_json("/v1/sample-size", {"target_power": 0.85, "design": two}))
    assert a["group_sizes"] == b["group_sizes"]


# -- reports -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("design", "key"),
    [
        ({"type": "two_sample_t", "sd": 8, "alternative": "less"}, "cohens_d"),
        ({"type": "one_sample_t", "sd": 10, "alternative": "less"}, "cohens_d"),
        ({"type": "paired_t", "sd_difference": 5, "alternative": "less"}, "cohens_dz"),
        ({"type": "contrast", "sd": 6, "coefficients": [-1, 0.5, 0.5], "alternative": "less"},
         "standardised_contrast"),
    ],
)
def test_detectable_effect_for_less_is_negative(post_json, assert_ok, design, key):
    """For alternative "less" the detectable effect is reported as a negative number, in data units too."""
    groups = {"contrast": 3, "two_sample_t": 2}.get(design["type"], 1)
    body = assert_ok(post_json("/v1/detectable-effect",
                               {"group_sizes": [20] * groups, "target_power": 0.8, "design": design}))
    assert body[key] < 0 and body["t_noncentrality"] < 0
    data_key = "contrast_value" if design["type"] == "contrast" else "mean_difference"
    assert body[data_key] < 0


def test_detectable_d_in_data_units(post_json, assert_ok):
    """Detectable two-sample d = δ√(1/n₁ + 1/n₂), and the mean difference is d·sd."""
    body = assert_ok(post_json("/v1/detectable-effect", {"group_sizes": [20, 40], "target_power": 0.9,
                                                         "design": {"type": "two_sample_t", "sd": 3}}))
    d = math.sqrt(body["noncentrality"]) * math.sqrt(1 / 20 + 1 / 40)
    assert body["cohens_d"] == pytest.approx(d, rel=1e-14)
    assert body["mean_difference"] == pytest.approx(3 * d, rel=1e-14)
    # Reference: statsmodels TTestIndPower.solve_power (root-finder tolerance); rtol 1e-5.
    assert d == pytest.approx(TTestIndPower().solve_power(None, 20, 0.05, 0.9, ratio=2.0), rel=1e-5)


def test_pairwise_details_list_every_comparison(post_json, assert_ok):
    """Pairwise details: each comparison's power, the smallest equal to the response power, α′ = α/m."""
    body = assert_ok(post_json("/v1/power", {"n_per_group": 30, "design": PAIRWISE}))
    details = body["details"]
    assert details["comparisons"] == 3 and len(details["comparison_powers"]) == 3
    assert details["alpha_per_comparison"] == pytest.approx(0.05 / 3, rel=1e-15)  # Dunn (1961): α/m
    powers = [item["power"] for item in details["comparison_powers"]]
    assert min(powers) == body["power"] == details["smallest_power"]
    by_pair = {tuple(item["groups"]): item for item in details["comparison_powers"]}
    assert by_pair[(0, 2)]["mean_difference"] == 10 and by_pair[(0, 2)]["power"] > body["power"]
    assert body["effect"]["smallest_comparison"] in ([0, 1], [1, 2])


def test_pairwise_against_control(post_json, assert_ok):
    """control_group 1 compares the other k − 1 groups with group 1, at the Šidák level."""
    design = with_design(PAIRWISE, group_means=[50, 55, 62, 58], control_group=1, adjustment="sidak")
    body = assert_ok(post_json("/v1/power", {"n_per_group": 25, "design": design}))
    pairs = [item["groups"] for item in body["details"]["comparison_powers"]]
    assert pairs == [[1, 0], [1, 2], [1, 3]]
    # Reference: Šidák (1967): 1 − (1 − α)^{1/m}; rtol 1e-14.
    assert body["details"]["alpha_per_comparison"] == pytest.approx(1 - 0.95 ** (1 / 3), rel=1e-14)


def test_pairwise_sample_size_targets_the_smallest_comparison(post_json, assert_ok):
    """The sample size makes the weakest comparison reach the target; one fewer does not."""
    body = assert_ok(post_json("/v1/sample-size", {"target_power": 0.8, "design": PAIRWISE}))
    assert body["details"]["smallest_power"] == body["achieved_power"] >= 0.8
    assert body["one_step_smaller"]["power"] < 0.8
    n = body["n_per_group"]
    smaller = assert_ok(post_json("/v1/power", {"n_per_group": n - 1, "design": PAIRWISE}))
    assert min(item["power"] for item in smaller["details"]["comparison_powers"]) < 0.8


def test_pairwise_detectable_names_the_worst_pair(post_json, assert_ok):
    """Detectable pairwise difference: the worst-placed pair under unequal allocation, in d and data units."""
    design = {"type": "pairwise_comparisons", "sd": 2, "allocation": [2, 1, 1], "adjustment": "none"}
    body = assert_ok(post_json("/v1/detectable-effect", {"n_per_group": 10, "target_power": 0.8, "design": design}))
    assert body["group_sizes"] == [20, 10, 10]
    assert body["smallest_comparison"] == [1, 2]  # the pair of the two smaller groups
    d = math.sqrt(body["noncentrality"]) * math.sqrt(1 / 10 + 1 / 10)
    assert body["cohens_d"] == pytest.approx(d, rel=1e-14)
    assert body["mean_difference"] == pytest.approx(2 * d, rel=1e-14)


def test_pairwise_equal_means_warn(post_json, assert_ok):
    """A compared pair with equal means is flagged: its power stays at α′."""
    design = with_design(PAIRWISE, group_means=[50, 50, 60])
    body = assert_ok(post_json("/v1/power", {"n_per_group": 20, "design": design}))
    assert any("equal means" in w for w in body["warnings"])
    assert body["power"] == pytest.approx(0.05 / 3, rel=1e-12)  # Dunn (1961): α/m at λ = 0


def test_one_sided_response_reports_t_scale_details(post_json, assert_ok):
    """One-sided answers carry λ = δ² and t_α² on the F scale, and δ and t_α in details."""
    body = assert_ok(post_json("/v1/power", {"n_per_group": 50, "design": ONE}))
    details = body["details"]
    assert details["alternative"] == "greater" and details["df"] == 49
    assert details["t_noncentrality"] == pytest.approx(0.25 * math.sqrt(50), rel=1e-14)
    assert body["noncentrality"] == pytest.approx(details["t_noncentrality"] ** 2, rel=1e-14)
    assert body["critical_value"] == pytest.approx(details["critical_t"] ** 2, rel=1e-14)


# -- simulation over HTTP ------------------------------------------------------------------


@pytest.mark.parametrize(
    ("design", "n"),
    [
        (with_design(TWO, allocation=[1, 3], alternative="greater"), 15),
        (with_design(PAIRED, mean_difference=-3, alternative="less"), 35),
        (with_design(CONTRAST, alternative="greater", allocation=[1, 2, 2]), 10),
        (with_design(PAIRWISE, control_group=0, adjustment="sidak"), 25),
    ],
)
def test_simulate_endpoint_reproduces_analytic_power(post_json, assert_ok, design, n):
    """POST /v1/simulate on one-sided, unequal and control variants agrees with the analytic power."""
    body = assert_ok(post_json("/v1/simulate", {"n_per_group": n, "design": design, "replicates": 20000,
                                                "seed": 11}))
    a = body["analytic_power"]
    se = math.sqrt(a * (1 - a) / body["replicates"])
    assert 0.15 < a < 0.97
    # Reference: seeded simulation of the real test, 4 MC SE.
    assert abs(body["power"] - a) <= 4 * se


# -- hostile inputs ------------------------------------------------------------------------


def _g(design: dict, n: int = 20) -> dict:
    """A power request at n per group."""
    return {"n_per_group": n, "design": design}


HOSTILE = [
    # contrasts
    ("power", _g(with_design(CONTRAST, coefficients=[1, 1, -1])), "design.coefficients"),
    ("power", _g(with_design(CONTRAST, coefficients=[0, 0, 0])), "design.coefficients"),
    ("power", _g(with_design(CONTRAST, coefficients=[1, -1])), "design.coefficients"),
    ("power", _g(with_design(CONTRAST, coefficients=[1e300, -1e300, 0])), "design.coefficients.0"),
    ("power", _g(with_design(CONTRAST, alternative="less")), "design.coefficients"),
    ("power", _g(with_design(CONTRAST, sd=DROP)), "design.sd"),
    ("power", _g(with_design(CONTRAST, sd=1e-9)), "design.group_means"),
    ("power", _g(with_design(CONTRAST, coefficients=DROP)), "design.coefficients"),
    ("power", {"group_sizes": [10, 10], "design": CONTRAST}, "group_sizes"),
    ("detectable-effect", {"n_per_group": 10, "target_power": 0.8, "design": CONTRAST}, "design.group_means"),
    # signs against one-sided alternatives
    ("power", _g({"type": "two_sample_t", "cohens_d": -0.5, "alternative": "greater"}), "design.cohens_d"),
    ("power", _g(with_design(TWO, alternative="less")), "design.mean_difference"),
    ("sample-size", {"target_power": 0.8, "design": with_design(ONE, mean_difference=-1)}, "design.mean_difference"),
    ("power", _g({"type": "paired_t", "cohens_dz": 0.3, "alternative": "less"}), "design.cohens_dz"),
    ("power", _g(with_design(TWO, alternative="two_sided")), "design.alternative"),
    # two-sample fields
    ("power", _g(with_design(TWO, cohens_d=0.5)), "design.mean_difference"),
    ("power", _g(with_design(TWO, sd=DROP)), "design.sd"),
    ("power", _g({"type": "two_sample_t", "cohens_d": 25}), "design.cohens_d"),
    ("power", _g({"type": "two_sample_t", "cohens_d": "0.5"}), "design.cohens_d"),
    ("power", _g({"type": "two_sample_t", "cohens_d": True}), "design.cohens_d"),
    ("power", _g(with_design(TWO, sd=1e-9)), "design.mean_difference"),
    ("power", _g(with_design(TWO, allocation=[1, 2, 3])), "design.allocation"),
    ("power", _g({"type": "two_sample_t"}), "design"),
    ("power", {"group_sizes": [1, 1], "design": TWO}, "group_sizes"),
    ("power", {"group_sizes": [10], "design": TWO}, "group_sizes"),
    ("power", _g(with_design(TWO, alhpa=0.05)), "design.alhpa"),
    # one-sample and paired
    ("power", {"group_sizes": [10, 10], "design": ONE}, "group_sizes"),
    ("power", {"n_per_group": 1, "design": ONE}, "n_per_group"),
    ("power", _g(with_design(PAIRED, correlation=1)), "design.correlation"),
    ("power", _g(with_design(PAIRED, correlation=-1)), "design.correlation"),
    ("power", _g(with_design(PAIRED, correlation=1.5)), "design.correlation"),
    ("power", _g(with_design(PAIRED, correlation=DROP)), "design.correlation"),
    ("power", _g(with_design(PAIRED, sd=DROP)), "design.sd"),
    ("power", _g(with_design(PAIRED, sd_difference=4)), "design.sd_difference"),
    ("power", _g({"type": "paired_t", "mean_difference": 2}), "design.sd_difference"),
    ("power", _g(with_design(PAIRED, correlation=0.9999999999999)), "design.mean_difference"),
    ("power", _g(with_design(PAIRED, cohens_dz=0.3)), "design.mean_difference"),
    ("detectable-effect", {"n_per_group": 10, "target_power": 0.8, "design": PAIRED}, "design.mean_difference"),
    # pairwise
    ("power", _g(with_design(PAIRWISE, control_group=3)), "design.control_group"),
    ("power", _g(with_design(PAIRWISE, control_group=-1)), "design.control_group"),
    ("power", _g(with_design(PAIRWISE, control_group=1.5)), "design.control_group"),
    ("power", _g(with_design(PAIRWISE, adjustment="holm")), "design.adjustment"),
    ("power", _g(with_design(PAIRWISE, groups=4)), "design.groups"),
    ("power", _g(with_design(PAIRWISE, group_means=list(range(31)))), "design.group_means"),
    ("power", _g(with_design(PAIRWISE, group_means=[0, 0, 1e9], sd=1)), "design.group_means"),
    ("detectable-effect", {"n_per_group": 10, "target_power": 0.8,
                           "design": {"type": "pairwise_comparisons", "sd": 2}}, "design.groups"),
    ("detectable-effect", {"n_per_group": 10, "target_power": 0.8,
                           "design": {"type": "pairwise_comparisons", "groups": 3, "control_group": 5}},
     "design.control_group"),
    ("detectable-effect", {"group_sizes": [10, 10, 10], "target_power": 0.8,
                           "design": {"type": "pairwise_comparisons", "control_group": 3}}, "design.control_group"),
]


@pytest.mark.parametrize(("operation", "body", "field"), HOSTILE)
def test_hostile_inputs_give_422_naming_the_field(post_json, assert_problem, operation, body, field):
    """Invalid t-family inputs give a 422 problem whose errors name the offending field."""
    assert_problem(post_json(f"/v1/{operation}", body), 422, field)


def test_contradicting_sign_message_says_what_is_allowed(post_json, assert_problem):
    """The sign error names the alternative and what would be accepted."""
    body = assert_problem(post_json("/v1/power", _g({"type": "two_sample_t", "cohens_d": -0.5,
                                                     "alternative": "greater"})), 422, "design.cohens_d")
    message = body["errors"]["design.cohens_d"][0]
    assert "greater" in message and "negative" in message and "-0.5" in message


def test_coefficients_message_gives_the_sum(post_json, assert_problem):
    """Coefficients that do not sum to zero: the message gives their sum."""
    body = assert_problem(post_json("/v1/power", _g(with_design(CONTRAST, coefficients=[1, 1, -1]))), 422,
                          "design.coefficients")
    assert "sum to 1" in body["errors"]["design.coefficients"][0]


@pytest.mark.parametrize("design", [{"type": "two_sample_t", "cohens_d": 0},
                                    {"type": "one_sample_t", "cohens_d": 1e-9, "alternative": "greater"},
                                    with_design(PAIRWISE, group_means=[50, 50, 60])])
def test_sample_size_without_a_reachable_answer_is_422(post_json, assert_problem, design):
    """Zero or tiny effects (or a pair of equal means) leave no sample size: 422 no-solution, quickly."""
    body = assert_problem(post_json("/v1/sample-size", {"target_power": 0.8, "design": design}), 422)
    assert body["type"].endswith("no-solution")
