"""Structured logs: one JSON object per line.

Members: ``time`` (UTC, ISO 8601), ``level``, ``logger``, ``message``, the ``request_id`` of
the request being served, any structured ``fields`` (``extra={"fields": {...}}``), and
``exception`` (the traceback) for logged errors. Tracebacks go to the log only, never into
a response. gunicorn's own logs use the same formatter (``serving.JSONLogger``).
"""

from __future__ import annotations

import datetime as _dt
import json
import logging
import sys


def _current_request_id() -> str | None:
    from flask import g, has_request_context

    if has_request_context():
        return g.get("request_id")
    return None


class JSONFormatter(logging.Formatter):
    """One JSON object per record; ``extra={"fields": {...}}`` adds structured members."""

    def format(self, record: logging.LogRecord) -> str:
        out: dict = {
            "time": _dt.datetime.fromtimestamp(record.created, _dt.UTC).isoformat(timespec="milliseconds"),
            "level": record.levelname.lower(),
            "logger": record.name,
            "message": record.getMessage(),
        }
        request_id = getattr(record, "request_id", None) or _current_request_id()
        if request_id:
            out["request_id"] = request_id
        fields = getattr(record, "fields", None)
        if isinstance(fields, dict):
            out.update(fields)
        if record.exc_info:
            out["exception"] = self.formatException(record.exc_info)
        return json.dumps(out, default=str)


def configure_logging(level: str) -> logging.Logger:
    """The ``samplewright`` logger writing JSON lines to stderr (idempotent)."""
    log = logging.getLogger("samplewright")
    log.setLevel(level)
    log.propagate = False
    if not any(getattr(h, "_samplewright", False) for h in log.handlers):
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(JSONFormatter())
        handler._samplewright = True
        log.addHandler(handler)
    return log
