"""Settings from ``SAMPLEWRIGHT_*`` environment variables, read once into a frozen object.

Tests pass their own mapping instead of touching the real environment.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass

PREFIX = "SAMPLEWRIGHT_"


def _int(environ: Mapping[str, str], name: str, default: int, lo: int, hi: int) -> int:
    raw = environ.get(PREFIX + name)
    if raw is None or raw == "":
        return default
    try:
        value = int(raw)
    except ValueError:
        raise ValueError(f"{PREFIX}{name} must be an integer (got {raw!r})") from None
    if not lo <= value <= hi:
        raise ValueError(f"{PREFIX}{name} must be between {lo} and {hi} (got {value})")
    return value


@dataclass(frozen=True)
class Settings:
    """Every tunable of the service, documented in the README's settings table."""

    max_body_bytes: int = 64 * 1024
    log_level: str = "INFO"

    @classmethod
    def from_environ(cls, environ: Mapping[str, str] = os.environ) -> Settings:
        level = environ.get(PREFIX + "LOG_LEVEL", "INFO").upper()
        if level not in {"DEBUG", "INFO", "WARNING", "ERROR"}:
            raise ValueError(f"{PREFIX}LOG_LEVEL must be DEBUG, INFO, WARNING or ERROR (got {level!r})")
        return cls(
            max_body_bytes=_int(environ, "MAX_BODY_BYTES", 64 * 1024, 1024, 16 * 1024 * 1024),
            log_level=level,
        )
