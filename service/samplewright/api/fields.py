"""Strict marshmallow fields: JSON numbers only, finite, lists bounded before their items.

marshmallow's own Float and Integer coerce numeric strings ("0.05", " 3 ", "1_000") and
truncate 3.7 to 3. A planning service must not silently change what a client sent, so
these fields accept JSON numbers only (never booleans), reject non-finite values, and
accept an integral float such as 20.0 as the integer 20, as JSON Schema does.

Each field also offers ``fast_deserializer()`` for ``api/fastload.py``: a function of the raw
value that returns exactly what ``deserialize`` returns (same value, same type) for the
plain inputs that make up nearly every request, and raises ValidationError for anything
else, valid or not, so that the caller hands the input to marshmallow and reports its
errors. Its message is never shown.
"""

from __future__ import annotations

import math
import sys

from marshmallow import RAISE, Schema, ValidationError, fields, validate

from ..core.errors import show

_INF = math.inf


def _not_plain() -> ValidationError:
    # Raised by the fast deserializers; fastload discards it and asks marshmallow instead.
    return ValidationError("not a plain value; left to marshmallow")


def _is_number(limit) -> bool:
    return type(limit) in (int, float) and not math.isnan(limit)


def _test_of(validator):
    """A predicate with the validator's outcome on plain values, never its message.

    ``Bounded``, ``Length`` and ``OneOf`` of strings (exact classes, plain limits) become
    comparisons; anything else is called as marshmallow calls it (a ValidationError it
    raises reaches fastload, which then defers). A predicate may be False where the
    validator would pass (the input then only takes the slow path), never the reverse: a
    validator returning False counts as failing, as in marshmallow 3 (marshmallow 4 ignores
    the return value).
    """
    kind = type(validator)
    if kind is Bounded and all(x is None or _is_number(x) for x in (validator.min, validator.max)):
        # The value is a finite float or an int here, so "not below" is "at least".
        lo = -_INF if validator.min is None else validator.min
        hi = _INF if validator.max is None else validator.max
        lo_in, hi_in = validator.min_inclusive or validator.min is None, validator.max_inclusive or validator.max is None
        if lo_in and hi_in:
            return lambda value: lo <= value <= hi
        if lo_in:
            return lambda value: lo <= value < hi
        if hi_in:
            return lambda value: lo < value <= hi
        return lambda value: lo < value < hi
    if kind is validate.Length and validator.equal is None and all(
        x is None or type(x) is int for x in (validator.min, validator.max)
    ):
        lo = 0 if validator.min is None else validator.min
        hi = _INF if validator.max is None else validator.max
        return lambda value: lo <= len(value) <= hi
    if kind is validate.OneOf and all(type(choice) is str for choice in validator.choices):
        # The value is an exact str here: set membership is list membership.
        allowed = frozenset(validator.choices)
        return allowed.__contains__
    return lambda value: validator(value) is not False


def _all_of(validators) -> object:
    """One predicate for a field's validators (None when it has none)."""
    tests = [_test_of(v) for v in validators]
    if not tests:
        return None
    if len(tests) == 1:
        return tests[0]
    if len(tests) == 2:  # a list's own check and its Length, the common pair
        first, second = tests
        return lambda value: first(value) and second(value)
    return lambda value: all(test(value) for test in tests)


def _plain(field: fields.Field) -> bool:
    """Whether ``deserialize`` is ``_deserialize`` then the validators for a non-null value."""
    kind = type(field)
    return (kind.deserialize is fields.Field.deserialize and kind._validate is fields.Field._validate
            and kind._validate_all is fields.Field._validate_all and not field.pre_load and not field.post_load)


def _describe(lo, hi, lo_inclusive: bool, hi_inclusive: bool) -> str:
    parts = []
    if lo is not None:
        parts.append(f"{'at least' if lo_inclusive else 'greater than'} {lo:g}")
    if hi is not None:
        parts.append(f"{'at most' if hi_inclusive else 'less than'} {hi:g}")
    return "must be " + " and ".join(parts)


class Bounded(validate.Range):
    """A Range whose message states the allowed interval and echoes the value."""

    def __call__(self, value):
        lo_bad = self.min is not None and (value < self.min if self.min_inclusive else value <= self.min)
        hi_bad = self.max is not None and (value > self.max if self.max_inclusive else value >= self.max)
        if lo_bad or hi_bad:
            raise ValidationError(
                f"{_describe(self.min, self.max, self.min_inclusive, self.max_inclusive)} (got {show(value)})"
            )
        return value

    def describe(self) -> str:
        return _describe(self.min, self.max, self.min_inclusive, self.max_inclusive)


class TinyNumber:
    """A nonzero JSON number too small for a double (``1e-400``): read as 0 it would change
    silently, so the body reader keeps its text and the number fields refuse it."""

    __slots__ = ("text",)

    def __init__(self, text: str) -> None:
        self.text = text

    def __repr__(self) -> str:
        return self.text


class StrictFloat(fields.Float):
    """A finite JSON number; integers are accepted and converted to float."""

    def __init__(self, **kwargs):
        super().__init__(allow_nan=False, **kwargs)

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, TinyNumber):
            raise ValidationError(
                f"is too small to represent: must be 0 or of magnitude at least {sys.float_info.min:.6g} "
                f"(got {show(value)})"
            )
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ValidationError(f"must be a JSON number (got {show(value)})")
        try:
            number = float(value)
        except OverflowError:
            raise ValidationError(f"is too large to represent (got {show(value)})") from None
        if not math.isfinite(number):
            raise ValidationError(f"must be a finite number (got {show(value)})")
        return number

    def fast_deserializer(self):
        """``deserialize`` for an exact float or int within the validators (module docstring)."""
        if not _plain(self) or type(self)._deserialize is not StrictFloat._deserialize:
            return None
        test, isfinite = _all_of(self.validators), math.isfinite

        def fast(value):
            kind = type(value)
            if kind is float:
                # float(value) is value itself for an exact float
                if isfinite(value) and (test is None or test(value)):
                    return value
            elif kind is int:
                try:
                    number = float(value)
                except OverflowError:
                    raise _not_plain() from None
                if test is None or test(number):
                    return number
            raise _not_plain()

        return fast


class StrictInteger(fields.Integer):
    """A JSON integer; a float with no fractional part (20.0) counts as that integer."""

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ValidationError(f"must be a JSON integer (got {show(value)})")
        if isinstance(value, float):
            if not math.isfinite(value) or not value.is_integer():
                raise ValidationError(f"must be a whole number (got {show(value)})")
            value = int(value)
        return value

    def fast_deserializer(self):
        """``deserialize`` for an exact int, or an integral finite float, within the validators."""
        if not _plain(self) or type(self)._deserialize is not StrictInteger._deserialize:
            return None
        test = _all_of(self.validators)

        def fast(value):
            kind = type(value)
            if kind is int:
                if test is None or test(value):
                    return value
            elif kind is float and math.isfinite(value) and value.is_integer():
                number = int(value)
                if test is None or test(number):
                    return number
            raise _not_plain()

        return fast


class BoundedList(fields.List):
    """A JSON array whose length is checked before any item is looked at.

    Checking the length first keeps a 16,000-item list from costing per-item work and
    from producing thousands of per-item error messages.
    """

    def __init__(self, inner, *, min_items: int, max_items: int, **kwargs):
        self.min_items = min_items
        self.max_items = max_items
        validators = list(kwargs.pop("validate", []) or [])
        validators.append(validate.Length(min=min_items, max=max_items))
        super().__init__(inner, validate=validators, **kwargs)

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, list):
            raise ValidationError(f"must be a JSON array (got {show(value)})")
        if not self.min_items <= len(value) <= self.max_items:
            raise ValidationError(
                f"must have between {self.min_items} and {self.max_items} items (got {len(value)})"
            )
        return super()._deserialize(value, attr, data, **kwargs)

    def fast_deserializer(self):
        """``deserialize`` for an exact list of the right length whose items the inner field's
        fast deserializer (or, without one, its ``deserialize``) accepts, within the validators."""
        if not _plain(self) or type(self)._deserialize is not BoundedList._deserialize:
            return None
        inner = self.inner
        item = inner.fast_deserializer() if hasattr(inner, "fast_deserializer") else None
        if item is None:
            item = inner.deserialize  # what List._deserialize calls per item
        test, lo, hi = _all_of(self.validators), self.min_items, self.max_items

        def fast(value):
            if type(value) is list and lo <= len(value) <= hi:
                out = [item(each) for each in value]
                if test is None or test(out):
                    return out
            raise _not_plain()

        return fast


class StrictString(fields.String):
    """A JSON string (no numbers or booleans turned into text)."""

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, str):
            raise ValidationError(f"must be a JSON string (got {show(value)})")
        return value

    def fast_deserializer(self):
        """``deserialize`` for an exact str within the validators."""
        if not _plain(self) or type(self)._deserialize is not StrictString._deserialize:
            return None
        test = _all_of(self.validators)

        def fast(value):
            if type(value) is str and (test is None or test(value)):
                return value
            raise _not_plain()

        return fast


def choice(options: list[str], **kwargs) -> StrictString:
    """A string restricted to ``options``, with a message listing them."""
    return StrictString(
        validate=validate.OneOf(options, error="must be one of {choices} (got {input!r})"),
        **kwargs,
    )


class StrictSchema(Schema):
    """A schema that refuses unknown fields with a message listing the allowed ones."""

    class Meta:
        unknown = RAISE

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        allowed = ", ".join(sorted(self.load_fields))
        self.error_messages = {**self.error_messages, "unknown": f"is not a field here; allowed: {allowed}"}
