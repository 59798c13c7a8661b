"""What every design gives the planning engine.

A design knows its number of independently sized groups, their allocation ratios, and
how to turn an array of group sizes into the parameters of its test. The engine in
``samplewright.core.planning`` does the rest (power, sizes, detectable effect) once,
for all designs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InvalidParameter

#: Tolerance for turning ratio products into integers: 1.1/0.1 is 11.000000000000002 in
#: binary floating point, and must not round up to 12.
_RATIO_SLACK = 1e-9


@dataclass(frozen=True)
class FTest:
    """Degrees of freedom and noncentrality of an F test, as arrays over designs."""

    df1: np.ndarray
    df2: np.ndarray
    noncentrality: np.ndarray


def normalised_allocation(allocation, groups: int, field: str = "design.allocation") -> np.ndarray:
    """Ratios divided by the smallest one; equal allocation when ``allocation`` is None."""
    if allocation is None:
        return np.ones(groups)
    ratios = np.asarray(allocation, dtype=float)
    if ratios.shape != (groups,):
        raise InvalidParameter(field, list(allocation), f"needs one ratio per group ({groups})")
    if not np.all(np.isfinite(ratios)) or np.any(ratios <= 0):
        raise InvalidParameter(field, list(allocation), "ratios must be positive and finite")
    return ratios / ratios.min()


def sizes_from_smallest(m, ratios: np.ndarray) -> np.ndarray:
    """Group sizes n_i = ceil(m · r_i / min r) for each smallest-group size in ``m``.

    ``ratios`` are already divided by their minimum; the result has shape
    ``(len(m), len(ratios))`` and integer dtype.
    """
    m = np.asarray(m, dtype=np.int64).reshape(-1, 1)
    raw = m * ratios.reshape(1, -1)
    return np.ceil(raw * (1 - _RATIO_SLACK)).astype(np.int64)


def is_equal(ratios: np.ndarray) -> bool:
    """True when every ratio equals the smallest (a balanced design)."""
    return bool(np.all(ratios == 1.0))


@dataclass(frozen=True)
class Evaluation:
    """Power of a design's test at rows of group sizes, with what a reviewer checks.

    ``noncentrality`` is the design's own effect parameter on its test's scale (λ of the
    noncentral F for F tests; designs with another test document what they put here).
    """

    power: np.ndarray
    df1: np.ndarray
    df2: np.ndarray
    noncentrality: np.ndarray
    critical_value: np.ndarray


class FTestDesign:
    """Default behaviour for designs tested by an F test with (df1, df2, λ) from ``test_at``.

    A design with another exact power function overrides ``evaluate`` and
    ``power_at_noncentrality``; the planning engine calls nothing else.
    """

    groups: int
    ratios: np.ndarray

    def test_at(self, sizes: np.ndarray) -> FTest:  # pragma: no cover - abstract
        raise NotImplementedError

    def smallest_unit(self) -> int:
        """The smallest size of the smallest group that leaves error df ≥ 1."""
        for m in (1, 2, 3):
            if self.test_at(sizes_from_smallest([m], self.ratios)).df2[0] >= 1:
                return m
        return 4

    def evaluate(self, sizes: np.ndarray, alpha: float) -> Evaluation:
        """Power of the level-α F test at each row of ``sizes``."""
        from ..distributions import f_critical_value, f_test_power

        test = self.test_at(sizes)
        crit = np.atleast_1d(f_critical_value(alpha, test.df1, test.df2))
        power = np.atleast_1d(f_test_power(alpha, test.df1, test.df2, test.noncentrality, critical=crit))
        return Evaluation(power, test.df1, test.df2, test.noncentrality, crit)

    def power_at_noncentrality(self, lam: np.ndarray, sizes_row: np.ndarray, alpha: float) -> np.ndarray:
        """Power at noncentrality ``lam`` (array) with the df of ``sizes_row``; for the detectable-effect solve."""
        from ..distributions import f_critical_value, f_test_power

        test = self.test_at(np.asarray(sizes_row).reshape(1, -1))
        crit = f_critical_value(alpha, test.df1[0], test.df2[0])
        return np.atleast_1d(f_test_power(alpha, test.df1[0], test.df2[0], lam, critical=crit))
