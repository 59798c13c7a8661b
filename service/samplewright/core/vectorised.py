"""Rows of designs evaluated together: the array form every planning answer goes through.

A ``Rows`` holds designs of one class with one number of independently sized groups k,
row i with its own parameters; its methods take arrays with one entry (or one row of k
sizes) per design and answer every row with array numpy/scipy calls. ``planning`` asks
its three questions of ``Rows``, and a single question is a ``Rows`` of one, so an answer
given alone and the same question inside a batch of ten thousand come from the same code,
element by element.

How the rows are evaluated depends on what the design class offers (checked once per
``Rows``):

* a *stackable* class (registered with ``stackable``, or with ``row_stackable = True``)
  is a dataclass whose ``test_at``/``evaluate`` broadcast over parameters carrying a
  leading row axis: float fields become arrays of shape (rows,), array fields arrays of
  shape (rows, …), and one call answers every row;
* any other ``FTestDesign`` with the default ``evaluate`` has its ``test_at`` called once
  per distinct design (for all the rows that share it), and the F power of every row then
  comes from one vectorised call;
* a class with its own exact power function has its ``evaluate`` called once per distinct
  (design, α), for all the rows that share them.

Rows are independent: no value of one row depends on another, which is what lets the
lockstep searches of ``solve.py`` answer many questions as if each were asked alone.

A ``Rows`` of one (a single request) is built without the stacking loops: its stack holds
the design's values with a leading axis of one, the arrays ``np.stack`` would make from a
list of one, so it is evaluated by the same operations on the same values as a row of a
large stack. It remembers its smallest unit and its tests per size, since the planning
functions for one design ask for them more than once.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np

from .designs.base import _RATIO_SLACK, Evaluation, FTest, FTestDesign
from .designs.one_way import OneWayAnova
from .distributions import f_critical_value, f_power_one, f_test_power

_STACKABLE: set[type] = set()
_EVALUATION_FIELDS = ("power", "df1", "df2", "noncentrality", "critical_value")


#: class → its field names if it is stackable, else None (emptied when a class registers).
_SIGNATURE_FIELDS: dict[type, tuple[str, ...] | None] = {}
_UNKNOWN = object()


def stackable(cls: type) -> type:
    """Register a dataclass design whose test_at and evaluate broadcast over stacked parameters.

    The promise: for designs d_1..d_n of the class with equal non-float fields, the object
    whose float fields are the arrays [d_1.x, …, d_n.x] (and array fields stacked along a
    new first axis) evaluates row i of a sizes array exactly as d_i would.
    """
    _STACKABLE.add(cls)
    _SIGNATURE_FIELDS.clear()
    return cls


# The one-way layout's λ = Σ n_i(μ_i − μ̄_w)²/σ² and λ = N f² broadcast over stacked
# means (rows, k), sd (rows,) and f (rows,); its evaluate is FTestDesign's.
stackable(OneWayAnova)


def _is_stackable(cls: type) -> bool:
    return dataclasses.is_dataclass(cls) and (cls in _STACKABLE or getattr(cls, "row_stackable", False) is True)


_FIELD_NAMES: dict[type, tuple[str, ...]] = {}
#: Field values that are part of a stack's signature rather than stacked.
_PLAIN = (bool, int, str)


def stack_signature(design) -> tuple | None:
    """What must be equal for two designs to share a stack (None: never stacked).

    None-valued fields, array shapes, and every non-float value (counts, labels) are part
    of the signature; float values and array contents are what the stack carries per row.
    """
    cls = type(design)
    names = _SIGNATURE_FIELDS.get(cls, _UNKNOWN)
    if names is _UNKNOWN:  # worked out once per class (a batch asks for every design)
        names = _SIGNATURE_FIELDS[cls] = _field_names(cls) if _is_stackable(cls) else None
    if names is None:
        return None
    parts = []
    for name in names:
        value = getattr(design, name)
        if value is None:
            parts.append((name, None))
        elif isinstance(value, float):
            parts.append((name, "float"))
        elif isinstance(value, np.ndarray):
            parts.append((name, "array", value.shape, value.dtype.kind))
        elif isinstance(value, _PLAIN):
            parts.append((name, "value", value))
        else:
            return None
    return tuple(parts)


def _field_names(cls: type) -> tuple[str, ...]:
    names = _FIELD_NAMES.get(cls)
    if names is None:
        names = _FIELD_NAMES[cls] = tuple(f.name for f in dataclasses.fields(cls))
    return names


def _stack_one(cls: type, design):
    """``_build_stack`` for the list ``[design]``, without building its signature.

    The fields are classified as ``stack_signature`` classifies them (None, array, float,
    plain value; anything else: not stacked). A float field becomes a one-element float
    array and an array field a fresh contiguous array with a leading axis of one, exactly
    what ``np.array([x])`` and ``np.stack([a])`` make, so a design asked about alone is
    evaluated by the same array operations on the same values as inside a stack of many.
    """
    if not _is_stackable(cls):
        return None, ()
    values = {}
    names = []
    for name in _field_names(cls):
        value = getattr(design, name)
        if value is None:
            pass
        elif isinstance(value, np.ndarray):
            value = value[np.newaxis].copy()
            names.append(name)
        elif isinstance(value, float):
            value = np.array([value], dtype=float)
            names.append(name)
        elif not isinstance(value, _PLAIN):
            return None, ()
        values[name] = value
    obj = object.__new__(cls)
    obj.__dict__.update(values)  # as object.__setattr__ field by field (frozen dataclass), at once
    return obj, tuple(names)


#: Per design class: which of FTestDesign's defaults it keeps (see ``_traits``).
_TRAITS: dict[type, tuple[bool, bool, bool, bool]] = {}


def _traits(cls: type) -> tuple[bool, bool, bool, bool]:
    """(has test_at, default evaluate, default power_at_noncentrality, default smallest_unit).

    A property of the class alone, so it is worked out once per class rather than once per
    ``Rows`` (a single request builds one or two).
    """
    found = _TRAITS.get(cls)
    if found is None:
        has_test_at = issubclass(cls, FTestDesign) and cls.test_at is not FTestDesign.test_at
        default_evaluate = has_test_at and cls.evaluate is FTestDesign.evaluate
        found = _TRAITS[cls] = (
            has_test_at,
            default_evaluate,
            default_evaluate and cls.power_at_noncentrality is FTestDesign.power_at_noncentrality,
            has_test_at and cls.smallest_unit is FTestDesign.smallest_unit,
        )
    return found


def rows_key(design) -> tuple:
    """Designs with equal keys can be answered as one ``Rows``."""
    signature = stack_signature(design)
    return (type(design), int(design.groups), signature if signature is not None else "each")


_SHRINK = 1 - _RATIO_SLACK  # the factor sizes_from_rows applies, as one constant


def sizes_from_rows(m, ratios: np.ndarray) -> np.ndarray:
    """Group sizes n_ij = ceil(m_i · r_ij) for one smallest-group size m_i per row.

    The row form of ``designs.base.sizes_from_smallest`` (the same operations in the same
    order, so the same integers): ``ratios`` has shape (rows, k), divided by each row's
    minimum.
    """
    if type(m) is int and 0 <= m < 2**53 and ratios.shape[0] == 1:
        return np.array([_sizes_of_row(m, ratios[0].tolist())], dtype=np.int64)
    m = np.asarray(m, dtype=np.int64).reshape(-1, 1)
    return np.ceil(m * ratios * (1 - _RATIO_SLACK)).astype(np.int64)


def _sizes_of_row(m: int, ratios: list[float]) -> list[int]:
    """One row of ``sizes_from_rows`` for a plain int 0 ≤ m < 2**53, in Python numbers.

    m converts to a double exactly, as in the int64 column of the array form, and the two
    products and the ceiling are the same IEEE operations, at a fraction of numpy's dispatch.
    """
    return [math.ceil(m * r * _SHRINK) for r in ratios]


def _first(value) -> float:
    """Entry 0 of an evaluation or test field, as a float scatter of the row forms holds it."""
    if type(value) is np.ndarray and value.dtype is _FLOAT64 and value.ndim == 1:
        return value.item(0)  # the usual case, without the conversions
    return float(np.asarray(value, dtype=float).reshape(-1)[0])


_FLOAT64 = np.dtype(np.float64)


class _Tests:
    """Stands in for a design whose test statistics are already known (see Rows.evaluate)."""

    def __init__(self, test: FTest) -> None:
        self._test = test

    def test_at(self, sizes):
        return self._test


#: Fewest rows for which the distinct (α, df1, df2) of an F test are looked for first.
_DISTINCT_FROM = 1024


def _distinct_rows(*columns: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """(first row of each distinct tuple, each row's tuple number), or None when most are distinct."""
    count = columns[0].size
    order = np.lexsort(columns[::-1])
    change = np.zeros(count, dtype=bool)
    change[0] = True
    for column in columns:
        ordered = column[order]
        change[1:] |= ordered[1:] != ordered[:-1]
    firsts = order[change]
    if firsts.size > count // 2:
        return None
    inverse = np.empty(count, dtype=np.intp)
    inverse[order] = np.cumsum(change) - 1
    return firsts, inverse


def _distinct_critical_values(alpha, df1, df2) -> np.ndarray | None:
    """Critical values of 1-d rows, each distinct (α, df1, df2) computed once (None: not worth it)."""
    a, d1, d2 = (np.asarray(v, dtype=float) for v in (alpha, df1, df2))
    if not (a.ndim == d1.ndim == d2.ndim == 1 and a.size == d1.size == d2.size):
        return None
    if not (np.isfinite(a).all() and np.isfinite(d1).all() and np.isfinite(d2).all()):
        return None
    found = _distinct_rows(a, d1, d2)
    if found is None:
        return None
    firsts, inverse = found
    return np.atleast_1d(f_critical_value(a[firsts], d1[firsts], d2[firsts]))[inverse]


def _f_evaluate(test: FTest, alpha: np.ndarray) -> Evaluation:
    """``FTestDesign.evaluate`` for tests already known, each critical value computed once.

    The critical value depends on (α, df1, df2) only, and a sweep repeats a few of them
    over many rows: each distinct one is computed once and copied to its rows. The
    computation is elementwise, so every row gets the value it would get alone.
    """
    df1, df2, lam = test.df1, test.df2, test.noncentrality
    crit = None
    if np.size(alpha) >= _DISTINCT_FROM:  # a sweep (one request's rows skip the conversions)
        crit = _distinct_critical_values(alpha, df1, df2)
    if crit is None:
        crit = np.atleast_1d(f_critical_value(alpha, df1, df2))
    power = np.atleast_1d(f_test_power(alpha, df1, df2, lam, critical=crit))
    return Evaluation(power, df1, df2, lam, crit)


def _concat(parts: list[np.ndarray], order: np.ndarray | None) -> np.ndarray:
    out = np.concatenate([np.atleast_1d(np.asarray(p)) for p in parts])
    if order is None:
        return out
    back = np.empty_like(out)
    back[order] = out
    return back


class _ColumnDesigns(Sequence):
    """The designs of a Rows built by ``Rows.from_columns``, each made only when asked for.

    Row i is the design whose stacked fields hold row i's values (floats as Python floats,
    array fields as row i of their array); a design once made is kept, so asking twice
    gives the same object (the engine groups rows by design identity).
    """

    def __init__(self, stacked, names: tuple[str, ...], count: int) -> None:
        self.stacked = stacked
        self.names = names
        self.count = count
        self._made: dict[int, object] = {}

    def __len__(self) -> int:
        return self.count

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(self.count))]
        i = int(i)
        if i < 0:
            i += self.count
        if not 0 <= i < self.count:
            raise IndexError(i)
        made = self._made.get(i)
        if made is None:
            made = object.__new__(type(self.stacked))
            made.__dict__.update(self.stacked.__dict__)
            for name in self.names:
                column = getattr(self.stacked, name)
                value = float(column[i]) if column.ndim == 1 else column[i].copy()
                object.__setattr__(made, name, value)
            self._made[i] = made
        return made

    def __iter__(self):
        return (self[i] for i in range(self.count))


class Rows:
    """Designs of one class and one group count, answered together (row i is design i)."""

    def __init__(self, designs: Sequence, *, _stack=None) -> None:
        if isinstance(designs, _ColumnDesigns):
            self.designs = designs
            first = designs.stacked
        else:
            self.designs = list(designs)
            if not self.designs:
                raise ValueError("Rows needs at least one design")
            first = self.designs[0]
        cls = type(first)
        self.cls = cls
        self.groups = int(first.groups)
        self.count = len(self.designs)
        if isinstance(designs, _ColumnDesigns):
            self.ratios = np.asarray(first.ratios, dtype=float).reshape(self.count, self.groups)
        elif self.count == 1:  # one request: skip the list comprehension (same array)
            self.ratios = np.array(first.ratios, dtype=float).reshape(1, self.groups)
        else:
            self.ratios = np.array([d.ratios for d in self.designs], dtype=float).reshape(self.count, self.groups)
        (self._has_test_at, self._default_evaluate, self._default_lam,
         self._default_unit) = _traits(cls)
        if _stack is not None:
            self._stacked, self._stacked_names = _stack
        else:
            self._stacked, self._stacked_names = self._build_stack()
        self._shared: list[tuple[object, np.ndarray]] | None = None
        self._unit: np.ndarray | None = None
        self._tests_of_one: dict[int, tuple] = {}  # see test_of_one
        self._one: tuple | None = None  # see _one_ratios

    # -- construction ----------------------------------------------------------------

    @classmethod
    def from_columns(cls_rows, cls: type, count: int, **values) -> Rows:
        """A Rows of ``count`` designs of the stackable dataclass ``cls``, given by columns.

        The fast path for large sweeps: no design object is built per row. Each float
        field is an array of shape (count,) or a float shared by every row; each array
        field (``ratios``, ``means``) an array of shape (count, …); every other field (the
        group count, labels) one value for all rows; a field left out takes its dataclass
        default. The result is the Rows that ``Rows([d_1, …, d_count])`` builds from the
        designs with row i's values, and evaluates every row identically; a design object
        is made only if something asks for ``rows.designs[i]``.
        """
        if not _is_stackable(cls):
            raise TypeError(f"{cls.__name__} is not a stackable design")
        if count < 1:
            raise ValueError("Rows needs at least one design")
        obj = object.__new__(cls)
        names = []
        for f in dataclasses.fields(cls):
            if f.name in values:
                value = values.pop(f.name)
            elif f.default is not dataclasses.MISSING:
                value = f.default
            else:
                raise TypeError(f"{cls.__name__}.{f.name} is required")
            if isinstance(value, np.ndarray):
                if value.ndim == 0 or value.shape[0] != count:
                    raise ValueError(f"{f.name} needs a leading axis of {count} rows (got shape {value.shape})")
                value = np.ascontiguousarray(value, dtype=float)
                names.append(f.name)
            elif isinstance(value, float):
                value = np.full(count, value)
                names.append(f.name)
            object.__setattr__(obj, f.name, value)
        if values:
            raise TypeError(f"{cls.__name__} has no field(s) {', '.join(sorted(values))}")
        return cls_rows(_ColumnDesigns(obj, tuple(names), count), _stack=(obj, tuple(names)))

    def _build_stack(self):
        if self.count == 1:
            return _stack_one(self.cls, self.designs[0])
        signature = stack_signature(self.designs[0])
        if signature is None:
            return None, ()
        # Designs repeat when items share one: each distinct design is read once, and its
        # values copied to its rows (``inverse``), which gives the same arrays.
        where: dict[int, int] = {}
        distinct = []
        inverse = []
        for d in self.designs:
            j = where.get(id(d))
            if j is None:
                if distinct and stack_signature(d) != signature:
                    return None, ()
                j = where[id(d)] = len(distinct)
                distinct.append(d)
            inverse.append(j)
        spread = None if len(distinct) == self.count else np.array(inverse, dtype=np.intp)
        first = self.designs[0]
        obj = object.__new__(self.cls)
        names = []
        for part in signature:
            name, kind = part[0], part[1]
            if kind == "array":
                value = np.stack([getattr(d, name) for d in distinct])
            elif kind == "float":
                value = np.array([getattr(d, name) for d in distinct], dtype=float)
            else:
                object.__setattr__(obj, name, getattr(first, name))
                continue
            names.append(name)
            object.__setattr__(obj, name, value if spread is None else value[spread])
        return obj, tuple(names)

    def take(self, index) -> Rows:
        """The rows at ``index`` (an integer array), as a Rows of their own."""
        index = np.asarray(index, dtype=np.int64)
        stack = None
        if self._stacked is not None:
            obj = object.__new__(self.cls)
            obj.__dict__.update(self._stacked.__dict__)
            for name in self._stacked_names:
                object.__setattr__(obj, name, getattr(self._stacked, name)[index])
            stack = (obj, self._stacked_names)
        else:
            stack = (None, ())
        if isinstance(self.designs, _ColumnDesigns):
            return Rows(_ColumnDesigns(stack[0], stack[1], index.size), _stack=stack)
        return Rows([self.designs[i] for i in index.tolist()], _stack=stack)

    def _by_design(self) -> list[tuple[object, np.ndarray]]:
        """Distinct designs (by identity) with the rows that use them, in first-seen order."""
        if self._shared is None:
            seen: dict[int, tuple[object, list[int]]] = {}
            for i, d in enumerate(self.designs):
                entry = seen.get(id(d))
                if entry is None:
                    seen[id(d)] = (d, [i])
                else:
                    entry[1].append(i)
            self._shared = [(d, np.asarray(ix, dtype=np.int64)) for d, ix in seen.values()]
        return self._shared

    # -- what the planning engine asks ---------------------------------------------------

    @property
    def vectorised(self) -> bool:
        """True when one array call answers every row (stacked or F-test default)."""
        return self._stacked is not None or self._default_evaluate

    def tests(self, sizes: np.ndarray) -> FTest:
        """df1, df2 and λ of every row's F test (designs with a ``test_at``)."""
        if self._stacked is not None:
            return self._stacked.test_at(sizes)
        if self.count == 1:
            return self.designs[0].test_at(sizes)
        shared = self._by_design()
        if len(shared) == 1:
            return shared[0][0].test_at(sizes)
        parts = [(d.test_at(sizes[ix]), ix) for d, ix in shared]
        order = np.concatenate([ix for _, ix in parts])
        return FTest(
            df1=_concat([t.df1 for t, _ in parts], order),
            df2=_concat([t.df2 for t, _ in parts], order),
            noncentrality=_concat([t.noncentrality for t, _ in parts], order),
        )

    def evaluate(self, sizes: np.ndarray, alpha: np.ndarray) -> Evaluation:
        """Power of every row's test at its sizes (rows, k) and its α (rows,)."""
        alpha = np.asarray(alpha, dtype=float)
        if self._default_evaluate:
            return _f_evaluate(self.tests(sizes), alpha)
        if self._stacked is not None:
            return self._stacked.evaluate(sizes, alpha)
        if self.count == 1:
            # The one (design, α) group of the general path below, without its bookkeeping:
            # concatenating a single part in row order copies it unchanged.
            ev = self.designs[0].evaluate(sizes, alpha.tolist()[0])
            return Evaluation(*(np.atleast_1d(np.asarray(getattr(ev, f))).copy() for f in _EVALUATION_FIELDS))
        groups: dict[tuple[int, float], tuple[object, list[int]]] = {}
        alphas = alpha.tolist()
        for d, ix in self._by_design():
            for i in ix.tolist():
                key = (id(d), alphas[i])
                entry = groups.get(key)
                if entry is None:
                    groups[key] = (d, [i])
                else:
                    entry[1].append(i)
        parts = []
        for (_, a), (d, ix) in groups.items():
            ix = np.asarray(ix, dtype=np.int64)
            parts.append((d.evaluate(sizes[ix], a), ix))
        order = np.concatenate([ix for _, ix in parts])
        return Evaluation(*(_concat([getattr(e, f) for e, _ in parts], order) for f in _EVALUATION_FIELDS))

    def noncentrality(self, sizes: np.ndarray, alpha: np.ndarray) -> np.ndarray:
        """Each row's effect parameter at its sizes (λ for F tests), without the power."""
        if self._default_evaluate:
            return np.asarray(self.tests(sizes).noncentrality, dtype=float)
        return self.evaluate(sizes, alpha).noncentrality

    def error_df(self, sizes: np.ndarray) -> np.ndarray:
        """Each row's error degrees of freedom (df2) at its sizes."""
        if self._default_evaluate:
            return np.asarray(self.tests(sizes).df2, dtype=float)
        return self.evaluate(sizes, np.full(self.count, 0.05)).df2

    #: The default smallest unit (FTestDesign.smallest_unit) is one of 1, 2, 3 and 4.
    DEFAULT_UNIT_CEILING = 4

    @property
    def unit_ceiling(self) -> int | None:
        """An upper bound of every row's smallest unit known without computing it (or None).

        With the default ``smallest_unit`` the unit is at most 4, so a size of 4 or more
        passes the check against it whatever the unit is.
        """
        return self.DEFAULT_UNIT_CEILING if self._default_unit else None

    def smallest_unit(self) -> np.ndarray:
        """Each row's smallest size of the smallest group that leaves error df ≥ 1.

        Computed once per ``Rows`` (a fresh copy is returned each time).
        """
        if self._unit is None:
            self._unit = self._smallest_unit()
        return self._unit.copy()

    def _smallest_unit(self) -> np.ndarray:
        if self._default_unit:
            if self.count == 1:
                # One row: the same tests at m = 1, 2, 3 with plain-int bookkeeping (and
                # remembered: the sample-size guess starts from the test at the unit).
                for m in (1, 2, 3):  # FTestDesign.smallest_unit
                    if self.test_of_one(m)[1][1] >= 1:
                        return np.array([m], dtype=np.int64)
                return np.array([4], dtype=np.int64)
            out = np.full(self.count, 4, dtype=np.int64)
            undecided = np.ones(self.count, dtype=bool)
            for m in (1, 2, 3):  # FTestDesign.smallest_unit, row by row
                df2 = np.asarray(self.tests(sizes_from_rows(np.full(self.count, m), self.ratios)).df2)
                hit = undecided & (df2 >= 1)
                out[hit] = m
                undecided &= ~hit
                if not undecided.any():
                    break
            return out
        if self.count == 1:
            return np.array([self.designs[0].smallest_unit()], dtype=np.int64)
        units = {id(d): d.smallest_unit() for d, _ in self._by_design()}
        return np.array([units[id(d)] for d in self.designs], dtype=np.int64)

    # -- a Rows of one in Python numbers (the one-design planning functions) -----------
    #
    # Row 0 of the array methods above, as Python ints and floats: for one row numpy's
    # dispatch on one-element arrays costs more than the arithmetic. Each method says
    # which array form it equals; tests/core/test_one_design.py checks them bit for bit.

    def _one_ratios(self) -> tuple[list[float], float, float]:
        """Row 0's ratios as floats, with their numpy sum and maximum (worked out once)."""
        if self._one is None:
            ratios = self.ratios[0].tolist()
            if len(ratios) < 8 and all(r == r for r in ratios):
                # numpy adds fewer than 8 terms one after the other from 0.0 (pairwise
                # summation starts at 8); without NaN, max picks numpy's maximum.
                total = 0.0
                for r in ratios:
                    total += r
                top = max(ratios)
            else:
                total, top = float(self.ratios.sum(axis=1)[0]), float(self.ratios[0].max())
            self._one = (ratios, total, top)
        return self._one

    def sizes_of_one(self, m: int) -> tuple[int, ...]:
        """Row 0 of ``sizes_from_rows(m, ratios)`` for a plain int m, as a tuple of ints."""
        if type(m) is int and 0 <= m < 2**53:
            return tuple(_sizes_of_row(m, self._one_ratios()[0]))
        return tuple(sizes_from_rows(m, self.ratios)[0].tolist())

    def test_one(self, sizes: tuple[int, ...]) -> tuple[float, float, float]:
        """(df1, df2, λ) of row 0 of ``tests`` at one row of sizes, as Python floats.

        A stacked class may give ``test_at_one(sizes)``, promised equal to its ``test_at``
        on a stack of rows (it may decline with None); otherwise ``tests`` is called.
        """
        if self._stacked is not None:
            scalar = getattr(self.designs[0], "test_at_one", None)
            if scalar is not None:
                found = scalar(sizes)
                if found is not None:
                    return found
        test = self.tests(np.array([sizes], dtype=np.int64))
        return _first(test.df1), _first(test.df2), _first(test.noncentrality)

    def test_of_one(self, m: int) -> tuple[tuple[int, ...], tuple[float, float, float]]:
        """For a Rows of one: (sizes, (df1, df2, λ)) at smallest-group size ``m``, remembered.

        The unit search asks for the tests at m = 1, 2, …, the sample-size guess for the
        one at the unit again and the search for those it probes; a test is a function of
        the (immutable) design and m.
        """
        found = self._tests_of_one.get(m)
        if found is None:
            sizes = self.sizes_of_one(m)
            found = self._tests_of_one[m] = (sizes, self.test_one(sizes))
        return found

    def evaluate_one(self, sizes: tuple[int, ...], alpha: float) -> tuple[float, float, float, float, float]:
        """(power, df1, df2, λ, critical value): row 0 of ``evaluate`` for one row, as floats.

        For the default F evaluation, ``_f_evaluate`` of one row is ``f_critical_value``
        and ``f_test_power`` on one-element arrays, which ``f_power_one`` equals.
        """
        if self._default_evaluate:
            return self._f_one(self.test_one(sizes), alpha)
        ev = self.evaluate(np.array([sizes], dtype=np.int64), np.array([alpha]))
        return tuple(_first(getattr(ev, f)) for f in _EVALUATION_FIELDS)

    def evaluate_of_one(self, m: int, alpha: float) -> tuple[tuple[int, ...], tuple]:
        """(sizes, ``evaluate_one``) at smallest-group size ``m``, reusing a remembered test."""
        if self._default_evaluate:
            sizes, test = self.test_of_one(m)
            return sizes, self._f_one(test, alpha)
        sizes = self.sizes_of_one(m)
        return sizes, self.evaluate_one(sizes, alpha)

    def noncentrality_of_one(self, m: int, alpha: float) -> float:
        """Row 0 of ``noncentrality`` at smallest-group size ``m``."""
        if self._default_evaluate:
            return self.test_of_one(m)[1][2]
        return self.evaluate_of_one(m, alpha)[1][3]

    @staticmethod
    def _f_one(test: tuple[float, float, float], alpha: float) -> tuple[float, float, float, float, float]:
        df1, df2, lam = test
        power, crit = f_power_one(alpha, df1, df2, lam)
        return power, df1, df2, lam, crit

    def power_at_noncentrality(self, lam: np.ndarray, sizes: np.ndarray, alpha: np.ndarray,
                               evaluation: Evaluation, mask: np.ndarray) -> np.ndarray:
        """Power of the rows in ``mask`` at effect parameters ``lam`` (others are 0).

        ``evaluation`` is ``evaluate(sizes, alpha)``: for F tests its df and critical
        values are those the power at another λ needs.
        """
        out = np.zeros(self.count)
        idx = np.flatnonzero(mask)
        if idx.size == 0:
            return out
        if self._default_lam:
            out[idx] = f_test_power(
                alpha[idx], evaluation.df1[idx], evaluation.df2[idx], lam[idx],
                critical=evaluation.critical_value[idx],
            )
            return out
        alphas = alpha.tolist()
        for i in idx.tolist():
            d = self.designs[i]
            out[i] = np.atleast_1d(d.power_at_noncentrality(lam[i:i + 1], sizes[i], alphas[i]))[0]
        return out
