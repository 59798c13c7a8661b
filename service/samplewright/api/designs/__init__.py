"""The registry of designs the API serves, keyed by ``design.type``.

Each adapter carries its marshmallow schema (the contract), a builder for the core
design, and the reports in the design's natural units. The OpenAPI document and the
``design`` field's discriminated union are generated from this one registry.
"""

from __future__ import annotations

from .one_way import OneWayAnovaAdapter

ADAPTERS = {adapter.type: adapter for adapter in (OneWayAnovaAdapter(),)}
#: One schema instance per design, built once (schema construction is not free).
SCHEMAS = {name: adapter.schema() for name, adapter in ADAPTERS.items()}
