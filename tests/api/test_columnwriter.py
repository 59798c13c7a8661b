"""Answers written a column at a time are the encoder's text of the same dicts.

Reference: the answers' own writer (``ANSWER_WRITER.encode``, which equals json's compact
ASCII encoder, test_jsontext.py); the comparison is exact, character for character.
Source: common practice, no source.
"""

from __future__ import annotations

import random

import numpy as np
import pytest

from samplewright.api.columnwriter import Sheet, Template
from samplewright.api.jsontext import ANSWER_WRITER


def _effect(rng: random.Random) -> dict:
    out = {"cohens_f": rng.random()}
    if rng.random() < 0.5:
        out["eta_squared"] = rng.random() / 3
    if rng.random() < 0.3:
        out["sd_of_means"] = rng.choice([0.0, 5.0, rng.uniform(0, 1e6)])
    if rng.random() < 0.1:
        out = {}
    return out


def test_a_group_of_answers_is_the_encoders_text():
    """Seeded answers with float, integer, row, text and dict columns (dicts of several shapes)."""
    rng = random.Random(20261202)
    nprng = np.random.default_rng(7)
    count = 3000
    power = nprng.uniform(0, 1, count)
    df2 = nprng.integers(2, 500, count).astype(float)
    sizes = nprng.integers(1, 400, (count, 4))
    alpha = [rng.choice([0.05, 0.01, 1e-12]) for _ in range(count)]
    labels = [rng.choice(["a", "é σ", "100 %", '"q"']) for _ in range(count)]
    effects = [_effect(rng) for _ in range(count)]
    warnings = [[] if rng.random() < 0.8 else ["fewer than 5 units", "σ ≠"] for _ in range(count)]
    sheet = Sheet()
    template = Template(("power", ("kind", '"one_way_anova"'), "alpha", "df", "sizes", "total", "label",
                         "warnings", "effect"))
    texts = sheet.fill(template, (
        sheet.floats(power), sheet.values(alpha), sheet.floats(df2), sheet.integers(sizes),
        sheet.integers(sizes.sum(axis=1)), sheet.values(labels), sheet.values(warnings), sheet.dicts(effects)))
    for j, text in enumerate(texts):
        expected = {"power": float(power[j]), "kind": "one_way_anova", "alpha": alpha[j], "df": float(df2[j]),
                    "sizes": sizes[j].tolist(), "total": int(sizes[j].sum()), "label": labels[j],
                    "warnings": warnings[j], "effect": effects[j]}
        assert text == ANSWER_WRITER.encode(expected), j


def test_an_open_template_leaves_off_the_closing_brace():
    """closed=False gives the text up to the last member, for fixed members appended after it."""
    sheet = Sheet()
    (text,) = sheet.fill(Template(("n",), closed=False), (sheet.values([3]),))
    assert text == '{"n":3'


@pytest.mark.parametrize("values", [[1, 2.5], [True, 1], [2**70, 1], [None, "x"], [[1], {"a": 1}]],
                         ids=["mixed numbers", "bool", "long int", "null", "nested"])
def test_unusual_columns_are_written_by_the_encoder(values):
    """A column that is not all floats or all small integers is encoded value by value."""
    sheet = Sheet()
    texts = sheet.fill(Template(("v",)), (sheet.values(values),))
    assert texts == [ANSWER_WRITER.encode({"v": v}) for v in values]


def test_dicts_with_keys_json_converts_are_written_by_the_encoder():
    """Non-string keys, empty dicts and one shape among others give the encoder's text."""
    values = [{1: 0.5}, {}, {"a": 1.25}, {"a": 2.0, "b": [1]}]
    sheet = Sheet()
    assert sheet.fill(Template(("d",)), (sheet.dicts(values),)) == [ANSWER_WRITER.encode({"d": v}) for v in values]


def test_a_number_that_is_not_finite_is_refused():
    """NaN never becomes text: ValueError, as the encoder with allow_nan=False raises."""
    sheet = Sheet()
    with pytest.raises(ValueError):
        sheet.fill(Template(("p",)), (sheet.floats(np.array([0.5, np.nan])),))


def test_repeated_floats_are_written_once_and_copied_exactly():
    """A column of few distinct values (0.0 and -0.0 among them) gives the encoder's text of each."""
    values = np.random.default_rng(8).choice([0.05, 0.0, -0.0, 1e-12, 3.0, 2.5e300], 5000)
    sheet = Sheet()
    texts = sheet.fill(Template(("v",)), (sheet.floats(values),))
    assert texts == [ANSWER_WRITER.encode({"v": v}) for v in values.tolist()]
