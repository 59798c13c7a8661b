"""The three planning questions, answered once for every design.

* power: the probability that the level-α test rejects, for given group sizes;
* sample size: the smallest integer design whose power reaches a target;
* detectable effect: the smallest noncentrality (and effect) detectable with the
  given sizes at the target power.

A design supplies ``groups``, ``ratios`` (allocation divided by its minimum),
``smallest_unit()`` and ``test_at(sizes) -> FTest``; see ``designs/base.py``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .designs.base import sizes_from_smallest
from .errors import InvalidParameter, NoSolution
from .solve import MAX_NONCENTRALITY, noncentrality_for_power, smallest_integer_reaching

#: No group is planned larger than this; a sample-size answer beyond it is refused.
SIZE_CAP = 10_000_000
#: Relative slack when rounding a dropout-inflated size up: 64 / (1 − 0.2) is
#: 80.00000000000001 in floating point and must enrol 80, not 81.
_DROPOUT_SLACK = 1e-12


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


def _result(design, sizes_row: np.ndarray, alpha: float) -> PowerResult:
    ev = design.evaluate(sizes_row.reshape(1, -1), alpha)
    return PowerResult(
        alpha=float(alpha),
        power=float(ev.power[0]),
        df_numerator=float(ev.df1[0]),
        df_denominator=float(ev.df2[0]),
        noncentrality=float(ev.noncentrality[0]),
        critical_value=float(ev.critical_value[0]),
        group_sizes=tuple(int(v) for v in sizes_row),
    )


def check_sizes(design, sizes) -> np.ndarray:
    """Validate explicit group sizes against the design (count, ≥ 1, error df ≥ 1)."""
    arr = np.asarray(sizes, dtype=np.int64)
    if arr.shape != (design.groups,):
        raise InvalidParameter("group_sizes", list(sizes), f"needs one size per group ({design.groups})")
    if np.any(arr < 1) or np.any(arr > SIZE_CAP):
        raise InvalidParameter("group_sizes", list(sizes), f"every size must be between 1 and {SIZE_CAP}")
    if design.evaluate(arr.reshape(1, -1), 0.05).df2[0] < 1:
        raise InvalidParameter(
            "group_sizes", list(sizes),
            "leaves no error degrees of freedom (total must exceed the number of groups)",
        )
    return arr


def sizes_for(design, n_per_group: int) -> np.ndarray:
    """Sizes from ``n_per_group`` (the smallest group's size under an allocation)."""
    if n_per_group < design.smallest_unit():
        raise InvalidParameter(
            "n_per_group", n_per_group,
            f"must be at least {design.smallest_unit()} so that error degrees of freedom remain",
        )
    sizes = sizes_from_smallest([n_per_group], design.ratios)[0]
    if sizes.max() > SIZE_CAP:
        raise InvalidParameter("n_per_group", n_per_group, f"no group may exceed {SIZE_CAP} units")
    return sizes


def power(design, *, sizes, alpha: float) -> PowerResult:
    """Power of the level-α test of ``design`` at ``sizes`` (validated with check_sizes)."""
    return _result(design, np.asarray(sizes, dtype=np.int64), alpha)


def sample_size(design, *, alpha: float, target_power: float, dropout_rate: float = 0.0,
                cap: int = SIZE_CAP) -> SampleSizeResult:
    """Smallest integer design with power ≥ ``target_power``.

    The search is over m, the smallest group's size, with n_i = ceil(m · r_i / min r)
    (``sizes_from_smallest``); power is non-decreasing in m because λ grows and the
    critical value falls as N grows. Enrolment with dropout rate d is ceil(n_i / (1 − d))
    per group (not n_i(1 + d), which under-enrols).

    Raises NoSolution when the smallest group would need more than ``cap`` units
    divided by the largest ratio (so no group exceeds ``cap``).
    """
    if not target_power > alpha:
        raise InvalidParameter("target_power", target_power, f"must exceed alpha ({alpha})")
    lower = design.smallest_unit()
    m_cap = int(cap // float(design.ratios.max()))
    if m_cap < lower:
        raise NoSolution("design.allocation", list(design.ratios), "the allocation leaves no feasible size under the cap")

    at_cap = design.evaluate(sizes_from_smallest([m_cap], design.ratios), alpha)
    if not at_cap.noncentrality[0] > 0:
        raise NoSolution(
            "design", "zero effect",
            "the effect is zero, so the power equals alpha at every size; no sample size reaches the target",
        )

    def power_at(m: np.ndarray) -> np.ndarray:
        return design.evaluate(sizes_from_smallest(m, design.ratios), alpha).power

    m, found = smallest_integer_reaching(
        power_at, target=np.array([target_power]), lower=np.array([lower]), cap=m_cap
    )
    if not found[0]:
        best = _result(design, sizes_from_smallest([m_cap], design.ratios)[0], alpha)
        raise NoSolution(
            "target_power", target_power,
            f"required size exceeds the cap of {cap} units per group "
            f"(power at the cap is {best.power:.6g}); the effect is too small to detect",
        )
    m = int(m[0])
    answer = _result(design, sizes_from_smallest([m], design.ratios)[0], alpha)
    previous = None
    if m > lower:
        previous = _result(design, sizes_from_smallest([m - 1], design.ratios)[0], alpha)
    enrol = None
    if dropout_rate > 0:
        raw = np.asarray(answer.group_sizes, dtype=float) / (1.0 - dropout_rate)
        enrol = tuple(int(v) for v in np.ceil(raw * (1 - _DROPOUT_SLACK)))
    return SampleSizeResult(
        target_power=float(target_power),
        answer=answer,
        one_step_smaller=previous,
        smallest_group=m,
        dropout_rate=float(dropout_rate),
        enrolment_sizes=enrol,
    )


def detectable_effect(design, *, sizes, alpha: float, target_power: float) -> DetectableResult:
    """Smallest noncentrality detectable at ``target_power`` with ``sizes``.

    Solved by bracketing and regula falsi on the design's exact power
    (``design.power_at_noncentrality``; ``solve.py``), relative accuracy 1e-13; never by
    scipy's inverse-noncentrality helper, which clamps silently at 10,000 and errs by
    percents.
    """
    if not target_power > alpha:
        raise InvalidParameter("target_power", target_power, f"must exceed alpha ({alpha})")
    sizes = np.asarray(sizes, dtype=np.int64)
    probe = design.evaluate(sizes.reshape(1, -1), alpha)

    def power_of(lam: np.ndarray, _mask: np.ndarray) -> np.ndarray:
        return design.power_at_noncentrality(lam, sizes, alpha)

    lam, found = noncentrality_for_power(
        power_of, target=np.array([target_power]), start=np.array([max(1.0, float(probe.df1[0]))])
    )
    if not found[0]:
        raise NoSolution(
            "target_power", target_power,
            f"the detectable noncentrality exceeds {MAX_NONCENTRALITY:g}; "
            "add error degrees of freedom or lower the target",
        )
    lam = float(lam[0])
    check = PowerResult(
        alpha=float(alpha),
        power=float(power_of(np.array([lam]), np.array([True]))[0]),
        df_numerator=float(probe.df1[0]),
        df_denominator=float(probe.df2[0]),
        noncentrality=lam,
        critical_value=float(probe.critical_value[0]),
        group_sizes=tuple(int(v) for v in sizes),
    )
    return DetectableResult(target_power=float(target_power), noncentrality=lam, check=check)
