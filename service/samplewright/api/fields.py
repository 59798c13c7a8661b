"""Strict marshmallow fields: JSON numbers only, finite, lists bounded before their items.

marshmallow's own Float and Integer coerce numeric strings ("0.05", " 3 ", "1_000") and
truncate 3.7 to 3. A planning service must not silently change what a client sent, so
these fields accept JSON numbers only (never booleans), reject non-finite values, and
accept an integral float such as 20.0 as the integer 20, as JSON Schema does.
"""

from __future__ import annotations

import math
import sys

from marshmallow import RAISE, Schema, ValidationError, fields, validate

from ..core.errors import show


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


class StrictString(fields.String):
    """A JSON string (no numbers or booleans turned into text)."""

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, str):
            raise ValidationError(f"must be a JSON string (got {show(value)})")
        return value


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
