"""The Monte Carlo framework: error draws, the Wilson interval, seeding, chunking and the budget."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from samplewright.core import simulate as mc
from samplewright.core.designs.one_way import OneWayAnova
from samplewright.core.errors import InvalidParameter
from samplewright.core.simulate.one_way import f_statistic

DRAWS = 400_000
#: Mean of DRAWS standardised values: SE 1/√DRAWS = 0.0016; allow 5 SE.
MEAN_TOL = 5 / math.sqrt(DRAWS)


@pytest.mark.parametrize("distribution", mc.ERROR_DISTRIBUTIONS)
def test_standardised_errors_have_mean_0_and_sd_1(distribution):
    """Each error distribution is standardised: sample mean 0 and SD 1 within sampling error."""
    x = mc.standardised_errors(np.random.default_rng(11), (DRAWS,), distribution)
    # Mean 0, SD 1 by construction (common practice, no source); tolerance 5 SE of the mean
    # and 0.01 on the SD (SE ≈ 0.0022 for the t with 5 df, whose kurtosis is 9).
    assert abs(x.mean()) < MEAN_TOL
    assert x.std(ddof=1) == pytest.approx(1.0, abs=0.01)


def test_skewed_errors_are_right_skewed():
    """The skewed errors have the gamma(2) skewness 2/√2 ≈ 1.414."""
    x = mc.standardised_errors(np.random.default_rng(12), (DRAWS,), "skewed")
    # Gamma(shape k) skewness 2/√k, a standard result (common practice, no source); the
    # sample skewness of 400,000 draws is within ±0.05 of it at this kurtosis.
    assert stats.skew(x) > 0
    assert stats.skew(x) == pytest.approx(2 / math.sqrt(mc.SKEW_SHAPE), abs=0.05)


def test_heavy_tailed_errors_have_heavy_tails():
    """The heavy-tailed errors have clear excess kurtosis (t with 5 df: 6)."""
    x = mc.standardised_errors(np.random.default_rng(13), (DRAWS,), "heavy_tailed")
    # t(ν) excess kurtosis 6/(ν − 4) = 6 for ν = 5 (common practice, no source); the sample
    # value converges slowly (infinite eighth moment), so only "well above normal" is asserted.
    assert stats.kurtosis(x) > 3
    normal = mc.standardised_errors(np.random.default_rng(13), (DRAWS,), "normal")
    assert abs(stats.kurtosis(normal)) < 0.05


def test_unknown_distribution_is_refused():
    """An unknown error distribution raises, naming the field."""
    with pytest.raises(InvalidParameter, match="error_distribution"):
        mc.standardised_errors(np.random.default_rng(0), (3,), "cauchy")


@pytest.mark.parametrize(("rejections", "replicates"), [(0, 100), (1, 100), (7, 20), (50, 100), (3277, 4000),
                                                        (99, 100), (100, 100), (199_999, 200_000)])
def test_wilson_interval_matches_scipy(rejections, replicates):
    """The Wilson interval equals scipy's binomtest(...).proportion_ci(method='wilson')."""
    # scipy.stats.binomtest, a general-purpose library; agreement to 1e-12 absolute.
    ci = stats.binomtest(rejections, replicates).proportion_ci(confidence_level=0.95, method="wilson")
    low, high = mc.wilson_interval(rejections, replicates)
    assert low == pytest.approx(ci.low, abs=1e-12)
    assert high == pytest.approx(ci.high, abs=1e-12)


def test_wilson_interval_by_hand():
    """7 of 20: the Wilson interval computed by hand from its formula."""
    # Hand computation (Wilson 1927 score interval): p = 0.35, z = 1.959964, z² = 3.841459;
    # centre = (0.35 + 3.841459/40) / (1 + 3.841459/20) = 0.446036/1.192073 = 0.374169;
    # half = z √(0.35·0.65/20 + 3.841459/1600) / 1.192073 = 1.959964 · 0.117371 / 1.192073 = 0.192978.
    low, high = mc.wilson_interval(7, 20)
    assert low == pytest.approx(0.374169 - 0.192978, abs=3e-6)
    assert high == pytest.approx(0.374169 + 0.192978, abs=3e-6)


def test_wilson_interval_refuses_impossible_counts():
    """More rejections than replicates is refused."""
    with pytest.raises(InvalidParameter, match="rejections"):
        mc.wilson_interval(5, 4)


DESIGN = OneWayAnova.from_means([61.0, 64.0, 66.0], 5.0)  # invented means (MPa) and SD
SIZES = np.array([12, 12, 12])


def test_same_seed_same_result_and_different_seeds_differ():
    """A seed reproduces the run exactly; another seed gives another run."""
    a = mc.simulate(DESIGN, sizes=SIZES, alpha=0.05, replicates=2000, seed=5)
    b = mc.simulate(DESIGN, sizes=SIZES, alpha=0.05, replicates=2000, seed=5)
    c = mc.simulate(DESIGN, sizes=SIZES, alpha=0.05, replicates=2000, seed=6)
    assert a == b
    assert a.rejections != c.rejections


def test_chunking_does_not_change_the_result(monkeypatch):
    """Generating in small chunks gives the same rejections as one block (normal errors)."""
    whole = mc.simulate(DESIGN, sizes=SIZES, alpha=0.05, replicates=1000, seed=3)
    monkeypatch.setattr(mc, "CHUNK_VALUES", 36 * 7)  # 7 replicates per chunk, the last one short
    chunked = mc.simulate(DESIGN, sizes=SIZES, alpha=0.05, replicates=1000, seed=3)
    assert chunked.rejections == whole.rejections


def test_result_echoes_its_inputs_and_standard_error():
    """The result carries seed, replicates, distribution and SE √(p(1 − p)/R)."""
    r = mc.simulate(DESIGN, sizes=SIZES, alpha=0.05, replicates=1000, seed=9, error_distribution="skewed")
    assert (r.seed, r.replicates, r.error_distribution, r.values_per_replicate) == (9, 1000, "skewed", 36)
    assert r.power == r.rejections / 1000
    assert r.standard_error == pytest.approx(math.sqrt(r.power * (1 - r.power) / 1000), rel=1e-15)
    assert r.interval_low <= r.power <= r.interval_high


@pytest.mark.parametrize(("kwargs", "field"), [
    ({"replicates": mc.MIN_REPLICATES - 1}, "replicates"),
    ({"replicates": mc.MAX_REPLICATES + 1}, "replicates"),
    ({"replicates": 1000.0}, "replicates"),
    ({"replicates": True}, "replicates"),
    ({"seed": -1}, "seed"),
    ({"seed": mc.MAX_SEED + 1}, "seed"),
    ({"seed": True}, "seed"),
    ({"error_distribution": "uniform"}, "error_distribution"),
])
def test_invalid_arguments_name_the_parameter(kwargs, field):
    """Out-of-range replicates, seeds and distributions raise InvalidParameter naming them."""
    with pytest.raises(InvalidParameter) as info:
        mc.simulate(DESIGN, sizes=SIZES, alpha=0.05, **kwargs)
    assert info.value.field == field


def test_budget_is_checked_before_drawing():
    """replicates × values per replicate above MAX_WORK raises, naming replicates and the allowed maximum."""
    sizes = np.array([1000, 1000, 1000])
    allowed = mc.MAX_WORK // 3000
    with pytest.raises(InvalidParameter, match=f"at most {allowed} replicates") as info:
        mc.simulate(DESIGN, sizes=sizes, alpha=0.05, replicates=allowed + 1)
    assert info.value.field == "replicates"
    assert mc.max_replicates(DESIGN, sizes) == allowed


def test_design_without_simulator_is_refused():
    """A design class with no registered simulator raises naming design.type."""

    class Unregistered:
        pass

    with pytest.raises(InvalidParameter, match="design.type"):
        mc.simulate(Unregistered(), sizes=SIZES, alpha=0.05)


class _Layered:
    """A stand-in design drawing ``levels`` values per unit (a repeated-measures shape)."""

    levels = 10


def _layered_simulator(design, sizes, alpha, replicates, draw):
    y = draw((replicates, int(sizes.sum()), design.levels))
    return y.mean(axis=(1, 2)) > 0


def test_declared_values_per_replicate_count_toward_the_budget(monkeypatch):
    """A simulator's declared values per replicate are what the budget and chunks use."""
    monkeypatch.setitem(mc._SIMULATORS, _Layered, _layered_simulator)
    monkeypatch.setitem(mc._VALUES_PER_REPLICATE, _Layered, lambda d, s: int(s.sum()) * d.levels)
    sizes = np.array([50])
    assert mc.values_per_replicate(_Layered(), sizes) == 500
    assert mc.max_replicates(_Layered(), sizes) == mc.MAX_WORK // 500
    result = mc.simulate(_Layered(), sizes=sizes, alpha=0.05, replicates=1000, seed=1)
    # Mean of 500 standard normals is positive with probability 1/2 (symmetry; common
    # practice, no source): 1000 replicates, SE 0.016, allow 4 SE.
    assert result.power == pytest.approx(0.5, abs=4 * 0.0159)
    with pytest.raises(InvalidParameter, match="replicates"):
        mc.simulate(_Layered(), sizes=sizes, alpha=0.05, replicates=mc.MAX_WORK // 500 + 1)


def test_undeclared_extra_draws_stop_at_the_hard_cap(monkeypatch):
    """A simulator drawing far more than it declares is stopped at HARD_CAP values."""
    monkeypatch.setitem(mc._SIMULATORS, _Layered, _layered_simulator)  # declares 1 value per unit
    monkeypatch.setattr(mc, "HARD_CAP", 100_000)
    with pytest.raises(InvalidParameter, match="drew more than"):
        mc.simulate(_Layered(), sizes=np.array([50]), alpha=0.05, replicates=1000)


def test_one_way_f_statistic_matches_scipy():
    """The vectorised one-way F equals scipy.stats.f_oneway on each replicate."""
    rng = np.random.default_rng(21)
    sizes = np.array([4, 7, 5])
    y = rng.standard_normal((6, sizes.sum())) * 3 + 10
    ours = f_statistic(y, sizes)
    bounds = np.cumsum(sizes)[:-1]
    for row, value in zip(y, ours, strict=True):
        # scipy.stats.f_oneway, a general-purpose library; relative 1e-10.
        assert value == pytest.approx(stats.f_oneway(*np.split(row, bounds)).statistic, rel=1e-10)


def test_one_way_zero_effect_rejects_at_alpha():
    """With equal means the simulated F test rejects at rate α (its size is exact under normality)."""
    design = OneWayAnova.from_means([5.0, 5.0, 5.0, 5.0], 2.0)
    r = mc.simulate(design, sizes=np.array([6, 6, 6, 6]), alpha=0.05, replicates=40_000, seed=31)
    # Size α of the F test under normal errors (Scheffé 1959, §2.8); seeded simulation, 4 MC SE
    # (SE √(0.05·0.95/40000) = 0.00109).
    assert r.power == pytest.approx(0.05, abs=4 * math.sqrt(0.05 * 0.95 / 40_000))
