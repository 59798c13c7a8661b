"""The blueprint: read the body, call an operation, return JSON. No maths here."""

from __future__ import annotations

import platform
from dataclasses import dataclass
from typing import Any

import numpy
import scipy
from flask import Blueprint, current_app, jsonify

from .._version import __version__
from ..observability import computation
from . import operations, schemas
from .body import read_json_object
from .jsontext import ANSWER_WRITER

bp = Blueprint("api", __name__)


@dataclass(frozen=True)
class Endpoint:
    """One documented route: the single list both Flask and the OpenAPI document use."""

    path: str
    method: str
    summary: str
    request: Any
    response: Any
    tag: str
    #: Media type of the 200 response; extra documented problem responses as (status, why).
    media_type: str = "application/json"
    problems: tuple[tuple[str, str], ...] = ()
    #: Other media types the 200 response can take when the client's Accept asks for them.
    also: tuple[str, ...] = ()


ENDPOINTS: list[Endpoint] = []


def endpoint(path: str, method: str, summary: str, request=None, response=None, tag="planning",
             media_type="application/json", problems=(), also=()):
    def register(func):
        ENDPOINTS.append(
            Endpoint(path, method, summary, request, response, tag, media_type, tuple(problems), tuple(also))
        )
        bp.add_url_rule(path, endpoint=func.__name__, view_func=func, methods=[method])
        return func

    return register


def _compute(operation):
    body = read_json_object(current_app.config["SETTINGS"].max_body_bytes)
    with computation(operation.__name__):
        result = operation(body)
    return jsonify(result)


def _answer(operation: str, label: str):
    """One planning question, written by the batch engine's writer (see ``operations``)."""
    body = read_json_object(current_app.config["SETTINGS"].max_body_bytes)
    with computation(label):
        text = operations.answer_text(operation, body, ANSWER_WRITER)
    return current_app.response_class(text, mimetype="application/json")


@endpoint("/v1/power", "POST", "Power of a planned design at given group sizes.",
          schemas.PowerRequestSchema, schemas.PowerResponseSchema)
def power():
    """Power of a planned design at given group sizes."""
    return _answer("power", "power")


@endpoint("/v1/sample-size", "POST", "Smallest integer design reaching a target power.",
          schemas.SampleSizeRequestSchema, schemas.SampleSizeResponseSchema)
def sample_size():
    """Smallest integer design reaching a target power."""
    return _answer("sample-size", "sample_size")


@endpoint("/v1/detectable-effect", "POST", "Smallest effect detectable with given sizes at a target power.",
          schemas.DetectableEffectRequestSchema, schemas.DetectableEffectResponseSchema)
def detectable_effect():
    """Smallest effect detectable with given sizes at a target power."""
    return _answer("detectable-effect", "detectable_effect")


@endpoint("/v1/version", "GET", "Versions of the service and its numerical libraries.",
          response=schemas.VersionSchema, tag="service")
def version():
    """Versions of the service and its numerical libraries."""
    return jsonify(service=__version__, scipy=scipy.__version__, numpy=numpy.__version__,
                   python=platform.python_version())


@endpoint("/healthz", "GET", "Liveness: the process answers.", response=schemas.HealthSchema, tag="service")
def healthz():
    """Liveness: the process answers."""
    return jsonify(status="ok")


@endpoint("/openapi.json", "GET", "This OpenAPI document.", tag="service")
def openapi_document():
    """This OpenAPI document."""
    from .openapi import document

    return current_app.response_class(document(pretty=False), mimetype="application/json")


# -- the simulation check and the design catalogue ---------------------------------------

from . import catalogue, simulation  # noqa: E402  (appended block; both import only schemas and the core)


@endpoint("/v1/simulate", "POST", "Seeded Monte Carlo power of the actual test, beside the analytic power.",
          simulation.SimulateRequestSchema, simulation.SimulateResponseSchema, tag="simulation")
def simulate():
    """Seeded Monte Carlo power of the actual test, beside the analytic power."""
    return _compute(simulation.simulate)


@endpoint("/v1/designs", "GET", "Every design with its parameters, formula and published source.",
          response=catalogue.CatalogueSchema, tag="catalogue")
def designs():
    """Every design with its parameters, formula and published source."""
    return current_app.response_class(catalogue.catalogue_json(), mimetype="application/json")


# -- operations: readiness and metrics (logic in ops.py) -----------------------------------

from . import ops  # noqa: E402  (appended block; ops imports operations and observability only)


@endpoint("/readyz", "GET", "Readiness: a self-check computes a known power; 503 while shutting down.",
          response=ops.ReadinessSchema, tag="service",
          problems=(("503", "Not ready: a graceful shutdown has begun, or the self-check failed."),))
def readyz():
    """Readiness: a self-check computes a known power; 503 while shutting down."""
    return ops.readiness()


@endpoint("/metrics", "GET", "Prometheus metrics in the text exposition format.", tag="service",
          media_type="text/plain")
def metrics():
    """Prometheus metrics in the text exposition format."""
    return ops.metrics()


# -- planning outputs: batch, curves and grids, protocol text (logic in batch/curves/report) -----

from . import batch  # noqa: E402  (appended block; batch imports schemas, the adapters and the core)


@endpoint("/v1/batch", "POST", "Many power, sample-size and detectable-effect questions in one request.",
          batch.BatchRequestSchema, batch.BatchResponseSchema,
          problems=(("413", "Body over the batch limit, or more items than the batch limit."),))
def batch_questions():
    """Many power, sample-size and detectable-effect questions in one request."""
    settings = current_app.config["SETTINGS"]
    with batch.collector_paused():
        body = read_json_object(settings.max_batch_bytes)
        with computation("batch"):
            text = batch.run_batch(body, max_items=settings.max_batch_items)
    return current_app.response_class(text, mimetype="application/json")


# -- allocation under costs, unequal variances, a fixed total or a budget (logic in allocation.py) --

from . import allocation as allocation_api  # noqa: E402  (appended block; imports schemas, adapters, core)


@endpoint("/v1/allocation", "POST",
          "Group sizes reaching a power at least cost, or the most power for a budget or a fixed total.",
          allocation_api.AllocationRequestSchema, allocation_api.AllocationResponseSchema)
def allocation():
    """Group sizes reaching a power at least cost, or the most power for a budget or a fixed total."""
    return _compute(allocation_api.allocate)


# -- pages: the study planner and the API reference (files in samplewright/web/static) ------------

from . import pages  # noqa: E402  (appended block; pages reads package data only)


@endpoint("/", "GET", "The study planner: a form that answers through this API.", tag="pages",
          media_type="text/html")
def planner_page():
    """The study planner: a form that answers through this API."""
    return pages.serve("index.html")


@endpoint("/docs", "GET", "This API's reference, rendered from /openapi.json.", tag="pages",
          media_type="text/html")
def docs_page():
    """This API's reference, rendered from /openapi.json."""
    return pages.serve("docs.html")


@endpoint("/assets/samplewright.css", "GET", "Style sheet of the pages.", tag="pages", media_type="text/css")
def asset_css():
    """Style sheet of the pages."""
    return pages.serve("samplewright.css")


@endpoint("/assets/planner.js", "GET", "Script of the study planner.", tag="pages", media_type="text/javascript")
def asset_planner_js():
    """Script of the study planner."""
    return pages.serve("planner.js")


@endpoint("/assets/docs.js", "GET", "Script of the API reference page.", tag="pages", media_type="text/javascript")
def asset_docs_js():
    """Script of the API reference page."""
    return pages.serve("docs.js")


from . import curves, report  # noqa: E402  (appended block; both call the batch engine)
from .problems import Problem  # noqa: E402


def _negotiated(compute, chart, name: str):
    """JSON by default; the chart when the client asks for SVG or PNG (matplotlib loaded only then)."""
    from flask import request

    # No Accept header means any type will do (RFC 9110 §12.5.1): JSON then.
    kind = "application/json" if "Accept" not in request.headers else \
        request.accept_mimetypes.best_match(("application/json", *curves.CHART_TYPES))
    if kind is None:
        raise Problem(406, "not-acceptable", "Not Acceptable",
                      f"this route answers application/json, {' or '.join(curves.CHART_TYPES)} "
                      f"(Accept was {request.headers.get('Accept', '')[:120]!r})")
    body = read_json_object(current_app.config["SETTINGS"].max_body_bytes)
    with computation(name):
        out = compute(body)
    if kind == "application/json":
        return jsonify(out)
    with computation(f"{name}-chart"):
        image = chart(out, kind)
    response = current_app.response_class(image, mimetype=kind)
    response.headers["Vary"] = "Accept"
    return response


@endpoint("/v1/power-curve", "POST",
          "Power over a range of sizes or effects; a chart with Accept: image/svg+xml or image/png.",
          curves.PowerCurveRequestSchema, curves.PowerCurveResponseSchema,
          problems=(("406", "Accept names none of application/json, image/svg+xml, image/png."),),
          also=("image/svg+xml", "image/png"))
def power_curve():
    """Power over a range of sizes or effects; a chart with Accept: image/svg+xml or image/png."""
    return _negotiated(curves.power_curve, curves.curve_chart, "power-curve")


@endpoint("/v1/power-grid", "POST",
          "Power for sizes × effects (what if the effect is off); a chart with Accept: image/svg+xml or image/png.",
          curves.PowerGridRequestSchema, curves.PowerGridResponseSchema,
          problems=(("406", "Accept names none of application/json, image/svg+xml, image/png."),),
          also=("image/svg+xml", "image/png"))
def power_grid():
    """Power for sizes × effects (what if the effect is off); a chart with Accept: image/svg+xml or image/png."""
    return _negotiated(curves.power_grid, curves.grid_chart, "power-grid")


@endpoint("/v1/report", "POST", "A sample-size justification to paste into a protocol (Markdown, text or HTML).",
          report.ReportRequestSchema, report.ReportResponseSchema)
def protocol_report():
    """A sample-size justification to paste into a protocol (Markdown, text or HTML)."""
    return _compute(report.report)


# -- columns of questions: the fast path for large sweeps (logic in table.py) --------------------

from . import table  # noqa: E402  (appended block; table imports schemas, the one-way adapter and the core)


@endpoint("/v1/table", "POST", "One operation over many rows of one design type, every field a column.",
          table.TableRequestSchema, table.TableResponseSchema,
          problems=(("413", "Body over the batch limit, or more rows than the table limit."),))
def table_questions():
    """One operation over many rows of one design type, every field a column."""
    settings = current_app.config["SETTINGS"]
    with batch.collector_paused():
        body = table.read_table_body(settings.max_batch_bytes)
        with computation("table"):
            result = table.run_table(body)
        text = table.table_json(result)
    return current_app.response_class(text, mimetype="application/json")
