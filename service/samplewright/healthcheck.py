"""``python -m samplewright.healthcheck``: exit 0 if the local server answers ``/healthz``.

The container's HEALTHCHECK. It asks the loopback address on ``SAMPLEWRIGHT_PORT`` (the
server binds all interfaces in the container), waits at most ``--timeout`` seconds, and
imports nothing heavier than the settings.
"""

from __future__ import annotations

import argparse
import http.client
import sys

from .config import Settings


def check(port: int, path: str = "/healthz", timeout: float = 2.0) -> bool:
    """True when GET ``path`` on 127.0.0.1:``port`` answers 200."""
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
    try:
        conn.request("GET", path, headers={"User-Agent": "samplewright-healthcheck"})
        return conn.getresponse().status == 200
    except OSError:
        return False
    finally:
        conn.close()


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m samplewright.healthcheck")
    parser.add_argument("--path", default="/healthz", choices=["/healthz", "/readyz"])
    parser.add_argument("--timeout", type=float, default=2.0)
    args = parser.parse_args(argv)
    ok = check(Settings.from_environ().port, args.path, args.timeout)
    print("healthy" if ok else "unhealthy")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
