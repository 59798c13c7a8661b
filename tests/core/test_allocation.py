"""Allocation under costs, unequal variances, a fixed total or a budget: the published two-group
rule, and the integer search against brute force on small problems."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from samplewright.core import allocation as al
from samplewright.core import planning
from samplewright.core.designs.one_way import OneWayAnova
from samplewright.core.errors import InvalidParameter, NoSolution

MIN = 2


def one_way_power(means, sd=1.0, alpha=0.05):
    design = OneWayAnova.from_means(means, sd)
    return lambda rows: design.evaluate(rows, alpha).power


def z_test_power(delta, sds, alpha=0.05):
    """Two-sided z test of a difference of two means: power depends on σ₁²/n₁ + σ₂²/n₂ only."""
    s1, s2 = sds
    z = stats.norm.isf(alpha / 2)

    def power(rows):
        rows = np.asarray(rows, dtype=float)
        shift = delta / np.sqrt(s1**2 / rows[:, 0] + s2**2 / rows[:, 1])
        return stats.norm.sf(z - shift) + stats.norm.cdf(-z - shift)

    return power


def all_rows(k, hi):
    grids = np.meshgrid(*[np.arange(MIN, hi + 1, dtype=np.int64)] * k, indexing="ij")
    return np.stack([g.reshape(-1) for g in grids], axis=1)


def brute_budget(power, costs, budget):
    """Most power (then least cost) over every allocation within the budget."""
    costs = np.asarray(costs, dtype=float)
    hi = int((budget - MIN * (costs.sum() - costs.min())) // costs.min())
    rows = all_rows(len(costs), hi)
    rows = rows[rows @ costs <= budget * (1 + 1e-12)]
    p = power(rows)
    return rows[al._pick_max(p, rows @ costs)], float(p.max())


def brute_total(power, k, total):
    rows = all_rows(k, total - MIN * (k - 1))
    rows = rows[rows.sum(axis=1) == total]
    p = power(rows)
    return float(p.max())


def brute_cheapest(power, costs, target, cost_bound):
    """Least cost over every allocation reaching the target and costing at most ``cost_bound``."""
    costs = np.asarray(costs, dtype=float)
    hi = int((cost_bound - MIN * (costs.sum() - costs.min())) // costs.min())
    rows = all_rows(len(costs), hi)
    rows = rows[rows @ costs <= cost_bound * (1 + 1e-12)]
    p = power(rows)
    ok = p >= target
    return float((rows[ok] @ costs).min())


# -- the published rule ---------------------------------------------------------------------


@pytest.mark.parametrize(
    ("sds", "costs", "ratio"),
    [
        ((1, 1), (1, 4), 2.0),  # n1/n2 = √(c2/c1) = 2
        ((3, 1), (1, 1), 3.0),  # n1/n2 = σ1/σ2
        ((2, 1), (1, 4), 4.0),  # (σ1/σ2)·√(c2/c1) = 2·2
        ((1, 2), (9, 1), 1 / 6),  # (1/2)·√(1/9)
    ],
)
def test_two_group_rule_closed_form(sds, costs, ratio):
    """optimum_ratios gives n1/n2 = (σ1/σ2)√(c2/c1) (Cochran 1977, Sampling Techniques 3rd ed. §5.5, from memory)."""
    r = al.optimum_ratios(sds, costs)
    assert r[0] / r[1] == pytest.approx(ratio, rel=1e-12)
    assert r.min() == 1.0


@pytest.mark.parametrize(("sds", "costs"), [((1, 1), (1, 4)), ((2, 1), (1, 1)), ((2, 1), (1, 4)), ((1, 1.5), (3, 1))])
def test_integer_optimum_reproduces_the_rule_for_a_z_test(sds, costs):
    """Least cost at 90 % power: the integer optimum's n1/n2 is the rule's ratio to within rounding (Cochran 1977 §5.5, from memory)."""
    power = z_test_power(delta=0.5, sds=sds)
    result = al.cheapest(power, costs=costs, target_power=0.9)
    n1, n2 = result.best.group_sizes
    rule = al.optimum_ratios(sds, costs)
    # Rounding each size by at most one unit moves the ratio by about 1/n2 + n1/n2².
    assert n1 / n2 == pytest.approx(rule[0] / rule[1], abs=2 * (1 / n2 + n1 / n2**2))
    assert result.best.power >= 0.9


def test_integer_optimum_close_to_the_rule_for_the_pooled_f_test():
    """Two groups, σ equal, costs 1:4, d = 0.5: n1/n2 ≈ 2 (rule, Cochran 1977 §5.5, from memory), within 3 % (df loss)."""
    power = one_way_power([0.0, 0.5])
    result = al.cheapest(power, costs=[1, 4], target_power=0.8)
    n1, n2 = result.best.group_sizes
    assert n1 / n2 == pytest.approx(2.0, rel=0.03)
    # The balanced design is Cohen's 64 per group (Cohen 1988, Table 2.4.1, d = .5, power .80; from memory).
    assert result.balanced.group_sizes == (64, 64)
    assert result.best.cost < result.balanced.cost


def test_integer_optimum_follows_the_rule_for_unequal_budget_z_test():
    """Most power for a budget with σ = (2, 1), equal costs: n1/n2 ≈ 2 (Cochran 1977 §5.5, from memory)."""
    power = z_test_power(delta=0.4, sds=(2, 1))
    result = al.most_power(power, costs=[1, 1], budget=300, exhaustive_limit=0)
    n1, n2 = result.best.group_sizes
    assert n1 + n2 == 300
    assert (n1, n2) in {(200, 100), (199, 101), (201, 99)}  # the rule's 200:100 up to one unit of rounding


# -- the search against brute force --------------------------------------------------------


def _problems(seed, count, k_choices):
    rng = np.random.default_rng(seed)
    for _ in range(count):
        k = int(rng.choice(k_choices))
        means = rng.normal(0.0, 1.0, k)
        costs = np.round(rng.uniform(1.0, 5.0, k), 1)
        yield k, means, costs, rng


@pytest.mark.parametrize("polish_rows", [0, al.POLISH_ROWS], ids=["local-search-only", "with-box"])
def test_budget_search_never_worse_than_brute_force(polish_rows):
    """Most power within a budget: the local search (exhaustive path off) matches brute force on small cases (brute force)."""
    worse = []
    for k, means, costs, rng in _problems(11, 14, [2, 3]):
        budget = float(rng.uniform(2 * costs.sum() + 2, (25 if k == 2 else 10) * costs.sum()))
        power = one_way_power(means)
        found = al.most_power(power, costs=costs, budget=budget, exhaustive_limit=0, polish_rows=polish_rows)
        _, best = brute_budget(power, costs, budget)
        assert found.best.cost <= budget * (1 + 1e-12)
        assert min(found.best.group_sizes) >= MIN
        if found.best.power < best - 1e-12:
            worse.append((k, means.round(3).tolist(), costs.tolist(), budget, found.best, best))
    if polish_rows:
        assert not worse, worse
    else:
        # Without the box, exchange moves alone may stop a hair short; never by more than 0.5 % power.
        assert all(b - f.power < 0.005 for *_, f, b in worse), worse


def test_total_search_never_worse_than_brute_force():
    """Most power at a fixed total: the search equals brute force on small cases (brute force)."""
    for k, means, _costs, rng in _problems(12, 12, [2, 3, 4]):
        total = int(rng.integers(2 * k + 1, {2: 80, 3: 40, 4: 24}[k]))
        power = one_way_power(means)
        found = al.most_power(power, costs=np.ones(k), n_total=total, exhaustive_limit=0)
        assert found.best.n_total == total
        assert found.best.power >= brute_total(power, k, total) - 1e-12


def test_cheapest_search_never_worse_than_brute_force():
    """Least cost reaching the target: the search equals brute force over every cheaper allocation (brute force)."""
    for k, means, costs, rng in _problems(13, 12, [2, 3]):
        target = float(rng.uniform(0.5, 0.9))
        spread = float(np.ptp(means))
        if spread < (0.8 if k == 2 else 1.2):
            means = means * ((0.8 if k == 2 else 1.2) / max(spread, 1e-9))  # keep the sizes small enough to enumerate
        power = one_way_power(means)
        found = al.cheapest(power, costs=costs, target_power=target, exhaustive_limit=0)
        assert found.best.power >= target
        bound = found.balanced.cost
        assert found.best.cost <= bound * (1 + 1e-12)
        assert found.best.cost <= brute_cheapest(power, costs, target, bound) * (1 + 1e-12)


def test_four_groups_never_worse_than_brute_force():
    """Four groups, where the final box does not cover everything: still the brute-force optimum (brute force)."""
    means = [0.0, 0.2, 0.9, 1.3]
    costs = [1.0, 2.5, 1.5, 3.0]
    power = one_way_power(means)
    for budget in (30.0, 37.0, 44.5):
        found = al.most_power(power, costs=costs, budget=budget, exhaustive_limit=0, polish_rows=2_000)
        _, best = brute_budget(power, costs, budget)
        assert found.best.power >= best - 1e-12


def test_exhaustive_path_is_exact_and_says_so():
    """A small problem is enumerated: the answer equals brute force and `exhaustive` is true (brute force)."""
    power = one_way_power([0.0, 0.4, 1.1])
    found = al.most_power(power, costs=[1, 2, 1], budget=40)
    assert found.exhaustive
    _, best = brute_budget(power, [1, 2, 1], 40)
    assert found.best.power == pytest.approx(best, abs=1e-15)


# -- comparisons and bounds -------------------------------------------------------------------


def test_balanced_comparison_equals_the_sample_size_answer():
    """The balanced design beside the cheapest split is /v1/sample-size's equal design (planning engine)."""
    means, sd = [61.0, 64.0, 66.0], 5.0
    design = OneWayAnova.from_means(means, sd)
    found = al.cheapest(lambda r: design.evaluate(r, 0.05).power, costs=[1, 1, 3], target_power=0.9)
    reference = planning.sample_size(design, alpha=0.05, target_power=0.9)
    assert found.balanced.group_sizes == reference.answer.group_sizes
    assert found.balanced.power == reference.answer.power
    assert found.best.cost <= found.balanced.cost


def test_budget_never_worse_than_balanced():
    """Most power for a budget is at least the balanced design's (common practice, no source)."""
    power = one_way_power([0.0, 0.3, 0.5])
    found = al.most_power(power, costs=[1, 3, 2], budget=600)
    assert found.best.power >= found.balanced.power
    assert found.best.cost <= 600 * (1 + 1e-12)


def test_fixed_total_balanced_split_is_as_even_as_possible():
    """A total of 10 over three groups compares with (4, 3, 3) (common practice, no source)."""
    found = al.most_power(one_way_power([0.0, 1.0, 2.0]), costs=[1, 1, 1], n_total=10)
    assert found.balanced.group_sizes == (4, 3, 3)
    assert found.best.n_total == 10


def test_budget_below_the_minimum_is_refused():
    """A budget that cannot buy two units per group is an InvalidParameter naming the budget."""
    with pytest.raises(InvalidParameter, match="budget"):
        al.most_power(one_way_power([0, 1]), costs=[5, 5], budget=19)


def test_unreachable_target_is_no_solution():
    """A tiny effect under a small cap has no answer: NoSolution, not a search without end."""
    with pytest.raises(NoSolution):
        al.cheapest(one_way_power([0.0, 1e-4]), costs=[1, 1], target_power=0.9, cap=1000)


def test_large_problem_stays_bounded():
    """A large cheapest-design problem (thousands per group, 6 groups) finishes within the evaluation cap."""
    power = one_way_power([0.0, 0.02, 0.04, 0.05, 0.07, 0.1])
    found = al.cheapest(power, costs=[1, 2, 3, 1, 2, 3], target_power=0.8)
    assert found.evaluations <= al.MAX_EVALUATIONS
    assert found.best.power >= 0.8
    assert found.best.cost <= found.balanced.cost
