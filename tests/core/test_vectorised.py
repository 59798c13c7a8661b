"""Rows of designs answered together equal the same designs answered one at a time, exactly.

The reference is the scalar path (one design, one row) of the same code and the designs'
own ``evaluate``; tolerance 0 unless stated.
"""

from __future__ import annotations

import random

import numpy as np
import pytest

from samplewright.core import planning
from samplewright.core.designs.base import sizes_from_smallest
from samplewright.core.designs.one_way import OneWayAnova
from samplewright.core.errors import InvalidParameter, NoSolution
from samplewright.core.vectorised import Rows, rows_key, sizes_from_rows, stack_signature


def _designs(seed: int, count: int, k: int) -> list[OneWayAnova]:
    rng = random.Random(seed)
    out = []
    for _ in range(count):
        alloc = None if rng.random() < 0.6 else [rng.choice([1, 1.5, 2, 3]) for _ in range(k)]
        if rng.random() < 0.5:
            out.append(OneWayAnova.from_means([rng.uniform(0, 10) for _ in range(k)], rng.uniform(0.5, 8), alloc))
        else:
            out.append(OneWayAnova.from_f(rng.uniform(0.0, 1.5), k, alloc))
    return out


def test_stacked_evaluation_equals_each_design_alone():
    """One stacked evaluate of 300 one-way designs equals each design stacked alone, bit for bit."""
    for means_form in (True, False):
        designs = [d for d in _designs(1, 600, 4) if (d.means is not None) == means_form][:300]
        groups: dict = {}
        for d in designs:
            groups.setdefault(rows_key(d), []).append(d)
        for members in groups.values():
            rows = Rows(members)
            assert rows._stacked is not None
            rng = np.random.default_rng(2)
            m = rng.integers(2, 500, size=rows.count)
            sizes = sizes_from_rows(m, rows.ratios)
            alpha = rng.choice([0.05, 0.01, 1e-6], size=rows.count)
            ev = rows.evaluate(sizes, alpha)
            for i, d in enumerate(members):
                alone = Rows([d]).evaluate(sizes[i:i + 1], alpha[i:i + 1])
                for name in ("power", "df1", "df2", "noncentrality", "critical_value"):
                    assert getattr(ev, name)[i] == getattr(alone, name)[0], name


def test_stacked_evaluation_is_the_designs_own_to_the_last_bits():
    """Stacked and unstacked λ agree to 4 units in the last place (σ² is x·x in one, pow(x, 2) in the other), power to 1e-12."""
    designs = _designs(11, 400, 3)
    for members in _by_key(designs).values():
        rows = Rows(members)
        sizes = sizes_from_rows(np.arange(2, 2 + rows.count), rows.ratios)
        ev = rows.evaluate(sizes, np.full(rows.count, 0.05))
        own = [d.evaluate(sizes[i:i + 1], 0.05) for i, d in enumerate(members)]
        theirs = {name: np.array([getattr(o, name)[0] for o in own]) for name in ("power", "noncentrality")}
        np.testing.assert_array_max_ulp(ev.noncentrality, theirs["noncentrality"], maxulp=4)
        np.testing.assert_allclose(ev.power, theirs["power"], rtol=1e-12, atol=0)  # a 1-ulp λ moves power far less


def _by_key(designs):
    groups: dict = {}
    for d in designs:
        groups.setdefault(rows_key(d), []).append(d)
    return groups


def test_sizes_from_rows_equals_sizes_from_smallest():
    """The row form of the allocation rounding gives the same integers as the per-design form."""
    rng = np.random.default_rng(3)
    ratios = rng.choice([1.0, 1.1, 1.5, 2.0, 3.0, 11.0], size=(200, 5))
    ratios = ratios / ratios.min(axis=1, keepdims=True)
    m = rng.integers(1, 10_000, size=200)
    got = sizes_from_rows(m, ratios)
    for i in range(200):
        assert got[i].tolist() == sizes_from_smallest([m[i]], ratios[i])[0].tolist()


def test_lockstep_sample_sizes_equal_one_at_a_time():
    """sample_size_rows over 120 designs equals planning.sample_size asked of each alone (errors too)."""
    designs = _designs(5, 120, 3)
    designs[7] = OneWayAnova.from_f(0.0, 3)  # zero effect: NoSolution
    designs[9] = OneWayAnova.from_f(1e-5, 3)  # beyond the cap: NoSolution
    groups: dict = {}
    for i, d in enumerate(designs):
        groups.setdefault(rows_key(d), []).append(i)
    rng = random.Random(6)
    targets = [rng.choice([0.5, 0.8, 0.9, 0.99]) for _ in designs]
    alphas = [rng.choice([0.05, 0.01]) for _ in designs]
    for index in groups.values():
        rows = Rows([designs[i] for i in index])
        got, errors = planning.sample_size_rows(rows, alpha=[alphas[i] for i in index],
                                                target_power=[targets[i] for i in index], dropout_rate=0.1)
        for j, i in enumerate(index):
            try:
                alone = planning.sample_size(designs[i], alpha=alphas[i], target_power=targets[i], dropout_rate=0.1)
            except (InvalidParameter, NoSolution) as exc:
                assert repr(errors[j]) == repr(exc)
                continue
            assert errors[j] is None and got.result(j) == alone


def test_lockstep_detectable_effects_equal_one_at_a_time():
    """detectable_rows over 100 layouts equals planning.detectable_effect asked of each alone."""
    rng = random.Random(8)
    layouts = [OneWayAnova(groups=3, ratios=np.array(r, dtype=float), cohens_f=0.0)
               for r in ([1, 1, 1], [1, 2, 2], [1, 1.5, 3])]
    rows = Rows([layouts[i % 3] for i in range(100)])
    sizes = sizes_from_rows([rng.randint(2, 300) for _ in range(100)], rows.ratios)
    alpha = [rng.choice([0.05, 0.001]) for _ in range(100)]
    target = [rng.choice([0.5, 0.8, 0.95]) for _ in range(100)]
    got, errors = planning.detectable_rows(rows, sizes=sizes, alpha=alpha, target_power=target)
    assert errors == [None] * 100
    for i in range(100):
        alone = planning.detectable_effect(layouts[i % 3], sizes=sizes[i], alpha=alpha[i], target_power=target[i])
        assert got.result(i) == alone


def test_non_stackable_designs_fall_back_to_their_own_evaluate():
    """A design class that is not registered as stackable is evaluated with its own methods, row by row."""

    class Plain(OneWayAnova):
        pass

    designs = [Plain.from_f(f, 3) for f in (0.1, 0.2, 0.3)]
    assert stack_signature(designs[0]) is None
    rows = Rows(designs)
    sizes = np.full((3, 3), 20)
    ev = rows.evaluate(sizes, np.full(3, 0.05))
    for i, d in enumerate(designs):
        assert ev.power[i] == d.evaluate(sizes[i:i + 1], 0.05).power[0]


@pytest.mark.parametrize("n", [1, 2])
def test_sizes_for_rows_errors_match_scalar(n):
    """sizes_for_rows raises per row exactly what sizes_for raises alone."""
    designs = [OneWayAnova.from_f(0.3, 3), OneWayAnova.from_f(0.3, 3, allocation=[1, 2, 2])]
    sizes, errors = planning.sizes_for_rows(Rows(designs), [n, n])
    for i, d in enumerate(designs):
        try:
            alone = planning.sizes_for(d, n)
        except InvalidParameter as exc:
            assert repr(errors[i]) == repr(exc)
        else:
            assert errors[i] is None and sizes[i].tolist() == alone.tolist()
