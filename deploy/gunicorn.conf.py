"""gunicorn settings for samplewright, all overridable from the environment.

Worker class: gthread. A sync worker is blocked for the whole upload of a slow client
(a 1 byte/s body holds it until the timeout); with threads, one slow upload occupies a
single thread while the worker's other threads keep answering. Computation is short and
CPU-bound, so a few threads per worker are enough.
"""

import multiprocessing
import os


def _int(name: str, default: int) -> int:
    return int(os.environ.get(name, default))


bind = f"{os.environ.get('HOST', '127.0.0.1')}:{os.environ.get('PORT', '8000')}"
workers = _int("SAMPLEWRIGHT_WORKERS", multiprocessing.cpu_count())
worker_class = "gthread"
threads = _int("SAMPLEWRIGHT_THREADS", 4)
timeout = _int("SAMPLEWRIGHT_TIMEOUT", 30)
graceful_timeout = _int("SAMPLEWRIGHT_GRACEFUL_TIMEOUT", 20)
keepalive = 5
limit_request_line = 4094
limit_request_fields = 50
limit_request_field_size = 8190
max_requests = _int("SAMPLEWRIGHT_MAX_REQUESTS", 5000)
max_requests_jitter = _int("SAMPLEWRIGHT_MAX_REQUESTS_JITTER", 500)
worker_tmp_dir = "/dev/shm" if os.path.isdir("/dev/shm") else None
preload_app = True
accesslog = "-"
errorlog = "-"
access_log_format = (
    '{"time":"%(t)s","remote":"%(h)s","method":"%(m)s","path":"%(U)s","status":%(s)s,'
    '"bytes":%(B)s,"duration_us":%(D)s,"request_id":"%({x-request-id}o)s"}'
)
