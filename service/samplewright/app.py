"""Application factory."""

from __future__ import annotations

import json
import time
import uuid

from flask import Flask, g, request
from flask.json.provider import JSONProvider

from . import observability, security
from .api import problems
from .api.routes import bp
from .config import Settings
from .logs import configure_logging


class StrictJSONProvider(JSONProvider):
    """JSON out with ``allow_nan=False``: a NaN can never reach a client as invalid JSON."""

    _encoder = json.JSONEncoder(allow_nan=False, separators=(",", ":"))

    def dumps(self, obj, **kwargs):
        if not kwargs:  # every response body: one encoder, built once
            return self._encoder.encode(obj)
        return json.dumps(obj, allow_nan=False, separators=(",", ":"), **kwargs)

    def loads(self, s, **kwargs):
        return json.loads(s, **kwargs)


def create_app(settings: Settings | None = None) -> Flask:
    """Build the WSGI app; ``settings`` defaults to the environment's."""
    settings = settings or Settings.from_environ()
    app = Flask(__name__)
    app.json = StrictJSONProvider(app)
    app.config["SETTINGS"] = settings
    # Never the debugger, never a traceback in a response, whatever FLASK_DEBUG says.
    app.config.update(DEBUG=False, TESTING=False, PROPAGATE_EXCEPTIONS=False,
                      TRAP_HTTP_EXCEPTIONS=False, TRAP_BAD_REQUEST_ERRORS=False)
    app.debug = False
    configure_logging(settings.log_level)
    keys = security.KeyChecker(settings.api_keys)

    @app.before_request
    def _request_id():
        g.started = time.perf_counter()
        supplied = request.headers.get("X-Request-ID", "")
        ok = 0 < len(supplied) <= 128 and supplied.isascii() and supplied.isprintable()
        g.request_id = supplied if ok else uuid.uuid4().hex

    def _cors_and_auth():
        preflight = security.preflight_response(settings)
        if preflight is not None:
            return preflight
        security.require_key(settings, keys)
        return None

    if settings.cors_origins or keys:  # otherwise it can neither answer nor refuse anything
        app.before_request(_cors_and_auth)

    @app.after_request
    def _finish(response):
        response.headers["X-Request-ID"] = g.get("request_id", "")
        security.apply_headers(settings, response)
        rule = request.url_rule.rule if request.url_rule is not None else None
        observability.observe_request(rule, request.method, response.status_code,
                                      time.perf_counter() - g.get("started", time.perf_counter()))
        problem_type = g.get("problem_type")
        if problem_type is not None:
            observability.observe_problem(problem_type, response.status_code)
        return response

    @app.errorhandler(security.BodyTimeout)
    def _body_timeout(exc):
        return problems.render(408, "body-timeout", "Request Timeout",
                               f"the request body did not arrive within {settings.body_timeout:g} seconds")

    problems.init_app(app)
    app.register_blueprint(bp)
    app.wsgi_app = security.BodyDeadline(app.wsgi_app, settings.body_timeout)
    return app
