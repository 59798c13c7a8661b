"""FastLoader with the fields' fast deserializers: Schema.load's result and errors, and its key writers.

The reference is marshmallow's own ``Schema.load`` on a fresh copy of each input. Requests
are every design's catalogue example in each question, then the same with one member (of
the request or of its design) replaced by a hostile or boundary value: results must be
equal with their types, errors equal message for message.
"""

from __future__ import annotations

import copy
import random

import pytest
from marshmallow import ValidationError

from samplewright.api import fastload
from samplewright.api.designs import ADAPTERS, SCHEMAS
from samplewright.api.fastload import _DEFER, FastLoader, _Shared, sharing
from samplewright.api.schemas import DETECTABLE_REQUEST, POWER_REQUEST, SAMPLE_SIZE_REQUEST

from .test_fields_fast import VALUES, _typed

_MISSING = object()
#: Values whose message is the same for a copy (object() echoes its address).
_COPYABLE = [v for v in VALUES if " at 0x" not in repr(v)]


def _requests(kind: str) -> list[tuple[object, dict]]:
    """The example design of ``kind`` in a power, a sample-size and a detectable-effect request."""
    design = dict(ADAPTERS[kind].example)
    layout = {k: v for k, v in design.items() if k not in ADAPTERS[kind].effect_fields}
    return [
        (POWER_REQUEST, {"design": design, "n_per_group": ADAPTERS[kind].example_sizes, "alpha": 0.05}),
        (SAMPLE_SIZE_REQUEST, {"design": design, "target_power": 0.8, "alpha": 0.01, "dropout_rate": 0.1}),
        (DETECTABLE_REQUEST, {"design": layout, "n_per_group": 10, "target_power": 0.9}),
    ]


def _check(schema, body, loader) -> None:
    try:
        expected = schema.load(copy.deepcopy(body))
    except ValidationError as exc:
        with pytest.raises(ValidationError) as got:
            loader.load(body)
        assert got.value.messages == exc.messages, body
    else:
        assert _typed(loader.load(body)) == _typed(expected), body


@pytest.mark.parametrize("kind", sorted(SCHEMAS))
def test_examples_take_the_fast_path_and_equal_marshmallow(kind):
    """Each design's example requests load without marshmallow's Schema.load, to its result (catalogue examples)."""
    for schema, body in _requests(kind):
        if schema is DETECTABLE_REQUEST:
            continue  # some layouts need sizes given as a list; the mutations below cover them
        assert FastLoader(schema)._fast(body) is not _DEFER, body
        _check(schema, body, FastLoader(schema))


@pytest.mark.parametrize("kind", sorted(SCHEMAS))
def test_requests_with_one_hostile_member_equal_marshmallow(kind):
    """One member of the request or its design replaced by a hostile or boundary value: Schema.load's result or messages (seeded random choice)."""
    rng = random.Random(kind)
    names = sorted(SCHEMAS[kind].load_fields) + ["unknown_member"]
    for schema, body in _requests(kind):
        loader = FastLoader(schema)
        for _ in range(120):
            changed = copy.deepcopy(body)
            where = changed["design"] if rng.random() < 0.7 else changed
            name = rng.choice(names if where is changed["design"] else sorted(schema.load_fields) + ["group_sizes"])
            value = rng.choice(_COPYABLE + [_MISSING])
            if value is _MISSING:
                where.pop(name, None)
            else:
                where[name] = copy.deepcopy(value)
            if rng.random() < 0.3:  # sizes as a list, with the right count or not
                changed.pop("n_per_group", None)
                changed["group_sizes"] = [rng.choice([5, 10, 10.0, 20]) for _ in range(rng.randint(1, 4))]
            _check(schema, changed, loader)
            with sharing():  # shared designs: the same results
                _check(schema, changed, loader)
                _check(schema, changed, loader)


def test_a_block_hands_its_key_writer_on_clean():
    """A finished block keys nothing more; the next block's keys equal a fresh writer's; nested blocks write apart (common practice, no source)."""
    body = {"a": [1, 2.5], "b": "x"}
    with sharing():
        outer = fastload._SHARED.get()
        first = outer.key(body)
        with sharing():
            inner = fastload._SHARED.get()
            assert inner._pickler is not outer._pickler
            assert inner.key(body) == first
        assert outer.key(body) == first
    assert outer.key(body) is None and inner.key(body) is None
    with sharing():
        assert fastload._SHARED.get().key(body) == _Shared().key(body) == first
    assert fastload._SHARED.get() is None
