"""Readiness, metrics, request ids and structured logs, through the test client."""

from __future__ import annotations

import io
import json
import logging
import re

import pytest

from samplewright import lifecycle, observability
from samplewright.api import ops
from samplewright.logs import JSONFormatter

POWER_BODY = {"n_per_group": 45, "design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 4}}


@pytest.fixture(autouse=True)
def _not_draining():
    """Every test starts and ends with the draining flag clear."""
    lifecycle.reset()
    yield
    lifecycle.reset()


def _sample(text: str, name: str, **labels: str) -> float:
    total = 0.0
    for line in text.splitlines():
        if line.startswith(name + "{"):
            found = dict(re.findall(r'(\w+)="([^"]*)"', line[: line.rindex("}") + 1]))
            if all(found.get(k) == v for k, v in labels.items()):
                total += float(line.rsplit(" ", 1)[1])
    return total


# -- readiness -------------------------------------------------------------------------------


def test_readyz_computes_the_known_answer(client, assert_ok):
    """/readyz runs the self-check: Cohen's k=4, n=45, f=.25 gives power 0.8039869 (ops.py)."""
    body = assert_ok(client.get("/readyz"))
    assert body["status"] == "ready"
    assert body["power"] == pytest.approx(0.8039869128651759, rel=1e-9)  # scipy ncf, see ops.py
    assert body["expected"] == ops.SELF_CHECK_POWER


def test_readyz_is_503_while_draining_and_healthz_stays_200(client, assert_problem):
    """Once a shutdown began, readiness is a 503 problem with Retry-After; liveness is unaffected."""
    lifecycle.begin_drain()
    response = client.get("/readyz")
    problem = assert_problem(response, 503)
    assert problem["type"] == "urn:samplewright:problem:not-ready"
    assert response.headers["Retry-After"] == "1"
    assert client.get("/healthz").status_code == 200


def test_readyz_is_503_when_the_self_check_is_wrong(client, assert_problem, monkeypatch):
    """A wrong answer from the computation makes the replica not ready."""
    monkeypatch.setattr(ops, "SELF_CHECK_POWER", 0.5)
    problem = assert_problem(client.get("/readyz"), 503)
    assert "0.5" in problem["detail"]


def test_readyz_is_503_when_the_self_check_raises(client, assert_problem, monkeypatch):
    """An exception in the computation is reported as not ready, not as a 500."""
    def broken(body):
        raise RuntimeError("numerics broken")

    monkeypatch.setattr(ops.operations, "power", broken)
    assert_problem(client.get("/readyz"), 503)


# -- metrics ---------------------------------------------------------------------------------


def test_metrics_count_requests_latency_computation_and_problems(client):
    """Requests by route and status, latency and computation histograms, problems by type."""
    before = client.get("/metrics").get_data(as_text=True)
    for _ in range(3):
        assert client.post("/v1/power", json=POWER_BODY).status_code == 200
    assert client.post("/v1/power", json={"alhpa": 1}).status_code == 422
    assert client.get("/no/such/route").status_code == 404
    response = client.get("/metrics")
    assert response.status_code == 200
    assert response.mimetype == "text/plain" and "version=0.0.4" in response.headers["Content-Type"]
    after = response.get_data(as_text=True)

    def delta(name, **labels):
        return _sample(after, name, **labels) - _sample(before, name, **labels)

    assert delta("samplewright_http_requests_total", route="/v1/power", method="POST", status="200") == 3
    assert delta("samplewright_http_requests_total", route="/v1/power", status="422") == 1
    assert delta("samplewright_http_requests_total", route="unmatched", status="404") == 1
    assert delta("samplewright_http_request_duration_seconds_count", route="/v1/power", status="200") == 3
    assert delta("samplewright_http_request_duration_seconds_bucket", route="/v1/power", status="200",
                 le="+Inf") == 3
    assert delta("samplewright_computation_seconds_count", operation="power") == 4  # the 422 is timed too
    assert delta("samplewright_problems_total", type="urn:samplewright:problem:invalid-request",
                 status="422") == 1
    assert delta("samplewright_problems_total", type="about:blank", status="404") == 1


def test_batch_size_histogram_is_observable():
    """observe_batch records a batch's item count in samplewright_batch_items (for batch routes)."""
    before = _sample(observability.render_metrics()[0].decode(), "samplewright_batch_items_count", route="/t")
    observability.observe_batch("/t", 250)
    text = observability.render_metrics()[0].decode()
    assert _sample(text, "samplewright_batch_items_count", route="/t") == before + 1
    assert _sample(text, "samplewright_batch_items_bucket", route="/t", le="200.0") == 0
    assert _sample(text, "samplewright_batch_items_bucket", route="/t", le="500.0") >= 1


def test_unknown_methods_share_one_label(client):
    """An invented HTTP method is counted as OTHER, so label values stay bounded."""
    client.open("/healthz", method="BREW")
    text = client.get("/metrics").get_data(as_text=True)
    assert 'method="BREW"' not in text and 'method="OTHER"' in text


# -- request ids -----------------------------------------------------------------------------


def test_supplied_request_id_is_echoed_in_header_and_problem(client):
    """A printable X-Request-ID of at most 128 characters is echoed, also inside problem bodies."""
    response = client.post("/v1/power", json={"alhpa": 1}, headers={"X-Request-ID": "lims-4711"})
    assert response.headers["X-Request-ID"] == "lims-4711"
    assert response.get_json()["request_id"] == "lims-4711"


@pytest.mark.parametrize("supplied", ["", "x" * 129, "bad\x01id", "naïve"])
def test_unusable_request_id_is_replaced(client, supplied):
    """An empty, over-long, non-printable or non-ASCII X-Request-ID is replaced by a fresh one."""
    response = client.get("/nope", headers={"X-Request-ID": supplied})
    rid = response.headers["X-Request-ID"]
    assert re.fullmatch(r"[0-9a-f]{32}", rid)
    assert response.get_json()["request_id"] == rid


def test_generated_request_ids_differ(client):
    """Each request without an id gets its own."""
    ids = {client.get("/healthz").headers["X-Request-ID"] for _ in range(5)}
    assert len(ids) == 5


# -- logs ------------------------------------------------------------------------------------


def test_unexpected_error_is_logged_as_json_with_request_id_and_answered_without_traceback(
        client, monkeypatch, assert_problem):
    """Row 31: a forced exception is a 500 problem without traceback; the log line is JSON with the id."""
    stream = io.StringIO()
    handler = logging.StreamHandler(stream)
    handler.setFormatter(JSONFormatter())
    log = logging.getLogger("samplewright")
    log.addHandler(handler)

    def broken(operation, body, encoder):
        raise ZeroDivisionError("secret internal detail")

    monkeypatch.setattr("samplewright.api.routes.operations.answer_text", broken)
    try:
        response = client.post("/v1/power", json=POWER_BODY, headers={"X-Request-ID": "trace-500"})
    finally:
        log.removeHandler(handler)
    problem = assert_problem(response, 500)
    text = response.get_data(as_text=True)
    assert "Traceback" not in text and "secret internal detail" not in text
    assert problem["request_id"] == "trace-500"
    records = [json.loads(line) for line in stream.getvalue().splitlines()]
    (record,) = [r for r in records if r["message"] == "unhandled error"]
    assert record["request_id"] == "trace-500" and record["level"] == "error"
    assert "ZeroDivisionError" in record["exception"]


def test_json_formatter_adds_fields_and_escapes():
    """The formatter writes one JSON object per record, structured fields merged, quotes escaped."""
    record = logging.LogRecord("samplewright", logging.WARNING, __file__, 1, 'say "%s"', ("hi",), None)
    record.fields = {"path": '/a"b', "status": 401}
    doc = json.loads(JSONFormatter().format(record))
    assert doc["message"] == 'say "hi"' and doc["path"] == '/a"b' and doc["status"] == 401
    assert doc["level"] == "warning" and doc["time"].endswith("+00:00")
