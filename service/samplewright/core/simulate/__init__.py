"""Seeded Monte Carlo power: run the actual test on generated data, many times.

For any registered design, ``simulate`` draws ``replicates`` data sets of the planned
sizes, computes the real test statistic on each (vectorised with numpy), and reports the
rejection rate with its Monte Carlo standard error √(p(1 − p)/R) and a 95 % Wilson score
interval (Wilson, JASA 22, 1927). Errors can be drawn from a normal, a heavy-tailed or a
skewed distribution, each standardised to mean 0 and SD 1 and then scaled by the
design's SD, so a planner can see how the nominal power holds when normality fails.

A design registers its simulator with ``@simulator(DesignClass)``; the function receives
``(design, sizes, alpha, replicates, draw)`` where ``draw(shape)`` returns standardised
errors, and returns a boolean array of rejections of length ``replicates``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..errors import InvalidParameter

ERROR_DISTRIBUTIONS = ("normal", "heavy_tailed", "skewed")
#: Degrees of freedom of the heavy-tailed t errors (finite variance, kurtosis 6 + 3 = 9... see _draw).
HEAVY_TAIL_DF = 5
#: Shape of the skewed (gamma) errors: skewness 2/√shape ≈ 1.41.
SKEW_SHAPE = 2.0
#: Largest replicates × total units one call may generate.
MAX_WORK = 20_000_000
MAX_REPLICATES = 200_000
DEFAULT_REPLICATES = 4_000
#: Replicates are generated in chunks so memory stays bounded (≈ 8 bytes × CHUNK_UNITS).
CHUNK_UNITS = 2_000_000

Simulator = Callable[..., np.ndarray]
_SIMULATORS: dict[type, Simulator] = {}


def simulator(design_cls: type) -> Callable[[Simulator], Simulator]:
    """Register the Monte Carlo test of ``design_cls``."""

    def register(fn: Simulator) -> Simulator:
        _SIMULATORS[design_cls] = fn
        return fn

    return register


def has_simulator(design) -> bool:
    return type(design) in _SIMULATORS


@dataclass(frozen=True)
class SimulationResult:
    """Empirical power of the real test, with its Monte Carlo uncertainty."""

    power: float
    standard_error: float
    interval_low: float
    interval_high: float
    rejections: int
    replicates: int
    seed: int
    error_distribution: str


def standardised_errors(rng: np.random.Generator, shape: tuple[int, ...], distribution: str) -> np.ndarray:
    """Errors with mean 0 and SD 1 from the named distribution.

    * ``normal``: standard normal.
    * ``heavy_tailed``: Student t with 5 df divided by √(5/3), its SD.
    * ``skewed``: gamma with shape 2, centred and divided by √2 (skewness ≈ 1.41).
    """
    if distribution == "normal":
        return rng.standard_normal(shape)
    if distribution == "heavy_tailed":
        return rng.standard_t(HEAVY_TAIL_DF, shape) / math.sqrt(HEAVY_TAIL_DF / (HEAVY_TAIL_DF - 2))
    if distribution == "skewed":
        return (rng.standard_gamma(SKEW_SHAPE, shape) - SKEW_SHAPE) / math.sqrt(SKEW_SHAPE)
    raise InvalidParameter("error_distribution", distribution, f"must be one of {list(ERROR_DISTRIBUTIONS)}")


def wilson_interval(rejections: int, replicates: int, z: float = 1.959963984540054) -> tuple[float, float]:
    """95 % Wilson score interval for a binomial proportion (Wilson 1927)."""
    p = rejections / replicates
    denom = 1 + z * z / replicates
    centre = (p + z * z / (2 * replicates)) / denom
    half = z * math.sqrt(p * (1 - p) / replicates + z * z / (4 * replicates * replicates)) / denom
    return max(0.0, centre - half), min(1.0, centre + half)


def simulate(design, *, sizes, alpha: float, replicates: int = DEFAULT_REPLICATES, seed: int = 0,
             error_distribution: str = "normal") -> SimulationResult:
    """Empirical power of ``design``'s test at ``sizes`` over ``replicates`` seeded data sets."""
    fn = _SIMULATORS.get(type(design))
    if fn is None:
        raise InvalidParameter("design.type", type(design).__name__, "has no simulator")
    if error_distribution not in ERROR_DISTRIBUTIONS:
        raise InvalidParameter("error_distribution", error_distribution, f"must be one of {list(ERROR_DISTRIBUTIONS)}")
    if not 1 <= replicates <= MAX_REPLICATES:
        raise InvalidParameter("replicates", replicates, f"must be between 1 and {MAX_REPLICATES}")
    sizes = np.asarray(sizes, dtype=np.int64)
    units = int(sizes.sum())
    if replicates * units > MAX_WORK:
        raise InvalidParameter(
            "replicates", replicates,
            f"replicates × total units ({replicates} × {units}) exceeds the budget of {MAX_WORK}",
        )
    rng = np.random.default_rng(seed)

    def draw(shape: tuple[int, ...]) -> np.ndarray:
        return standardised_errors(rng, shape, error_distribution)

    chunk = max(1, CHUNK_UNITS // max(units, 1))
    rejections = 0
    done = 0
    while done < replicates:
        r = min(chunk, replicates - done)
        rejections += int(np.count_nonzero(fn(design, sizes, alpha, r, draw)))
        done += r
    p = rejections / replicates
    low, high = wilson_interval(rejections, replicates)
    return SimulationResult(
        power=p,
        standard_error=math.sqrt(p * (1 - p) / replicates),
        interval_low=low,
        interval_high=high,
        rejections=rejections,
        replicates=replicates,
        seed=seed,
        error_distribution=error_distribution,
    )


from . import one_way  # noqa: E402,F401  (registers the built-in simulators)
