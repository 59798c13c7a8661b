"""Provenance: what produced an answer, and a digest that identifies the question.

Every computation response carries ``provenance``: the service, numpy and scipy versions,
the method identifier and its published reference, and ``request_digest``, the SHA-256 of
the canonical JSON of the validated request with its defaults filled in. A record keeper
stores the digest with the answer; sending the same request later (to the same versions)
gives the same digest and the same numbers, and any change to the question changes it.

Canonical form (``CANONICAL_FORM``, documented in the README):

* the request *after validation*: defaults filled in (``alpha`` 0.05, …), numbers as the
  schemas read them: integer fields as integers (20.0 → 20), number fields as floats
  (5 → 5.0), so ``5``, ``5.0`` and ``5e0`` give one digest;
* JSON with object keys sorted, separators ``","`` and ``":"`` (no whitespace), strings
  unescaped UTF-8 (``ensure_ascii=False``), floats in Python's shortest round-trip form
  (``0.05``, ``1e-12``, ``5.0``), arrays in the order given;
* the SHA-256 of its UTF-8 bytes, as 64 lowercase hexadecimal digits.

A batch digests thousands of requests that share one validated design dict per distinct
design (``fastload.sharing``); within ``caching()`` the text of such a nested dict is
written once and reused, and the request's own members are joined by hand in sorted
order. The text is the same as without the block, character for character.
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from json.encoder import encode_basestring
from typing import Any

import numpy
import scipy

from .._version import __version__
from .columnwriter import Sheet, Template
from .jsontext import Writer

#: Identifies the canonical form and digest algorithm above.
CANONICAL_FORM = "sha256:json-sorted-keys-compact-utf8"

_SERVICE_VERSION = __version__
_NUMPY_VERSION = numpy.__version__
_SCIPY_VERSION = scipy.__version__


def _plain(value: Any):
    """numpy scalars and arrays as JSON values (a schema may leave one in a loaded request)."""
    if isinstance(value, numpy.generic | numpy.ndarray):
        return value.tolist()
    if isinstance(value, set | frozenset):
        return sorted(value)
    raise TypeError(f"{type(value).__name__} has no canonical JSON form")


#: The canonical encoder (sorted keys, compact, UTF-8, no NaN), one C encoder kept (jsontext.Writer:
#: json's encode builds it again on every call, about half the cost of a request's digest).
_CANONICAL = Writer(ensure_ascii=False, sort_keys=True, default=_plain)
_encode = _CANONICAL.encode
# The text json's encoder writes for an exact int or a finite exact float (it calls these).
_int_text = int.__repr__
_float_text = float.__repr__
_INT_ONLY = frozenset({int})


class _Texts:
    """The state of one ``caching()`` block."""

    __slots__ = ("names", "seen", "written")

    def __init__(self) -> None:
        #: id(dict) → the dict, for each dict met as a member of a digested value. Holding the
        #: dict keeps its id from passing to another object while the block lasts.
        self.seen: dict[int, dict] = {}
        #: id(dict) → its canonical text, once the dict has been met a second time
        self.written: dict[int, str] = {}
        #: member name → its JSON string and the ":" after it
        self.names: dict[str, str] = {}


_TEXTS: ContextVar[_Texts | None] = ContextVar("samplewright_canonical_texts", default=None)


@contextmanager
def caching() -> Iterator[None]:
    """Within the block, ``canonical_json`` writes a dict that is a member of the value once per object.

    For a block that digests many requests sharing validated design dicts (a batch). The
    objects must not change inside the block, as validated requests never do; the text is
    the same as outside it. A member dict is written on its second sighting, so a request
    whose design is its own costs about what it costs without the block.
    """
    token = _TEXTS.set(_Texts())
    try:
        yield
    finally:
        _TEXTS.reset(token)


def _joined(value: dict, texts: _Texts) -> str:
    """``_encode(value)`` for a dict, its members written one at a time (see ``caching``)."""
    seen, written = texts.seen, texts.written
    members = []
    for key, member in value.items():
        if type(key) is not str:  # json converts or refuses such keys itself
            return _encode(value)
        kind = type(member)
        if kind is dict:
            ident = id(member)
            if seen.get(ident) is not member:  # first sighting: perhaps not shared at all
                seen[ident] = member
                return _encode(value)
            text = written.get(ident)
            if text is None:
                text = written[ident] = _encode(member)
        elif kind is float and member - member == 0.0:  # finite (inf - inf and nan - nan are nan)
            text = _float_text(member)
        elif kind is int:
            text = _int_text(member)
        elif kind is str:
            text = encode_basestring(member)
        elif kind is list and _INT_ONLY.issuperset(map(type, member)):  # group sizes
            text = "[" + ",".join(map(_int_text, member)) + "]"
        else:  # anything else as json writes it, with its errors
            text = _encode(member)
        members.append((key, text))
    # Distinct str keys: the pairs sort by key alone, as json sorts them.
    members.sort()
    names = texts.names
    parts = []
    for key, text in members:
        name = names.get(key)
        if name is None:
            name = names[key] = encode_basestring(key) + ":"
        parts.append(name + text)
    return "{" + ",".join(parts) + "}"


def canonical_json(value: Any) -> str:
    """The canonical JSON text of a validated request (see the module docstring)."""
    texts = _TEXTS.get()
    if texts is None or type(value) is not dict:
        return _encode(value)
    return _joined(value, texts)


def request_digest(request: dict) -> str:
    """SHA-256 of the canonical JSON of the validated, defaults-filled request (hex)."""
    return hashlib.sha256(canonical_json(request).encode("utf-8")).hexdigest()


def request_digests(requests: list[dict]) -> list[str]:
    """``[request_digest(r) for r in requests]``, the requests of one shape written a member at a time.

    Requests with the same members in the same order form a shape; for each, every member
    is written for all its requests at once (numbers by the array writer, a dict that all
    share once), and the canonical text is a template filled in (``columnwriter``). The
    text is the same as ``canonical_json``'s, character for character (tests).
    """
    out: list[str] = [""] * len(requests)
    shapes: dict[tuple, list[int]] = {}
    for j, request in enumerate(requests):
        shapes.setdefault(tuple(request), []).append(j)
    sha256 = hashlib.sha256
    with caching():
        for keys, index in shapes.items():
            rows = [requests[j] for j in index]
            if len(rows) < 2 or not all(type(key) is str for key in keys):
                texts = [canonical_json(row) for row in rows]
            else:
                texts = _shape_texts(sorted(keys), rows)
            for j, text in zip(index, texts, strict=True):
                out[j] = sha256(text.encode("utf-8")).hexdigest()
    return out


def _dict_texts(values: list) -> list[str]:
    """Each value's canonical text, a dict shared by several written once (validated requests
    are never changed, and every dict stays alive in ``values`` while its id is used)."""
    written: dict[int, str] = {}
    out = []
    for value in values:
        if type(value) is dict:
            text = written.get(id(value))
            if text is None:
                text = written[id(value)] = canonical_json(value)
        else:
            text = _encode(value)
        out.append(text)
    return out


def _shape_texts(names: list[str], rows: list[dict]) -> list[str]:
    """The canonical texts of requests with these member names (sorted), inside ``caching()``."""
    sheet = Sheet(encode=_encode, string=encode_basestring)
    members: list[str | tuple[str, str]] = []
    columns = []
    for name in names:
        values = [row[name] for row in rows]
        first = values[0]
        if type(first) is dict:
            if all(value is first for value in values):  # the shared design: its text once
                members.append((name, canonical_json(first)))
                continue
            columns.append(_dict_texts(values))
        else:
            columns.append(sheet.values(values))
        members.append(name)
    template = Template(members, string=encode_basestring)
    if not columns:
        return [template.text] * len(rows)
    return sheet.fill(template, columns)


def provenance(method_id: str, reference: str, request: dict) -> dict:
    """The ``provenance`` member of a computation response."""
    # A literal with constant keys: cheaper than merging a dict of the static members.
    return {
        "service_version": _SERVICE_VERSION,
        "numpy_version": _NUMPY_VERSION,
        "scipy_version": _SCIPY_VERSION,
        "method_id": method_id,
        "method_reference": reference,
        "request_digest": request_digest(request),
        "canonical_form": CANONICAL_FORM,
    }
