"""Numbers as JSON text, written by array operations: the text ``json.dumps`` writes, faster.

Python's float repr costs about 0.4 to 0.7 µs a number, as much as evaluating the noncentral
F tail; a table of 100,000 rows or a batch of 10,000 answers writes hundreds of thousands.
``numbers_text`` writes a whole float64 or integer array as the items of the compact JSON
array ``json.dumps(values.tolist())`` would write, byte for byte (tests/api/test_numbertext.py
compares them on seeded and edge values); ``number_texts`` gives each number's text alone.

Floats: Python writes the shortest decimal that reads back as the double (Steele & White
1990; Gay 1990). ``_shortest`` finds it with integer and error-free float arithmetic
(Dekker 1971) where that is provably exact, which covers 10^-3 <= x < 10^15; the few values
outside (0, negatives, tiny or huge ones, ties) are written by the encoder itself.
"""

from __future__ import annotations

import json

import numpy as np


def number_texts(values: np.ndarray) -> list[str]:
    """Each number's JSON text, as ``json.dumps(v)`` writes it (finite values only, ValueError else).

    Many floats (a batch group's columns one after another: α, degrees of freedom and
    critical values repeat, about a third are distinct) are sorted by bit pattern and each
    distinct value written once, which costs less than writing them all; ``numbers_text``
    looks only at a sample for repeats, and the sample is often one column of distinct
    values.
    """
    if values.size == 0:
        return []
    if values.dtype == np.float64 and values.size >= 256:
        distinct, inverse = np.unique(values.view(np.int64), return_inverse=True)
        if distinct.size * 4 <= values.size * 3:
            texts = np.array(numbers_text(distinct.view(np.float64), None).split(","), dtype=object)
            return texts[inverse.reshape(-1)].tolist()
    return numbers_text(values, None).split(",")


def numbers_text(values: np.ndarray, missing: np.ndarray | None, fill: list[str] | None = None) -> str:
    """The items of ``json.dumps(values.tolist())`` (compact), with ``fill`` (default null) where ``missing``.

    The same text, written by array operations (``_integers_text``, ``_float_words``). A sweep
    repeats values (a few α, the critical value of each distinct test): then each distinct
    value is written once and its text copied, which is the text the encoder writes for
    every copy (distinct by bit pattern, so -0.0 stays -0.0).
    """
    count = values.size
    if count == 0:
        return ""
    if missing is not None:
        values = np.where(missing, 0, values).astype(values.dtype)
    if fill is not None:  # bad entries of a request column, echoed as sent (rare): item by item
        items = numbers_text(values, None).split(",")
        for j, row in enumerate(np.flatnonzero(missing).tolist()):
            items[row] = fill[j]
        return ",".join(items)
    if values.dtype != np.float64:
        return _integers_text(values, missing)
    if count >= 64:  # a sample with repeats says to look for them all
        bits = values.view(np.int64)
        sample = min(count, 512)
        distinct = np.unique(bits[:sample])
        inverse = None
        if distinct.size <= 32:  # a few values (α levels): perhaps no others, found without sorting
            inverse = np.minimum(np.searchsorted(distinct, bits), distinct.size - 1)
            if not np.array_equal(distinct[inverse], bits):
                inverse = None
        if inverse is None and distinct.size * 10 < sample * 9:
            distinct, inverse = np.unique(bits, return_inverse=True)
        if inverse is not None and distinct.size * 2 <= count:
            texts = np.array(_joined(_float_words(distinct.view(np.float64), None)).split(","), dtype=object)
            out = texts[inverse.reshape(-1)]
            if missing is not None:
                out[missing] = "null"
            return ",".join(out.tolist())
    return _joined(_float_words(values, missing))


# -- writing numbers as JSON text by array operations ---------------------------------------------
#
# Each number becomes one row of 32-bit words, four ASCII characters each, where a NUL byte
# stands for no character; the rows' bytes, NULs deleted, are the text. Digits are looked up
# four at a time in tables of 0..9999 written out, in variants whose leading or trailing zeros
# are NUL, chosen per chunk by whether the digits before (after) it are all zero.


def _chunk_words(texts) -> np.ndarray:
    return np.frombuffer("".join(texts).encode("ascii"), dtype="<u4").copy()


def _blank_leading(text: str, keep_one: bool) -> str:
    body = text.lstrip("0") or ("0" if keep_one else "")
    return "\0" * (len(text) - len(body)) + body


def _blank_trailing(text: str, keep_one: bool) -> str:
    body = text.rstrip("0") or ("0" if keep_one else "")
    return body + "\0" * (len(text) - len(body))


_FOUR = [f"{v:04d}" for v in range(10_000)]
#: Indexed by chunk + 10,000·blank: the four digits, or the same with leading zeros NUL (all of
#: 0000 for the high chunks of an integer; all but the units digit for its last chunk).
_INTEGER_HIGH = _chunk_words(_FOUR + [_blank_leading(t, False) for t in _FOUR])
_INTEGER_LAST = _chunk_words(_FOUR + [_blank_leading(t, True) for t in _FOUR])
#: The same for fraction digits, trailing zeros NUL.
_FRACTION = _chunk_words(_FOUR + [_blank_trailing(t, False) for t in _FOUR])
#: "." and the first three fraction digits (the first always kept); index + 1000·blank.
_POINT_FIRST = _chunk_words(["." + f"{v:03d}" for v in range(1000)]
                            + ["." + _blank_trailing(f"{v:03d}", True) for v in range(1000)])
_COMMA_WORD, _NULL_WORD = (int(np.frombuffer(w, dtype="<u4")[0]) for w in (b",\0\0\0", b"null"))
#: 10^0 .. 10^19: as doubles (exact: every power of ten up to 10^22 is a double), and as integers.
_POW10 = np.array([float(10**k) for k in range(20)])
_POW10_INT = np.array([10**k for k in range(20)], dtype=np.uint64)
_THOUSAND, _TEN_THOUSAND = np.uint64(1000), np.uint64(10_000)
#: The doubles nearest 10^−3 .. 10^15 (the decades written without an exponent here).
_DECADES = np.array([float(f"1e{j}") for j in range(-3, 16)])
#: Dekker's splitting constant for doubles, 2^27 + 1.
_SPLIT = 134217729.0


def _integer_word_count(whole: np.ndarray) -> int:
    """Words the integer parts need: one per four digits of the largest (at least one)."""
    largest = int(whole.max())
    return 1 + (largest >= 10**4) + (largest >= 10**8) + (largest >= 10**12)


def _integer_words(words: np.ndarray, whole: np.ndarray) -> None:
    """The digits of 0 ≤ whole < 10^16 without leading zeros (0 is "0"), right-aligned in the
    ``_integer_word_count(whole)`` words of each row."""
    last = words.shape[1] - 1
    high = whole // 10_000  # the digits before the last chunk
    words[:, last] = _INTEGER_LAST[whole - high * 10_000 + (high == 0) * 10_000]
    for i in range(last - 1, -1, -1):
        rest = high
        high = rest // 10_000
        words[:, i] = _INTEGER_HIGH[rest - high * 10_000 + (high == 0) * 10_000]


def _joined(words: np.ndarray) -> str:
    """The rows' characters, row after row, without NULs and without the last row's comma."""
    chars = np.ascontiguousarray(words).view(np.uint8).reshape(-1)
    return chars[chars != 0][:-1].tobytes().decode("ascii")


def _integers_text(values: np.ndarray, missing: np.ndarray | None) -> str:
    """``json.dumps(values.tolist(), separators=(",", ":"))[1:-1]`` of integer ``values`` (null where
    ``missing``), by array operations for 0 ≤ v < 10^16 (sizes, counts, degrees of freedom)."""
    if values.size == 0:
        return ""
    values = values.astype(np.int64)
    if int(values.min()) < 0 or int(values.max()) >= 10**16:  # signs or long integers (rare): the encoder
        items = json.dumps(values.tolist(), separators=(",", ":")).strip("[]").split(",")
        if missing is not None:
            for row in np.flatnonzero(missing).tolist():
                items[row] = "null"
        return ",".join(items)
    digits = _integer_word_count(values)
    words = np.empty((values.size, digits + 1), dtype="<u4")
    _integer_words(words[:, :digits], values)
    words[:, digits] = _COMMA_WORD
    if missing is not None and missing.any():
        words[missing, :digits - 1] = 0
        words[missing, digits - 1] = _NULL_WORD
    return _joined(words)


def _two_product(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """hi = fl(a·b) and lo with hi + lo = a·b exactly (Dekker 1971), away from overflow and underflow."""
    hi = a * b
    c = _SPLIT * a
    a_hi = c - (c - a)
    a_lo = a - a_hi
    c = _SPLIT * b
    b_hi = c - (c - b)
    b_lo = b - b_hi
    return hi, ((a_hi * b_hi - hi) + a_hi * b_lo + a_lo * b_hi) + a_lo * b_lo


def _shortest(values: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The shortest decimal that reads back as each double, the nearest such if several, as
    (c, decpt, exact): x's decimal is c·10^(decpt − 17) with 10^16 ≤ c < 10^17, found by
    integer and error-free float arithmetic where ``exact``; elsewhere c and decpt are fillers.

    This is the decimal Python writes (its repr: Steele & White 1990, Gay 1990). With
    x = m·2^q (2^52 ≤ m < 2^53) and k = 16 − ⌊log10 x⌋, X = x·10^k lies in [10^16, 10^17)
    and is hi + lo exactly (``_two_product``; 10^k is a double). The decimals that read back
    as x lie less than D⁺ = 2^(q−1)·10^k above X and D⁻ below it (half the spacing of doubles
    on either side of x, scaled: doubles, exactly; D⁻ = D⁺ but for m = 2^52, D⁺/2). As
    0.55 ≤ D⁻ and D⁻ + D⁺ < 23, at most one multiple of 100 is that close, and some integer
    is: the shortest is that multiple of 100, else the multiple of 10 nearest X among those
    that close, else the integer nearest X among those, its trailing zeros dropped. All the
    differences involved are multiples of 2^−44 below 2^8 for 10^−3 ≤ x < 10^15, so doubles
    hold them exactly. ``exact`` is false outside that range, for 0 and negatives, and where
    a candidate is exactly D away or halfway between two (which way the reader rounds
    decides): the encoder writes those.
    """
    exact = (values >= 1e-3) & (values < 1e15)
    x = np.where(exact, values, 1.5)
    bits = x.view(np.int64)
    # ⌊log10 x⌋ from the doubles nearest the powers of ten; one off only where such a double
    # lies below its power (and log10 itself costs more): the check below corrects k then
    e10 = np.searchsorted(_DECADES, x, side="right") - 4
    for _ in range(2):
        k = 16 - e10
        hi, lo = _two_product(x, _POW10[k])
        below = (hi < 1e16) | ((hi == 1e16) & (lo < 0))
        above = (hi > 1e17) | ((hi == 1e17) & (lo >= 0))
        off = below | above
        if not off.any():
            break
        e10 = np.clip(e10 - below + above, -3, 14)
    exact &= ~off
    # D⁺ = 2^(q−1)·10^k: 2^(q−1) is the double with x's exponent less 53 and no fraction bits
    above_half = (((bits >> 52) - 53) << 52).view(np.float64) * _POW10[k]
    below_half = np.where((bits & ((1 << 52) - 1)) == 0, above_half / 2, above_half)  # D⁻
    whole = hi.astype(np.int64)
    floor = np.floor(lo)
    t = lo - floor
    c = whole + floor.astype(np.int64) + (t > 0.5)  # step 1: some integer is always near enough
    exact &= t != 0.5
    for step in (10, 100):  # a multiple of 10 near enough, then of 100, replaces it
        rest = whole - (whole // step) * step
        t = rest + lo  # X − base, base the multiple of step at or below hi
        shift = (t >= step) * step - (t < 0) * step
        t -= shift
        base = whole - rest + shift  # now X = base + t = base + step − u, 0 ≤ t < step
        u = step - t
        down, up = t < below_half, u < above_half
        exact &= (t != below_half) & (u != above_half) & (t != u)
        c = np.where(down | up, base + (up & (~down | (u < t))) * step, c)
    top = c >= 10**17  # rounded up to 10^17 (not seen: kept for safety): one more digit before the point
    c = np.where(exact, np.where(top, 10**16, c), 10**16)
    decpt = np.where(exact, e10 + 1 + top, 0)
    return c, decpt, exact


def _float_words(values: np.ndarray, missing: np.ndarray | None) -> np.ndarray:
    """The rows of ``json.dumps(values.tolist(), separators=(",", ":"), allow_nan=False)[1:-1]`` of
    float64 ``values`` (null where ``missing``): the same text (``_joined``), by array operations.

    ``_shortest`` gives each value's digits c (17, trailing zeros to drop) and decpt, the
    number of digits before the point (−2 to 15 there, which Python writes without an
    exponent: it uses one below 1e-4 or from 1e16): the integer part is c // 10^(17 − decpt)
    ("0" when decpt ≤ 0) and the fraction's digits, after −decpt zeros, the rest of c. The
    values ``_shortest`` leaves are written by the encoder, one distinct value at a time.
    """
    if missing is not None:
        values = np.where(missing, 0.0, values)
    c, decpt, exact = _shortest(values)
    scale = _POW10_INT[17 - np.maximum(decpt, 0)].view(np.int64)
    whole = c // scale  # 0 where decpt ≤ 0 (then scale is 10^17 > c)
    # the 19 fraction digits (c's rest shifted left by decpt + 2 places; below 10^19: unsigned)
    fraction = (c - whole * scale).view(np.uint64) * _POW10_INT[decpt + 2]
    digits = _integer_word_count(whole)
    words = np.empty((values.size, digits + 6), dtype="<u4")
    _integer_words(words[:, :digits], whole)
    # four-digit chunks from the right; a chunk's trailing zeros go when every later digit is 0
    blank = np.ones(values.size, dtype=bool)
    for j in range(digits + 4, digits, -1):
        high = fraction // _TEN_THOUSAND
        chunk = fraction - high * _TEN_THOUSAND
        words[:, j] = _FRACTION[chunk + blank * _TEN_THOUSAND]
        blank &= chunk == 0
        fraction = high
    words[:, digits] = _POINT_FIRST[fraction + blank * _THOUSAND]
    words[:, -1] = _COMMA_WORD
    if not exact.all():
        rows = np.flatnonzero(~exact)
        distinct, inverse = np.unique(values[rows].view(np.int64), return_inverse=True)
        texts = np.array(json.dumps(distinct.view(np.float64).tolist(), separators=(",", ":"), allow_nan=False)
                         .strip("[]").split(","), dtype=object)[inverse.reshape(-1)]
        if missing is not None:
            texts[missing[rows]] = "null"
        width = words.shape[1] - 1  # at least 6 words: every float's text and null fit (24 characters at most)
        block = "".join(t.ljust(4 * width, "\0") for t in texts.tolist()).encode("ascii")
        words[rows, :-1] = np.frombuffer(block, dtype="<u4").reshape(rows.size, width)
    return words


