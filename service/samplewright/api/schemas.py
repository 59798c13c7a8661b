"""Request and response schemas: the single source of the HTTP contract.

The same schema objects validate requests and write the OpenAPI document. Response
schemas are used only for the document (and for the test that checks real responses
against it): the routes build plain dicts, which is cheaper than a marshmallow dump.
"""

from __future__ import annotations

from marshmallow import INCLUDE, Schema, ValidationError, fields, validates_schema

from ..core.errors import show
from ..core.planning import SIZE_CAP
from .designs import ADAPTERS, SCHEMAS
from .designs.common import MAX_GROUPS
from .fastload import FastLoader, loader_for
from .fields import Bounded, BoundedList, StrictFloat, StrictInteger, StrictSchema

ALPHA_MIN, ALPHA_MAX = 1e-12, 0.5
POWER_MAX = 0.9999
DROPOUT_MAX = 0.9


class DesignField(fields.Field):
    """``design``: an object whose ``type`` selects the schema that validates the rest."""

    def __init__(self, **kwargs):
        super().__init__(**kwargs)
        #: type → the fast loader of its schema, kept here to spare a registry look-up per request
        self._loaders: dict[str, FastLoader] = {}

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, dict):
            raise ValidationError(f"must be a JSON object with a 'type' (got {show(value)})")
        kind = value.get("type")
        if not isinstance(kind, str) or kind not in SCHEMAS:
            raise ValidationError({"type": [f"must be one of {sorted(SCHEMAS)} (got {show(kind)})"]})
        return self._loader(kind).load(value)  # same result and errors as SCHEMAS[kind].load

    def _loader(self, kind: str) -> FastLoader:
        loader = self._loaders.get(kind)
        if loader is None or loader.schema is not SCHEMAS[kind]:
            loader = self._loaders[kind] = loader_for(SCHEMAS[kind], shareable=True)
        return loader

    def fast_deserializer(self):
        """``deserialize`` for an exact dict whose ``type`` is an exact str naming a design
        (see api/fields.py); anything else goes to marshmallow."""
        if self.validators:  # the fast path below would skip them
            return None
        loaders, schemas = self._loaders, SCHEMAS

        def fast(value):
            if type(value) is dict:
                kind = value.get("type")
                if type(kind) is str:
                    loader = loaders.get(kind)
                    if loader is not None and loader.schema is schemas.get(kind):
                        return loader.load(value)
                    if kind in schemas:
                        return self._loader(kind).load(value)
            raise ValidationError("not a plain design; left to marshmallow")

        return fast


def alpha_field():
    return StrictFloat(
        load_default=0.05,
        validate=Bounded(min=ALPHA_MIN, max=ALPHA_MAX),
        metadata={"description": "Significance level of the test (type I error rate).", "default": 0.05},
    )


def target_power_field():
    return StrictFloat(
        required=True,
        validate=Bounded(min=0, max=POWER_MAX, min_inclusive=False),
        metadata={"description": "Power the design must reach; must exceed alpha."},
    )


def n_per_group_field():
    return StrictInteger(
        validate=Bounded(min=1, max=SIZE_CAP),
        metadata={
            "description": "Units per group (balanced); with an unequal allocation, the size of the "
            "smallest group, the others being ceil(n·r_i/min r)."
        },
    )


def group_sizes_field():
    return BoundedList(
        StrictInteger(validate=Bounded(min=1, max=SIZE_CAP)),
        min_items=1, max_items=MAX_GROUPS,
        metadata={"description": "Units in each group, in the order of the design's groups."},
    )


class _Request(StrictSchema):
    design = DesignField(required=True, metadata={"description": "The planned design, selected by `type`."})

    def _target_above_alpha(self, data):
        if "target_power" in data and data["target_power"] <= data.get("alpha", 0.05):
            raise ValidationError(
                f"must exceed alpha ({data.get('alpha', 0.05):g}) (got {data['target_power']:g})",
                "target_power",
            )


class _SizedRequest(_Request):
    n_per_group = n_per_group_field()
    group_sizes = group_sizes_field()

    @validates_schema(pass_original=True, skip_on_field_errors=False)
    def _one_size(self, data, original_data, **kwargs):
        # On the raw body, so that a missing size is reported beside other field errors
        # and an invalid one is not also reported as missing.
        if ("n_per_group" in original_data) == ("group_sizes" in original_data):  # neither or both
            given = [name for name in ("n_per_group", "group_sizes") if name in original_data]
            raise ValidationError(
                f"give exactly one of n_per_group and group_sizes (got {' and '.join(given) or 'neither'})",
                "n_per_group",
            )


class PowerRequestSchema(_SizedRequest):
    """Power of a planned design at given group sizes."""

    alpha = alpha_field()


class SampleSizeRequestSchema(_Request):
    """Smallest integer design reaching the target power."""

    alpha = alpha_field()
    target_power = target_power_field()
    dropout_rate = StrictFloat(
        load_default=0.0,
        validate=Bounded(min=0, max=DROPOUT_MAX),
        metadata={"description": "Expected fraction of units lost; enrolment is ceil(n_i/(1−d)).", "default": 0},
    )

    @validates_schema
    def _relation(self, data, **kwargs):
        self._target_above_alpha(data)


class DetectableEffectRequestSchema(_SizedRequest):
    """Smallest effect detectable with given group sizes at the target power."""

    alpha = alpha_field()
    target_power = target_power_field()

    @validates_schema
    def _relation(self, data, **kwargs):
        self._target_above_alpha(data)


# -- responses (documentation and contract tests) --------------------------------------


class MethodSchema(Schema):
    id = fields.String(required=True, metadata={"description": "Stable identifier of the method used."})
    reference = fields.String(required=True, metadata={"description": "Published source of the formula."})


class EffectSchema(Schema):
    """The effect in the forms that fit the design (more keys for other designs)."""

    class Meta:
        unknown = INCLUDE

    cohens_f = fields.Float()
    eta_squared = fields.Float()
    sd_of_means = fields.Float(metadata={"description": "σ_m = f·σ, in data units (when an SD is known)."})
    range_of_means = fields.Float(metadata={"description": "Largest minus smallest group mean (means given)."})


class ProvenanceSchema(Schema):
    """What produced the answer, and a digest that identifies the question (README, "Provenance")."""

    service_version = fields.String(required=True)
    numpy_version = fields.String(required=True)
    scipy_version = fields.String(required=True)
    method_id = fields.String(required=True, metadata={"description": "Stable identifier of the method used."})
    method_reference = fields.String(required=True, metadata={"description": "Published source of the formula."})
    request_digest = fields.String(
        required=True,
        metadata={"description": "SHA-256 (64 hex digits) of the canonical JSON of the validated request with "
                                 "its defaults filled in: sorted keys, no whitespace, UTF-8.",
                  "pattern": "^[0-9a-f]{64}$"},
    )
    canonical_form = fields.String(required=True, metadata={"description": "Identifier of the canonical form."})


class _Common(Schema):
    alpha = fields.Float(required=True)
    design_type = fields.String(required=True, metadata={"enum": sorted(ADAPTERS)})
    df_numerator = fields.Float(required=True)
    df_denominator = fields.Float(required=True)
    noncentrality = fields.Float(required=True, metadata={"description": "λ of the noncentral F."})
    critical_value = fields.Float(required=True, metadata={"description": "Upper-α point of the central F."})
    group_sizes = fields.List(fields.Integer(), required=True)
    n_total = fields.Integer(required=True)
    method = fields.Nested(MethodSchema, required=True)
    assumptions = fields.List(fields.String(), required=True)
    warnings = fields.List(fields.String(), required=True)
    cautions = fields.List(fields.String(), required=True)
    details = fields.Dict(
        metadata={"description": "Design-specific extras (per-comparison powers, what-if tables, …)."}
    )
    provenance = fields.Nested(ProvenanceSchema, required=True)


class PowerResponseSchema(_Common):
    power = fields.Float(required=True)
    effect = fields.Nested(EffectSchema, required=True)


class StepSchema(Schema):
    group_sizes = fields.List(fields.Integer(), required=True)
    n_total = fields.Integer(required=True)
    power = fields.Float(required=True)


class EnrolmentSchema(Schema):
    dropout_rate = fields.Float(required=True)
    group_sizes = fields.List(fields.Integer(), required=True)
    n_total = fields.Integer(required=True)


class SampleSizeResponseSchema(_Common):
    target_power = fields.Float(required=True)
    achieved_power = fields.Float(required=True)
    n_per_group = fields.Integer(
        required=True, allow_none=True, metadata={"description": "Units per group when all groups are equal; null otherwise."}
    )
    smallest_group = fields.Integer(required=True)
    one_step_smaller = fields.Nested(
        StepSchema, required=True, allow_none=True,
        metadata={"description": "The design one unit smaller in the smallest group, which falls short "
                                 "(null when no smaller design has error degrees of freedom)."},
    )
    enrolment = fields.Nested(
        EnrolmentSchema, required=True, allow_none=True,
        metadata={"description": "Units to enrol so that the analysed sizes survive the dropout (null without dropout)."},
    )
    effect = fields.Nested(EffectSchema, required=True)


class DetectableEffectResponseSchema(_Common):
    """The detectable effect in the design's natural units, plus the noncentrality."""

    class Meta:
        unknown = INCLUDE

    target_power = fields.Float(required=True)
    achieved_power = fields.Float(required=True, metadata={"description": "Power at the detectable effect (equals the target)."})
    cohens_f = fields.Float()
    eta_squared = fields.Float()
    sd_of_means = fields.Float(metadata={"description": "Detectable SD of the means, in data units (design.sd given)."})
    min_range = fields.Float(
        metadata={"description": "Detectable range of the means under the least-favourable configuration "
                                 "(design.sd given, equal group sizes)."}
    )


class VersionSchema(Schema):
    service = fields.String(required=True)
    scipy = fields.String(required=True)
    numpy = fields.String(required=True)
    python = fields.String(required=True)


class HealthSchema(Schema):
    status = fields.String(required=True)


class ProblemSchema(Schema):
    """RFC 9457 problem details."""

    type = fields.String(required=True)
    title = fields.String(required=True)
    status = fields.Integer(required=True)
    detail = fields.String(required=True)
    instance = fields.String()
    request_id = fields.String()
    errors = fields.Dict(
        keys=fields.String(), values=fields.List(fields.String()),
        metadata={"description": "Validation messages keyed by field path (e.g. `design.sd`)."},
    )
    errors_omitted = fields.Integer(metadata={"description": "How many further messages were left out."})


POWER_REQUEST = PowerRequestSchema()
SAMPLE_SIZE_REQUEST = SampleSizeRequestSchema()
DETECTABLE_REQUEST = DetectableEffectRequestSchema()
