"""Prometheus metrics.

gunicorn runs several worker processes and a scrape reaches one of them, so the
counters live in prometheus-client's multiprocess mode: each worker writes its values to
memory-mapped files in ``PROMETHEUS_MULTIPROC_DIR`` and ``/metrics`` sums the files of all
workers, live and dead. ``deploy/gunicorn.conf.py`` sets that directory before the app (and
so prometheus-client) is imported, empties it at start, folds the files of every exited
worker into one archive file (so worker recycling does not grow the directory) and removes
it at exit. Without the variable (tests, the development server) the metrics are this
process's own. Structured logs are in ``logs.py``.
"""

from __future__ import annotations

import glob
import os
import time

from prometheus_client import REGISTRY, CollectorRegistry, Counter, Histogram, generate_latest
from prometheus_client.exposition import CONTENT_TYPE_PLAIN_0_0_4

MULTIPROC_ENV = "PROMETHEUS_MULTIPROC_DIR"

#: HTTP methods kept as label values; anything else is counted as OTHER (bounded cardinality).
_METHODS = frozenset({"GET", "HEAD", "POST", "PUT", "PATCH", "DELETE", "OPTIONS"})
_LATENCY_BUCKETS = (0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0, 30.0)
_COMPUTE_BUCKETS = (0.0001, 0.00025, 0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5,
                    1.0, 2.5, 5.0, 10.0)
_BATCH_BUCKETS = (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10000, 20000)

REQUESTS = Counter(
    "samplewright_http_requests", "HTTP requests answered by the app, by route template, method and status.",
    ["route", "method", "status"],
)
LATENCY = Histogram(
    "samplewright_http_request_duration_seconds",
    "Time from the app receiving a request to its response being ready, by route, method and status.",
    ["route", "method", "status"], buckets=_LATENCY_BUCKETS,
)
COMPUTATION = Histogram(
    "samplewright_computation_seconds",
    "Time inside an operation (validation, computation, report), by operation.",
    ["operation"], buckets=_COMPUTE_BUCKETS,
)
BATCH_ITEMS = Histogram(
    "samplewright_batch_items", "Items per batch request, by route (observed by batch endpoints).",
    ["route"], buckets=_BATCH_BUCKETS,
)
PROBLEMS = Counter(
    "samplewright_problems", "Problem-details responses, by problem type and status.", ["type", "status"],
)


def route_label(rule: str | None) -> str:
    """The route template, or ``unmatched`` (so scans of random paths add no label values)."""
    return rule or "unmatched"


def method_label(method: str) -> str:
    return method if method in _METHODS else "OTHER"


#: The labelled children by (rule, method, status) and by operation: ``labels()`` takes a
#: lock and builds its key on every call; the children are the same objects each time.
#: Bounded: route templates, methods (OTHER beyond the usual ones) and statuses are few.
_REQUEST_CHILDREN: dict[tuple, tuple] = {}
_COMPUTATION_CHILDREN: dict[str, object] = {}


def observe_request(rule: str | None, method: str, status: int, seconds: float) -> None:
    """Count one answered request and its latency."""
    children = _REQUEST_CHILDREN.get((rule, method, status))
    if children is None:
        labels = (route_label(rule), method_label(method), str(status))
        children = (REQUESTS.labels(*labels), LATENCY.labels(*labels))
        if method in _METHODS:  # other methods are one label value but unbounded keys
            _REQUEST_CHILDREN[(rule, method, status)] = children
    children[0].inc()
    children[1].observe(seconds)


def observe_problem(problem_type: str, status: int) -> None:
    """Count one problem response by its ``type`` URI."""
    PROBLEMS.labels(problem_type, str(status)).inc()


def observe_batch(route: str, items: int) -> None:
    """Record the number of items in one batch request (for batch endpoints)."""
    BATCH_ITEMS.labels(route).observe(items)


class computation:  # noqa: N801 - used as a function: ``with computation("power"):``
    """Time the block as one run of ``operation`` (recorded whether it returns or raises).

    A plain context manager (a generator-based one costs a generator and its frame per use).
    """

    __slots__ = ("_child", "_start")

    def __init__(self, operation: str) -> None:
        child = _COMPUTATION_CHILDREN.get(operation)
        if child is None:
            child = COMPUTATION.labels(operation)
            if len(_COMPUTATION_CHILDREN) < 256:
                _COMPUTATION_CHILDREN[operation] = child
        self._child = child

    def __enter__(self) -> None:
        self._start = time.perf_counter()

    def __exit__(self, *exc_info) -> None:
        self._child.observe(time.perf_counter() - self._start)


def render_metrics() -> tuple[bytes, str]:
    """The exposition text and its media type: all workers' metrics in multiprocess mode.

    Always the classic text format (``version=0.0.4``), which every Prometheus version parses.
    """
    path = os.environ.get(MULTIPROC_ENV)
    if path:
        from prometheus_client import multiprocess

        registry = CollectorRegistry()
        multiprocess.MultiProcessCollector(registry, path=path)
    else:
        registry = REGISTRY
    return generate_latest(registry), CONTENT_TYPE_PLAIN_0_0_4


def archive_worker_files(pid: int, path: str) -> None:
    """Fold an exited worker's counter and histogram files into one archive file per kind.

    prometheus-client keeps one file per process; with worker recycling (``max_requests``)
    the directory would grow without end and every scrape would read all of it. Counters
    and histogram buckets are sums, so adding a dead worker's values to an archive keeps
    every total. Called by the gunicorn master after the worker has exited.
    """
    from prometheus_client.mmap_dict import MmapedDict

    for kind in ("counter", "histogram"):
        source = os.path.join(path, f"{kind}_{pid}.db")
        if not os.path.exists(source):
            continue
        archive = MmapedDict(os.path.join(path, f"{kind}_archive.db"))
        try:
            for key, value, timestamp, _pos in MmapedDict.read_all_values_from_file(source):
                old, _old_ts = archive.read_value(key)
                archive.write_value(key, old + value, timestamp)
        finally:
            archive.close()
        os.remove(source)
    for stale in glob.glob(os.path.join(path, f"gauge_live*_{pid}.db")):
        os.remove(stale)
