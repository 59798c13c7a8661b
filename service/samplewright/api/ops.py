"""Operations endpoints: readiness (a real self-check) and Prometheus metrics.

``/healthz`` (in routes.py) says the process answers; ``/readyz`` says it should get
traffic: it runs a known power calculation through the same validation and computation
as ``POST /v1/power`` and compares the answer, and it answers 503 as soon as a graceful
shutdown has begun (``lifecycle.draining``), so a load balancer stops sending requests
before the server stops accepting them.
"""

from __future__ import annotations

import logging
import math
import time

from flask import current_app, jsonify
from marshmallow import Schema, fields

from .. import lifecycle
from ..observability import render_metrics
from . import operations
from .problems import Problem

log = logging.getLogger("samplewright")

#: The self-check: one-way ANOVA, k = 4 groups of 45, Cohen's f = 0.25, alpha = 0.05.
#: Cohen (1988), Statistical Power Analysis for the Behavioral Sciences, 2nd ed., ch. 8 sample-size
#: tables: n = 45 per group for power .80 at u = 3, f = .25, a = .05 (from memory); the exact
#: power 0.8039869 is an independent computation (scipy.stats.ncf.sf at the central-F critical
#: value, df 3 and 176, lambda = 180 * 0.25**2 = 11.25).
SELF_CHECK_REQUEST = {"n_per_group": 45, "design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 4}}
SELF_CHECK_POWER = 0.8039869128651759
SELF_CHECK_RTOL = 1e-6


class ReadinessSchema(Schema):
    """Readiness: the self-check's outcome."""

    status = fields.String(required=True, metadata={"description": "`ready`."})
    check = fields.String(required=True, metadata={"description": "What the self-check computed."})
    power = fields.Float(required=True, metadata={"description": "The power the self-check computed."})
    expected = fields.Float(required=True, metadata={"description": "The known answer."})
    seconds = fields.Float(required=True, metadata={"description": "How long the self-check took."})


def self_check() -> tuple[float, float]:
    """Run the known calculation; returns (power, seconds). Raises on any failure."""
    start = time.perf_counter()
    power = operations.power(dict(SELF_CHECK_REQUEST, design=dict(SELF_CHECK_REQUEST["design"])))["power"]
    return power, time.perf_counter() - start


def readiness():
    """200 with the self-check's answer, or a 503 problem (draining, or a wrong answer)."""
    if lifecycle.draining():
        raise Problem(503, "not-ready", "Not ready",
                      "the server is shutting down: requests in flight are being finished",
                      headers={"Retry-After": "1"})
    try:
        power, seconds = self_check()
        ok = math.isclose(power, SELF_CHECK_POWER, rel_tol=SELF_CHECK_RTOL)
    except Exception:  # the self-check must report, not crash: any failure is "not ready"
        log.exception("readiness self-check raised")
        power, seconds, ok = float("nan"), 0.0, False
    if not ok:
        raise Problem(503, "not-ready", "Not ready",
                      f"the self-check computed power {power!r} where {SELF_CHECK_POWER!r} is known "
                      f"to be right", headers={"Retry-After": "5"})
    return jsonify(status="ready", check="one-way ANOVA power, k=4, n=45 per group, f=0.25, alpha=0.05",
                   power=power, expected=SELF_CHECK_POWER, seconds=round(seconds, 6))


def metrics():
    """The Prometheus text exposition of this server's metrics (all workers)."""
    body, content_type = render_metrics()
    return current_app.response_class(body, content_type=content_type)
