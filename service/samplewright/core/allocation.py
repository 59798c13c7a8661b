"""Allocation of units to groups when units cost differently, variances differ, or the total is fixed.

Three questions, each over integer group sizes n_i ≥ m (the smallest group size allowed):

* **cheapest**: minimise the cost Σ c_i n_i subject to power(n) ≥ target;
* **budget**: maximise power(n) subject to Σ c_i n_i ≤ B;
* **total**: maximise power(n) subject to Σ n_i = N.

Power comes from the design's own exact (or documented approximate) power function
(``design.evaluate``), so the same code serves any design whose groups are sized
independently; it is assumed non-decreasing in each group's size, which holds for the
F tests here (λ and the error df both grow with every unit).

Published rule (continuous sizes). For the difference of two means the variance of the
estimate is σ₁²/n₁ + σ₂²/n₂; minimising it at a fixed cost c₁n₁ + c₂n₂ (or the cost at a
fixed variance) by a Lagrange multiplier gives

    n₁ / n₂ = (σ₁ / σ₂) · √(c₂ / c₁),

the two-sample case of optimum allocation with a linear cost function, n_h ∝ S_h / √c_h
(Cochran, *Sampling Techniques*, 3rd ed., 1977, §5.5 — cited from memory). With equal
variances it is n₁/n₂ = √(c₂/c₁); with equal costs, n₁/n₂ = σ₁/σ₂. The rule ignores the
loss of error degrees of freedom and the integer constraint, so the service reports it
beside the exact integer answer instead of rounding it.

Integer search. Small problems are solved exhaustively (every allocation with the last
group's size implied: the largest affordable, or the smallest reaching the target, found
by bisection). Larger ones start from the balanced design and from the rule's ratios
σ_i/√c_i, scaled to the constraint, and improve them by exchange moves between pairs of
groups at step sizes halving from the largest group's size down to one unit: take r units
from one group and give another as many as the freed budget buys (or, for the cheapest
design, as few as restore the target, found by lockstep bisection). A move is accepted
only if it strictly improves the objective (ties: more power, then less cost), so the
search ends; every loop has an iteration ceiling and the number of power evaluations is
capped. Tests check it against brute force on small cases.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from .designs.base import sizes_from_smallest
from .errors import InvalidParameter, NoSolution
from .solve import smallest_integer_reaching

#: No group is planned larger than this (as in ``planning.SIZE_CAP``) ...
SIZE_CAP = 10_000_000
#: ... and no allocation larger than this in all: each group is capped at TOTAL_CAP // k,
#: which keeps the error df below the range where the noncentral F needs its slow series
#: (``distributions.LARGE_DF2``), so a search's cost stays bounded in time, not only in calls.
TOTAL_CAP = 1_000_000
#: Problems with at most this many candidate allocations are searched exhaustively.
EXHAUSTIVE_LIMIT = 20_000
#: Rows of power spent on the final exhaustive box around the local optimum.
POLISH_ROWS = 40_000
#: Ceiling on accepted improving moves in one local search, and at one step size.
MAX_MOVES = 2_000
MAX_MOVES_PER_STEP = 64
#: Ceilings on the rows of power evaluated, and on the vectorised calls made, by one search
#: (bounded work whatever the input: a few seconds at most on one core even when every row
#: has its own error df). A search that reaches them returns the best allocation found so
#: far and says so (``truncated``).
MAX_EVALUATIONS = 200_000
MAX_CALLS = 3_000
#: Two powers closer than this are a tie (the cheaper allocation then wins).
POWER_TIE = 1e-13
#: Relative slack on costs (a budget of 10 buys ten units costing 1.0000000000000002).
COST_SLACK = 1e-12
#: Bisection ceiling (sizes are below 2**24 > SIZE_CAP).
_BISECTION_STEPS = 40

PowerRows = Callable[[np.ndarray], np.ndarray]


@dataclass(frozen=True)
class Allocation:
    """Group sizes with their total, cost and power."""

    group_sizes: tuple[int, ...]
    cost: float
    power: float

    @property
    def n_total(self) -> int:
        return int(sum(self.group_sizes))


@dataclass(frozen=True)
class AllocationResult:
    """The best allocation found, the balanced design beside it, and how it was found."""

    goal: str  # "cheapest" | "budget" | "total"
    best: Allocation
    balanced: Allocation | None  # None when no balanced design fits the constraint
    exhaustive: bool  # True: every candidate was evaluated (the answer is exact)
    evaluations: int  # rows of power evaluated
    truncated: bool = False  # True: the search stopped at its work ceiling


class _SearchBudgetExceeded(Exception):
    pass


class _Evaluator:
    """Counts (and caps) the rows of power a search evaluates and the calls it makes."""

    def __init__(self, power_rows: PowerRows, groups: int, limit: int = MAX_EVALUATIONS,
                 max_calls: int = MAX_CALLS) -> None:
        self._fn = power_rows
        self.groups = groups
        self.limit = limit
        self.max_calls = max_calls
        self.count = 0
        self.calls = 0
        self.spent = False

    def __call__(self, rows) -> np.ndarray:
        rows = np.asarray(rows, dtype=np.int64).reshape(-1, self.groups)
        if len(rows) == 0:
            return np.empty(0)
        if self.spent or self.count + len(rows) > self.limit or self.calls >= self.max_calls:
            self.spent = True
            raise _SearchBudgetExceeded
        self.count += len(rows)
        self.calls += 1
        power = np.asarray(self._fn(rows), dtype=float).reshape(-1)
        # A NaN must never win a comparison (the guarded numerics should not produce one).
        return np.where(np.isfinite(power), power, -np.inf)


def optimum_ratios(sds: Sequence[float], costs: Sequence[float]) -> np.ndarray:
    """Continuous optimum allocation n_i ∝ σ_i / √c_i, divided by its smallest entry.

    For two groups this is n₁/n₂ = (σ₁/σ₂)√(c₂/c₁) (Cochran 1977, §5.5, from memory).
    """
    sds = np.asarray(sds, dtype=float)
    costs = np.asarray(costs, dtype=float)
    if sds.shape != costs.shape or np.any(sds <= 0) or np.any(costs <= 0):
        raise InvalidParameter("costs", costs.tolist(), "needs one positive cost per positive SD")
    raw = sds / np.sqrt(costs)
    return raw / raw.min()


def _better(p_new, c_new, p_old, c_old) -> np.ndarray:
    """Lexicographic improvement: more power, or as much power for less cost."""
    return (p_new > p_old + POWER_TIE) | ((np.abs(p_new - p_old) <= POWER_TIE) & (c_new < c_old * (1 - COST_SLACK)))


def _pick_max(power: np.ndarray, cost: np.ndarray) -> int:
    """Index of the most powerful row; among ties, the cheapest."""
    top = power.max()
    tied = np.flatnonzero(power >= top - POWER_TIE)
    return int(tied[np.argmin(cost[tied])])


def _pick_min_cost(cost: np.ndarray, power: np.ndarray) -> int:
    """Index of the cheapest row; among equal costs, the most powerful."""
    low = cost.min()
    tied = np.flatnonzero(cost <= low * (1 + COST_SLACK))
    return int(tied[np.argmax(power[tied])])


def _pairs(k: int) -> tuple[np.ndarray, np.ndarray]:
    i, j = np.nonzero(~np.eye(k, dtype=bool))
    return i, j


def _top_step(n: np.ndarray) -> int:
    return 1 << max(0, int(math.floor(math.log2(max(1, int(n.max()))))))


# -- most power under a linear constraint (budget, or a fixed total) ------------------------


def _affordable(amount: np.ndarray, price: np.ndarray) -> np.ndarray:
    """How many units of ``price`` ``amount`` buys (with a relative slack for rounding)."""
    return np.floor(amount / price * (1 + COST_SLACK) + 1e-9).astype(np.int64)


def _fill(ev, n, p, w, bound, c, min_size, cap, exact):
    """Spend what is left of the constraint, a geometric share at a time, where power gains most."""
    try:
        return _fill_steps(ev, n, p, w, bound, c, min_size, cap, exact)
    except _SearchBudgetExceeded:
        return n, p


def _fill_steps(ev, n, p, w, bound, c, min_size, cap, exact):
    k = len(n)
    for _ in range(64 * k + 64):
        left = bound - float(n @ w)
        if exact:
            if left < 0.5:
                break
        room = (w <= left * (1 + COST_SLACK) + 1e-9) & (n < cap)
        cols = np.flatnonzero(room)
        if cols.size == 0:
            break
        step = np.maximum(1, _affordable(np.full(cols.size, left / cols.size), w[cols]))
        step = np.minimum(step, cap - n[cols])
        rows = np.repeat(n[None, :], cols.size, axis=0)
        rows[np.arange(cols.size), cols] += step
        ok = rows @ w <= bound * (1 + COST_SLACK) + 1e-9
        rows = rows[ok]
        if len(rows) == 0:
            break
        power = ev(rows)
        best = _pick_max(power, rows @ c)
        if not exact and power[best] < p - POWER_TIE:
            break  # adding units would lower power: keep the budget unspent
        n, p = rows[best], float(power[best])
    return n, p


def _power_moves(n, w, bound, step, min_size, cap, exact):
    """Exchange moves at ``step``: from group i to group j, staying within the constraint."""
    k = len(n)
    i, j = _pairs(k)
    left = bound - float(n @ w)
    out = []
    # Take r from i, give j what the freed amount (and anything left over) buys.
    r = np.minimum(step, n[i] - min_size)
    ok = r > 0
    t = r.copy() if exact else _affordable(left + r * w[i], w[j])
    t = np.minimum(t, cap - n[j])
    rows = np.repeat(n[None, :], len(i), axis=0)
    idx = np.arange(len(i))
    rows[idx, i] -= r
    rows[idx, j] += t
    ok &= t > 0
    if exact:
        ok &= t == r
    out.append(rows[ok])
    if not exact:
        # Give j exactly `step` units, taking from i as few as pay for them.
        need = step * w[j] - left
        r2 = np.where(need > 0, np.ceil(need / w[i] * (1 - COST_SLACK) - 1e-9), 0).astype(np.int64)
        r2 = np.maximum(r2, 0)
        ok2 = (r2 <= n[i] - min_size) & (n[j] + step <= cap)
        rows2 = np.repeat(n[None, :], len(i), axis=0)
        rows2[idx, i] -= r2
        rows2[idx, j] += step
        out.append(rows2[ok2])
    rows = np.concatenate(out) if out else np.empty((0, k), dtype=np.int64)
    if len(rows):
        rows = rows[(rows @ w <= bound * (1 + COST_SLACK) + 1e-9) & np.all(rows >= min_size, axis=1)]
        rows = np.unique(rows, axis=0)
    return rows


def _improve_power(ev, n, p, w, bound, c, min_size, cap, exact):
    """Exchange moves at halving steps while they add power; stops at the work ceiling."""
    step = _top_step(n)
    moves = at_step = 0
    try:
        while step >= 1 and moves < MAX_MOVES:
            rows = _power_moves(n, w, bound, step, min_size, cap, exact)
            if len(rows) == 0:
                step, at_step = step // 2, 0
                continue
            power = ev(rows)
            cost = rows @ c
            best = _pick_max(power, cost)
            if at_step < MAX_MOVES_PER_STEP and _better(power[best], cost[best], p, float(n @ c)):
                n, p = _fill(ev, rows[best], float(power[best]), w, bound, c, min_size, cap, exact)
                moves += 1
                at_step += 1
            else:
                step, at_step = step // 2, 0
    except _SearchBudgetExceeded:
        pass
    return n, p


def _scaled_start(direction, w, bound, min_size, cap):
    """The largest multiple of ``direction`` (floored, at least ``min_size``) within the bound."""
    direction = np.asarray(direction, dtype=float)

    def at(t):
        return np.clip(np.floor(t * direction), min_size, cap).astype(np.int64)

    hi = bound / float(direction @ w)
    if float(at(hi) @ w) <= bound * (1 + COST_SLACK):
        return at(hi)
    lo = 0.0
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        if float(at(mid) @ w) <= bound * (1 + COST_SLACK):
            lo = mid
        else:
            hi = mid
    return at(lo)


def _complete_total(n, total, direction, cap):
    """Add the units still missing from a fixed total, spread evenly, largest ``direction`` first."""
    n = n.copy()
    missing = total - int(n.sum())
    order = np.argsort(-direction, kind="stable")
    for _ in range(len(n) + 2):
        if missing <= 0:
            break
        share = -(-missing // len(n))
        for g in order:
            add = int(max(0, min(share, cap - n[g], missing)))
            n[g] += add
            missing -= add
    return n


def _head_rows(center, last, radius, lo_bound, hi_bound):
    """The grid of sizes of every group but ``last``, within ``radius`` of ``center`` and the bounds."""
    k = len(center)
    axes = []
    for g in range(k):
        if g == last:
            continue
        lo = max(lo_bound, int(center[g]) - radius) if radius is not None else lo_bound
        hi = min(int(hi_bound[g]), int(center[g]) + radius) if radius is not None else int(hi_bound[g])
        if hi < lo:
            return np.empty((0, k - 1), dtype=np.int64)
        axes.append(np.arange(lo, hi + 1, dtype=np.int64))
    grids = np.meshgrid(*axes, indexing="ij")
    return np.stack([g.reshape(-1) for g in grids], axis=1)


def _radius(k: int, rows: int, per_row: int) -> int:
    """The largest box radius whose grid of k − 1 free groups stays within ``rows`` evaluations."""
    span = (rows / per_row) ** (1.0 / (k - 1))
    return max(0, int((span - 1) // 2))


def _complete_power(ev, head, last, w, bound, c, min_size, cap, exact):
    """Rows with the ``last`` group as large as the constraint allows; the best of them, or None."""
    k = len(w)
    others = [g for g in range(k) if g != last]
    used = head @ w[others]
    if exact:
        size = np.rint(bound - used).astype(np.int64)
    else:
        size = _affordable(np.maximum(bound - used, 0.0), np.full(len(head), w[last]))
    size = np.minimum(size, cap)
    keep = size >= min_size
    if exact:
        keep &= size + head.sum(axis=1) == int(round(bound))
    if not keep.any():
        return None
    rows = np.empty((int(keep.sum()), k), dtype=np.int64)
    rows[:, others] = head[keep]
    rows[:, last] = size[keep]
    power = ev(rows)
    best = _pick_max(power, rows @ c)
    return rows[best], float(power[best])


def _box_power(ev, center, w, bound, c, min_size, cap, exact, radius):
    """Best allocation in a box around ``center`` (everywhere when ``radius`` is None)."""
    k = len(w)
    last = int(np.argmax(center)) if center is not None else k - 1
    spare = bound - min_size * float(w.sum())
    hi = np.minimum(cap, min_size + _affordable(np.full(k, spare), w))
    head = _head_rows(center if center is not None else np.zeros(k), last, radius, min_size, hi)
    if len(head) == 0:
        return None
    return _complete_power(ev, head, last, w, bound, c, min_size, cap, exact)


def most_power(
    power_rows: PowerRows,
    *,
    costs: Sequence[float],
    budget: float | None = None,
    n_total: int | None = None,
    min_size: int = 2,
    cap: int = SIZE_CAP,
    sds: Sequence[float] | None = None,
    exhaustive_limit: int = EXHAUSTIVE_LIMIT,
    polish_rows: int = POLISH_ROWS,
) -> AllocationResult:
    """The allocation with the most power within ``budget`` (Σ c_i n_i ≤ B) or at ``n_total`` (Σ n_i = N).

    Parameters
    ----------
    power_rows : callable mapping an int array of shape (rows, k) to the power of each row.
    costs : cost of one unit in each group (positive); with ``n_total`` they only price the answer.
    budget, n_total : exactly one; the constraint.
    min_size : smallest size of any group.
    cap : largest size of any group (never above TOTAL_CAP // k).
    sds : per-group SDs for the rule-based starting point (equal when None).

    Returns the best allocation, the balanced one beside it (equal sizes within the budget;
    for a fixed total, sizes differing by at most one, the extra units in the first groups),
    and whether the search was exhaustive.
    """
    c = np.asarray(costs, dtype=float)
    k = len(c)
    cap = min(cap, TOTAL_CAP // k)
    if n_total is not None and n_total > TOTAL_CAP:
        raise InvalidParameter("n_total", n_total, f"must be at most {TOTAL_CAP}")
    if (budget is None) == (n_total is None):
        raise InvalidParameter("budget", budget, "give exactly one of budget and n_total")
    exact = n_total is not None
    w = np.ones(k) if exact else c
    bound = float(n_total) if exact else float(budget)
    floor_cost = min_size * float(w.sum())
    if floor_cost > bound * (1 + COST_SLACK):
        field = "n_total" if exact else "budget"
        raise InvalidParameter(
            field, n_total if exact else budget,
            f"must allow {min_size} units in each of the {k} groups (at least {floor_cost:.10g})",
        )
    ev = _Evaluator(power_rows, k)

    def alloc(n, p) -> Allocation:
        return Allocation(tuple(int(v) for v in n), float(n @ c), float(p))

    # The balanced comparison.
    if exact:
        base, extra = divmod(int(n_total), k)
        bal = np.full(k, base, dtype=np.int64)
        bal[:extra] += 1
        bal = np.minimum(bal, cap)
    else:
        per = int(min(cap, _affordable(np.array(bound), np.array(float(c.sum())))[()]))
        bal = np.full(k, per, dtype=np.int64)
    balanced = alloc(bal, ev(bal[None])[0]) if bal.min() >= min_size else None

    spare = bound - floor_cost
    spans = [int(min(cap, min_size + _affordable(np.array(spare), w[g])[()])) - min_size + 1 for g in range(k - 1)]
    exhaustive = None
    if exhaustive_limit and math.prod(spans) <= exhaustive_limit:
        exhaustive = _box_power(ev, None, w, bound, c, min_size, cap, exact, None)
    if exhaustive is not None:
        best_n, best_p = exhaustive
        return AllocationResult("total" if exact else "budget", alloc(best_n, best_p), balanced, True, ev.count)

    sd = np.ones(k) if sds is None else np.asarray(sds, dtype=float)
    directions = [np.ones(k), sd / np.sqrt(c)]
    best_n = best_p = None
    for direction in directions:
        direction = direction / direction.min()
        n = _scaled_start(direction, w, bound, min_size, cap)
        if exact:
            n = _complete_total(n, int(n_total), direction, cap)
        try:
            p = float(ev(n[None])[0])
        except _SearchBudgetExceeded:
            break
        n, p = _fill(ev, n, p, w, bound, c, min_size, cap, exact)
        n, p = _improve_power(ev, n, p, w, bound, c, min_size, cap, exact)
        if best_n is None or _better(p, float(n @ c), best_p, float(best_n @ c)):
            best_n, best_p = n, p
    if polish_rows and best_n is not None and not ev.spent:
        try:
            polished = _box_power(ev, best_n, w, bound, c, min_size, cap, exact, _radius(k, polish_rows, 1))
        except _SearchBudgetExceeded:
            polished = None
        if polished is not None and _better(polished[1], float(polished[0] @ c), best_p, float(best_n @ c)):
            best_n, best_p = polished
    if best_n is None:  # pragma: no cover - the ceilings leave room for at least one start
        raise NoSolution("design", "allocation", "the allocation search exceeded its work limit")
    return AllocationResult("total" if exact else "budget", alloc(best_n, best_p), balanced, False, ev.count,
                            truncated=ev.spent)


# -- least cost reaching a target power -------------------------------------------------------


def _smallest_added(ev, base, col, top, target):
    """Per row: the smallest t in [0, top] with power(base + t·e_col) ≥ target, or −1."""
    m = len(base)
    idx = np.arange(m)
    hi = top.copy()
    rows = base.copy()
    rows[idx, col] += hi
    ok = ev(rows) >= target
    lo = np.full(m, -1, dtype=np.int64)
    for _ in range(_BISECTION_STEPS):
        gap = ok & (hi - lo > 1)
        if not gap.any():
            break
        g = np.flatnonzero(gap)
        mid = (lo[g] + hi[g]) // 2
        probe = base[g].copy()
        probe[np.arange(len(g)), col[g]] += mid
        reach = ev(probe) >= target
        hi[g] = np.where(reach, mid, hi[g])
        lo[g] = np.where(reach, lo[g], mid)
    return np.where(ok, hi, -1)


def _largest_removed(ev, base, col, top, target):
    """Per row: the largest r in [0, top] with power(base − r·e_col) ≥ target (−1 if even 0 fails)."""
    m = len(base)
    ok = ev(base) >= target
    lo = np.zeros(m, dtype=np.int64)
    hi = top + 1  # known (assumed) to fail: below the smallest group size
    for _ in range(_BISECTION_STEPS):
        gap = ok & (hi - lo > 1)
        if not gap.any():
            break
        g = np.flatnonzero(gap)
        mid = (lo[g] + hi[g]) // 2
        probe = base[g].copy()
        probe[np.arange(len(g)), col[g]] -= mid
        reach = ev(probe) >= target
        lo[g] = np.where(reach, mid, lo[g])
        hi[g] = np.where(reach, hi[g], mid)
    return np.where(ok, lo, -1)


def _cost_moves(ev, n, c, step, target, min_size, cap):
    """Feasible exchange moves at ``step`` that lower the cost."""
    k = len(n)
    i, j = _pairs(k)
    idx = np.arange(len(i))
    out = []
    # Take r from i; give j the fewest units that restore the target, if they cost less than r.
    r = np.minimum(step, n[i] - min_size)
    top = np.ceil(r * c[i] / c[j] * (1 - COST_SLACK) - 1e-9).astype(np.int64) - 1
    top = np.minimum(np.maximum(top, 0), cap - n[j])
    sel = np.flatnonzero(r > 0)
    if sel.size:
        base = np.repeat(n[None, :], sel.size, axis=0)
        base[np.arange(sel.size), i[sel]] -= r[sel]
        t = _smallest_added(ev, base, j[sel], top[sel], target)
        good = t >= 0
        rows = base[good]
        rows[np.arange(int(good.sum())), j[sel][good]] += t[good]
        out.append(rows)
    # Give j `step` units; take from i as many as keep the target, if they cost more.
    sel = np.flatnonzero(n[j] + step <= cap)
    if sel.size:
        base = np.repeat(n[None, :], sel.size, axis=0)
        base[np.arange(sel.size), j[sel]] += step
        r2 = _largest_removed(ev, base, i[sel], n[i[sel]] - min_size, target)
        good = r2 * c[i[sel]] > step * c[j[sel]] * (1 + COST_SLACK)
        rows = base[good]
        rows[np.arange(int(good.sum())), i[sel][good]] -= r2[good]
        out.append(rows)
    del idx
    rows = np.concatenate(out) if out else np.empty((0, k), dtype=np.int64)
    return rows


def _improve_cost(ev, n, p, c, target, min_size, cap):
    """Exchange moves at halving steps while they lower the cost; stops at the work ceiling."""
    step = _top_step(n)
    moves = at_step = 0
    try:
        while step >= 1 and moves < MAX_MOVES:
            rows = _cost_moves(ev, n, c, step, target, min_size, cap)
            if len(rows) == 0:
                step, at_step = step // 2, 0
                continue
            power = ev(rows)
            feasible = power >= target
            rows, power = rows[feasible], power[feasible]
            if len(rows) == 0:
                step, at_step = step // 2, 0
                continue
            cost = rows @ c
            best = _pick_min_cost(cost, power)
            if at_step < MAX_MOVES_PER_STEP and cost[best] < float(n @ c) * (1 - COST_SLACK):
                n, p = rows[best], float(power[best])
                moves += 1
                at_step += 1
            else:
                step, at_step = step // 2, 0
    except _SearchBudgetExceeded:
        pass
    return n, p


def _smallest_scaled(ev, ratios, target, min_size, cap):
    """The smallest m with power(max(min_size, ceil(m·r_i))) ≥ target; None if the cap falls short."""
    m_cap = int(cap // float(ratios.max()))
    if m_cap < min_size:
        return None

    def sizes(m):
        return np.maximum(sizes_from_smallest(m, ratios), min_size)

    def power_at(m):
        return ev(sizes(m))

    m, found = smallest_integer_reaching(power_at, target=np.array([target]), lower=np.array([min_size]), cap=m_cap)
    if not found[0]:
        return None
    row = sizes([int(m[0])])[0]
    return row, float(ev(row[None])[0])


def _box_cost(ev, center, c, bound, target, min_size, cap, radius):
    """Cheapest allocation costing at most ``bound`` in a box around ``center`` (everywhere if None).

    The free groups run over the box; the remaining (largest) group takes the fewest
    units that reach the target, found by lockstep bisection.
    """
    k = len(c)
    spare = bound - min_size * float(c.sum())
    if spare < 0:
        return None
    last = int(np.argmax(center)) if center is not None else k - 1
    others = [g for g in range(k) if g != last]
    hi = np.minimum(cap, min_size + _affordable(np.full(k, spare), c))
    head = _head_rows(center if center is not None else np.zeros(k), last, radius, min_size, hi)
    if len(head) == 0:
        return None
    room = bound - head @ c[others]
    head = head[room >= min_size * c[last] * (1 - COST_SLACK)]
    if len(head) == 0:
        return None
    top = np.minimum(_affordable(bound - head @ c[others], np.full(len(head), c[last])), cap) - min_size
    base = np.empty((len(head), k), dtype=np.int64)
    base[:, others] = head
    base[:, last] = min_size
    t = _smallest_added(ev, base, np.full(len(head), last), np.maximum(top, 0), target)
    good = t >= 0
    if not good.any():
        return None
    rows = base[good]
    rows[:, last] += t[good]
    power = ev(rows)
    best = _pick_min_cost(rows @ c, power)
    return rows[best], float(power[best])


def cheapest(
    power_rows: PowerRows,
    *,
    costs: Sequence[float],
    target_power: float,
    min_size: int = 2,
    cap: int = SIZE_CAP,
    sds: Sequence[float] | None = None,
    exhaustive_limit: int = EXHAUSTIVE_LIMIT,
    polish_rows: int = POLISH_ROWS,
) -> AllocationResult:
    """The least costly allocation whose power reaches ``target_power``.

    The balanced design beside it is the smallest equal-size design reaching the target
    (the answer of the sample-size question with equal allocation, when ``min_size`` does
    not bind). Raises NoSolution when no design within ``cap`` units per group reaches it.
    """
    c = np.asarray(costs, dtype=float)
    k = len(c)
    cap = min(cap, TOTAL_CAP // k)
    ev = _Evaluator(power_rows, k)

    def alloc(n, p) -> Allocation:
        return Allocation(tuple(int(v) for v in n), float(n @ c), float(p))

    sd = np.ones(k) if sds is None else np.asarray(sds, dtype=float)
    rule = sd / np.sqrt(c)
    starts = []
    for ratios in (np.ones(k), rule / rule.min()):
        found = _smallest_scaled(ev, ratios, target_power, min_size, cap)
        starts.append(found)
    balanced = alloc(*starts[0]) if starts[0] is not None else None
    if all(s is None for s in starts):
        raise NoSolution(
            "target_power", target_power,
            f"no allocation with at most {cap} units per group ({TOTAL_CAP} in all) reaches the target; "
            "the effect is too small",
        )
    best_n = best_p = None
    for start in starts:
        if start is None:
            continue
        n, p = _improve_cost(ev, start[0], start[1], c, target_power, min_size, cap)
        if best_n is None or float(n @ c) < float(best_n @ c) * (1 - COST_SLACK):
            best_n, best_p = n, p
    if ev.spent:
        return AllocationResult("cheapest", alloc(best_n, best_p), balanced, False, ev.count, truncated=True)
    bound = float(best_n @ c)
    spare = bound - min_size * float(c.sum())

    def span(g: int) -> int:
        return int(min(cap, min_size + _affordable(np.array(spare), c[g])[()])) - min_size + 1

    steps = max(1, math.ceil(math.log2(max(span(g) for g in range(k)) + 1))) + 1
    try:
        if exhaustive_limit and math.prod(span(g) for g in range(k - 1)) * steps <= exhaustive_limit:
            exact = _box_cost(ev, None, c, bound, target_power, min_size, cap, None)
            if exact is not None:
                return AllocationResult("cheapest", alloc(*exact), balanced, True, ev.count)
        if polish_rows:
            polished = _box_cost(ev, best_n, c, bound, target_power, min_size, cap, _radius(k, polish_rows, steps))
            if polished is not None and float(polished[0] @ c) < bound * (1 - COST_SLACK):
                best_n, best_p = polished
    except _SearchBudgetExceeded:
        pass
    return AllocationResult("cheapest", alloc(best_n, best_p), balanced, False, ev.count, truncated=ev.spent)
