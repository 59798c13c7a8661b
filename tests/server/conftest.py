"""Fixtures that start a real gunicorn (see serverutil.py); every server is stopped at teardown."""

from __future__ import annotations

import pytest
from serverutil import Server


@pytest.fixture
def start_server(tmp_path):
    """Factory: start a gunicorn with extra SAMPLEWRIGHT_* settings; all are stopped at teardown."""
    started: list[Server] = []

    def start(env: dict[str, str] | None = None, **kwargs) -> Server:
        server = Server(tmp_path, env, **kwargs).start()
        started.append(server)
        return server

    yield start
    for server in started:
        server.stop()


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    """One shared gunicorn for a module's read-only checks (body timeout 2 s for row 33)."""
    srv = Server(tmp_path_factory.mktemp("gunicorn"), {"SAMPLEWRIGHT_BODY_TIMEOUT": "2"}).start()
    yield srv
    srv.stop()
