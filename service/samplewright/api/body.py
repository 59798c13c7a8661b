"""Reading a JSON request body strictly and within bounds.

Python's json module accepts ``NaN`` and ``Infinity``, lets a duplicate key silently win,
and turns ``1e999`` into infinity; Flask's reader returns HTML errors and truncates a
chunked body at the size limit. This reader does none of that: it checks the media type,
reads at most ``limit + 1`` bytes (so a chunked body over the limit is refused, not cut),
decodes strict UTF-8, and parses with hooks that reject non-standard constants,
duplicate keys and absurdly long integer literals.
"""

from __future__ import annotations

import json
import sys
from collections.abc import Callable
from typing import Any

from flask import request
from werkzeug.wsgi import get_content_length

from .fields import TinyNumber
from .problems import Problem

#: An integer literal longer than this cannot be a valid size or count.
MAX_INTEGER_DIGITS = 30
#: Deepest nesting of arrays and objects accepted (a request needs three or four levels).
#: Checked after parsing so that no later step (validation, ``repr`` in an error message)
#: meets a structure deep enough to exhaust the interpreter's recursion limit.
MAX_NESTING = 32


def _reject_constant(name: str):
    raise ValueError(f"{name} is not valid JSON (numbers must be finite)")


def _bounded_int(text: str) -> int:
    if len(text) <= MAX_INTEGER_DIGITS:  # the sign only makes the text longer
        return int(text)
    digits = len(text.lstrip("-"))
    if digits > MAX_INTEGER_DIGITS:
        raise ValueError(f"an integer literal of {digits} digits is out of range")
    return int(text)


_SMALLEST_NORMAL = sys.float_info.min


def _float(text: str) -> float | TinyNumber:
    """A float literal; a nonzero one that a double cannot hold (1e-400) is kept as text."""
    value = float(text)
    if -_SMALLEST_NORMAL < value < _SMALLEST_NORMAL and any(c in "123456789" for c in text.lower().split("e")[0]):
        return TinyNumber(text)
    return value


def _no_duplicates(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out = dict(pairs)
    if len(out) == len(pairs):
        return out
    seen: set[str] = set()
    for key, _value in pairs:  # name the first repeated key
        if key in seen:
            raise ValueError(f"duplicate key {key[:60]!r}")
        seen.add(key)
    raise AssertionError("unreachable")  # pragma: no cover


#: Built once (json.loads with hooks builds a decoder and its scanner on every call).
_STRICT = json.JSONDecoder(parse_constant=_reject_constant, parse_float=_float, parse_int=_bounded_int,
                           object_pairs_hook=_no_duplicates)
#: The same without the number hooks, which cost a Python call per literal: used only when
#: no literal in the text could make them differ from the C parser (``_has_long_literal``).
_FAST = json.JSONDecoder(parse_constant=_reject_constant, object_pairs_hook=_no_duplicates)

_TOO_DEEP = f"nesting is too deep (at most {MAX_NESTING} levels of arrays and objects)"

#: Digits become '0' and 'E' becomes 'e', and signs go (a sign never stands between two digits
#: of a literal), so that two substring searches find every literal the number hooks could
#: treat differently from the C parser.
_LITERAL_SHAPE = bytes.maketrans(b"123456789E", b"000000000e")
_SIGNS = b"+-"
_LONG_DIGIT_RUN = b"0" * (MAX_INTEGER_DIGITS + 1)
_LONG_EXPONENT = b"e000"
#: Keeps only quotes and brackets, both kinds of bracket as one (depth does not care which).
_BRACKETS = bytes.maketrans(b"[]{}", b"()()")
_NOT_STRUCTURE = bytes(sorted(set(range(256)) - set(b'"[]{}')))


def _has_long_literal(raw: bytes) -> bool:
    """Whether the text may hold a literal on which the number hooks and the C parser differ.

    ``_bounded_int`` refuses only a run of more than MAX_INTEGER_DIGITS digits, and
    ``_float`` returns a TinyNumber only for a magnitude below the smallest normal double,
    which needs an exponent of three or more digits or a fraction with over 200 leading
    zeros. A match inside a string only sends the text to the hooked decoder, which is
    always correct.
    """
    shape = raw.translate(_LITERAL_SHAPE, _SIGNS)
    return _LONG_DIGIT_RUN in shape or _LONG_EXPONENT in shape


def _nested_too_deep(raw: bytes) -> bool:
    """Whether valid JSON text nests arrays and objects more than MAX_NESTING deep.

    Reads the text rather than walking the parsed value: that walk costs as much as the
    parse itself. Only valid JSON may be passed: its escapes and quotes are well formed.
    """
    if b"\\" in raw:
        # Pairs of backslashes first, so that what remains of ``\\"`` is a closing quote.
        raw = raw.replace(b"\\\\", b"").replace(b'\\"', b"")
    kept = raw.translate(_BRACKETS, _NOT_STRUCTURE)
    if kept.count(b"(") <= MAX_NESTING:  # brackets in strings only raise the count
        return False
    kept = kept.replace(b'""', b"")  # the strings that hold no bracket
    if b'"' in kept:  # a string holds a bracket; quotes still alternate opening and closing
        kept = b"".join(kept.split(b'"')[::2])
    # Each pass removes every empty container, lowering the depth by exactly one.
    for _ in range(MAX_NESTING):
        if not kept:
            return False
        kept = kept.replace(b"()", b"")
    return bool(kept)


def parse_json_text(text: str) -> Any:
    """Strict JSON parse; raises ValueError with a reason a client can act on."""
    try:
        if text.startswith("\ufeff"):  # as json.loads
            raise json.JSONDecodeError("Unexpected UTF-8 BOM (decode using utf-8-sig)", text, 0)
        raw = text.encode("utf-8", "surrogatepass")  # a lone surrogate is valid in a JSON string
        data = (_STRICT if _has_long_literal(raw) else _FAST).decode(text)
    except RecursionError:
        raise ValueError(_TOO_DEEP) from None
    if isinstance(data, dict | list) and _nested_too_deep(raw):
        raise ValueError(_TOO_DEEP)
    return data


def _input_stream(environ: dict):
    """``request.stream``: when the server terminates the input itself (gunicorn does) and no
    MAX_CONTENT_LENGTH is set, werkzeug hands out the server's own stream, taken here
    directly; otherwise werkzeug's wrapped stream."""
    if "wsgi.input_terminated" in environ and request.max_content_length is None:
        return environ["wsgi.input"]
    return request.stream


def read_json_object(limit: int, parse: Callable[[bytes, str], Any] | None = None) -> dict[str, Any]:
    """The request body as a JSON object, or a Problem (415, 413, 400 or 422).

    ``parse(raw, text)`` replaces the strict parser for a route with its own faster one
    (the columnar route); it must raise ValueError (or JSONDecodeError) as
    ``parse_json_text`` does, so every route gives the same problems.
    """
    environ = request.environ
    # The usual header exactly: its media type is itself (werkzeug's parse gives the same).
    mimetype = "application/json" if environ.get("CONTENT_TYPE") == "application/json" else request.mimetype
    if mimetype != "application/json" and not (mimetype.startswith("application/") and mimetype.endswith("+json")):
        raise Problem(415, None, "Unsupported Media Type",
                      f"send the body as application/json (got {mimetype or 'no Content-Type'})",
                      headers={"Accept-Post": "application/json"})
    length = get_content_length(environ)  # what request.content_length returns, without the property
    if length is not None and length > limit:
        raise Problem(413, "too-large", "Request body too large",
                      f"the body has {length} bytes; this route accepts at most {limit}")
    raw = _input_stream(environ).read(limit + 1)
    if len(raw) > limit:
        raise Problem(413, "too-large", "Request body too large",
                      f"the body exceeds the limit of {limit} bytes for this route")
    if not raw:
        raise Problem(400, "unparsable", "Body is not valid JSON", "the body is empty")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise Problem(400, "unparsable", "Body is not valid JSON",
                      f"the body is not valid UTF-8 (byte {exc.start})") from None
    try:
        data = parse_json_text(text) if parse is None else parse(raw, text)
    except json.JSONDecodeError as exc:
        raise Problem(400, "unparsable", "Body is not valid JSON",
                      f"{exc.msg} at line {exc.lineno} column {exc.colno}") from None
    except ValueError as exc:
        raise Problem(400, "unparsable", "Body is not valid JSON", str(exc)) from None
    if not isinstance(data, dict):
        raise Problem(422, "invalid-request", "Request is not valid",
                      f"the body must be a JSON object (got {type(data).__name__ if data is not None else 'null'})",
                      errors={"body": ["must be a JSON object"]})
    return data
