"""Bounds and pieces shared by the design adapters."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from marshmallow import ValidationError

from ..fields import Bounded, BoundedList, StrictFloat

#: Most groups a one-way layout may have.
MAX_GROUPS = 100
#: Largest absolute mean or difference accepted, in data units.
MEAN_BOUND = 1e12
#: Largest SD accepted, in data units.
SD_BOUND = 1e12
#: Largest ratio between the biggest and the smallest allocation entry.
MAX_ALLOCATION_SPREAD = 1000.0


@dataclass(frozen=True)
class Layout:
    """A design without an effect: what detectable-effect needs."""

    design: Any
    sd: float | None


def _spread_ok(ratios: list[float]) -> None:
    # Relative slack: [1e-6, 1e-3] has the ratio 1000.0000000000001 in floating point.
    if max(ratios) / min(ratios) > MAX_ALLOCATION_SPREAD * (1 + 1e-12):
        raise ValidationError(
            f"largest ratio may be at most {MAX_ALLOCATION_SPREAD:g} times the smallest "
            f"(got {max(ratios) / min(ratios):.6g})"
        )


def means_field(description: str, *, min_items: int = 2, max_items: int = MAX_GROUPS) -> BoundedList:
    """Expected means, one per group or level, each within ±MEAN_BOUND data units."""
    return BoundedList(
        StrictFloat(validate=Bounded(min=-MEAN_BOUND, max=MEAN_BOUND)),
        min_items=min_items, max_items=max_items, metadata={"description": description},
    )


def sd_field(description: str) -> StrictFloat:
    """A standard deviation in data units: positive, at most SD_BOUND."""
    return StrictFloat(
        validate=Bounded(min=0, max=SD_BOUND, min_inclusive=False), metadata={"description": description}
    )


def allocation_field(min_items: int = 2, max_items: int = MAX_GROUPS) -> BoundedList:
    """Positive allocation ratios, one per group (default: equal)."""
    return BoundedList(
        StrictFloat(validate=Bounded(min=0, max=1e6, min_inclusive=False)),
        min_items=min_items,
        max_items=max_items,
        validate=[_spread_ok],
        metadata={
            "description": "Relative group sizes, one positive ratio per group (default equal). "
            f"Sizes are n_i = ceil(m·r_i/min r); the largest ratio is at most {MAX_ALLOCATION_SPREAD:g}× the smallest."
        },
    )


def group_count(fields: dict, sizes_count: int | None, most: int | None = None) -> int:
    """k from the design fields (group_means, groups, allocation) or else the number of group
    sizes: at least 2 (at most ``most`` when given) and equal to the number of sizes, if any."""
    if "group_means" in fields:
        k = len(fields["group_means"])
    elif "groups" in fields:
        k = fields["groups"]
    elif "allocation" in fields:
        k = len(fields["allocation"])
    elif sizes_count is not None:
        k = sizes_count
    else:
        raise ValidationError("is required (or give group_means, allocation or group_sizes)", "design.groups")
    if most is not None:
        if not 2 <= k <= most:
            raise ValidationError(f"must have between 2 and {most} entries (got {k})", "group_sizes")
    elif k < 2:  # only group_sizes can imply a single group; the design fields need two
        raise ValidationError(f"needs at least 2 groups to compare (got {k} size)", "group_sizes")
    if sizes_count is not None and sizes_count != k:
        raise ValidationError(f"needs one size per group ({k}) (got {sizes_count})", "group_sizes")
    return k
