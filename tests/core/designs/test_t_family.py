"""The t-based designs in the core: noncentral t numerics, identities, engine properties, simulation.

Outside references here: a 50-digit mpmath series and quadrature for the noncentral t, the
one-way ANOVA design of this service for the k = 2 identity, and seeded simulations of the
real tests (4 Monte Carlo standard errors). statsmodels and Cohen's table are checked in
tests/references/test_t_family_references.py.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from samplewright.core import planning
from samplewright.core import simulate as mc
from samplewright.core.designs.contrast import Contrast
from samplewright.core.designs.one_way import OneWayAnova
from samplewright.core.designs.pairwise import PairwiseComparisons, comparison_alpha
from samplewright.core.designs.t_tests import OneSampleT, PairedT, TwoSampleT
from samplewright.core.distributions import (
    f_critical_value,
    f_test_power,
    noncentral_t_sf,
    t_critical_value,
    t_test_power,
)
from samplewright.core.errors import InvalidParameter, NoSolution

DIGITS = 50


# -- 50-digit references -----------------------------------------------------------------


def mp_nct_sf_series(x: float, df: float, nc: float) -> mp.mpf:
    """P(T'(ν, δ) > x), x ≥ 0, from the series for the distribution function.

    F(x) = Φ(−δ) + ½ Σ_j [p_j I_y(j + ½, ν/2) + q_j I_y(j + 1, ν/2)], y = x²/(x² + ν),
    p_j = e^{−δ²/2}(δ²/2)^j/j!, q_j = δ e^{−δ²/2}(δ²/2)^j/(√2 Γ(j + 3/2)) (Guenther 1978;
    Lenth 1989, AS 243), summed at 50 digits until the terms past the Poisson mode fall below
    1e-60; the tail is 1 − F (no cancellation at 50 digits for tails above 1e-40).
    """
    with mp.workdps(DIGITS):
        x, nu, d = mp.mpf(x), mp.mpf(df), mp.mpf(nc)
        y = x * x / (x * x + nu)
        h = d * d / 2
        total = mp.mpf(0)
        for j in range(200_000):
            w = mp.exp(-h) * h**j
            term = (w / mp.factorial(j)) * mp.betainc(j + mp.mpf(1) / 2, nu / 2, 0, y, regularized=True)
            term += (d * w / (mp.sqrt(2) * mp.gamma(j + mp.mpf(3) / 2))) * mp.betainc(j + 1, nu / 2, 0, y,
                                                                                    regularized=True)
            total += term
            if j > h and abs(term) < mp.mpf(10) ** -60:
                break
        else:  # pragma: no cover - the reference itself failed to converge
            raise RuntimeError("reference series did not converge")
        return 1 - (mp.ncdf(-d) + total / 2)


def mp_nct_sf_quad(x: float, df: float, nc: float) -> mp.mpf:
    """P(T'(ν, δ) > x), x > 0, δ large: ∫ φ(z) P(ν/2, ν(z + δ)²/(2x²)) dz over z > −δ, 50 digits."""
    with mp.workdps(DIGITS):
        x, nu, d = mp.mpf(x), mp.mpf(df), mp.mpf(nc)

        def integrand(z):
            return mp.npdf(z) * mp.gammainc(nu / 2, 0, nu * (d + z) ** 2 / (2 * x * x), regularized=True)

        return mp.quad(integrand, [max(-d, mp.mpf(-40)), -5, 0, 5, 40])


def mp_t_critical(alpha: float, df: float) -> mp.mpf:
    """The t with ½ I_{ν/(ν+t²)}(ν/2, ½) = α, solved at 50 digits."""
    with mp.workdps(DIGITS):
        nu, a = mp.mpf(df), mp.mpf(alpha)

        def tail(t):
            return mp.betainc(nu / 2, mp.mpf(1) / 2, 0, nu / (nu + t * t), regularized=True) / 2 - a

        start = mp.mpf(float(t_critical_value(alpha, df)))
        return mp.findroot(tail, start, tol=mp.mpf(10) ** -40)


# -- distributions -------------------------------------------------------------------------

_CRITICAL_CASES = [(a, nu) for a in (0.25, 0.05, 1e-3, 1e-6, 1e-12) for nu in (1, 2, 7, 60, 1e4, 2e7)]


@pytest.mark.parametrize(("alpha", "df"), _CRITICAL_CASES)
def test_one_sided_critical_value_matches_mpmath(alpha, df):
    """t_α = √F_crit(1, ν; 2α) equals the 50-digit root of the central t tail."""
    ours = float(t_critical_value(alpha, df))
    ref = mp_t_critical(alpha, df)
    # Reference: mpmath 50-digit root of the incomplete beta tail; rtol 1e-12.
    assert ours == pytest.approx(float(ref), rel=1e-12)


def test_critical_value_at_alpha_one_half_is_zero():
    """At α = ½ the one-sided critical t is 0 (the median of the central t)."""
    # Common practice, no source: the central t is symmetric about 0.
    assert t_critical_value(0.5, 10) == 0.0


_SERIES_CASES = [
    (alpha, nu, d)
    for alpha in (0.05, 1e-12)
    for nu in (1, 4, 30, 1e3, 1e5, 1e6, 2e7)
    for d in (0.3, 2.0, 6.0)
] + [(0.5, 10, 1.0), (0.05, 2e7, 1e-6), (0.05, 2e7, 40.0), (0.05, 25, 25.0)]


@pytest.mark.parametrize(("alpha", "df", "delta"), _SERIES_CASES)
def test_noncentral_t_tail_matches_mpmath_series(alpha, df, delta):
    """The guarded noncentral t tail at the one-sided critical value equals the 50-digit series."""
    x = float(t_critical_value(alpha, df))
    ref = mp_nct_sf_series(x, df, delta)
    ours = float(noncentral_t_sf(x, df, delta))
    if ref >= 1e-10:
        # Reference: mpmath 50-digit series (Guenther 1978 / AS 243); relative 1e-9 (huge ν included).
        assert abs(ours - float(ref)) <= 1e-9 * float(ref), (ours, mp.nstr(ref, 20))
    else:
        assert abs(ours - float(ref)) <= 1e-19


_LARGE_DELTA_CASES = [(1e-12, 1, 250.0), (1e-12, 2, 3e4), (1e-12, 5, 250.0), (1e-6, 1, 3e4), (1e-6, 2, 1e6),
                      (1e-6, 5, 1e6)]


@pytest.mark.parametrize(("alpha", "df", "delta"), _LARGE_DELTA_CASES)
def test_noncentral_t_tail_for_huge_noncentrality_matches_mpmath(alpha, df, delta):
    """Beyond the Boost range (δ up to 1e6 with few df and tiny α) the tail matches 50-digit quadrature, without warnings."""
    x = float(t_critical_value(alpha, df))
    ref = float(mp_nct_sf_quad(x, df, delta))
    ours = float(noncentral_t_sf(x, df, delta))
    # Reference: mpmath 50-digit quadrature over the normal numerator; relative 1e-9.
    assert ours == pytest.approx(ref, rel=1e-9)


def test_quadrature_reference_agrees_with_series_reference():
    """The two 50-digit references agree where both apply (a check of the checks)."""
    x = float(t_critical_value(1e-6, 3))
    # Reference: mpmath series vs mpmath quadrature, both 50 digits; relative 1e-20.
    assert float(mp_nct_sf_quad(x, 3, 12.0)) == pytest.approx(float(mp_nct_sf_series(x, 3, 12.0)), rel=1e-20)


def test_negative_argument_uses_reflection():
    """P(T'(ν, δ) > −x) = 1 − P(T'(ν, −δ) > x) for x > 0."""
    ours = float(noncentral_t_sf(-1.0, 5, -2.0))
    ref = float(1 - mp_nct_sf_series(1.0, 5, 2.0))
    # Reference: mpmath 50-digit series; rtol 1e-12.
    assert ours == pytest.approx(ref, rel=1e-12)


def test_power_at_zero_effect_is_alpha_exactly():
    """One-sided power at δ = 0 is α exactly, for every α and ν."""
    alphas = np.array([1e-12, 1e-6, 0.05, 0.5])
    for df in (1, 10, 1e7):
        # Common practice, no source: under the null the rejection rate is the level.
        assert np.array_equal(t_test_power(alphas, df, 0.0), alphas)


def test_power_bounds_and_monotone_in_delta():
    """Power lies in [α, 1] for δ ≥ 0 and in [0, α] for δ < 0, increases with δ, and is never NaN."""
    deltas = np.concatenate([-np.logspace(3, -3, 40), [0.0], np.logspace(-3, 6, 80)])
    for df in (1, 3, 40, 1e5, 2e7):
        for alpha in (1e-12, 0.05, 0.5):
            p = t_test_power(alpha, df, deltas)
            assert np.all(np.isfinite(p))
            assert np.all((p >= 0) & (p <= 1))
            assert np.all(p[deltas > 0] >= alpha) and np.all(p[deltas < 0] <= alpha)
            # Common practice, no source: the noncentral t is stochastically increasing in δ.
            # Tolerances: one ulp of 1 for δ ≥ 0; for δ < 0 (never used by a design) Boost's
            # absolute accuracy on tails far below α is ~1e-15.
            upper = deltas >= 0
            assert np.all(np.diff(p[upper]) >= -2.3e-16)
            assert np.all(np.diff(p[~upper]) >= -1e-14)


def test_two_sided_t_is_the_f_test_with_one_numerator_df():
    """Two-sided power P(|T'| > t_{α/2}) equals the F form P(F'(1, ν, δ²) > F_crit(1, ν; α))."""
    df, delta, alpha = 17.0, 1.3, 0.05
    x = float(t_critical_value(alpha / 2, df))
    # P(T' < −x) = P(T'(ν, −δ) > x): the series holds for either sign of δ.
    both = float(mp_nct_sf_series(x, df, delta) + mp_nct_sf_series(x, df, -delta))
    ours = float(f_test_power(alpha, 1.0, df, delta**2))
    # Reference: mpmath 50-digit series for both tails; rtol 1e-12.
    assert ours == pytest.approx(both, rel=1e-12)


# -- identities ----------------------------------------------------------------------------

_SIZES_2 = [np.array([12, 12]), np.array([7, 30]), np.array([500, 250])]


@pytest.mark.parametrize("sizes", _SIZES_2, ids=lambda s: f"{s[0]}x{s[1]}")
def test_two_sided_two_sample_t_equals_one_way_anova_with_two_groups(sizes):
    """Two-sided two-sample t: power, df and λ equal the one-way F with k = 2."""
    t = TwoSampleT.create(mean_difference=3.0, sd=7.0, allocation=sizes / sizes.min())
    f = OneWayAnova.from_means([3.0, 0.0], 7.0, allocation=sizes / sizes.min())
    et, ef = t.evaluate(sizes.reshape(1, -1), 0.05), f.evaluate(sizes.reshape(1, -1), 0.05)
    # Reference: this service's one-way ANOVA (Cohen 1988 ch. 8 formula); identity, rtol 1e-12.
    assert et.power[0] == pytest.approx(ef.power[0], rel=1e-12)
    assert et.noncentrality[0] == pytest.approx(ef.noncentrality[0], rel=1e-12)
    assert (et.df1[0], et.df2[0]) == (ef.df1[0], ef.df2[0])


@pytest.mark.parametrize("ratio", [1.0, 1.5, 3.0])
def test_two_sample_sample_size_equals_one_way_anova_with_two_groups(ratio):
    """The smallest two-sided two-sample design equals the one-way k = 2 answer."""
    t = TwoSampleT.create(cohens_d=0.45, allocation=[1.0, ratio])
    f = OneWayAnova.from_means([0.45, 0.0], 1.0, allocation=[1.0, ratio])
    a = planning.sample_size(t, alpha=0.05, target_power=0.9)
    b = planning.sample_size(f, alpha=0.05, target_power=0.9)
    # Reference: this service's one-way ANOVA; identity, exact sizes and power to 1e-12.
    assert a.answer.group_sizes == b.answer.group_sizes
    assert a.answer.power == pytest.approx(b.answer.power, rel=1e-12)


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_contrast_minus_one_one_equals_two_sample_t(alternative):
    """A contrast (−1, 1) on two groups is the two-sample t of μ₂ − μ₁, for every alternative."""
    means = [10.0, 12.5] if alternative != "less" else [12.5, 10.0]
    sizes = np.array([[9, 18], [40, 20]])
    c = Contrast.from_means(means, 4.0, [-1, 1], alternative=alternative)
    t = TwoSampleT.create(mean_difference=means[1] - means[0], sd=4.0, alternative=alternative)
    ec, et = c.evaluate(sizes, 0.05), t.evaluate(sizes[:, ::-1], 0.05)
    # Reference: the two-sample t design (Cohen 1988 ch. 2); identity, rtol 1e-12.
    np.testing.assert_allclose(ec.power, et.power, rtol=1e-12)
    np.testing.assert_allclose(ec.noncentrality, et.noncentrality, rtol=1e-12)


def test_contrast_power_does_not_depend_on_coefficient_scale():
    """Scaling every coefficient by 7 leaves δ and the power unchanged."""
    sizes = np.array([[10, 14, 20]])
    a = Contrast.from_means([1.0, 2.0, 4.0], 2.0, [-2, 1, 1]).evaluate(sizes, 0.01)
    b = Contrast.from_means([1.0, 2.0, 4.0], 2.0, [-14, 7, 7]).evaluate(sizes, 0.01)
    # Common practice, no source: ψ and its SE scale together; rtol 1e-12.
    assert a.power[0] == pytest.approx(b.power[0], rel=1e-12)


def test_pairwise_with_two_groups_is_the_two_sample_t():
    """Two groups, one comparison: every adjustment is α itself and the power is the two-sample t's."""
    sizes = np.array([[15, 25]])
    t = TwoSampleT.create(mean_difference=4.0, sd=6.0).evaluate(sizes, 0.05).power[0]
    for adjustment in ("bonferroni", "sidak", "none"):
        p = PairwiseComparisons.from_means([4.0, 0.0], 6.0, adjustment).evaluate(sizes, 0.05).power[0]
        # Reference: the two-sample t design; identity (m = 1), rtol 1e-12.
        assert p == pytest.approx(t, rel=1e-12)


def test_pairwise_smallest_power_is_that_of_the_closest_pair():
    """The design's power is the smallest per-comparison power, at the level α′ of the adjustment."""
    design = PairwiseComparisons.from_means([50.0, 53.0, 60.0, 61.0], 5.0, "sidak")
    sizes = np.array([20, 20, 20, 20])
    items = design.comparison_powers(sizes, 0.05)
    a = comparison_alpha(0.05, 6, "sidak")
    # Reference: Šidák (1967): α′ = 1 − (1 − α)^{1/m}; rtol 1e-15.
    assert a == pytest.approx(1 - 0.95 ** (1 / 6), rel=1e-15)
    expected = TwoSampleT.create(mean_difference=1.0, sd=5.0).evaluate(np.array([[20, 20]]), a)
    by_pair = {tuple(item["groups"]): item["power"] for item in items}
    # Reference: the pair (2, 3) is the closest; its power is the two-sample t at α′ (df N − k differs).
    assert min(by_pair.values()) == by_pair[(2, 3)]
    assert design.evaluate(sizes.reshape(1, -1), 0.05).power[0] == pytest.approx(by_pair[(2, 3)], rel=1e-14)
    assert by_pair[(2, 3)] < expected.power[0] + 0.01


def test_pairwise_against_control_compares_k_minus_one_pairs():
    """With a control group only the k − 1 comparisons with it count, at α/(k − 1) for Bonferroni."""
    design = PairwiseComparisons.from_means([10.0, 11.0, 14.0, 15.0], 3.0, "bonferroni", control_group=2)
    assert design.comparisons == 3
    assert [tuple(p) for p in design.pairs] == [(2, 0), (2, 1), (2, 3)]
    # Reference: Dunn (1961) Bonferroni α/m; exact.
    assert design.alpha_per_comparison(0.05) == 0.05 / 3


def test_paired_correlation_gives_the_sd_of_differences():
    """σ_d = σ√(2(1 − ρ)): d_z from (μ_d, σ, ρ) equals d_z from (μ_d, σ_d)."""
    a = PairedT.create(mean_difference=3.0, sd=10.0, correlation=0.6)
    b = PairedT.create(mean_difference=3.0, sd_difference=10.0 * math.sqrt(0.8))
    # Reference: Cohen (1988) ch. 2, σ_d = σ√(2(1 − ρ)); rtol 1e-15.
    assert a.cohens_dz == pytest.approx(b.cohens_dz, rel=1e-15)
    assert a.cohens_dz == pytest.approx(3.0 / (10.0 * math.sqrt(0.8)), rel=1e-15)


# -- invalid inputs in the core ------------------------------------------------------------


@pytest.mark.parametrize(
    ("build", "field"),
    [
        (lambda: TwoSampleT.create(cohens_d=-0.5, alternative="greater"), "design.cohens_d"),
        (lambda: TwoSampleT.create(mean_difference=2.0, sd=1.0, alternative="less"), "design.mean_difference"),
        (lambda: OneSampleT.create(cohens_d=0.1, alternative="less"), "design.cohens_d"),
        (lambda: PairedT.create(cohens_dz=-0.1, alternative="greater"), "design.cohens_dz"),
        (lambda: PairedT.create(mean_difference=1.0, sd=1.0, correlation=1.0), "design.correlation"),
        (lambda: PairedT.create(mean_difference=1.0, sd=1e-6, correlation=0.5), "design.mean_difference"),
        (lambda: TwoSampleT.create(cohens_d=0.5, alternative="both"), "design.alternative"),
        (lambda: Contrast.from_means([1, 2, 3], 1.0, [1, 1, -1]), "design.coefficients"),
        (lambda: Contrast.from_means([1, 2, 3], 1.0, [0, 0, 0]), "design.coefficients"),
        (lambda: Contrast.from_means([1, 2, 3], 1.0, [1, -1]), "design.coefficients"),
        (lambda: Contrast.from_means([1, 2, 3], 1.0, [1, 0, -1], alternative="greater"), "design.coefficients"),
        (lambda: PairwiseComparisons.from_means([1, 2, 3], 1.0, control_group=3), "design.control_group"),
        (lambda: PairwiseComparisons.from_means([1, 2, 3], 1.0, adjustment="holm"), "design.adjustment"),
        (lambda: PairwiseComparisons.from_means([0, 0, 1e6], 1.0), "design.group_means"),
    ],
)
def test_core_refuses_invalid_designs_naming_the_field(build, field):
    """Contradictory signs, bad coefficients, correlations and indices raise InvalidParameter naming the field."""
    with pytest.raises(InvalidParameter) as info:
        build()
    assert info.value.field == field


def test_coefficients_summing_to_zero_up_to_rounding_are_accepted():
    """[0.1, 0.2, −0.3] sums to 5.6e-17 in binary floating point and is a contrast."""
    c = Contrast.from_means([1.0, 2.0, 3.0], 1.0, [0.1, 0.2, -0.3])
    assert c.psi_over_sd == pytest.approx(0.1 + 0.4 - 0.9, rel=1e-12)


# -- the engine on the t designs -----------------------------------------------------------

_DESIGNS = {
    "two_sample": TwoSampleT.create(cohens_d=0.4, allocation=[1, 2]),
    "two_sample_less": TwoSampleT.create(mean_difference=-2.0, sd=5.0, alternative="less"),
    "one_sample_greater": OneSampleT.create(cohens_d=0.3, alternative="greater"),
    "paired_less": PairedT.create(mean_difference=-1.5, sd=4.0, correlation=0.3, alternative="less"),
    "contrast": Contrast.from_means([5.0, 6.0, 8.0], 3.0, [-1, 0, 1], allocation=[1, 1, 2]),
    "contrast_greater": Contrast.from_means([5.0, 6.0, 8.0], 3.0, [-2, 1, 1], alternative="greater"),
    "pairwise": PairwiseComparisons.from_means([5.0, 6.5, 8.0, 9.0], 3.0, "bonferroni"),
    "pairwise_control": PairwiseComparisons.from_means([5.0, 6.5, 8.0], 3.0, "sidak", control_group=0,
                                                       allocation=[2, 1, 1]),
}


@pytest.mark.parametrize("name", sorted(_DESIGNS))
@pytest.mark.parametrize("target", [0.5, 0.8, 0.95])
def test_sample_size_is_minimal(name, target):
    """The returned size reaches the target and one fewer in the smallest group does not."""
    design = _DESIGNS[name]
    found = planning.sample_size(design, alpha=0.05, target_power=target)
    assert found.answer.power >= target
    if found.one_step_smaller is not None:
        assert found.one_step_smaller.power < target


@pytest.mark.parametrize("name", sorted(_DESIGNS))
def test_power_increases_with_size(name):
    """Power is non-decreasing in the smallest group's size, within [α′, 1], never NaN."""
    design = _DESIGNS[name]
    from samplewright.core.designs.base import sizes_from_smallest

    p = design.evaluate(sizes_from_smallest(np.arange(2, 400), design.ratios), 0.05).power
    assert np.all(np.isfinite(p)) and np.all(np.diff(p) >= -1e-15)
    assert np.all((p >= 0) & (p <= 1))


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
@pytest.mark.parametrize("alpha", [1e-12, 0.05, 0.5])
def test_detectable_effect_round_trips(alternative, alpha):
    """The detectable λ gives the target power back when fed to the design as an effect."""
    sizes = np.array([23, 31])
    layout = TwoSampleT(ratios=np.array([1.0, 31 / 23]), cohens_d=0.0, alternative=alternative)
    found = planning.detectable_effect(layout, sizes=sizes, alpha=alpha, target_power=0.9)
    d = math.sqrt(found.noncentrality) * math.sqrt(1 / 23 + 1 / 31) * (-1 if alternative == "less" else 1)
    back = TwoSampleT.create(cohens_d=d, alternative=alternative).evaluate(sizes.reshape(1, -1), alpha).power[0]
    # Common practice, no source: the solve is exact to rtol 1e-13, so the power returns to 1e-9.
    assert back == pytest.approx(0.9, abs=1e-9)


def test_one_sided_detectable_effect_is_smaller_than_two_sided():
    """A one-sided test detects a smaller effect than the two-sided test at the same α and n."""
    sizes = np.array([40])
    one = planning.detectable_effect(OneSampleT(cohens_d=0.0, alternative="greater"), sizes=sizes, alpha=0.05,
                                     target_power=0.8)
    two = planning.detectable_effect(OneSampleT(cohens_d=0.0), sizes=sizes, alpha=0.05, target_power=0.8)
    assert one.noncentrality < two.noncentrality


def test_zero_effect_has_no_sample_size():
    """With d = 0 no size reaches the target: NoSolution, quickly, for one- and two-sided tests."""
    for design in (TwoSampleT.create(cohens_d=0.0), OneSampleT.create(cohens_d=0.0, alternative="greater")):
        with pytest.raises(NoSolution):
            planning.sample_size(design, alpha=0.05, target_power=0.8)


def test_tiny_effect_hits_the_cap():
    """d = 1e-9 needs more than the cap: NoSolution naming target_power."""
    with pytest.raises(NoSolution) as info:
        planning.sample_size(OneSampleT.create(cohens_d=1e-9, alternative="greater"), alpha=0.05, target_power=0.8)
    assert info.value.field == "target_power"


def test_huge_sizes_stay_accurate():
    """At 10⁷ per group the one-sided power matches the 50-digit series (the large-ν branch)."""
    design = TwoSampleT.create(cohens_d=0.0012, alternative="greater")
    ev = design.evaluate(np.array([[10_000_000, 10_000_000]]), 0.025)
    delta = 0.0012 / math.sqrt(2e-7)
    ref = mp_nct_sf_series(float(t_critical_value(0.025, 2e7 - 2)), 2e7 - 2, delta)
    # Reference: mpmath 50-digit series; rtol 1e-9.
    assert ev.power[0] == pytest.approx(float(ref), rel=1e-9)


def test_critical_value_reported_on_the_f_scale():
    """Evaluation reports λ = δ² and the critical value squared, for one- and two-sided tests."""
    sizes = np.array([[30]])
    one = OneSampleT.create(cohens_d=0.5, alternative="greater").evaluate(sizes, 0.05)
    two = OneSampleT.create(cohens_d=0.5).evaluate(sizes, 0.05)
    # Reference: F(1, ν) = T²: F_crit(1, ν; 2α) = t_α²; rtol 1e-13.
    assert one.critical_value[0] == pytest.approx(f_critical_value(0.10, 1, 29), rel=1e-13)
    assert two.critical_value[0] == pytest.approx(f_critical_value(0.05, 1, 29), rel=1e-13)
    assert one.noncentrality[0] == pytest.approx(0.25 * 30, rel=1e-13)


# -- seeded simulation of the real tests ---------------------------------------------------

_SIM_CASES = {
    "two_sample_unequal": (TwoSampleT.create(mean_difference=3.0, sd=6.0, allocation=[1, 2]), [20, 40]),
    "two_sample_less": (TwoSampleT.create(cohens_d=-0.5, alternative="less"), [25, 25]),
    "one_sample_greater": (OneSampleT.create(mean_difference=1.0, sd=4.0, alternative="greater"), [60]),
    "one_sample_two_sided": (OneSampleT.create(cohens_d=-0.45), [30]),
    "paired_correlated": (PairedT.create(mean_difference=2.0, sd=6.0, correlation=0.7, alternative="greater"), [20]),
    "paired_negative_rho": (PairedT.create(mean_difference=2.0, sd=6.0, correlation=-0.4), [60]),
    "paired_dz": (PairedT.create(cohens_dz=-0.35, alternative="less"), [40]),
    "contrast_unequal": (Contrast.from_means([20.0, 22.0, 25.0], 6.0, [-1, 0.5, 0.5], allocation=[2, 1, 1]),
                         [24, 12, 12]),
    "contrast_less": (Contrast.from_means([20.0, 22.0, 25.0, 24.0], 5.0, [3, -1, -1, -1], alternative="less"),
                      [12, 12, 12, 12]),
    "pairwise_all": (PairwiseComparisons.from_means([50.0, 55.0, 60.0], 8.0, "bonferroni"), [30, 30, 30]),
    "pairwise_control": (PairwiseComparisons.from_means([50.0, 56.0, 58.0, 61.0], 8.0, "sidak", control_group=0,
                                                        allocation=[2, 1, 1, 1]), [40, 20, 20, 20]),
    "pairwise_none": (PairwiseComparisons.from_means([0.0, 0.4, 1.0], 1.0, "none"), [35, 35, 35]),
}
SIM_REPLICATES = 20_000


@pytest.mark.parametrize("name", sorted(_SIM_CASES))
def test_simulation_of_the_real_test_agrees_with_the_analytic_power(name):
    """The seeded simulated rejection rate is within 4 Monte Carlo SE of the analytic power."""
    design, sizes = _SIM_CASES[name]
    sizes = np.asarray(sizes)
    analytic = planning.power(design, sizes=sizes, alpha=0.05).power
    result = mc.simulate(design, sizes=sizes, alpha=0.05, replicates=SIM_REPLICATES, seed=2024)
    se = math.sqrt(analytic * (1 - analytic) / SIM_REPLICATES)
    assert 0.15 < analytic < 0.97  # an informative check, not one at power ≈ 1
    # Reference: seeded simulation of the real test, 4 MC SE.
    assert abs(result.power - analytic) <= 4 * se, (name, result.power, analytic, se)


def test_simulation_under_the_null_rejects_at_alpha():
    """With no effect the simulated one-sided and pairwise tests reject at their level (4 MC SE)."""
    for design, sizes, level in (
        (OneSampleT.create(cohens_d=0.0, alternative="less"), np.array([15]), 0.05),
        (PairwiseComparisons.from_means([1.0, 1.0, 1.0], 1.0, "bonferroni"), np.array([10, 10, 10]), 0.05 / 3),
    ):
        result = mc.simulate(design, sizes=sizes, alpha=0.05, replicates=SIM_REPLICATES, seed=7)
        se = math.sqrt(level * (1 - level) / SIM_REPLICATES)
        # Reference: seeded simulation, 4 MC SE around the nominal level.
        assert abs(result.power - level) <= 4 * se
