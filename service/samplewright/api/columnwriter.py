"""Many answers of one shape written as JSON text a column at a time.

A batch group's answers have the same members in the same order; only the values differ.
Encoding each answer's dict spends most of its time in Python's float repr (about 0.4 µs a
number, ten numbers an answer). Here a ``Sheet`` collects the group's members as columns,
writes every float of every column in one call of the array writer (``numbertext``; it
costs about 0.15 µs a number on thousands, but a fixed 100 µs or so a call, so one call for
all), the integers likewise, and fills each answer's template with its members' texts. The
text is what ``ANSWER_WRITER.encode`` writes for the dict of the same members in the same
order, character for character (tests/api/test_columnwriter.py compares them on seeded
values; tests/api/test_batch.py compares whole batch answers with single ones).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from .jsontext import ANSWER_WRITER
from .numbertext import number_texts

_encode = ANSWER_WRITER.encode
_string = ANSWER_WRITER.string


class Template:
    """The text of an object with the given members, its values to be filled in.

    A member is a name (its value filled in) or a (name, fixed JSON text) pair. ``closed``
    False leaves off the closing brace, for text to be appended after the members.
    ``string`` writes the names (the answers' ASCII writer unless given).
    """

    __slots__ = ("text", "width")

    def __init__(self, members: Sequence[str | tuple[str, str]], *, closed: bool = True,
                 string: Callable[[str], str] = _string) -> None:
        parts = []
        width = 0
        for member in members:
            if isinstance(member, tuple):
                name, fixed = member
                parts.append(string(name).replace("%", "%%") + ":" + fixed.replace("%", "%%"))
            else:
                parts.append(string(member).replace("%", "%%") + ":%s")
                width += 1
        self.text = "{" + ",".join(parts) + ("}" if closed else "")
        self.width = width


class _Numbers:
    """A column of numbers waiting for the sheet's one pass: rows [start, stop) of a pool."""

    __slots__ = ("pool", "start", "stop", "width")

    def __init__(self, pool: int, start: int, stop: int, width: int) -> None:
        self.pool, self.start, self.stop, self.width = pool, start, stop, width


class _Dicts:
    """A column of dicts: for each distinct key tuple, its rows and its members' columns."""

    __slots__ = ("count", "shapes")

    def __init__(self, count: int, shapes: list) -> None:
        self.count, self.shapes = count, shapes


class Sheet:
    """Columns of JSON texts for many answers; ``fill`` writes the answers.

    A column is given as ``floats`` (a float64 array), ``integers`` (an integer array; 2-D:
    each row a JSON array), ``values`` (any list: floats or integers go to the pools),
    or ``dicts`` (a list of dicts); a list of JSON texts is a column as it is. ``encode``
    writes the values that are not numbers and ``string`` the names of dicts' members (the
    answers' ASCII writer unless given).
    """

    def __init__(self, encode: Callable[[Any], str] = _encode, string: Callable[[str], str] = _string) -> None:
        self._encode, self._string = encode, string
        self._pools: tuple[list[np.ndarray], list[np.ndarray]] = ([], [])
        self._sizes = [0, 0]
        self._written: tuple[list[str], list[str]] | None = None

    def _add(self, pool: int, values: np.ndarray, width: int) -> _Numbers:
        if self._written is not None:
            raise RuntimeError("the sheet is written already")
        flat = values.reshape(-1)
        start = self._sizes[pool]
        self._pools[pool].append(flat)
        self._sizes[pool] = start + flat.size
        return _Numbers(pool, start, start + flat.size, width)

    def floats(self, values: np.ndarray) -> _Numbers:
        return self._add(0, np.asarray(values, dtype=np.float64), 0)

    def integers(self, values: np.ndarray):
        values = np.asarray(values)
        if values.dtype.kind not in "iu":
            raise TypeError(f"integers() takes an integer array (got {values.dtype})")
        if values.ndim == 2 and values.shape[1] == 0:
            return ["[]"] * values.shape[0]
        return self._add(1, values.astype(np.int64, copy=False), values.shape[1] if values.ndim == 2 else 0)

    def values(self, values: Sequence[Any]):
        if values:
            kinds = set(map(type, values))
            if kinds == {float}:
                return self.floats(np.array(values, dtype=np.float64))
            if kinds == {int} and all(-(2**62) < v < 2**62 for v in values):
                return self.integers(np.array(values, dtype=np.int64))
        return list(map(self._encode, values))

    def dicts(self, values: Sequence[dict]):
        count = len(values)
        groups: dict[tuple, list[int]] = {}
        for j, value in enumerate(values):
            groups.setdefault(tuple(value), []).append(j)
        shapes = []
        for keys, index in groups.items():
            rows = values if len(index) == count else [values[j] for j in index]
            if not all(type(key) is str for key in keys):  # the encoder converts or refuses such keys
                shapes.append((index, None, list(map(self._encode, rows))))
            else:
                shapes.append(self._shape(index, keys, [[row[key] for row in rows] for key in keys]))
        return _Dicts(count, shapes)

    def shapes(self, count: int, shapes: Sequence[tuple[np.ndarray, tuple[str, ...], Sequence]]):
        """A column of ``count`` dicts given by shapes: (row indices, member names, a column per
        member, its values for those rows), every row in exactly one shape."""
        seen = np.zeros(count, dtype=np.int64)
        out = []
        for index, names, columns in shapes:
            seen[index] += 1
            out.append(self._shape(np.asarray(index).tolist(), names, columns))
        if not (seen == 1).all():
            raise ValueError("shapes must cover every row exactly once")
        return _Dicts(count, out)

    def _shape(self, index: list[int], names: Sequence[str], columns: Sequence) -> tuple:
        """(rows, template, its columns) of dicts with these members; no members: "{}" each."""
        if not names:
            return index, None, ["{}"] * len(index)
        parts = [self.floats(c) if isinstance(c, np.ndarray) and c.dtype == np.float64 else self.values(list(c))
                 for c in columns]
        return index, Template(names, string=self._string), parts

    def _write(self) -> tuple[list[str], list[str]]:
        if self._written is None:
            floats, integers = self._pools
            self._written = (
                number_texts(np.concatenate(floats)) if floats else [],
                number_texts(np.concatenate(integers)) if integers else [],
            )
        return self._written

    def _resolve(self, column) -> Sequence[str]:
        if isinstance(column, _Numbers):
            texts = self._write()[column.pool][column.start:column.stop]
            width = column.width
            if not width:
                return texts
            join = ",".join
            return ["[" + join(texts[i:i + width]) + "]" for i in range(0, len(texts), width)]
        if isinstance(column, _Dicts):
            if len(column.shapes) == 1 and len(column.shapes[0][0]) == column.count:
                _, template, parts = column.shapes[0]
                return parts if template is None else self.fill(template, parts)
            out: list[str] = [""] * column.count
            for index, template, parts in column.shapes:
                texts = parts if template is None else self.fill(template, parts)
                for j, text in zip(index, texts, strict=True):
                    out[j] = text
            return out
        return column

    def fill(self, template: Template, columns: Sequence) -> list[str]:
        """The template filled with each row of ``columns`` (one column per filled member)."""
        if len(columns) != template.width or not columns:
            raise ValueError(f"{len(columns)} columns for a template of {template.width}")
        text = template.text
        return [text % row for row in zip(*map(self._resolve, columns), strict=True)]
