"""The F-family designs over HTTP: the three questions, their reports, and hostile inputs.

Factorial, random effects, ANCOVA, repeated measures and Welch, through the test client.
"""

from __future__ import annotations

import copy

import pytest

from samplewright.api.designs import ADAPTERS
from samplewright.core.designs.welch import APPROXIMATION_ERROR

FACTORIAL = {"type": "factorial_anova", "effect": "factor_a", "sd": 25,
             "cell_means": [[120, 120, 120], [80, 80, 80], [100, 100, 100]]}
RANDOM = {"type": "random_effects_anova", "groups": 6, "variance_ratio": 0.25}
ANCOVA = {"type": "one_way_ancova", "group_means": [62, 66, 68], "sd": 12, "covariate_r2": 0.5}
REPEATED = {"type": "repeated_measures", "level_means": [420, 410, 400, 395], "sd": 40, "correlation": 0.6}
WELCH = {"type": "welch_anova", "group_means": [30, 34, 38], "group_sds": [6, 9, 12]}
DESIGNS = {d["type"]: d for d in (FACTORIAL, RANDOM, ANCOVA, REPEATED, WELCH)}
#: The same designs without their effect, for detectable-effect.
LAYOUTS = {
    "factorial_anova": {"type": "factorial_anova", "effect": "factor_a", "sd": 25, "levels_a": 3, "levels_b": 3},
    "random_effects_anova": {"type": "random_effects_anova", "groups": 6},
    "one_way_ancova": {"type": "one_way_ancova", "groups": 3, "sd": 12, "covariate_r2": 0.5},
    "repeated_measures": {"type": "repeated_measures", "levels": 4, "sd": 40, "correlation": 0.6},
    "welch_anova": {"type": "welch_anova", "group_sds": [6, 9, 12]},
}


#: A value for ``with_design`` that removes the key.
DROP = object()


def with_design(design: dict, **changes) -> dict:
    out = copy.deepcopy(design)
    out.update(changes)
    return {k: v for k, v in out.items() if v is not DROP}


@pytest.mark.parametrize("kind", sorted(DESIGNS))
def test_three_questions_answer(post_json, assert_ok, kind):
    """Power, sample size and detectable effect each answer 200 with the design's type and method."""
    power = assert_ok(post_json("/v1/power", {"n_per_group": 12, "design": DESIGNS[kind]}))
    assert power["design_type"] == kind and 0.05 <= power["power"] <= 1
    assert power["method"]["id"] == ADAPTERS[kind].method_id
    found = assert_ok(post_json("/v1/sample-size", {"target_power": 0.8, "design": DESIGNS[kind]}))
    assert found["achieved_power"] >= 0.8
    assert found["one_step_smaller"] is None or found["one_step_smaller"]["power"] < 0.8
    detect = assert_ok(post_json("/v1/detectable-effect",
                                 {"n_per_group": 12, "target_power": 0.8, "design": LAYOUTS[kind]}))
    assert detect["achieved_power"] == pytest.approx(0.8, abs=1e-9)  # definition of the solve


def test_factorial_montgomery_over_http(post_json, assert_ok):
    """Montgomery 8th ed. §5.3.5 example through /v1/power: 0.922545 at n = 4 (REFERENCES.md [computed])."""
    body = assert_ok(post_json("/v1/power", {"n_per_group": 4, "design": FACTORIAL}))
    assert body["power"] == pytest.approx(0.922545, rel=1e-6)  # REFERENCES.md [computed]
    assert body["effect"]["phi"] ** 2 == pytest.approx(5.12, rel=1e-12)  # Φ² = n b D²/(2aσ²), closed form
    tests = body["details"]["tests"]
    assert tests["factor_b"]["power"] == 0.05 and tests["interaction"]["power"] == 0.05  # no effect: α


def test_factorial_detectable_range_round_trips(post_json, assert_ok):
    """The detectable D for factor A, put back as two row means D apart, gives the target power (round trip)."""
    detect = assert_ok(post_json("/v1/detectable-effect",
                                 {"n_per_group": 4, "target_power": 0.9, "design": LAYOUTS["factorial_anova"]}))
    d = detect["min_range"]
    cells = [[d / 2] * 3, [-d / 2] * 3, [0.0] * 3]
    power = assert_ok(post_json("/v1/power", {"n_per_group": 4, "design": with_design(FACTORIAL, cell_means=cells)}))
    assert power["power"] == pytest.approx(0.9, abs=1e-9)  # round trip through the exact power


def test_factorial_unequal_cells_are_row_major(post_json, assert_ok):
    """Cell sizes are row-major: factor A on (M, S) equals factor B on (Mᵀ, Sᵀ) (symmetry of the two-way model)."""
    means = [[10, 12, 11], [11, 10, 14]]
    sizes = [[2, 5, 3], [6, 4, 7]]
    transposed = [list(col) for col in zip(*means, strict=True)]
    sizes_t = [list(col) for col in zip(*sizes, strict=True)]
    design = with_design(FACTORIAL, cell_means=means, sd=2)
    a = assert_ok(post_json("/v1/power", {"group_sizes": sum(sizes, []), "design": design}))
    b = assert_ok(post_json("/v1/power", {"group_sizes": sum(sizes_t, []),
                                          "design": with_design(design, cell_means=transposed, effect="factor_b")}))
    assert b["power"] == pytest.approx(a["power"], rel=1e-12)
    assert b["noncentrality"] == pytest.approx(a["noncentrality"], rel=1e-12)
    balanced = assert_ok(post_json("/v1/power", {"n_per_group": 4, "design": design}))
    assert balanced["noncentrality"] != pytest.approx(a["noncentrality"], rel=1e-3)
    assert any("Type III" in w for w in a["warnings"])


def test_random_effects_details_table(post_json, assert_ok):
    """Power responses carry the groups-versus-units table, rising with groups (definition of the table)."""
    body = assert_ok(post_json("/v1/power", {"n_per_group": 10, "design": RANDOM}))
    table = body["details"]["more_groups_or_more_units"]
    assert [row["groups"] for row in table] == [6, 7, 8, 12]
    assert table[0]["power"] == pytest.approx(body["power"], rel=1e-12)
    for row in table[1:]:
        alt = row["same_total_with_original_groups"]
        assert alt["groups"] == 6 and alt["n_total"] <= row["n_total"]
        assert row["power"] > table[0]["power"]
    assert body["effect"]["icc"] == pytest.approx(0.2, rel=1e-12)  # θ/(1 + θ), closed form


def test_random_effects_icc_equals_variance_ratio(post_json, assert_ok):
    """icc = 0.2 and variance_ratio = 0.25 are the same design (θ = icc/(1 − icc), closed form)."""
    a = assert_ok(post_json("/v1/power", {"n_per_group": 10, "design": RANDOM}))
    b = assert_ok(post_json("/v1/power", {"n_per_group": 10,
                                          "design": {"type": "random_effects_anova", "groups": 6, "icc": 0.2}}))
    assert b["power"] == pytest.approx(a["power"], rel=1e-12)


def test_random_effects_zero_gives_alpha(post_json, assert_ok):
    """variance_ratio 0 gives power exactly alpha over HTTP (definition)."""
    body = assert_ok(post_json("/v1/power", {"alpha": 0.01, "n_per_group": 10,
                                             "design": with_design(RANDOM, variance_ratio=0)}))
    assert body["power"] == 0.01


def test_random_effects_detectable_in_both_units(post_json, assert_ok):
    """Detectable effect is reported as θ and as the ICC θ/(1 + θ) (closed form)."""
    body = assert_ok(post_json("/v1/detectable-effect",
                               {"n_per_group": 10, "target_power": 0.8, "design": LAYOUTS["random_effects_anova"]}))
    assert body["variance_ratio"] == pytest.approx(body["noncentrality"], rel=1e-15)
    assert body["icc"] == pytest.approx(body["variance_ratio"] / (1 + body["variance_ratio"]), rel=1e-12)


def test_ancova_warns_and_points_to_simulation(post_json, assert_ok):
    """ANCOVA responses say the formula is optimistic at small N and point to POST /v1/simulate."""
    body = assert_ok(post_json("/v1/power", {"n_per_group": 8, "design": ANCOVA}))
    assert any("optimistic" in w and "/v1/simulate" in w for w in body["warnings"])
    assert body["df_denominator"] == 24 - 3 - 1


def test_welch_is_labelled_an_approximation(post_json, assert_ok):
    """Welch responses name the approximation in the method id and in a warning."""
    body = assert_ok(post_json("/v1/power", {"n_per_group": 8, "design": WELCH}))
    assert "approximation" in body["method"]["id"]
    assert any("approximation" in w and "/v1/simulate" in w for w in body["warnings"])
    assert ADAPTERS["welch_anova"].approximation_tolerance == APPROXIMATION_ERROR


def test_repeated_measures_epsilon_refused_by_simulation(post_json, assert_problem):
    """POST /v1/simulate refuses ε < 1 for repeated measures, naming design.epsilon."""
    body = {"n_per_group": 10, "design": with_design(REPEATED, epsilon=0.8), "replicates": 200}
    assert_problem(post_json("/v1/simulate", body), 422, "design.epsilon")


HOSTILE = [
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(FACTORIAL, cell_means=[[1, 2, 3], [4, 5]])},
                 "design.cell_means", id="ragged-cell-means"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(FACTORIAL, cell_means=[[1, 2, 3]])},
                 "design.cell_means", id="one-row"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(FACTORIAL, cell_means=[[1.0] * 10] * 11)},
                 "design.cell_means", id="too-many-cells"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(FACTORIAL, cell_means=[[1, [2], 3]] * 2)},
                 "design.cell_means.0.1", id="nested-cell"),
    pytest.param("/v1/power", {"group_sizes": [3] * 8, "design": FACTORIAL}, "group_sizes", id="cells-count"),
    pytest.param("/v1/power", {"n_per_group": 1, "design": FACTORIAL}, "n_per_group", id="one-per-cell"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(FACTORIAL, effect="both")},
                 "design.effect", id="unknown-effect"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(FACTORIAL, levels_a=4)},
                 "design.levels_a", id="levels-contradict-cells"),
    pytest.param("/v1/detectable-effect", {"n_per_group": 4, "target_power": 0.8,
                                           "design": with_design(LAYOUTS["factorial_anova"], levels_b=DROP)},
                 "design.levels_b", id="levels-missing"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(RANDOM, variance_ratio=DROP, icc=1)},
                 "design.icc", id="icc-of-one"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(RANDOM, variance_ratio=DROP, icc=-0.1)},
                 "design.icc", id="icc-negative"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(RANDOM, icc=0.2)},
                 "design.icc", id="icc-and-variance-ratio"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(RANDOM, variance_ratio=1e6)},
                 "design.variance_ratio", id="variance-ratio-huge"),
    pytest.param("/v1/power", {"group_sizes": [4, 5, 4, 4, 4, 4], "design": RANDOM},
                 "group_sizes", id="random-unequal-sizes"),
    pytest.param("/v1/detectable-effect", {"n_per_group": 4, "target_power": 0.8, "design": RANDOM},
                 "design.variance_ratio", id="random-effect-in-detectable"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(ANCOVA, covariate_r2=1)},
                 "design.covariate_r2", id="r2-of-one"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(ANCOVA, covariate_r2=1.5)},
                 "design.covariate_r2", id="r2-above-one"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(ANCOVA, covariates=0)},
                 "design.covariates", id="no-covariates"),
    pytest.param("/v1/power", {"n_per_group": 4, "design": with_design(ANCOVA, covariates=2.5)},
                 "design.covariates", id="fractional-covariates"),
    pytest.param("/v1/power", {"group_sizes": [2, 1, 1], "design": with_design(ANCOVA, covariates=1)},
                 "group_sizes", id="ancova-no-error-df"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(REPEATED, correlation=-1 / 3)},
                 "design.correlation", id="correlation-at-lower-bound"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(REPEATED, correlation=1)},
                 "design.correlation", id="correlation-of-one"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(REPEATED, epsilon=0.3)},
                 "design.epsilon", id="epsilon-below-1-over-m-1"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(REPEATED, epsilon=1.5)},
                 "design.epsilon", id="epsilon-above-one"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(REPEATED, epsilon=0)},
                 "design.epsilon", id="epsilon-zero"),
    pytest.param("/v1/power", {"group_sizes": [10, 10], "design": REPEATED}, "group_sizes", id="rm-two-sizes"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(REPEATED, level_means=[1] * 21)},
                 "design.level_means", id="rm-too-many-levels"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(WELCH, group_sds=[6, 9])},
                 "design.group_sds", id="welch-sds-count"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(WELCH, group_sds=[6, 0, 12])},
                 "design.group_sds.1", id="welch-zero-sd"),
    pytest.param("/v1/power", {"group_sizes": [1, 10, 10], "design": WELCH}, "group_sizes", id="welch-group-of-one"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(WELCH, group_means=[0, 1e12, 0])},
                 "design.group_means", id="welch-effect-huge"),
    pytest.param("/v1/power", {"n_per_group": 10, "design": with_design(WELCH, group_sds=DROP)},
                 "design.group_sds", id="welch-sds-missing"),
]


@pytest.mark.parametrize(("path", "body", "field"), HOSTILE)
def test_hostile_inputs_are_named_422s(post_json, assert_problem, path, body, field):
    """Invalid values of the new fields give a 422 problem naming the field."""
    assert_problem(post_json(path, body), 422, field)


def test_sample_size_of_a_null_effect_is_a_clear_422(post_json, assert_problem):
    """A factorial interaction that is exactly zero has no sample size: 422 naming the design."""
    body = {"target_power": 0.8, "design": with_design(FACTORIAL, effect="interaction")}
    assert_problem(post_json("/v1/sample-size", body), 422, "design", detail_contains="zero")
