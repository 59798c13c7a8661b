"""The strict JSON reader ``parse_json_text`` (api/body.py), called directly.

The grammar is RFC 8259 (numbers in section 6, strings and escapes in section 7); what the
reader refuses on top of it (NaN and Infinity, duplicate keys, integer literals over
MAX_INTEGER_DIGITS digits, nesting over MAX_NESTING levels, a leading BOM) and its messages
are the service's contract (common practice, no source). The reader takes a fast path for
text whose literals the C parser reads as the hooks would, and reads the depth from the
text; the tests put each refusal both where that path applies and where it does not.
"""

from __future__ import annotations

import json
import math
import random

import pytest

from samplewright.api.body import MAX_INTEGER_DIGITS, MAX_NESTING, parse_json_text
from samplewright.api.fields import TinyNumber

TOO_DEEP = f"nesting is too deep (at most {MAX_NESTING} levels of arrays and objects)"


def _arrays(depth: int, inner: str = "1") -> str:
    return "[" * depth + inner + "]" * depth


def _objects(depth: int, inner: str = "1") -> str:
    return '{"a": ' * depth + inner + "}" * depth


def _depth(value) -> int:
    if isinstance(value, dict):
        return 1 + max(map(_depth, value.values()), default=0)
    if isinstance(value, list):
        return 1 + max(map(_depth, value), default=0)
    return 0


# -- values ---------------------------------------------------------------------------------


def test_ordinary_request_reads_as_json_loads_reads_it():
    """A typical request body gives the same value as json.loads (RFC 8259 grammar)."""
    text = ('{"design": {"type": "one_way_anova", "group_means": [14.76, 12.59, 19.2, 12.38, 13.18], "sd": 7.74},'
            ' "n_per_group": 114, "alpha": 0.05, "ok": true, "none": null, "neg": -3, "exp": 1.5E+3, "u": "\\u00e9"}')
    value = parse_json_text(text)
    assert value == json.loads(text)
    assert type(value["n_per_group"]) is int and type(value["alpha"]) is float


@pytest.mark.parametrize("literal", ["0", "-0", "0.0", "-0.0", "0e5", "0E-400", "-0.0e-999", "0." + "0" * 400])
def test_zero_in_any_spelling_is_a_float_or_int_zero_not_a_tiny_number(literal):
    """A zero however written (long exponent, long fraction) is 0, not a TinyNumber (common practice, no source)."""
    value = parse_json_text(f"[{literal}]")[0]
    assert not isinstance(value, TinyNumber) and value == 0
    assert type(value) is (int if literal in ("0", "-0") else float)


@pytest.mark.parametrize("literal", ["1e-400", "-1e-400", "4.9e-324", "2.5e-324", "1e-310", "2.225073858507201e-308",
                                     "1E-400", "0.0001e-400", "0." + "0" * 400 + "1", "-0." + "0" * 320 + "5"])
def test_nonzero_below_the_smallest_normal_double_is_kept_as_tiny_number_text(literal):
    """A nonzero literal a double cannot hold at full precision is a TinyNumber with its text (common practice, no source)."""
    for text in (f"[{literal}]", f'{{"x": {literal}, "y": [1, 2.5]}}'):
        value = parse_json_text(text)
        tiny = value[0] if isinstance(value, list) else value["x"]
        assert isinstance(tiny, TinyNumber) and tiny.text == literal


@pytest.mark.parametrize("literal", ["2.2250738585072014e-308", "1e-300", "1e100", "1.5e-05", "0." + "0" * 40 + "1",
                                     "123456789012345.1234567890123456"])
def test_small_or_long_but_normal_float_is_read_as_float_does(literal):
    """A literal a double holds is the float that float() gives (RFC 8259 section 6 numbers)."""
    value = parse_json_text(f"[{literal}]")[0]
    assert type(value) is float and value == float(literal)


def test_float_too_large_for_a_double_reads_as_infinity_for_the_fields_to_refuse():
    """1e999 reads as float('inf'), as before; the number fields refuse it (common practice, no source)."""
    assert parse_json_text("[1e999, -1E+400]") == [math.inf, -math.inf]


@pytest.mark.parametrize("digits", [1, MAX_INTEGER_DIGITS - 1, MAX_INTEGER_DIGITS])
def test_integer_literal_up_to_the_digit_limit_is_an_exact_int(digits):
    """An integer of at most MAX_INTEGER_DIGITS digits, signed or not, is the exact int (common practice, no source)."""
    for literal in ("7" * digits, "-" + "7" * digits):
        assert parse_json_text(f'{{"n": [{literal}]}}') == {"n": [int(literal)]}


def test_lone_surrogate_escape_and_non_ascii_text_are_read():
    """Strings with non-ASCII text, escapes and a lone surrogate are read as json.loads reads them (RFC 8259 section 7)."""
    for text in ['["é[", "\\ud800", "\\"]", "\\\\"]', '["\ud800]"]', '{"\\u005b": "\\u005d"}']:
        assert parse_json_text(text) == json.loads(text)


# -- refusals -------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["NaN", "Infinity", "-Infinity"])
def test_non_finite_constants_are_refused_by_name(name):
    """NaN, Infinity and -Infinity are not JSON (RFC 8259 section 6) and are refused naming the constant."""
    for text in (f"[{name}]", f'{{"a": {{"b": [1, {name}]}}}}', f'["{"1" * 40}", 1e-400, {name}]'):
        with pytest.raises(ValueError) as caught:
            parse_json_text(text)
        assert str(caught.value) == f"{name} is not valid JSON (numbers must be finite)"


def test_duplicate_key_is_refused_naming_the_first_repeated_key():
    """A repeated key is refused and the message names the first one repeated (common practice, no source)."""
    for text in ['{"a": 1, "b": 2, "b": 3, "a": 4}', '{"x": [{"a": 1, "b": 2, "b": 3, "a": 4}], "y": 1e-400}']:
        with pytest.raises(ValueError, match=r"^duplicate key 'b'$"):
            parse_json_text(text)


def test_duplicate_key_message_truncates_a_long_key():
    """The duplicate-key message shows at most 60 characters of the key (common practice, no source)."""
    key = "k" * 100
    with pytest.raises(ValueError) as caught:
        parse_json_text(f'{{"{key}": 1, "{key}": 2}}')
    assert str(caught.value) == f"duplicate key {key[:60]!r}"


@pytest.mark.parametrize("literal", ["1" * (MAX_INTEGER_DIGITS + 1), "-" + "1" * (MAX_INTEGER_DIGITS + 1), "9" * 5000])
def test_integer_literal_over_the_digit_limit_is_refused_with_its_digit_count(literal):
    """An integer literal of more than MAX_INTEGER_DIGITS digits is refused, counting digits only (common practice, no source)."""
    digits = len(literal.lstrip("-"))
    for text in (f"[{literal}]", f'{{"a": [1.5, 2, {literal}]}}'):
        with pytest.raises(ValueError) as caught:
            parse_json_text(text)
        assert str(caught.value) == f"an integer literal of {digits} digits is out of range"


def test_long_digit_run_inside_a_string_is_not_an_integer_literal():
    """Digits, a long exponent or brackets inside a string are text, not literals (RFC 8259 section 7)."""
    text = '{"id": "' + "1" * 40 + '", "e": "1e-400", "b": "[[[{{{", "c": "]]]}}}"}'
    assert parse_json_text(text) == json.loads(text)


def test_first_problem_in_the_text_is_the_one_reported():
    """Of several problems the reader reports the first in the text, as a streaming parser does (common practice, no source)."""
    cases = [
        ("[NaN, " + "1" * 40 + "]", "NaN is not valid JSON (numbers must be finite)"),
        ("[" + "1" * 40 + ", NaN]", "an integer literal of 40 digits is out of range"),
        ('[{"a": 1, "a": 2}, NaN]', "duplicate key 'a'"),
    ]
    for text, message in cases:
        with pytest.raises(ValueError) as caught:
            parse_json_text(text)
        assert str(caught.value) == message
    with pytest.raises(json.JSONDecodeError, match="Expecting value"):
        parse_json_text("[1, 2,] " + "1" * 40)


def test_byte_order_mark_is_refused_as_json_loads_refuses_it():
    """A leading BOM is refused with json.loads's own message (RFC 8259 section 8.1: no BOM)."""
    for text in ("\ufeff{}", "\ufeff", "\ufeff[1e-400]"):
        with pytest.raises(json.JSONDecodeError) as caught:
            parse_json_text(text)
        assert caught.value.msg == "Unexpected UTF-8 BOM (decode using utf-8-sig)" and caught.value.pos == 0


@pytest.mark.parametrize("text, message", [("", "Expecting value"), ("{} x", "Extra data"), ("[1, 2,]", "Expecting value"),
                                           ("{'a': 1}", "Expecting property name enclosed in double quotes")])
def test_malformed_text_raises_json_decode_error(text, message):
    """Text outside the grammar raises JSONDecodeError with the parser's message (RFC 8259)."""
    with pytest.raises(json.JSONDecodeError) as caught:
        parse_json_text(text)
    assert caught.value.msg == message


# -- nesting --------------------------------------------------------------------------------


@pytest.mark.parametrize("build", [_arrays, _objects], ids=["arrays", "objects"])
def test_nesting_up_to_the_limit_is_read_and_one_more_level_is_refused(build):
    """MAX_NESTING levels are read; MAX_NESTING + 1 are refused with the nesting message (common practice, no source)."""
    assert _depth(parse_json_text(build(MAX_NESTING))) == MAX_NESTING
    with pytest.raises(ValueError) as caught:
        parse_json_text(build(MAX_NESTING + 1))
    assert str(caught.value) == TOO_DEEP


def test_empty_containers_count_towards_the_depth():
    """An empty array or object at the deepest level is a level like any other (common practice, no source)."""
    for inner in ("[]", "{}"):
        assert _depth(parse_json_text(_arrays(MAX_NESTING - 1, inner))) == MAX_NESTING
        with pytest.raises(ValueError, match="nesting is too deep"):
            parse_json_text(_arrays(MAX_NESTING, inner))


def test_brackets_in_strings_do_not_count_as_nesting():
    """Brackets, escaped quotes and backslashes inside strings are not structure (RFC 8259 section 7)."""
    strings = ['"]]]]]]]]]]"', '"[[[[[[[[[["', '"\\"]]]]"', '"\\\\"', '"\\\\\\"[[[["', '"\\u005b\\u005d"', '"é]}"']
    shallow = "[" + ", ".join(strings * 10) + ", " + _objects(MAX_NESTING - 1, '"' + "[" * 50 + '"') + "]"
    assert parse_json_text(shallow) == json.loads(shallow)
    many = '{"a": "' + "[" * 100 + '", "b": [1, 2]}'
    assert parse_json_text(many) == json.loads(many)
    closers_hide_nothing = _arrays(MAX_NESTING + 1, '"' + "]" * 50 + '"')
    with pytest.raises(ValueError, match="nesting is too deep"):
        parse_json_text(closers_hide_nothing)
    escaped_quote_then_bracket = _arrays(MAX_NESTING + 1, '"\\\\", "\\"]]]]]]", "\\\\\\""')
    with pytest.raises(ValueError, match="nesting is too deep"):
        parse_json_text(escaped_quote_then_bracket)


def test_wide_shallow_body_with_many_brackets_is_read():
    """Thousands of sibling containers add no depth (common practice, no source)."""
    text = json.dumps({"items": [{"id": f"p{i}", "request": {"design": {"x": [1, [2, {"y": [3]}]]}}} for i in range(3000)]})
    assert parse_json_text(text) == json.loads(text)


@pytest.mark.parametrize("depth", [MAX_NESTING + 1, 100, 900, 1000, 5000, 100_000])
def test_absurd_depth_is_refused_without_a_recursion_error(depth):
    """Any depth over the limit, far past the recursion limit too, is the nesting ValueError (common practice, no source)."""
    for text in (_arrays(depth), _objects(depth), '["x", ' + _arrays(depth) + "]"):
        with pytest.raises(ValueError) as caught:
            parse_json_text(text)
        assert str(caught.value) == TOO_DEEP


def test_unclosed_absurd_depth_is_the_nesting_error_not_a_recursion_error():
    """100,000 unclosed '[' give the nesting ValueError before the parser sees the end (common practice, no source)."""
    with pytest.raises(ValueError) as caught:
        parse_json_text("[" * 100_000)
    assert str(caught.value) == TOO_DEEP


def test_depth_matches_the_parsed_value_for_random_structures():
    """For random nestings around the limit with awkward strings, refusal is exactly depth > MAX_NESTING (seeded, common practice)."""
    rng = random.Random(20240601)
    atoms = ['1', '-2.5e-3', '"["', '"]]"', '"{"', '"\\\\"', '"\\"]"', '"\\\\\\"[["', '""', "true", "null", "[]", "{}"]
    keys = ['"k"', '"["', '"]"', '"\\\\"', '"\\"}"']

    def build(level: int, target: int) -> str:
        if level >= target:
            return rng.choice(atoms)
        children = [build(level + 1, target)] + [rng.choice(atoms) for _ in range(rng.randint(0, 2))]
        rng.shuffle(children)
        if rng.random() < 0.5:
            return "[" + ", ".join(children) + "]"
        return "{" + ", ".join(f"{keys[i % len(keys)][:-1]}{i}\": {child}" for i, child in enumerate(children)) + "}"

    for _ in range(300):
        text = build(0, rng.randint(MAX_NESTING - 4, MAX_NESTING + 4))
        expected = _depth(json.loads(text))
        if expected > MAX_NESTING:
            with pytest.raises(ValueError, match="nesting is too deep"):
                parse_json_text(text)
        else:
            assert parse_json_text(text) == json.loads(text)
