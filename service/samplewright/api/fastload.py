"""Loading a request exactly as its marshmallow schema does, without the schema's plumbing.

``Schema.load`` spends most of its time on bookkeeping (error stores, partial-loading
options, getter closures) rather than on the fields themselves; a batch of ten thousand
items pays that ten thousand times. ``FastLoader.load`` walks the same fields, calls each
field's own ``deserialize`` (the same conversions and validators), runs the schema's own
``@validates_schema`` methods, and returns the same dict. A field with a
``fast_deserializer()`` (api/fields.py) is read by the function it returns instead: the
same value for a plain input, a refusal for anything else. At the first sign of trouble (a
field error or refusal, an unknown key, a cross-field rule failing, anything unusual) it
hands the input to ``Schema.load`` itself, so every error, and every message in it, is
marshmallow's.

Schemas with hooks it does not reproduce (``pre_load``, ``post_load``, ``@validates``,
dotted attributes, ``partial``/``many``) are always loaded by marshmallow.
"""

from __future__ import annotations

import io
import pickle
from contextvars import ContextVar
from typing import Any

from marshmallow import EXCLUDE, INCLUDE, RAISE, Schema, ValidationError
from marshmallow.decorators import POST_LOAD, PRE_LOAD, VALIDATES, VALIDATES_SCHEMA
from marshmallow.fields import Field
from marshmallow.utils import missing

_DEFER = object()


class _KeyPickler(pickle.Pickler):
    """Pickles exact built-in values only: None, bool, int, float, str, bytes, list, tuple,
    dict, set and frozenset, each with an opcode of its own.

    The C pickler writes those types itself (by exact type, so no subclass passes) and asks
    ``reducer_override`` about every other object, which is refused: the bytes then never
    depend on an object's own ``__reduce__``. Protocol 4 also refuses ``bytearray`` and
    ``PickleBuffer``, which protocol 5 would write like ``bytes``.
    """

    def reducer_override(self, obj):
        raise TypeError(f"{type(obj).__name__} is not a plain value")


class _Shared:
    """The state of one ``sharing()`` block: validated results and the key writer."""

    __slots__ = ("_buffer", "_pickler", "results")

    def __init__(self, writer: tuple[io.BytesIO, _KeyPickler] | None = None) -> None:
        #: (loader, input key) → validated dict; the loader is held, so its id is not reused
        self.results: dict[tuple[FastLoader, bytes], dict] = {}
        if writer is None:
            buffer = io.BytesIO()
            writer = (buffer, _KeyPickler(buffer, protocol=4))
        self._buffer, self._pickler = writer

    def release(self) -> tuple[io.BytesIO, _KeyPickler] | None:
        """The buffer and pickler, for a later block (both are left empty after every key);
        this block keys nothing more, should a reference to it outlive the block."""
        writer = None if self._pickler is None else (self._buffer, self._pickler)
        self._buffer = self._pickler = None
        return writer

    def key(self, data: Any) -> bytes | None:
        """The input's pickle (see ``sharing``), or None for an input that is not plain values."""
        buffer, pickler = self._buffer, self._pickler
        if pickler is None:  # released: the block is over
            return None
        try:
            pickler.dump(data)
            return buffer.getvalue()
        except (TypeError, ValueError, RecursionError, pickle.PicklingError):
            return None
        finally:
            # The memo maps ids of this input's objects to back-references: a later input must
            # never meet them (an id can pass to another object once this one is gone).
            buffer.seek(0)
            buffer.truncate()
            pickler.clear_memo()


#: Within ``sharing()``: validated results of shareable loaders, by (loader, input key).
_SHARED: ContextVar[_Shared | None] = ContextVar("samplewright_shared_loads", default=None)

#: Key writers of finished blocks, reused by later ones: a pickler costs more to make than a
#: single request's keys cost to write. Each block takes its own (list.pop and append are
#: atomic), so concurrent or nested blocks never share one.
_WRITERS: list[tuple[io.BytesIO, _KeyPickler]] = []
_WRITERS_KEPT = 8


def sharing() -> _Sharing:
    """Within the block, a shareable loader validates each distinct input once.

    A batch repeats the same design in many items; its validated dict is then one object
    shared by those items (read-only by convention, like every validated request). Inputs
    are told apart by their pickle (``_KeyPickler``: exact built-in types only, each with its
    own opcode, floats by their 8 bytes, dict keys in the order given), so 5 and 5.0, true and
    1, 0.0 and -0.0, or "5" and 5 are never confused, and an input holding any other object
    is not shared. Two inputs share a result only if they are the same value for value (floats
    bit for bit), type for type and in the same order, so marshmallow would give both the same
    result and the same errors; only successful loads are kept.
    """
    return _Sharing()


class _Sharing:
    """The ``sharing()`` block: a plain context manager, cheaper to enter than a generator-based
    one (every single request enters one)."""

    __slots__ = ("_shared", "_token")

    def __enter__(self) -> None:
        try:
            shared = _Shared(_WRITERS.pop())
        except IndexError:
            shared = _Shared()
        self._shared = shared
        self._token = _SHARED.set(shared)

    def __exit__(self, *exc_info) -> None:
        _SHARED.reset(self._token)
        writer = self._shared.release()
        if writer is not None and len(_WRITERS) < _WRITERS_KEPT:
            _WRITERS.append(writer)


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
            # A field may offer its own fast deserializer (api/fields.py): the same result as
            # deserialize for the plain values it accepts, a ValidationError for the rest.
            maker = getattr(field, "fast_deserializer", None) if direct else None
            fast = maker() if maker is not None else None
            # Looked up once here rather than per call (fields do not change after the schema
            # is built): the bound _deserialize, whether a missing value is an error, and the
            # load default with whether to call it.
            default = field.load_default
            rest = (field, direct, field._deserialize, tuple(field.validators), field.required, default,
                    callable(default))
            # Absent, an optional field of plain deserialize with no load default adds nothing:
            # the loop then skips it without looking further (rest None).
            quiet = direct and not field.required and default is missing
            fields.append((key, target, fast, None if quiet else rest, rest))
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
            get = data.get
            for key, target, fast, when_missing, rest in fields:
                raw = get(key, missing)
                if raw is missing:
                    if when_missing is None:
                        continue
                elif fast is not None and raw is not None:  # None: allow_none and the null error
                    out[target] = fast(raw)
                    continue
                field, direct, deserialize, checks, required, default, call = rest
                if not direct or raw is None:
                    value = field.deserialize(raw, key, data)
                elif raw is missing:  # as Field.deserialize: required → error, else the load default
                    if required:
                        return _DEFER
                    value = default() if call else default
                else:
                    value = deserialize(raw, key, data)
                    for check in checks:
                        if check(value) is False:  # False fails in marshmallow 3, not 4: left to marshmallow
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
        shared = _SHARED.get() if self.shareable else None
        key = None
        if shared is not None:
            text = shared.key(data)
            if text is not None:
                key = (self, text)
                hit = shared.results.get(key)
                if hit is not None:
                    return hit
        out = self._fast(data) if self._plan is not None else _DEFER
        if out is _DEFER:
            out = self.schema.load(data)
        if key is not None:
            shared.results[key] = out
        return out


_LOADERS: dict[tuple[int, bool], FastLoader] = {}


def loader_for(schema: Schema, *, shareable: bool = False) -> FastLoader:
    """The (cached) fast loader of a schema instance; see ``sharing`` for ``shareable``."""
    loader = _LOADERS.get((id(schema), shareable))
    if loader is None or loader.schema is not schema:
        loader = _LOADERS[(id(schema), shareable)] = FastLoader(schema, shareable=shareable)
    return loader
