"""The **server** rows of ../shared/HOSTILE-INPUTS.md (9, 33, 34) against a real gunicorn.

Row 9: a chunked body over the limit is refused (413), not truncated and processed.
Row 33: a 1 byte/s client does not starve other requests, and its own request is cut off
by the body deadline (408). Row 34: an over-long request line and too many or too large
headers are answered by gunicorn's documented limits (414, 431), as problem+json.
"""

from __future__ import annotations

import json
import select
import socket
import threading
import time

import pytest
from serverutil import LOOPBACK, POWER_BODY, parse_raw_response, raw_exchange, request

LIMIT = 64 * 1024  # the default SAMPLEWRIGHT_MAX_BODY_BYTES of the module's server
PROBLEM = "application/problem+json"


def _problem(status: int, headers: dict, body: bytes, expected: int) -> dict:
    assert status == expected, body[:500]
    assert headers["content-type"].split(";")[0] == PROBLEM
    doc = json.loads(body)
    assert doc["status"] == expected and doc["title"] and doc["detail"]
    return doc


def _chunked_request(body: bytes, chunk: int = 8192, path: str = "/v1/power") -> bytes:
    head = (f"POST {path} HTTP/1.1\r\nHost: {LOOPBACK}\r\nContent-Type: application/json\r\n"
            "Transfer-Encoding: chunked\r\nConnection: close\r\n\r\n").encode()
    parts = [head]
    for i in range(0, len(body), chunk):
        piece = body[i:i + chunk]
        parts.append(f"{len(piece):x}\r\n".encode() + piece + b"\r\n")
    parts.append(b"0\r\n\r\n")
    return b"".join(parts)


def _valid_prefix_body(total: int) -> bytes:
    """A valid request padded with spaces past the limit, then garbage: valid only if truncated."""
    valid = json.dumps(POWER_BODY).encode()
    return valid + b" " * (total - len(valid)) + b"not json"


# -- row 9 -----------------------------------------------------------------------------------


def test_chunked_body_over_limit_is_413(server):
    """A chunked body over the limit whose first 64 KiB are valid JSON is refused with 413."""
    raw = raw_exchange(server.port, _chunked_request(_valid_prefix_body(LIMIT + 4096)))
    doc = _problem(*parse_raw_response(raw), 413)
    assert "limit" in doc["detail"]


def test_chunked_body_under_limit_is_answered(server):
    """The same request padded to just under the limit, chunked, is computed (200)."""
    valid = json.dumps(POWER_BODY).encode()
    raw = raw_exchange(server.port, _chunked_request(valid + b" " * (LIMIT - len(valid) - 1)))
    status, headers, body = parse_raw_response(raw)
    assert status == 200, body[:300]
    assert json.loads(body)["power"] == pytest.approx(0.8039869, rel=1e-6)  # Cohen k=4, n=45, f=.25 (ops.py)


def test_content_length_over_limit_is_413_before_the_body(server):
    """A Content-Length over the limit is refused from the headers alone (no body sent)."""
    head = (f"POST /v1/power HTTP/1.1\r\nHost: {LOOPBACK}\r\nContent-Type: application/json\r\n"
            f"Content-Length: {LIMIT + 1}\r\n\r\n").encode()
    raw = raw_exchange(server.port, head, timeout=10)
    _problem(*parse_raw_response(raw), 413)


# -- row 33 ----------------------------------------------------------------------------------


def _slow_post(port: int, body: bytes, *, chunked: bool, interval: float = 1.0,
               max_seconds: float = 20.0) -> tuple[float, bytes]:
    """Send headers, then the body one byte per ``interval`` until the server answers."""
    framing = "Transfer-Encoding: chunked" if chunked else f"Content-Length: {len(body)}"
    head = (f"POST /v1/power HTTP/1.1\r\nHost: {LOOPBACK}\r\nContent-Type: application/json\r\n"
            f"{framing}\r\nConnection: close\r\n\r\n").encode()
    start = time.monotonic()
    with socket.create_connection((LOOPBACK, port), timeout=10) as s:
        s.sendall(head)
        for byte in body:
            readable, _, _ = select.select([s], [], [], interval)
            if readable or time.monotonic() - start > max_seconds:
                break
            piece = bytes([byte])
            try:
                s.sendall(b"1\r\n" + piece + b"\r\n" if chunked else piece)
            except OSError:
                break
        out = b""
        while time.monotonic() - start < max_seconds + 10:
            try:
                chunk = s.recv(65536)
            except (TimeoutError, ConnectionResetError):
                break
            if not chunk:
                break
            out += chunk
    return time.monotonic() - start, out


@pytest.mark.parametrize("chunked", [False, True], ids=["content-length", "chunked"])
def test_slow_client_does_not_starve_others_and_is_cut_off(server, chunked):
    """While a 1 byte/s client uploads, 20 other requests are answered; it gets a 408 by the deadline."""
    result: dict = {}

    def upload():
        result["elapsed"], result["raw"] = _slow_post(server.port, json.dumps(POWER_BODY).encode(),
                                                      chunked=chunked)

    slow = threading.Thread(target=upload, daemon=True)
    slow.start()
    time.sleep(0.3)
    for _ in range(20):
        status, _, body = request(server.port, "POST", "/v1/power", POWER_BODY, timeout=5)
        assert status == 200, body[:300]
    slow.join(timeout=40)
    assert not slow.is_alive()
    _problem(*parse_raw_response(result["raw"]), 408)
    # SAMPLEWRIGHT_BODY_TIMEOUT is 2 s on this server: cut off after it, well before the bound.
    assert 1.5 <= result["elapsed"] < 15


# -- row 34 ----------------------------------------------------------------------------------


def test_request_line_over_limit_is_414_problem(server):
    """A 5 KB request line (limit 4094) gets gunicorn's 414, as problem+json."""
    raw = raw_exchange(server.port, f"GET /{'a' * 5000} HTTP/1.1\r\nHost: {LOOPBACK}\r\n\r\n".encode())
    doc = _problem(*parse_raw_response(raw), 414)
    assert "4094" in doc["detail"]


def test_too_many_headers_is_431_problem(server):
    """101 header fields (limit 50) get gunicorn's 431, as problem+json."""
    fields = "".join(f"X-Filler-{i}: {i}\r\n" for i in range(101))
    raw = raw_exchange(server.port, f"GET /healthz HTTP/1.1\r\nHost: {LOOPBACK}\r\n{fields}\r\n".encode())
    _problem(*parse_raw_response(raw), 431)


def test_header_field_over_limit_is_431_problem(server):
    """One 9,000-byte header field (limit 8190) gets gunicorn's 431, as problem+json."""
    raw = raw_exchange(server.port,
                       f"GET /healthz HTTP/1.1\r\nHost: {LOOPBACK}\r\nX-Big: {'b' * 9000}\r\n\r\n".encode())
    _problem(*parse_raw_response(raw), 431)


def test_within_limits_is_served(server):
    """A request line of 4,000 bytes and 40 headers are within the limits (404 problem, not 414/431)."""
    fields = "".join(f"X-Filler-{i}: {i}\r\n" for i in range(40))
    raw = raw_exchange(server.port,
                       f"GET /{'a' * 4000} HTTP/1.1\r\nHost: {LOOPBACK}\r\n{fields}Connection: close\r\n\r\n".encode())
    _problem(*parse_raw_response(raw), 404)
