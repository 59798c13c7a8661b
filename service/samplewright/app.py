"""Application factory."""

from __future__ import annotations

import json
import logging
import uuid

from flask import Flask, g, request
from flask.json.provider import JSONProvider

from .api import problems
from .api.routes import bp
from .config import Settings


class StrictJSONProvider(JSONProvider):
    """JSON out with ``allow_nan=False``: a NaN can never reach a client as invalid JSON."""

    def dumps(self, obj, **kwargs):
        return json.dumps(obj, allow_nan=False, separators=(",", ":"), **kwargs)

    def loads(self, s, **kwargs):
        return json.loads(s, **kwargs)


def create_app(settings: Settings | None = None) -> Flask:
    """Build the WSGI app; ``settings`` defaults to the environment's."""
    settings = settings or Settings.from_environ()
    app = Flask(__name__)
    app.json = StrictJSONProvider(app)
    app.config["SETTINGS"] = settings
    app.config["PROPAGATE_EXCEPTIONS"] = False
    logging.getLogger("samplewright").setLevel(settings.log_level)

    @app.before_request
    def _request_id():
        supplied = request.headers.get("X-Request-ID", "")
        ok = 0 < len(supplied) <= 128 and supplied.isascii() and supplied.isprintable()
        g.request_id = supplied if ok else uuid.uuid4().hex

    @app.after_request
    def _headers(response):
        response.headers["X-Request-ID"] = g.get("request_id", "")
        response.headers["Cache-Control"] = "no-store"
        response.headers["X-Content-Type-Options"] = "nosniff"
        return response

    problems.init_app(app)
    app.register_blueprint(bp)
    return app
