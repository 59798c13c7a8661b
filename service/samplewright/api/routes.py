"""The blueprint: read the body, call an operation, return JSON. No maths here."""

from __future__ import annotations

import platform
from dataclasses import dataclass
from typing import Any

import numpy
import scipy
from flask import Blueprint, current_app, jsonify

from .._version import __version__
from . import operations, schemas
from .body import read_json_object

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


ENDPOINTS: list[Endpoint] = []


def endpoint(path: str, method: str, summary: str, request=None, response=None, tag="planning"):
    def register(func):
        ENDPOINTS.append(Endpoint(path, method, summary, request, response, tag))
        bp.add_url_rule(path, endpoint=func.__name__, view_func=func, methods=[method])
        return func

    return register


def _compute(operation):
    body = read_json_object(current_app.config["SETTINGS"].max_body_bytes)
    return jsonify(operation(body))


@endpoint("/v1/power", "POST", "Power of a planned design at given group sizes.",
          schemas.PowerRequestSchema, schemas.PowerResponseSchema)
def power():
    """Power of a planned design at given group sizes."""
    return _compute(operations.power)


@endpoint("/v1/sample-size", "POST", "Smallest integer design reaching a target power.",
          schemas.SampleSizeRequestSchema, schemas.SampleSizeResponseSchema)
def sample_size():
    """Smallest integer design reaching a target power."""
    return _compute(operations.sample_size)


@endpoint("/v1/detectable-effect", "POST", "Smallest effect detectable with given sizes at a target power.",
          schemas.DetectableEffectRequestSchema, schemas.DetectableEffectResponseSchema)
def detectable_effect():
    """Smallest effect detectable with given sizes at a target power."""
    return _compute(operations.detectable_effect)


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
