"""provenance.canonical_json / request_digest: the README's canonical form, in and out of caching().

The reference is the form the README states, written the straightforward way:
``json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False)`` and the
SHA-256 of its UTF-8 bytes. Every check is exact equality of text (tolerance: none).
"""

from __future__ import annotations

import hashlib
import json
import random

import numpy
import pytest
import scipy

from samplewright._version import __version__
from samplewright.api.provenance import (
    CANONICAL_FORM,
    caching,
    canonical_json,
    provenance,
    request_digest,
    request_digests,
)


def reference_json(value) -> str:
    """The canonical form as the README spells it (source: README, "Provenance and the request digest")."""
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False)


def reference_digest(value) -> str:
    return hashlib.sha256(reference_json(value).encode("utf-8")).hexdigest()


_STRINGS = ["", "one_way_anova", "é", "漢字", "naïve café", "🙂", "a\"b", "back\\slash", "tab\there",
            "line\nbreak", "\u2028\u2029", "\x00\x1f", "\ud7ff\ue000", "<>&'", "Ω≈ç√∫"]
_FLOATS = [5.0, 1e-12, 0.1, 0.05, -0.0, 0.0, 1.0, 2.5e-308, 5e-324, 1.7976931348623157e308, 1e16, 1e22,
           123456789.125, -3.75, 0.30000000000000004, 1 / 3]
_INTS = [0, 1, -1, 5, 20, 2**31, -(2**53) - 1, 10**30]
_KEYS = ["alpha", "design", "n_per_group", "group_sizes", "target_power", "dropout_rate", "type", "Z",
         "a-b", "a", "ab", "é", "漢", "", "0", "_", "a b"]


def _scalar(rng: random.Random):
    kind = rng.randrange(6)
    if kind == 0:
        return rng.choice(_STRINGS) + rng.choice(["", str(rng.randrange(100))])
    if kind == 1:
        return rng.choice(_FLOATS) if rng.random() < 0.6 else rng.uniform(-1e6, 1e6) * 10 ** rng.randint(-20, 20)
    if kind == 2:
        return rng.choice(_INTS) if rng.random() < 0.6 else rng.randint(-10**6, 10**6)
    if kind == 3:
        return rng.choice([True, False])
    if kind == 4:
        return None
    return rng.choice([[rng.randint(1, 500) for _ in range(rng.randint(0, 6))], []])


def _value(rng: random.Random, depth: int):
    roll = rng.random()
    if depth > 0 and roll < 0.2:
        return {rng.choice(_KEYS) + rng.choice(["", "x"]): _value(rng, depth - 1) for _ in range(rng.randint(0, 4))}
    if depth > 0 and roll < 0.35:
        return [_value(rng, depth - 1) for _ in range(rng.randint(0, 4))]
    return _scalar(rng)


def _requests(seed: int, count: int) -> list[dict]:
    """Seeded requests whose nested dicts are drawn from a small pool of shared objects, as a batch's are."""
    rng = random.Random(seed)
    pool = [_value(rng, 3) if rng.random() < 0.2 else {"type": rng.choice(_STRINGS), "v": _value(rng, 3)}
            for _ in range(12)]
    pool = [member if isinstance(member, dict) else {"x": member} for member in pool]
    requests = []
    for _ in range(count):
        request = {}
        for key in rng.sample(_KEYS, rng.randint(0, 6)):
            request[key] = rng.choice(pool) if rng.random() < 0.4 else _value(rng, 2)
        requests.append(request)
    return requests


@pytest.mark.parametrize("seed", range(6))
def test_canonical_json_equals_the_reference_on_random_requests(seed):
    """Inside and outside caching(), canonical_json is the README's json.dumps text (seeded random nested requests, shared nested dicts)."""
    requests = _requests(seed, 400)
    expected = [reference_json(request) for request in requests]
    assert [canonical_json(request) for request in requests] == expected
    with caching():
        # Twice over, so that nested dicts are met a first, second and later time.
        assert [canonical_json(request) for request in requests] == expected
        assert [canonical_json(request) for request in requests] == expected
        assert [request_digest(request) for request in requests] == [reference_digest(r) for r in requests]


@pytest.mark.parametrize("seed", range(4))
def test_request_digests_equal_the_reference_on_requests_of_a_few_shapes(seed):
    """request_digests (a member at a time) gives the README's digest of every request, in order.

    Seeded requests of four member lists (so that the by-shape path runs), values of every
    kind, nested dicts shared from a pool or not, some requests of a shape of their own.
    """
    rng = random.Random(100 + seed)
    shapes = [rng.sample(_KEYS, rng.randint(1, 5)) for _ in range(4)] + [[]]
    pool = [{"type": rng.choice(_STRINGS), "v": _value(rng, 2)} for _ in range(5)]
    requests = _requests(seed, 50)
    for _ in range(600):
        shape = rng.choice(shapes)
        requests.append({key: rng.choice(pool) if rng.random() < 0.5 else _value(rng, 2) for key in shape})
    rng.shuffle(requests)
    assert request_digests(requests) == [reference_digest(r) for r in requests]
    one_design = [{"design": pool[0], "n_per_group": n, "alpha": rng.choice([0.05, -0.0, 0.0])} for n in range(300)]
    assert request_digests(one_design) == [reference_digest(r) for r in one_design]


def test_canonical_json_of_non_dict_values_equals_the_reference():
    """A list, a string or a number is written as json writes it, in caching() or not (README canonical form)."""
    values = [[{"b": 1, "a": 2.0}], "é\"", 5.0, 1e-12, 0.1, 5, True, None, [], {}]
    with caching():
        assert [canonical_json(v) for v in values] == [reference_json(v) for v in values]


def test_caching_is_not_fooled_by_reused_ids():
    """A nested dict that dies and whose id is taken by a new dict is written afresh (common practice, no source)."""
    with caching():
        for i in range(2000):
            design = {"type": "one_way_anova", "cohens_f": i / 7, "groups": i}
            request = {"design": design, "alpha": 0.05}
            assert canonical_json(request) == reference_json(request)
            assert canonical_json(request) == reference_json(request)  # second sighting: written and kept
            del design, request


def test_readme_example_digest():
    """The README's power example: its canonical text and digest (source: README, "Provenance and the request digest")."""
    request = {"design": {"type": "one_way_anova", "group_means": [61.0, 64.0, 66.0], "sd": 5.0},
               "n_per_group": 12, "alpha": 0.05}
    text = '{"alpha":0.05,"design":{"group_means":[61.0,64.0,66.0],"sd":5.0,"type":"one_way_anova"},"n_per_group":12}'
    digest = "0a5fa5e9f7bbf691b95e4bfa572e5b6a59dce3f24f494e42ebd94e9b7109336f"
    assert canonical_json(request) == text and request_digest(request) == digest
    with caching():
        for _ in range(3):
            assert canonical_json(request) == text and request_digest(request) == digest


def _outcome(value):
    try:
        return "ok", canonical_json(value)
    except Exception as exc:  # the exception json raises is part of the behaviour compared
        return type(exc), str(exc)


def _awkward() -> list[dict]:
    shared = {"x": 1.5}  # a nested dict met many times, around the awkward members
    values = [
        {"a": float("nan")}, {"a": float("inf")}, {"a": [1.0, float("-inf")]}, {"d": {"x": float("nan")}},
        {1: 2, 3: 4}, {1: 2, "a": 3}, {"a": 1, 2.5: 3}, {True: 1}, {None: 1},
        {"a": numpy.float64(0.25), "b": numpy.int64(3), "c": numpy.arange(3), "d": {"e": numpy.float32(0.5)}},
        {"a": {3, 1, 2}}, {"a": object()}, {"a": (1, 2.0)}, {"a": [1, True]}, {"a": [1, 2.0]},
    ]
    return values + [{**value, "shared": shared} for value in values]


def test_awkward_values_give_the_same_text_or_error_in_caching():
    """Non-finite floats, non-str keys, numpy values, sets and unknown objects: same text or same error in caching() as outside (common practice, no source)."""
    values = _awkward()
    outside = [_outcome(value) for value in values]
    assert outside[0][0] is ValueError and outside[11][0] is TypeError  # the cases do exercise errors
    with caching():
        for _ in range(3):  # first, second and later sightings of the shared dict
            assert [_outcome(value) for value in values] == outside


def test_provenance_members():
    """provenance() has the documented members, in order, with the canonical digest (README, "Provenance")."""
    request = {"design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 3}, "n_per_group": 20, "alpha": 0.05}
    with caching():
        out = provenance("method.id", "A reference", request)
    assert list(out.items()) == [
        ("service_version", __version__), ("numpy_version", numpy.__version__), ("scipy_version", scipy.__version__),
        ("method_id", "method.id"), ("method_reference", "A reference"),
        ("request_digest", reference_digest(request)), ("canonical_form", CANONICAL_FORM),
    ]
