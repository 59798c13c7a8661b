"""Power curves and what-if grids (``POST /v1/power-curve``, ``POST /v1/power-grid``), and their charts.

A curve is a power request whose size or effect is a range; every point is exactly the
answer of ``POST /v1/power`` for that size or effect (the points are computed by the same
engine, ``batch.answer_many``, as single requests), and the smallest size reaching a
``target_power`` is exactly the answer of ``POST /v1/sample-size``. A grid crosses sizes
with effects, so a reviewer sees how the answer moves when the assumed effect is off.

Varying the effect: a design whose effect is one number (Cohen's f, d, a variance ratio,
…) has that number varied over the range; a design whose effect is a set of means (group,
level or cell means) has the *differences* scaled: each mean becomes c + s·(μ − c), c the
plain average of the means given, for multipliers s in the range (s = 1: as assumed;
λ grows as s²).

With ``Accept: image/svg+xml`` or ``image/png`` the same call returns a chart drawn with
matplotlib (Agg, imported only when a chart is asked for): power against the varied
quantity, the target line, the chosen design marked, axis titles with units; markers and
line styles as well as colours (the Okabe–Ito palette, distinguishable with the common
colour-vision deficiencies) tell the series apart, so the chart reads in black and white.
"""

from __future__ import annotations

import io
import math

import numpy as np
from marshmallow import ValidationError, fields, validates_schema

from ..core.errors import show
from ..core.planning import SIZE_CAP
from .batch import answer, answer_many, as_problem, problem_body
from .designs import ADAPTERS
from .fastload import sharing
from .fields import Bounded, BoundedList, StrictFloat, StrictInteger, StrictSchema, choice
from .problems import Problem, validation_problem
from .provenance import provenance
from .schemas import (
    POWER_MAX,
    DesignField,
    MethodSchema,
    ProvenanceSchema,
    alpha_field,
    group_sizes_field,
    n_per_group_field,
)

#: Most points on a curve; most sizes and effects in a grid.
MAX_POINTS = 200
MAX_GRID_SIZES = 60
MAX_GRID_EFFECTS = 12
#: Points on a curve when ``points`` is not given (sizes: every integer up to this many).
DEFAULT_POINTS = 41
#: Largest multiple of the assumed differences between means a curve or grid may use.
MAX_SCALE = 100.0

CHART_TYPES = ("image/svg+xml", "image/png")


def _target_field():
    return StrictFloat(
        validate=Bounded(min=0, max=POWER_MAX, min_inclusive=False),
        metadata={"description": "Optional: the power the design must reach; the smallest size reaching it "
                                 "(as /v1/sample-size answers) is reported and marked."},
    )


class RangeSchema(StrictSchema):
    """The quantity varied along the curve."""

    vary = choice(["n_per_group", "effect"], required=True,
                  metadata={"description": "`n_per_group` (units per group, or in the smallest group under an "
                                           "allocation) or `effect` (the design's effect; see the endpoint)."})
    from_ = StrictFloat(data_key="from", required=True, validate=Bounded(min=-1e12, max=1e12),
                        metadata={"description": "First value (a whole number for n_per_group)."})
    to = StrictFloat(required=True, validate=Bounded(min=-1e12, max=1e12),
                     metadata={"description": "Last value (greater than `from`)."})
    points = StrictInteger(validate=Bounded(min=2, max=MAX_POINTS),
                           metadata={"description": f"Number of points (default: every size up to {DEFAULT_POINTS}, "
                                                    f"else {DEFAULT_POINTS} evenly spaced)."})

    @validates_schema
    def _order(self, data, **kwargs):
        if "from_" in data and "to" in data and not data["to"] > data["from_"]:
            raise ValidationError(f"must be greater than from ({data['from_']:g}) (got {data['to']:g})", "to")


class PowerCurveRequestSchema(StrictSchema):
    """A power request with a range in place of its size (or over its effect)."""

    design = DesignField(required=True, metadata={"description": "The planned design, selected by `type`, with its effect."})
    alpha = alpha_field()
    range = fields.Nested(RangeSchema, required=True)
    n_per_group = n_per_group_field()
    group_sizes = group_sizes_field()
    target_power = _target_field()

    @validates_schema
    def _sizes(self, data, **kwargs):
        rng = data.get("range")
        if rng is None:
            return
        given = [name for name in ("n_per_group", "group_sizes") if name in data]
        if rng["vary"] == "n_per_group" and given:
            raise ValidationError("the range gives the sizes; leave n_per_group and group_sizes out", given[0])
        if rng["vary"] == "effect" and len(given) != 1:
            raise ValidationError("give exactly one of n_per_group and group_sizes (the sizes the curve is at)",
                                  "n_per_group")
        if "target_power" in data and data["target_power"] <= data.get("alpha", 0.05):
            raise ValidationError(f"must exceed alpha ({data.get('alpha', 0.05):g}) (got {data['target_power']:g})",
                                  "target_power")


class PowerGridRequestSchema(StrictSchema):
    """Sizes crossed with effects: a power table."""

    design = DesignField(required=True, metadata={"description": "The planned design, selected by `type`, with its effect."})
    alpha = alpha_field()
    sizes = BoundedList(
        StrictInteger(validate=Bounded(min=1, max=SIZE_CAP)), min_items=1, max_items=MAX_GRID_SIZES, required=True,
        metadata={"description": "Values of n_per_group (units per group, or in the smallest group), the table's rows."},
    )
    effects = BoundedList(
        StrictFloat(validate=Bounded(min=-1e12, max=1e12)), min_items=1, max_items=MAX_GRID_EFFECTS, required=True,
        metadata={"description": "Values of the design's effect (or multiples of its differences between means), "
                                 "the table's columns."},
    )
    target_power = _target_field()

    @validates_schema
    def _relation(self, data, **kwargs):
        if "target_power" in data and data["target_power"] <= data.get("alpha", 0.05):
            raise ValidationError(f"must exceed alpha ({data.get('alpha', 0.05):g}) (got {data['target_power']:g})",
                                  "target_power")


CURVE_REQUEST = PowerCurveRequestSchema()
GRID_REQUEST = PowerGridRequestSchema()


def _load(schema, body: dict) -> dict:
    try:
        return schema.load(body)
    except ValidationError as exc:
        raise validation_problem(exc.messages) from None


# -- the effect being varied --------------------------------------------------------------


def _is_number(value) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def _numbers(value) -> bool:
    """A list (possibly nested) of numbers."""
    if isinstance(value, list):
        return bool(value) and all(_numbers(v) for v in value)
    return _is_number(value)


class Effect:
    """Which design field is varied, how, and how to write a design at a value."""

    def __init__(self, design_body: dict, validated: dict, where: str) -> None:
        adapter = ADAPTERS[validated["type"]]
        present = [name for name in adapter.effect_fields if name in validated]
        scalar = [name for name in present if _is_number(validated[name])]
        listed = [name for name in present if not _is_number(validated[name]) and _numbers(validated[name])]
        if len(scalar) == 1:
            self.field, self.scaled = scalar[0], False
            self.stated = float(validated[self.field])
        elif not scalar and len(listed) == 1:
            self.field, self.scaled = listed[0], True
            self.stated = 1.0
            flat = np.asarray(validated[self.field], dtype=float)
            self._centre = float(flat.mean())
        else:
            fields_ = ", ".join(adapter.effect_fields) or "none"
            raise validation_problem({where: [
                f"varying the effect needs the design to give its effect as one of its effect fields ({fields_})"
            ]})
        self.body = design_body

    def design_at(self, value: float) -> dict:
        out = dict(self.body)
        if not self.scaled:
            out[self.field] = value
        else:
            c = self._centre
            out[self.field] = _scale(self.body[self.field], c, value)
        return out

    def label(self) -> str:
        if self.scaled:
            return f"Multiple of the assumed differences between {self.field.replace('_', ' ')} (1 = as assumed)"
        return _EFFECT_LABELS.get(self.field, f"{self.field.replace('_', ' ')} (in the units of the design field)")


def _scale(value, centre: float, s: float):
    if s == 1.0:  # as assumed: the values given, not c + (v − c)
        return value
    if isinstance(value, list):
        return [_scale(v, centre, s) for v in value]
    return centre + s * (float(value) - centre)


_EFFECT_LABELS = {
    "cohens_f": "Cohen's f = σ_m/σ (no unit)",
    "eta_squared": "η², proportion of variance explained (no unit)",
    "min_range": "Range between the extreme means (units of the data)",
    "cohens_d": "Cohen's d = Δ/σ (no unit)",
    "cohens_dz": "Cohen's d_z = mean difference / SD of differences (no unit)",
    "mean_difference": "Mean difference (units of the data)",
    "variance_ratio": "Variance ratio σ²_between/σ²_within (no unit)",
    "icc": "Intraclass correlation (no unit)",
}

SIZE_LABEL = "Sample size per group, n (units)"
SIZE_LABEL_UNEQUAL = "Units in the smallest group, n (the others by the allocation)"
POWER_LABEL = "Power (probability of a significant result)"


def _size_values(lo: float, hi: float, points: int | None) -> list[int]:
    count = int(hi - lo) + 1
    if points is None and count <= DEFAULT_POINTS:
        return list(range(int(lo), int(hi) + 1))
    grid = np.linspace(lo, hi, points or DEFAULT_POINTS)
    return sorted({int(v) for v in np.round(grid).tolist()})


def _point_failure(label: str, error: Exception) -> Problem:
    problem = as_problem(error)
    detail = f"the point {label} cannot be computed: {problem.detail}"
    errors = {"range": [detail]}
    for key, messages in (problem.errors or {}).items():
        errors.setdefault(f"point.{key}", []).extend(messages)
    return Problem(problem.status, problem.slug, problem.title, detail, errors=errors)


def _powers(bodies: list[dict], labels: list[str]) -> list[dict]:
    items = answer_many("power", bodies)
    for item, label in zip(items, labels, strict=True):
        if item.error is not None:
            raise _point_failure(label, item.error)
    return [item.result for item in items]


def _smallest_many(design_bodies: list[dict], alpha: float, target: float) -> list[dict]:
    """The /v1/sample-size answer for each design, in brief; a problem where there is none."""
    out = []
    items = answer_many("sample-size", [{"design": d, "alpha": alpha, "target_power": target} for d in design_bodies])
    for item in items:
        if item.error is not None:
            out.append({"n_per_group": None, "problem": problem_body(item.error)})
            continue
        found = item.result
        out.append({
            "n_per_group": found["smallest_group"],
            "group_sizes": found["group_sizes"],
            "n_total": found["n_total"],
            "achieved_power": found["achieved_power"],
        })
    return out


def _smallest(design_body: dict, alpha: float, target: float | None) -> dict | None:
    return None if target is None else _smallest_many([design_body], alpha, target)[0]


def _method(result: dict) -> dict:
    return result["method"]


# -- POST /v1/power-curve -----------------------------------------------------------------


def power_curve(body: dict) -> dict:
    """POST /v1/power-curve (JSON)."""
    req = _load(CURVE_REQUEST, body)
    rng = req["range"]
    alpha = req["alpha"]
    target = req.get("target_power")
    design_body = body["design"]
    adapter = ADAPTERS[req["design"]["type"]]
    with sharing():
        if rng["vary"] == "n_per_group":
            lo, hi = rng["from_"], rng["to"]
            for name, value in (("range.from", lo), ("range.to", hi)):
                if not float(value).is_integer() or not 1 <= value <= SIZE_CAP:
                    raise validation_problem({name: [f"must be a whole number of units between 1 and {SIZE_CAP} "
                                                     f"(got {show(value)})"]})
            sizes = _size_values(lo, hi, rng.get("points"))
            results = _powers([{"design": design_body, "alpha": alpha, "n_per_group": n} for n in sizes],
                              [f"n_per_group = {n}" for n in sizes])
            points = [{"n_per_group": n, "group_sizes": r["group_sizes"], "n_total": r["n_total"], "power": r["power"]}
                      for n, r in zip(sizes, results, strict=True)]
            out = {"vary": "n_per_group", "design_type": adapter.type, "alpha": alpha, "points": points}
            unequal = any(len(set(p["group_sizes"])) > 1 for p in points)
            out["x_label"], out["y_label"] = SIZE_LABEL_UNEQUAL if unequal else SIZE_LABEL, POWER_LABEL
            out["target_power"] = target
            out["smallest_size"] = _smallest(design_body, alpha, target)
        else:
            effect = Effect(design_body, req["design"], "range.vary")
            lo, hi = rng["from_"], rng["to"]
            if effect.scaled and not (0 <= lo and hi <= MAX_SCALE):
                raise validation_problem({"range.from": [
                    f"multiples of the differences between means must lie between 0 and {MAX_SCALE:g} "
                    f"(got {lo:g} to {hi:g})"]})
            values = np.linspace(lo, hi, rng.get("points") or DEFAULT_POINTS).tolist()
            size = {"group_sizes": req["group_sizes"]} if "group_sizes" in req else {"n_per_group": req["n_per_group"]}
            results = _powers([{"design": effect.design_at(v), "alpha": alpha, **size} for v in values],
                              [f"{effect.field} {'× ' if effect.scaled else '= '}{v:g}" for v in values])
            stated = answer("power", {"design": design_body, "alpha": alpha, **size})
            points = [{"effect": v, "power": r["power"]} for v, r in zip(values, results, strict=True)]
            out = {"vary": "effect", "design_type": adapter.type, "alpha": alpha,
                   "effect_field": effect.field, "effect_scaled": effect.scaled,
                   "group_sizes": stated["group_sizes"], "n_total": stated["n_total"], "points": points}
            out["x_label"], out["y_label"] = effect.label(), POWER_LABEL
            out["stated"] = {"effect": effect.stated, "power": stated["power"]}
            out["target_power"] = target
            out["smallest_size"] = _smallest(design_body, alpha, target)
    out["method"] = _method(results[0])
    out["provenance"] = provenance(adapter.method_id, adapter.reference, req)
    return out


# -- POST /v1/power-grid --------------------------------------------------------------------


def power_grid(body: dict) -> dict:
    """POST /v1/power-grid (JSON)."""
    req = _load(GRID_REQUEST, body)
    alpha, target = req["alpha"], req.get("target_power")
    design_body = body["design"]
    adapter = ADAPTERS[req["design"]["type"]]
    with sharing():
        effect = Effect(design_body, req["design"], "effects")
        if effect.scaled and not all(0 <= v <= MAX_SCALE for v in req["effects"]):
            raise validation_problem({"effects": [
                f"multiples of the differences between means must lie between 0 and {MAX_SCALE:g}"]})
        sizes, effects = req["sizes"], req["effects"]
        bodies, labels = [], []
        for n in sizes:
            for v in effects:
                bodies.append({"design": effect.design_at(v), "alpha": alpha, "n_per_group": n})
                labels.append(f"n_per_group = {n}, {effect.field} {'× ' if effect.scaled else '= '}{v:g}")
        results = _powers(bodies, labels)
        width = len(effects)
        power = [[results[i * width + j]["power"] for j in range(width)] for i in range(len(sizes))]
        n_total = [[results[i * width + j]["n_total"] for j in range(width)] for i in range(len(sizes))]
        smallest = None
        if target is not None:  # a zero effect, say, gets its problem: no size reaches the target
            found = _smallest_many([effect.design_at(v) for v in effects], alpha, target)
            smallest = [{"effect": v, **entry} for v, entry in zip(effects, found, strict=True)]
    out = {
        "design_type": adapter.type, "alpha": alpha, "effect_field": effect.field,
        "effect_scaled": effect.scaled, "stated_effect": effect.stated,
        "sizes": sizes, "effects": effects, "power": power, "n_total": n_total,
        "x_label": SIZE_LABEL_UNEQUAL if any(len(set(r["group_sizes"])) > 1 for r in results) else SIZE_LABEL,
        "y_label": POWER_LABEL, "series_label": effect.label(),
        "target_power": target, "smallest_sizes": smallest,
        "method": _method(results[0]),
        "provenance": provenance(adapter.method_id, adapter.reference, req),
    }
    return out


# -- charts ------------------------------------------------------------------------------------

#: Okabe & Ito (2008), "Color Universal Design": distinguishable with the common forms of
#: colour-vision deficiency (their yellow is left out: too pale on white).
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "h", "<", ">", "*", "p")
LINESTYLES = ("-", "--", ":", "-.", (0, (5, 1, 1, 1)), (0, (3, 1, 1, 1, 1, 1)))
INK = "#1b1f24"
PAPER = "#fbfaf7"
TARGET_COLOUR = "#6b6b6b"


def _figure():
    import matplotlib

    matplotlib.use("Agg", force=False)
    from matplotlib.figure import Figure

    fig = Figure(figsize=(7.4, 4.6), dpi=110, facecolor=PAPER)
    ax = fig.add_axes((0.1, 0.14, 0.86, 0.72))
    ax.set_facecolor("#ffffff")
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    for side in ("left", "bottom"):
        ax.spines[side].set_color(INK)
        ax.spines[side].set_linewidth(0.9)
    ax.tick_params(colors=INK, labelsize=9, length=4, width=0.8)
    ax.grid(True, which="major", color="#d9d6cf", linewidth=0.6, linestyle=(0, (1, 2)))
    ax.set_axisbelow(True)
    ax.set_ylim(0, 1.02)
    ax.set_yticks([0, 0.2, 0.4, 0.6, 0.8, 1.0])
    return fig, ax


def _titles(fig, ax, title: str, subtitle: str, x_label: str, y_label: str) -> None:
    fig.text(0.1, 0.955, title, fontsize=12.5, fontweight="bold", color=INK, ha="left", va="top")
    fig.text(0.1, 0.905, subtitle, fontsize=9, color="#4a4f55", ha="left", va="top")
    ax.set_xlabel(x_label, fontsize=9.5, color=INK, labelpad=6)
    ax.set_ylabel(y_label, fontsize=9.5, color=INK, labelpad=6)


def _target_line(ax, target: float | None) -> None:
    if target is None:
        return
    ax.axhline(target, color=TARGET_COLOUR, linewidth=1.1, linestyle=(0, (6, 3)), zorder=2)
    # Left end, above the line: power curves rise from the left, so the label stays clear of them.
    ax.annotate(f"target power {target:g}", xy=(0.0, target), xycoords=("axes fraction", "data"),
                xytext=(4, 4), textcoords="offset points", ha="left", va="bottom", fontsize=8.5,
                color="#3d3d3d")


def _mark(ax, x: float, y: float, text: str) -> None:
    ax.plot([x], [y], marker="D", markersize=10, markerfacecolor="#ffffff", markeredgecolor=INK,
            markeredgewidth=1.8, linestyle="none", zorder=5)
    ax.plot([x], [y], marker="D", markersize=4.5, color=PALETTE[1], linestyle="none", zorder=6)
    ax.annotate(text, xy=(x, y), xytext=(12, -22 if y > 0.5 else 14), textcoords="offset points", fontsize=8.5,
                color=INK, arrowprops={"arrowstyle": "-", "color": INK, "linewidth": 0.8},
                bbox={"boxstyle": "round,pad=0.3", "facecolor": PAPER, "edgecolor": "#bdb8ad", "linewidth": 0.6},
                zorder=7)


def _render(fig, media_type: str) -> bytes:
    buf = io.BytesIO()
    if media_type == "image/svg+xml":
        import matplotlib

        with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "samplewright"}):
            fig.savefig(buf, format="svg", facecolor=fig.get_facecolor(), metadata={"Date": None})
    else:
        fig.savefig(buf, format="png", facecolor=fig.get_facecolor(), metadata={"Software": "samplewright"})
    return buf.getvalue()


def _design_words(out: dict) -> str:
    adapter = ADAPTERS[out["design_type"]]
    return f"{adapter.title}; α = {out['alpha']:g}"


def curve_chart(out: dict, media_type: str) -> bytes:
    """The curve as SVG or PNG."""
    fig, ax = _figure()
    xs = [p["n_per_group" if out["vary"] == "n_per_group" else "effect"] for p in out["points"]]
    ys = [p["power"] for p in out["points"]]
    ax.plot(xs, ys, color=PALETTE[0], linewidth=2.0, marker="o", markersize=4.2, markerfacecolor="#ffffff",
            markeredgewidth=1.3, zorder=4, label="power")
    _target_line(ax, out.get("target_power"))
    if out["vary"] == "n_per_group":
        title = "Power against sample size"
        found = out.get("smallest_size")
        if found is not None and found["n_per_group"] is None:
            found = None
        where = "per group" if found is None or len(set(found["group_sizes"])) == 1 else "in the smallest group"
        if found is not None and xs[0] <= found["n_per_group"] <= xs[-1]:
            _mark(ax, found["n_per_group"], found["achieved_power"],
                  f"smallest design reaching the target:\nn = {found['n_per_group']} {where} "
                  f"(N = {found['n_total']}), power {found['achieved_power']:.3f}")
        elif found is not None:
            # Bottom right: below a rising curve, away from the target label at the left.
            ax.text(0.99, 0.04, f"the target is reached at n = {found['n_per_group']} {where} "
                                f"(N = {found['n_total']}), outside the range shown", transform=ax.transAxes,
                    fontsize=8.5, ha="right", va="bottom", color=INK,
                    bbox={"boxstyle": "round,pad=0.3", "facecolor": PAPER, "edgecolor": "#bdb8ad", "linewidth": 0.6})
        if len(xs) > 1:
            ax.set_xlim(xs[0] - 0.5, xs[-1] + 0.5)
    else:
        title = "Power against the assumed effect"
        stated = out["stated"]
        if xs[0] <= stated["effect"] <= xs[-1]:
            _mark(ax, stated["effect"], stated["power"],
                  f"as planned: {'×1' if out['effect_scaled'] else out['effect_field'] + ' = ' + format(stated['effect'], 'g')}"
                  f", power {stated['power']:.3f}\n(N = {out['n_total']})")
    _titles(fig, ax, title, _design_words(out), out["x_label"], out["y_label"])
    return _render(fig, media_type)


def grid_chart(out: dict, media_type: str) -> bytes:
    """The grid as SVG or PNG: one curve per effect."""
    fig, ax = _figure()
    sizes = out["sizes"]
    for j, v in enumerate(out["effects"]):
        ys = [row[j] for row in out["power"]]
        planned = math.isclose(v, out["stated_effect"], rel_tol=0, abs_tol=1e-12)
        name = f"×{v:g}" if out["effect_scaled"] else f"{v:g}"
        ax.plot(sizes, ys, color=PALETTE[j % len(PALETTE)], linestyle=LINESTYLES[j % len(LINESTYLES)],
                marker=MARKERS[j % len(MARKERS)], markersize=5, markerfacecolor="#ffffff", markeredgewidth=1.2,
                linewidth=2.6 if planned else 1.5, zorder=4 if planned else 3,
                label=f"{name} (as planned)" if planned else name)
    _target_line(ax, out.get("target_power"))
    legend = ax.legend(title=out["series_label"], fontsize=8, title_fontsize=8.5, loc="lower right",
                       frameon=True, framealpha=0.95, edgecolor="#bdb8ad", ncol=2 if len(out["effects"]) > 6 else 1)
    legend.get_frame().set_facecolor(PAPER)
    _titles(fig, ax, "Power against sample size, by assumed effect", _design_words(out), out["x_label"],
            out["y_label"])
    return _render(fig, media_type)


# -- schemas for the document ---------------------------------------------------------------------


class CurvePointSchema(StrictSchema):
    n_per_group = fields.Integer()
    group_sizes = fields.List(fields.Integer())
    n_total = fields.Integer()
    effect = fields.Float()
    power = fields.Float(required=True)


class SmallestSchema(StrictSchema):
    n_per_group = fields.Integer(allow_none=True)
    group_sizes = fields.List(fields.Integer())
    n_total = fields.Integer()
    achieved_power = fields.Float()
    effect = fields.Float()
    problem = fields.Dict()


class StatedSchema(StrictSchema):
    effect = fields.Float(required=True)
    power = fields.Float(required=True)


class PowerCurveResponseSchema(StrictSchema):
    vary = fields.String(required=True, metadata={"enum": ["n_per_group", "effect"]})
    design_type = fields.String(required=True)
    alpha = fields.Float(required=True)
    effect_field = fields.String(metadata={"description": "The design field varied (vary = effect)."})
    effect_scaled = fields.Boolean(metadata={"description": "True when the effect is a multiple of the differences between means."})
    group_sizes = fields.List(fields.Integer())
    n_total = fields.Integer()
    points = fields.List(fields.Nested(CurvePointSchema), required=True)
    x_label = fields.String(required=True)
    y_label = fields.String(required=True)
    stated = fields.Nested(StatedSchema, metadata={"description": "The design as stated (vary = effect)."})
    target_power = fields.Float(required=True, allow_none=True)
    smallest_size = fields.Nested(SmallestSchema, required=True, allow_none=True,
                                  metadata={"description": "The /v1/sample-size answer for the design as stated."})
    method = fields.Nested(MethodSchema, required=True)
    provenance = fields.Nested(ProvenanceSchema, required=True)


class PowerGridResponseSchema(StrictSchema):
    design_type = fields.String(required=True)
    alpha = fields.Float(required=True)
    effect_field = fields.String(required=True)
    effect_scaled = fields.Boolean(required=True)
    stated_effect = fields.Float(required=True)
    sizes = fields.List(fields.Integer(), required=True)
    effects = fields.List(fields.Float(), required=True)
    power = fields.List(fields.List(fields.Float()), required=True,
                        metadata={"description": "power[i][j]: sizes[i] with effects[j]."})
    n_total = fields.List(fields.List(fields.Integer()), required=True)
    x_label = fields.String(required=True)
    y_label = fields.String(required=True)
    series_label = fields.String(required=True)
    target_power = fields.Float(required=True, allow_none=True)
    smallest_sizes = fields.List(fields.Nested(SmallestSchema), required=True, allow_none=True)
    method = fields.Nested(MethodSchema, required=True)
    provenance = fields.Nested(ProvenanceSchema, required=True)
