"""The registry of designs the API serves, keyed by ``design.type``.

Each adapter carries its marshmallow schema (the contract), a builder for the core
design, and the reports in the design's natural units. The OpenAPI document and the
``design`` field's discriminated union are generated from this one registry.
"""

from __future__ import annotations

from .ancova import OneWayAncovaAdapter
from .contrast import ContrastAdapter
from .factorial import FactorialAnovaAdapter
from .one_way import OneWayAnovaAdapter
from .pairwise import PairwiseComparisonsAdapter
from .random_effects import RandomEffectsAnovaAdapter
from .repeated_measures import RepeatedMeasuresAdapter
from .t_tests import OneSampleTAdapter, PairedTAdapter, TwoSampleTAdapter
from .welch import WelchAnovaAdapter

#: The F-family designs beyond the one-way layout.
_F_FAMILY = (
    FactorialAnovaAdapter(), RandomEffectsAnovaAdapter(), OneWayAncovaAdapter(), RepeatedMeasuresAdapter(),
    WelchAnovaAdapter(),
)

#: The t-based designs and the comparisons built on them.
_T_FAMILY = (
    TwoSampleTAdapter(), OneSampleTAdapter(), PairedTAdapter(), ContrastAdapter(), PairwiseComparisonsAdapter(),
)

ADAPTERS = {adapter.type: adapter for adapter in (OneWayAnovaAdapter(), *_F_FAMILY, *_T_FAMILY)}
#: One schema instance per design, built once (schema construction is not free).
SCHEMAS = {name: adapter.schema() for name, adapter in ADAPTERS.items()}
