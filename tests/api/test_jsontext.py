"""The answers' JSON writer writes what the standard compact encoder writes."""

from __future__ import annotations

import json
import math
import random

import pytest

from samplewright.api.jsontext import ANSWER_WRITER, Writer

UTF8_WRITER = Writer(ensure_ascii=False)
SORTED_WRITER = Writer(ensure_ascii=False, sort_keys=True)  # as provenance's canonical encoder


def _value(rng: random.Random, depth: int = 0):
    kind = rng.randrange(9 if depth < 4 else 6)
    if kind == 0:
        return rng.choice([0.0, -0.0, 5.0, 0.1, 1e-300, 5e-324, 1.7976931348623157e308, rng.random() * 10 ** rng.randint(-20, 20)])
    if kind == 1:
        return rng.randint(-10**20, 10**20)
    if kind == 2:
        return "".join(rng.choice(["a", "é", "σ", "\x00", "\x1f", '"', "\\", "☃", "\U0001f600", "/"]) for _ in range(rng.randint(0, 8)))
    if kind == 3:
        return rng.choice([None, True, False])
    if kind in (4, 5):
        return rng.choice([0, 1, 2, 3])
    if kind == 6:
        return [_value(rng, depth + 1) for _ in range(rng.randint(0, 4))]
    return {f"k{i}": _value(rng, depth + 1) for i in rng.sample(range(4), rng.randint(0, 4))}  # keys out of order


@pytest.mark.parametrize("writer", [UTF8_WRITER, ANSWER_WRITER, SORTED_WRITER], ids=["utf8", "ascii", "sorted"])
def test_writer_text_equals_the_standard_encoder(writer):
    """Seeded random nested values: Writer.encode and Writer.string give json's own text byte for byte.

    Source: common practice, no source (json.JSONEncoder with the same settings is the reference).
    """
    rng = random.Random(20261202)
    for _ in range(3000):
        value = {"x": _value(rng), "y": [_value(rng)]}
        assert writer.encode(value) == writer.encoder.encode(value)
    for text in ["", "plain", "é σ ☃", "\x00\x1f\"\\/", "\U0001f600"]:
        assert writer.string(text) == writer.encoder.encode(text)


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_writer_refuses_non_finite_numbers_as_json_does(bad):
    """NaN and infinities raise ValueError, never reach a client as invalid JSON (RFC 8259 §6)."""
    for writer in (UTF8_WRITER, ANSWER_WRITER):
        with pytest.raises(ValueError):
            writer.encode({"power": [bad]})
        with pytest.raises(ValueError):
            json.JSONEncoder(allow_nan=False).encode({"power": [bad]})


def test_writer_keeps_insertion_order_and_compact_separators():
    """Members in the order given, no whitespace (common practice, no source)."""
    assert Writer(ensure_ascii=False).encode({"b": 1, "a": [1.5, "é"]}) == '{"b":1,"a":[1.5,"é"]}'
    assert Writer(ensure_ascii=True).encode({"b": 1, "a": [1.5, "é"]}) == '{"b":1,"a":[1.5,"\\u00e9"]}'
