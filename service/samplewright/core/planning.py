"""The three planning questions, answered once for every design, for one row or many.

* power: the probability that the level-α test rejects, for given group sizes;
* sample size: the smallest integer design whose power reaches a target;
* detectable effect: the smallest noncentrality (and effect) detectable with the
  given sizes at the target power.

A design supplies ``groups``, ``ratios`` (allocation divided by its minimum),
``smallest_unit()`` and ``evaluate`` / ``power_at_noncentrality`` (from ``test_at`` for
F tests); see ``designs/base.py``.

Every question has a row form (``power_rows``, ``sample_size_rows``, ``detectable_rows``,
``sizes_for_rows``, ``check_sizes_rows``) over a ``vectorised.Rows`` of designs with one
α, target and set of sizes per row, answered in lockstep with array calls; errors are per
row (a list with None where the row has an answer). The scalar functions (``power``,
``sample_size``, ``detectable_effect``, ``sizes_for``, ``check_sizes``) answer one design
as a ``Rows`` of one. ``detectable_effect`` is the row form with one row; the other four
follow their row forms step by step for that one row with plain Python numbers for the
bookkeeping (indices, error lists, the integer search: ``solve.smallest_integer_reaching_one``
makes the probes the lockstep search makes), and every number they report comes from the
``Rows`` one-row methods (``evaluate_one``, ``test_of_one``, …), which compute what the
array evaluations give for that row with the same operations on the same doubles, in
Python numbers where numpy's dispatch would cost more than the arithmetic. So a question
asked alone and the same question among many give the same numbers, bit for bit, at a
fraction of the cost of the array bookkeeping (which exceeds the evaluations themselves
for one row).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from .errors import InvalidParameter, NoSolution
from .solve import (
    MAX_NONCENTRALITY,
    noncentrality_for_power,
    smallest_integer_reaching,
    smallest_integer_reaching_one,
)
from .vectorised import Rows, sizes_from_rows

#: No group is planned larger than this; a sample-size answer beyond it is refused.
SIZE_CAP = 10_000_000
#: Relative slack when rounding a dropout-inflated size up: 64 / (1 − 0.2) is
#: 80.00000000000001 in floating point and must enrol 80, not 81.
_DROPOUT_SLACK = 1e-12
_KEEP = 1 - _DROPOUT_SLACK


@dataclass(frozen=True)
class PowerResult:
    """Power of one design at one set of group sizes."""

    alpha: float
    power: float
    df_numerator: float
    df_denominator: float
    noncentrality: float
    critical_value: float
    group_sizes: tuple[int, ...]

    @property
    def n_total(self) -> int:
        return int(sum(self.group_sizes))


@dataclass(frozen=True)
class SampleSizeResult:
    """The smallest design reaching the target, the step below it, and enrolment."""

    target_power: float
    answer: PowerResult
    one_step_smaller: PowerResult | None
    smallest_group: int
    dropout_rate: float
    enrolment_sizes: tuple[int, ...] | None


@dataclass(frozen=True)
class DetectableResult:
    """The noncentrality detectable with the given sizes, and the power it gives."""

    target_power: float
    noncentrality: float
    check: PowerResult


# -- row results ---------------------------------------------------------------------------


@dataclass(frozen=True)
class PowerRows:
    """Power and test parameters per row (entries of rows with an error are meaningless)."""

    alpha: np.ndarray
    power: np.ndarray
    df_numerator: np.ndarray
    df_denominator: np.ndarray
    noncentrality: np.ndarray
    critical_value: np.ndarray
    sizes: np.ndarray  # (rows, k) integers

    def result(self, i: int) -> PowerResult:
        return PowerResult(
            alpha=float(self.alpha[i]),
            power=float(self.power[i]),
            df_numerator=float(self.df_numerator[i]),
            df_denominator=float(self.df_denominator[i]),
            noncentrality=float(self.noncentrality[i]),
            critical_value=float(self.critical_value[i]),
            group_sizes=tuple(self.sizes[i].tolist()),
        )


@dataclass(frozen=True)
class SampleSizeRows:
    """Per row: the smallest design reaching the target, the step below, and enrolment."""

    target_power: np.ndarray
    answer: PowerRows
    one_step_smaller: PowerRows
    has_smaller: np.ndarray  # False where the answer is the smallest design with error df
    smallest_group: np.ndarray
    dropout_rate: np.ndarray
    enrolment: np.ndarray  # (rows, k); meaningful where dropout_rate > 0

    def result(self, i: int) -> SampleSizeResult:
        return SampleSizeResult(
            target_power=float(self.target_power[i]),
            answer=self.answer.result(i),
            one_step_smaller=self.one_step_smaller.result(i) if self.has_smaller[i] else None,
            smallest_group=int(self.smallest_group[i]),
            dropout_rate=float(self.dropout_rate[i]),
            enrolment_sizes=tuple(self.enrolment[i].tolist()) if self.dropout_rate[i] > 0 else None,
        )


@dataclass(frozen=True)
class DetectableRows:
    """Per row: the detectable noncentrality and the power it gives."""

    target_power: np.ndarray
    noncentrality: np.ndarray
    check: PowerRows

    def result(self, i: int) -> DetectableResult:
        return DetectableResult(
            target_power=float(self.target_power[i]),
            noncentrality=float(self.noncentrality[i]),
            check=self.check.result(i),
        )


RowErrors = list  # list[InvalidParameter | NoSolution | None], one entry per row


def _column(value, count: int, dtype=float) -> np.ndarray:
    return np.broadcast_to(np.asarray(value, dtype=dtype), (count,)).copy()


def _scatter(count: int, index: np.ndarray, values: np.ndarray, fill=0.0, dtype=float) -> np.ndarray:
    out = np.full(count, fill, dtype=dtype)
    out[index] = values
    return out


def _power_rows_at(rows: Rows, index: np.ndarray, sizes: np.ndarray, alpha: np.ndarray) -> PowerRows:
    """PowerRows for all rows, evaluated at ``sizes`` (rows, k) for the rows in ``index``."""
    count = rows.count
    full_sizes = np.zeros((count, rows.groups), dtype=np.int64)
    if index.size == 0:
        zero = np.zeros(count)
        return PowerRows(alpha, zero, zero, zero, zero, zero, full_sizes)
    part = rows if index.size == count else rows.take(index)
    ev = part.evaluate(sizes[index], alpha[index])
    full_sizes[index] = sizes[index]
    return PowerRows(
        alpha=alpha,
        power=_scatter(count, index, ev.power),
        df_numerator=_scatter(count, index, ev.df1),
        df_denominator=_scatter(count, index, ev.df2),
        noncentrality=_scatter(count, index, ev.noncentrality),
        critical_value=_scatter(count, index, ev.critical_value),
        sizes=full_sizes,
    )


# -- sizes -----------------------------------------------------------------------------------


def check_sizes_rows(rows: Rows, sizes: list) -> tuple[np.ndarray, RowErrors]:
    """Validate explicit group sizes (one list per row) against each row's design.

    Per row: one size per group, every size in [1, SIZE_CAP], error df ≥ 1. Returns the
    sizes as a (rows, k) integer array (rows with an error hold ones) and the errors.
    """
    count, k = rows.count, rows.groups
    out = np.ones((count, k), dtype=np.int64)
    errors: RowErrors = [None] * count
    for i, given in enumerate(sizes):
        arr = np.asarray(given, dtype=np.int64)
        if arr.shape != (k,):
            errors[i] = InvalidParameter("group_sizes", list(given), f"needs one size per group ({k})")
        elif np.any(arr < 1) or np.any(arr > SIZE_CAP):
            errors[i] = InvalidParameter("group_sizes", list(given), f"every size must be between 1 and {SIZE_CAP}")
        else:
            out[i] = arr
    ok = np.array([e is None for e in errors])
    index = np.flatnonzero(ok)
    if index.size:
        part = rows if index.size == count else rows.take(index)
        df2 = part.error_df(out[index])
        for j in np.flatnonzero(df2 < 1).tolist():
            i = int(index[j])
            errors[i] = InvalidParameter(
                "group_sizes", list(sizes[i]),
                "leaves no error degrees of freedom (total must exceed the number of groups)",
            )
    return out, errors


def sizes_for_rows(rows: Rows, n_per_group) -> tuple[np.ndarray, RowErrors]:
    """Sizes from each row's ``n_per_group`` (the smallest group's size under its allocation)."""
    count = rows.count
    n = _column(n_per_group, count, np.int64)
    errors: RowErrors = [None] * count
    ceiling = rows.unit_ceiling
    if ceiling is None or n.min() < ceiling:  # otherwise no n can fall below its unit
        unit = rows.smallest_unit()
        for i in np.flatnonzero(n < unit).tolist():
            errors[i] = InvalidParameter(
                "n_per_group", int(n[i]),
                f"must be at least {int(unit[i])} so that error degrees of freedom remain",
            )
    sizes = sizes_from_rows(np.maximum(n, 1), rows.ratios)
    for i in np.flatnonzero(sizes.max(axis=1) > SIZE_CAP).tolist():
        if errors[i] is None:
            errors[i] = InvalidParameter("n_per_group", int(n[i]), f"no group may exceed {SIZE_CAP} units")
    return sizes, errors


# -- the three questions, row by row ----------------------------------------------------------


def power_rows(rows: Rows, *, sizes: np.ndarray, alpha) -> PowerRows:
    """Power of every row's level-α test at its sizes (validated with the sizes functions)."""
    alpha = _column(alpha, rows.count)
    sizes = np.asarray(sizes, dtype=np.int64).reshape(rows.count, rows.groups)
    return _power_rows_at(rows, np.arange(rows.count), sizes, alpha)


def _target_errors(target: np.ndarray, alpha: np.ndarray) -> RowErrors:
    errors: RowErrors = [None] * target.size
    for i in np.flatnonzero(~(target > alpha)).tolist():
        errors[i] = InvalidParameter("target_power", float(target[i]), f"must exceed alpha ({float(alpha[i])})")
    return errors


def _chi_square_noncentrality(df1, alpha, target, fallback: np.ndarray) -> np.ndarray:
    """λ∞ with P(χ²'(df1, λ∞) > χ²_α(df1)) = target: the F test's need at infinite error df.

    Finite error df need a larger λ, so λ∞ is a good lower start for the exact searches.
    scipy's inverse is used only as a guess (the searches stay exact); where it fails the
    fallback is kept. The inverse is an iterative solve of its own (about 3 µs a row), and
    rows repeat (df1, α, target) in a sweep: each distinct triple is solved once, which
    gives every row the same value.
    """
    df1, alpha, target = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (df1, alpha, target)))
    distinct = inverse = None
    if df1.ndim == 1 and df1.size >= 16:
        # rows told apart by their bytes (so 0.0 and -0.0, or two NaNs, are never merged)
        rows = np.ascontiguousarray(np.stack([df1, alpha, target], axis=1))
        keys, first, inverse = np.unique(rows.view(np.dtype((np.void, 24))).ravel(), return_index=True,
                                         return_inverse=True)
        if keys.size * 2 <= df1.size:
            distinct = rows[first]
            df1, alpha, target = distinct[:, 0], distinct[:, 1], distinct[:, 2]
    with np.errstate(all="ignore"):
        crit = special.chdtri(df1, alpha)
        lam = special.chndtrinc(crit, df1, 1.0 - target)
    if distinct is not None:
        lam = lam[inverse.reshape(-1)]
    return np.where(np.isfinite(lam) & (lam > 0), lam, fallback)


#: The sample-size search starts at floor(x + this), x the size that would do at infinite
#: error df (see _size_guess): x rounded, plus one unit for the finite error df.
_GUESS_OFFSET = 1.5
#: Smallest-group size at which λ per unit is measured for an unequal allocation.
_GUESS_REFERENCE = 64


def _size_guess(rows: Rows, lower: np.ndarray, alpha: np.ndarray, target: np.ndarray) -> np.ndarray | None:
    """A starting size at or next to the answer, for rows tested by the default F test.

    With infinite error df the F test becomes the χ² test of λ, whose required λ∞
    solves P(χ²'(df1, λ) > χ²_α(df1)) = target. λ grows about in proportion to the
    total size m·Σr, so x = λ∞ / (λ per unit of m) is the size that would do at infinite
    error df; λ per unit is λ(m₀) · Σr / N(m₀), with m₀ = ``lower`` for an equal
    allocation (where λ is proportional to m) and m₀ = 64 otherwise (at the smallest
    unit the rounding up of m·r_i distorts the weights: ratios 1, 1.5, 2 give 5 units at
    m = 1, not 4.5). Finite error df need a larger λ, about one unit more in most
    designs, so the search starts at floor(x + 1.5); from the answer or one below it, it
    needs two evaluations. Measured over 1,500 seeded questions each (the search's
    evaluations per question): one-way designs with α 0.01–0.1 and target 0.8–0.95, 2.1
    (4.4 from floor(λ∞ · lower / λ(lower))); one-way, factorial, repeated-measures and
    Welch designs with α 0.001–0.1 and target 0.5–0.99, 2.4 (4.4). Only a guess: the search
    stays exact whatever it is, and rows without a sensible one start at ``lower``.
    """
    if not rows.vectorised or not getattr(rows, "_default_evaluate", False):
        return None
    equal = np.all(rows.ratios == 1.0, axis=1)
    at = np.where(equal, lower, _GUESS_REFERENCE)
    sizes = sizes_from_rows(at, rows.ratios)
    test = rows.tests(sizes)
    units = sizes.sum(axis=1) / rows.ratios.sum(axis=1)  # N(m₀) / Σr: m₀ where nothing rounds
    per_unit = np.asarray(test.noncentrality, dtype=float) / units
    lam_inf = _chi_square_noncentrality(test.df1, alpha, target, np.full(lower.shape, np.nan))
    with np.errstate(all="ignore"):
        guess = np.floor(lam_inf / per_unit + _GUESS_OFFSET)
    guess = np.where(np.isfinite(guess) & (guess > lower), guess, lower)
    return np.minimum(guess, 2**62).astype(np.int64)


def _size_guess_one(rows: Rows, lower: int, alpha: float, target: float) -> int | None:
    """``_size_guess`` for a Rows of one, on scalars (its numpy calls cost more than the search steps they save).

    The same operations on the same float64 values: the sums over the row are numpy's
    (``Rows.test_of_one`` and ``Rows._one_ratios`` say how their Python forms keep its
    order of addition; the sum of integer sizes is exact either way), the special
    functions are the same ufuncs on scalars, and division, addition and comparisons are
    IEEE operations in either form. NumPy's floor keeps infinities and NaN, which the
    array form then replaces by ``lower``; so does this, before flooring the finite
    value exactly with math.floor. Wherever numpy's result would not be finite and
    positive the array form's fallback (``lower``) is returned directly. The test at m₀
    comes from ``Rows.test_of_one``: at the unit it is the one the unit search made.
    """
    if not rows.vectorised or not getattr(rows, "_default_evaluate", False):
        return None
    ratios, ratio_total, _ = rows._one_ratios()
    at = lower if all(r == 1.0 for r in ratios) else _GUESS_REFERENCE
    sizes, (df1, _, lam) = rows.test_of_one(at)
    units = sum(sizes) / ratio_total  # ints: the exact total, then one division
    per_unit = lam / units
    if not per_unit > 0:  # λ∞ / 0 or NaN: not finite
        return lower
    with np.errstate(all="ignore"):  # as in _chi_square_noncentrality
        lam_inf = float(special.chndtrinc(special.chdtri(df1, alpha), df1, 1.0 - target))
    if not (math.isfinite(lam_inf) and lam_inf > 0):  # the array form's NaN fallback
        return lower
    x = lam_inf / per_unit + _GUESS_OFFSET
    if not math.isfinite(x):  # np.floor(±inf, NaN) is not finite: the array form keeps lower
        return lower
    guess = math.floor(x)  # the integer np.floor's double holds
    if not guess > lower:
        return lower
    return min(guess, 2**62)


def sample_size_rows(rows: Rows, *, alpha, target_power, dropout_rate=0.0,
                     cap: int = SIZE_CAP) -> tuple[SampleSizeRows, RowErrors]:
    """Smallest integer design with power ≥ the target, for every row.

    The search is over m, the smallest group's size, with n_i = ceil(m · r_i / min r)
    (``sizes_from_rows``); power is non-decreasing in m because λ grows and the critical
    value falls as N grows. Rows sharing a cap on m search in lockstep
    (``solve.smallest_integer_reaching``); only the rows whose probe moved are evaluated
    again. Enrolment with dropout rate d is ceil(n_i / (1 − d)) per group (not n_i(1 + d),
    which under-enrols).

    A row has a NoSolution error when the smallest group would need more than ``cap``
    units divided by its largest ratio (so no group exceeds ``cap``), or its effect is zero.
    """
    count = rows.count
    alpha = _column(alpha, count)
    target = _column(target_power, count)
    dropout = _column(dropout_rate, count)
    errors = _target_errors(target, alpha)
    lower = rows.smallest_unit()
    m_cap = np.array([int(cap // r) for r in rows.ratios.max(axis=1).tolist()], dtype=np.int64)
    for i in range(count):
        if errors[i] is None and m_cap[i] < lower[i]:
            errors[i] = NoSolution(
                "design.allocation", list(rows.designs[i].ratios),
                "the allocation leaves no feasible size under the cap",
            )

    index = np.array([i for i in range(count) if errors[i] is None], dtype=np.int64)
    if index.size:
        part = rows if index.size == count else rows.take(index)
        lam_cap = part.noncentrality(sizes_from_rows(m_cap[index], part.ratios), alpha[index])
        for j in np.flatnonzero(~(lam_cap > 0)).tolist():
            errors[int(index[j])] = NoSolution(
                "design", "zero effect",
                "the effect is zero, so the power equals alpha at every size; no sample size reaches the target",
            )

    m = np.zeros(count, dtype=np.int64)
    index = np.array([i for i in range(count) if errors[i] is None], dtype=np.int64)
    for cap_m in np.unique(m_cap[index]).tolist() if index.size else []:
        sel = index[m_cap[index] == cap_m]
        part = rows if sel.size == count else rows.take(sel)
        part_alpha = alpha[sel]
        seen_m = np.full(sel.size, -1, dtype=np.int64)
        seen_power = np.zeros(sel.size)

        def power_at(probe: np.ndarray, part=part, part_alpha=part_alpha, seen_m=seen_m,
                     seen_power=seen_power) -> np.ndarray:
            moved = np.flatnonzero(probe != seen_m)
            if moved.size:
                sub = part if moved.size == part.count else part.take(moved)
                ev = sub.evaluate(sizes_from_rows(probe[moved], sub.ratios), part_alpha[moved])
                seen_power[moved] = ev.power
                seen_m[moved] = probe[moved]
            return seen_power.copy()

        found_m, found = smallest_integer_reaching(
            power_at, target=target[sel], lower=lower[sel], cap=int(cap_m),
            start=_size_guess(part, lower[sel], part_alpha, target[sel]),
        )
        m[sel] = found_m
        short = np.flatnonzero(~found)
        if short.size:
            sub = part.take(short)
            at_cap = sub.evaluate(sizes_from_rows(np.full(short.size, cap_m), sub.ratios), part_alpha[short])
            for j, p in zip(short.tolist(), at_cap.power.tolist(), strict=True):
                i = int(sel[j])
                errors[i] = NoSolution(
                    "target_power", float(target[i]),
                    f"required size exceeds the cap of {cap} units per group "
                    f"(power at the cap is {p:.6g}); the effect is too small to detect",
                )

    index = np.array([i for i in range(count) if errors[i] is None], dtype=np.int64)
    answer = _power_rows_at(rows, index, sizes_from_rows(np.maximum(m, 1), rows.ratios), alpha)
    has_smaller = np.zeros(count, dtype=bool)
    has_smaller[index] = m[index] > lower[index]
    smaller_index = np.flatnonzero(has_smaller)
    previous = _power_rows_at(rows, smaller_index, sizes_from_rows(np.maximum(m - 1, 1), rows.ratios), alpha)
    raw = answer.sizes.astype(float) / (1.0 - dropout).reshape(-1, 1)
    enrolment = np.ceil(raw * (1 - _DROPOUT_SLACK)).astype(np.int64)
    return SampleSizeRows(
        target_power=target, answer=answer, one_step_smaller=previous, has_smaller=has_smaller,
        smallest_group=m, dropout_rate=dropout, enrolment=enrolment,
    ), errors


def detectable_rows(rows: Rows, *, sizes: np.ndarray, alpha, target_power) -> tuple[DetectableRows, RowErrors]:
    """Smallest noncentrality detectable at the target power with each row's sizes.

    Solved by bracketing and regula falsi on each design's exact power
    (``Rows.power_at_noncentrality``; ``solve.noncentrality_for_power``), relative accuracy
    1e-13, all rows in lockstep; never by scipy's inverse-noncentrality helper, which
    clamps silently at 10,000 and errs by percents.
    """
    count = rows.count
    alpha = _column(alpha, count)
    target = _column(target_power, count)
    sizes = np.asarray(sizes, dtype=np.int64).reshape(count, rows.groups)
    errors = _target_errors(target, alpha)
    index = np.array([i for i in range(count) if errors[i] is None], dtype=np.int64)
    lam = np.zeros(count)
    check_power = np.zeros(count)
    df1 = np.zeros(count)
    df2 = np.zeros(count)
    crit = np.zeros(count)
    check_sizes = np.zeros((count, rows.groups), dtype=np.int64)
    if index.size:
        part = rows if index.size == count else rows.take(index)
        part_sizes, part_alpha = sizes[index], alpha[index]
        ev = part.evaluate(part_sizes, part_alpha)

        def power_of(values: np.ndarray, mask: np.ndarray) -> np.ndarray:
            return part.power_at_noncentrality(values, part_sizes, part_alpha, ev, mask)

        start = np.maximum(1.0, np.asarray(ev.df1, dtype=float))
        step = None
        if getattr(part, "_default_evaluate", False):
            # λ∞ sits below the root (finite error df need more λ), by a gap that shrinks
            # like 1/df2: (λ/λ∞ − 1)·df2 lay between 2 and 17 for k = 2..10 groups of 4 to
            # 200, power 0.8 to 0.95 and α 0.001 to 0.05 (measured). So the first probe is
            # λ∞(1 + 1/df2), still below, and a step of 6λ∞/df2 brackets most roots at once.
            # (Only speed depends on this: a first probe above the root is bracketed from 0.)
            lam_inf = _chi_square_noncentrality(ev.df1, part_alpha, target[index], start)
            per_df = lam_inf / np.maximum(np.asarray(ev.df2, dtype=float), 1.0)
            start, step = lam_inf + per_df, 6.0 * per_df
        found_lam, found = noncentrality_for_power(power_of, target=target[index], start=start, step=step)
        for j in np.flatnonzero(~found).tolist():
            i = int(index[j])
            errors[i] = NoSolution(
                "target_power", float(target[i]),
                f"the detectable noncentrality exceeds {MAX_NONCENTRALITY:g}; "
                "add error degrees of freedom or lower the target",
            )
        lam[index] = found_lam
        check_power[index] = power_of(found_lam, found)
        df1[index], df2[index], crit[index] = ev.df1, ev.df2, ev.critical_value
        check_sizes[index] = part_sizes
    check = PowerRows(
        alpha=alpha, power=check_power, df_numerator=df1, df_denominator=df2,
        noncentrality=lam, critical_value=crit, sizes=check_sizes,
    )
    return DetectableRows(target_power=target, noncentrality=lam, check=check), errors


# -- one question at a time ---------------------------------------------------------------------
#
# Each function below is its row form run for one row: the same checks in the same order,
# raising the error the row form would put in its one entry, and every reported number
# taken from the Rows one-row methods, which equal its array calls on one-row arrays. Only
# the bookkeeping differs (Python ints and floats instead of index arrays, masks and
# scatters), which for one row costs more than the evaluations.


#: The last design asked about alone and its Rows of one: a request asks for the sizes
#: and then the power of the same design object, and building the Rows (and finding its
#: smallest unit) twice cost as much as the evaluation. Held strongly, so the identity
#: check cannot match a new object at a recycled address; designs are immutable values.
_LAST_ONE: tuple[object, Rows] | None = None


def _rows_of(design) -> Rows:
    """``Rows([design])``, reused when the same design object is asked about again."""
    global _LAST_ONE
    last = _LAST_ONE  # one read: another thread may replace it meanwhile
    if last is not None and last[0] is design:
        return last[1]
    rows = Rows([design])
    _LAST_ONE = (design, rows)
    return rows


def _raise_first(errors: RowErrors) -> None:
    if errors[0] is not None:
        raise errors[0]


def _one(value, dtype=float):
    """The one entry ``_column(value, 1, dtype)`` would hold, as a Python number."""
    if dtype is float and type(value) is float:
        return value  # np.asarray(x, dtype=float) holds x itself
    arr = np.asarray(value, dtype=dtype)
    if arr.shape not in ((), (1,)):
        arr = _column(value, 1, dtype)  # raises as the row form does
    return arr.reshape(-1)[0].item()


def _result(alpha: float, ev: tuple, sizes_row: tuple[int, ...]) -> PowerResult:
    """What ``PowerRows.result`` gives for a row whose ``Rows.evaluate_one`` is ``ev``."""
    power, df1, df2, lam, crit = ev
    return PowerResult(
        alpha=alpha, power=power, df_numerator=df1, df_denominator=df2, noncentrality=lam,
        critical_value=crit, group_sizes=sizes_row,
    )


def check_sizes(design, sizes) -> np.ndarray:
    """Validate explicit group sizes against the design (count, ≥ 1, error df ≥ 1).

    ``check_sizes_rows`` for one row.
    """
    rows = _rows_of(design)
    k = rows.groups
    arr = np.asarray(sizes, dtype=np.int64)
    if arr.shape != (k,):
        raise InvalidParameter("group_sizes", list(sizes), f"needs one size per group ({k})")
    if np.any(arr < 1) or np.any(arr > SIZE_CAP):
        raise InvalidParameter("group_sizes", list(sizes), f"every size must be between 1 and {SIZE_CAP}")
    out = np.array(arr, dtype=np.int64).reshape(1, k)  # a fresh array, never the caller's
    if np.asarray(rows.error_df(out)).reshape(-1)[0] < 1:
        raise InvalidParameter(
            "group_sizes", list(sizes),
            "leaves no error degrees of freedom (total must exceed the number of groups)",
        )
    return out[0]


def sizes_for(design, n_per_group: int) -> np.ndarray:
    """Sizes from ``n_per_group`` (the smallest group's size under an allocation).

    ``sizes_for_rows`` for one row.
    """
    rows = _rows_of(design)
    n = n_per_group if type(n_per_group) is int and 0 <= n_per_group < 2**63 else _one([n_per_group], np.int64)
    ceiling = rows.unit_ceiling
    if ceiling is None or n < ceiling:  # otherwise n cannot fall below the unit
        unit = int(rows.smallest_unit()[0])
        if n < unit:
            raise InvalidParameter(
                "n_per_group", n, f"must be at least {unit} so that error degrees of freedom remain",
            )
    sizes = sizes_from_rows(max(n, 1), rows.ratios)
    if max(sizes[0].tolist()) > SIZE_CAP:  # integers: as sizes.max(), without the reduction's dispatch
        raise InvalidParameter("n_per_group", n, f"no group may exceed {SIZE_CAP} units")
    return sizes[0]


def power(design, *, sizes, alpha: float) -> PowerResult:
    """Power of the level-α test of ``design`` at ``sizes`` (validated with check_sizes).

    ``power_rows`` for one row.
    """
    rows = _rows_of(design)
    sizes = tuple(np.array(sizes, dtype=np.int64, order="C").reshape(1, rows.groups)[0].tolist())
    a = _one(alpha)
    return _result(a, rows.evaluate_one(sizes, a), sizes)


def sample_size(design, *, alpha: float, target_power: float, dropout_rate: float = 0.0,
                cap: int = SIZE_CAP) -> SampleSizeResult:
    """Smallest integer design with power ≥ ``target_power`` (see ``sample_size_rows``).

    Raises InvalidParameter when the target does not exceed α and NoSolution when no
    size under ``cap`` reaches it. ``sample_size_rows`` for one row: the same checks, the
    same start and probes of the integer search (``smallest_integer_reaching_one``), and
    the answer and the step below it are the search's own evaluations at those sizes
    (the row form evaluates them again, with the array calls ``Rows.evaluate_of_one``
    equals).
    """
    rows = _rows_of(design)
    a, target, dropout = _one(alpha), _one(target_power), _one(dropout_rate)
    lower = int(rows.smallest_unit()[0])  # before the target check, as in the row form
    m_cap = int(cap // rows._one_ratios()[2])
    if not target > a:
        raise InvalidParameter("target_power", target, f"must exceed alpha ({a})")
    if m_cap < lower:
        raise NoSolution(
            "design.allocation", list(rows.designs[0].ratios),
            "the allocation leaves no feasible size under the cap",
        )
    if not rows.noncentrality_of_one(m_cap, a) > 0:
        raise NoSolution(
            "design", "zero effect",
            "the effect is zero, so the power equals alpha at every size; no sample size reaches the target",
        )

    seen: dict[int, tuple] = {}  # m → (sizes, evaluation); evaluate is a function of (sizes, α)

    def evaluation(m: int) -> tuple:
        got = seen.get(m)
        if got is None:
            got = seen[m] = rows.evaluate_of_one(m, a)
        return got

    def power_at(m: int) -> float:
        return evaluation(m)[1][0]

    start = _size_guess_one(rows, lower, a, target)
    m, found = smallest_integer_reaching_one(power_at, target=target, lower=lower, cap=m_cap, start=start)
    if not found:
        raise NoSolution(
            "target_power", target,
            f"required size exceeds the cap of {cap} units per group "
            f"(power at the cap is {power_at(m_cap):.6g}); the effect is too small to detect",
        )
    # The search probed m and, when m > lower, m − 1 (the bisection ends with them as its
    # bracket), so both are usually evaluations already made.
    sizes, ev = evaluation(m)
    enrolment = None
    if dropout > 0:
        # The row form's ceil(n / (1 − d) · (1 − slack)) in Python floats: the same IEEE
        # division, product and ceiling on the same doubles.
        kept = 1.0 - dropout
        if kept > 0:
            enrolment = tuple(math.ceil(n / kept * _KEEP) for n in sizes)
        else:  # a rate of 1 or more (the schemas refuse it): the row form's numpy, warnings and all
            raw = np.array([sizes], dtype=float) / (1.0 - np.array([dropout])).reshape(-1, 1)
            enrolment = tuple(np.ceil(raw * (1 - _DROPOUT_SLACK)).astype(np.int64)[0].tolist())
    return SampleSizeResult(
        target_power=target,
        answer=_result(a, ev, sizes),
        one_step_smaller=_result(a, evaluation(m - 1)[1], evaluation(m - 1)[0]) if m > lower else None,
        smallest_group=m,
        dropout_rate=dropout,
        enrolment_sizes=enrolment,
    )


def detectable_effect(design, *, sizes, alpha: float, target_power: float) -> DetectableResult:
    """Smallest noncentrality detectable at ``target_power`` with ``sizes`` (see ``detectable_rows``)."""
    sizes = np.asarray(sizes, dtype=np.int64).reshape(1, -1)
    found, errors = detectable_rows(_rows_of(design), sizes=sizes, alpha=alpha, target_power=target_power)
    _raise_first(errors)
    return found.result(0)
