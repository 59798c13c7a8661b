"""gunicorn integration, used by ``deploy/gunicorn.conf.py``.

- ``ThreadWorker``: gunicorn's gthread worker, closing its listening sockets as soon as
  it stops accepting (see the class).
- ``JSONLogger``: gunicorn's error and access logs as JSON lines (access log to stdout,
  with the request id the app echoed in ``X-Request-ID``).
- ``problem_write_error``: the errors gunicorn answers itself, before the app sees the
  request (request line too long: 414, too many or too large headers: 431, malformed
  request: 400), as ``application/problem+json`` instead of an HTML page.
- ``prepare_metrics_dir`` / ``archive_worker_files``: prometheus-client multiprocess mode.
- ``install_draining``: SIGTERM to the master first turns readiness false (every worker's
  ``/readyz`` answers 503) and keeps serving for ``drain_seconds`` so that load balancers
  take the replica out; then gunicorn's graceful stop closes the listeners and lets every
  worker finish its in-flight requests within ``graceful_timeout``. A second SIGTERM stops
  at once (gracefully); SIGINT and SIGQUIT keep gunicorn's quick shutdown.
"""

from __future__ import annotations

import glob
import json
import os
import shutil
import sys
import tempfile
import time

from gunicorn import glogging, util
from gunicorn.workers.gthread import ThreadWorker as _GThreadWorker

from . import lifecycle
from .logs import JSONFormatter

# Not imported from observability: that imports prometheus-client, which must not happen
# before prepare_metrics_dir has set the variable.
MULTIPROC_ENV = "PROMETHEUS_MULTIPROC_DIR"
_OWNER_ENV = "SAMPLEWRIGHT_METRICS_DIR_OWNER"


class ThreadWorker(_GThreadWorker):
    """gthread, but a stopping worker closes its listeners at once instead of at exit.

    A stopping gthread worker stops accepting, then waits up to ``graceful_timeout`` for its
    in-flight requests with the listening socket still open: new connections are then
    queued by the kernel, never accepted, and reset when the worker exits. Closing the
    listener when accepting stops turns those into an immediate "connection refused", which
    a client or load balancer retries elsewhere at once.
    """

    def set_accept_enabled(self, enabled):
        super().set_accept_enabled(enabled)
        if not enabled and not self.alive:
            for listener in self.sockets:
                listener.close()


class JSONLogger(glogging.Logger):
    """gunicorn's logger with JSON formatters and a structured access record."""

    def setup(self, cfg):
        super().setup(cfg)
        for log in (self.error_log, self.access_log):
            for handler in log.handlers:
                handler.setFormatter(JSONFormatter())

    def access(self, resp, req, environ, request_time):
        if not self.access_log_enabled:
            return
        status = resp.status
        if isinstance(status, str):
            status = status.split(None, 1)[0]
        try:
            status = int(status)
        except (TypeError, ValueError):
            pass
        headers = resp.headers.items() if hasattr(resp.headers, "items") else resp.headers
        request_id = next((v for k, v in headers if k.lower() == "x-request-id"), None)
        fields = {
            "remote": environ.get("REMOTE_ADDR"),
            "method": environ.get("REQUEST_METHOD"),
            "path": environ.get("PATH_INFO"),
            "status": status,
            "bytes": getattr(resp, "sent", None),
            "duration_ms": round(request_time.total_seconds() * 1000, 3),
            "request_id": request_id,
            "user_agent": environ.get("HTTP_USER_AGENT"),
            "pid": os.getpid(),
        }
        try:
            self.access_log.info("request", extra={"fields": fields})
        except Exception:  # a log line must never fail a request
            self.error("access log failed")


def problem_write_error(sock, status_int, reason, mesg):
    """gunicorn's ``util.write_error`` with an RFC 9457 body instead of HTML."""
    body = json.dumps({"type": "about:blank", "title": reason, "status": status_int,
                       "detail": mesg or reason}).encode("ascii")
    head = (f"HTTP/1.1 {status_int} {reason}\r\nConnection: close\r\n"
            f"Content-Type: application/problem+json\r\nContent-Length: {len(body)}\r\n"
            "Cache-Control: no-store\r\nX-Content-Type-Options: nosniff\r\n\r\n").encode("latin-1")
    util.write_nonblock(sock, head + body)


def install_problem_errors() -> None:
    """Route gunicorn's own error responses through ``problem_write_error`` (per worker)."""
    util.write_error = problem_write_error


def prepare_metrics_dir(configured: str | None) -> str:
    """Set ``PROMETHEUS_MULTIPROC_DIR`` (before prometheus-client is imported) and empty it.

    ``configured`` is ``SAMPLEWRIGHT_METRICS_DIR``; without it a fresh directory is made in
    ``/dev/shm`` (memory, where available) and removed at exit. A configuration reload in
    the same master keeps the directory it already has.
    """
    current = os.environ.get(MULTIPROC_ENV)
    if current and os.environ.get(_OWNER_ENV) == str(os.getpid()) and os.path.isdir(current):
        return current
    if "prometheus_client" in sys.modules:
        raise RuntimeError("prometheus_client was imported before the metrics directory was set: "
                           "multiprocess metrics would silently be per-worker")
    if configured:
        os.makedirs(configured, exist_ok=True)
        for stale in glob.glob(os.path.join(configured, "*.db")):
            os.remove(stale)
        path = configured
    else:
        base = "/dev/shm" if os.path.isdir("/dev/shm") and os.access("/dev/shm", os.W_OK) else None
        path = tempfile.mkdtemp(prefix="samplewright-metrics-", dir=base)
    os.environ[MULTIPROC_ENV] = path
    os.environ[_OWNER_ENV] = str(os.getpid())
    return path


def remove_metrics_dir(path: str, configured: str | None) -> None:
    """At exit: remove a directory we made; leave a configured one (emptied at next start)."""
    if not configured and os.path.basename(path).startswith("samplewright-metrics-"):
        shutil.rmtree(path, ignore_errors=True)


def worker_exited(path: str, pid: int) -> None:
    """Fold the exited worker's metric files into the archive (see observability)."""
    from .observability import archive_worker_files

    archive_worker_files(pid, path)


def install_draining(arbiter, drain_seconds: float) -> None:
    """Make the master's first SIGTERM drain before the graceful stop (see module doc)."""
    state: dict[str, float | None] = {"deadline": None}
    manage_workers = arbiter.manage_workers

    def handle_term():
        lifecycle.begin_drain()
        if state["deadline"] is not None or drain_seconds <= 0:
            raise StopIteration
        state["deadline"] = time.monotonic() + drain_seconds
        arbiter.log.info("SIGTERM: readiness is now false; still serving for %.1f s, then stopping "
                         "gracefully (in-flight requests get %d s)", drain_seconds,
                         arbiter.cfg.graceful_timeout)

    def manage_workers_or_stop():
        deadline = state["deadline"]
        if deadline is not None and time.monotonic() >= deadline:
            arbiter.log.info("drain period over: closing the listeners, finishing in-flight requests")
            raise StopIteration
        manage_workers()

    # The arbiter dispatches signals by attribute lookup (handle_<name>), and calls
    # manage_workers() at least once a second from its main loop inside the try that turns
    # StopIteration into a graceful halt; instance attributes override both.
    arbiter.handle_term = handle_term
    arbiter.manage_workers = manage_workers_or_stop
