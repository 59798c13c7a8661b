"""The columnar route's number writer and body reader give what the standard ones give.

Reference: Python's own JSON encoder (``json.dumps``, floats as ``float.__repr__``, the
shortest decimal that reads back) and the strict body reader every other route uses; the
comparison is exact, character for character (tolerance 0). The inputs are seeded families
chosen for the cases the array writer treats separately (powers of two and of ten and their
neighbours, short decimals, exact halves, the edges of the range it writes itself, values
the encoder writes instead) and hypothesis-drawn doubles.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from samplewright.api import table as table_module
from samplewright.app import create_app
from samplewright.config import Settings

TABLE = "/v1/table"
DESIGN = {"type": "one_way_anova"}


@pytest.fixture(scope="module")
def client():
    """A test client of an app built from explicit settings."""
    return create_app(Settings(max_body_bytes=64 * 1024, max_batch_bytes=4 * 1024 * 1024)).test_client()


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
        assert table_module._numbers_text(values, None) == _encoder(values), name
        missing = rng.random(values.size) < 0.1
        assert table_module._numbers_text(values, missing) == _encoder(values, missing), name


@settings(max_examples=300, deadline=None)
@given(st.lists(st.floats(allow_nan=False, allow_infinity=False), min_size=1, max_size=80))
def test_any_doubles_are_written_as_the_encoder_writes_them(values):
    """Hypothesis-drawn finite doubles give the encoder's text exactly."""
    array = np.array(values, dtype=float)
    assert table_module._numbers_text(array, None) == _encoder(array)
    tiled = np.tile(array, 4)  # 64 or more: the path that looks for repeats
    assert table_module._numbers_text(tiled, None) == _encoder(tiled)


def test_integers_are_written_as_the_encoder_writes_them():
    """Counts, signed and 17-digit integers, with and without null rows, give the encoder's text exactly."""
    rng = np.random.default_rng(3)
    for values in (rng.integers(0, 1000, 5000), rng.integers(0, 10**16, 5000), np.array([0, 9999, 10**4, 10**16 - 1]),
                   rng.integers(-(10**17), 10**17, 500), np.array([5])):
        assert table_module._numbers_text(values, None) == _encoder(values)
        missing = rng.random(values.size) < 0.2
        assert table_module._numbers_text(values, missing) == _encoder(values, missing)


def test_a_float_that_is_not_finite_is_refused_as_the_encoder_refuses_it():
    """inf outside the null rows raises, as json.dumps(allow_nan=False) does (never written as text)."""
    with pytest.raises(ValueError):
        table_module._numbers_text(np.array([0.5, np.inf] * 40), None)


def test_response_columns_are_the_encoders_text(client):
    """The body's result columns are, byte for byte, the encoder's text of the parsed values."""
    rng = np.random.default_rng(4)
    columns = {"cohens_f": np.round(rng.uniform(0, 2, 500), 3).tolist(), "groups": rng.integers(2, 9, 500).tolist(),
               "n_per_group": rng.integers(2, 300, 500).tolist(),
               "alpha": rng.choice([0.05, 1e-12, 1e-5, 0.5], 500).tolist()}
    columns["cohens_f"][:3] = [0.0, 20.0, 1e-9]  # a zero effect, an invalid row (null), a tiny effect
    response = client.post(TABLE, json={"operation": "power", "design": DESIGN, "columns": columns,
                                        "results": ["power", "noncentrality", "critical_value", "n_total",
                                                    "cohens_f", "eta_squared"]})
    assert response.status_code == 200
    text = response.get_data(as_text=True)
    for name, values in json.loads(text)["columns"].items():
        assert f'"{name}":{json.dumps(values, separators=(",", ":"))}' in text, name


def test_deep_nesting_inside_a_column_is_refused_as_every_route_refuses_it(client):
    """33 levels of arrays inside a column are a 400 with /v1/power's message; many shallow ones are not."""
    deep = '{"operation":"power","design":{"type":"one_way_anova"},"columns":{"groups":' + "[" * 31 + "]" * 31 + "}}"
    response = client.post(TABLE, data=deep, content_type="application/json")
    single = client.post("/v1/power", data=deep, content_type="application/json")
    assert response.status_code == single.status_code == 400
    assert response.get_json()["detail"] == single.get_json()["detail"]
    shallow = {"operation": "power", "design": DESIGN,
               "columns": {"cohens_f": [[0.2]] * 40, "groups": 2, "n_per_group": 5}}
    response = client.post(TABLE, json=shallow)
    assert response.status_code == 200
    assert response.get_json()["summary"]["failed"] == 40
