"""The draining flag that turns readiness false before a graceful shutdown.

The flag lives in one byte of anonymous shared memory created at import. gunicorn imports
this module in the master (``deploy/gunicorn.conf.py``) before it forks the workers, so the
master's SIGTERM handler sets the byte and every worker's ``/readyz`` sees it at once,
without files, signals or a round trip through the master.
"""

from __future__ import annotations

import mmap

# fileno -1: anonymous memory; the default flags are MAP_SHARED, so forked children share it.
_FLAG = mmap.mmap(-1, 1)


def begin_drain() -> None:
    """Mark this server as draining: readiness answers 503 from now on."""
    _FLAG[0] = 1


def draining() -> bool:
    """Whether a shutdown has begun."""
    return _FLAG[0] == 1


def reset() -> None:
    """Clear the flag (tests only)."""
    _FLAG[0] = 0
