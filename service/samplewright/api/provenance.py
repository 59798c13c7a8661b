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
"""

from __future__ import annotations

import hashlib
import json
from typing import Any

import numpy
import scipy

from .._version import __version__

#: Identifies the canonical form and digest algorithm above.
CANONICAL_FORM = "sha256:json-sorted-keys-compact-utf8"

_STATIC = {
    "service_version": __version__,
    "numpy_version": numpy.__version__,
    "scipy_version": scipy.__version__,
}


def _plain(value: Any):
    """numpy scalars and arrays as JSON values (a schema may leave one in a loaded request)."""
    if isinstance(value, numpy.generic | numpy.ndarray):
        return value.tolist()
    if isinstance(value, set | frozenset):
        return sorted(value)
    raise TypeError(f"{type(value).__name__} has no canonical JSON form")


_CANONICAL = json.JSONEncoder(sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False,
                              default=_plain)


def canonical_json(value: Any) -> str:
    """The canonical JSON text of a validated request (see the module docstring)."""
    return _CANONICAL.encode(value)


def request_digest(request: dict) -> str:
    """SHA-256 of the canonical JSON of the validated, defaults-filled request (hex)."""
    return hashlib.sha256(canonical_json(request).encode("utf-8")).hexdigest()


def provenance(method_id: str, reference: str, request: dict) -> dict:
    """The ``provenance`` member of a computation response."""
    return {
        **_STATIC,
        "method_id": method_id,
        "method_reference": reference,
        "request_digest": request_digest(request),
        "canonical_form": CANONICAL_FORM,
    }
