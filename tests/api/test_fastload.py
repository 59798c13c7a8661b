"""fastload.sharing(): identical inputs share one validated result, and only identical ones.

The reference is marshmallow's own ``Schema.load`` on a fresh copy of each input: inside
``sharing()`` every load must give the same result and the same error messages as that
reference (exact equality; results compared with their types), and two loads return one
object only for inputs equal value for value, type for type and in the same key order.
"""

from __future__ import annotations

import copy
import enum
import random

import numpy
import pytest
from marshmallow import Schema, ValidationError, fields

from samplewright.api.designs import SCHEMAS
from samplewright.api.fastload import FastLoader, _Shared, sharing
from samplewright.api.schemas import POWER_REQUEST, SAMPLE_SIZE_REQUEST

from .test_fields_fast import _typed  # value with the type of every part spelled out


class _Raw(Schema):
    """Keeps what it is given, so that any confusion of inputs shows in the result."""

    v = fields.Raw(allow_none=True)
    w = fields.Raw(allow_none=True)


class _Small(enum.IntEnum):
    FIVE = 5


class _Text(str):
    pass


#: Values that compare equal (or print alike) in some sense but are not the same input.
_CONFUSABLE = [5, 5.0, True, 1, 1.0, False, 0, 0.0, -0.0, "5", "5.0", "true", None, [5], [5.0], [True], (5,),
               {"x": 5}, {"x": 5.0}, {"x": True}, b"5", [], {}, "", 10**30, float(10**30)]


def test_sharing_never_confuses_5_and_5_0_and_true_and_the_string():
    """5, 5.0, True, 1, 0.0, -0.0, "5", [5], (5,) and the like each get their own result (common practice, no source)."""
    loader = FastLoader(_Raw(), shareable=True)
    with sharing():
        for _ in range(3):  # later rounds are answered from the shared results
            for value in _CONFUSABLE:
                for body in ({"v": value}, {"w": 1, "v": value}):
                    got = loader.load(body)
                    assert _typed(got) == _typed(_Raw().load(copy.deepcopy(body)))


def test_identical_inputs_share_one_object_and_key_order_counts():
    """Equal inputs share the validated dict; the same members in another order do not (sharing() docstring)."""
    loader = FastLoader(_Raw(), shareable=True)
    with sharing():
        first = loader.load({"v": [1, 2.5], "w": "é"})
        assert loader.load({"v": [1, 2.5], "w": "é"}) is first
        assert loader.load({"w": "é", "v": [1, 2.5]}) is not first
        assert loader.load({"v": [1, 2.5], "w": "é"}) is first
    with sharing():  # a new block starts empty
        assert loader.load({"v": [1, 2.5], "w": "é"}) is not first


def test_inputs_holding_other_objects_are_not_shared():
    """An IntEnum, a str subclass, a bytearray, a numpy number or any object is never shared, so marshmallow sees each (common practice, no source)."""
    loader = FastLoader(_Raw(), shareable=True)
    odd = [_Small.FIVE, _Text("5"), bytearray(b"5"), numpy.float64(5.0), numpy.int64(5), object(), [_Small.FIVE],
           {"x": _Text("x")}]
    with sharing():
        for value in odd:
            a, b = loader.load({"v": value}), loader.load({"v": value})
            assert a is not b and a == b == {"v": value}
            assert type(a["v"]) is type(value)


def test_key_tells_confusable_values_apart():
    """The input keys of the confusable values are all distinct, and refused for non-plain objects (common practice, no source)."""
    shared = _Shared()
    keys = [shared.key(value) for value in _CONFUSABLE]
    assert None not in keys and len(set(keys)) == len(keys)
    assert shared.key({"a": 1, "b": 2}) != shared.key({"b": 2, "a": 1})
    for value in (_Small.FIVE, _Text("a"), bytearray(b"a"), numpy.float64(1.0), object(), {"a": [object()]}, {_Text("k"): 1}):
        assert shared.key(value) is None


def test_a_refused_input_leaves_nothing_behind():
    """After an input is refused midway, the next key is what a fresh block writes (no back-reference to the refused input's objects; common practice, no source)."""
    inner = [1, 2]
    shared = _Shared()
    assert shared.key({"a": inner, "b": object()}) is None
    assert shared.key({"a": inner}) == _Shared().key({"a": inner})
    assert shared.key({"a": inner, "b": inner}) == _Shared().key({"a": inner, "b": inner})


def _design(rng: random.Random, kind: str) -> dict:
    """A design body of ``kind`` with members drawn from confusable values, often valid."""
    numbers = [5, 5.0, True, "5", 0.1, 1e-12, 0.25, 2, 3, 3.0, -0.0, 0, None, [1, 2, 3], [1.0, 2.0, 3.0], [1, True, 3]]
    names = sorted(SCHEMAS[kind].load_fields)
    body = {"type": kind}
    for name in rng.sample(names, rng.randint(0, len(names))):
        if name != "type":
            body[name] = rng.choice(numbers)
    if rng.random() < 0.1:
        body["unknown_member"] = rng.choice(numbers)
    return body


@pytest.mark.parametrize("seed", range(4))
def test_shared_loads_equal_marshmallow_on_random_designs(seed):
    """Inside sharing(), each design's result (with types) or error messages equal Schema.load's, repeats included (seeded random bodies)."""
    rng = random.Random(seed)
    kinds = sorted(SCHEMAS)
    bodies = [_design(rng, rng.choice(kinds)) for _ in range(150)]
    bodies += [copy.deepcopy(rng.choice(bodies)) for _ in range(150)]  # equal inputs, other objects
    rng.shuffle(bodies)
    with sharing():
        for body in bodies:
            schema = SCHEMAS[body["type"]]
            loader = FastLoader(schema, shareable=True)
            try:
                expected = schema.load(copy.deepcopy(body))
            except ValidationError as exc:
                with pytest.raises(ValidationError) as got:
                    loader.load(body)
                assert got.value.messages == exc.messages
            else:
                assert _typed(loader.load(body)) == _typed(expected)


def test_requests_with_shared_designs_equal_marshmallow():
    """Whole requests loaded inside sharing() equal Schema.load, designs shared or not (seeded random bodies)."""
    rng = random.Random(7)
    designs = [{"type": "one_way_anova", "cohens_f": rng.choice([0.25, 0.4, 1, True, "0.25"]), "groups": rng.choice([3, 3.0, True, 4])}
               for _ in range(20)]
    with sharing():
        for i in range(400):
            schema = POWER_REQUEST if i % 2 else SAMPLE_SIZE_REQUEST
            body = {"design": copy.deepcopy(rng.choice(designs)), "alpha": rng.choice([0.05, 0.01, 5e-2])}
            body.update({"n_per_group": rng.choice([10, 10.0, True])} if i % 2 else {"target_power": rng.choice([0.8, 0.9])})
            try:
                expected = schema.load(copy.deepcopy(body))
            except ValidationError as exc:
                with pytest.raises(ValidationError) as got:
                    FastLoader(schema).load(body)
                assert got.value.messages == exc.messages
            else:
                assert _typed(FastLoader(schema).load(body)) == _typed(expected)


def test_callable_load_default_is_called_per_load():
    """A callable load default gives each load a fresh value, as marshmallow's Field.deserialize does (common practice, no source)."""
    class WithDefault(Schema):
        items = fields.List(fields.Integer(), load_default=list)
        level = fields.Float(load_default=0.5)

    loader = FastLoader(WithDefault())
    first, second = loader.load({}), loader.load({})
    assert first == second == WithDefault().load({}) == {"items": [], "level": 0.5}
    assert first["items"] is not second["items"]
