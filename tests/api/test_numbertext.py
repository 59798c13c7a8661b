"""The array number writer gives exactly the text of Python's JSON encoder.

Reference: Python's own JSON encoder (``json.dumps``, floats as ``float.__repr__``, the
shortest decimal that reads back); the comparison is exact, character for character
(tolerance 0). The inputs are seeded families chosen for the cases the array writer treats
separately (powers of two and of ten and their neighbours, short decimals, exact halves,
the edges of the range it writes itself, values the encoder writes instead) and
hypothesis-drawn doubles.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from samplewright.api.numbertext import number_texts, numbers_text


def _encoder(values: np.ndarray, missing: np.ndarray | None = None) -> str:
    items = [json.dumps(v) for v in values.tolist()]
    if missing is not None:
        for row in np.flatnonzero(missing).tolist():
            items[row] = "null"
    return ",".join(items)


def _families(rng: np.random.Generator, count: int) -> dict[str, np.ndarray]:
    toward = np.where(rng.random(count) < 0.5, 0.0, np.inf)
    pow10 = 10.0 ** rng.integers(-5, 18, count)
    return {
        "uniform": rng.uniform(0, 1, count),
        "log-uniform": 10 ** rng.uniform(-6, 18, count),
        "any bits": rng.integers(-(2**63), 2**63, count, dtype=np.int64).view(np.float64),
        "one binade each": ((rng.integers(1010, 1076, count) << 52) | rng.integers(0, 2**52, count)).view(np.float64),
        "three decimals": np.round(rng.uniform(0, 1000, count), 3),
        "short decimals": rng.integers(1, 10**6, count) * 10.0 ** rng.integers(-9, 10, count),
        "whole numbers": rng.integers(0, 10**16, count).astype(float),
        "powers of two": 2.0 ** rng.integers(-30, 60, count),
        "powers of ten": pow10,
        "next to powers of ten": np.nextafter(pow10, toward),
        "two away from powers of ten": np.nextafter(np.nextafter(pow10, toward), toward),
        "next to short decimals": np.nextafter(np.round(rng.uniform(0, 100, count), 2), toward),
        "just below one": 1 - rng.integers(0, 2**20, count) * 2.0**-53,
        "noncentralities": rng.integers(2, 800, count) * np.round(rng.uniform(0, 1, count), 3) ** 2,
        "few distinct": rng.choice(rng.uniform(0, 10, 40), count),
        "edges": np.array([0.0, -0.0, 1.0, 0.5, 1e-3, 0.0009999999999999998, 0.0010000000000000002, 1e-4, 1e15,
                           999999999999999.9, 1e16, 123456789012345.67, 5e-324, 2.2250738585072014e-308,
                           1.7976931348623157e308, 0.1, 0.2, 0.3, 2.5, 0.125] * 10),
    }


@pytest.mark.parametrize("seed", [1, 2])
def test_floats_are_written_as_the_encoder_writes_them(seed):
    """Each family of 20,000 doubles, with and without null rows, gives the encoder's text exactly."""
    rng = np.random.default_rng(seed)
    for name, values in _families(rng, 20_000).items():
        values = values[np.isfinite(values)]
        assert numbers_text(values, None) == _encoder(values), name
        missing = rng.random(values.size) < 0.1
        assert numbers_text(values, missing) == _encoder(values, missing), name


@settings(max_examples=300, deadline=None)
@given(st.lists(st.floats(allow_nan=False, allow_infinity=False), min_size=1, max_size=80))
def test_any_doubles_are_written_as_the_encoder_writes_them(values):
    """Hypothesis-drawn finite doubles give the encoder's text exactly."""
    array = np.array(values, dtype=float)
    assert numbers_text(array, None) == _encoder(array)
    tiled = np.tile(array, 4)  # 64 or more: the path that looks for repeats
    assert numbers_text(tiled, None) == _encoder(tiled)


def test_integers_are_written_as_the_encoder_writes_them():
    """Counts, signed and 17-digit integers, with and without null rows, give the encoder's text exactly."""
    rng = np.random.default_rng(3)
    for values in (rng.integers(0, 1000, 5000), rng.integers(0, 10**16, 5000), np.array([0, 9999, 10**4, 10**16 - 1]),
                   rng.integers(-(10**17), 10**17, 500), np.array([5])):
        assert numbers_text(values, None) == _encoder(values)
        missing = rng.random(values.size) < 0.2
        assert numbers_text(values, missing) == _encoder(values, missing)


def test_a_float_that_is_not_finite_is_refused_as_the_encoder_refuses_it():
    """inf outside the null rows raises, as json.dumps(allow_nan=False) does (never written as text)."""
    with pytest.raises(ValueError):
        numbers_text(np.array([0.5, np.inf] * 40), None)


def test_number_texts_are_each_numbers_own_text():
    """number_texts gives json.dumps of each value alone, for floats with repeats and for integers."""
    rng = np.random.default_rng(5)
    for values in (rng.uniform(0, 50, 300), rng.choice([0.05, 0.01, 0.1], 300), rng.integers(0, 500, 300),
                   np.array([2.0]), np.array([], dtype=float)):
        assert number_texts(values) == [json.dumps(v) for v in values.tolist()]
