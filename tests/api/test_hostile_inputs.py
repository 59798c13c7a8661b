"""Every applicable row of /work/shared/HOSTILE-INPUTS.md, through the test client.

Expected everywhere: a 4xx ``application/problem+json`` body whose ``status`` equals the
HTTP status and, for validation failures, names the field in ``errors``; never a 500,
HTML, invalid JSON or a silently changed value. Expected statuses and field names are the
service's contract (common practice, no source) unless a comment names another source.

Rows 9 (chunked body over the limit), 33 (slow client) and 34 (long request line, many
headers) are **server** rows: they need a real gunicorn on 127.0.0.1 and are left to the
issue that adds the server tests; they are not covered here.
"""

from __future__ import annotations

import copy
import json
import time

import mpmath
import pytest
from scipy import stats

from samplewright.api.problems import MAX_ERRORS
from samplewright.app import create_app
from samplewright.config import Settings

POWER, SAMPLE, DETECT = "/v1/power", "/v1/sample-size", "/v1/detectable-effect"
ROUTES = (POWER, SAMPLE, DETECT)
ROUTE_IDS = {POWER: "power", SAMPLE: "sample", DETECT: "detect"}


def _design(**fields):
    return {"type": "one_way_anova", **fields}


#: Valid bodies; every path in FIELDS below exists in the body it names.
BODIES = {
    "power": {"design": _design(groups=3, cohens_f=0.25, allocation=[1, 1, 1]), "n_per_group": 20, "alpha": 0.05},
    "power_sizes": {"design": _design(groups=3, cohens_f=0.25), "group_sizes": [20, 20, 20], "alpha": 0.05},
    "power_means": {"design": _design(group_means=[0.0, 0.5, 1.0], sd=1.0), "n_per_group": 20},
    "power_eta": {"design": _design(groups=3, eta_squared=0.06), "n_per_group": 20},
    "power_range": {"design": _design(groups=3, min_range=1.0, sd=1.0), "n_per_group": 20},
    "sample": {
        "design": _design(groups=3, cohens_f=0.25, allocation=[1, 1, 1]),
        "alpha": 0.05, "target_power": 0.8, "dropout_rate": 0.1,
    },
    "sample_means": {"design": _design(group_means=[0.0, 0.5, 1.0], sd=1.0), "target_power": 0.8},
    "sample_eta": {"design": _design(groups=3, eta_squared=0.06), "target_power": 0.8},
    "sample_range": {"design": _design(groups=3, min_range=1.0, sd=1.0), "target_power": 0.8},
    "detect": {
        "design": _design(groups=3, sd=1.0, allocation=[1, 1, 1]),
        "n_per_group": 20, "alpha": 0.05, "target_power": 0.8,
    },
    "detect_sizes": {"design": _design(groups=3), "group_sizes": [20, 20, 20], "target_power": 0.8},
}
ROUTE_OF = {name: POWER if name.startswith("power") else SAMPLE if name.startswith("sample") else DETECT
            for name in BODIES}
#: One base body per route for the rows that do not depend on a field.
BASE = {POWER: BODIES["power"], SAMPLE: BODIES["sample"], DETECT: BODIES["detect"]}

#: (body, path, kind): every numeric request field; "i" integer fields, "f" number fields.
FIELDS = [
    ("power", "alpha", "f"), ("power", "n_per_group", "i"), ("power", "design.groups", "i"),
    ("power", "design.cohens_f", "f"), ("power", "design.allocation.1", "f"),
    ("power_sizes", "group_sizes.1", "i"),
    ("power_means", "design.group_means.1", "f"), ("power_means", "design.sd", "f"),
    ("power_eta", "design.eta_squared", "f"), ("power_range", "design.min_range", "f"),
    ("sample", "alpha", "f"), ("sample", "target_power", "f"), ("sample", "dropout_rate", "f"),
    ("sample", "design.groups", "i"), ("sample", "design.cohens_f", "f"), ("sample", "design.allocation.1", "f"),
    ("sample_means", "design.group_means.1", "f"), ("sample_means", "design.sd", "f"),
    ("sample_eta", "design.eta_squared", "f"), ("sample_range", "design.min_range", "f"),
    ("detect", "alpha", "f"), ("detect", "target_power", "f"), ("detect", "n_per_group", "i"),
    ("detect", "design.groups", "i"), ("detect", "design.sd", "f"), ("detect", "design.allocation.1", "f"),
    ("detect_sizes", "group_sizes.1", "i"),
]
INT_FIELDS = [f for f in FIELDS if f[2] == "i"]
FLOAT_FIELDS = [f for f in FIELDS if f[2] == "f"]
#: Fields that carry an effect size or alpha (row 18 names "alpha or an effect").
ALPHA_AND_EFFECTS = [f for f in FLOAT_FIELDS if f[1] in {
    "alpha", "design.cohens_f", "design.eta_squared", "design.min_range", "design.group_means.1"}]

LITERAL = "__literal__"


def _field_id(case) -> str:
    return f"{case[0]}-{case[1]}"


def set_path(body: dict, path: str, value):
    """A deep copy of ``body`` with the value at a dotted path (list indices allowed) replaced."""
    body = copy.deepcopy(body)
    *parents, last = path.split(".")
    node = body
    for part in parents:
        node = node[int(part)] if isinstance(node, list) else node[part]
    if isinstance(node, list):
        node[int(last)] = value
    else:
        node[last] = value
    return body


def with_literal(body: dict, path: str, literal: str) -> str:
    """The body as JSON text with a raw literal (``NaN``, ``1e999``, …) at ``path``."""
    text = json.dumps(set_path(body, path, LITERAL))
    assert text.count(f'"{LITERAL}"') == 1
    return text.replace(f'"{LITERAL}"', literal)


def for_each(values, check) -> None:
    """Run ``check(value)`` for every value, saying which value failed."""
    for value in values:
        try:
            check(value)
        except AssertionError as exc:
            raise AssertionError(f"for value {value!r}: {exc}") from exc


def get_path(body: dict, path: str):
    node = body
    for part in path.split("."):
        node = node[int(part)] if isinstance(node, list) else node[part]
    return node


@pytest.mark.parametrize("name", sorted(BODIES))
def test_base_bodies_are_valid(post_json, assert_ok, name):
    """Each base body used by the table is itself accepted (so a 422 below is the mutation's)."""
    assert_ok(post_json(ROUTE_OF[name], BODIES[name]))


# -- row 1: media type -------------------------------------------------------------------


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize(
    "content_type, data",
    [
        ("text/plain", None),
        (None, None),
        ("application/x-www-form-urlencoded", "alpha=0.05&n_per_group=20"),
        ("multipart/form-data; boundary=xyz", "--xyz\r\nContent-Disposition: form-data; name=\"a\"\r\n\r\n1\r\n--xyz--\r\n"),
        ("text/json", None),
    ],
    ids=["text-plain", "missing", "form", "multipart", "text-json"],
)
def test_row01_wrong_media_type_is_415(post_json, assert_problem, route, content_type, data):
    """Row 1: a body that is not application/json is a 415 problem with Accept-Post."""
    response = post_json(route, data if data is not None else json.dumps(BASE[route]), content_type=content_type)
    assert_problem(response, 415)
    assert "application/json" in response.headers["Accept-Post"]


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
def test_row01_json_suffix_media_type_is_accepted(post_json, assert_ok, route):
    """Row 1 (converse): application/json with a charset, and a +json type, are read as JSON."""
    assert_ok(post_json(route, BASE[route], content_type="application/json; charset=utf-8"))
    assert_ok(post_json(route, BASE[route], content_type="application/vnd.samplewright+json"))


# -- row 2: unparsable bodies ------------------------------------------------------------


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize(
    "data, reason",
    [
        (b"", "empty"),
        (b'{"design": {"type": "one_way_anova", ', "line 1 column"),
        (b"{'alpha': 0.05}", "property name"),
        (b'{"alpha": 0.05} x', "extra data"),
        (b'{"alpha": 0.05}{}', "extra data"),
        (b'{"alpha": "\xff\xfe"}', "utf-8"),
        (b'{"alpha": "\xc3"}', "utf-8"),
        (b"\xef\xbb\xbf" + b'{"alpha": 0.05}', "bom"),
    ],
    ids=["empty", "truncated", "single-quotes", "trailing-garbage", "two-documents", "invalid-utf8",
         "truncated-utf8", "utf8-bom"],
)
def test_row02_unparsable_body_is_400_with_reason(post_json, assert_problem, route, data, reason):
    """Row 2: empty, malformed, trailing garbage or invalid UTF-8 is a 400 giving the reason."""
    assert_problem(post_json(route, data), 400, detail_contains=reason)


# -- row 3: not an object ----------------------------------------------------------------


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize("text", ["null", "[]", "[1, 2]", '"x"', "42", "true", "1.5"])
def test_row03_top_level_not_object_is_422(post_json, assert_problem, route, text):
    """Row 3: a top-level null, array, string or number is a 422 'body must be a JSON object'."""
    body = assert_problem(post_json(route, text), 422, "body", detail_contains="must be a JSON object")
    assert body["errors"]["body"] == ["must be a JSON object"]


# -- row 4: non-standard constants -------------------------------------------------------


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize("path", ["alpha", "design.groups", "design.allocation.1", "zzz_unknown"])
def test_row04_nan_and_infinity_literals_are_400(post_json, assert_problem, route, path):
    """Row 4: NaN/Infinity/-Infinity anywhere (top level, nested, in a list, unknown key) is a 400."""
    body = BASE[route] if path != "zzz_unknown" else {**BASE[route], "zzz_unknown": 0}
    for_each(["NaN", "Infinity", "-Infinity"], lambda literal: assert_problem(
        post_json(route, with_literal(body, path, literal)), 400, detail_contains="not valid JSON"))


# -- row 5: duplicate keys ---------------------------------------------------------------


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize(
    "key, text_of",
    [
        ("alpha", lambda base: json.dumps(base)[:-1] + ', "alpha": 0.01}'),
        ("type", lambda base: json.dumps(base).replace('"type": "one_way_anova"', '"type": "one_way_anova", "type": "x"')),
        ("groups", lambda base: json.dumps(base).replace('"groups": 3', '"groups": 3, "groups": 4')),
    ],
    ids=["top-level", "in-design-type", "in-design-groups"],
)
def test_row05_duplicate_key_is_400_naming_the_key(post_json, assert_problem, route, key, text_of):
    """Row 5: a repeated key is refused (400) and named, never 'last one wins'."""
    assert_problem(post_json(route, text_of(BASE[route])), 400, detail_contains=f"duplicate key '{key}'")


# -- row 6: deep nesting -----------------------------------------------------------------


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize("kind", ["arrays", "objects"])
@pytest.mark.parametrize("path", ["alpha", "design.groups", "zzz_unknown"])
def test_row06_nesting_5000_deep_is_400(post_json, assert_problem, record_property, route, kind, path):
    """Row 6: 5,000 levels of nesting inside a field is a 400 (no RecursionError, no 500)."""
    depth = 5000
    nest = "[" * depth + "1" + "]" * depth if kind == "arrays" else '{"a":' * depth + "1" + "}" * depth
    body = BASE[route] if path != "zzz_unknown" else {**BASE[route], "zzz_unknown": 0}
    started = time.perf_counter()
    response = post_json(route, with_literal(body, path, nest))
    record_property("seconds", time.perf_counter() - started)
    assert_problem(response, 400, detail_contains="nesting is too deep")


def test_row06_every_depth_near_the_recursion_limit_is_400(post_json, assert_problem):
    """Row 6: depths 40–1,100 (around the interpreter's recursion limit) are all a clean 400."""
    # Depths just below the recursion limit parse but used to overflow later, in validation
    # or in repr() for the error message; the reader now caps nesting itself.
    for depth in list(range(40, 900, 97)) + list(range(900, 1100)):
        for value in ("[" * depth + "1" + "]" * depth, '{"a":' * depth + "1" + "}" * depth):
            response = post_json(POWER, with_literal(BODIES["power"], "alpha", value))
            assert_problem(response, 400, detail_contains="nesting is too deep")


def test_row06_ordinary_nesting_is_accepted(post_json, assert_ok):
    """Row 6 (converse): the nesting a real request has (body → design → list) is fine."""
    assert_ok(post_json(POWER, BODIES["power"]))


# -- row 7: huge integer literals --------------------------------------------------------


@pytest.mark.parametrize("case", FIELDS, ids=_field_id)
def test_row07_integer_literal_of_4000_digits_is_400(post_json, assert_problem, record_property, case):
    """Row 7: a ±4,000-digit integer literal in any numeric field is refused at parse time (400)."""
    name, path, _ = case
    started = time.perf_counter()
    for_each(["9" * 4000, "-" + "9" * 4000], lambda literal: assert_problem(
        post_json(ROUTE_OF[name], with_literal(BODIES[name], path, literal)), 400, detail_contains="4000 digits"))
    record_property("seconds", time.perf_counter() - started)


@pytest.mark.parametrize("case", FIELDS, ids=_field_id)
def test_row07_float_literal_of_4000_digits_is_422(post_json, assert_problem, case):
    """Row 7: a 4,000-digit number with a fraction overflows to infinity and is a 422 for the field."""
    name, path, _ = case
    response = post_json(ROUTE_OF[name], with_literal(BODIES[name], path, "9" * 4000 + ".5"))
    assert_problem(response, 422, path)


# -- row 8: body size --------------------------------------------------------------------


def _padded(body: dict, size: int) -> bytes:
    """The body as JSON padded with trailing spaces to exactly ``size`` bytes."""
    data = json.dumps(body).encode()
    assert len(data) <= size
    return data + b" " * (size - len(data))


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
def test_row08_body_over_the_limit_is_413(post_json, assert_problem, settings, route):
    """Row 8: a body one byte over the limit (with Content-Length) is a 413 stating the limit."""
    response = post_json(route, _padded(BASE[route], settings.max_body_bytes + 1))
    assert_problem(response, 413, detail_contains=str(settings.max_body_bytes))


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
def test_row08_body_at_the_limit_is_read(post_json, assert_ok, settings, route):
    """Row 8 (boundary): a body of exactly the limit is accepted."""
    assert_ok(post_json(route, _padded(BASE[route], settings.max_body_bytes)))


def test_row08_limit_comes_from_injected_settings(assert_ok, assert_problem):
    """Row 8: the limit is the injected setting (1 KiB here), not a constant."""
    client = create_app(Settings(max_body_bytes=1024)).test_client()
    assert_ok(client.post(POWER, data=_padded(BASE[POWER], 1024), content_type="application/json"))
    response = client.post(POWER, data=_padded(BASE[POWER], 1025), content_type="application/json")
    assert_problem(response, 413, detail_contains="1024")


# -- row 9 (server: chunked body over the limit) is left to the server tests. ----------------


# -- row 10: wrong method ----------------------------------------------------------------


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize("method", ["GET", "PUT", "DELETE", "PATCH"])
def test_row10_wrong_method_on_compute_route_is_405_with_allow(client, assert_problem, route, method):
    """Row 10: GET/PUT/DELETE/PATCH on a compute route is a 405 problem keeping the Allow header."""
    response = client.open(route, method=method, json=BASE[route])
    body = assert_problem(response, 405)
    allowed = {m.strip() for m in response.headers["Allow"].split(",")}
    assert "POST" in allowed and method not in allowed
    assert "POST" in body["detail"]


@pytest.mark.parametrize("route", ["/healthz", "/v1/version", "/openapi.json"])
@pytest.mark.parametrize("method", ["POST", "PUT", "DELETE"])
def test_row10_wrong_method_on_service_route_is_405_with_allow(client, assert_problem, route, method):
    """Row 10: writing to a read-only route is a 405 problem whose Allow lists GET."""
    response = client.open(route, method=method, json={})
    assert_problem(response, 405)
    assert "GET" in response.headers["Allow"]


def test_unknown_route_is_404_problem(client, assert_problem):
    """An unknown path is a 404 problem, not an HTML page (same error path as row 10)."""
    assert_problem(client.get("/v1/nope"), 404)
    assert_problem(client.post("/v2/power", json=BASE[POWER]), 404)


# -- row 11: unknown fields --------------------------------------------------------------


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize(
    "path, allowed",
    [("alhpa", "alpha"), ("design.grups", "groups"), ("design.cohen_f", "cohens_f"), ("Alpha", "alpha")],
    ids=["typo-top", "typo-design", "typo-effect", "wrong-case"],
)
def test_row11_unknown_field_is_422_naming_it(post_json, assert_problem, route, path, allowed):
    """Row 11: an unknown field or a typo is a 422 naming that field and listing the allowed ones."""
    body = set_path(BASE[route], path, 0.05)
    problem = assert_problem(post_json(route, body), 422, path)
    assert allowed in " ".join(problem["errors"][path])


# -- row 12: missing and null ------------------------------------------------------------


@pytest.mark.parametrize(
    "route, body, expected",
    [
        (POWER, {}, {"design", "n_per_group"}),
        (SAMPLE, {}, {"design", "target_power"}),
        (DETECT, {}, {"design", "target_power", "n_per_group"}),
        (POWER, {"design": None, "n_per_group": None, "alpha": None}, {"design", "n_per_group", "alpha"}),
        (POWER, {"design": None, "group_sizes": None}, {"design", "group_sizes"}),
        (SAMPLE, {"design": None, "target_power": None, "alpha": None, "dropout_rate": None},
         {"design", "target_power", "alpha", "dropout_rate"}),
        (DETECT, {"design": None, "n_per_group": None, "alpha": None, "target_power": None},
         {"design", "n_per_group", "alpha", "target_power"}),
        (POWER, {"design": _design(groups=None, cohens_f=None, allocation=None), "n_per_group": None},
         {"design.groups", "design.cohens_f", "design.allocation", "n_per_group"}),
        (SAMPLE, {"design": _design(group_means=None, sd=None), "target_power": None},
         {"design.group_means", "design.sd", "target_power"}),
        (DETECT, {"design": _design(groups=None, sd=None), "group_sizes": [None, 20, None], "target_power": 0.8},
         {"design.groups", "design.sd", "group_sizes.0", "group_sizes.2"}),
        (POWER, {"design": {}, "n_per_group": 20}, {"design.type"}),
        (POWER, {"design": _design(groups=3), "n_per_group": 20}, {"design"}),
    ],
    ids=["power-empty", "sample-empty", "detect-empty", "power-nulls", "power-null-sizes", "sample-nulls",
         "detect-nulls", "power-design-nulls", "sample-design-nulls", "detect-design-and-item-nulls",
         "power-design-no-type", "power-design-no-effect"],
)
def test_row12_missing_and_null_fields_are_all_listed(post_json, assert_problem, route, body, expected):
    """Row 12: missing required fields and nulls are a 422 listing every offending field."""
    problem = assert_problem(post_json(route, body), 422)
    assert expected <= set(problem["errors"]), problem["errors"]


# -- rows 13–19: numbers -----------------------------------------------------------------


@pytest.mark.parametrize("case", FIELDS, ids=_field_id)
def test_row13_boolean_for_a_number_is_422(post_json, assert_problem, case):
    """Row 13: true/false in a numeric field is a 422 for that field (bool is not a number)."""
    name, path, _ = case
    for_each([True, False], lambda value: assert_problem(
        post_json(ROUTE_OF[name], set_path(BODIES[name], path, value)), 422, path))


#: Decimal, padded, underscored, Arabic-Indic and fullwidth digits, integer, exponent, empty.
NUMERIC_STRINGS = ["0.05", " 3 ", "1_000", "\u0663", "\uff13", "20", "1e3", ""]


@pytest.mark.parametrize("case", FIELDS, ids=_field_id)
def test_row14_numeric_string_is_422_not_coerced(post_json, assert_problem, case):
    """Row 14: a numeric string ("0.05", " 3 ", "1_000", non-ASCII digits) is a 422, never coerced."""
    name, path, _ = case

    def check(value):
        problem = assert_problem(post_json(ROUTE_OF[name], set_path(BODIES[name], path, value)), 422, path)
        assert "JSON" in problem["errors"][path][0]  # "must be a JSON number/integer (got '…')"
        assert repr(value) in problem["errors"][path][0]  # the value is echoed

    for_each(NUMERIC_STRINGS, check)


@pytest.mark.parametrize("case", INT_FIELDS, ids=_field_id)
def test_row15_fraction_for_an_integer_is_422(post_json, assert_problem, case):
    """Row 15: a non-integral number (3.7, …) in an integer field is a 422, never truncated."""
    name, path, _ = case

    def check(value):
        problem = assert_problem(post_json(ROUTE_OF[name], set_path(BODIES[name], path, value)), 422, path)
        assert str(value) in problem["errors"][path][0]  # the value is echoed

    for_each([3.7, 20.5, 2.000001, -0.5], check)


@pytest.mark.parametrize("case", INT_FIELDS, ids=_field_id)
def test_row16_integral_float_is_accepted_as_integer(post_json, assert_ok, case):
    """Row 16: 20.0 (or 2e1) in an integer field is that integer, as JSON Schema counts it."""
    name, path, _ = case
    original = get_path(BODIES[name], path)
    exact = assert_ok(post_json(ROUTE_OF[name], BODIES[name]))

    def check(literal):
        body = assert_ok(post_json(ROUTE_OF[name], with_literal(BODIES[name], path, literal)))
        assert body == exact
        assert all(type(n) is int for n in body["group_sizes"])

    for_each([f"{original}.0", f"{original / 10:g}e1"], check)


@pytest.mark.parametrize("case", FIELDS, ids=_field_id)
def test_row17_overflowing_literal_is_422(post_json, assert_problem, case):
    """Row 17: 1e999 (which Python reads as infinity) is a 422 for the field."""
    name, path, _ = case
    for_each(["1e999", "-1e999", "1E400"], lambda literal: assert_problem(
        post_json(ROUTE_OF[name], with_literal(BODIES[name], path, literal)), 422, path))


@pytest.mark.parametrize("case", FLOAT_FIELDS, ids=_field_id)
def test_row18_underflowing_literal_is_422(post_json, assert_problem, case):
    """Row 18: 1e-400 (read as 0.0) or a subnormal in a number field is a 422, not a silent 0."""
    name, path, _ = case

    def check(literal):
        response = post_json(ROUTE_OF[name], with_literal(BODIES[name], path, literal))
        problem = assert_problem(response, 422, path)
        assert literal in problem["errors"][path][0]  # the literal is echoed, not "0.0"

    for_each(["1e-400", "-1e-400", "2.5e-324", "1e-310"], check)


@pytest.mark.parametrize("case", ALPHA_AND_EFFECTS, ids=_field_id)
def test_row18_true_zero_is_not_mistaken_for_underflow(post_json, assert_problem, assert_ok, case):
    """Row 18 (converse): a literal 0.0 / 0e0 is an ordinary zero (range rules apply, no underflow)."""
    name, path, _ = case
    for literal in ("0.0", "-0.0", "0e0", "0.000e-500"):
        response = post_json(ROUTE_OF[name], with_literal(BODIES[name], path, literal))
        if response.status_code == 422:
            body = assert_problem(response, 422)
            assert "too small to represent" not in json.dumps(body)
        else:
            assert_ok(response)


@pytest.mark.parametrize("case", INT_FIELDS, ids=_field_id)
def test_row19_huge_count_is_422(post_json, assert_problem, case):
    """Row 19: 1e308, 10^20, 10^28 or the cap + 1 for n or groups is a 422 (range), never accepted."""
    name, path, _ = case

    def check(literal):
        response = post_json(ROUTE_OF[name], with_literal(BODIES[name], path, literal))
        problem = assert_problem(response, 422, path)
        assert "must be" in problem["errors"][path][0]

    for_each(["1e308", "100000000000000000000", "1" + "0" * 28, "10000001"], check)


# -- row 20: alpha -----------------------------------------------------------------------


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize("alpha", [0, -0.0, -0.05, 1, 1.5, 1e-300, 1e-13, 0.6, 0.5000001],
                         ids=["zero", "minus-zero", "negative", "one", "above-one", "1e-300", "1e-13",
                              "0.6", "just-above-max"])
def test_row20_alpha_out_of_range_is_422(post_json, assert_problem, route, alpha):
    """Row 20: alpha ≤ 0, ≥ 1, 1e-300 or above the supported maximum 0.5 is a 422 naming alpha."""
    problem = assert_problem(post_json(route, set_path(BASE[route], "alpha", alpha)), 422, "alpha")
    assert "at least 1e-12 and at most 0.5" in problem["errors"]["alpha"][0]


@pytest.mark.parametrize("route", ROUTES, ids=ROUTE_IDS.get)
@pytest.mark.parametrize("alpha", [1e-12, 0.5])
def test_row20_alpha_bounds_are_inclusive(post_json, assert_ok, route, alpha):
    """Row 20 (boundary): alpha exactly 1e-12 or 0.5 is accepted (documented inclusive bounds)."""
    body = set_path(BASE[route], "alpha", alpha)
    if "target_power" in body:
        body["target_power"] = 0.9
    assert assert_ok(post_json(route, body))["alpha"] == alpha


# -- row 21: target power ----------------------------------------------------------------


@pytest.mark.parametrize("route", [SAMPLE, DETECT], ids=ROUTE_IDS.get)
@pytest.mark.parametrize(
    "alpha, target, says",
    [
        (0.05, 0.05, "exceed alpha"), (0.05, 0.01, "exceed alpha"), (0.2, 0.1, "exceed alpha"),
        (0.5, 0.5, "exceed alpha"), (0.05, 1.0, "at most 0.9999"), (0.05, 0.9999999999, "at most 0.9999"),
        (0.05, 1.5, "at most 0.9999"), (0.05, 0.0, "greater than 0"), (0.05, -0.5, "greater than 0"),
    ],
    ids=["equal", "below", "below-high-alpha", "equal-max-alpha", "one", "ten-nines", "above-one",
         "zero", "negative"],
)
def test_row21_target_power_relation_and_bounds(post_json, assert_problem, route, alpha, target, says):
    """Row 21: target power ≤ alpha, 1.0 or 0.9999999999 is a 422 naming target_power and the rule."""
    body = set_path(set_path(BASE[route], "alpha", alpha), "target_power", target)
    problem = assert_problem(post_json(route, body), 422, "target_power")
    assert says in problem["errors"]["target_power"][0]


# -- row 22: zero or vanishing effect in a sample-size request ----------------------------


@pytest.mark.parametrize(
    "design, field, says",
    [
        (_design(groups=3, cohens_f=0), "design", "zero"),
        (_design(groups=3, eta_squared=0), "design", "zero"),
        (_design(groups=3, min_range=0, sd=1), "design", "zero"),
        (_design(group_means=[5, 5, 5], sd=1), "design", "zero"),
        (_design(groups=3, cohens_f=1e-9), "target_power", "exceeds the cap of 10000000"),
        (_design(groups=3, eta_squared=1e-9), "target_power", "exceeds the cap of 10000000"),
        (_design(groups=3, min_range=1e-9, sd=1), "target_power", "exceeds the cap of 10000000"),
        (_design(group_means=[0, 1e-9], sd=1), "target_power", "exceeds the cap of 10000000"),
        (_design(groups=100, cohens_f=1e-9, allocation=[1] * 99 + [1000]), "target_power", "exceeds the cap"),
    ],
    ids=["f-zero", "eta-zero", "range-zero", "equal-means", "f-1e-9", "eta-1e-9", "range-1e-9",
         "means-1e-9", "f-1e-9-unequal"],
)
def test_row22_zero_or_tiny_effect_sample_size_is_422(post_json, assert_problem, record_property, design, field, says):
    """Row 22: a zero or 1e-9 effect is a 422 saying why (zero, or the size cap), not a 500 or a hang."""
    started = time.perf_counter()
    response = post_json(SAMPLE, {"design": design, "target_power": 0.8})
    record_property("seconds", time.perf_counter() - started)  # recorded, not asserted (shared machines)
    problem = assert_problem(response, 422, field)
    assert says in problem["detail"]


# -- row 23: group counts ----------------------------------------------------------------


@pytest.mark.parametrize(
    "route, body, field",
    [
        (POWER, {"design": _design(groups=1, cohens_f=0.25), "n_per_group": 20}, "design.groups"),
        (SAMPLE, {"design": _design(groups=1, cohens_f=0.25), "target_power": 0.8}, "design.groups"),
        (DETECT, {"design": _design(groups=1), "n_per_group": 20, "target_power": 0.8}, "design.groups"),
        (POWER, {"design": _design(group_means=[5], sd=1), "n_per_group": 20}, "design.group_means"),
        (SAMPLE, {"design": _design(group_means=[5], sd=1), "target_power": 0.8}, "design.group_means"),
        (POWER, {"design": _design(cohens_f=0.25, allocation=[1]), "n_per_group": 20}, "design.allocation"),
        (POWER, {"design": _design(cohens_f=0.25), "group_sizes": [20]}, "group_sizes"),
        (DETECT, {"design": _design(), "group_sizes": [20], "target_power": 0.8}, "group_sizes"),
        (POWER, {"design": _design(groups=10**6, cohens_f=0.25), "n_per_group": 20}, "design.groups"),
        (SAMPLE, {"design": _design(groups=10**6, cohens_f=0.25), "target_power": 0.8}, "design.groups"),
        (DETECT, {"design": _design(groups=10**6), "n_per_group": 20, "target_power": 0.8}, "design.groups"),
        (POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 1}, "n_per_group"),
        (DETECT, {"design": _design(groups=3), "n_per_group": 1, "target_power": 0.8}, "n_per_group"),
        (POWER, {"design": _design(cohens_f=0.25), "group_sizes": [1, 1, 1]}, "group_sizes"),
        (DETECT, {"design": _design(), "group_sizes": [1, 1], "target_power": 0.8}, "group_sizes"),
        (POWER, {"design": _design(groups=3, cohens_f=0.25), "n_per_group": 0}, "n_per_group"),
        (POWER, {"design": _design(cohens_f=0.25), "group_sizes": [0, 5, 5]}, "group_sizes.0"),
    ],
    ids=["power-one-group", "sample-one-group", "detect-one-group", "power-one-mean", "sample-one-mean",
         "power-one-ratio", "power-one-size", "detect-one-size", "power-1e6-groups", "sample-1e6-groups",
         "detect-1e6-groups", "power-n1", "detect-n1", "power-sizes-1", "detect-sizes-1", "power-n0",
         "power-size-0"],
)
def test_row23_degenerate_group_counts_are_422(post_json, assert_problem, route, body, field):
    """Row 23: one group, 10^6 groups, or n = 1 per group (no error df) is a 422 for the field."""
    assert_problem(post_json(route, body), 422, field)


def test_row23_n1_with_unequal_allocation_keeps_error_df(post_json, assert_ok):
    """Row 23 (converse): n = 1 in the smallest group is fine when the others leave error df."""
    # sizes ceil(1·r_i) = [1, 2]: N − k = 1 (common practice, no source)
    body = assert_ok(post_json(POWER, {"design": _design(cohens_f=0.5, allocation=[1, 2]), "n_per_group": 1}))
    assert body["group_sizes"] == [1, 2] and body["df_denominator"] == 1


# -- rows 24–26: lists -------------------------------------------------------------------


LIST_FIELDS = [
    (POWER, {"design": _design(groups=3, cohens_f=0.25), "group_sizes": None}, "group_sizes", 20),
    (DETECT, {"design": _design(groups=3), "group_sizes": None, "target_power": 0.8}, "group_sizes", 20),
    (POWER, {"design": _design(group_means=None, sd=1), "n_per_group": 20}, "design.group_means", 0),
    (SAMPLE, {"design": _design(group_means=None, sd=1), "target_power": 0.8}, "design.group_means", 0),
    (POWER, {"design": _design(cohens_f=0.25, allocation=None), "n_per_group": 20}, "design.allocation", 1),
    (SAMPLE, {"design": _design(cohens_f=0.25, allocation=None), "target_power": 0.8}, "design.allocation", 1),
    (DETECT, {"design": _design(allocation=None), "n_per_group": 20, "target_power": 0.8}, "design.allocation", 1),
]
LIST_IDS = [f"{ROUTE_IDS[r]}-{p}" for r, _, p, _ in LIST_FIELDS]


@pytest.mark.parametrize("route, body, path, item", LIST_FIELDS, ids=LIST_IDS)
@pytest.mark.parametrize("length", [1, 101, 16_000])
def test_row24_list_length_is_checked_before_items(post_json, assert_problem, record_property, route, body, path, item, length):
    """Row 24: lists of 1, 101 or 16,000 items are a 422 with one message about the list itself."""
    started = time.perf_counter()
    response = post_json(route, set_path(body, path, [item] * length))
    record_property("seconds", time.perf_counter() - started)
    problem = assert_problem(response, 422, path)
    assert list(problem["errors"]) == [path]  # no per-item messages
    assert str(length) in problem["errors"][path][0]


@pytest.mark.parametrize("route, body, path, item", LIST_FIELDS, ids=LIST_IDS)
def test_row24_long_list_of_bad_items_gives_one_message(post_json, assert_problem, route, body, path, item):
    """Row 24: a 16,000-item list of strings gets the length message only (items never looked at)."""
    problem = assert_problem(post_json(route, set_path(body, path, ["x"] * 16_000)), 422, path)
    assert problem["errors"] == {path: [f"must have between {2 if path.startswith('design') else 1} "
                                        f"and 100 items (got 16000)"]}


@pytest.mark.parametrize("route, body, path, item", LIST_FIELDS, ids=LIST_IDS)
def test_row25_12000_strings_give_a_small_body(post_json, assert_problem, route, body, path, item):
    """Row 25: a 12,000-string list gives a small error body (not hundreds of KiB)."""
    response = post_json(route, set_path(body, path, ["x"] * 12_000))
    assert_problem(response, 422, path)
    assert len(response.get_data()) < 2048


def test_row25_many_item_errors_are_capped_and_counted(post_json, assert_problem):
    """Row 25: 200 bad items (two 100-item lists) give MAX_ERRORS messages and a count of the rest."""
    body = {"design": _design(group_means=["x"] * 100, sd=1), "group_sizes": ["y"] * 100}
    response = post_json(POWER, body)
    problem = assert_problem(response, 422)
    kept = sum(len(v) for v in problem["errors"].values())
    assert kept == MAX_ERRORS
    assert problem["errors_omitted"] == 200 - MAX_ERRORS
    assert len(response.get_data()) < 16 * 1024


@pytest.mark.parametrize("route, body, path, item", LIST_FIELDS, ids=LIST_IDS)
def test_row26_nested_container_inside_a_list_is_422(post_json, assert_problem, route, body, path, item):
    """Row 26: a list (empty, nested) or object inside a list of numbers is a 422 naming the item."""
    for_each([[1, 2], [], {"a": 1}, [[3]]], lambda inner: assert_problem(
        post_json(route, set_path(body, path, [inner, item, item])), 422, f"{path}.0"))


# -- row 27: power at the top of the range -----------------------------------------------


@pytest.mark.parametrize(
    "design",
    [_design(groups=2, cohens_f=1.95), _design(group_means=[-1.95, 1.95], sd=1.0), _design(groups=2, eta_squared=0.79)],
    ids=["cohens-f", "means", "eta-squared"],
)
def test_row27_large_effect_gives_power_one_as_valid_json(post_json, assert_ok, design):
    """Row 27: k = 2, n = 200, f ≈ 1.95, α = .05 gives power 1.0 in strict JSON (no NaN from 1 − cdf)."""
    # λ = N f² ≈ 1521: the power is 1 to double precision (common practice, no source).
    body = assert_ok(post_json(POWER, {"design": design, "n_per_group": 200, "alpha": 0.05}))
    assert body["power"] == 1.0
    assert body["noncentrality"] > 1500


def test_row27_large_effect_sample_size_and_detectable_effect(post_json, assert_ok):
    """Row 27: the largest accepted effects give finite sizes and valid JSON on the other routes."""
    body = assert_ok(post_json(SAMPLE, {"design": _design(groups=2, cohens_f=10), "target_power": 0.9999}))
    assert body["group_sizes"] == [2, 2]  # the smallest design with error df (common practice, no source)
    assert 0.9999 <= body["achieved_power"] <= 1.0
    body = assert_ok(post_json(POWER, {"design": _design(groups=100, cohens_f=10), "n_per_group": 10**7}))
    assert body["power"] == 1.0


@pytest.mark.parametrize(
    "route, design",
    [
        (POWER, _design(group_means=[0, 1], sd=1e-12)),
        (SAMPLE, _design(group_means=[0, 1], sd=1e-12)),
        (POWER, _design(group_means=[-1e12, 1e12], sd=1e-300)),
        (SAMPLE, _design(groups=2, min_range=1e12, sd=1e-12)),
        (POWER, _design(groups=2, min_range=1, sd=1e-200)),
    ],
    ids=["power-means-tiny-sd", "sample-means-tiny-sd", "power-means-huge-range", "sample-range-tiny-sd",
         "power-range-tiny-sd"],
)
def test_row27_effect_beyond_the_supported_f_is_422(post_json, assert_problem, route, design):
    """Row 27: means or a range far above the SD (f > 10) is a 422 naming the field, not a NaN 500."""
    body = {"design": design, "n_per_group": 10} if route == POWER else {"design": design, "target_power": 0.8}
    field = "design.group_means" if "group_means" in design else "design.min_range"
    problem = assert_problem(post_json(route, body), 422, field)
    assert "above 10" in problem["errors"][field][0]


# -- row 28: detectable effect with a large noncentrality --------------------------------


def _closed_form_f2_critical(alpha: float, df2: float) -> float:
    """Upper-α point of F(2, ν): P(F > x) = (1 + 2x/ν)^(−ν/2), so x = (ν/2)(α^(−2/ν) − 1)."""
    with mpmath.workdps(50):
        return float(mpmath.mpf(df2) / 2 * (mpmath.mpf(alpha) ** (-2 / mpmath.mpf(df2)) - 1))


@pytest.mark.parametrize("n_per_group", [3, 4])
def test_row28_detectable_effect_beyond_noncentrality_10000_round_trips(post_json, assert_ok, n_per_group):
    """Row 28: a detectable λ above 10,000 is correct: the power at it equals the target to 1e-6."""
    body = assert_ok(post_json(DETECT, {"design": _design(groups=3), "n_per_group": n_per_group,
                                        "alpha": 1e-12, "target_power": 0.9999}))
    lam, df1, df2 = body["noncentrality"], body["df_numerator"], body["df_denominator"]
    assert lam > 10_000
    # Independent check: scipy's noncentral F tail at the closed-form F(2, ν) critical value.
    crit = _closed_form_f2_critical(1e-12, df2)
    assert body["critical_value"] == pytest.approx(crit, rel=1e-12)
    assert stats.ncf.sf(crit, df1, df2, lam) == pytest.approx(0.9999, abs=1e-6)
    assert body["achieved_power"] == pytest.approx(0.9999, abs=1e-6)
    assert body["cohens_f"] == pytest.approx((lam / body["n_total"]) ** 0.5, rel=1e-12)


def test_row28_detectable_effect_out_of_reach_is_422(post_json, assert_problem):
    """Row 28: when the detectable λ exceeds the solver's bound the answer is a 422, never a clamp."""
    body = {"design": _design(groups=2), "n_per_group": 2, "alpha": 1e-12, "target_power": 0.9999}
    assert_problem(post_json(DETECT, body), 422, "target_power", detail_contains="noncentrality exceeds")


# -- row 29: critical values at tiny alpha -----------------------------------------------


def _closed_form_critical(alpha: float, df1: int, df2: int) -> float:
    """Closed-form upper-α points of F(1, 1), F(1, 2) and F(2, ν), at 50 digits (mpmath).

    F(1, ν) is the square of Student's t with ν df: for ν = 1 (Cauchy) P(|t| > c) =
    1 − (2/π)·atan(c); for ν = 2, P(|t| > c) = 1 − c/√(2 + c²). For F(2, ν),
    P(F > x) = (1 + 2x/ν)^(−ν/2) (Johnson, Kotz & Balakrishnan, Continuous Univariate
    Distributions, vol. 2, 2nd ed., chs. 27–28).
    """
    with mpmath.workdps(50):
        a = mpmath.mpf(alpha)
        if df1 == 1 and df2 == 1:
            return float(mpmath.tan(mpmath.pi / 2 * (1 - a)) ** 2)
        if df1 == 1 and df2 == 2:
            return float(2 * (1 - a) ** 2 / (a * (2 - a)))
        if df1 == 2:
            return _closed_form_f2_critical(alpha, df2)
    raise AssertionError("no closed form for these degrees of freedom")


@pytest.mark.parametrize(
    "group_sizes, df1, df2",
    [([1, 2], 1, 1), ([2, 2], 1, 2), ([1, 3], 1, 2), ([1, 1, 2], 2, 1), ([1, 2, 2], 2, 2),
     ([2, 2, 2], 2, 3), ([3, 3, 4], 2, 7), ([5, 5, 5], 2, 12)],
    ids=lambda v: "-".join(map(str, v)) if isinstance(v, list) else str(v),
)
@pytest.mark.parametrize("alpha", [1e-10, 1e-12, 0.05])
def test_row29_critical_value_matches_closed_form(post_json, assert_ok, group_sizes, df1, df2, alpha):
    """Row 29: at α = 1e-10 with df1 = 1–2 and small df2 the critical value matches the closed form to 1e-12."""
    body = assert_ok(post_json(POWER, {"design": _design(cohens_f=0.5), "group_sizes": group_sizes, "alpha": alpha}))
    assert (body["df_numerator"], body["df_denominator"]) == (df1, df2)
    assert body["critical_value"] == pytest.approx(_closed_form_critical(alpha, df1, df2), rel=1e-12)


# -- row 30: the extreme in-range corner -------------------------------------------------


@pytest.mark.parametrize(
    "route, body",
    [
        (POWER, {"design": _design(groups=100, cohens_f=0.0005), "n_per_group": 10**7, "alpha": 1e-12}),
        (DETECT, {"design": _design(groups=100, sd=1e12), "n_per_group": 10**7, "alpha": 1e-12,
                  "target_power": 0.9999}),
        (SAMPLE, {"design": _design(groups=100, cohens_f=0.0005), "alpha": 1e-12, "target_power": 0.9999,
                  "dropout_rate": 0.9}),
        (POWER, {"design": _design(group_means=list(range(100)), sd=1e12), "n_per_group": 10**7, "alpha": 1e-12}),
        (DETECT, {"design": _design(allocation=[1] * 99 + [1000]), "n_per_group": 10**4, "alpha": 1e-12,
                  "target_power": 0.9999}),
    ],
    ids=["power", "detect", "sample", "power-means", "detect-unequal"],
)
def test_row30_extreme_corner_is_answered(post_json, assert_ok, record_property, route, body):
    """Row 30: 100 groups, n up to 1e7, α = 1e-12, power .9999 is a 200 (time recorded, not asserted)."""
    started = time.perf_counter()
    response = post_json(route, body)
    record_property("seconds", time.perf_counter() - started)  # the table's 50 ms is for benchmarks
    out = assert_ok(response)
    assert out["df_numerator"] == 99
    power = out.get("power", out.get("achieved_power"))
    assert 1e-12 <= power <= 1.0
    if route == SAMPLE:
        assert max(out["group_sizes"]) <= 10**7
        assert out["achieved_power"] >= 0.9999 > out["one_step_smaller"]["power"]


# -- row 31: internal failure ------------------------------------------------------------


@pytest.mark.parametrize(
    "route, target",
    [(POWER, "power"), (SAMPLE, "sample_size"), (DETECT, "detectable_effect")],
    ids=["power", "sample", "detect"],
)
def test_row31_internal_error_is_500_problem_without_traceback(post_json, assert_problem, monkeypatch, caplog, route, target):
    """Row 31: a forced internal exception is a 500 problem with a request id and no traceback text."""
    secret = "secret-internal-detail-42"

    def explode(*args, **kwargs):
        raise RuntimeError(secret)

    monkeypatch.setattr(f"samplewright.core.planning.{target}", explode)
    with caplog.at_level("ERROR", logger="samplewright"):
        response = post_json(route, BASE[route], headers={"X-Request-ID": "req-31-abc"})
    problem = assert_problem(response, 500)
    text = response.get_data(as_text=True)
    for leak in ("Traceback", "RuntimeError", secret, "File \"", ".py"):
        assert leak not in text
    assert problem["request_id"] == "req-31-abc" == response.headers["X-Request-ID"]
    logged = [r for r in caplog.records if getattr(r, "request_id", None) == "req-31-abc"]
    assert logged and logged[0].exc_info is not None  # the traceback goes to the log, with the id


def test_row31_generated_request_id_is_in_body_header_and_log(post_json, assert_problem, monkeypatch, caplog):
    """Row 31: without X-Request-ID the service makes one and uses it in body, header and log."""
    monkeypatch.setattr("samplewright.core.planning.power", lambda *a, **k: 1 / 0)
    with caplog.at_level("ERROR", logger="samplewright"):
        response = post_json(POWER, BASE[POWER])
    problem = assert_problem(response, 500)
    rid = problem["request_id"]
    assert rid and response.headers["X-Request-ID"] == rid
    assert any(getattr(r, "request_id", None) == rid for r in caplog.records)


# -- row 32: every response is strict JSON with a matching status -------------------------


RESPONSES = [
    ("GET", "/healthz", None), ("GET", "/v1/version", None), ("GET", "/openapi.json", None),
    ("GET", "/nope", None), ("POST", POWER, BASE[POWER]), ("POST", SAMPLE, BASE[SAMPLE]),
    ("POST", DETECT, BASE[DETECT]), ("POST", POWER, {}), ("GET", POWER, None),
    ("POST", POWER, {"design": _design(groups=2, cohens_f=10), "n_per_group": 10**7}),
    ("POST", SAMPLE, {"design": _design(groups=2, cohens_f=1e-9), "target_power": 0.8}),
    ("POST", DETECT, {"design": _design(groups=100), "n_per_group": 2, "alpha": 1e-12, "target_power": 0.9999}),
]


@pytest.mark.parametrize("method, path, body", RESPONSES, ids=[f"{m}-{p}-{i}" for i, (m, p, _) in enumerate(RESPONSES)])
def test_row32_every_response_is_strict_json_with_matching_status(client, strict_json, method, path, body):
    """Row 32: any response parses with a strict JSON parser; a problem's status equals the HTTP one."""
    response = client.open(path, method=method, json=body) if body is not None else client.open(path, method=method)
    parsed = strict_json(response.get_data())
    assert isinstance(parsed, dict)
    if response.status_code >= 400:
        assert response.mimetype == "application/problem+json"
        assert parsed["status"] == response.status_code
    else:
        assert response.mimetype == "application/json"
    assert response.headers["X-Content-Type-Options"] == "nosniff"


# -- rows 33 (slow client) and 34 (request line and header limits) are server rows. ------
