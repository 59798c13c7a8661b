"""Loading a request exactly as its marshmallow schema does, without the schema's plumbing.

``Schema.load`` spends most of its time on bookkeeping (error stores, partial-loading
options, getter closures) rather than on the fields themselves; a batch of ten thousand
items pays that ten thousand times. ``FastLoader.load`` walks the same fields, calls each
field's own ``deserialize`` (the same conversions and validators), runs the schema's own
``@validates_schema`` methods, and returns the same dict. At the first sign of trouble (a
field error, an unknown key, a cross-field rule failing, anything unusual) it hands the
input to ``Schema.load`` itself, so every error, and every message in it, is marshmallow's.

Schemas with hooks it does not reproduce (``pre_load``, ``post_load``, ``@validates``,
dotted attributes, ``partial``/``many``) are always loaded by marshmallow.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Any

from marshmallow import EXCLUDE, INCLUDE, RAISE, Schema, ValidationError
from marshmallow.decorators import POST_LOAD, PRE_LOAD, VALIDATES, VALIDATES_SCHEMA
from marshmallow.fields import Field
from marshmallow.utils import missing

_DEFER = object()
_KEY_TEXT = json.JSONEncoder(allow_nan=False)
#: Within ``sharing()``: validated results of shareable loaders, by (loader, input JSON).
_SHARED: ContextVar[dict | None] = ContextVar("samplewright_shared_loads", default=None)


@contextmanager
def sharing() -> Iterator[None]:
    """Within the block, a shareable loader validates each distinct input once.

    A batch repeats the same design in many items; its validated dict is then one object
    shared by those items (read-only by convention, like every validated request). Inputs
    are told apart by their JSON text with the keys in the order given, so 5 and 5.0, or
    true and 1, are never confused; only successful loads are kept.
    """
    token = _SHARED.set({})
    try:
        yield
    finally:
        _SHARED.reset(token)


class FastLoader:
    """``load(data)`` equals ``schema.load(data)``: same result, same ValidationError."""

    def __init__(self, schema: Schema, *, shareable: bool = False) -> None:
        self.schema = schema
        self.shareable = shareable
        self._plan = self._compile(schema)

    @staticmethod
    def _compile(schema: Schema):
        hooks = schema._hooks
        if hooks[PRE_LOAD] or hooks[POST_LOAD] or hooks[VALIDATES]:
            return None
        if schema.partial or schema.many or schema.unknown not in (RAISE, EXCLUDE, INCLUDE):
            return None
        fields = []
        for name, field in schema.load_fields.items():
            key = field.data_key if field.data_key is not None else name
            target = field.attribute or name
            if "." in target:
                return None
            # Field.deserialize is _deserialize then the validators, around checks that only
            # matter for a missing or null value; fields that keep it are called directly.
            direct = (type(field).deserialize is Field.deserialize and not field.pre_load
                      and not field.post_load)
            fields.append((key, target, field, direct, tuple(field.validators)))
        # marshmallow runs the collection validators first, then the per-item ones; with
        # many=False both receive the one item.
        validators = []
        for want_many in (True, False):
            for attr_name, hook_many, kwargs in hooks[VALIDATES_SCHEMA]:
                if hook_many == want_many:
                    validators.append((getattr(schema, attr_name), bool(kwargs.get("pass_original", False))))
        known = frozenset(entry[0] for entry in fields)
        return fields, validators, known, schema.unknown

    def _fast(self, data: Any):
        fields, validators, known, unknown = self._plan
        if type(data) is not dict:
            return _DEFER
        extra = ()
        if not known.issuperset(data):
            if unknown == RAISE:
                return _DEFER
            extra = data.keys() - known
        out: dict[str, Any] = {}
        try:
            for key, target, field, direct, checks in fields:
                raw = data.get(key, missing)
                if not direct or raw is None:
                    value = field.deserialize(raw, key, data)
                elif raw is missing:  # as Field.deserialize: required → error, else the load default
                    if field.required:
                        return _DEFER
                    value = field.load_default() if callable(field.load_default) else field.load_default
                else:
                    value = field._deserialize(raw, key, data)
                    for check in checks:
                        if check(value) is False:  # marshmallow fails a validator that returns False
                            return _DEFER
                if value is not missing:
                    out[target] = value
            if extra and unknown == INCLUDE:
                for key in extra:
                    out[key] = data[key]
            for validator, pass_original in validators:
                if pass_original:
                    validator(out, data, partial=None, many=False, unknown=unknown)
                else:
                    validator(out, partial=None, many=False, unknown=unknown)
        except ValidationError:
            return _DEFER
        return out

    def load(self, data: Any) -> dict[str, Any]:
        """The validated dict, or marshmallow's ValidationError for this input."""
        memo = _SHARED.get() if self.shareable else None
        key = None
        if memo is not None:
            try:
                key = (id(self), _KEY_TEXT.encode(data))
            except (TypeError, ValueError):  # not plain JSON (e.g. a number too small for a double)
                key = None
            else:
                hit = memo.get(key)
                if hit is not None:
                    return hit
        out = self._fast(data) if self._plan is not None else _DEFER
        if out is _DEFER:
            out = self.schema.load(data)
        if key is not None:
            memo[key] = out
        return out


_LOADERS: dict[tuple[int, bool], FastLoader] = {}


def loader_for(schema: Schema, *, shareable: bool = False) -> FastLoader:
    """The (cached) fast loader of a schema instance; see ``sharing`` for ``shareable``."""
    loader = _LOADERS.get((id(schema), shareable))
    if loader is None or loader.schema is not schema:
        loader = _LOADERS[(id(schema), shareable)] = FastLoader(schema, shareable=shareable)
    return loader
