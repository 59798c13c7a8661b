"""The lockstep searches of samplewright.core.solve on simple monotone functions.

Every expected answer below is exact arithmetic on the toy function (no outside source
needed); the point is that the searches find it, flag what they cannot find, and stop
within their stated number of evaluations.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from samplewright.core import solve
from samplewright.core.solve import (
    MAX_NONCENTRALITY,
    noncentrality_for_power,
    smallest_integer_reaching,
)


class Counting:
    """Wrap a function and count its (vectorised) calls."""

    def __init__(self, fn):
        self.fn = fn
        self.calls = 0
        self.args = []

    def __call__(self, *args):
        self.calls += 1
        self.args.append(args)
        return self.fn(*args)


def _integer_budget(cap: int) -> int:
    """Calls smallest_integer_reaching may make: two loops of ceil(log2 cap) + 2."""
    return 2 * (math.ceil(math.log2(max(cap, 2))) + 2)


# -- smallest_integer_reaching --------------------------------------------------------------


def test_smallest_integer_linear_exact():
    """For power(m) = m/100 and target 0.5 the answer is exactly 50, found."""
    fn = Counting(lambda m: m / 100.0)
    m, found = smallest_integer_reaching(fn, target=np.array([0.5]), lower=np.array([1]), cap=1000)
    assert m.tolist() == [50]  # exact: 50/100 = 0.5 ≥ 0.5 > 49/100
    assert found.tolist() == [True]
    assert fn.calls <= _integer_budget(1000)


def test_smallest_integer_many_problems_in_lockstep():
    """Several targets and lower bounds at once each get their own exact smallest integer."""
    targets = np.array([0.013, 0.5, 0.999, 0.25, 0.0])
    lower = np.array([1, 3, 7, 40, 5])
    fn = Counting(lambda m: m / 1000.0)
    m, found = smallest_integer_reaching(fn, target=targets, lower=lower, cap=10_000)
    # exact: ceil(1000 · target), but never below the lower bound
    assert m.tolist() == [13, 500, 999, 250, 5]
    assert found.all()
    assert fn.calls <= _integer_budget(10_000)


def test_smallest_integer_step_function_with_plateaus():
    """A non-decreasing step function: the answer is the first integer of the reaching step."""
    fn = Counting(lambda m: np.floor(m / 10) / 10)  # 0 for 0..9, 0.1 for 10..19, ...
    m, found = smallest_integer_reaching(fn, target=np.array([0.3, 0.05]), lower=np.array([2, 2]), cap=500)
    assert m.tolist() == [30, 10]  # exact: first m with floor(m/10)/10 ≥ target
    assert found.all()


def test_smallest_integer_lower_already_reaches():
    """When the lower bound already reaches the target, the answer is the lower bound."""
    m, found = smallest_integer_reaching(
        lambda m: np.ones(m.shape), target=np.array([0.8]), lower=np.array([4]), cap=100
    )
    assert m.tolist() == [4] and found.tolist() == [True]  # exact


def test_smallest_integer_reached_only_at_cap():
    """An answer equal to the cap is found (and flagged found)."""
    m, found = smallest_integer_reaching(
        lambda m: (m >= 777).astype(float), target=np.array([1.0]), lower=np.array([1]), cap=777
    )
    assert m.tolist() == [777] and found.tolist() == [True]  # exact


def test_smallest_integer_unreachable_is_flagged():
    """A target no integer up to the cap reaches: found is False and m is the cap."""
    fn = Counting(lambda m: 0.5 * m / (m + 1.0))  # below 0.5 for every m
    m, found = smallest_integer_reaching(
        fn, target=np.array([0.6, 0.2]), lower=np.array([1, 1]), cap=1_000_000
    )
    assert found.tolist() == [False, True]
    assert m[0] == 1_000_000  # documented: m is the cap when not found
    assert m[1] == 1  # exact: 0.5·1/2 = 0.25 ≥ 0.2
    assert fn.calls <= _integer_budget(1_000_000)


def test_smallest_integer_probes_stay_in_bounds_and_are_integers():
    """power_at only ever sees integers within [lower, cap]."""
    fn = Counting(lambda m: m / 5000.0)
    smallest_integer_reaching(fn, target=np.array([0.7, 0.999]), lower=np.array([3, 17]), cap=4000)
    for (probe,) in fn.args:
        assert np.issubdtype(probe.dtype, np.integer)
        assert probe.min() >= 3 and probe.max() <= 4000


# -- noncentrality_for_power -------------------------------------------------------------


def test_noncentrality_exponential_exact():
    """For power(λ) = 1 − e^(−λ) the solve returns −log(1 − target) to 1e-12 relative."""
    # Targets stop at 0.9999: nearer 1 the toy function is so flat that rounding in its
    # value (1e-16) moves the root by more than 1e-12 relative (condition number 1/(1 − p)).
    targets = np.array([0.05, 0.5, 0.8, 0.99, 0.9999])
    fn = Counting(lambda lam, mask: -np.expm1(-lam))
    lam, found = noncentrality_for_power(fn, target=targets, start=np.ones(5))
    expected = -np.log1p(-targets)  # exact inverse of the toy function
    np.testing.assert_allclose(lam, expected, rtol=1e-12, atol=0)
    assert found.all()
    # bracket ≤ log2(MAX/1e-6) + 2 doubling calls, one call at the lower end, ≤ 200 refinements
    assert fn.calls <= math.ceil(math.log2(MAX_NONCENTRALITY / 1e-6)) + 2 + 1 + 200


def test_noncentrality_result_is_upper_end_of_bracket():
    """The returned λ always has power ≥ target (the solve keeps the reaching end)."""
    targets = np.array([0.1, 0.42, 0.9])

    def power(lam, mask):
        return lam / (1.0 + lam)

    lam, found = noncentrality_for_power(power, target=targets, start=np.array([0.5, 3.0, 100.0]))
    assert found.all()
    assert np.all(power(lam, None) >= targets)
    np.testing.assert_allclose(lam, targets / (1 - targets), rtol=1e-12, atol=0)  # exact inverse


def test_noncentrality_huge_root_found():
    """A root near 1e8 (many doublings from the start) is still found to 1e-12 relative."""
    lam, found = noncentrality_for_power(
        lambda lam, mask: lam / (lam + 1e8), target=np.array([0.5]), start=np.array([1.0])
    )
    assert found.tolist() == [True]
    assert lam[0] == pytest.approx(1e8, rel=1e-12)  # exact: 1e8/(1e8 + 1e8) = 0.5


def test_noncentrality_unreachable_is_flagged():
    """A target above the function's supremum: found is False and λ is MAX_NONCENTRALITY."""
    fn = Counting(lambda lam, mask: 0.5 * -np.expm1(-lam))  # never reaches 0.5
    lam, found = noncentrality_for_power(fn, target=np.array([0.7, 0.25]), start=np.array([1.0, 1.0]))
    assert found.tolist() == [False, True]
    assert lam[0] == MAX_NONCENTRALITY  # documented value when not found
    assert lam[1] == pytest.approx(math.log(2), rel=1e-12)  # exact: 0.5(1 − e^−λ) = 0.25
    assert fn.calls <= math.ceil(math.log2(MAX_NONCENTRALITY / 1e-6)) + 2 + 1 + 200


def test_noncentrality_ignores_masked_out_entries():
    """Entries outside ``mask`` may return any finite value without changing the answers."""

    def power(lam, mask):
        value = -np.expm1(-lam)
        return np.where(mask, value, -7.0)  # garbage where not asked

    targets = np.array([0.3, 0.6, 0.95])
    lam, found = noncentrality_for_power(power, target=targets, start=np.array([1.0, 2.0, 0.1]))
    assert found.all()
    np.testing.assert_allclose(lam, -np.log1p(-targets), rtol=1e-12, atol=0)  # exact inverse


def test_noncentrality_respects_iteration_ceiling():
    """With max_iterations = 3 the solve stops after at most bracket + 1 + 3 calls, still bracketing."""
    fn = Counting(lambda lam, mask: -np.expm1(-lam))
    lam, found = noncentrality_for_power(fn, target=np.array([0.8]), start=np.array([1.0]), max_iterations=3)
    assert found.tolist() == [True]
    assert fn.calls <= math.ceil(math.log2(MAX_NONCENTRALITY / 1e-6)) + 2 + 1 + 3
    assert -np.expm1(-lam[0]) >= 0.8  # still the reaching end of the bracket


def test_max_noncentrality_is_finite_bound():
    """The bracket ceiling is a finite number (every loop is bounded)."""
    assert np.isfinite(solve.MAX_NONCENTRALITY) and solve.MAX_NONCENTRALITY > 0


def _wiggly(rng: np.random.Generator, cap: int):
    """A power table over 0..cap+1 rising with noise, so it is not monotone everywhere."""
    table = np.sort(rng.uniform(0, 1, cap + 2))
    flips = rng.integers(0, cap + 2, size=max(1, cap // 4))
    table[flips] = rng.uniform(0, 1, flips.size)  # local dips and jumps
    return table


def test_one_problem_twin_probes_what_the_array_form_probes():
    """smallest_integer_reaching_one probes the same sizes in the same order as the array form, monotone or not."""
    rng = np.random.default_rng(41)
    for _ in range(400):
        cap = int(rng.choice([1, 2, 3, 7, 50, 1000, 10**6]))
        lower = int(rng.integers(1, cap + 1))
        table = _wiggly(rng, min(cap, 4000)) if rng.random() < 0.5 else None
        target = float(rng.uniform(0.05, 1.05))
        start = None if rng.random() < 0.2 else int(rng.integers(-5, cap + 10))

        def power(m, table=table, cap=cap):
            if table is None:
                return m / cap  # monotone
            return table[m % table.size]

        array_probes, one_probes = [], []

        def power_rows(probe, seen=array_probes):
            seen.append(int(probe[0]))
            return np.array([power(int(probe[0]))])

        def power_one(m, seen=one_probes):
            seen.append(m)
            return power(m)

        m_rows, found_rows = smallest_integer_reaching(
            power_rows, target=np.array([target]), lower=np.array([lower]), cap=cap,
            start=None if start is None else np.array([start]),
        )
        m_one, found_one = solve.smallest_integer_reaching_one(
            power_one, target=target, lower=lower, cap=cap, start=start,
        )
        assert (m_one, found_one) == (int(m_rows[0]), bool(found_rows[0]))
        assert one_probes == array_probes
        assert type(m_one) is int


def test_one_problem_twin_equals_each_row_of_a_lockstep_search():
    """Each of 300 lockstep problems (non-monotone powers, own start and lower) gets the twin's answer alone."""
    rng = np.random.default_rng(43)
    cap = 500
    tables = np.array([_wiggly(rng, cap) for _ in range(300)])
    lower = rng.integers(1, 40, size=300)
    start = rng.integers(0, cap + 20, size=300)
    target = rng.uniform(0.1, 1.0, size=300)

    def power_rows(probe):
        return tables[np.arange(300), probe]

    m, found = smallest_integer_reaching(power_rows, target=target, lower=lower, cap=cap, start=start)
    for i in range(300):
        alone = solve.smallest_integer_reaching_one(
            lambda k, i=i: float(tables[i, k]), target=float(target[i]), lower=int(lower[i]), cap=cap,
            start=int(start[i]),
        )
        assert alone == (int(m[i]), bool(found[i]))


def test_noncentrality_of_f_tests_converges_in_a_few_lockstep_rounds():
    """Power of real F tests: every root to rtol with power ≥ target, in at most 20 calls of the lockstep.

    The interpolation on Φ⁻¹(power) against √λ is nearly linear for noncentral F power, so a
    handful of steps reach 1e-13; the count guards that property (common practice, no source:
    a plain bisection would need about 45). The power at the root is checked against the
    target with scipy.stats.ncf (an independent evaluation).
    """
    from scipy import stats

    from samplewright.core.distributions import f_critical_value, f_test_power

    rng = np.random.default_rng(11)
    df1 = rng.integers(1, 9, 200).astype(float)
    df2 = rng.integers(3, 400, 200).astype(float)
    alpha = rng.choice([0.05, 0.01, 0.001], 200)
    target = rng.choice([0.8, 0.9, 0.95], 200)
    crit = f_critical_value(alpha, df1, df2)
    fn = Counting(lambda lam, mask: f_test_power(alpha, df1, df2, lam, critical=crit))
    lam, found = noncentrality_for_power(fn, target=target, start=np.maximum(1.0, df1), step=None)
    assert found.all()
    assert fn.calls <= 20  # 15 measured: about 5 doublings from df1, then the interpolation
    reference = stats.ncf.sf(crit, df1, df2, lam)
    np.testing.assert_allclose(reference, target, rtol=1e-9)
    assert (f_test_power(alpha, df1, df2, lam, critical=crit) >= target).all()
