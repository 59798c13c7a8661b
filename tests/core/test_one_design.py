"""One design asked alone equals the same design inside a Rows of many, bit for bit.

``planning.power``, ``sizes_for``, ``check_sizes`` and ``sample_size`` answer one design
without the array bookkeeping of their row forms; the service promises that a question
answered alone and inside a batch give equal numbers. Source of every expected value:
independent computation, the row form of the same engine (``power_rows``,
``sizes_for_rows``, ``check_sizes_rows``, ``sample_size_rows``) on a Rows of many seeded
designs grouped as the batch groups them (``rows_key``). Tolerance 0: floats are compared
by their bits (``float.hex``), errors by their repr.
"""

from __future__ import annotations

import dataclasses
import importlib
import inspect
import pkgutil
import random

import numpy as np
import pytest

import samplewright.core.designs as designs_package
from samplewright.core import planning
from samplewright.core.designs.ancova import OneWayAncova
from samplewright.core.designs.base import FTestDesign
from samplewright.core.designs.contrast import Contrast
from samplewright.core.designs.factorial import EFFECTS, FactorialAnova
from samplewright.core.designs.one_way import OneWayAnova
from samplewright.core.designs.pairwise import ADJUSTMENTS, PairwiseComparisons
from samplewright.core.designs.random_effects import RandomEffectsAnova
from samplewright.core.designs.repeated_measures import RepeatedMeasuresAnova, correlation_bounds
from samplewright.core.designs.t_tests import OneSampleT, PairedT, TwoSampleT
from samplewright.core.designs.welch import WelchAnova
from samplewright.core.errors import InvalidParameter, NoSolution
from samplewright.core.vectorised import Rows, rows_key, sizes_from_rows

ERRORS = (InvalidParameter, NoSolution)


def _allocation(rng: random.Random, k: int):
    return None if rng.random() < 0.5 else [rng.choice([1, 1.1, 1.5, 2, 3]) for _ in range(k)]


def _alternative(rng: random.Random) -> str:
    return rng.choice(["two-sided", "greater", "less"])


def _signed(rng: random.Random, alternative: str, lo: float, hi: float) -> float:
    value = rng.uniform(lo, hi)
    return -value if alternative == "less" or (alternative == "two-sided" and rng.random() < 0.3) else value


def _one_way(rng: random.Random, k: int):
    form = rng.random()
    if form < 0.4:
        return OneWayAnova.from_f(rng.uniform(0.05, 0.8), k, _allocation(rng, k))
    if form < 0.8:
        return OneWayAnova.from_means([rng.uniform(-2, 2) for _ in range(k)], rng.uniform(0.5, 4), _allocation(rng, k))
    return OneWayAnova.from_min_range(rng.uniform(0.2, 2), rng.uniform(0.5, 2), k)


def _ancova(rng: random.Random, k: int):
    return OneWayAncova.from_means([rng.uniform(-1, 1) for _ in range(k)], rng.uniform(0.5, 3), rng.uniform(0, 0.8),
                                   rng.randint(1, 4), _allocation(rng, k))


def _factorial(rng: random.Random, k: int):
    a, b = (2, k) if k <= 4 else (3, 2)
    cells = np.array([[rng.uniform(-1, 1) for _ in range(b)] for _ in range(a)])
    return FactorialAnova.from_cells(cells, rng.uniform(0.5, 3), rng.choice(EFFECTS))


def _pairwise(rng: random.Random, k: int):
    control = None if rng.random() < 0.5 else rng.randrange(k)
    return PairwiseComparisons.from_means([rng.uniform(-1, 1) for _ in range(k)], rng.uniform(0.5, 3),
                                          rng.choice(ADJUSTMENTS), control, _allocation(rng, k))


def _random_effects(rng: random.Random, k: int):
    return RandomEffectsAnova.from_theta(k, rng.uniform(0.02, 1.0))


def _repeated(rng: random.Random, k: int):
    lo, _ = correlation_bounds(k)
    eps = 1.0 if rng.random() < 0.5 else rng.uniform(1.0 / (k - 1), 1.0)
    return RepeatedMeasuresAnova.from_means([rng.uniform(-1, 1) for _ in range(k)], rng.uniform(0.5, 3),
                                            rng.uniform(max(lo, -0.4) + 0.01, 0.9), eps)


def _two_sample(rng: random.Random, k: int):
    alt = _alternative(rng)
    if rng.random() < 0.5:
        return TwoSampleT.create(cohens_d=_signed(rng, alt, 0.1, 1.2), allocation=_allocation(rng, 2), alternative=alt)
    sd = rng.uniform(0.5, 3)
    return TwoSampleT.create(mean_difference=_signed(rng, alt, 0.1, 1.2) * sd, sd=sd,
                             allocation=_allocation(rng, 2), alternative=alt)


def _one_sample(rng: random.Random, k: int):
    alt = _alternative(rng)
    return OneSampleT.create(cohens_d=_signed(rng, alt, 0.1, 1.2), alternative=alt)


def _paired(rng: random.Random, k: int):
    alt = _alternative(rng)
    if rng.random() < 0.5:
        return PairedT.create(cohens_dz=_signed(rng, alt, 0.1, 1.2), alternative=alt)
    return PairedT.create(mean_difference=_signed(rng, alt, 0.1, 1.0), sd=rng.uniform(0.5, 2),
                          correlation=rng.uniform(-0.5, 0.9), alternative=alt)


def _contrast(rng: random.Random, k: int):
    alt = _alternative(rng)
    coefficients = [1.0] + [0.0] * (k - 2) + [-1.0]
    means = [rng.uniform(-1, 1) for _ in range(k)]
    psi = means[0] - means[-1]
    if (alt == "greater" and psi < 0) or (alt == "less" and psi > 0):
        means[0], means[-1] = means[-1], means[0]
    return Contrast.from_means(means, rng.uniform(0.5, 3), coefficients, _allocation(rng, k), alt)


def _welch(rng: random.Random, k: int):
    return WelchAnova.from_means([rng.uniform(-1, 1) for _ in range(k)], [rng.uniform(0.5, 3) for _ in range(k)],
                                 _allocation(rng, k))


#: Seeded builders, one per registered design class (the coverage test below checks "every").
BUILDERS = {
    OneWayAnova: _one_way, OneWayAncova: _ancova, FactorialAnova: _factorial, PairwiseComparisons: _pairwise,
    RandomEffectsAnova: _random_effects, RepeatedMeasuresAnova: _repeated, TwoSampleT: _two_sample,
    OneSampleT: _one_sample, PairedT: _paired, Contrast: _contrast, WelchAnova: _welch,
}


def _design_classes() -> set[type]:
    """Every concrete design dataclass defined in samplewright.core.designs."""
    found = set()
    for info in pkgutil.iter_modules(designs_package.__path__):
        module = importlib.import_module(f"{designs_package.__name__}.{info.name}")
        for _, obj in inspect.getmembers(module, inspect.isclass):
            if obj.__module__ == module.__name__ and issubclass(obj, FTestDesign) and dataclasses.is_dataclass(obj):
                found.add(obj)
    return found


#: Designs per class and test; the one-way layout, the service's main design, gets more:
#: a last-bit difference (σ² as pow(σ, 2) instead of σ·σ) shows in about 1 in 2,000 of them.
COUNTS = {OneWayAnova: 4000}


def _groups_of(cls: type, seed: int, count: int | None = None) -> list[list]:
    """Seeded designs of ``cls`` grouped as the batch groups them, each group of two or more."""
    rng = random.Random(seed)
    count = COUNTS.get(cls, 36) if count is None else count
    made = []
    for _ in range(count):
        k = rng.choice([2, 3, 3, 4, 5, 6])
        made.append(BUILDERS[cls](rng, k))
    made += [made[i] for i in range(0, count, 7)]  # identical items share one design object
    rng.shuffle(made)
    groups: dict = {}
    for d in made:
        groups.setdefault(rows_key(d), []).append(d)
    return [members for members in groups.values() if len(members) > 1]


def _bits(value):
    """A value with every float replaced by its exact bits, for comparisons with tolerance 0."""
    if isinstance(value, float):
        return float.hex(value)
    if dataclasses.is_dataclass(value):
        return (type(value).__name__, *(_bits(getattr(value, f.name)) for f in dataclasses.fields(value)))
    if isinstance(value, tuple | list):
        return tuple(_bits(v) for v in value)
    if isinstance(value, np.ndarray):
        return (value.dtype.str, value.shape, value.tobytes())
    return value


def _alone(fn, *args, **kwargs):
    try:
        return fn(*args, **kwargs), None
    except ERRORS as exc:
        return None, repr(exc)


def _alphas(rng: random.Random, count: int) -> list[float]:
    return [rng.choice([0.05, 0.01, 0.1, rng.uniform(0.001, 0.2)]) for _ in range(count)]


CLASSES = sorted(BUILDERS, key=lambda c: c.__name__)


def test_every_registered_design_class_has_a_builder():
    """The seeded builders cover every design class in core/designs (a new class must be added here)."""
    assert _design_classes() == set(BUILDERS)


@pytest.mark.parametrize("cls", CLASSES, ids=lambda c: c.__name__)
def test_sizes_for_alone_equals_sizes_for_rows(cls):
    """planning.sizes_for equals sizes_for_rows over a mixed Rows (sizes and errors), n from 0 to 400."""
    rng = random.Random(CLASSES.index(cls))
    for members in _groups_of(cls, 1):
        rows = Rows(members)
        ns = [rng.choice([0, 1, 2, 3, 4, 5, rng.randint(6, 400)]) for _ in members]
        sizes, errors = planning.sizes_for_rows(rows, ns)
        for i, (d, n) in enumerate(zip(members, ns, strict=True)):
            got, error = _alone(planning.sizes_for, d, n)
            assert error == (None if errors[i] is None else repr(errors[i]))
            if error is None:
                assert _bits(got) == _bits(sizes[i])


def _explicit_sizes(rng: random.Random, d, valid: bool) -> list[int]:
    k = d.groups
    if isinstance(d, RandomEffectsAnova):
        return [rng.randint(2, 60)] * k  # its exact power needs equal sizes
    sizes = [rng.randint(2, 80) for _ in range(k)]  # two units a group: error df for every design
    if isinstance(d, OneWayAncova):
        sizes[0] += d.covariates + 1  # keeps error df
    if not valid:
        broken = rng.choice(["short", "zero", "huge", "no_df"])
        if broken == "short":
            sizes = sizes[:-1]
        elif broken == "zero":
            sizes[rng.randrange(len(sizes))] = 0
        elif broken == "huge":
            sizes[rng.randrange(len(sizes))] = planning.SIZE_CAP + 1
        elif not isinstance(d, WelchAnova | OneWayAncova):  # these refuse such sizes for the whole Rows
            sizes = [1] * k
    return sizes


@pytest.mark.parametrize("cls", CLASSES, ids=lambda c: c.__name__)
def test_check_sizes_alone_equals_check_sizes_rows(cls):
    """planning.check_sizes equals check_sizes_rows over a mixed Rows (sizes and errors), valid and broken lists."""
    rng = random.Random(7 + CLASSES.index(cls))
    for members in _groups_of(cls, 2):
        rows = Rows(members)
        given = [_explicit_sizes(rng, d, valid=rng.random() < 0.7) for d in members]
        sizes, errors = planning.check_sizes_rows(rows, given)
        for i, d in enumerate(members):
            got, error = _alone(planning.check_sizes, d, given[i])
            assert error == (None if errors[i] is None else repr(errors[i]))
            if error is None:
                assert _bits(got) == _bits(sizes[i])


@pytest.mark.parametrize("cls", CLASSES, ids=lambda c: c.__name__)
def test_power_alone_equals_power_rows(cls):
    """planning.power (after sizes_for or check_sizes) equals power_rows over a mixed Rows, every field to the bit."""
    rng = random.Random(11 + CLASSES.index(cls))
    for members in _groups_of(cls, 3):
        rows = Rows(members)
        alphas = _alphas(rng, rows.count)
        by_n = [rng.random() < 0.5 for _ in members]
        ns = [rng.randint(4, 300) for _ in members]
        given = [_explicit_sizes(rng, d, valid=True) for d in members]
        from_n, _ = planning.sizes_for_rows(rows, ns)
        from_list, _ = planning.check_sizes_rows(rows, given)
        sizes = np.where(np.array(by_n)[:, None], from_n, from_list)
        got = planning.power_rows(rows, sizes=sizes, alpha=alphas)
        for i, d in enumerate(members):
            alone_sizes = planning.sizes_for(d, ns[i]) if by_n[i] else planning.check_sizes(d, given[i])
            alone = planning.power(d, sizes=alone_sizes, alpha=alphas[i])
            assert _bits(alone) == _bits(got.result(i))


@pytest.mark.parametrize("cls", CLASSES, ids=lambda c: c.__name__)
def test_sample_size_alone_equals_sample_size_rows(cls):
    """planning.sample_size equals sample_size_rows over a mixed Rows: answer, step below, enrolment and errors."""
    rng = random.Random(13 + CLASSES.index(cls))
    for members in _groups_of(cls, 4, count=30):
        rows = Rows(members)
        alphas = _alphas(rng, rows.count)
        targets = [rng.choice([0.8, 0.9, 0.95, rng.uniform(0.5, 0.99), 0.01]) for _ in members]  # 0.01: not > α
        dropout = [rng.choice([0.0, 0.1, 0.2, rng.uniform(0, 0.5)]) for _ in members]
        got, errors = planning.sample_size_rows(rows, alpha=alphas, target_power=targets, dropout_rate=dropout)
        for i, d in enumerate(members):
            alone, error = _alone(planning.sample_size, d, alpha=alphas[i], target_power=targets[i],
                                  dropout_rate=dropout[i])
            assert error == (None if errors[i] is None else repr(errors[i]))
            if error is None:
                assert _bits(alone) == _bits(got.result(i))


def test_sample_size_errors_alone_equal_the_row_form():
    """Zero effects, sizes beyond a small cap and allocations with no room under it fail alone as in the rows."""
    rng = random.Random(17)
    members = [OneWayAnova.from_f(0.0, 3), OneWayAnova.from_f(0.01, 3), OneWayAnova.from_f(0.5, 3, [1, 1, 40]),
               OneWayAnova.from_f(0.3, 3), OneWayAnova.from_f(0.05, 3, [1, 2, 3])]
    members += [OneWayAnova.from_f(rng.uniform(0.02, 0.9), 3, _allocation(rng, 3)) for _ in range(20)]
    for cap in (30, 500, planning.SIZE_CAP):
        rows = Rows(members)
        got, errors = planning.sample_size_rows(rows, alpha=0.05, target_power=0.9, dropout_rate=0.1, cap=cap)
        for i, d in enumerate(members):
            alone, error = _alone(planning.sample_size, d, alpha=0.05, target_power=0.9, dropout_rate=0.1, cap=cap)
            assert error == (None if errors[i] is None else repr(errors[i]))
            if error is None:
                assert _bits(alone) == _bits(got.result(i))
    assert any(e is not None for e in errors)


def test_one_way_alone_equals_a_column_built_table():
    """planning.power and sample_size of one-way designs equal the rows of Rows.from_columns (the table route)."""
    rng = np.random.default_rng(19)
    count, k = 64, 4
    f = rng.uniform(0.1, 0.6, count)
    alpha = rng.uniform(0.01, 0.1, count)
    target = rng.uniform(0.8, 0.95, count)
    n = rng.integers(4, 200, count)
    rows = Rows.from_columns(OneWayAnova, count, groups=k, ratios=np.ones((count, k)), cohens_f=f)
    sizes, _ = planning.sizes_for_rows(rows, n)
    power = planning.power_rows(rows, sizes=sizes, alpha=alpha)
    found, errors = planning.sample_size_rows(rows, alpha=alpha, target_power=target)
    assert errors == [None] * count
    for i in range(count):
        d = OneWayAnova.from_f(float(f[i]), k)
        assert _bits(planning.power(d, sizes=planning.sizes_for(d, int(n[i])), alpha=float(alpha[i]))) == _bits(
            power.result(i))
        assert _bits(planning.sample_size(d, alpha=float(alpha[i]), target_power=float(target[i]))) == _bits(
            found.result(i))


def test_asking_about_another_design_in_between_changes_nothing():
    """The reused Rows of the last design asked about never answers for another: interleaved questions equal fresh ones."""
    rng = random.Random(23)
    pool = [_one_way(rng, rng.choice([2, 3, 4])) for _ in range(12)]
    fresh = {id(d): planning.power_rows(Rows([d]), sizes=planning.sizes_for_rows(Rows([d]), [9])[0], alpha=0.05)
             for d in pool}
    for _ in range(60):
        d = rng.choice(pool)
        assert _bits(planning.power(d, sizes=planning.sizes_for(d, 9), alpha=0.05)) == _bits(fresh[id(d)].result(0))


def test_the_scalar_size_guess_is_the_array_guess():
    """_size_guess_one gives each row's start of _size_guess (so the searches probe the same sizes), edge effects too."""
    # Each Rows has run its unit search, so the scalar form reads the remembered test at the
    # unit, as sample_size does; allocations are equal and unequal.
    rng = random.Random(29)
    designs = [OneWayAnova.from_f(f, 3) for f in (0.0, 1e-170, 1e-9, 1e-4, 40.0)]
    designs += [OneWayAnova.from_means([0.0, 0.0, 1e-160], 1.0), OneWayAnova.from_means([0, 0, 0], 1.0)]
    for cls in (OneWayAnova, FactorialAnova, RepeatedMeasuresAnova, WelchAnova, TwoSampleT):
        designs += [BUILDERS[cls](rng, rng.choice([2, 3, 4])) for _ in range(150)]
    checked = 0
    for d in designs:
        rows = Rows([d])
        lower = rows.smallest_unit()
        for alpha, target in ((0.05, 0.9), (rng.uniform(1e-6, 0.2), rng.uniform(0.3, 0.999)), (0.2, 0.2000001)):
            array = planning._size_guess(rows, lower, np.array([alpha]), np.array([target]))
            one = planning._size_guess_one(rows, int(lower[0]), alpha, target)
            assert one == (None if array is None else int(array[0]))
            checked += one is not None
    assert checked > 1000


def test_the_stack_of_one_is_the_stack_of_a_list_of_one():
    """Rows([d])'s stack holds exactly the arrays np.stack builds for one design (values, dtype, layout)."""
    from samplewright.core.vectorised import _stack_one, stack_signature

    rng = random.Random(31)
    for _ in range(200):
        d = _one_way(rng, rng.choice([2, 3, 5]))
        one, names = _stack_one(OneWayAnova, d)
        assert stack_signature(d) is not None
        for name in names:
            value = getattr(d, name)
            expected = np.stack([value]) if isinstance(value, np.ndarray) else np.array([value], dtype=float)
            got = getattr(one, name)
            assert _bits(got) == _bits(expected) and got.flags.c_contiguous
            if isinstance(value, np.ndarray):
                assert not np.shares_memory(got, value)
        for name in {f.name for f in dataclasses.fields(d)} - set(names):
            assert getattr(one, name) is getattr(d, name)


def test_one_row_sizes_in_python_floats_equal_the_array_rounding():
    """sizes_from_rows for one row and a plain-int m equals its int64-column form (m up to 2**53)."""
    from samplewright.core.vectorised import _RATIO_SLACK, sizes_from_rows

    rng = np.random.default_rng(37)
    for _ in range(20000):
        k = int(rng.integers(1, 9))
        ratios = rng.choice([1.0, 1.1, 1.5, 2.0, 3.0, 11.0, 7 / 3, float(rng.uniform(1, 20))], size=(1, k))
        ratios = ratios / ratios.min()
        m = int(rng.choice([1, 2, 3, int(rng.integers(1, 10**7)), int(rng.integers(1, 2**52))]))
        expected = np.ceil(np.asarray(m, dtype=np.int64).reshape(-1, 1) * ratios * (1 - _RATIO_SLACK)).astype(np.int64)
        assert _bits(sizes_from_rows(m, ratios)) == _bits(expected)


def _one_way_row(rng: random.Random, k: int) -> OneWayAnova:
    """A one-way design with k groups, means of mixed sign and scale or an f, equal or not."""
    alloc = None if rng.random() < 0.4 else [rng.choice([1, 1.1, 1.5, 2, 3, 7 / 3, rng.uniform(1, 9)]) for _ in range(k)]
    if rng.random() < 0.35:
        return OneWayAnova.from_f(rng.choice([rng.uniform(0.0, 1.5), 10 ** rng.uniform(-9, 1)]), k, alloc)
    scale = 10 ** rng.uniform(-4, 4)
    means = [rng.uniform(-1, 1) * scale + rng.choice([0.0, 50.0, -1e3]) for _ in range(k)]
    return OneWayAnova.from_means(means, rng.uniform(0.1, 9) * scale, alloc)


def test_one_way_scalar_test_equals_the_stacked_test():
    """OneWayAnova.test_at_one equals test_at on a stack of one and on row i of a stack of many (k ≤ 7), else None."""
    # Source: the array test_at of the same design on Rows stacks; tolerance 0 (float.hex).
    # The sums in Python are numpy's row sums only for fewer than 8 terms (pairwise
    # summation with eight accumulators starts at 8), so 1 to 10 groups are tried.
    rng = random.Random(43)
    checked = 0
    for k in range(1, 11):
        designs = [_one_way_row(rng, k) for _ in range(300)]
        sizes = np.array([[rng.choice([1, 2, rng.randint(1, 90), rng.randint(1, 10**7)]) for _ in range(k)]
                          for _ in designs], dtype=np.int64)
        groups: dict = {}
        for i, d in enumerate(designs):
            groups.setdefault(rows_key(d), []).append(i)
        for index in groups.values():
            many = Rows([designs[i] for i in index]).tests(sizes[index])
            for j, i in enumerate(index):
                row = tuple(sizes[i].tolist())
                got = designs[i].test_at_one(row)
                if k > OneWayAnova.SEQUENTIAL_SUM_MAX:
                    assert got is None
                    continue
                alone = Rows([designs[i]]).tests(sizes[i:i + 1])
                for t, at in ((alone, 0), (many, j)):
                    expected = tuple(float(np.asarray(v, dtype=float).reshape(-1)[at])
                                     for v in (t.df1, t.df2, t.noncentrality))
                    assert _bits(got) == _bits(expected)
                checked += 1
    assert checked > 2000
    assert OneWayAnova.from_means([1.0, 2.0], 0.0).test_at_one((3, 3)) is None  # σ = 0: numpy decides


def test_rows_of_one_in_python_numbers_equal_the_array_methods():
    """A Rows of one's sizes_of_one, test_of_one, evaluate_one, evaluate_of_one and noncentrality_of_one equal row 0 of the array methods."""
    # Source: Rows.tests / evaluate / noncentrality and sizes_from_rows on one-row arrays,
    # for every design class; tolerance 0 (float.hex).
    rng = random.Random(47)
    fields = ("power", "df1", "df2", "noncentrality", "critical_value")
    for cls in CLASSES:
        for _ in range(60 if cls is not OneWayAnova else 600):
            d = BUILDERS[cls](rng, rng.choice([2, 3, 4, 5, 6, 9]))
            rows = Rows([d])
            unit = int(rows.smallest_unit()[0])
            m = rng.choice([unit, unit + 1, rng.randint(unit, 400), rng.randint(unit, 10**6)])
            alpha = rng.choice([0.05, 0.01, rng.uniform(1e-4, 0.2)])
            sizes = sizes_from_rows(m, rows.ratios)
            assert rows.sizes_of_one(m) == tuple(sizes[0].tolist())
            ev = rows.evaluate(sizes, np.array([alpha]))
            expected = tuple(float(np.asarray(getattr(ev, f), dtype=float).reshape(-1)[0]) for f in fields)
            assert _bits(rows.evaluate_one(rows.sizes_of_one(m), alpha)) == _bits(expected)
            assert _bits(rows.evaluate_of_one(m, alpha)) == _bits((tuple(sizes[0].tolist()), expected))
            lam = rows.noncentrality(sizes, np.array([alpha]))
            assert _bits(rows.noncentrality_of_one(m, alpha)) == _bits(float(np.asarray(lam).reshape(-1)[0]))
            if rows._has_test_at:
                t = rows.tests(sizes)
                got_sizes, got = rows.test_of_one(m)
                assert got_sizes == tuple(sizes[0].tolist())
                assert _bits(got) == _bits(tuple(float(np.asarray(v, dtype=float).reshape(-1)[0])
                                                 for v in (t.df1, t.df2, t.noncentrality)))


def test_rows_of_one_ratio_sum_and_maximum_are_numpys():
    """Rows._one_ratios gives the ratios, numpy's row sum and numpy's maximum of a Rows of one, 1 to 12 groups."""
    # Source: ratios.sum(axis=1) and ratios.max() on the Rows' own (1, k) array; tolerance 0.
    rng = random.Random(53)
    for _ in range(4000):
        k = rng.randint(2, 12)
        alloc = [rng.choice([1, 1.1, 1.5, 7 / 3, rng.uniform(1, 50), 10 ** rng.uniform(0, 6)]) for _ in range(k)]
        rows = Rows([OneWayAnova.from_f(0.3, k, alloc)])
        ratios, total, top = rows._one_ratios()
        assert ratios == rows.ratios[0].tolist()
        assert float.hex(total) == float.hex(float(rows.ratios.sum(axis=1)[0]))
        assert float.hex(top) == float.hex(float(rows.ratios[0].max()))


def test_smallest_unit_of_one_equals_the_generic_and_the_row_form():
    """A Rows of one's smallest unit equals FTestDesign.smallest_unit and the row form's, for many allocations."""
    # Source: FTestDesign.smallest_unit (the design's own test_at at m = 1, 2, 3) and
    # Rows.smallest_unit over many rows; allocations near the rounding slack included.
    rng = random.Random(59)
    near_one = [1.0, 1 + 1e-12, 1 + 1e-9, 1 + 2e-9, 1.0000001, 1.5, 2.0]
    designs = []
    for _ in range(3000):
        k = rng.randint(2, 9)
        alloc = None if rng.random() < 0.2 else [rng.choice(near_one + [rng.uniform(1, 3)]) for _ in range(k)]
        designs.append(OneWayAnova.from_f(rng.uniform(0.05, 0.8), k, alloc) if rng.random() < 0.5
                       else OneWayAnova.from_means([rng.uniform(-2, 2) for _ in range(k)], 1.5, alloc))
    for cls in CLASSES:  # every class with the default unit search
        designs += [BUILDERS[cls](rng, rng.choice([2, 3, 4])) for _ in range(30)]
    groups: dict = {}
    for d in designs:
        groups.setdefault(rows_key(d), []).append(d)
    units = set()
    for members in groups.values():
        together = Rows(members).smallest_unit() if len(members) > 1 else None
        for i, d in enumerate(members):
            alone = int(Rows([d]).smallest_unit()[0])
            assert alone == d.smallest_unit()
            if together is not None:
                assert alone == int(together[i])
            units.add(alone)
    assert {1, 2} <= units


def test_chi_square_start_of_repeated_rows_is_each_rows_own():
    """λ∞ of rows repeating (df1, α, target), solved once per distinct triple, equals each row's
    own scipy.special.chndtrinc value bit for bit (an independent call per row), NaN targets
    included (they get the fallback). Source: common practice, no source."""
    from scipy import special

    from samplewright.core.planning import _chi_square_noncentrality

    rng = np.random.default_rng(12)
    df1 = rng.choice([1.0, 2.0, 5.0], 400)
    alpha = rng.choice([0.05, 0.01, 0.001], 400)
    target = rng.choice([0.8, 0.9, 0.95, np.nan], 400)
    fallback = np.full(400, -1.0)
    got = _chi_square_noncentrality(df1, alpha, target, fallback)
    for i in range(400):
        lam = special.chndtrinc(special.chdtri(df1[i], alpha[i]), df1[i], 1.0 - target[i])
        expected = lam if np.isfinite(lam) and lam > 0 else -1.0
        assert got[i] == expected or (np.isnan(got[i]) and np.isnan(expected)), i
