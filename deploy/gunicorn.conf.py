"""gunicorn settings for samplewright, every value from ``samplewright.config.Settings``.

The same ``SAMPLEWRIGHT_*`` variables that configure the app configure the server, and are
validated by the same code (README, "Settings"); nothing here reads the environment itself.

Worker class: gthread (``samplewright.serving.ThreadWorker``, gunicorn's gthread worker with
one shutdown fix). A sync worker is blocked for the whole upload of a slow client
(a 1 byte/s body holds it until the timeout, so a handful of slow clients take a replica
down); with threads, one slow upload occupies one thread while the worker's other threads
keep answering, the whole body must arrive within ``SAMPLEWRIGHT_BODY_TIMEOUT`` (the app's
deadline, a 408), and gunicorn parks connections that send nothing in its poller instead of
a thread. The computation is short and CPU-bound (about a millisecond), so the default is
one worker process per available CPU (cgroup quota respected) with 4 threads each: the
threads absorb network waits, the processes give CPU parallelism past the GIL.
"""

import os

# Before numpy is imported (preload_app imports the app in the master): one BLAS thread per
# worker, so N workers on N CPUs do not oversubscribe them.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

# lifecycle creates the shared draining flag at import: it must exist before the fork.
from samplewright import lifecycle, serving  # noqa: E402, F401
from samplewright.config import Settings  # noqa: E402

_settings = Settings.from_environ()
_metrics_dir = serving.prepare_metrics_dir(_settings.metrics_dir)

_host = _settings.host
bind = f"[{_host}]:{_settings.port}" if ":" in _host else f"{_host}:{_settings.port}"
workers = _settings.workers
# gthread, closing its listeners as soon as it stops accepting (samplewright/serving.py)
worker_class = "samplewright.serving.ThreadWorker"
threads = _settings.threads
timeout = _settings.timeout
graceful_timeout = _settings.graceful_timeout
keepalive = _settings.keepalive
limit_request_line = _settings.limit_request_line
limit_request_fields = _settings.limit_request_fields
limit_request_field_size = _settings.limit_request_field_size
max_requests = _settings.max_requests
max_requests_jitter = _settings.max_requests_jitter
worker_tmp_dir = "/dev/shm" if os.path.isdir("/dev/shm") else None
preload_app = True
proc_name = "samplewright"
# gunicorn's control socket (gunicornc) is not used: it would need a writable home directory.
control_socket_disable = True

logger_class = "samplewright.serving.JSONLogger"
loglevel = _settings.log_level.lower()
accesslog = "-" if _settings.access_log else None
errorlog = "-"


def on_starting(server):
    """SIGTERM drains first (readiness false for drain_seconds), then stops gracefully."""
    serving.install_draining(server, _settings.drain_seconds)


def post_fork(server, worker):
    """Errors gunicorn answers itself are problem+json too."""
    serving.install_problem_errors()


def child_exit(server, worker):
    """Fold the exited worker's metrics into the archive."""
    serving.worker_exited(_metrics_dir, worker.pid)


def on_exit(server):
    """Remove the metrics directory this server made."""
    serving.remove_metrics_dir(_metrics_dir, _settings.metrics_dir)
