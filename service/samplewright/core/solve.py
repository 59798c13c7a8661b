"""Bounded searches: the smallest integer size reaching a power, and the noncentrality
that gives a power.

Both work on arrays in lockstep, so one call answers one question or ten thousand with
the same code. The integer search also has a one-problem twin on plain Python integers
(``smallest_integer_reaching_one``) that probes exactly the sizes the array form probes
for that problem, in the same order, so a question asked alone and the same question in
a batch see the same powers and stop at the same size. Every loop has a fixed iteration
ceiling; nothing here is open-ended.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy.special import ndtri

#: Ceiling of the bracket for the noncentrality solve. No supported design needs more
#: (the largest df2 with power 0.9999 at α = 1e-12 needs λ of a few hundred); beyond it
#: the question is reported as having no solution rather than searched for ever.
MAX_NONCENTRALITY = 1e9


def smallest_integer_reaching(
    power_at: Callable[[np.ndarray], np.ndarray],
    *,
    target: np.ndarray,
    lower: np.ndarray,
    cap: int,
    start: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Smallest integer m in [lower, cap] with power_at(m) ≥ target, for arrays of problems.

    ``power_at`` maps an integer array m (one entry per problem) to the power of each
    problem at that size; it must be non-decreasing in m. From ``start`` (default
    ``lower``; any guess, clipped to [lower, cap]) the search gallops, with steps 1, 2,
    4, …, upwards while the power falls short or downwards while it reaches, until the
    answer is bracketed (at most log2(cap) + 2 steps), then bisects the bracket (at most
    log2(cap) + 2 more). A guess just below the answer costs a handful of evaluations;
    a poor one costs no more than the plain doubling search.

    Returns ``(m, found)``: ``found`` is False where even ``cap`` falls short; ``m`` is
    then ``cap``.
    """
    target = np.asarray(target, dtype=float)
    lower = np.asarray(lower, dtype=np.int64)
    probe = lower.copy() if start is None else np.clip(np.asarray(start, dtype=np.int64), lower, cap)
    good = np.full(lower.shape, cap + 1, dtype=np.int64)  # smallest size known to reach
    bad = lower - 1  # largest size known to fall short
    reached = power_at(probe) >= target
    good = np.where(reached, probe, good)
    bad = np.where(reached, bad, probe)
    up = ~reached & (probe < cap)  # galloping towards larger sizes
    down = reached & (probe > lower)  # galloping towards smaller sizes
    step = np.ones(lower.shape, dtype=np.int64)
    steps = _steps(cap)
    for _ in range(steps):
        live = up | down
        if not live.any():
            break
        probe = np.where(up, np.minimum(bad + step, cap), np.where(down, np.maximum(good - step, lower), probe))
        reached = power_at(probe) >= target
        good = np.where(live & reached, np.minimum(good, probe), good)
        bad = np.where(live & ~reached, np.maximum(bad, probe), bad)
        up = up & ~reached & (probe < cap)
        down = down & reached & (probe > lower)
        step = step * 2
    found = good <= cap
    for _ in range(steps):
        gap = found & (good - bad > 1)
        if not gap.any():
            break
        # rows without a gap repeat an in-range size, so a cached power_at does no work
        mid = np.where(gap, (good + bad) // 2, np.minimum(good, cap))
        reached = power_at(mid) >= target
        good = np.where(gap & reached, mid, good)
        bad = np.where(gap & ~reached, mid, bad)
    return np.where(found, good, cap), found


def _steps(cap: int) -> int:
    """Iteration ceiling of each phase of the integer search: log2(cap) + 2."""
    return int(np.ceil(np.log2(max(cap, 2)))) + 2


def smallest_integer_reaching_one(
    power_at: Callable[[int], float],
    *,
    target: float,
    lower: int,
    cap: int,
    start: int | None = None,
) -> tuple[int, bool]:
    """``smallest_integer_reaching`` for one problem, on Python integers.

    ``power_at`` maps one integer m to the power at that size. The probes are those the
    array form makes for this problem (same start clipped to [lower, cap], same galloping
    steps, same bisection midpoints, same iteration ceilings), so the answer is the array
    form's even where ``power_at`` is not monotone to the last bit. The array form's
    bookkeeping costs more than an evaluation when there is one problem; this costs
    nothing beside the evaluations.

    Returns ``(m, found)`` as the array form does for its one entry.
    """
    probe = lower if start is None else min(max(int(start), lower), cap)
    good = cap + 1  # smallest size known to reach
    bad = lower - 1  # largest size known to fall short
    reached = power_at(probe) >= target
    if reached:
        good = probe
    else:
        bad = probe
    up = not reached and probe < cap
    down = reached and probe > lower
    step = 1
    steps = _steps(cap)
    for _ in range(steps):
        if not (up or down):
            break
        probe = min(bad + step, cap) if up else max(good - step, lower)
        reached = power_at(probe) >= target
        if reached:
            good = min(good, probe)
        else:
            bad = max(bad, probe)
        up = up and not reached and probe < cap
        down = down and reached and probe > lower
        step *= 2
    found = good <= cap
    for _ in range(steps):
        if not (found and good - bad > 1):
            break
        mid = (good + bad) // 2
        if power_at(mid) >= target:
            good = mid
        else:
            bad = mid
    return (good if found else cap), found


def noncentrality_for_power(
    power_of: Callable[[np.ndarray, np.ndarray], np.ndarray],
    *,
    target: np.ndarray,
    start: np.ndarray,
    step: np.ndarray | None = None,
    rtol: float = 1e-13,
    max_iterations: int = 200,
) -> tuple[np.ndarray, np.ndarray]:
    """The λ > 0 with power_of(λ, mask) = target, for arrays of problems.

    ``power_of(lam, mask)`` returns the power of each problem at noncentrality ``lam``;
    ``mask`` says which entries are needed (others may be anything finite). Power must
    increase with λ from its value at 0 (α) towards 1.

    The bracket is found by probing ``start``, then ``lo + step`` with the step doubling
    each time (``step`` defaults to ``start``, i.e. plain doubling), ``lo`` being the
    largest probe known to fall short (0 at first), until the power reaches the target
    (at most log2(MAX_NONCENTRALITY) steps). A ``start`` just below the root with a
    small ``step`` brackets it tightly in two probes. The root is then found by regula
    falsi with the Anderson–Björck modification (Anderson & Björck, BIT 13, 1973; it
    keeps a bracket and converges superlinearly), stopping at a relative width of
    ``rtol``. The interpolation is done on z = Φ⁻¹(power) against √λ, along which the
    power of a noncentral test is close to a straight line (power ≈ Φ(√λ − c) for a
    normal approximation), so each step lands near the root; which end of the bracket a
    probe replaces is decided on the power itself, so the upper end always reaches the
    target.

    Returns ``(lam, found)``; ``found`` is False where even MAX_NONCENTRALITY falls short.
    """
    target = np.asarray(target, dtype=float)
    hi = np.maximum(np.asarray(start, dtype=float), 1e-6)
    grow = hi.copy() if step is None else np.maximum(np.asarray(step, dtype=float), 1e-6)
    lo = np.zeros_like(hi)
    open_ = np.ones(hi.shape, dtype=bool)
    p_hi = np.full_like(hi, np.nan)
    p_lo = np.full_like(hi, np.nan)  # the power at lo, once lo is a probe (at 0 it is asked below)
    for _ in range(int(np.ceil(np.log2(MAX_NONCENTRALITY / 1e-6))) + 2):
        value = power_of(hi, open_)
        p_hi = np.where(open_, value, p_hi)
        short = open_ & ~(value >= target)
        lo = np.where(short, hi, lo)
        p_lo = np.where(short, value, p_lo)
        open_ = short & (hi < MAX_NONCENTRALITY)
        hi = np.where(open_, np.minimum(lo + grow, MAX_NONCENTRALITY), hi)
        grow = grow * 2
        if not open_.any():
            break
    found = p_hi >= target
    at_zero = found & (lo == 0)
    if at_zero.any():
        p_lo = np.where(at_zero, power_of(lo, at_zero), p_lo)
    z_target = ndtri(target)
    with np.errstate(all="ignore"):
        z_hi, z_lo = ndtri(p_hi) - z_target, ndtri(p_lo) - z_target
    # Which end each problem's last probe replaced (for the modification below); a problem
    # leaves ``active`` for good, so only the active entries' flags matter.
    was_up = np.zeros(hi.shape, dtype=bool)
    was_down = was_up
    active = found & (hi - lo > rtol * hi)
    margin_of = 0.25 * rtol
    for _ in range(max_iterations):
        if not active.any():
            break
        with np.errstate(all="ignore"):
            r_lo, r_hi = np.sqrt(lo), np.sqrt(hi)
            x = r_hi - z_hi * (r_hi - r_lo) / (z_hi - z_lo)
            x *= x
            # Bisect where the interpolation is unusable: x not finite, or an end's z
            # infinite (power 0 or 1 there), when it only ever returns that end; the
            # product is finite exactly when all three are.
            unusable = ~np.isfinite(x * (z_lo - z_hi))
        np.copyto(x, 0.5 * (lo + hi), where=unusable)
        # At least a quarter of the tolerance inside either end: a step that close to an end
        # (the interpolation's rounding near the root) then closes the bracket at once if
        # the root is on the near side, instead of creeping towards it.
        margin = margin_of * hi
        np.maximum(x, lo + margin, out=x)
        np.minimum(x, hi - margin, out=x)
        px = power_of(x, active)
        reached = px >= target
        up = active & reached
        down = active & ~reached
        with np.errstate(all="ignore"):
            zx = ndtri(px)
            zx -= z_target
            # Anderson–Björck: when the same end survives twice, scale its z by
            # m = 1 − z(x)/z(replaced end), or ½ when that is not positive (or not finite).
            for keep, kept_z, gone_z, moved_before in ((up, z_lo, z_hi, was_up), (down, z_hi, z_lo, was_down)):
                again = keep & moved_before
                if again.any():
                    m = 1.0 - zx[again] / gone_z[again]
                    kept_z[again] *= np.where(m > 0, m, 0.5)
        np.copyto(hi, x, where=up)
        np.copyto(z_hi, zx, where=up)
        np.copyto(lo, x, where=down)
        np.copyto(z_lo, zx, where=down)
        was_up, was_down = up, down
        active &= hi - lo > rtol * hi
        active &= px != target
    # hi always has power ≥ target; the bracket is narrower than rtol·hi.
    lam = np.where(found, hi, MAX_NONCENTRALITY)
    return lam, found
