"""Settings from ``SAMPLEWRIGHT_*`` environment variables, read once into a frozen object.

Tests pass their own mapping instead of touching the real environment. The same object
configures the app (``create_app``) and the server (``deploy/gunicorn.conf.py``), so every
tunable is validated in one place and documented in one table (README, "Settings").
"""

from __future__ import annotations

import math
import os
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

PREFIX = "SAMPLEWRIGHT_"

#: The service endpoints that may be left open when API keys are required. The computation
#: endpoints are never on this list: requiring keys means requiring them there.
OPENABLE_PATHS = ("/healthz", "/readyz", "/metrics", "/openapi.json", "/v1/version")
DEFAULT_OPEN_PATHS = ("/healthz", "/readyz", "/metrics")

_ORIGIN = re.compile(r"^https?://[A-Za-z0-9.-]+(:[0-9]{1,5})?$")
_KEY = re.compile(r"^[\x21-\x7e]{16,256}$")
_TRUE = {"1", "true", "yes", "on"}
_FALSE = {"0", "false", "no", "off"}


def available_cpus() -> int:
    """CPUs this process may use: the affinity mask, capped by a cgroup CPU quota (containers)."""
    try:
        count = len(os.sched_getaffinity(0))
    except AttributeError:  # not Linux
        count = os.cpu_count() or 1
    quota = None
    try:  # cgroup v2
        q, p = Path("/sys/fs/cgroup/cpu.max").read_text().split()[:2]
        if q != "max":
            quota = int(q) / int(p)
    except (OSError, ValueError):
        try:  # cgroup v1
            q = int(Path("/sys/fs/cgroup/cpu/cpu.cfs_quota_us").read_text())
            p = int(Path("/sys/fs/cgroup/cpu/cpu.cfs_period_us").read_text())
            if q > 0 and p > 0:
                quota = q / p
        except (OSError, ValueError):
            pass
    if quota is not None:
        count = min(count, max(1, math.ceil(quota)))
    return max(1, min(count, 128))


def _raw(environ: Mapping[str, str], name: str) -> str | None:
    raw = environ.get(PREFIX + name)
    return None if raw is None or raw.strip() == "" else raw.strip()


def _int(environ: Mapping[str, str], name: str, default: int, lo: int, hi: int) -> int:
    raw = _raw(environ, name)
    if raw is None:
        return default
    try:
        value = int(raw)
    except ValueError:
        raise ValueError(f"{PREFIX}{name} must be an integer (got {raw!r})") from None
    if not lo <= value <= hi:
        raise ValueError(f"{PREFIX}{name} must be between {lo} and {hi} (got {value})")
    return value


def _float(environ: Mapping[str, str], name: str, default: float, lo: float, hi: float) -> float:
    raw = _raw(environ, name)
    if raw is None:
        return default
    try:
        value = float(raw)
    except ValueError:
        raise ValueError(f"{PREFIX}{name} must be a number (got {raw!r})") from None
    if not lo <= value <= hi:  # also refuses nan
        raise ValueError(f"{PREFIX}{name} must be between {lo:g} and {hi:g} (got {raw!r})")
    return value


def _bool(environ: Mapping[str, str], name: str, default: bool) -> bool:
    raw = _raw(environ, name)
    if raw is None:
        return default
    if raw.lower() in _TRUE:
        return True
    if raw.lower() in _FALSE:
        return False
    raise ValueError(f"{PREFIX}{name} must be true or false (got {raw!r})")


def _list(environ: Mapping[str, str], name: str, default: tuple[str, ...]) -> tuple[str, ...]:
    raw = environ.get(PREFIX + name)
    if raw is None:
        return default
    return tuple(dict.fromkeys(item.strip() for item in raw.split(",") if item.strip()))


def _api_keys(environ: Mapping[str, str]) -> tuple[str, ...]:
    keys = _list(environ, "API_KEYS", ())
    for i, key in enumerate(keys):
        if not _KEY.match(key):
            # Never echo a key, not even a bad one: say which position and why.
            raise ValueError(f"{PREFIX}API_KEYS: key {i + 1} must be 16 to 256 visible ASCII "
                             f"characters without spaces or commas (got {len(key)} characters)")
    return keys


def _open_paths(environ: Mapping[str, str]) -> tuple[str, ...]:
    paths = _list(environ, "OPEN_PATHS", DEFAULT_OPEN_PATHS)
    for path in paths:
        if path not in OPENABLE_PATHS:
            raise ValueError(f"{PREFIX}OPEN_PATHS may list only {', '.join(OPENABLE_PATHS)} "
                             f"(got {path[:80]!r})")
    return paths


def _origins(environ: Mapping[str, str]) -> tuple[str, ...]:
    origins = _list(environ, "CORS_ORIGINS", ())
    for origin in origins:
        if not _ORIGIN.match(origin):
            raise ValueError(f"{PREFIX}CORS_ORIGINS takes exact origins such as "
                             f"https://portal.example.org, no wildcard or path (got {origin[:80]!r})")
    return origins


def _log_level(environ: Mapping[str, str]) -> str:
    level = (_raw(environ, "LOG_LEVEL") or "INFO").upper()
    if level not in {"DEBUG", "INFO", "WARNING", "ERROR"}:
        raise ValueError(f"{PREFIX}LOG_LEVEL must be DEBUG, INFO, WARNING or ERROR (got {level!r})")
    return level


@dataclass(frozen=True)
class Settings:
    """Every tunable of the service, documented in the README's settings table."""

    # HTTP layer
    max_body_bytes: int = 64 * 1024
    body_timeout: float = 10.0
    log_level: str = "INFO"
    access_log: bool = True
    api_keys: tuple[str, ...] = field(default=(), repr=False)
    open_paths: tuple[str, ...] = DEFAULT_OPEN_PATHS
    cors_origins: tuple[str, ...] = ()
    cors_max_age: int = 600
    # batch (POST /v1/batch): its own body limit and an item ceiling
    max_batch_items: int = 10_000
    max_batch_bytes: int = 4 * 1024 * 1024
    # server (deploy/gunicorn.conf.py)
    host: str = "127.0.0.1"
    port: int = 8000
    workers: int = field(default_factory=available_cpus)
    threads: int = 4
    timeout: int = 30
    graceful_timeout: int = 20
    drain_seconds: float = 5.0
    keepalive: int = 5
    max_requests: int = 10000
    max_requests_jitter: int = 1000
    limit_request_line: int = 4094
    limit_request_fields: int = 50
    limit_request_field_size: int = 8190
    metrics_dir: str | None = None

    @property
    def auth_required(self) -> bool:
        return bool(self.api_keys)

    @classmethod
    def from_environ(cls, environ: Mapping[str, str] = os.environ) -> Settings:
        metrics_dir = _raw(environ, "METRICS_DIR")
        if metrics_dir is not None and not os.path.isabs(metrics_dir):
            raise ValueError(f"{PREFIX}METRICS_DIR must be an absolute path (got {metrics_dir!r})")
        return cls(
            max_body_bytes=_int(environ, "MAX_BODY_BYTES", 64 * 1024, 1024, 16 * 1024 * 1024),
            body_timeout=_float(environ, "BODY_TIMEOUT", 10.0, 0.5, 300.0),
            log_level=_log_level(environ),
            access_log=_bool(environ, "ACCESS_LOG", True),
            api_keys=_api_keys(environ),
            open_paths=_open_paths(environ),
            cors_origins=_origins(environ),
            cors_max_age=_int(environ, "CORS_MAX_AGE", 600, 0, 86400),
            max_batch_items=_int(environ, "MAX_BATCH_ITEMS", 10_000, 1, 100_000),
            max_batch_bytes=_int(environ, "MAX_BATCH_BYTES", 4 * 1024 * 1024, 64 * 1024, 64 * 1024 * 1024),
            host=_raw(environ, "HOST") or "127.0.0.1",
            port=_int(environ, "PORT", 8000, 1, 65535),
            workers=_int(environ, "WORKERS", available_cpus(), 1, 128),
            threads=_int(environ, "THREADS", 4, 1, 64),
            timeout=_int(environ, "TIMEOUT", 30, 5, 600),
            graceful_timeout=_int(environ, "GRACEFUL_TIMEOUT", 20, 1, 600),
            drain_seconds=_float(environ, "DRAIN_SECONDS", 5.0, 0.0, 120.0),
            keepalive=_int(environ, "KEEPALIVE", 5, 0, 300),
            max_requests=_int(environ, "MAX_REQUESTS", 10000, 0, 10_000_000),
            max_requests_jitter=_int(environ, "MAX_REQUESTS_JITTER", 1000, 0, 1_000_000),
            limit_request_line=_int(environ, "LIMIT_REQUEST_LINE", 4094, 256, 8190),
            limit_request_fields=_int(environ, "LIMIT_REQUEST_FIELDS", 50, 10, 200),
            limit_request_field_size=_int(environ, "LIMIT_REQUEST_FIELD_SIZE", 8190, 1024, 16384),
            metrics_dir=metrics_dir,
        )
