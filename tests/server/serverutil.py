"""A real gunicorn, started from deploy/gunicorn.conf.py on 127.0.0.1 and a free port.

Used by tests/server (through the fixtures in conftest.py) and by tests/load/run.py.

``Server`` runs ``gunicorn --config deploy/gunicorn.conf.py samplewright.wsgi:app`` exactly
as ``make serve`` and the container do, with ``SAMPLEWRIGHT_*`` settings passed in the
environment (the test's own environment's SAMPLEWRIGHT_* variables are dropped). Every wait
is bounded; teardown sends SIGTERM to the master (the only process it signals) and, if the
master has not exited after the bound, SIGKILL.
"""

from __future__ import annotations

import http.client
import json
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
CONFIG = REPO / "deploy" / "gunicorn.conf.py"
GUNICORN = Path(sys.executable).with_name("gunicorn")
LOOPBACK = "127.0.0.1"

#: Defaults for test servers: small, quick to stop, quiet.
TEST_SERVER_ENV = {
    "SAMPLEWRIGHT_WORKERS": "2",
    "SAMPLEWRIGHT_THREADS": "4",
    "SAMPLEWRIGHT_DRAIN_SECONDS": "0",
    "SAMPLEWRIGHT_GRACEFUL_TIMEOUT": "10",
}

POWER_BODY = {"n_per_group": 45, "design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 4}}


def free_port() -> int:
    """A port on the loopback interface that was free a moment ago."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind((LOOPBACK, 0))
        return s.getsockname()[1]


def clean_environ(extra: dict[str, str]) -> dict[str, str]:
    """This process's environment without SAMPLEWRIGHT_* / prometheus variables, plus ``extra``."""
    env = {k: v for k, v in os.environ.items()
           if not k.startswith("SAMPLEWRIGHT_") and k.upper() != "PROMETHEUS_MULTIPROC_DIR"}
    env.update(extra)
    return env


def request(port: int, method: str, path: str, body=None, headers=None, timeout: float = 10.0):
    """One request on a new connection; returns (status, headers dict lower-cased, body bytes)."""
    conn = http.client.HTTPConnection(LOOPBACK, port, timeout=timeout)
    try:
        data = None
        hdrs = dict(headers or {})
        if body is not None:
            data = body if isinstance(body, bytes) else json.dumps(body).encode()
            hdrs.setdefault("Content-Type", "application/json")
        conn.request(method, path, body=data, headers=hdrs)
        resp = conn.getresponse()
        return resp.status, {k.lower(): v for k, v in resp.getheaders()}, resp.read()
    finally:
        conn.close()


def _complete(raw: bytes) -> bool:
    """Whether ``raw`` holds a whole response framed by Content-Length."""
    head, sep, body = raw.partition(b"\r\n\r\n")
    if not sep:
        return False
    for line in head.split(b"\r\n")[1:]:
        name, _, value = line.partition(b":")
        if name.strip().lower() == b"content-length":
            return len(body) >= int(value)
    return False


def raw_exchange(port: int, payload: bytes, timeout: float = 10.0) -> bytes:
    """Send raw bytes; read one whole response (or until close or ``timeout``)."""
    with socket.create_connection((LOOPBACK, port), timeout=timeout) as s:
        s.sendall(payload)
        out = b""
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline and not _complete(out):
            try:
                chunk = s.recv(65536)
            except (TimeoutError, ConnectionResetError):
                break
            if not chunk:
                break
            out += chunk
        return out


def parse_raw_response(raw: bytes) -> tuple[int, dict[str, str], bytes]:
    """Status, lower-cased headers and body of one raw HTTP/1.1 response (Content-Length framed)."""
    head, _, body = raw.partition(b"\r\n\r\n")
    lines = head.decode("latin-1").split("\r\n")
    status = int(lines[0].split()[1])
    headers = {}
    for line in lines[1:]:
        name, _, value = line.partition(":")
        headers[name.strip().lower()] = value.strip()
    if "content-length" in headers:
        body = body[: int(headers["content-length"])]
    return status, headers, body


def children(pid: int) -> list[int]:
    """The direct child processes of ``pid`` (gunicorn's workers), from /proc."""
    out = []
    for entry in Path("/proc").iterdir():
        if not entry.name.isdigit():
            continue
        try:
            stat = (entry / "stat").read_text()
        except OSError:
            continue
        # the command name is in parentheses and may contain spaces: split after the last ')'
        fields = stat.rsplit(")", 1)[1].split()
        if int(fields[1]) == pid:
            out.append(int(entry.name))
    return sorted(out)


def rss_kib(pid: int) -> int:
    """Resident set size of ``pid`` in KiB (VmRSS)."""
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1])
    return 0


class Server:
    """One gunicorn master with its workers; logs go to files under ``tmp``."""

    def __init__(self, tmp: Path, env: dict[str, str] | None = None, cwd: Path = REPO,
                 command: list[str] | None = None, base_env: dict[str, str] | None = None):
        self.port = free_port()
        self.tmp = tmp
        settings = dict(TEST_SERVER_ENV)
        settings.update(env or {})
        settings.update({"SAMPLEWRIGHT_HOST": LOOPBACK, "SAMPLEWRIGHT_PORT": str(self.port)})
        if base_env is None:
            self.env = clean_environ(settings)
        else:  # an explicit environment (the container replay): nothing inherited
            self.env = {**base_env, **settings}
        self.command = command or [str(GUNICORN), "--config", str(CONFIG), "samplewright.wsgi:app"]
        self.cwd = cwd
        self.stdout_path = tmp / f"gunicorn-{self.port}.out"
        self.stderr_path = tmp / f"gunicorn-{self.port}.err"
        self.proc: subprocess.Popen | None = None

    def start(self, timeout: float = 60.0) -> Server:
        self._out = open(self.stdout_path, "wb")
        self._err = open(self.stderr_path, "wb")
        self.proc = subprocess.Popen(self.command, cwd=self.cwd, env=self.env,
                                     stdout=self._out, stderr=self._err, start_new_session=True)
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise RuntimeError(f"gunicorn exited with {self.proc.returncode}: {self.stderr()[-3000:]}")
            try:
                status, _, _ = request(self.port, "GET", "/readyz", timeout=2)
                if status == 200:
                    return self
            except OSError:
                pass
            time.sleep(0.1)
        self.stop()
        raise RuntimeError(f"gunicorn did not become ready in {timeout} s: {self.stderr()[-3000:]}")

    @property
    def pid(self) -> int:
        assert self.proc is not None
        return self.proc.pid

    def workers(self) -> list[int]:
        return children(self.pid)

    def wait_for_workers(self, count: int, timeout: float = 30.0, exclude: tuple[int, ...] = ()) -> list[int]:
        """Wait until ``count`` workers run (none of them in ``exclude``); returns their pids."""
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            pids = [p for p in self.workers() if p not in exclude]
            if len(pids) >= count:
                return pids
            time.sleep(0.1)
        raise AssertionError(f"fewer than {count} workers after {timeout} s: {self.workers()}")

    def signal(self, sig: int) -> None:
        os.kill(self.pid, sig)

    def wait(self, timeout: float) -> int:
        assert self.proc is not None
        return self.proc.wait(timeout=timeout)

    def stop(self, timeout: float = 30.0) -> int | None:
        if self.proc is None:
            return None
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=timeout)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=10)
        self._out.close()
        self._err.close()
        return self.proc.returncode

    def stdout(self) -> str:
        return self.stdout_path.read_text(errors="replace")

    def stderr(self) -> str:
        return self.stderr_path.read_text(errors="replace")

    def log_records(self, stream: str = "stdout") -> list[dict]:
        """The JSON log lines of ``stream`` (non-JSON lines are an error: every line is JSON)."""
        text = self.stdout() if stream == "stdout" else self.stderr()
        return [json.loads(line) for line in text.splitlines() if line.strip()]
