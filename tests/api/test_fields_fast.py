"""fast_deserializer() of the strict fields: deserialize's own value and type, or a refusal.

The reference is the field's ``deserialize`` (marshmallow's Field.deserialize around our
``_deserialize`` and validators). For every value the fast function either raises
ValidationError (fastload then asks marshmallow, whose messages are the ones reported) or
returns exactly what ``deserialize`` returns, type included; and it accepts every value made
of exact floats, ints, strs and lists that ``deserialize`` accepts, or it would save nothing.
"""

from __future__ import annotations

import copy
import enum
import math
import sys

import numpy
import pytest
from marshmallow import ValidationError

from samplewright.api.designs import SCHEMAS
from samplewright.api.fields import (
    Bounded,
    BoundedList,
    StrictFloat,
    StrictInteger,
    TinyNumber,
    _test_of,
    choice,
)
from samplewright.api.schemas import (
    DETECTABLE_REQUEST,
    POWER_REQUEST,
    SAMPLE_SIZE_REQUEST,
    DesignField,
)

_REFUSED = object()


class _Level(enum.IntEnum):
    TWO = 2


class _Real(float):
    pass


class _Items(list):
    pass


def _typed(value):
    """value with the type of every part spelled out, so 5 and 5.0 (or -0.0 and 0.0) differ."""
    if isinstance(value, dict):
        return ("dict", [(_typed(k), _typed(v)) for k, v in value.items()])
    if isinstance(value, list | tuple):
        return (type(value).__name__, [_typed(v) for v in value])
    return (type(value).__name__, repr(value))


def _near(x: float) -> list[float]:
    return [math.nextafter(x, -math.inf), x, math.nextafter(x, math.inf)]


#: Bounds of the fields (0, 1, 2, 0.99, 1e6, 1e12, 0.9999, 0.5, 1e-12, 100, 10) and the values either side.
_LIMITS = [0.0, 1.0, 2.0, 0.99, 0.9, 0.9999, 0.5, 1e-12, 10.0, 100.0, 1000.0, 1e6, 1e12, 1e9, -1.0, -1e12]
_SCALARS = (
    [v for x in _LIMITS for v in _near(x)] + [-x for x in _LIMITS]
    + [0, 1, 2, 3, 5, 99, 100, 101, 10**6, 10**9, 10**12, 10**12 + 1, 2**63, 10**308, 10**400, -1, -(10**400),
       -0.0, 0.25, 2.5, 3.0, 20.0, 1e300, 5e-324, math.inf, -math.inf, math.nan, True, False, None,
       "0.5", "2", "", "one_way_anova", "two-sided", "less", "greater", "bonferroni", "holm", "factor_a",
       _Level.TWO, _Real(0.5), numpy.float64(0.5), numpy.int64(2), TinyNumber("1e-400"), b"1", object()]
)
_LISTS = (
    [[], [1], [1, 2], [1.0, 2.0, 3.0], [1, 2.5, 3], [0.5, 1.0], [1, 1000], [1, 1000.0000001], [1e-6, 1e-3],
     [1e-6, 1.1e-3], [1, True], [1, None], [1, "2"], [1, math.nan], [1, math.inf], [[1, 2], [3, 4]],
     [[1.0, 2.0], [3.0, 4.0], [5.0, 6.0]], [[1, 2], [3]], [1e12, -1e12], [math.nextafter(1e12, 2e12), 0],
     [1, 2, 3, 4, 5, 6, 7, 8, 9, 10], list(range(1, 102)), [0.2, 0.2, -0.4], [1, -1], [0, 0],
     [TinyNumber("1e-400"), 1.0], [_Real(1.0), 2.0], (1.0, 2.0), _Items([1.0, 2.0]), {"a": 1}, [[1, 2], [3, True]]]
)
VALUES = _SCALARS + _LISTS


def _fields():
    """Every non-design field of the request and design schemas, plus a few other shapes."""
    out = []
    for schema in (*SCHEMAS.values(), POWER_REQUEST, SAMPLE_SIZE_REQUEST, DETECTABLE_REQUEST):
        for name, field in schema.load_fields.items():
            if not isinstance(field, DesignField):
                out.append((f"{type(schema).__name__}.{name}", field))
    out += [
        ("float", StrictFloat()),
        ("float_open", StrictFloat(validate=Bounded(min=0, max=1, min_inclusive=False, max_inclusive=False))),
        ("float_max_only", StrictFloat(validate=Bounded(max=0.5, max_inclusive=False))),
        ("float_two_bounds", StrictFloat(validate=[Bounded(min=-1), Bounded(max=1)])),
        ("float_false", StrictFloat(validate=lambda v: v != 0.5)),
        ("float_none_ok", StrictFloat(allow_none=True)),
        ("int_min_only", StrictInteger(validate=Bounded(min=2))),
        ("choice", choice(["a", "b"])),
        ("list_of_ints", BoundedList(StrictInteger(validate=Bounded(min=1, max=10)), min_items=1, max_items=3)),
        ("list_three_checks", BoundedList(StrictFloat(), min_items=0, max_items=5,
                                          validate=[_below_ten, _not_two_items])),
    ]
    return out


def _below_ten(items):
    if sum(items) >= 10:
        raise ValidationError("sum too large")


def _not_two_items(items):
    if len(items) == 2:
        raise ValidationError("two items")


#: Fields whose validator returns False for some values: marshmallow 4 passes such a value,
#: the fast path leaves it to marshmallow (a refusal, never another result).
_REFUSES_SOME_VALID = {"float_false"}


FIELDS = _fields()


def _outcome(call, value):
    try:
        return call(value)
    except ValidationError:
        return _REFUSED


def _plain(value) -> bool:
    if type(value) in (float, int, str):
        return True
    return type(value) is list and all(_plain(v) for v in value)


@pytest.mark.parametrize("name, field", FIELDS, ids=[name for name, _ in FIELDS])
def test_fast_deserializer_agrees_with_deserialize(name, field):
    """Each value: refused, or deserialize's value with its type; accepted when plain and valid (common practice, no source)."""
    fast = field.fast_deserializer()
    assert fast is not None
    for value in VALUES:
        expected = _outcome(field.deserialize, copy.deepcopy(value))
        got = _outcome(fast, value)
        if got is _REFUSED:
            assert expected is _REFUSED or not _plain(value) or name in _REFUSES_SOME_VALID, (name, value)
        else:
            assert expected is not _REFUSED, (name, value)
            assert _typed(got) == _typed(expected), (name, value)


def test_bounded_test_matches_the_validator_at_its_limits():
    """The compiled Bounded check passes exactly the finite floats and ints Bounded passes (common practice, no source)."""
    values = [v for x in (-2.0, -1.0, 0.0, 0.5, 1.0, 2.0) for v in _near(x)] + [-2, -1, 0, 1, 2, 10**400, -(10**400)]
    values += [sys.float_info.max, -sys.float_info.max, 5e-324]
    for lo in (None, -1, 0.0, 0.5):
        for hi in (None, 0.5, 1, 2.0):
            for lo_in in (True, False):
                for hi_in in (True, False):
                    validator = Bounded(min=lo, max=hi, min_inclusive=lo_in, max_inclusive=hi_in)
                    test = _test_of(validator)
                    for value in values:
                        assert test(value) == (_outcome(validator, value) is not _REFUSED), (lo, hi, lo_in, hi_in, value)


def test_fields_with_their_own_deserialize_get_no_fast_path():
    """A subclass that changes _deserialize, or a field with pre/post-load hooks, offers no fast deserializer (common practice, no source)."""

    class Rounded(StrictFloat):
        def _deserialize(self, value, attr, data, **kwargs):
            return round(super()._deserialize(value, attr, data, **kwargs), 1)

    hooked = StrictFloat()
    hooked.post_load = [abs]
    assert Rounded().fast_deserializer() is None
    assert hooked.fast_deserializer() is None
    assert DesignField(validate=lambda v: True).fast_deserializer() is None
