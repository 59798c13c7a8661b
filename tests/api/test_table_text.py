"""The columnar route's response text and body reader give what the standard ones give.

Reference: Python's own JSON encoder (``json.dumps``) for the response's columns and the
strict body reader every other route uses for the body; the comparison is exact, character
for character. The number writer itself is checked in test_numbertext.py.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from samplewright.app import create_app
from samplewright.config import Settings

TABLE = "/v1/table"
DESIGN = {"type": "one_way_anova"}


@pytest.fixture(scope="module")
def client():
    """A test client of an app built from explicit settings."""
    return create_app(Settings(max_body_bytes=64 * 1024, max_batch_bytes=4 * 1024 * 1024)).test_client()


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
