"""Columns of questions (``POST /v1/table``): one operation, one design type, every field an array.

The fast path for large sweeps. A batch item is a whole request body; a table is one
question asked of many rows at once::

    {"operation": "power", "design": {"type": "one_way_anova"},
     "columns": {"cohens_f": [0.1, 0.25, ...], "groups": [3, 4, ...], "n_per_group": [20, 30, ...],
                 "alpha": 0.05}}

Each column is a JSON array with one entry per row, or one value for every row. Supported
(equal allocation; the effect as ``cohens_f`` or ``eta_squared``):

* ``power``: ``cohens_f`` | ``eta_squared``, ``groups``, ``n_per_group``, ``alpha``;
* ``sample-size``: ``cohens_f`` | ``eta_squared``, ``groups``, ``alpha``, ``target_power``,
  ``dropout_rate``;
* ``detectable-effect``: ``groups``, ``n_per_group``, ``alpha``, ``target_power``.

How a table is answered:

1. every column is checked with array operations against the bounds of the very field
   objects the single endpoint validates with (``OneWayAnovaDesignSchema``,
   ``PowerRequestSchema``, ...: their ``Bounded`` validator's min, max and inclusivity), and
   an entry that fails is handed to that field object itself for its message, so a row's
   message is the single endpoint's message for that field;
2. rows are grouped by their number of groups, and each group is one ``Rows`` built from
   the columns (``Rows.from_columns``: no design object per row) and answered by the row
   engine (``planning.power_rows``, ``sample_size_rows``, ``detectable_rows``), the code
   every single answer goes through, so each row equals the single endpoint's answer for
   that row, bit for bit;
3. results come back as columns (``results`` picks them; by default power, noncentrality,
   critical_value, df_numerator, df_denominator and n_total for power, every result for the
   others), ``null`` in the rows that could not be answered; each such row has its entries
   in ``errors`` (row, field, value, message), the first MAX_TABLE_ERRORS of them, the rest
   counted in ``summary.errors_omitted``. Whole-number results (sizes, degrees of freedom)
   are written as JSON integers: 176 where the single endpoint writes 176.0, the same number.

Speed (the profile of 100,000 power rows): the critical value is computed once per distinct
(α, df1, df2) (``vectorised._f_evaluate``); the body is read by the C JSON parser where that
cannot differ from the strict reader (``body.parse_json_text``); numbers are written, and
digested, by array operations that give the JSON encoder's text character for character
(``numbertext.numbers_text``: Python's float repr cost about 0.7 µs a number, as much as the
noncentral F tail), columns with repeated values one distinct value at a time. What remains
is mostly the noncentral F tail itself and the C parser (``bench_table.py`` reports the stages).

Limits: at most MAX_TABLE_ROWS rows (a module constant, not a setting), and the body limit
of ``/v1/batch`` (``SAMPLEWRIGHT_MAX_BATCH_BYTES``). A table whose shape is wrong (an
unknown or missing column, columns of different lengths, a broadcast value that is
itself invalid) is refused whole with a 422, as a batch with a malformed envelope is.
"""

from __future__ import annotations

import hashlib
import json
from typing import Any

import numpy as np
from marshmallow import Schema, ValidationError, fields, validate

from ..core import planning
from ..core.designs.one_way import OneWayAnova
from ..core.errors import show
from ..core.vectorised import Rows
from .batch import CAUTIONS
from .body import read_json_object
from .designs.one_way import OneWayAnovaAdapter, OneWayAnovaDesignSchema
from .fields import Bounded, StrictInteger, StrictSchema, choice
from .numbertext import numbers_text
from .problems import Problem, validation_problem
from .provenance import canonical_json, provenance
from .schemas import PowerRequestSchema, ProvenanceSchema, SampleSizeRequestSchema

#: Most rows one table may have (a module constant: the body limit bounds it too).
MAX_TABLE_ROWS = 200_000
#: At most this many row errors are listed; the rest are counted.
MAX_TABLE_ERRORS = 100

_DESIGN = OneWayAnovaDesignSchema._declared_fields
_POWER = PowerRequestSchema._declared_fields
_SAMPLE = SampleSizeRequestSchema._declared_fields
#: Column name -> the schema field object the single endpoint validates it with.
FIELDS = {
    "cohens_f": _DESIGN["cohens_f"],
    "eta_squared": _DESIGN["eta_squared"],
    "groups": _DESIGN["groups"],
    "n_per_group": _POWER["n_per_group"],
    "alpha": _POWER["alpha"],
    "target_power": _SAMPLE["target_power"],
    "dropout_rate": _SAMPLE["dropout_rate"],
}
#: Where the single endpoint reports each column's errors.
SINGLE_FIELD = {name: (f"design.{name}" if name in ("cohens_f", "eta_squared", "groups") else name)
                for name in FIELDS}
EFFECT_COLUMNS = ("cohens_f", "eta_squared")
#: Per operation: the columns it takes (besides the effect) and which of them are required.
OPERATIONS: dict[str, dict[str, Any]] = {
    "power": {"columns": ("groups", "n_per_group", "alpha"), "effect": True,
              "required": ("groups", "n_per_group"),
              "results": ("power", "noncentrality", "critical_value", "df_numerator", "df_denominator",
                          "n_total", "cohens_f", "eta_squared"),
              "default": ("power", "noncentrality", "critical_value", "df_numerator", "df_denominator",
                          "n_total")},
    "sample-size": {"columns": ("groups", "alpha", "target_power", "dropout_rate"), "effect": True,
                    "required": ("groups", "target_power"),
                    "results": ("n_per_group", "n_total", "achieved_power", "noncentrality", "critical_value",
                                "df_numerator", "df_denominator", "one_step_smaller_power",
                                "enrolment_n_per_group", "enrolment_n_total", "cohens_f", "eta_squared")},
    "detectable-effect": {"columns": ("groups", "n_per_group", "alpha", "target_power"), "effect": False,
                          "required": ("groups", "n_per_group", "target_power"),
                          "results": ("cohens_f", "eta_squared", "noncentrality", "achieved_power",
                                      "critical_value", "df_numerator", "df_denominator", "n_total")},
}
DESIGN_TYPES = (OneWayAnovaAdapter.type,)
_ADAPTER = OneWayAnovaAdapter()


def _bounds(field) -> Bounded:
    (bounded,) = [v for v in field.validators if isinstance(v, Bounded)]
    return bounded


_BOUNDS = {name: _bounds(field) for name, field in FIELDS.items()}
_INTEGER = {name for name, field in FIELDS.items() if isinstance(field, StrictInteger)}


# -- reading the body ---------------------------------------------------------------------------

def read_table_body(limit: int) -> dict:
    """The body, read by ``body.read_json_object`` like every route's (the strict reader reads a
    table's number literals with the C parser unless one could be read differently)."""
    return read_json_object(limit)


# -- validation ---------------------------------------------------------------------------------


def _field_messages(name: str, value) -> list[str]:
    """The single endpoint's messages for ``value`` in column ``name`` (empty when valid)."""
    try:
        FIELDS[name].deserialize(value)
    except ValidationError as exc:
        messages = exc.messages
        return list(messages) if isinstance(messages, list) else [str(messages)]
    return []


def _json_value(value):
    return value if value is None or type(value) in (int, float, str, bool) else show(value)


class _Column:
    """One validated column: values as an array (float or int64), and which rows are bad."""

    __slots__ = ("name", "raw", "values", "bad", "scalar")

    def __init__(self, name: str, raw, count: int) -> None:
        self.name = name
        self.raw = raw
        self.scalar = not isinstance(raw, list)
        if self.scalar:
            messages = _field_messages(name, raw)
            if messages:
                raise validation_problem({f"columns.{name}": messages})
            value = FIELDS[name].deserialize(raw)
            self.values = np.full(count, value, dtype=np.int64 if name in _INTEGER else float)
            self.bad = None
            return
        if set(map(type, raw)) <= {int, float}:
            numbers = np.array(raw, dtype=float)
            bad = ~np.isfinite(numbers)
        else:
            ok_type = np.fromiter((type(v) in (int, float) for v in raw), dtype=bool, count=count)
            numbers = np.array([v if ok else 0.0 for v, ok in zip(raw, ok_type.tolist(), strict=True)],
                               dtype=float)
            bad = ~ok_type | ~np.isfinite(numbers)
        bounds = _BOUNDS[name]
        with np.errstate(invalid="ignore"):
            if bounds.min is not None:
                bad |= (numbers < bounds.min) if bounds.min_inclusive else (numbers <= bounds.min)
            if bounds.max is not None:
                bad |= (numbers > bounds.max) if bounds.max_inclusive else (numbers >= bounds.max)
            if name in _INTEGER:
                bad |= np.floor(numbers) != numbers
        numbers[bad] = bounds.min if bounds.min is not None else 0.0  # placeholders, never answered
        self.values = numbers.astype(np.int64) if name in _INTEGER else numbers
        self.bad = bad if bad.any() else None

    def validated(self):
        """The column as the schemas read it (ints stay ints, numbers are floats); a bad entry as sent.

        What the request digest covers: ``canonical()`` is its canonical JSON text.
        """
        if self.scalar:
            return FIELDS[self.name].deserialize(self.raw)
        out = self.values.tolist()
        if self.bad is not None:
            for row in np.flatnonzero(self.bad).tolist():
                out[row] = _json_value(self.raw[row])
        return out

    def canonical(self) -> str:
        """``provenance.canonical_json(self.validated())``, written a column at a time."""
        if self.scalar:
            return canonical_json(FIELDS[self.name].deserialize(self.raw))
        if self.bad is None:
            return "[" + numbers_text(self.values, None) + "]"
        bad = np.flatnonzero(self.bad)
        texts = [canonical_json(_json_value(self.raw[row])) for row in bad.tolist()]
        return "[" + numbers_text(self.values, self.bad, texts) + "]"


def _shape_problem(message: str, where: str) -> Problem:
    return validation_problem({where: [message]})


def _results(spec: dict, given, errors: dict) -> tuple[str, ...]:
    """The result columns asked for (``results``), or the operation's default ones."""
    available = spec["results"]
    if given is None:
        return spec.get("default", available)
    if not isinstance(given, list) or not given or not all(isinstance(g, str) for g in given):
        errors["results"] = [f"must be a non-empty JSON array of result names (got {show(given)})"]
        return ()
    unknown = [g for g in given if g not in available]
    if unknown:
        errors["results"] = [f"must name results of this operation: {', '.join(available)} (got {show(unknown)})"]
    return tuple(dict.fromkeys(g for g in given if g in available))


def _read_request(body: dict) -> tuple[str, dict[str, _Column], int, tuple[str, ...]]:
    """operation, validated columns, the row count and the results asked for; a Problem when the
    table's shape is wrong."""
    unknown = sorted(set(body) - {"operation", "design", "columns", "results"}, key=str)
    errors: dict[str, list[str]] = {
        k: ["is not a field here; allowed: columns, design, operation, results"] for k in unknown}
    operation = body.get("operation")
    if not isinstance(operation, str) or operation not in OPERATIONS:
        errors["operation"] = [f"must be one of {list(OPERATIONS)} (got {show(operation)})"]
    design = body.get("design")
    if not isinstance(design, dict) or design.get("type") not in DESIGN_TYPES:
        errors["design"] = [f"must be a JSON object whose type is one of {list(DESIGN_TYPES)} "
                            f"(got {show(design)})"]
    elif set(design) != {"type"}:
        errors["design"] = [f"takes only 'type' here; give {', '.join(sorted(set(design) - {'type'}))} "
                            "as columns"]
    columns = body.get("columns")
    if not isinstance(columns, dict):
        errors["columns"] = [f"must be a JSON object of columns (got {show(columns)})"]
    if errors:
        raise validation_problem(errors)
    spec = OPERATIONS[operation]
    allowed = set(spec["columns"]) | (set(EFFECT_COLUMNS) if spec["effect"] else set())
    for key in sorted(set(columns) - allowed, key=str):
        hint = " (it is what detectable-effect solves for)" if key in EFFECT_COLUMNS else ""
        errors[f"columns.{key}"] = [f"is not a column of {operation}{hint}; allowed: {', '.join(sorted(allowed))}"]
    for key in spec["required"]:
        if key not in columns:
            errors[f"columns.{key}"] = ["is required (an array with one value per row, or one value for every row)"]
    if spec["effect"]:
        given = [k for k in EFFECT_COLUMNS if k in columns]
        if len(given) != 1:
            errors["columns"] = [f"give exactly one of {', '.join(EFFECT_COLUMNS)} "
                                 f"(got {', '.join(given) or 'neither'})"]
    lengths = {k: len(v) for k, v in columns.items() if isinstance(v, list)}
    results = _results(spec, body.get("results"), errors)
    if errors:
        raise validation_problem(errors)
    count = max(lengths.values(), default=1)
    if count > MAX_TABLE_ROWS:
        raise Problem(413, "too-many-rows", "Table too large",
                      f"the table has {count} rows; this service answers at most {MAX_TABLE_ROWS} per request",
                      errors={"columns": [f"must have at most {MAX_TABLE_ROWS} rows (got {count})"]})
    for key, length in lengths.items():
        if length != count or length == 0:
            errors[f"columns.{key}"] = [f"must have one value per row: {count} (got {length})" if length
                                        else "must have at least 1 row (got 0)"]
    if errors:
        raise validation_problem(errors)
    out = {}
    for key in [*EFFECT_COLUMNS, *spec["columns"]]:
        if key in columns:
            out[key] = _Column(key, columns[key], count)
        elif key not in EFFECT_COLUMNS:
            out[key] = _Column(key, FIELDS[key].load_default, count)
    return operation, out, count, results


class _Errors:
    """Row errors: every bad row is known; the first MAX_TABLE_ERRORS messages are kept."""

    def __init__(self, count: int, effect: str) -> None:
        self.effect = effect
        self.failed = np.zeros(count, dtype=bool)
        self.listed: list[dict] = []
        self.omitted = 0

    def add(self, row: int, field: str, value, message: str) -> None:
        if len(self.listed) < MAX_TABLE_ERRORS:
            self.listed.append({"row": row, "field": field, "value": _json_value(value), "message": message})
        else:
            self.omitted += 1

    def fields(self, columns: dict[str, _Column]) -> None:
        """Each bad entry's messages, from its field object, in row order then column order."""
        bad = [c for c in columns.values() if c.bad is not None]
        if not bad:
            return
        matrix = np.vstack([c.bad for c in bad])
        rows = np.flatnonzero(matrix.any(axis=0))
        self.failed[rows] = True
        counts = matrix[:, rows].sum(axis=0)
        for j, row in enumerate(rows.tolist()):
            if len(self.listed) >= MAX_TABLE_ERRORS:
                self.omitted += int(counts[j:].sum())  # one message per bad entry
                break
            for c in bad:
                if c.bad[row]:
                    for message in _field_messages(c.name, c.raw[row]):
                        self.add(row, c.name, c.raw[row], message)

    def core(self, rows: np.ndarray, found: list) -> np.ndarray:
        """Record the row engine's errors (InvalidParameter, NoSolution) as the single endpoint words
        them; returns the mask of the rows without one."""
        ok = np.ones(len(found), dtype=bool)
        if found.count(None) == len(found):  # the usual case, without a Python step per row
            return ok
        bad = [j for j, error in enumerate(found) if error is not None]
        ok[bad] = False
        for j in bad:
            error = found[j]
            row = int(rows[j])
            self.failed[row] = True
            field = error.field.removeprefix("design.")
            if field == "design":  # the effect (zero): the column that gave it
                field = self.effect
            self.add(row, field, error.value, str(error).split(": ", 1)[-1])
        return ok

    def sorted(self) -> list[dict]:
        return sorted(self.listed, key=lambda e: e["row"])


# -- computation --------------------------------------------------------------------------------


def _effect_f(columns: dict[str, _Column]) -> tuple[np.ndarray, str]:
    if "cohens_f" in columns:
        return columns["cohens_f"].values, "cohens_f"
    eta = columns["eta_squared"].values
    return np.sqrt(eta / (1.0 - eta)), "eta_squared"  # f_from_eta_squared, elementwise


def _rows(groups: int, index: np.ndarray, f: np.ndarray | None, source: str) -> Rows:
    count = index.size
    return Rows.from_columns(
        OneWayAnova, count, groups=groups, ratios=np.ones((count, groups)),
        cohens_f=np.zeros(count) if f is None else f[index], effect_source=source,
    )


def _by_groups(groups: np.ndarray, live: np.ndarray) -> list[tuple[int, np.ndarray]]:
    index = np.flatnonzero(live)
    if index.size == 0:
        return []
    # groups ≤ MAX_GROUPS: as int16, the stable sort is a radix sort
    sorted_index = index[np.argsort(groups[index].astype(np.int16), kind="stable")]
    ks = groups[sorted_index]
    bounds = [0, *(np.flatnonzero(ks[1:] != ks[:-1]) + 1).tolist(), ks.size]
    return [(int(ks[bounds[i]]), sorted_index[bounds[i]:bounds[i + 1]]) for i in range(len(bounds) - 1)]


def _effect_columns(out: dict, index: np.ndarray, lam: np.ndarray, n_total: np.ndarray) -> None:
    f = np.sqrt(lam / n_total)  # OneWayAnova.cohens_f_at: √(λ / N)
    f2 = np.square(f)
    out["cohens_f"][index] = f
    out["eta_squared"][index] = f2 / (1.0 + f2)


def _power(columns, count: int, errors: _Errors) -> dict[str, np.ndarray]:
    names = ("power", "noncentrality", "critical_value", "df_numerator", "df_denominator", "n_total",
             "cohens_f", "eta_squared")
    out = {name: np.zeros(count) for name in names}
    f, source = _effect_f(columns)
    n, alpha, groups = columns["n_per_group"].values, columns["alpha"].values, columns["groups"].values
    for k, index in _by_groups(groups, ~errors.failed):
        rows = _rows(k, index, f, source)
        sizes, found = planning.sizes_for_rows(rows, n[index])
        ok = errors.core(index, found)
        if not ok.all():
            rows, sizes, index = rows.take(np.flatnonzero(ok)), sizes[ok], index[ok]
            if index.size == 0:
                continue
        got = planning.power_rows(rows, sizes=sizes, alpha=alpha[index])
        n_total = sizes.sum(axis=1)
        out["power"][index] = got.power
        out["noncentrality"][index] = got.noncentrality
        out["critical_value"][index] = got.critical_value
        out["df_numerator"][index] = got.df_numerator
        out["df_denominator"][index] = got.df_denominator
        out["n_total"][index] = n_total
        _effect_columns(out, index, got.noncentrality, n_total.astype(float))
    return out


def _sample_size(columns, count: int, errors: _Errors) -> dict[str, np.ndarray]:
    names = ("n_per_group", "n_total", "achieved_power", "noncentrality", "critical_value", "df_numerator",
             "df_denominator", "one_step_smaller_power", "enrolment_n_per_group", "enrolment_n_total",
             "cohens_f", "eta_squared")
    out = {name: np.zeros(count) for name in names}
    f, source = _effect_f(columns)
    alpha, groups = columns["alpha"].values, columns["groups"].values
    target, dropout = columns["target_power"].values, columns["dropout_rate"].values
    for k, index in _by_groups(groups, ~errors.failed):
        rows = _rows(k, index, f, source)
        got, found = planning.sample_size_rows(rows, alpha=alpha[index], target_power=target[index],
                                               dropout_rate=dropout[index])
        ok = errors.core(index, found)
        index = index[ok]
        a, step = got.answer, got.one_step_smaller
        sizes = a.sizes[ok]
        n_total = sizes.sum(axis=1)
        out["n_per_group"][index] = sizes[:, 0]
        out["n_total"][index] = n_total
        out["achieved_power"][index] = a.power[ok]
        out["noncentrality"][index] = a.noncentrality[ok]
        out["critical_value"][index] = a.critical_value[ok]
        out["df_numerator"][index] = a.df_numerator[ok]
        out["df_denominator"][index] = a.df_denominator[ok]
        out["one_step_smaller_power"][index] = np.where(got.has_smaller[ok], step.power[ok], np.nan)
        with_dropout = got.dropout_rate[ok] > 0
        out["enrolment_n_per_group"][index] = np.where(with_dropout, got.enrolment[ok][:, 0], np.nan)
        out["enrolment_n_total"][index] = np.where(with_dropout, got.enrolment[ok].sum(axis=1), np.nan)
        _effect_columns(out, index, a.noncentrality[ok], n_total.astype(float))
    return out


def _detectable(columns, count: int, errors: _Errors) -> dict[str, np.ndarray]:
    names = ("cohens_f", "eta_squared", "noncentrality", "achieved_power", "critical_value", "df_numerator",
             "df_denominator", "n_total")
    out = {name: np.zeros(count) for name in names}
    n, alpha, groups = columns["n_per_group"].values, columns["alpha"].values, columns["groups"].values
    target = columns["target_power"].values
    for k, index in _by_groups(groups, ~errors.failed):
        rows = _rows(k, index, None, "cohens_f")  # the layout's probe: f = 0
        sizes, found = planning.sizes_for_rows(rows, n[index])
        ok = errors.core(index, found)
        if not ok.all():
            rows, sizes, index = rows.take(np.flatnonzero(ok)), sizes[ok], index[ok]
            if index.size == 0:
                continue
        got, found = planning.detectable_rows(rows, sizes=sizes, alpha=alpha[index], target_power=target[index])
        ok = errors.core(index, found)
        index, sizes = index[ok], sizes[ok]
        c = got.check
        n_total = sizes.sum(axis=1).astype(float)
        lam = got.noncentrality[ok]
        f = np.sqrt(lam / n_total)  # OneWayAnovaAdapter.detectable_report: √(λ / N)
        f2 = np.square(f)
        out["cohens_f"][index] = f
        out["eta_squared"][index] = f2 / (1.0 + f2)
        out["noncentrality"][index] = lam
        out["achieved_power"][index] = c.power[ok]
        out["critical_value"][index] = c.critical_value[ok]
        out["df_numerator"][index] = c.df_numerator[ok]
        out["df_denominator"][index] = c.df_denominator[ok]
        out["n_total"][index] = n_total
    return out


_COMPUTE = {"power": _power, "sample-size": _sample_size, "detectable-effect": _detectable}
#: Whole-number results, written as JSON integers (the single endpoint writes the degrees of
#: freedom as 3.0: the same JSON number).
_INTEGER_RESULTS = {"n_total", "n_per_group", "enrolment_n_per_group", "enrolment_n_total", "df_numerator",
                    "df_denominator"}


def _target_errors(columns: dict[str, _Column], errors: _Errors) -> None:
    """target_power must exceed alpha (the schemas' rule, checked where both fields are valid)."""
    if "target_power" not in columns:
        return
    target, alpha = columns["target_power"].values, columns["alpha"].values
    for row in np.flatnonzero(~errors.failed & ~(target > alpha)).tolist():
        errors.failed[row] = True
        errors.add(row, "target_power", float(target[row]),
                   f"must exceed alpha ({float(alpha[row]):g}) (got {float(target[row]):g})")


def _result_text(name: str, values: np.ndarray, failed: np.ndarray) -> str:
    missing = failed | np.isnan(values)
    if name in _INTEGER_RESULTS:
        values = np.where(missing, 0, values).astype(np.int64)
    return "[" + numbers_text(values, missing if missing.any() else None) + "]"


def table_json(result: dict) -> str:
    """The response body of ``run_table``'s answer (its columns are written as text already)."""
    parts = ['{"columns":{']
    for j, (name, text) in enumerate(result["columns"].items()):
        parts.extend(("," if j else "", json.dumps(name), ":", text))
    parts.append("}")
    for key, value in result.items():
        if key != "columns":
            parts.extend((",", json.dumps(key), ":",
                          json.dumps(value, allow_nan=False, separators=(",", ":"), ensure_ascii=False)))
    parts.append("}")
    return "".join(parts)


def request_digest(operation: str, columns: dict[str, _Column], results: tuple[str, ...]) -> str:
    """``provenance.request_digest`` of the validated table, its columns written a column at a time."""
    members = {
        "columns": "{" + ",".join(f"{canonical_json(n)}:{columns[n].canonical()}" for n in sorted(columns)) + "}",
        "design": canonical_json({"type": OneWayAnovaAdapter.type}),
        "operation": canonical_json(operation),
        "results": canonical_json(list(results)),
    }
    text = "{" + ",".join(f"{canonical_json(k)}:{members[k]}" for k in sorted(members)) + "}"
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def validated_request(operation: str, columns: dict[str, _Column], results: tuple[str, ...]) -> dict:
    """The validated table as a dict: what ``request_digest`` is the digest of."""
    return {"operation": operation, "design": {"type": OneWayAnovaAdapter.type},
            "columns": {name: column.validated() for name, column in columns.items()}, "results": list(results)}


def _warnings(columns: dict[str, _Column], result: dict, failed: np.ndarray) -> list[dict]:
    """The single endpoint's warnings, each once, with the rows it applies to counted."""
    n = result.get("n_per_group")
    if n is None:
        n = columns["n_per_group"].values
    small = np.flatnonzero(~failed & (np.asarray(n) < 5))
    if small.size == 0:
        return []
    return [{"message": "A group has fewer than 5 units: with so few, the F test's robustness to "
                        "non-normal errors and unequal variances is weak.",
             "rows": int(small.size), "first_row": int(small[0])}]


def run_table(body: dict) -> dict:
    """POST /v1/table: every row answered as the single endpoint would, as columns.

    The result columns are JSON text already (``table_json`` writes the body).
    """
    operation, columns, count, results = _read_request(body)
    errors = _Errors(count, next((k for k in EFFECT_COLUMNS if k in columns), "groups"))
    errors.fields(columns)
    _target_errors(columns, errors)
    result = _COMPUTE[operation](columns, count, errors)
    failed = errors.failed
    origin = provenance(OneWayAnovaAdapter.method_id, OneWayAnovaAdapter.reference, {})
    origin["request_digest"] = request_digest(operation, columns, results)
    warnings = _warnings(columns, result, failed)
    listed = errors.sorted()
    succeeded = int(count - failed.sum())
    return {
        "operation": operation,
        "design_type": OneWayAnovaAdapter.type,
        "columns": {name: _result_text(name, result[name], failed) for name in results},
        "errors": listed,
        "summary": {"rows": count, "succeeded": succeeded, "failed": count - succeeded,
                    "errors_listed": len(listed), "errors_omitted": errors.omitted},
        "method": {"id": OneWayAnovaAdapter.method_id, "reference": OneWayAnovaAdapter.reference},
        "assumptions": list(_ADAPTER.assumptions),
        "warnings": warnings,
        "cautions": list(CAUTIONS),
        "provenance": origin,
    }


# -- schemas (for the OpenAPI document) ---------------------------------------------------------


def _column_doc(name: str) -> dict:
    field = FIELDS[name]
    kind = "integer" if name in _INTEGER else "number"
    return {"description": f"{field.metadata.get('description', name)} One per row, or one for every row; "
                           f"each {_BOUNDS[name].describe()}.",
            "oneOf": [{"type": kind, **_MAGNITUDE},
                      {"type": "array", "items": {"type": kind, **_MAGNITUDE}, "minItems": 1,
                       "maxItems": MAX_TABLE_ROWS}]}


#: Documented magnitude of a column value: an integer literal longer than the body reader's
#: MAX_INTEGER_DIGITS is refused as unparsable, so the document must not invite one. Values
#: inside it but outside a field's bounds are reported per row.
_MAGNITUDE = {"minimum": -1e29, "maximum": 1e29}


class TableDesignSchema(StrictSchema):
    """The design type; its fields are columns."""

    type = choice(list(DESIGN_TYPES), required=True, metadata={"description": "Design family."})


class TableColumnsSchema(StrictSchema):
    """One array per field (equal lengths, at most MAX_TABLE_ROWS), or one value for every row."""

    cohens_f = fields.Raw(metadata=_column_doc("cohens_f"))
    eta_squared = fields.Raw(metadata=_column_doc("eta_squared"))
    groups = fields.Raw(metadata=_column_doc("groups"))
    n_per_group = fields.Raw(metadata=_column_doc("n_per_group"))
    alpha = fields.Raw(metadata=_column_doc("alpha"))
    target_power = fields.Raw(metadata=_column_doc("target_power"))
    dropout_rate = fields.Raw(metadata=_column_doc("dropout_rate"))


class TableRequestSchema(StrictSchema):
    """One operation of one design type over many rows, every field a column (equal allocation).

    power: cohens_f or eta_squared, groups, n_per_group, alpha; sample-size: cohens_f or
    eta_squared, groups, alpha, target_power, dropout_rate; detectable-effect: groups,
    n_per_group, alpha, target_power.
    """

    operation = fields.String(required=True, validate=validate.OneOf(list(OPERATIONS)))
    design = fields.Nested(TableDesignSchema, required=True)
    columns = fields.Nested(TableColumnsSchema, required=True)
    results = fields.List(
        fields.String(), validate=validate.Length(min=1),
        metadata={"description": "Result columns to return (default: power, noncentrality, critical_value, "
                                 "df_numerator, df_denominator, n_total for power; every result for the "
                                 "others). power also offers cohens_f and eta_squared."},
    )


class TableErrorSchema(Schema):
    row = fields.Integer(required=True, metadata={"description": "Index of the row (from 0)."})
    field = fields.String(required=True, metadata={"description": "The column at fault."})
    value = fields.Raw(required=True, allow_none=True, metadata={"description": "The value given."})
    message = fields.String(required=True, metadata={"description": "The single endpoint's message for it."})


class TableSummarySchema(Schema):
    rows = fields.Integer(required=True)
    succeeded = fields.Integer(required=True)
    failed = fields.Integer(required=True)
    errors_listed = fields.Integer(required=True)
    errors_omitted = fields.Integer(required=True, metadata={"description": "Row errors not listed."})


class TableWarningSchema(Schema):
    message = fields.String(required=True)
    rows = fields.Integer(required=True, metadata={"description": "How many rows it applies to."})
    first_row = fields.Integer(required=True)


class TableMethodSchema(Schema):
    id = fields.String(required=True)
    reference = fields.String(required=True)


class TableResponseSchema(Schema):
    """Result columns (null in rows that have an entry in errors), as the single endpoint words each row."""

    operation = fields.String(required=True)
    design_type = fields.String(required=True)
    columns = fields.Dict(
        keys=fields.String(), values=fields.List(fields.Float(allow_none=True)), required=True,
        metadata={"description": "power: power, noncentrality, critical_value, df_numerator, df_denominator, "
                                 "n_total, cohens_f, eta_squared; sample-size: n_per_group, n_total, "
                                 "achieved_power, noncentrality, critical_value, df_numerator, df_denominator, "
                                 "one_step_smaller_power, enrolment_n_per_group, enrolment_n_total, cohens_f, "
                                 "eta_squared; detectable-effect: cohens_f, eta_squared, noncentrality, "
                                 "achieved_power, critical_value, df_numerator, df_denominator, n_total."},
    )
    errors = fields.List(fields.Nested(TableErrorSchema), required=True)
    summary = fields.Nested(TableSummarySchema, required=True)
    method = fields.Nested(TableMethodSchema, required=True)
    assumptions = fields.List(fields.String(), required=True)
    warnings = fields.List(fields.Nested(TableWarningSchema), required=True)
    cautions = fields.List(fields.String(), required=True)
    provenance = fields.Nested(ProvenanceSchema, required=True)


__all__ = ["MAX_TABLE_ERRORS", "MAX_TABLE_ROWS", "TableRequestSchema", "TableResponseSchema", "read_table_body",
           "run_table"]
