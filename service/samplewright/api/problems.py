"""RFC 9457 problem details for every error path.

Every error leaves the service as ``application/problem+json`` with ``type``, ``title``,
``status`` (equal to the HTTP status) and ``detail``; validation failures add a
field-keyed ``errors`` member, capped so a huge bad input cannot produce a huge body.
"""

from __future__ import annotations

import json
import logging
from typing import Any

from flask import Flask, Response, g, request
from werkzeug.exceptions import HTTPException

from ..core.errors import InvalidParameter, NoSolution

log = logging.getLogger("samplewright")

PROBLEM_MEDIA_TYPE = "application/problem+json"
#: At most this many field messages are returned; the rest are counted.
MAX_ERRORS = 50
_BASE = "urn:samplewright:problem:"


class Problem(Exception):
    """An error to be sent as problem details."""

    def __init__(self, status: int, slug: str, title: str, detail: str,
                 errors: dict[str, list[str]] | None = None, headers: dict[str, str] | None = None):
        super().__init__(detail)
        self.status = status
        self.slug = slug
        self.title = title
        self.detail = detail
        self.errors = errors
        self.headers = headers or {}


def flatten_messages(messages: Any, prefix: str = "") -> dict[str, list[str]]:
    """marshmallow's nested error dict as ``{"design.sd": [...], "group_sizes.3": [...]}``."""
    out: dict[str, list[str]] = {}
    if isinstance(messages, dict):
        for key, value in messages.items():
            name = str(key)
            if name == "_schema":
                path = prefix or "body"
            elif name.startswith("_"):  # a cross-field rule such as "_effect"
                path = f"{prefix}" if prefix else "body"
            else:
                path = f"{prefix}.{name}" if prefix else name
            for sub, msgs in flatten_messages(value, path).items():
                out.setdefault(sub, []).extend(msgs)
    elif isinstance(messages, list):
        if all(isinstance(m, str) for m in messages):
            out[prefix or "body"] = list(messages)
        else:
            for item in messages:
                for sub, msgs in flatten_messages(item, prefix).items():
                    out.setdefault(sub, []).extend(msgs)
    else:
        out[prefix or "body"] = [str(messages)]
    return out


def cap_errors(errors: dict[str, list[str]]) -> tuple[dict[str, list[str]], int]:
    """Keep the first MAX_ERRORS messages (in field order) and count the rest."""
    kept: dict[str, list[str]] = {}
    count = 0
    omitted = 0
    for field, msgs in errors.items():
        for msg in msgs:
            if count < MAX_ERRORS:
                kept.setdefault(field, []).append(msg)
                count += 1
            else:
                omitted += 1
    return kept, omitted


def validation_problem(messages: Any) -> Problem:
    errors = flatten_messages(messages)
    fields = ", ".join(list(errors)[:5])
    return Problem(422, "invalid-request", "Request is not valid",
                   f"the request has invalid or missing fields: {fields}", errors=errors)


def core_problem(exc: InvalidParameter | NoSolution) -> Problem:
    if isinstance(exc, NoSolution):
        return Problem(422, "no-solution", "No answer within the service's bounds", str(exc),
                       errors={exc.field: [str(exc).split(": ", 1)[-1]]})
    return Problem(422, "invalid-request", "Request is not valid", str(exc),
                   errors={exc.field: [str(exc).split(": ", 1)[-1]]})


def render(status: int, slug: str | None, title: str, detail: str,
           errors: dict[str, list[str]] | None = None, headers: dict[str, str] | None = None) -> Response:
    body: dict[str, Any] = {
        "type": _BASE + slug if slug else "about:blank",
        "title": title,
        "status": status,
        "detail": detail,
        "instance": request.path,
    }
    rid = getattr(g, "request_id", None)
    if rid:
        body["request_id"] = rid
    g.problem_type = body["type"]  # counted by type in the metrics (app.py, after_request)
    if errors:
        kept, omitted = cap_errors(errors)
        body["errors"] = kept
        if omitted:
            body["errors_omitted"] = omitted
    response = Response(json.dumps(body, allow_nan=False), status=status, mimetype=PROBLEM_MEDIA_TYPE)
    for key, value in (headers or {}).items():
        response.headers[key] = value
    return response


def init_app(app: Flask) -> None:
    """Route every error, including the framework's own, through ``render``."""

    @app.errorhandler(Problem)
    def _problem(exc: Problem):
        return render(exc.status, exc.slug, exc.title, exc.detail, exc.errors, exc.headers)

    @app.errorhandler(InvalidParameter)
    @app.errorhandler(NoSolution)
    def _core(exc):
        p = core_problem(exc)
        return render(p.status, p.slug, p.title, p.detail, p.errors)

    @app.errorhandler(HTTPException)
    def _http(exc: HTTPException):
        headers = {k: v for k, v in exc.get_headers() if k.lower() != "content-type"}
        detail = exc.description or exc.name
        if exc.code == 405:
            detail = f"{request.method} is not allowed here; allowed: {headers.get('Allow', '')}"
        return render(exc.code or 500, None, exc.name, detail, headers=headers)

    @app.errorhandler(Exception)
    def _unexpected(exc: Exception):
        log.exception("unhandled error", extra={"request_id": getattr(g, "request_id", None)})
        return render(500, "internal-error", "Internal error",
                      "the service failed to answer; the error is logged with this request id")
