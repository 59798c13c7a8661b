"""The one-way adapter's build: the core constructors' designs and errors, by shorter means.

The reference is what ``build`` did through the core: ``OneWayAnova.from_means`` /
``from_f`` / ``from_min_range`` after the effect-size check in numpy (its expression is
copied here). Designs are compared member by member (arrays by value, dtype and shape),
errors by type, field and message; the Python sums are compared bit for bit with numpy's.
"""

from __future__ import annotations

import math
import random
import struct
import warnings

import numpy as np
import pytest
from marshmallow import ValidationError

from samplewright.api.designs import ADAPTERS, SCHEMAS
from samplewright.api.designs.one_way import (
    _SEQUENTIAL_SUM_MAX,
    MAX_COHENS_F,
    _ratios,
    _sd_of_means,
)
from samplewright.core.designs.base import normalised_allocation
from samplewright.core.designs.one_way import OneWayAnova, f_from_eta_squared
from samplewright.core.errors import InvalidParameter

ADAPTER = ADAPTERS["one_way_anova"]


def _numpy_sd_of_means(means, ratios) -> float:
    weights = ratios / ratios.sum()
    return float(np.sqrt(np.sum(weights * (means - np.sum(weights * means)) ** 2)))


def _reference_build(fields: dict, count):
    """build as it was: the numpy check, then the core constructors."""
    k = ADAPTER.groups_of(fields, count)
    allocation = fields.get("allocation")
    sd = fields.get("sd")
    if "group_means" in fields:
        means = np.asarray(fields["group_means"], dtype=float)
        sd_of_means = _numpy_sd_of_means(means, normalised_allocation(allocation, k))
        if sd_of_means > MAX_COHENS_F * sd:
            raise ValidationError(
                f"imply Cohen's f = σ_m/σ above {MAX_COHENS_F:g}: the SD of the means is "
                f"{sd_of_means:.6g} with sd {sd:.6g}; the SD of the means may be at most "
                f"{MAX_COHENS_F:g}·sd = {MAX_COHENS_F * sd:.6g}",
                "design.group_means",
            )
        return OneWayAnova.from_means(fields["group_means"], fields["sd"], allocation)
    if "min_range" in fields:
        limit = MAX_COHENS_F * sd * math.sqrt(2.0 * k)
        if fields["min_range"] > limit:
            raise ValidationError(
                f"implies Cohen's f = Δ/(σ√(2k)) above {MAX_COHENS_F:g}: with sd {sd:.6g} and {k} groups "
                f"it may be at most {limit:.6g} (got {fields['min_range']:.6g})",
                "design.min_range",
            )
    if "cohens_f" in fields:
        return OneWayAnova.from_f(fields["cohens_f"], k, allocation, sd=sd)
    if "eta_squared" in fields:
        return OneWayAnova.from_f(f_from_eta_squared(fields["eta_squared"]), k, allocation, sd=sd, source="eta_squared")
    return OneWayAnova.from_min_range(fields["min_range"], fields["sd"], k, allocation)


def _bits(x: float) -> bytes:
    return struct.pack("<d", x)


def _members(design: OneWayAnova) -> dict:
    out = {}
    for name in ("groups", "ratios", "means", "sd", "cohens_f", "effect_source"):
        value = getattr(design, name)
        if isinstance(value, np.ndarray):
            out[name] = ("array", value.dtype.str, value.shape, value.tobytes())
        else:
            out[name] = (type(value).__name__, _bits(value) if isinstance(value, float) else value)
    return out


def _outcome(call, *args):
    try:
        return ("ok", _members(call(*args)))
    except ValidationError as exc:
        return ("ValidationError", exc.field_name, exc.messages)
    except InvalidParameter as exc:
        return ("InvalidParameter", str(exc))


def _random_design(rng: random.Random) -> tuple[dict, int | None]:
    k = rng.randint(2, 10)
    scale = 10.0 ** rng.randint(-6, 11)
    fields = {"type": "one_way_anova"}
    effect = rng.choice(["group_means", "cohens_f", "eta_squared", "min_range"])
    if effect == "group_means":
        extreme = rng.random() < 0.2
        fields["group_means"] = [rng.choice([1e12, -1e12, 0.0]) if extreme else round(rng.uniform(-1, 1) * scale, rng.randint(0, 8))
                                 for _ in range(k)]
        fields["sd"] = rng.choice([scale, 3 * scale, scale / 5, scale / 30, 1e11])
    elif effect == "cohens_f":
        fields.update(cohens_f=rng.choice([0.0, 0.1, 0.25, 10.0, 3.3]), groups=k)
    elif effect == "eta_squared":
        fields.update(eta_squared=rng.choice([0.0, 0.06, 0.5, 0.99]), groups=k)
    else:
        fields.update(min_range=rng.choice([0.5, 10.0, 1e6]), sd=rng.choice([1.0, 0.01]), groups=k)
    if rng.random() < 0.5:
        fields["allocation"] = [rng.choice([1.0, 2.0, 3.0, 0.7, 1e-3, 1e-6 * 999, rng.uniform(0.5, 4)]) for _ in range(k)]
    count = rng.choice([None, None, k, k + 1])
    return fields, count


@pytest.mark.parametrize("seed", range(3))
def test_build_equals_the_core_constructors(seed):
    """Validated random designs: build's design member for member, or its error, equals the core constructors' (seeded random designs)."""
    rng = random.Random(seed)
    schema = SCHEMAS["one_way_anova"]
    for _ in range(400):
        body, count = _random_design(rng)
        try:
            fields = schema.load(body)
        except ValidationError:
            continue
        got, expected = _outcome(ADAPTER.build, fields, count), _outcome(_reference_build, fields, count)
        assert got == expected, (body, count)


def test_sd_of_means_equals_numpy_bit_for_bit():
    """σ_m in Python equals numpy's expression bit for bit, cancellation-prone sums included (seeded random values)."""
    rng = random.Random(11)
    for _ in range(20000):
        k = rng.randint(2, _SEQUENTIAL_SUM_MAX + 2)
        style = rng.random()
        if style < 0.3:
            means = [rng.choice([1e12, 1.0, 1e-300, 0.0, 3.3, 1e6 + 0.1, 2.0**-30]) * rng.choice([1, -1, 0.5]) for _ in range(k)]
        elif style < 0.6:
            means = [round(rng.uniform(-20, 20), rng.randint(0, 6)) for _ in range(k)]
        else:
            means = [rng.uniform(-1, 1) * 10.0 ** rng.randint(-12, 12) for _ in range(k)]
        if rng.random() < 0.5:
            ratios = np.ones(k)
        else:
            ratios = normalised_allocation([rng.choice([1.0, 2.0, 0.7, 1e-3, 1e-6, rng.uniform(0.5, 3)]) for _ in range(k)], k)
        means = np.asarray(means, dtype=float)
        got, expected = _sd_of_means(means, ratios), _numpy_sd_of_means(means, ratios)
        assert _bits(got) == _bits(expected) or got == expected == 0.0, (means.tolist(), ratios.tolist())


def _array_or_error(function, *args):
    """The array (dtype, shape, bytes), or the error with its message; numpy's warnings raised."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # an overflow numpy reports must be reported alike
        try:
            got = function(*args)
        except (InvalidParameter, RuntimeWarning) as exc:
            return type(exc).__name__, str(exc)
    return got.dtype.str, got.shape, got.tobytes(), got.flags.writeable


def test_ratios_equal_normalised_allocation():
    """_ratios gives normalised_allocation's array (value, dtype, shape) or its error, and shares read-only equal ratios (common practice, no source)."""
    rng = random.Random(5)
    cases = [None, [1.0, 2.0], [2.0, 2.0, 4.0], [1e-6, 1e-3], [0.1, 0.7, 0.3], [1, 2], [1.0, 0.0], [1.0, -1.0],
             [1.0, math.inf], [1.0, math.nan], [5e-324, 1.0], [5e-324, 1.7e308], (1.0, 2.0), np.array([1.0, 3.0]),
             [1.0], [1.0, 2.0, 3.0], [True, 2.0]]
    cases += [[rng.uniform(1e-3, 1e3) for _ in range(rng.randint(2, 9))] for _ in range(300)]
    for allocation in cases:
        k = 2 if allocation is None else len(allocation) if len(allocation) != 1 else 2
        for size in {k, k + 1}:
            got, expected = _array_or_error(_ratios, allocation, size), _array_or_error(normalised_allocation, allocation, size)
            if allocation is None:  # the shared equal ratios, read-only by design
                got, expected = got[:3], expected[:3]
            assert got == expected, (allocation, size)
    shared = _ratios(None, 4)
    assert shared is _ratios(None, 4) and not shared.flags.writeable


def test_answers_leave_the_shared_equal_ratios_untouched():
    """The three questions on designs with equal allocation leave the shared ratios all ones and read-only (common practice, no source)."""
    from samplewright.api import batch

    for design in ({"type": "one_way_anova", "cohens_f": 0.25, "groups": 4},
                   {"type": "one_way_anova", "group_means": [10, 12, 11, 14], "sd": 4}):
        batch.answer("power", {"design": design, "n_per_group": 20})
        batch.answer("sample-size", {"design": design, "target_power": 0.8})
        batch.answer_many("power", [{"design": design, "n_per_group": n} for n in (3, 20, 50)])
    batch.answer("detectable-effect", {"design": {"type": "one_way_anova", "groups": 4}, "n_per_group": 20,
                                       "target_power": 0.8})
    shared = _ratios(None, 4)
    assert shared.tolist() == [1.0] * 4 and not shared.flags.writeable
    assert ADAPTER.build({"cohens_f": 0.25, "groups": 4}, None).ratios is shared
