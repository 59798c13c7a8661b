"""API keys, CORS, response security headers and the request-body deadline.

API keys (``SAMPLEWRIGHT_API_KEYS``) are optional: with none configured every endpoint is
open. With keys, a request must carry one as ``Authorization: Bearer <key>`` or
``X-API-Key: <key>``, except on ``SAMPLEWRIGHT_OPEN_PATHS`` (by default the health, readiness
and metrics endpoints) and CORS preflights. Keys are compared as SHA-256 digests with
``hmac.compare_digest`` against every configured key, so the time taken depends neither on
how much of a key matched nor on which key it was.

CORS is off unless ``SAMPLEWRIGHT_CORS_ORIGINS`` lists exact origins; only those get
``Access-Control-Allow-Origin`` (never ``*``, never credentials).
"""

from __future__ import annotations

import hashlib
import hmac
import logging
import os
import socket
import threading
import time
from typing import Any

from flask import Response, request

from .api.problems import Problem
from .config import Settings

log = logging.getLogger("samplewright")

REALM = 'Bearer realm="samplewright"'
ALLOWED_METHODS = "GET, POST, OPTIONS"
ALLOWED_HEADERS = "Authorization, Content-Type, X-API-Key, X-Request-ID"
EXPOSED_HEADERS = "X-Request-ID, WWW-Authenticate, Allow"

SECURITY_HEADERS = {
    "Cache-Control": "no-store",
    "X-Content-Type-Options": "nosniff",
    "Content-Security-Policy": "default-src 'none'; frame-ancestors 'none'",
    "X-Frame-Options": "DENY",
    "Referrer-Policy": "no-referrer",
}


def _digest(value: str) -> bytes:
    return hashlib.sha256(value.encode("utf-8", "surrogateescape")).digest()


class KeyChecker:
    """Constant-time membership test of a presented key in the configured set."""

    def __init__(self, keys: tuple[str, ...]):
        self._digests = tuple(_digest(k) for k in keys)

    def __bool__(self) -> bool:
        return bool(self._digests)

    def accepts(self, presented: str) -> bool:
        candidate = _digest(presented)
        ok = False
        for digest in self._digests:  # no early exit: every key is compared
            ok |= hmac.compare_digest(candidate, digest)
        return ok


def presented_key() -> str | None:
    """The key the request carries, if any (Authorization: Bearer first, then X-API-Key)."""
    auth = request.headers.get("Authorization", "")
    scheme, _, token = auth.partition(" ")
    if scheme.lower() == "bearer" and token.strip():
        return token.strip()
    key = request.headers.get("X-API-Key", "").strip()
    return key or None


def require_key(settings: Settings, checker: KeyChecker) -> None:
    """Raise a 401 problem unless the request may pass (open path or accepted key)."""
    if not checker or request.path in settings.open_paths:
        return
    key = presented_key()
    if key is None:
        raise Problem(401, "unauthorized", "Authentication required",
                      "this service requires an API key: send 'Authorization: Bearer <key>' or 'X-API-Key: <key>'",
                      headers={"WWW-Authenticate": REALM})
    if not checker.accepts(key):
        log.warning("API key not accepted", extra={"fields": {"path": request.path[:200]}})
        raise Problem(401, "unauthorized", "Authentication required", "the API key was not accepted",
                      headers={"WWW-Authenticate": REALM + ', error="invalid_token"'})


def is_preflight() -> bool:
    return (request.method == "OPTIONS" and "Origin" in request.headers
            and "Access-Control-Request-Method" in request.headers)


def preflight_response(settings: Settings) -> Response | None:
    """204 for a CORS preflight from an allowed origin; None lets the request go on."""
    origin = request.headers.get("Origin", "")
    if not is_preflight() or origin not in settings.cors_origins:
        return None
    response = Response(status=204)
    response.headers["Access-Control-Allow-Methods"] = ALLOWED_METHODS
    response.headers["Access-Control-Allow-Headers"] = ALLOWED_HEADERS
    response.headers["Access-Control-Max-Age"] = str(settings.cors_max_age)
    return response


def apply_headers(settings: Settings, response: Response) -> Response:
    """Security headers on every response; CORS headers for an allowed Origin."""
    for name, value in SECURITY_HEADERS.items():
        if name == "Content-Security-Policy" and name in response.headers:
            continue  # the HTML pages (api/pages.py) set their own policy, to run their own script
        response.headers[name] = value
    if settings.cors_origins:
        response.vary.add("Origin")
        origin = request.headers.get("Origin")
        if origin is not None and origin in settings.cors_origins:
            response.headers["Access-Control-Allow-Origin"] = origin
            response.headers["Access-Control-Expose-Headers"] = EXPOSED_HEADERS
    return response


# -- the request-body deadline ------------------------------------------------------------


class BodyTimeout(Exception):
    """The client did not send its body within the deadline."""


class _Watchdog:
    """One thread per process that cuts off body reads past their deadline.

    A blocking ``recv`` has no total deadline (a client sending one byte a second never
    trips a per-read timeout), so the watchdog shuts the socket's read side at the
    deadline; the blocked read then returns end-of-file and the reader reports a timeout.
    It looks four times a second, so a deadline holds to within a quarter of a second, and
    arming costs a dictionary insert under a lock (no wake-up per request).
    """

    PERIOD = 0.25

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._armed: dict[int, tuple[float, Any, list[bool]]] = {}
        self._next = 0
        self._pid: int | None = None

    def arm(self, deadline: float, sock: Any) -> tuple[int, list[bool]]:
        expired = [False]
        with self._lock:
            if self._pid != os.getpid():  # first use in this (possibly forked) process
                self._pid = os.getpid()
                self._armed.clear()
                threading.Thread(target=self._run, name="body-deadline", daemon=True).start()
            self._next += 1
            token = self._next
            self._armed[token] = (deadline, sock, expired)
        return token, expired

    def disarm(self, token: int) -> None:
        with self._lock:
            self._armed.pop(token, None)

    def _run(self) -> None:
        while True:
            time.sleep(self.PERIOD)
            now = time.monotonic()
            with self._lock:
                due = [t for t, (d, _s, _e) in self._armed.items() if d <= now]
                expired = [self._armed.pop(t) for t in due]
            for _deadline, sock, flag in expired:
                flag[0] = True
                try:
                    sock.shutdown(socket.SHUT_RD)
                except OSError:
                    pass


_WATCHDOG = _Watchdog()


class _DeadlineInput:
    """``wsgi.input`` whose reads fail with BodyTimeout once the deadline has passed."""

    def __init__(self, inner: Any, sock: Any, deadline: float):
        self._inner = inner
        self._sock = sock
        self._deadline = deadline

    def _call(self, method: str, *args: Any) -> Any:
        if time.monotonic() >= self._deadline:
            raise BodyTimeout()
        token, expired = _WATCHDOG.arm(self._deadline, self._sock)
        try:
            result = getattr(self._inner, method)(*args)
        except Exception as exc:
            if expired[0]:
                raise BodyTimeout() from exc
            raise
        finally:
            _WATCHDOG.disarm(token)
        if expired[0]:
            raise BodyTimeout()
        return result

    def read(self, size: int = -1) -> bytes:
        return self._call("read", size)

    def readline(self, size: int = -1) -> bytes:
        return self._call("readline", size)

    def readlines(self, hint: int = -1) -> list[bytes]:
        return self._call("readlines", hint)

    def __iter__(self):
        while line := self.readline():
            yield line


class BodyDeadline:
    """WSGI middleware: the whole request body must arrive within ``seconds``.

    Applies when the server exposes the client socket (gunicorn's ``gunicorn.socket``);
    headers are bounded by gunicorn's own limits and data wait.
    """

    def __init__(self, app: Any, seconds: float):
        self.app = app
        self.seconds = seconds

    def __call__(self, environ: dict, start_response: Any) -> Any:
        sock = environ.get("gunicorn.socket")
        if sock is not None and "wsgi.input" in environ:
            environ["wsgi.input"] = _DeadlineInput(environ["wsgi.input"], sock,
                                                   time.monotonic() + self.seconds)
        return self.app(environ, start_response)
