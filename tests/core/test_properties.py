"""Properties of the planning engine for one-way designs, checked with hypothesis.

Strategies are bounded (k ≤ 6, group sizes ≤ 300, |means| ≤ 3, SD in [0.2, 5],
α in [1e-6, 0.2], f in [0.05, 1.5]) so that every example costs milliseconds.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from samplewright.core import planning
from samplewright.core.designs.one_way import OneWayAnova
from samplewright.core.distributions import f_test_power

SETTINGS = settings(max_examples=75, deadline=None)
# Monotonicity is asserted up to this relative slack: the power functions are exact to
# ~1e-13 relative, so a genuine decrease would be far larger (common practice, no source).
MONOTONE_RTOL = 1e-12

alphas = st.sampled_from([1e-6, 1e-4, 0.001, 0.01, 0.05, 0.1, 0.2])
targets = st.floats(min_value=0.3, max_value=0.99)
effects = st.floats(min_value=0.05, max_value=1.5)
groups = st.integers(min_value=2, max_value=6)


@st.composite
def unbalanced_designs(draw):
    """Means, SD and group sizes of an unbalanced one-way layout with error df ≥ 1."""
    k = draw(groups)
    means = draw(st.lists(st.floats(min_value=-3, max_value=3), min_size=k, max_size=k))
    sd = draw(st.floats(min_value=0.2, max_value=5))
    sizes = draw(st.lists(st.integers(min_value=1, max_value=300), min_size=k, max_size=k))
    if sum(sizes) <= k:
        sizes[0] += 1
    return means, sd, sizes


@SETTINGS
@given(unbalanced_designs(), alphas)
def test_power_within_alpha_and_one(layout, alpha):
    """Power is a number in [α, 1] for any bounded unbalanced design."""
    means, sd, sizes = layout
    result = planning.power(OneWayAnova.from_means(means, sd=sd), sizes=sizes, alpha=alpha)
    assert not math.isnan(result.power)
    assert alpha <= result.power <= 1.0


@SETTINGS
@given(effects, groups, st.integers(min_value=2, max_value=400), alphas)
def test_power_non_decreasing_in_n(f, k, n, alpha):
    """Adding one unit to every group never lowers the power."""
    design = OneWayAnova.from_f(f, k)
    now = planning.power(design, sizes=[n] * k, alpha=alpha).power
    more = planning.power(design, sizes=[n + 1] * k, alpha=alpha).power
    assert more >= now * (1 - MONOTONE_RTOL)


@SETTINGS
@given(unbalanced_designs(), alphas, st.integers(min_value=0, max_value=5))
def test_power_non_decreasing_when_one_group_grows(layout, alpha, which):
    """Adding units to any one group of an unbalanced design never lowers λ or the power."""
    means, sd, sizes = layout
    design = OneWayAnova.from_means(means, sd=sd)
    grown = list(sizes)
    grown[which % len(sizes)] += 7
    before = planning.power(design, sizes=sizes, alpha=alpha)
    after = planning.power(design, sizes=grown, alpha=alpha)
    # ∂λ/∂n_j = (μ_j − μ̄_w)² ≥ 0 (the Σ n_i(μ_i − μ̄_w) = 0 terms cancel), and df2 grows.
    # λ carries rounding of order eps relative to N·max μ²/σ² (the grand mean's rounding),
    # which matters only when the means are (nearly) equal.
    rounding = 1e-12 * sum(grown) * max(m * m for m in means) / sd**2
    assert after.noncentrality >= before.noncentrality * (1 - MONOTONE_RTOL) - rounding
    assert after.power >= before.power * (1 - MONOTONE_RTOL)


@SETTINGS
@given(effects, st.floats(min_value=1.0, max_value=3.0), groups, st.integers(min_value=2, max_value=200), alphas)
def test_power_non_decreasing_in_effect(f, factor, k, n, alpha):
    """A larger Cohen's f never lowers the power at the same sizes."""
    small = planning.power(OneWayAnova.from_f(f, k), sizes=[n] * k, alpha=alpha).power
    large = planning.power(OneWayAnova.from_f(f * factor, k), sizes=[n] * k, alpha=alpha).power
    assert large >= small * (1 - MONOTONE_RTOL)


@SETTINGS
@given(unbalanced_designs(), st.floats(min_value=1.0, max_value=3.0), alphas)
def test_power_non_decreasing_when_means_spread(layout, factor, alpha):
    """Stretching every mean away from their centre by a factor ≥ 1 never lowers the power."""
    means, sd, sizes = layout
    centre = float(np.mean(means))
    spread = [centre + factor * (m - centre) for m in means]
    before = planning.power(OneWayAnova.from_means(means, sd=sd), sizes=sizes, alpha=alpha).power
    after = planning.power(OneWayAnova.from_means(spread, sd=sd), sizes=sizes, alpha=alpha).power
    assert after >= before * (1 - MONOTONE_RTOL)


@SETTINGS
@given(
    st.floats(min_value=0.1, max_value=1.5),
    groups,
    st.lists(st.sampled_from([1.0, 1.5, 2.0, 3.0]), min_size=6, max_size=6),
    st.sampled_from([0.001, 0.01, 0.05, 0.1]),
    targets,
)
def test_sample_size_is_minimal(f, k, ratios, alpha, target):
    """The answer reaches the target and the next smaller smallest-group size does not."""
    design = OneWayAnova.from_f(f, k, allocation=ratios[:k])
    found = planning.sample_size(design, alpha=alpha, target_power=target)
    assert found.answer.power >= target
    # Recomputed independently of the search from the reported sizes:
    assert planning.power(design, sizes=found.answer.group_sizes, alpha=alpha).power >= target
    if found.one_step_smaller is None:
        assert found.smallest_group == design.smallest_unit()
    else:
        assert found.one_step_smaller.power < target
        assert found.smallest_group - 1 >= design.smallest_unit()


@SETTINGS
@given(
    st.lists(st.integers(min_value=2, max_value=300), min_size=2, max_size=6),
    st.sampled_from([1e-6, 0.001, 0.01, 0.05, 0.1]),
    st.floats(min_value=0.2, max_value=0.999),
)
def test_detectable_effect_round_trips_through_power(sizes, alpha, target):
    """Power at the solved λ equals the target to 1e-9, directly and through a design with f = √(λ/N)."""
    k, total = len(sizes), sum(sizes)
    design = OneWayAnova.from_f(0.3, k)
    found = planning.detectable_effect(design, sizes=sizes, alpha=alpha, target_power=target)
    lam = found.noncentrality
    assert abs(f_test_power(alpha, k - 1, total - k, lam) - target) <= 1e-9
    assert abs(found.check.power - target) <= 1e-9
    # Through the design: Cohen's f with λ = N f², at the same (unbalanced) sizes.
    again = planning.power(OneWayAnova.from_f(math.sqrt(lam / total), k), sizes=sizes, alpha=alpha)
    assert again.noncentrality == pytest.approx(lam, rel=1e-12)  # rounding of √ and square
    assert abs(again.power - target) <= 1e-9

