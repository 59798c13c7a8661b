"""Graceful shutdown, worker replacement, multiprocess metrics and logs on a real gunicorn."""

from __future__ import annotations

import json
import os
import re
import signal
import socket
import time

import pytest
from serverutil import LOOPBACK, POWER_BODY, parse_raw_response, request


def _metric(text: str, name: str, **labels: str) -> float:
    """Sum of the samples of ``name`` whose labels include ``labels``."""
    total = 0.0
    for line in text.splitlines():
        if not line.startswith(name + "{"):
            continue
        found = dict(re.findall(r'(\w+)="([^"]*)"', line[len(name):line.rindex("}") + 1]))
        if all(found.get(k) == v for k, v in labels.items()):
            total += float(line.rsplit(" ", 1)[1])
    return total


def _scrape(port: int) -> str:
    status, headers, body = request(port, "GET", "/metrics")
    assert status == 200 and headers["content-type"].startswith("text/plain")
    return body.decode()


def _refused(port: int) -> bool:
    try:
        with socket.create_connection((LOOPBACK, port), timeout=1):
            return False
    except OSError:
        return True


def test_sigterm_turns_readiness_false_then_drains_in_flight(start_server):
    """SIGTERM: /readyz 503 at once while requests are served; an in-flight request completes after the listener closes."""
    server = start_server({"SAMPLEWRIGHT_DRAIN_SECONDS": "2", "SAMPLEWRIGHT_BODY_TIMEOUT": "20"})
    body = json.dumps(POWER_BODY).encode()
    inflight = socket.create_connection((LOOPBACK, server.port), timeout=20)
    inflight.sendall((f"POST /v1/power HTTP/1.1\r\nHost: {LOOPBACK}\r\nContent-Type: application/json\r\n"
                      f"Content-Length: {len(body)}\r\nConnection: close\r\n\r\n").encode() + body[:10])
    time.sleep(0.3)  # the worker has accepted it and is reading the body
    server.signal(signal.SIGTERM)
    time.sleep(0.3)

    status, _, doc = request(server.port, "GET", "/readyz")
    assert status == 503 and json.loads(doc)["type"].endswith(":not-ready")
    assert request(server.port, "GET", "/healthz")[0] == 200  # alive, only not ready
    assert request(server.port, "POST", "/v1/power", POWER_BODY)[0] == 200  # still serving while draining

    deadline = time.monotonic() + 15
    while not _refused(server.port) and time.monotonic() < deadline:
        time.sleep(0.2)
    assert _refused(server.port), "the listener did not close after the drain period"
    inflight.sendall(body[10:])
    raw = b""
    while chunk := inflight.recv(65536):
        raw += chunk
    inflight.close()
    status, _, answer = parse_raw_response(raw)
    assert status == 200 and json.loads(answer)["power"] == pytest.approx(0.8039869, rel=1e-6)
    assert server.wait(timeout=30) == 0


def test_killed_worker_is_replaced_and_metrics_survive(start_server, tmp_path):
    """kill -9 of a worker: the master starts a new one; request counts are kept (archived)."""
    metrics_dir = tmp_path / "metrics"
    server = start_server({"SAMPLEWRIGHT_METRICS_DIR": str(metrics_dir)})
    before = server.wait_for_workers(2)
    for _ in range(30):
        assert request(server.port, "POST", "/v1/power", POWER_BODY)[0] == 200
    counted = _metric(_scrape(server.port), "samplewright_http_requests_total", route="/v1/power", status="200")
    assert counted == 30

    victim = before[0]
    os.kill(victim, signal.SIGKILL)
    after = server.wait_for_workers(2, exclude=(victim,))
    assert victim not in after
    assert request(server.port, "GET", "/readyz")[0] == 200
    text = _scrape(server.port)
    assert _metric(text, "samplewright_http_requests_total", route="/v1/power", status="200") == 30
    assert not list(metrics_dir.glob(f"*_{victim}.db")), "the dead worker's files were not archived"


def test_metrics_are_the_sum_over_workers(start_server):
    """Every scrape reports all workers' requests, whichever worker answers it."""
    server = start_server({"SAMPLEWRIGHT_WORKERS": "2"})
    for _ in range(40):
        assert request(server.port, "POST", "/v1/power", POWER_BODY)[0] == 200
    request(server.port, "POST", "/v1/power", b"{", headers={"Content-Type": "application/json"})
    for _ in range(6):
        text = _scrape(server.port)
        assert _metric(text, "samplewright_http_requests_total", route="/v1/power", status="200") == 40
        assert _metric(text, "samplewright_computation_seconds_count", operation="power") == 40
        assert _metric(text, "samplewright_problems_total", type="urn:samplewright:problem:unparsable",
                       status="400") == 1
    pids = {r["pid"] for r in server.log_records("stdout") if r.get("path") == "/v1/power"}
    assert pids <= set(server.workers())


def test_worker_recycling_loses_no_request_and_no_count(start_server, tmp_path):
    """With max_requests 25 the workers are replaced repeatedly: 200 requests all succeed and are all counted."""
    metrics_dir = tmp_path / "metrics"
    server = start_server({"SAMPLEWRIGHT_MAX_REQUESTS": "25", "SAMPLEWRIGHT_MAX_REQUESTS_JITTER": "0",
                           "SAMPLEWRIGHT_METRICS_DIR": str(metrics_dir)})
    first = set(server.wait_for_workers(2))
    for _ in range(200):
        assert request(server.port, "POST", "/v1/power", POWER_BODY)[0] == 200
    assert not first & set(server.workers()), "no worker was recycled"
    time.sleep(0.5)
    text = _scrape(server.port)
    assert _metric(text, "samplewright_http_requests_total", route="/v1/power", status="200") == 200
    # archived: at most the live workers' files plus one archive per kind remain
    assert len(list(metrics_dir.glob("counter_*.db"))) <= 1 + 3


def test_access_and_error_logs_are_json_with_request_id(start_server):
    """stdout has one JSON access record per request, carrying the X-Request-ID; stderr is JSON too."""
    server = start_server({"SAMPLEWRIGHT_WORKERS": "1"})
    status, headers, _ = request(server.port, "POST", "/v1/power", POWER_BODY,
                                 headers={"X-Request-ID": "trace-ops-0001"})
    assert status == 200 and headers["x-request-id"] == "trace-ops-0001"
    status, headers, body = request(server.port, "POST", "/v1/power", {"alhpa": 0.05})
    problem = json.loads(body)
    assert status == 422 and problem["request_id"] == headers["x-request-id"]
    time.sleep(0.3)
    records = server.log_records("stdout")
    mine = [r for r in records if r.get("request_id") == "trace-ops-0001"]
    assert len(mine) == 1
    assert mine[0]["method"] == "POST" and mine[0]["path"] == "/v1/power" and mine[0]["status"] == 200
    assert isinstance(mine[0]["duration_ms"], float) and mine[0]["level"] == "info"
    assert any(r.get("request_id") == problem["request_id"] and r["status"] == 422 for r in records)
    errors = server.log_records("stderr")
    assert any("Listening at" in r["message"] for r in errors)
