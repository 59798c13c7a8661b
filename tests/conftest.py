"""Shared fixtures: the app built from injected settings, its test client, and problem checks.

pytest-flask picks up the ``app`` fixture and provides ``client``; the settings are always
passed in explicitly, so no test reads the real ``SAMPLEWRIGHT_*`` environment.
"""

from __future__ import annotations

import json
from typing import Any

import pytest

from samplewright.app import create_app
from samplewright.config import Settings

PROBLEM_MEDIA_TYPE = "application/problem+json"
JSON_MEDIA_TYPE = "application/json"
COMPUTE_ROUTES = ("/v1/power", "/v1/sample-size", "/v1/detectable-effect")

#: The settings every test app is built with (the defaults, stated rather than read).
TEST_SETTINGS = Settings(max_body_bytes=64 * 1024, log_level="INFO")


def _reject_constant(name: str):
    raise ValueError(f"{name} is not JSON")


def strict_loads(text: str | bytes) -> Any:
    """Parse as RFC 8259 JSON: NaN, Infinity and -Infinity are refused."""
    if isinstance(text, bytes):
        text = text.decode("utf-8")
    return json.loads(text, parse_constant=_reject_constant)


@pytest.fixture(scope="session")
def settings() -> Settings:
    """The injected settings (override in a module, session-scoped, to test other limits)."""
    return TEST_SETTINGS


@pytest.fixture(scope="session")
def app(settings):
    """The application built from injected settings, never from the environment.

    Built once: the app keeps no state between requests, and building it per test costs
    more than most of the requests the tests make.
    """
    return create_app(settings)


@pytest.fixture
def post_json(client):
    """POST a body: a Python value is JSON-encoded, str/bytes are sent as they are."""

    def post(path: str, body: Any, *, content_type: str | None = JSON_MEDIA_TYPE, headers=None):
        if isinstance(body, str | bytes):
            data = body
        else:
            data = json.dumps(body, separators=(",", ":"))
        kwargs: dict[str, Any] = {"data": data, "headers": headers or {}}
        if content_type is not None:
            kwargs["content_type"] = content_type
        return client.post(path, **kwargs)

    return post


def check_ok(response, status: int = 200) -> dict:
    """A JSON success: status, media type, strict JSON object body; returns the body."""
    assert response.status_code == status, response.get_data(as_text=True)[:2000]
    assert response.mimetype == JSON_MEDIA_TYPE
    body = strict_loads(response.get_data())
    assert isinstance(body, dict)
    return body


def check_problem(response, status: int, field: str | None = None, *, detail_contains: str | None = None) -> dict:
    """An RFC 9457 problem: status, media type, strict JSON, body status, optionally a field.

    ``field`` must be a key of ``errors``; ``detail_contains`` a case-insensitive substring
    of ``detail``. Returns the parsed body.
    """
    text = response.get_data(as_text=True)
    assert response.status_code == status, text[:2000]
    assert response.mimetype == PROBLEM_MEDIA_TYPE, response.mimetype
    body = strict_loads(response.get_data())
    assert isinstance(body, dict)
    for key in ("type", "title", "status", "detail"):
        assert key in body, f"problem without {key!r}: {text[:500]}"
    assert body["status"] == response.status_code
    assert isinstance(body["title"], str) and body["title"]
    assert isinstance(body["detail"], str) and body["detail"]
    if field is not None:
        assert field in body.get("errors", {}), f"{field!r} not named in {body.get('errors')}"
        assert all(isinstance(m, str) and m for m in body["errors"][field])
    if detail_contains is not None:
        assert detail_contains.lower() in body["detail"].lower(), body["detail"]
    return body


@pytest.fixture
def strict_json():
    """The strict JSON parser (rejects NaN and the infinities)."""
    return strict_loads


@pytest.fixture
def assert_ok():
    """Check a JSON success response and return its body (see ``check_ok``)."""
    return check_ok


@pytest.fixture
def assert_problem():
    """Check a problem response and return its body (see ``check_problem``)."""
    return check_problem
