"""``POST /v1/simulate``: a seeded Monte Carlo run of the actual test, beside the analytic power.

The request is a power request (``alpha``, ``n_per_group`` | ``group_sizes``, ``design``)
plus ``replicates``, ``seed`` and ``error_distribution``. The analytic power comes from
the same power operation ``POST /v1/power`` runs; the empirical power from
``core.simulate`` on the same core design and the same group sizes, so the two answer the
same question and their difference, in Monte Carlo standard errors, is a check of the
formula (or, with non-normal errors, of the test's robustness).

An adapter whose analytic power is a published approximation rather than the exact power
of the test (Welch's ANOVA, the ANCOVA with a random covariate) sets
``approximation_tolerance``: the largest absolute difference between its analytic power
and the exact power that its method documents, e.g. ``0.01``. It is echoed here as
``analytic_approximation_tolerance`` and lets the agreement test accept
|empirical − analytic| ≤ tolerance + 4 SE; exact methods leave it unset (None).
"""

from __future__ import annotations

import math

import numpy as np
from marshmallow import Schema, ValidationError, fields

from ..core import simulate as mc
from ..core.errors import InvalidParameter, show
from . import operations
from .designs import ADAPTERS
from .fields import Bounded, StrictInteger, choice
from .problems import validation_problem
from .provenance import provenance
from .schemas import MethodSchema, PowerRequestSchema

METHOD_ID = "simulation.monte_carlo"
REFERENCE = (
    "Monte Carlo rejection rate of the test on data generated under the design; interval: "
    "Wilson, E. B. (1927) Probable inference, the law of succession, and statistical inference, "
    "Journal of the American Statistical Association 22, 209–212"
)
INTERVAL_METHOD = "wilson_score"
_POWER_KEYS = ("alpha", "n_per_group", "group_sizes", "design")

_DISTRIBUTION_WORDS = {
    "normal": "normal errors",
    "heavy_tailed": f"Student t errors with {mc.HEAVY_TAIL_DF} df (heavy tails), scaled to the stated SD",
    "skewed": f"gamma errors of shape {mc.SKEW_SHAPE:g} (right-skewed, skewness ≈ "
              f"{2 / math.sqrt(mc.SKEW_SHAPE):.2f}), centred and scaled to the stated SD",
}


class _ExactBounded(Bounded):
    """Integer bounds stated in full (``Bounded`` writes 4294967295 as 4.29497e+09)."""

    def __call__(self, value):
        if not self.min <= value <= self.max:
            raise ValidationError(f"must be an integer between {self.min} and {self.max} (got {show(value)})")
        return value


class SimulateRequestSchema(PowerRequestSchema):
    """Seeded Monte Carlo power of a planned design at given group sizes."""

    replicates = StrictInteger(
        validate=Bounded(min=mc.MIN_REPLICATES, max=mc.MAX_REPLICATES),
        metadata={
            "description": f"Number of simulated data sets (default {mc.DEFAULT_REPLICATES}, lowered to fit "
            f"the work budget for large designs). replicates × values per replicate (the total number of "
            f"units, or more for designs that draw several values per unit) must not exceed {mc.MAX_WORK}.",
        },
    )
    seed = StrictInteger(
        load_default=0,
        validate=_ExactBounded(min=0, max=mc.MAX_SEED),
        metadata={"description": "Seed of the random generator; the same seed and inputs give the same "
                                 "result.", "default": 0},
    )
    error_distribution = choice(
        list(mc.ERROR_DISTRIBUTIONS),
        load_default="normal",
        metadata={
            "description": "Distribution of the errors, standardised to mean 0 and the design's SD: "
            f"`normal`; `heavy_tailed` (Student t, {mc.HEAVY_TAIL_DF} df); `skewed` "
            f"(gamma, shape {mc.SKEW_SHAPE:g}).",
            "default": "normal",
        },
    )


SIMULATE_REQUEST = SimulateRequestSchema()


# -- response (documentation and contract tests) ----------------------------------------


class IntervalSchema(Schema):
    low = fields.Float(required=True)
    high = fields.Float(required=True)
    level = fields.Float(required=True, metadata={"description": "Coverage of the interval (0.95)."})
    method = fields.String(required=True, metadata={"enum": [INTERVAL_METHOD]})


class SimulateResponseSchema(Schema):
    """The empirical power of the real test, its Monte Carlo error, and the analytic power beside it."""

    power = fields.Float(required=True, metadata={"description": "Empirical power: rejections / replicates."})
    standard_error = fields.Float(
        required=True, metadata={"description": "Monte Carlo standard error √(p̂(1 − p̂)/R) of the empirical power."}
    )
    interval = fields.Nested(IntervalSchema, required=True,
                             metadata={"description": "95 % Wilson score interval for the power."})
    rejections = fields.Integer(required=True)
    replicates = fields.Integer(required=True, metadata={"description": "Replicates used."})
    seed = fields.Integer(required=True, metadata={"description": "Seed used."})
    error_distribution = fields.String(required=True, metadata={"enum": list(mc.ERROR_DISTRIBUTIONS)})
    values_per_replicate = fields.Integer(
        required=True, metadata={"description": "Random values drawn per replicate (counts toward the budget)."}
    )
    analytic_power = fields.Float(
        required=True, metadata={"description": "Power from the design's formula (as POST /v1/power)."}
    )
    analytic_method = fields.Nested(MethodSchema, required=True)
    analytic_approximation_tolerance = fields.Float(
        required=True, allow_none=True,
        metadata={"description": "Documented error of the analytic power when it is an approximation; "
                                 "null when it is exact for normal errors."},
    )
    difference = fields.Float(required=True, metadata={"description": "Empirical minus analytic power."})
    difference_in_se = fields.Float(
        required=True,
        metadata={"description": "The difference divided by the Monte Carlo SE at the analytic power, "
                                 "√(a(1 − a)/R) (the empirical SE when that is 0); |value| > 4 is a real "
                                 "disagreement for normal errors."},
    )
    alpha = fields.Float(required=True)
    design_type = fields.String(required=True, metadata={"enum": sorted(ADAPTERS)})
    group_sizes = fields.List(fields.Integer(), required=True)
    n_total = fields.Integer(required=True)
    method = fields.Nested(MethodSchema, required=True)
    warnings = fields.List(fields.String(), required=True)
    cautions = fields.List(fields.String(), required=True)
    provenance = fields.Dict(
        required=True,
        metadata={"description": "Versions, method and the digest of the validated request (replicates "
                                 "filled in), as on the other computation routes."},
    )


def _difference_in_se(empirical: float, analytic: float, replicates: int, empirical_se: float) -> float:
    """(p̂ − a) / √(a(1 − a)/R); the empirical SE when a is 0 or 1, the largest SE 0.5/√R when both vanish."""
    diff = empirical - analytic
    se = math.sqrt(max(analytic * (1.0 - analytic), 0.0) / replicates) or empirical_se
    if se == 0.0:
        return 0.0 if diff == 0.0 else diff / (0.5 / math.sqrt(replicates))
    return diff / se


def _load(body: dict) -> dict:
    try:
        return SIMULATE_REQUEST.load(body)
    except ValidationError as exc:
        raise validation_problem(exc.messages) from None


def simulate(body: dict) -> dict:
    """POST /v1/simulate."""
    req = _load(body)
    analytic = operations.power({key: body[key] for key in _POWER_KEYS if key in body})
    adapter = ADAPTERS[req["design"]["type"]]
    sizes = np.asarray(analytic["group_sizes"], dtype=np.int64)
    design = adapter.build(req["design"], len(sizes) if "group_sizes" in req else None)
    if not mc.has_simulator(design):
        raise InvalidParameter("design.type", adapter.type, "has no simulator yet")

    warnings = list(analytic["warnings"])
    if "replicates" in req:
        replicates = req["replicates"]
    else:
        replicates = min(mc.DEFAULT_REPLICATES, mc.max_replicates(design, sizes))
        if replicates < mc.DEFAULT_REPLICATES:
            warnings.append(
                f"replicates lowered from the default {mc.DEFAULT_REPLICATES} to {replicates} to stay within "
                f"the work budget ({mc.MAX_WORK} values); the Monte Carlo error is correspondingly larger."
            )
        replicates = max(replicates, mc.MIN_REPLICATES)  # below the minimum, check_budget names replicates

    result = mc.simulate(design, sizes=sizes, alpha=req["alpha"], replicates=replicates, seed=req["seed"],
                         error_distribution=req["error_distribution"])
    a = float(analytic["power"])
    tolerance = getattr(adapter, "approximation_tolerance", None)
    cautions = [
        f"Monte Carlo estimate from {result.replicates} replicates: the true power of the test under these "
        f"inputs lies within about ±{2 * result.standard_error:.2g} (2 SE) of it; use more replicates or "
        "another seed to see the spread.",
    ]
    if result.error_distribution != "normal":
        cautions.append(
            f"Data were simulated with {_DISTRIBUTION_WORDS[result.error_distribution]}, while the analytic "
            "power assumes normal errors: the difference measures the test's sensitivity to that departure, "
            "not an error in the formula."
        )
    if tolerance is not None:
        cautions.append(
            f"The analytic power of this design is an approximation documented to within about "
            f"{tolerance:g} of the exact power; the simulation is the exact check."
        )
    cautions.extend(operations.CAUTIONS)
    return {
        "power": result.power,
        "standard_error": result.standard_error,
        "interval": {"low": result.interval_low, "high": result.interval_high, "level": 0.95,
                     "method": INTERVAL_METHOD},
        "rejections": result.rejections,
        "replicates": result.replicates,
        "seed": result.seed,
        "error_distribution": result.error_distribution,
        "values_per_replicate": result.values_per_replicate,
        "analytic_power": a,
        "analytic_method": analytic["method"],
        "analytic_approximation_tolerance": None if tolerance is None else float(tolerance),
        "difference": result.power - a,
        "difference_in_se": _difference_in_se(result.power, a, result.replicates, result.standard_error),
        "alpha": req["alpha"],
        "design_type": adapter.type,
        "group_sizes": [int(v) for v in sizes],
        "n_total": int(sizes.sum()),
        "method": {"id": METHOD_ID, "reference": REFERENCE},
        "warnings": warnings,
        "cautions": cautions,
        "provenance": provenance(METHOD_ID, REFERENCE, {**req, "replicates": result.replicates}),
    }
