"""Core F-family designs: formulas, identities, statistics and seeded simulations.

Factorial, random effects, ANCOVA, repeated measures and Welch. Outside values come from
statsmodels (a general statistics library: its OLS/ANOVA tables and its Welch test), from
closed forms, and from seeded simulations of the real tests (tolerance 4 Monte Carlo SE,
plus the documented approximation error where the method is an approximation).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from statsmodels.stats.anova import AnovaRM, anova_lm
from statsmodels.stats.oneway import anova_oneway, effectsize_oneway

from samplewright.core import planning
from samplewright.core import simulate as mc
from samplewright.core.designs.ancova import OneWayAncova, optimism_bound
from samplewright.core.designs.factorial import FactorialAnova, effects_of
from samplewright.core.designs.one_way import OneWayAnova
from samplewright.core.designs.random_effects import RandomEffectsAnova, random_effects_power
from samplewright.core.designs.repeated_measures import RepeatedMeasuresAnova
from samplewright.core.designs.welch import APPROXIMATION_ERROR, WelchAnova
from samplewright.core.distributions import f_test_power
from samplewright.core.errors import InvalidParameter
from samplewright.core.simulate.f_family import (
    ancova_f_statistic,
    factorial_f_statistic,
    repeated_measures_f_statistic,
    welch_test,
)

#: Invented 2 × 3 cell means with all three effects present.
CELLS = np.array([[10.0, 12.0, 11.0], [11.0, 10.0, 14.0]])
#: Invented unequal cell sizes, row-major.
UNEQUAL = np.array([5, 8, 6, 9, 7, 5])


def agree(design, sizes, *, replicates: int, seed: int, alpha: float = 0.05, extra: float = 0.0):
    """Simulated and analytic power at ``sizes``; asserts |diff| ≤ extra + 4 SE(analytic)."""
    analytic = planning.power(design, sizes=np.asarray(sizes), alpha=alpha).power
    sim = mc.simulate(design, sizes=np.asarray(sizes), alpha=alpha, replicates=replicates, seed=seed)
    se = math.sqrt(analytic * (1 - analytic) / replicates)
    assert abs(sim.power - analytic) <= extra + 4 * se, (sim.power, analytic, se)
    return analytic, sim


def _long_frame(cell_values: np.ndarray, sizes: np.ndarray, a: int, b: int) -> pd.DataFrame:
    rows, cols = np.divmod(np.repeat(np.arange(a * b), sizes), b)
    return pd.DataFrame({"y": cell_values, "A": rows, "B": cols})


# -- factorial -----------------------------------------------------------------------------


@pytest.mark.parametrize("effect", ["factor_a", "factor_b", "interaction"])
def test_factorial_balanced_noncentrality_is_the_textbook_formula(effect):
    """Balanced λ equals n b Σα², n a Σβ², n ΣΣ(αβ)² over σ² (Montgomery 8th ed. §5.3, closed form)."""
    n, sd = 7, 1.7
    design = FactorialAnova.from_cells(CELLS, sd, effect)
    test = design.test_at(np.full((1, 6), n))
    eff = effects_of(CELLS)
    expected = {
        "factor_a": (n * 3 * np.sum(eff["factor_a"] ** 2) / sd**2, 1),
        "factor_b": (n * 2 * np.sum(eff["factor_b"] ** 2) / sd**2, 2),
        "interaction": (n * np.sum(eff["interaction"] ** 2) / sd**2, 2),
    }[effect]
    assert test.noncentrality[0] == pytest.approx(expected[0], rel=1e-12)  # closed form
    assert test.df1[0] == expected[1] and test.df2[0] == 6 * (n - 1)  # closed form


@pytest.mark.parametrize(("effect", "term"), [("factor_a", "C(A, Sum)"), ("factor_b", "C(B, Sum)"),
                                              ("interaction", "C(A, Sum):C(B, Sum)")])
def test_factorial_unequal_cells_match_statsmodels_type3(effect, term):
    """Unequal-cell λσ² equals statsmodels' Type III SS on data equal to the cell means (statsmodels)."""
    sd = 2.0
    design = FactorialAnova.from_cells(CELLS, sd, effect)
    lam = design.test_at(UNEQUAL.reshape(1, -1)).noncentrality[0]
    frame = _long_frame(np.repeat(CELLS.reshape(-1), UNEQUAL), UNEQUAL, 2, 3)
    # Expected data have zero residual; statsmodels needs a residual, so add one tiny
    # orthogonal perturbation to a single cell's units (sums to zero within the cell).
    frame.loc[frame.index[:2], "y"] += np.array([1e-6, -1e-6])
    table = anova_lm(smf.ols("y ~ C(A, Sum) * C(B, Sum)", frame).fit(), typ=3)
    assert lam * sd**2 == pytest.approx(table.loc[term, "sum_sq"], rel=1e-8)  # statsmodels, Type III


def test_factorial_statistic_matches_statsmodels_on_random_data():
    """The simulator's F for each effect equals statsmodels' Type III F on one random data set (statsmodels)."""
    rng = np.random.default_rng(11)
    y = np.repeat(CELLS.reshape(-1), UNEQUAL) + rng.standard_normal(UNEQUAL.sum())
    table = anova_lm(smf.ols("y ~ C(A, Sum) * C(B, Sum)", _long_frame(y, UNEQUAL, 2, 3)).fit(), typ=3)
    for effect, term in (("factor_a", "C(A, Sum)"), ("factor_b", "C(B, Sum)"), ("interaction", "C(A, Sum):C(B, Sum)")):
        contrast = FactorialAnova.from_cells(CELLS, 1.0, effect).contrast
        ours = factorial_f_statistic(y.reshape(1, -1), UNEQUAL, contrast)[0]
        assert ours == pytest.approx(table.loc[term, "F"], rel=1e-9)  # statsmodels, Type III


def test_factorial_null_effect_gives_alpha_exactly():
    """Cell means with no interaction give λ = 0 and power α for the interaction (definition)."""
    additive = np.add.outer([1.0, 4.0, 2.0], [0.0, 3.0])
    design = FactorialAnova.from_cells(additive, 1.0, "interaction")
    result = planning.power(design, sizes=np.full(6, 5), alpha=0.05)
    assert result.noncentrality == 0.0 and result.power == 0.05  # definition of the level


@pytest.mark.parametrize(("effect", "sizes", "sd", "seed"), [
    ("factor_a", np.full(6, 6), 1.0, 1), ("interaction", np.full(6, 8), 3.0, 2), ("factor_b", UNEQUAL, 3.0, 3),
])
def test_factorial_simulation_agrees(effect, sizes, sd, seed):
    """Seeded simulation of the two-way F agrees with the analytic power (seeded simulation, 4 MC SE)."""
    agree(FactorialAnova.from_cells(CELLS, sd, effect), sizes, replicates=40_000, seed=seed)


# -- random effects ------------------------------------------------------------------------


@pytest.mark.parametrize(("k", "n", "alpha"), [(2, 2, 0.05), (5, 8, 0.01), (30, 200, 1e-6)])
def test_random_effects_theta_zero_is_alpha(k, n, alpha):
    """θ = 0 gives power exactly α, in evaluate and in the detectable solve's power (definition)."""
    design = RandomEffectsAnova.from_theta(k, 0.0)
    assert design.evaluate(np.full((1, k), n), alpha).power[0] == alpha  # definition
    assert design.power_at_noncentrality(np.array([0.0]), np.full(k, n), alpha)[0] == alpha  # definition


def test_random_effects_power_is_the_scaled_central_f():
    """Power equals P(F > F_crit/(1 + nθ)) with scipy's central F (scipy.stats.f, independent call)."""
    from scipy import stats

    k, n, theta, alpha = 6, 10, 0.25, 0.05
    crit = stats.f.isf(alpha, k - 1, k * (n - 1))
    expected = stats.f.sf(crit / (1 + n * theta), k - 1, k * (n - 1))  # scipy
    power, _ = random_effects_power(alpha, k, n, theta)
    assert power == pytest.approx(expected, rel=1e-9)


def test_random_effects_power_rises_with_theta_and_groups():
    """Power increases with θ, and with k at fixed n (monotonicity; common practice, no source)."""
    thetas = np.linspace(0, 2, 41)
    power, _ = random_effects_power(0.05, 4, 6, thetas)
    assert np.all(np.diff(power) > 0)
    table = RandomEffectsAnova.from_theta(4, 0.3).power_table(6, 0.05)
    assert [row["groups"] for row in table] == [4, 5, 6, 8]
    assert all(b["power"] > a["power"] for a, b in zip(table, table[1:], strict=False))
    assert table[-1]["same_total_with_original_groups"] == {
        "groups": 4, "n_per_group": 12, "n_total": 48,
        "power": pytest.approx(float(random_effects_power(0.05, 4, 12, 0.3)[0]), rel=1e-12),
    }


def test_random_effects_refuses_unequal_sizes():
    """Unequal group sizes are refused, naming group_sizes (the power is exact only when balanced)."""
    with pytest.raises(InvalidParameter) as info:
        RandomEffectsAnova.from_theta(3, 0.2).evaluate(np.array([[4, 5, 4]]), 0.05)
    assert info.value.field == "group_sizes"


@pytest.mark.parametrize(("k", "n", "theta", "seed"), [(6, 10, 0.25, 4), (4, 5, 0.0, 5), (3, 20, 0.08, 6)])
def test_random_effects_simulation_agrees(k, n, theta, seed):
    """Seeded simulation with N(0, θσ²) group effects agrees with the exact power (seeded simulation, 4 MC SE)."""
    agree(RandomEffectsAnova.from_theta(k, theta), np.full(k, n), replicates=40_000, seed=seed)


# -- ANCOVA --------------------------------------------------------------------------------


@pytest.mark.parametrize(("r2", "q"), [(0.0, 1), (0.4, 2), (0.9, 5)])
def test_ancova_is_the_one_way_layout_with_reduced_variance_and_df(r2, q):
    """λ = λ_one-way/(1 − R²) and df2 = N − k − q; power is the noncentral F at those (closed form)."""
    means, sd, sizes = [3.0, 4.0, 6.0], 2.5, np.array([[8, 10, 12]])
    one_way = OneWayAnova.from_means(means, sd, [8, 10, 12]).test_at(sizes)
    design = OneWayAncova.from_means(means, sd, r2, q, [8, 10, 12])
    test = design.test_at(sizes)
    assert test.noncentrality[0] == pytest.approx(one_way.noncentrality[0] / (1 - r2), rel=1e-12)
    assert test.df2[0] == one_way.df2[0] - q and test.df1[0] == one_way.df1[0]
    power = design.evaluate(sizes, 0.05).power[0]
    assert power == pytest.approx(float(f_test_power(0.05, 2, 30 - 3 - q, test.noncentrality[0])), rel=1e-12)


def test_ancova_smallest_unit_leaves_error_df():
    """The smallest group leaves N − k − q ≥ 1 and one less does not (definition)."""
    design = OneWayAncova.from_means([0.0, 1.0], 1.0, 0.5, 4)
    m = design.smallest_unit()
    assert 2 * m - 2 - 4 >= 1 and 2 * (m - 1) - 2 - 4 < 1


def test_ancova_statistic_matches_statsmodels():
    """The simulator's adjusted F equals statsmodels' nested-model F test on one data set (statsmodels)."""
    rng = np.random.default_rng(5)
    sizes = np.array([7, 9, 8])
    x = rng.standard_normal((sizes.sum(), 2))
    g = np.repeat(np.arange(3), sizes)
    y = 0.5 * g + x @ np.array([0.7, -0.4]) + rng.standard_normal(sizes.sum())
    frame = pd.DataFrame({"y": y, "g": g, "x1": x[:, 0], "x2": x[:, 1]})
    full = smf.ols("y ~ C(g) + x1 + x2", frame).fit()
    reduced = smf.ols("y ~ x1 + x2", frame).fit()
    expected = full.compare_f_test(reduced)[0]  # statsmodels
    ours = ancova_f_statistic(y.reshape(1, -1), x.reshape(1, -1, 2), sizes)[0]
    assert ours == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(("q", "n", "seed"), [(1, 30, 7), (2, 20, 8)])
def test_ancova_simulation_within_documented_optimism(q, n, seed):
    """Simulation with random covariates is below the fixed-covariate formula by at most the documented
    0.5·q/(N − k − q) (seeded simulation, 4 MC SE, plus the documented error)."""
    design = OneWayAncova.from_means([0.0, 0.5, 1.0], 1.5, 0.5, q)
    sizes = np.full(3, n)
    bound = optimism_bound(q, 3 * n - 3 - q)
    analytic, sim = agree(design, sizes, replicates=30_000, seed=seed, extra=bound)
    se = math.sqrt(analytic * (1 - analytic) / 30_000)
    assert sim.power <= analytic + 4 * se  # the formula is optimistic, never pessimistic beyond noise


# -- repeated measures ---------------------------------------------------------------------


def test_repeated_measures_at_epsilon_one_is_the_formula():
    """ε = 1: df (m − 1, (n − 1)(m − 1)) and λ = nΣ(μ_j − μ̄)²/(σ²(1 − ρ)) (Maxwell & Delaney 2nd ed. ch. 11, closed form)."""
    means, sd, rho, n = np.array([10.0, 11.0, 11.5, 12.0]), 4.0, 0.6, 15
    test = RepeatedMeasuresAnova.from_means(means, sd, rho).test_at(np.array([[n]]))
    assert test.df1[0] == 3 and test.df2[0] == 14 * 3
    assert test.noncentrality[0] == pytest.approx(n * np.sum((means - means.mean()) ** 2) / (sd**2 * (1 - rho)), rel=1e-12)


def test_repeated_measures_epsilon_scales_df_and_lambda():
    """ε multiplies df1, df2 and λ alike (Muller & Barton 1989, closed form)."""
    means = [1.0, 2.0, 4.0]
    full = RepeatedMeasuresAnova.from_means(means, 2.0, 0.3).test_at(np.array([[12]]))
    part = RepeatedMeasuresAnova.from_means(means, 2.0, 0.3, epsilon=0.7).test_at(np.array([[12]]))
    for a, b in ((full.df1, part.df1), (full.df2, part.df2), (full.noncentrality, part.noncentrality)):
        assert b[0] == pytest.approx(0.7 * a[0], rel=1e-12)


@pytest.mark.parametrize(("field", "kwargs"), [
    ("design.correlation", {"correlation": -0.5}), ("design.correlation", {"correlation": 1.0}),
    ("design.epsilon", {"correlation": 0.2, "epsilon": 0.4}), ("design.epsilon", {"correlation": 0.2, "epsilon": 1.01}),
])
def test_repeated_measures_refuses_out_of_range(field, kwargs):
    """Correlation outside (−1/(m − 1), 1) and ε outside [1/(m − 1), 1] are refused by name (definition)."""
    with pytest.raises(InvalidParameter) as info:
        RepeatedMeasuresAnova.from_means([1.0, 2.0, 3.0], 1.0, **kwargs)
    assert info.value.field == field


def test_repeated_measures_statistic_matches_statsmodels():
    """The simulator's RM F equals statsmodels' AnovaRM F on one data set (statsmodels)."""
    rng = np.random.default_rng(3)
    y = rng.standard_normal((9, 4)) + np.array([0.0, 0.3, 0.5, 0.2]) + rng.standard_normal((9, 1))
    frame = pd.DataFrame({"y": y.reshape(-1), "subject": np.repeat(np.arange(9), 4), "level": np.tile(np.arange(4), 9)})
    expected = AnovaRM(frame, "y", "subject", within=["level"]).fit().anova_table.loc["level", "F Value"]
    assert repeated_measures_f_statistic(y.reshape(1, 9, 4))[0] == pytest.approx(expected, rel=1e-9)  # statsmodels


@pytest.mark.parametrize(("means", "rho", "n", "seed"), [
    ([10.0, 11.0, 11.5, 12.0], 0.6, 15, 9), ([10.0, 11.0, 12.5], -0.3, 20, 10), ([0.0, 0.4], 0.9, 6, 11),
])
def test_repeated_measures_simulation_agrees(means, rho, n, seed):
    """Compound-symmetric data and the univariate RM F agree with the analytic power (seeded simulation, 4 MC SE)."""
    agree(RepeatedMeasuresAnova.from_means(means, 4.0 if len(means) > 2 else 1.0, rho), [n], replicates=40_000, seed=seed)


def test_repeated_measures_simulation_refuses_epsilon_below_one():
    """The simulation of compound-symmetric data refuses ε < 1, naming design.epsilon (documented limit)."""
    design = RepeatedMeasuresAnova.from_means([1.0, 2.0, 3.0], 1.0, 0.5, epsilon=0.8)
    with pytest.raises(InvalidParameter) as info:
        mc.simulate(design, sizes=np.array([10]), alpha=0.05, replicates=200)
    assert info.value.field == "design.epsilon"


# -- Welch ---------------------------------------------------------------------------------


def test_welch_noncentrality_and_df_are_the_formula():
    """λ = Σw(μ − μ̃)² matches statsmodels' Welch effect size × N, and ν = (k² − 1)/(3A) (statsmodels; closed form)."""
    means, sds, sizes = np.array([0.0, 0.8, 1.2]), np.array([1.0, 2.0, 3.0]), np.array([10, 20, 30])
    test = WelchAnova.from_means(means, sds).test_at(sizes.reshape(1, -1))
    f2 = effectsize_oneway(means, sds**2, sizes, use_var="unequal")  # statsmodels: λ/N
    assert test.noncentrality[0] == pytest.approx(f2 * sizes.sum(), rel=1e-12)
    w = sizes / sds**2
    a = np.sum((1 - w / w.sum()) ** 2 / (sizes - 1))
    assert test.df2[0] == pytest.approx(8 / (3 * a), rel=1e-12)


def test_welch_statistic_matches_statsmodels():
    """The simulator's Welch F and df equal statsmodels' anova_oneway(use_var='unequal') (statsmodels)."""
    rng = np.random.default_rng(8)
    sizes = np.array([6, 11, 9, 14])
    y = rng.standard_normal(sizes.sum()) * np.repeat([1.0, 2.0, 0.5, 3.0], sizes) + np.repeat([0, 1, 0, 2], sizes)
    groups = np.split(y, np.cumsum(sizes)[:-1])
    expected = anova_oneway(groups, use_var="unequal", welch_correction=True)  # statsmodels
    f, nu = welch_test(y.reshape(1, -1), sizes)
    assert f[0] == pytest.approx(expected.statistic, rel=1e-9)
    assert nu[0] == pytest.approx(expected.df_denom, rel=1e-9)


def test_welch_refuses_groups_of_one():
    """A group of one unit is refused by name: Welch needs a variance estimate per group (definition)."""
    with pytest.raises(InvalidParameter) as info:
        WelchAnova.from_means([0.0, 1.0], [1.0, 2.0]).evaluate(np.array([[1, 10]]), 0.05)
    assert info.value.field == "group_sizes"


@pytest.mark.parametrize(("sds", "alloc", "n", "seed"), [
    ([1.0, 2.0, 3.0], [1, 2, 3], 10, 12), ([1.0, 2.0, 3.0], [3, 2, 1], 10, 13), ([1.0, 1.0, 2.0, 4.0], [1, 1, 1, 1], 12, 14),
])
def test_welch_simulation_within_documented_error(sds, alloc, n, seed):
    """The real Welch test's power is within the documented 0.01 of the approximation for groups ≥ 10
    (seeded simulation, 4 MC SE, plus the documented approximation error)."""
    k = len(sds)
    design = WelchAnova.from_means(np.linspace(0.0, 1.5, k), sds, alloc)
    agree(design, planning.sizes_for(design, n), replicates=40_000, seed=seed, extra=APPROXIMATION_ERROR)
