"""Many questions at once (``POST /v1/batch``), and the engine behind every answer.

``answer_many(operation, bodies)`` answers a list of request bodies for one operation;
the single routes call it with one body (``answer``), the batch route with every item of
that operation, so a result in a batch *is* the single endpoint's result for that body.

How a list is answered:

1. each body is validated by its request schema (``fastload``: marshmallow's own fields
   and rules, without the per-call plumbing); for sample-size and detectable-effect
   questions identical bodies share one validated dict, and such repeats are answered
   once (``_distinct``; each item still gets the whole answer);
2. each distinct design is built once by its adapter (identical design objects in a list
   are built once and shared; adapters' ``build`` is a pure function of its arguments);
3. items are grouped by design class, number of groups and stack signature
   (``core.vectorised.rows_key``) and each group is answered in one pass of the row
   engine (``core.planning.*_rows``): one vectorised power evaluation, one lockstep
   integer search for all the sample sizes, one lockstep noncentrality solve;
4. each item's report (effect, warnings, extras) comes from its adapter, as for a single
   request, and the response gets its provenance. For the batch route (``text=True``) a
   power group whose adapter reports rows at once writes its answers as JSON text a column
   at a time (``columnwriter``), the same text the encoder writes for the dicts.

An item that cannot be answered gets its own problem (the one the single endpoint would
return); the other items are unaffected. If a group fails in an unexpected way, its items
are answered one by one, so only the item at fault gets a 500 problem. The envelope is the
batch's own contract: an item that is not exactly ``id``, ``operation`` and ``request`` (an
object) makes the whole request a 422 that names each such place (``items.41.id``).

Exactness: a Rows of one and a Rows of many compute every row with the same elementwise
operations, so single and batch answers are equal bit for bit (tests/api/test_batch.py).
"""

from __future__ import annotations

import gc
import json
import logging
from collections.abc import Iterator
from contextlib import contextmanager, nullcontext
from typing import Any

import numpy as np
from marshmallow import Schema, ValidationError, fields, validate

from ..core import planning
from ..core.errors import InvalidParameter, NoSolution, show
from ..core.vectorised import Rows, rows_key
from . import problems
from .body import MAX_INTEGER_DIGITS
from .columnwriter import Sheet, Template
from .designs import ADAPTERS
from .fastload import loader_for, sharing
from .fields import StrictSchema
from .jsontext import ANSWER_WRITER, Writer
from .problems import Problem, cap_errors, core_problem, validation_problem
from .provenance import provenance, request_digest, request_digests
from .schemas import DETECTABLE_REQUEST, POWER_REQUEST, SAMPLE_SIZE_REQUEST, ProblemSchema

log = logging.getLogger("samplewright")

CAUTIONS = (
    "A power calculation rests on its assumptions, above all the assumed effect and variability; "
    "check them against pilot data or the literature.",
    "This result does not replace review by a statistician familiar with the study.",
    "Local regulations, ethics committees and animal-welfare bodies decide what sample size is acceptable.",
)

CORE_ERRORS = _CORE_ERRORS = (InvalidParameter, NoSolution)
#: Longest item id accepted.
MAX_ID_LENGTH = 200


class _Item:
    """One question on its way through the engine.

    ``head`` is the answer's own part (the numbers, the effect, the warnings); what depends
    only on the design type (method, assumptions, cautions, the fixed provenance fields) is
    added by ``result`` as a dict, or by ``result_text`` as JSON text written once per type.
    A group answered for the batch route writes ``text`` instead of ``head``: the head's
    JSON text without its closing brace (``columnwriter``); ``head`` then reads it back.
    """

    __slots__ = ("req", "adapter", "design", "layout", "error", "_head", "text", "digest", "_full")

    def __init__(self) -> None:
        self.req: dict | None = None
        self.adapter = None
        self.design = None
        self.layout = None
        self.error: Exception | None = None
        self._head: dict | None = None
        self.text: str | None = None
        self.digest: str | None = None
        self._full: dict | None = None

    @property
    def head(self) -> dict | None:
        if self._head is None and self.text is not None:
            # The text's numbers are shortest round-trip decimals: they read back bit for bit.
            self._head = json.loads(self.text + "}")
        return self._head

    @head.setter
    def head(self, value: dict | None) -> None:
        self._head = value
        self.text = None
        self._full = None

    def copy_answer(self, first: _Item) -> None:
        """The answer of ``first``, which asked the same question: its error or its text (which
        gives this item a head of its own when a dict is wanted)."""
        self.adapter, self.design, self.layout, self.error = first.adapter, first.design, first.layout, first.error
        if first.answered:
            if first.text is None:
                first.text = ANSWER_WRITER.encode(first._head)[:-1]
            self.text, self.digest = first.text, first.digest

    @property
    def answered(self) -> bool:
        return self._head is not None or self.text is not None

    @property
    def result(self) -> dict | None:
        """The whole response body as a dict (None without an answer)."""
        if not self.answered:
            return None
        if self._full is None:
            fixed = _fixed_parts(self.adapter)
            self._full = {
                **self.head,
                "method": dict(fixed.method),
                "assumptions": list(fixed.assumptions),
                "cautions": list(CAUTIONS),
                "provenance": {**fixed.provenance, "request_digest": self.digest},
            }
        return self._full


class _Fixed:
    """The parts of an answer that depend only on its adapter, as values and as JSON text."""

    __slots__ = ("method", "assumptions", "provenance", "texts")

    def __init__(self, adapter) -> None:
        self.method = {"id": adapter.method_id, "reference": adapter.reference}
        self.assumptions = tuple(adapter.assumptions)
        self.provenance = provenance(adapter.method_id, adapter.reference, {})
        self.texts: dict[int, tuple[str, str]] = {}

    def text(self, writer: Writer) -> tuple[str, str]:
        """(text before the digest, text after it) of the fixed members, for ``writer``."""
        got = self.texts.get(id(writer))
        if got is None:
            encode = writer.encoder.encode
            members = encode({"method": self.method, "assumptions": list(self.assumptions),
                              "cautions": list(CAUTIONS)})
            marker = "\x00digest\x00"
            prov = encode({**self.provenance, "request_digest": marker})
            before, after = prov.split(encode(marker))
            got = self.texts[id(writer)] = ("," + members[1:-1] + ',"provenance":' + before + '"', '"' + after + "}")
        return got


_FIXED: dict[int, _Fixed] = {}


def _fixed_parts(adapter) -> _Fixed:
    fixed = _FIXED.get(id(adapter))
    if fixed is None:
        fixed = _FIXED[id(adapter)] = _Fixed(adapter)
    return fixed


def _head_text(item: _Item, writer: Writer) -> str:
    """The head's JSON text without its closing brace (written by the group, or encoded here)."""
    if item.text is not None and writer is ANSWER_WRITER:
        return item.text
    return writer.encode(item.head)[:-1]


def result_text(item: _Item, writer: Writer = ANSWER_WRITER) -> str:
    """``item.result`` as JSON text: the head's text, the fixed members spliced in as text.

    The same members in the same order as ``item.result``; the fixed ones are encoded once
    per adapter and writer rather than once per answer (they are most of the bytes).
    """
    before, after = _fixed_parts(item.adapter).text(writer)
    return _head_text(item, writer) + before + item.digest + after


# -- response pieces (shared by all three operations) -------------------------------------


def _common(adapter, alpha, df1, df2, lam, crit, sizes: list, warnings: list) -> dict:
    """The members every answer has, in the order the power and sample-size heads write them too."""
    return {"alpha": alpha, "design_type": adapter.type, "df_numerator": df1, "df_denominator": df2,
            "noncentrality": lam, "critical_value": crit, "group_sizes": sizes, "n_total": sum(sizes),
            "warnings": warnings}


class _Reports:
    """The adapters' reports for many items.

    An adapter may answer many rows at once with ``warnings_rows(designs, sizes)`` and
    ``effect_reports(designs, sizes, noncentrality)`` (``sizes`` a (rows, k) array,
    ``noncentrality`` each row's λ from the power evaluation; each must return, as new
    objects, what the per-item method returns for each row, in order); otherwise its
    ``warnings`` and ``effect_report`` are called once per distinct (design, sizes). The
    same path serves a single request, so the two agree by construction.

    ``entries`` are (adapter, design, sizes row, sizes key, λ) per item.
    """

    def __init__(self) -> None:
        self._warnings: dict = {}
        self._effect: dict = {}
        self._extras: dict = {}

    @staticmethod
    def _by_adapter(entries: list) -> list[list[int]]:
        first = entries[0][0] if entries else None
        if all(entry[0] is first for entry in entries):  # the usual case: one design type
            return [list(range(len(entries)))] if entries else []
        groups: dict[int, list[int]] = {}
        for j, entry in enumerate(entries):
            groups.setdefault(id(entry[0]), []).append(j)
        return list(groups.values())

    def _many(self, entries: list, plural: str, single: str, memo: dict, copy, with_lam: bool,
              sizes: np.ndarray | None, lam: np.ndarray | None) -> list:
        """The report of each entry, in order (``sizes``, ``lam``: the group's arrays, if at hand)."""
        out: list = [None] * len(entries)
        for index in self._by_adapter(entries):
            adapter = entries[index[0]][0]
            hook = getattr(adapter, plural, None)
            if hook is not None:
                whole = len(index) == len(entries)
                designs = [entry[1] for entry in entries] if whole else [entries[j][1] for j in index]
                if sizes is not None:
                    rows = sizes if whole else sizes[index]
                elif len(index) == 1:  # a single request
                    rows = np.asarray(entries[index[0]][2]).reshape(1, -1)
                else:
                    rows = np.stack([entries[j][2] for j in index])
                if with_lam:
                    if lam is not None:
                        lams = lam if whole else lam[index]
                    else:
                        lams = np.array([entries[j][4] for j in index], dtype=float)
                    got = hook(designs, rows, lams)
                else:
                    got = hook(designs, rows)
                if whole:
                    out = list(got)
                    if len(out) != len(entries):
                        raise ValueError(f"{plural} returned {len(out)} reports for {len(entries)} rows")
                else:
                    for j, value in zip(index, got, strict=True):
                        out[j] = value
                continue
            method = getattr(adapter, single)
            for j in index:
                _, design, row, key, _lam = entries[j]
                k = (id(adapter), id(design), key)
                hit = memo.get(k)
                if hit is None:
                    hit = memo[k] = method(design, row)
                out[j] = copy(hit)
        return out

    def warnings(self, entries: list, sizes: np.ndarray | None = None) -> list[list]:
        return self._many(entries, "warnings_rows", "warnings", self._warnings, list, False, sizes, None)

    def effects(self, entries: list, sizes: np.ndarray | None = None, lam: np.ndarray | None = None) -> list[dict]:
        return self._many(entries, "effect_reports", "effect_report", self._effect, dict, True, sizes, lam)

    @staticmethod
    def by_rows(items: list) -> bool:
        """Whether every item's adapter reports many rows at once and adds no ``details``: then
        a group's answers can be written a column at a time."""
        adapters = {id(item.adapter): item.adapter for item in items}.values()
        return all(getattr(a, "extras", None) is None and getattr(a, "warnings_rows", None) is not None
                   and getattr(a, "effect_reports", None) is not None for a in adapters)

    @staticmethod
    def has_extras(entries: list) -> bool:
        """Whether any entry's adapter adds ``details`` (most do not; then ``extras`` is skipped)."""
        return any(getattr(adapter, "extras", None) is not None for adapter in {id(e[0]): e[0] for e in entries}.values())

    def extras(self, adapter, design, sizes: np.ndarray, alpha: float, key: tuple, out: dict) -> dict:
        hook = getattr(adapter, "extras", None)
        if hook is not None:
            k = (id(design), key, alpha)
            if k in self._extras:
                details = self._extras[k]
            else:
                details = self._extras[k] = hook(design, sizes, alpha)
            if details:
                out["details"] = details
        return out


# -- stage 1 and 2: validation and designs ---------------------------------------------------


def _validate(items: list[_Item], bodies: list, schema, *, shareable: bool = False) -> None:
    """Each body's validated request, or its problem. ``shareable``: identical bodies (see
    ``fastload.sharing``) get the same validated dict, so that ``_distinct`` can see them."""
    loader = loader_for(schema, shareable=shareable)
    for item, body in zip(items, bodies, strict=True):
        try:
            item.req = loader.load(body)
        except ValidationError as exc:
            item.error = validation_problem(exc.messages)


def _adapter_error(exc: ValidationError) -> Problem:
    return validation_problem({exc.field_name: exc.messages} if exc.field_name else exc.messages)


def _make(items: list[_Item], how: str) -> None:
    """Build each distinct design (``how`` = "build") or layout ("layout") once."""
    made: dict[tuple, Any] = {}
    for item in items:
        if item.error is not None:
            continue
        req = item.req
        adapter = item.adapter = ADAPTERS[req["design"]["type"]]
        count = len(req["group_sizes"]) if "group_sizes" in req else None
        key = (id(req["design"]), count)  # items with the same design share its validated dict
        value = made.get(key)
        if value is None:
            try:
                value = getattr(adapter, how)(req["design"], count)
            except ValidationError as exc:
                value = _adapter_error(exc)
            except _CORE_ERRORS as exc:
                value = exc
            made[key] = value
        if isinstance(value, Exception):
            item.error = value
        elif how == "build":
            item.design = value
        else:
            item.layout = value
            item.design = value.design


def _groups(items: list[_Item]) -> list[list[_Item]]:
    if len(items) == 1:  # a single request: nothing to group with
        return [items] if items[0].error is None else []
    groups: dict[tuple, list[_Item]] = {}
    keys: dict[int, tuple] = {}  # designs are shared between identical items
    for item in items:
        if item.error is None:
            key = keys.get(id(item.design))
            if key is None:
                key = keys[id(item.design)] = rows_key(item.design)
            groups.setdefault(key, []).append(item)
    return list(groups.values())


def _sizes_one(req: dict, design) -> np.ndarray:
    if "group_sizes" in req:
        return planning.check_sizes(design, req["group_sizes"])
    return planning.sizes_for(design, req["n_per_group"])


def _sizes_rows(rows: Rows, members: list[_Item]) -> tuple[np.ndarray, list]:
    """Sizes (rows, k) and per-row errors for a group mixing n_per_group and group_sizes."""
    count = rows.count
    sizes = np.ones((count, rows.groups), dtype=np.int64)
    errors: list = [None] * count
    by_n = [j for j, it in enumerate(members) if "group_sizes" not in it.req]
    by_list = [j for j, it in enumerate(members) if "group_sizes" in it.req]
    for index, given in ((by_n, "n"), (by_list, "list")):
        if not index:
            continue
        part = rows if len(index) == count else rows.take(index)
        if given == "n":
            got, errs = planning.sizes_for_rows(part, [members[j].req["n_per_group"] for j in index])
        else:
            got, errs = planning.check_sizes_rows(part, [members[j].req["group_sizes"] for j in index])
        sizes[index] = got
        for j, e in zip(index, errs, strict=True):
            errors[j] = e
    return sizes, errors


def _sized_rows(members: list[_Item]) -> tuple[Rows, np.ndarray, list[int]] | None:
    """The Rows, sizes (rows, k) and member indices of the members whose sizes are valid.

    A member whose sizes are refused gets its error; None when no member is left.
    """
    rows = Rows([it.design for it in members])
    sizes2d, errors = _sizes_rows(rows, members)
    ok = []
    for j, e in enumerate(errors):
        if e is None:
            ok.append(j)
        else:
            members[j].error = e
    if not ok:
        return None
    if len(ok) == rows.count:
        return rows, sizes2d, ok
    return rows.take(ok), sizes2d[ok], ok


# -- stage 3 and 4: computation and reports, per operation -------------------------------------


def _power_group(members: list[_Item], reports: _Reports, text: bool = False) -> None:
    if len(members) == 1:
        item = members[0]
        try:
            sizes = _sizes_one(item.req, item.design)
            r = planning.power(item.design, sizes=sizes, alpha=item.req["alpha"])
        except _CORE_ERRORS as exc:
            item.error = exc
            return
        answers = [(item, sizes, r.power, r.df_numerator, r.df_denominator, r.noncentrality,
                    r.critical_value, list(r.group_sizes))]
    else:
        sized = _sized_rows(members)
        if sized is None:
            return
        part, group_sizes, ok = sized
        whole = len(ok) == len(members)
        got = planning.power_rows(part, sizes=group_sizes, alpha=[members[j].req["alpha"] for j in ok])
        answered = members if whole else [members[j] for j in ok]
        if text and reports.by_rows(answered):
            _power_texts(answered, got, reports)
            return
        answers = zip(
            members if whole else [members[j] for j in ok], group_sizes, got.power.tolist(),
            got.df_numerator.tolist(), got.df_denominator.tolist(), got.noncentrality.tolist(),
            got.critical_value.tolist(), got.sizes.tolist(), strict=True,
        )
    answers = list(answers)
    entries = [(a[0].adapter, a[0].design, a[1], tuple(a[7]), a[5]) for a in answers]
    if len(members) == 1:
        warnings, effects = reports.warnings(entries), reports.effects(entries)
    else:
        warnings = reports.warnings(entries, got.sizes)
        effects = reports.effects(entries, got.sizes, got.noncentrality)
    with_extras = reports.has_extras(entries)
    for (item, sizes, pw, df1, df2, lam, crit, size_list), warn, effect, entry in zip(
            answers, warnings, effects, entries, strict=True):
        alpha = item.req["alpha"]
        out = {"power": pw, "alpha": alpha, "design_type": item.adapter.type, "df_numerator": df1,
               "df_denominator": df2, "noncentrality": lam, "critical_value": crit, "group_sizes": size_list,
               "n_total": sum(size_list), "warnings": warn, "effect": effect}
        item.head = reports.extras(item.adapter, item.design, sizes, alpha, entry[3], out) if with_extras else out


#: The power head's members, in the order ``_power_group`` writes them.
_POWER_HEAD = Template(("power", "alpha", "design_type", "df_numerator", "df_denominator", "noncentrality",
                        "critical_value", "group_sizes", "n_total", "warnings", "effect"), closed=False)


def _list_texts(values: list[list]) -> list[str]:
    """Each list as JSON text (answers' warnings: most are empty)."""
    encode = ANSWER_WRITER.encode
    return [encode(v) if v else "[]" for v in values]


def _type_texts(items: list[_Item]) -> list[str]:
    """Each item's design type as JSON text (a group's items nearly always share one adapter)."""
    first = items[0].adapter
    if all(item.adapter is first for item in items):
        return [ANSWER_WRITER.string(first.type)] * len(items)
    return [ANSWER_WRITER.string(item.adapter.type) for item in items]


def _effect_column(sheet: Sheet, items: list[_Item], entries: list, got, reports: _Reports):
    """The effect members of a group's answers: the adapter's columns if it gives them
    (``effect_columns``, the same numbers as its dicts), else its dicts."""
    columns = getattr(items[0].adapter, "effect_columns", None)
    if columns is not None and all(item.adapter is items[0].adapter for item in items):
        return sheet.shapes(len(items), columns([item.design for item in items], got.sizes, got.noncentrality))
    return sheet.dicts(reports.effects(entries, got.sizes, got.noncentrality))


def _power_texts(items: list[_Item], got, reports: _Reports) -> None:
    """The heads of a power group as text (``item.text``), a column at a time: the members and
    values ``_power_group`` puts in its dicts, in the same order (adapters without extras)."""
    sizes = got.sizes
    entries = [(item.adapter, item.design, row, None, None) for item, row in zip(items, sizes, strict=True)]
    sheet = Sheet()
    columns = (sheet.floats(got.power), sheet.values([item.req["alpha"] for item in items]), _type_texts(items),
               sheet.floats(got.df_numerator), sheet.floats(got.df_denominator), sheet.floats(got.noncentrality),
               sheet.floats(got.critical_value), sheet.integers(sizes), sheet.integers(sizes.sum(axis=1)),
               _list_texts(reports.warnings(entries, sizes)), _effect_column(sheet, items, entries, got, reports))
    for item, head in zip(items, sheet.fill(_POWER_HEAD, columns), strict=True):
        item.text = head


def _sample_size_group(members: list[_Item], reports: _Reports, text: bool = False) -> None:
    if len(members) == 1:
        item = members[0]
        req = item.req
        try:
            found = planning.sample_size(item.design, alpha=req["alpha"], target_power=req["target_power"],
                                         dropout_rate=req["dropout_rate"])
        except _CORE_ERRORS as exc:
            item.error = exc
            return
        a, step = found.answer, found.one_step_smaller
        answers = [(item, a.power, a.df_numerator, a.df_denominator, a.noncentrality, a.critical_value,
                    list(a.group_sizes), found.smallest_group,
                    None if step is None else (list(step.group_sizes), step.power),
                    None if found.enrolment_sizes is None else list(found.enrolment_sizes),
                    found.target_power, found.dropout_rate)]
    else:
        rows = Rows([it.design for it in members])
        got, errors = planning.sample_size_rows(
            rows, alpha=[it.req["alpha"] for it in members],
            target_power=[it.req["target_power"] for it in members],
            dropout_rate=[it.req["dropout_rate"] for it in members],
        )
        a, step = got.answer, got.one_step_smaller
        cols = (a.power.tolist(), a.df_numerator.tolist(), a.df_denominator.tolist(), a.noncentrality.tolist(),
                a.critical_value.tolist(), a.sizes.tolist(), got.smallest_group.tolist(), step.sizes.tolist(),
                step.power.tolist(), got.has_smaller.tolist(), got.enrolment.tolist(),
                got.target_power.tolist(), got.dropout_rate.tolist())
        answers = []
        ok = []
        for j, item in enumerate(members):
            if errors[j] is not None:
                item.error = errors[j]
                continue
            ok.append(j)
            (pw, df1, df2, lam, crit, sz, m, step_sz, step_pw, smaller, enrol, tp, dr) = (c[j] for c in cols)
            answers.append((item, pw, df1, df2, lam, crit, sz, m, (step_sz, step_pw) if smaller else None,
                            enrol if dr > 0 else None, tp, dr))
    if len(members) == 1:
        entries = [(a[0].adapter, a[0].design, np.asarray(a[6]), tuple(a[6]), a[4]) for a in answers]
        all_warnings, effects = reports.warnings(entries), reports.effects(entries)
    else:
        whole = len(ok) == len(members)
        group_sizes = a.sizes if whole else a.sizes[ok]
        lams = a.noncentrality if whole else a.noncentrality[ok]
        entries = [(b[0].adapter, b[0].design, row, tuple(b[6]), b[4])
                   for b, row in zip(answers, group_sizes, strict=True)]
        all_warnings = reports.warnings(entries, group_sizes)
        effects = reports.effects(entries, group_sizes, lams)
    with_extras = reports.has_extras(entries)
    for (item, pw, df1, df2, lam, crit, size_list, m, step, enrol, tp, dr), warnings, effect, entry in zip(
            answers, all_warnings, effects, entries, strict=True):
        req = item.req
        if dr > 0.3:
            warnings.append(
                f"A dropout rate of {dr:g} is high: losses that depend on the treatment "
                "bias the comparison, which enrolling more units does not fix."
            )
        first = size_list[0]
        out = {
            "alpha": req["alpha"], "design_type": item.adapter.type, "df_numerator": df1, "df_denominator": df2,
            "noncentrality": lam, "critical_value": crit, "group_sizes": size_list, "n_total": sum(size_list),
            "warnings": warnings,
            "target_power": tp,
            "achieved_power": pw,
            "n_per_group": first if size_list.count(first) == len(size_list) else None,
            "smallest_group": m,
            "one_step_smaller": None if step is None else {
                "group_sizes": step[0], "n_total": sum(step[0]), "power": step[1]},
            "enrolment": None if enrol is None else {
                "dropout_rate": dr, "group_sizes": enrol, "n_total": sum(enrol)},
            "effect": effect,
        }
        item.head = reports.extras(item.adapter, item.design, entry[2], req["alpha"], entry[3], out) \
            if with_extras else out


def _detectable_group(members: list[_Item], reports: _Reports, text: bool = False) -> None:
    if len(members) == 1:
        item = members[0]
        req = item.req
        try:
            sizes = _sizes_one(req, item.design)
            found = planning.detectable_effect(item.design, sizes=sizes, alpha=req["alpha"],
                                               target_power=req["target_power"])
        except _CORE_ERRORS as exc:
            item.error = exc
            return
        c = found.check
        answers = [(item, sizes, c.power, c.df_numerator, c.df_denominator, c.noncentrality, c.critical_value,
                    list(c.group_sizes), found.target_power, found.noncentrality)]
    else:
        sized = _sized_rows(members)
        if sized is None:
            return
        part, sizes2d, ok = sized
        got, errs = planning.detectable_rows(
            part, sizes=sizes2d, alpha=[members[j].req["alpha"] for j in ok],
            target_power=[members[j].req["target_power"] for j in ok],
        )
        c = got.check
        cols = (c.power.tolist(), c.df_numerator.tolist(), c.df_denominator.tolist(), c.noncentrality.tolist(),
                c.critical_value.tolist(), c.sizes.tolist(), got.target_power.tolist(), got.noncentrality.tolist())
        answers = []
        for jj, j in enumerate(ok):
            if errs[jj] is not None:
                members[j].error = errs[jj]
                continue
            answers.append((members[j], sizes2d[jj], *(col[jj] for col in cols)))
    entries = [(a[0].adapter, None, a[1], tuple(a[7]), None) for a in answers]
    for (item, sizes, pw, df1, df2, lam, crit, size_list, tp, found_lam), warn in zip(
            answers, reports.warnings(entries), strict=True):
        adapter = item.adapter
        out = {
            **_common(adapter, item.req["alpha"], df1, df2, lam, crit, size_list, warn),
            "target_power": tp,
            "achieved_power": pw,
            **adapter.detectable_report(item.layout, sizes, found_lam),
        }
        item.head = out


#: operation → (request schema, how its design is made, its group engine, whether identical
#: questions are answered once). Power rows are cheap to compute and rarely repeat (a sweep
#: varies the size); a sample-size question repeats whenever a sweep varies something it
#: does not take, and each costs a lockstep search.
_OPERATIONS = {
    "power": (POWER_REQUEST, "build", _power_group, False),
    "sample-size": (SAMPLE_SIZE_REQUEST, "build", _sample_size_group, True),
    "detectable-effect": (DETECTABLE_REQUEST, "layout", _detectable_group, True),
}
OPERATIONS = tuple(_OPERATIONS)


def _run_group(compute, members: list[_Item], reports: _Reports, *, isolate: bool, text: bool) -> None:
    if not isolate:
        compute(members, reports, text)
        return
    try:
        compute(members, reports, text)
        return
    except Exception:  # answer the group's items one by one, so only the one at fault fails
        pass
    for item in members:
        item.error = item.head = None
        try:
            compute([item], reports)
        except _CORE_ERRORS as exc:  # what the single route turns into a 422
            item.error = exc
        except Exception as exc:
            log.exception("batch item failed")
            item.error = exc


def answer_many(operation: str, bodies: list, *, isolate: bool = True, text: bool = False) -> list[_Item]:
    """Validate, compute and report every body of ``operation`` (one of OPERATIONS).

    Each returned item has ``result`` (the response dict) or ``error`` (a Problem, a core
    error, or, with ``isolate``, an unexpected exception). With ``text``, groups may write
    their answers as text (``item.text``) for ``result_text``; ``result`` still works.
    """
    schema, how, compute, share_questions = _OPERATIONS[operation]
    items = [_Item() for _ in bodies]
    share_questions = share_questions and len(items) > 1
    # One body has nothing to share its validated design with: no keys are written then.
    with sharing() if len(items) > 1 else nullcontext():
        _validate(items, bodies, schema, shareable=share_questions)
    work, repeats = _distinct(items) if share_questions else (items, [])
    _make(work, how)
    reports = _Reports()
    for members in _groups(work):
        _run_group(compute, members, reports, isolate=isolate, text=text)
    answered = [item for item in work if item.answered]
    if len(answered) == 1:
        answered[0].digest = request_digest(answered[0].req)
    elif answered:  # items of a batch share design dicts: digested a member at a time
        for item, digest in zip(answered, request_digests([item.req for item in answered]), strict=True):
            item.digest = digest
    for item, first in repeats:
        item.copy_answer(first)
    return items


def _distinct(items: list[_Item]) -> tuple[list[_Item], list[tuple[_Item, _Item]]]:
    """The first item of each distinct validated request (valid ones only), and (repeat, first)
    for the items that ask the same question again (the same validated dict object)."""
    firsts: dict[int, _Item] = {}
    work, repeats = [], []
    for item in items:
        if item.error is not None:
            continue
        first = firsts.setdefault(id(item.req), item)
        if first is item:
            work.append(item)
        else:
            repeats.append((item, first))
    return work, repeats


def _one(operation: str, body: dict) -> _Item:
    (item,) = answer_many(operation, [body], isolate=False)
    if item.error is not None:
        raise item.error
    return item


def answer(operation: str, body: dict) -> dict:
    """One request: the response dict, or the exception the route turns into a problem."""
    return _one(operation, body).result


def answer_text(operation: str, body: dict, writer: Writer) -> str:
    """One request: the response as JSON text (``result_text``), or the exception."""
    return result_text(_one(operation, body), writer)


# -- POST /v1/batch ---------------------------------------------------------------------------


def as_problem(error: Exception) -> Problem:
    """The Problem the single endpoint would send for ``error``."""
    if isinstance(error, _CORE_ERRORS):
        return core_problem(error)
    if isinstance(error, Problem):
        return error
    return Problem(500, "internal-error", "Internal error",
                   "the service failed to answer this item; the error is logged with this request id")


def problem_body(error: Exception) -> dict:
    """An item's problem: the single endpoint's problem details, less instance and request id."""
    error = as_problem(error)
    body: dict[str, Any] = {
        "type": problems._BASE + error.slug if error.slug else "about:blank",
        "title": error.title,
        "status": error.status,
        "detail": error.detail,
    }
    if error.errors:
        kept, omitted = cap_errors(error.errors)
        body["errors"] = kept
        if omitted:
            body["errors_omitted"] = omitted
    return body


_ITEM_KEYS = frozenset(("id", "operation", "request"))


def _envelope_ok(raw) -> bool:
    """The common case, checked quickly: exactly id, operation and request, all well formed."""
    if type(raw) is not dict or len(raw) != 3:
        return False
    item_id, operation = raw.get("id"), raw.get("operation")
    return (type(item_id) is str and 1 <= len(item_id) <= MAX_ID_LENGTH and type(operation) is str
            and operation in _OPERATIONS and type(raw.get("request")) is dict)


def _envelope_errors(i: int, raw, errors: dict[str, list[str]]) -> None:
    """Check one item's envelope (id, operation, request object); add messages under items.<i>."""
    where = f"items.{i}"
    if not isinstance(raw, dict):
        errors[where] = [f"must be a JSON object with id, operation and request (got {show(raw)})"]
        return
    item_id = raw.get("id")
    if "id" not in raw:
        errors[f"{where}.id"] = [f"is required: a string of 1 to {MAX_ID_LENGTH} characters naming the item"]
    elif not isinstance(item_id, str) or not 1 <= len(item_id) <= MAX_ID_LENGTH:
        errors[f"{where}.id"] = [f"must be a string of 1 to {MAX_ID_LENGTH} characters (got {show(item_id)})"]
    operation = raw.get("operation")
    if not isinstance(operation, str) or operation not in _OPERATIONS:
        errors[f"{where}.operation"] = [f"must be one of {list(OPERATIONS)} (got {show(operation)})"]
    if not isinstance(raw.get("request"), dict):
        errors[f"{where}.request"] = [
            f"must be a JSON object: the body of the single endpoint (got {show(raw.get('request'))})"
        ]
    if len(raw) > 3 or not raw.keys() <= _ITEM_KEYS:
        for key in sorted(set(raw) - _ITEM_KEYS, key=str):
            errors[f"{where}.{key}"] = ["is not a field here; allowed: id, operation, request"]


@contextmanager
def collector_paused() -> Iterator[None]:
    """Pause Python's cyclic garbage collector while a batch is read, answered and written.

    A batch creates hundreds of thousands of small objects that all stay alive until the
    response is written; the collector would traverse them again and again for nothing
    (a third of the time of a 10,000-item batch). Reference counting still frees what
    dies; cycles are collected once the collector runs again after the block.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def run_batch(body: dict, *, max_items: int) -> str:
    """POST /v1/batch: every item answered as its single endpoint would, in order (JSON text).

    The response is written item by item: each answer's text is ``result_text`` (the
    fixed members spliced in), each problem is encoded as is, then the envelope.
    """
    unknown = sorted(set(body) - {"items"}, key=str)
    if unknown:
        raise validation_problem({key: ["is not a field here; allowed: items"] for key in unknown})
    raw_items = body.get("items")
    if not isinstance(raw_items, list):
        raise validation_problem({"items": [f"must be a JSON array of items (got {show(raw_items)})"]})
    if not raw_items:
        raise validation_problem({"items": ["must have at least 1 item"]})
    if len(raw_items) > max_items:
        raise Problem(413, "too-many-items", "Batch too large",
                      f"the batch has {len(raw_items)} items; this service answers at most {max_items} per request",
                      errors={"items": [f"must have at most {max_items} items (got {len(raw_items)})"]})
    # The envelope is the batch's own contract: a malformed one (a client bug) is refused
    # whole, naming each place; a question that cannot be answered is that item's problem.
    envelope: dict[str, list[str]] = {}
    by_operation: dict[str, list[int]] = {}
    for i, raw in enumerate(raw_items):
        if _envelope_ok(raw):
            by_operation.setdefault(raw["operation"], []).append(i)
        else:
            _envelope_errors(i, raw, envelope)
    if envelope:
        raise Problem(422, "invalid-request", "Request is not valid",
                      f"{len({k.split('.')[1] for k in envelope})} item(s) have an invalid envelope: "
                      f"{', '.join(list(envelope)[:5])}", errors=envelope)
    answered: list = [None] * len(raw_items)
    for operation, index in by_operation.items():
        got = answer_many(operation, [raw_items[i]["request"] for i in index], text=True)
        for i, item in zip(index, got, strict=True):
            answered[i] = item
    encode, string = ANSWER_WRITER.encode, ANSWER_WRITER.string
    ids = list(map(string, [raw["id"] for raw in raw_items]))
    out = []
    failed = 0
    adapter = fixed = None
    for item_id, item in zip(ids, answered, strict=True):
        if item.error is None:
            if item.adapter is not adapter:  # runs of items of one design type are the rule
                adapter = item.adapter
                fixed = _fixed_parts(adapter).text(ANSWER_WRITER)
            head = _head_text(item, ANSWER_WRITER)
            out.append(f'{{"id":{item_id},"status":200,"result":{head}{fixed[0]}{item.digest}{fixed[1]}}}')
        else:
            problem = problem_body(item.error)
            out.append('{"id":' + item_id + "," + encode({"status": problem["status"], "problem": problem})[1:])
            failed += 1
    summary = encode({"succeeded": len(out) - failed, "failed": failed})
    return f'{{"items":[{",".join(out)}],"summary":{summary}}}'


# -- schemas (for the OpenAPI document) ---------------------------------------------------------


#: Where the JSON-value schema below sits in the OpenAPI document (it refers to itself).
_JSON_VALUE_POINTER = "#/components/schemas/BatchItem/properties/request/additionalProperties"


def _json_value_schema() -> dict:
    """JSON Schema of any JSON value the body reader accepts (nested values refer back here).

    Integers are bounded as the reader bounds integer literals (MAX_INTEGER_DIGITS digits);
    other numbers are the non-integral ones (an integral value is an integer to JSON Schema).
    """
    largest = 10**MAX_INTEGER_DIGITS - 1
    nested = {"$ref": _JSON_VALUE_POINTER}
    return {"anyOf": [{"type": "string"}, {"type": "boolean"}, {"type": "null"},
                      {"type": "integer", "minimum": -largest, "maximum": largest},
                      {"type": "number", "not": {"type": "integer"}},
                      {"type": "array", "items": nested},
                      {"type": "object", "additionalProperties": nested}]}


class BatchItemSchema(StrictSchema):
    """One question: which operation, and the body its single endpoint takes."""

    id = fields.String(required=True, validate=validate.Length(min=1, max=MAX_ID_LENGTH),
                       metadata={"description": "Any client string, echoed back with the answer."})
    operation = fields.String(required=True, validate=validate.OneOf(OPERATIONS))
    request = fields.Dict(
        required=True,
        metadata={"description": "The body of POST /v1/power, /v1/sample-size or /v1/detectable-effect "
                                 "(PowerRequest, SampleSizeRequest, DetectableEffectRequest); a body that "
                                 "endpoint refuses is that item's problem, not the batch's.",
                  "additionalProperties": _json_value_schema()},
    )


class BatchRequestSchema(StrictSchema):
    """Up to the configured number of items (10,000 by default), any mix of operations and designs."""

    items = fields.List(fields.Nested(BatchItemSchema), required=True, validate=validate.Length(min=1),
                        metadata={"description": "The questions, answered in this order. A malformed item "
                                                 "(not id, operation and request) makes the batch a 422."})


class BatchResultSchema(Schema):
    """One answer: the single endpoint's response (status 200) or its problem (4xx/5xx)."""

    id = fields.String(required=True, metadata={"description": "The item's id, as sent."})
    status = fields.Integer(required=True, metadata={"description": "What the single endpoint would have answered."})
    result = fields.Dict(metadata={"description": "The single endpoint's response body (status 200)."})
    problem = fields.Nested(ProblemSchema, metadata={"description": "The single endpoint's problem details."})


class BatchSummarySchema(Schema):
    succeeded = fields.Integer(required=True)
    failed = fields.Integer(required=True)


class BatchResponseSchema(Schema):
    items = fields.List(fields.Nested(BatchResultSchema), required=True)
    summary = fields.Nested(BatchSummarySchema, required=True)
