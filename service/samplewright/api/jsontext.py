"""Compact JSON text for answers, written without the per-call set-up of ``json.dumps``.

``JSONEncoder.encode`` builds its C encoder again on every call, which costs about as much
as writing a small answer; a batch writes ten thousand. ``Writer.encode`` keeps one C
encoder and gives the same text as ``json.JSONEncoder(allow_nan=False, separators=(",", ":"),
ensure_ascii=...)``: no NaN or infinity (ValueError, as json raises), keys in insertion
order. It skips json's check for circular references: answers are trees built afresh for
each request, never cyclic. Where the C encoder is unavailable (another Python
implementation) or writes anything different from the standard encoder on a probe value,
the standard encoder is used.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from json import encoder as _json_encoder
from typing import Any

#: A value that exercises every kind of member an answer holds.
_PROBE = {"z": [], "a": [1, -2, 2.5, 1e-300, 0.1, 5.0], "b": "é σ \x00 \" \\ ☃", "c": None, "d": True,
          "e": {"f": [], "g": {}, "h": False}}


class Writer:
    """JSON text as the standard compact encoder writes it (``encode``), and strings alone (``string``)."""

    def __init__(self, *, ensure_ascii: bool, sort_keys: bool = False,
                 default: Callable[[Any], Any] | None = None) -> None:
        self.encoder = json.JSONEncoder(allow_nan=False, separators=(",", ":"), ensure_ascii=ensure_ascii,
                                        sort_keys=sort_keys, default=default)
        self.string: Callable[[str], str] = (
            _json_encoder.encode_basestring_ascii if ensure_ascii else _json_encoder.encode_basestring
        )
        self.encode: Callable[[Any], str] = self._direct() or self.encoder.encode

    def _direct(self) -> Callable[[Any], str] | None:
        make = getattr(_json_encoder, "c_make_encoder", None)
        if make is None:
            return None
        try:
            chunks = make(None, self.encoder.default, self.string, None, ":", ",", self.encoder.sort_keys, False,
                          False)
        except TypeError:  # a different signature: keep the standard path
            return None
        join = "".join

        def encode(value: Any) -> str:
            return join(chunks(value, 0))

        try:
            same = encode(_PROBE) == self.encoder.encode(_PROBE)
        except (TypeError, ValueError):
            return None
        return encode if same else None


#: Every planning answer, single or in a batch: the app's JSON settings (no NaN, compact,
#: ASCII). ASCII also for the batch: a non-ASCII character anywhere (the σ of an assumption)
#: makes Python hold the whole text at two bytes a character, which doubled the cost of
#: joining and encoding a 16 MB batch response (3.7 µs of 26 per item, measured).
ANSWER_WRITER = Writer(ensure_ascii=True)
