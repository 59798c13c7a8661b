"""For every registered design: the simulated test reproduces the analytic power of its example.

Parametrised over the registry at collection time, so a design is checked as soon as it is
registered. Each case runs ``POST /v1/simulate`` on ``adapter.example`` at
``n_per_group = adapter.example_sizes`` (normal errors, a fixed seed per design) and asks

    |empirical − analytic| ≤ approximation_tolerance + 4 SE,   SE = √(a(1 − a)/R),

with ``approximation_tolerance`` 0 for exact methods; an adapter whose analytic power is a
published approximation (Welch, ANCOVA) sets the attribute to its documented error. Source
of every expected value: seeded simulation, 4 MC SE. A design lacking ``example`` or a
simulator is skipped with the reason (listed by ``-ra``), not failed.
"""

from __future__ import annotations

import json
import math
import zlib

import pytest

from samplewright import create_app
from samplewright.api.designs import ADAPTERS, SCHEMAS
from samplewright.config import Settings
from samplewright.core import planning
from samplewright.core import simulate as mc

#: Replicates per design (fewer when the budget requires): SE ≤ 0.0036, a few tens of ms each.
REPLICATES = 20_000
#: Analytic power of an example must lie here for the agreement to say something.
INFORMATIVE = (0.15, 0.97)


@pytest.fixture(scope="module")
def client():
    """A test client of an app built from explicit default settings."""
    return create_app(Settings()).test_client()


def _prepared(kind: str):
    """(adapter, design, sizes) of the design's example, or a skip naming what is missing."""
    adapter = ADAPTERS[kind]
    example = getattr(adapter, "example", None)
    if example is None or getattr(adapter, "example_sizes", None) is None:
        pytest.skip(f"{kind}: adapter has no `example`/`example_sizes` yet")
    design = adapter.build(SCHEMAS[kind].load(example), None)
    if not mc.has_simulator(design):
        pytest.skip(f"{kind}: no simulator registered for {type(design).__name__} yet")
    return adapter, design, planning.sizes_for(design, adapter.example_sizes)


@pytest.mark.parametrize("kind", sorted(ADAPTERS))
def test_simulation_agrees_with_analytic_power(client, kind):
    """The seeded simulation of the example agrees with the analytic power (4 MC SE, plus any documented approximation error)."""
    adapter, design, sizes = _prepared(kind)
    replicates = min(REPLICATES, mc.max_replicates(design, sizes))
    body = {"n_per_group": adapter.example_sizes, "design": adapter.example, "replicates": replicates,
            "seed": zlib.crc32(kind.encode())}
    response = client.post("/v1/simulate", data=json.dumps(body), content_type="application/json")
    assert response.status_code == 200, response.get_data(as_text=True)[:2000]
    out = response.get_json()
    a, p = out["analytic_power"], out["power"]
    tolerance = getattr(adapter, "approximation_tolerance", None) or 0.0
    se = math.sqrt(a * (1 - a) / out["replicates"])
    # Seeded simulation, 4 MC SE (plus the method's documented approximation error, if any).
    assert abs(p - a) <= tolerance + 4 * se, (
        f"{kind}: simulated {p:.5f} vs analytic {a:.5f} (SE {se:.5f}, {out['difference_in_se']:+.2f} SE; "
        f"allowed {tolerance:g} + 4 SE) at group sizes {out['group_sizes']}"
    )


@pytest.mark.parametrize("kind", sorted(ADAPTERS))
def test_example_power_is_informative(client, kind):
    """The example's analytic power is neither near α nor near 1, so the agreement check has teeth."""
    adapter, _, _ = _prepared(kind)
    body = {"n_per_group": adapter.example_sizes, "design": adapter.example}
    response = client.post("/v1/power", data=json.dumps(body), content_type="application/json")
    assert response.status_code == 200, response.get_data(as_text=True)[:2000]
    power = response.get_json()["power"]
    # Common practice, no source: a check at power ≈ 1 cannot tell a right formula from a wrong one.
    assert INFORMATIVE[0] <= power <= INFORMATIVE[1], f"{kind}: example power {power:.4f}"
