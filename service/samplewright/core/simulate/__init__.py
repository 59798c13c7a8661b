"""Seeded Monte Carlo power: run the actual test on generated data, many times.

For any registered design, ``simulate`` draws ``replicates`` data sets of the planned
sizes, computes the real test statistic on each (vectorised with numpy), and reports the
rejection rate p̂ with its Monte Carlo standard error √(p̂(1 − p̂)/R) and a 95 % Wilson
score interval (Wilson, E. B. (1927), "Probable inference, the law of succession, and
statistical inference", *Journal of the American Statistical Association* 22, 209–212).
Errors can be drawn from a normal, a heavy-tailed or a skewed distribution, each
standardised to mean 0 and SD 1 and then scaled by the design's SD, so a planner can see
how the nominal power holds when normality fails.

Registering a simulator
-----------------------
A design module registers its Monte Carlo test with ``@simulator(DesignClass)``; the
function receives ``(design, sizes, alpha, replicates, draw)``, where ``sizes`` is the
integer array of group sizes the analytic power uses and ``draw(shape)`` returns
standardised errors (mean 0, SD 1; multiply by the design's SD), and returns a boolean
array of rejections of length ``replicates``. It must take every random number from
``draw`` (or ``draw_normal`` for quantities that stay normal whatever the error
distribution, such as a covariate), so that a seed reproduces the run.

Work is ``replicates × values per replicate``; by default the values per replicate are
the total number of units, ``sizes.sum()``. A design that draws more per unit (one value
per level and subject in a repeated-measures layout, covariates besides the errors)
declares it: ``@simulator(DesignClass, values_per_replicate=lambda design, sizes: ...)``.
The budget ``MAX_WORK`` is checked before anything is drawn, replicates are generated in
chunks of at most ``CHUNK_VALUES`` values so memory stays bounded, and a run that draws
more than ``HARD_CAP`` values in all (a simulator whose declaration is wrong) stops with
an error instead of running on.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..errors import InvalidParameter

ERROR_DISTRIBUTIONS = ("normal", "heavy_tailed", "skewed")
#: Degrees of freedom of the heavy-tailed Student t errors: variance 5/3, excess kurtosis
#: 6/(5 − 4) = 6, so the tails are much heavier than the normal's while the SD is finite.
HEAVY_TAIL_DF = 5
#: Shape of the skewed (gamma) errors: skewness 2/√shape ≈ 1.41, excess kurtosis 6/shape = 3.
SKEW_SHAPE = 2.0
#: Largest replicates × values per replicate one call may generate. Measured on one core:
#: 40–60 ns per value drawn and tested (one-way F), so a full budget takes about 0.5 s.
MAX_WORK = 10_000_000
#: Hard ceiling on the values a run may draw, whatever a simulator declared.
HARD_CAP = 2 * MAX_WORK
MIN_REPLICATES = 100
MAX_REPLICATES = 200_000
#: Replicates when the request gives none (lowered to fit the budget for large designs):
#: Monte Carlo SE at most 0.008, and a few milliseconds for a design of a hundred units.
DEFAULT_REPLICATES = 4_000
#: Seeds are 0 … 2³² − 1 (numpy's SeedSequence takes any non-negative integer; a bound
#: keeps a 4,000-digit seed from reaching it).
MAX_SEED = 2**32 - 1
#: Replicates are generated in chunks of at most this many values (≈ 8 bytes each).
CHUNK_VALUES = 2_000_000
#: Kept for simulators that read the old name.
CHUNK_UNITS = CHUNK_VALUES
#: Two-sided 95 % standard normal quantile, Φ⁻¹(0.975).
Z_95 = 1.959963984540054

Simulator = Callable[..., np.ndarray]
ValuesPerReplicate = Callable[..., int]
_SIMULATORS: dict[type, Simulator] = {}
_VALUES_PER_REPLICATE: dict[type, ValuesPerReplicate] = {}


def simulator(design_cls: type, *, values_per_replicate: ValuesPerReplicate | None = None
              ) -> Callable[[Simulator], Simulator]:
    """Register the Monte Carlo test of ``design_cls`` (see the module docstring)."""

    def register(fn: Simulator) -> Simulator:
        _SIMULATORS[design_cls] = fn
        if values_per_replicate is not None:
            _VALUES_PER_REPLICATE[design_cls] = values_per_replicate
        return fn

    return register


def has_simulator(design) -> bool:
    """True when ``design``'s class has a registered simulator."""
    return type(design) in _SIMULATORS


def values_per_replicate(design, sizes) -> int:
    """Random values one replicate of ``design`` at ``sizes`` draws (≥ 1)."""
    sizes = np.asarray(sizes, dtype=np.int64)
    declared = _VALUES_PER_REPLICATE.get(type(design))
    count = int(declared(design, sizes)) if declared is not None else int(sizes.sum())
    return max(1, count)


def max_replicates(design, sizes) -> int:
    """Most replicates the work budget allows for ``design`` at ``sizes`` (capped at MAX_REPLICATES)."""
    return min(MAX_REPLICATES, MAX_WORK // values_per_replicate(design, sizes))


@dataclass(frozen=True)
class SimulationResult:
    """Empirical power of the real test, with its Monte Carlo uncertainty and the inputs used."""

    power: float
    standard_error: float
    interval_low: float
    interval_high: float
    rejections: int
    replicates: int
    seed: int
    error_distribution: str
    values_per_replicate: int = 0


def standardised_errors(rng: np.random.Generator, shape: tuple[int, ...], distribution: str) -> np.ndarray:
    """Errors with mean 0 and SD 1 from the named distribution.

    * ``normal``: standard normal.
    * ``heavy_tailed``: Student t with 5 df divided by √(5/3), its SD (excess kurtosis 6).
    * ``skewed``: gamma with shape 2 (mean 2, variance 2), centred and divided by √2
      (skewness 2/√2 ≈ 1.41, a long right tail).
    """
    if distribution == "normal":
        return rng.standard_normal(shape)
    if distribution == "heavy_tailed":
        return rng.standard_t(HEAVY_TAIL_DF, shape) / math.sqrt(HEAVY_TAIL_DF / (HEAVY_TAIL_DF - 2))
    if distribution == "skewed":
        return (rng.standard_gamma(SKEW_SHAPE, shape) - SKEW_SHAPE) / math.sqrt(SKEW_SHAPE)
    raise InvalidParameter("error_distribution", distribution, f"must be one of {list(ERROR_DISTRIBUTIONS)}")


def wilson_interval(rejections: int, replicates: int, z: float = Z_95) -> tuple[float, float]:
    """Wilson score interval for a binomial proportion (Wilson 1927).

    With p̂ = x/R: centre (p̂ + z²/2R)/(1 + z²/R), half-width
    z√(p̂(1 − p̂)/R + z²/4R²)/(1 + z²/R). Unlike p̂ ± z·SE it stays inside [0, 1] and
    does not collapse to a point when every replicate rejects (power near 1).
    """
    if not 0 <= rejections <= replicates or replicates < 1:
        raise InvalidParameter("rejections", rejections, f"must be between 0 and replicates ({replicates})")
    p = rejections / replicates
    denom = 1 + z * z / replicates
    centre = (p + z * z / (2 * replicates)) / denom
    half = z * math.sqrt(p * (1 - p) / replicates + z * z / (4 * replicates * replicates)) / denom
    return max(0.0, centre - half), min(1.0, centre + half)


def check_budget(design, sizes, replicates: int) -> int:
    """Raise unless ``replicates`` runs of ``design`` at ``sizes`` fit the work budget; values per replicate."""
    if isinstance(replicates, bool) or not isinstance(replicates, int | np.integer):
        raise InvalidParameter("replicates", replicates, "must be an integer")
    if not MIN_REPLICATES <= replicates <= MAX_REPLICATES:
        raise InvalidParameter("replicates", replicates, f"must be between {MIN_REPLICATES} and {MAX_REPLICATES}")
    values = values_per_replicate(design, sizes)
    if replicates * values > MAX_WORK:
        allowed = MAX_WORK // values
        advice = (
            f"use at most {allowed} replicates" if allowed >= MIN_REPLICATES
            else f"it does even at the minimum of {MIN_REPLICATES} replicates; simulate fewer units"
        )
        raise InvalidParameter(
            "replicates", replicates,
            f"replicates × values per replicate ({replicates} × {values} = {replicates * values}) "
            f"exceeds the work budget of {MAX_WORK}; {advice}",
        )
    return values


def simulate(design, *, sizes, alpha: float, replicates: int = DEFAULT_REPLICATES, seed: int = 0,
             error_distribution: str = "normal") -> SimulationResult:
    """Empirical power of ``design``'s test at ``sizes`` over ``replicates`` seeded data sets.

    Parameters
    ----------
    design:
        A core design whose class has a registered simulator.
    sizes:
        Group sizes (validated by the planning engine's ``check_sizes`` / ``sizes_for``).
    alpha:
        Significance level of the simulated test.
    replicates:
        Number of simulated data sets, ``MIN_REPLICATES`` … ``MAX_REPLICATES``, with
        ``replicates × values_per_replicate(design, sizes) ≤ MAX_WORK``.
    seed:
        0 … ``MAX_SEED``; the same seed, inputs and replicates give the same result.
    error_distribution:
        One of ``ERROR_DISTRIBUTIONS``.

    Returns
    -------
    SimulationResult
        p̂ = rejections / R, its SE √(p̂(1 − p̂)/R), the 95 % Wilson interval, and the
        inputs used.
    """
    fn = _SIMULATORS.get(type(design))
    if fn is None:
        raise InvalidParameter("design.type", type(design).__name__, "has no simulator")
    if error_distribution not in ERROR_DISTRIBUTIONS:
        raise InvalidParameter("error_distribution", error_distribution, f"must be one of {list(ERROR_DISTRIBUTIONS)}")
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or not 0 <= seed <= MAX_SEED:
        raise InvalidParameter("seed", seed, f"must be an integer between 0 and {MAX_SEED}")
    sizes = np.asarray(sizes, dtype=np.int64)
    values = check_budget(design, sizes, replicates)
    rng = np.random.default_rng(int(seed))
    drawn = 0

    def _account(shape) -> tuple[int, ...]:
        nonlocal drawn
        shape = tuple(int(s) for s in np.atleast_1d(shape))
        drawn += math.prod(shape)
        if drawn > HARD_CAP:
            raise InvalidParameter(
                "replicates", replicates,
                f"the simulation drew more than {HARD_CAP} random values (more than this design declares); "
                "lower replicates",
            )
        return shape

    def draw(shape) -> np.ndarray:
        return standardised_errors(rng, _account(shape), error_distribution)

    def draw_normal(shape) -> np.ndarray:
        return rng.standard_normal(_account(shape))

    draw.normal = draw_normal  # type: ignore[attr-defined]

    chunk = max(1, CHUNK_VALUES // values)
    rejections = 0
    done = 0
    while done < replicates:  # at most ceil(replicates / chunk) ≤ MAX_REPLICATES passes
        r = min(chunk, replicates - done)
        rejected = np.asarray(fn(design, sizes, alpha, r, draw))
        if rejected.shape != (r,):
            raise RuntimeError(f"simulator for {type(design).__name__} returned shape {rejected.shape}, not ({r},)")
        rejections += int(np.count_nonzero(rejected))
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
        seed=int(seed),
        error_distribution=error_distribution,
        values_per_replicate=values,
    )


from . import one_way  # noqa: E402,F401,I001  (registers the built-in simulators; one line per module, appended)
from . import f_family  # noqa: E402,F401  (factorial, random effects, ANCOVA, repeated measures, Welch)
from . import t_family  # noqa: E402,F401  (two-sample, one-sample, paired t, contrast, pairwise comparisons)
