"""HTTP adapter for the one-way fixed-effects ANOVA: its schema and its reports."""

from __future__ import annotations

import functools
import math
import sys

import numpy as np
from marshmallow import ValidationError, validates_schema

from ...core.designs.base import is_equal, normalised_allocation
from ...core.designs.one_way import OneWayAnova, eta_squared_from_f, f_from_eta_squared
from ..fields import Bounded, StrictFloat, StrictInteger, StrictSchema, choice
from .common import (
    MAX_GROUPS,
    MEAN_BOUND,
    Layout,
    allocation_field,
    group_count,
    means_field,
    sd_field,
)

EFFECT_FIELDS = ("group_means", "cohens_f", "eta_squared", "min_range")
_EFFECT_SET = frozenset(EFFECT_FIELDS)
#: Largest Cohen's f accepted in any of its forms (power is 1 long before; beyond it the
#: noncentrality can exceed what the power computation represents, and it returns NaN).
MAX_COHENS_F = 10.0



_FEW_UNITS = ("The smallest group has {} units: with so few, the F test's "
              "robustness to non-normal errors and unequal variances is weak.")
_F_WITH_UNEQUAL_SIZES = ("Cohen's f was given directly with unequal group sizes: it is taken to describe the "
                         "design at these proportions (λ = N f²).")


_LARGEST = sys.float_info.max


@functools.cache
def _equal_ratios(k: int) -> np.ndarray:
    """normalised_allocation(None, k), built once per k: designs with equal allocation share
    it, so it is read-only (nothing writes into a design's ratios; a write would raise)."""
    ratios = np.ones(k)
    ratios.setflags(write=False)
    return ratios


def _ratios(allocation, k: int) -> np.ndarray:
    """normalised_allocation(allocation, k), the same array: for a validated allocation (a
    list of k positive finite floats) each ratio over the smallest in Python, one division
    each as numpy does it, instead of numpy's checks and dispatch on a few items. Anything
    else, and a quotient that overflows (numpy would warn), is left to normalised_allocation.
    """
    if allocation is None:
        return _equal_ratios(k)
    if type(allocation) is list and len(allocation) == k:
        for part in allocation:
            if type(part) is not float or not 0.0 < part <= _LARGEST:
                break
        else:
            smallest = min(allocation)
            ratios = [part / smallest for part in allocation]
            if max(ratios) <= _LARGEST:
                return np.array(ratios)
    return normalised_allocation(allocation, k)


#: Most groups whose SD of means is summed in Python: numpy's reduction adds fewer than 8
#: terms one after the other, as the loops below do; longer sums go pairwise, left to numpy.
_SEQUENTIAL_SUM_MAX = 7


def _sd_of_means(means: np.ndarray, ratios: np.ndarray) -> float:
    """σ_m = √(Σ w_i (μ_i − Σ w_j μ_j)²), w = ratios / Σ ratios, as
    ``np.sqrt(np.sum(w * (means - np.sum(w * means)) ** 2))`` gives it.

    Up to _SEQUENTIAL_SUM_MAX groups with means within MEAN_BOUND and ratios within it (no
    step can overflow, where numpy would warn and Python would not), in Python floats by the
    same IEEE operations in the same order (x**2 on an array is x·x; a short sum adds term
    by term): a few operations instead of numpy's dispatch on arrays of a few items.
    Otherwise numpy. Bit-for-bit equality is checked in tests/api/test_designs_one_way.py.
    """
    values, parts = means.tolist(), ratios.tolist()
    if 0 < len(values) <= _SEQUENTIAL_SUM_MAX and len(parts) == len(values) and max(parts) <= MEAN_BOUND:
        total = 0.0
        for part in parts:
            total += part
        weights, centre = [], 0.0
        for part, value in zip(parts, values):  # noqa: B905 (lengths checked above)
            if not -MEAN_BOUND <= value <= MEAN_BOUND:  # also refuses NaN
                break
            weight = part / total
            weights.append(weight)
            centre += weight * value
        else:
            spread = 0.0
            for weight, value in zip(weights, values):  # noqa: B905 (lengths checked above)
                gap = value - centre
                spread += weight * (gap * gap)
            return math.sqrt(spread)
    weights = ratios / ratios.sum()
    return float(np.sqrt(np.sum(weights * (means - np.sum(weights * means)) ** 2)))


class OneWayAnovaDesignSchema(StrictSchema):
    """One-way fixed-effects ANOVA: k group means compared by the omnibus F test."""

    type = choice(["one_way_anova"], required=True, metadata={"description": "Design family."})
    group_means = means_field("Expected mean of each group, in the units of the data (with `sd`).")
    sd = sd_field("Common within-group (error) standard deviation σ, in the units of the data.")
    cohens_f = StrictFloat(
        validate=Bounded(min=0, max=MAX_COHENS_F),
        metadata={"description": "Cohen's f = σ_m/σ, the SD of the group means over the error SD (with `groups`)."},
    )
    eta_squared = StrictFloat(
        validate=Bounded(min=0, max=0.99),
        metadata={"description": "Proportion of total variance explained by the groups, η² = f²/(1+f²) (with `groups`)."},
    )
    min_range = StrictFloat(
        validate=Bounded(min=0, max=MEAN_BOUND),
        metadata={"description": "Smallest difference between the extreme means worth detecting, in data units "
                                 "(with `sd` and `groups`); least-favourable configuration, equal allocation only."},
    )
    groups = StrictInteger(
        validate=Bounded(min=2, max=MAX_GROUPS),
        metadata={"description": "Number of groups k (implied by `group_means` or `group_sizes` when those are given)."},
    )
    allocation = allocation_field()

    @validates_schema
    def _one_effect(self, data, **kwargs):
        # Runs on every request: plain membership tests, the list only for the message.
        if len(_EFFECT_SET.intersection(data)) > 1:
            given = [name for name in EFFECT_FIELDS if name in data]
            raise ValidationError(
                f"give exactly one of {', '.join(EFFECT_FIELDS)} (got {', '.join(given)})", "_effect"
            )
        means = "group_means" in data
        if means and "groups" in data and data["groups"] != len(data["group_means"]):
            raise ValidationError(
                f"must equal the number of group_means ({len(data['group_means'])}) (got {data['groups']})",
                "groups",
            )
        if (means or "min_range" in data) and "sd" not in data:
            raise ValidationError("is required with group_means and with min_range", "sd")
        groups = len(data["group_means"]) if means else data.get("groups")
        if groups is not None and "allocation" in data and len(data["allocation"]) != groups:
            raise ValidationError(
                f"needs one ratio per group ({groups}) (got {len(data['allocation'])})", "allocation"
            )


class OneWayAnovaAdapter:
    """Turns validated one-way fields into a core design and its effect reports."""

    type = "one_way_anova"
    schema = OneWayAnovaDesignSchema
    method_id = OneWayAnova.method_id
    reference = OneWayAnova.reference
    title = "One-way ANOVA (fixed effects), omnibus F test"
    formula = (
        "df1 = k − 1, df2 = N − k, λ = Σ n_i(μ_i − μ̄_w)²/σ² = N f²; "
        "power = P(F'(df1, df2, λ) > F_crit(α))"
    )
    effect_fields = EFFECT_FIELDS
    #: Invented example for the catalogue and the simulation check: three curing times,
    #: means 61, 64, 66 MPa, SD 5 MPa (the README's scenario); power ≈ 0.55 at 12 per group.
    example = {"type": "one_way_anova", "groups": 3, "group_means": [61, 64, 66], "sd": 5}
    example_sizes = 12
    assumptions = (
        "Observations are independent, within and between groups.",
        "Within each group the response is normally distributed.",
        "Every group has the same error standard deviation σ.",
        "Fixed effects: the groups compared are exactly the groups of interest.",
        "The assumed effect is the true effect; power is only as good as that assumption.",
    )

    def groups_of(self, fields: dict, sizes_count: int | None) -> int:
        """k from the design fields, or from the number of group sizes."""
        return group_count(fields, sizes_count)

    def build(self, fields: dict, sizes_count: int | None) -> OneWayAnova:
        """The core design, for power and sample-size questions.

        The OneWayAnova constructors' designs (from_means, from_f), built here on the ratios
        of ``_ratios`` (equal ones shared) and the means array the effect check made.
        """
        if _EFFECT_SET.isdisjoint(fields):
            raise ValidationError(f"give exactly one of {', '.join(EFFECT_FIELDS)}", "design")
        k = self.groups_of(fields, sizes_count)
        allocation = fields.get("allocation")
        if "group_means" in fields:
            means = np.asarray(fields["group_means"], dtype=float)
            ratios = _ratios(allocation, k)
            self._check_means(means, ratios, fields.get("sd"))
            return OneWayAnova(groups=len(means), ratios=ratios, means=means, sd=float(fields["sd"]),
                               effect_source="group_means")
        if "min_range" in fields:
            self._check_range(fields, k)
        if "cohens_f" in fields:
            f, source = fields["cohens_f"], "cohens_f"
        elif "eta_squared" in fields:
            f, source = f_from_eta_squared(fields["eta_squared"]), "eta_squared"
        else:
            return OneWayAnova.from_min_range(fields["min_range"], fields["sd"], k, allocation)
        sd = fields.get("sd")
        return OneWayAnova(groups=k, ratios=_ratios(allocation, k), cohens_f=float(f),
                           sd=None if sd is None else float(sd), effect_source=source)

    @staticmethod
    def _check_means(means: np.ndarray, ratios: np.ndarray, sd) -> None:
        """Means and SD may not imply an f above MAX_COHENS_F."""
        sd_of_means = _sd_of_means(means, ratios)
        if sd_of_means > MAX_COHENS_F * sd:
            raise ValidationError(
                f"imply Cohen's f = σ_m/σ above {MAX_COHENS_F:g}: the SD of the means is "
                f"{sd_of_means:.6g} with sd {sd:.6g}; the SD of the means may be at most "
                f"{MAX_COHENS_F:g}·sd = {MAX_COHENS_F * sd:.6g}",
                "design.group_means",
            )

    @staticmethod
    def _check_range(fields: dict, k: int) -> None:
        """A range and SD may not imply an f above MAX_COHENS_F."""
        sd = fields.get("sd")
        limit = MAX_COHENS_F * sd * math.sqrt(2.0 * k)
        if fields["min_range"] > limit:
            raise ValidationError(
                f"implies Cohen's f = Δ/(σ√(2k)) above {MAX_COHENS_F:g}: with sd {sd:.6g} and {k} groups "
                f"it may be at most {limit:.6g} (got {fields['min_range']:.6g})",
                "design.min_range",
            )

    def layout(self, fields: dict, sizes_count: int | None) -> Layout:
        """Groups, allocation and SD, for the detectable-effect question."""
        given = [name for name in EFFECT_FIELDS if name in fields]
        if given:
            raise ValidationError(
                "is what detectable-effect solves for; leave the effect out of the design", f"design.{given[0]}"
            )
        k = self.groups_of(fields, sizes_count)
        probe = OneWayAnova(groups=k, ratios=_ratios(fields.get("allocation"), k), cohens_f=0.0)
        return Layout(design=probe, sd=fields.get("sd"))

    def effect_report(self, design: OneWayAnova, sizes: np.ndarray) -> dict:
        """Cohen's f, η² and, with an SD, the SD of the means, at the sizes used."""
        f = float(design.cohens_f_at(sizes.reshape(1, -1))[0])
        report = {"cohens_f": f, "eta_squared": float(eta_squared_from_f(f))}
        if design.sd is not None:
            report["sd_of_means"] = f * design.sd
        if design.means is not None:
            report["range_of_means"] = float(np.ptp(design.means))
        return report

    def effect_columns(self, designs: list, sizes: np.ndarray, noncentrality: np.ndarray) -> list[tuple]:
        """``effect_report`` for many rows at once, as columns: f = √(λ / N) from each row's λ.

        ``noncentrality`` is the λ the power evaluation found at these sizes, the value
        ``cohens_f_at`` computes again. Rows whose designs give the same members form a
        shape: (its row indices, its member names, a float64 column per member).
        """
        f = np.sqrt(noncentrality / sizes.sum(axis=1).astype(float))
        eta = eta_squared_from_f(f)
        kinds: dict[int, tuple[int, float, float]] = {}  # id(design) → (shape, sd, range of means)
        shapes: dict[int, list[int]] = {}
        sd, spread = [], []
        for i, design in enumerate(designs):
            kind = kinds.get(id(design))
            if kind is None:
                means = design.means
                # max − min is np.ptp's own definition (the same float)
                kind = kinds[id(design)] = ((design.sd is not None) + 2 * (means is not None),
                                            0.0 if design.sd is None else design.sd,
                                            0.0 if means is None else float(means.max() - means.min()))
            shapes.setdefault(kind[0], []).append(i)
            sd.append(kind[1])
            spread.append(kind[2])
        out = []
        for code, rows in sorted(shapes.items()):
            whole = len(shapes) == 1  # every row: the columns as they are, no indexing
            index = np.arange(len(designs)) if whole else np.array(rows)
            names, columns = ["cohens_f", "eta_squared"], [f, eta]
            if code & 1:  # with the SD: the SD of the means, f·σ (the same product as effect_report's)
                names.append("sd_of_means")
                columns.append(f * np.array(sd, dtype=float))
            if code & 2:
                names.append("range_of_means")
                columns.append(np.array(spread, dtype=float))
            out.append((index, tuple(names), columns if whole else [column[index] for column in columns]))
        return out

    def effect_reports(self, designs: list, sizes: np.ndarray, noncentrality: np.ndarray) -> list[dict]:
        """``effect_report`` for many rows at once (the dicts of ``effect_columns``, same numbers).

        One row (a single request) in Python floats: the same IEEE operations on the same
        values (sqrt is correctly rounded in both), without the arrays' set-up.
        """
        if len(designs) == 1:
            design = designs[0]
            f = math.sqrt(float(noncentrality[0]) / float(sum(sizes[0].tolist())))
            report = {"cohens_f": f, "eta_squared": float(eta_squared_from_f(f))}
            if design.sd is not None:
                report["sd_of_means"] = f * design.sd
            if design.means is not None:
                report["range_of_means"] = float(design.means.max() - design.means.min())
            return [report]
        out: list = [None] * len(designs)
        for index, names, columns in self.effect_columns(designs, sizes, noncentrality):
            for row, values in zip(index.tolist(), zip(*(c.tolist() for c in columns), strict=True), strict=True):
                out[row] = dict(zip(names, values, strict=True))
        return out

    def warnings_rows(self, designs: list, sizes: np.ndarray) -> list[list[str]]:
        """``warnings`` for many rows at once (the tests on sizes in one array pass; one row in Python)."""
        if len(designs) == 1:
            row = sizes[0].tolist()
            least = min(row)
            smallest, unequal = [least], [any(size != least for size in row)]
        else:
            least_of = sizes.min(axis=1)
            smallest, unequal = least_of.tolist(), (sizes != least_of[:, None]).any(axis=1).tolist()
        out = []
        for design, least, uneven in zip(designs, smallest, unequal, strict=True):
            found = []
            if least < 5:
                found.append(_FEW_UNITS.format(least))
            if uneven and design is not None and design.means is None:
                found.append(_F_WITH_UNEQUAL_SIZES)
            out.append(found)
        return out

    def detectable_report(self, layout: Layout, sizes: np.ndarray, noncentrality: float) -> dict:
        """The detectable effect in f, η² and, with an SD, in data units."""
        n_total = float(sizes.sum())
        f = math.sqrt(noncentrality / n_total)
        report = {"cohens_f": f, "eta_squared": float(eta_squared_from_f(f))}
        if layout.sd is not None:
            report["sd_of_means"] = f * layout.sd
            if is_equal(sizes / sizes.min()):
                report["min_range"] = f * layout.sd * math.sqrt(2 * len(sizes))
        return report

    def warnings(self, design, sizes: np.ndarray) -> list[str]:
        out = []
        if sizes.min() < 5:
            out.append(_FEW_UNITS.format(int(sizes.min())))
        if not is_equal(sizes / sizes.min()) and design is not None and design.means is None:
            out.append(_F_WITH_UNEQUAL_SIZES)
        return out
