"""deploy/gunicorn.conf.py as gunicorn itself reads it (``gunicorn --print-config``)."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from samplewright.config import available_cpus

REPO = Path(__file__).resolve().parents[2]
GUNICORN = Path(sys.executable).with_name("gunicorn")


def _print_config(tmp_path: Path, **env: str) -> dict[str, str]:
    environ = {k: v for k, v in os.environ.items() if not k.startswith("SAMPLEWRIGHT_")}
    environ.pop("PROMETHEUS_MULTIPROC_DIR", None)
    environ.update({"SAMPLEWRIGHT_METRICS_DIR": str(tmp_path / "metrics"), **env})
    done = subprocess.run([str(GUNICORN), "--print-config", "--config", "deploy/gunicorn.conf.py",
                           "samplewright.wsgi:app"], cwd=REPO, env=environ, capture_output=True,
                          text=True, timeout=60)
    assert done.returncode == 0, done.stderr[-3000:]
    out = {}
    for line in done.stdout.splitlines():
        name, sep, value = line.partition("=")
        if sep:
            out[name.strip()] = value.strip()
    return out


def test_defaults(tmp_path):
    """gthread, one worker per available CPU, 4 threads, explicit timeouts and limits, preload, JSON logs."""
    cfg = _print_config(tmp_path)
    assert cfg["worker_class"] == "samplewright.serving.ThreadWorker"
    assert cfg["workers"] == str(available_cpus())
    assert cfg["threads"] == "4"
    assert (cfg["timeout"], cfg["graceful_timeout"], cfg["keepalive"]) == ("30", "20", "5")
    assert (cfg["limit_request_line"], cfg["limit_request_fields"], cfg["limit_request_field_size"]) == (
        "4094", "50", "8190")
    assert (cfg["max_requests"], cfg["max_requests_jitter"]) == ("10000", "1000")
    assert cfg["worker_tmp_dir"] == "/dev/shm"
    assert cfg["preload_app"] == "True"
    assert cfg["accesslog"] == "-" and cfg["errorlog"] == "-"
    assert cfg["logger_class"] == "samplewright.serving.JSONLogger"
    assert cfg["bind"] == "['127.0.0.1:8000']"
    assert cfg["control_socket_disable"] == "True"
    for hook in ("on_starting", "post_fork", "child_exit", "on_exit"):
        assert cfg[hook] == f"<{hook}()>"


def test_environment_overrides(tmp_path):
    """SAMPLEWRIGHT_* variables set the server's values (through Settings)."""
    cfg = _print_config(tmp_path, SAMPLEWRIGHT_WORKERS="3", SAMPLEWRIGHT_THREADS="8",
                        SAMPLEWRIGHT_TIMEOUT="60", SAMPLEWRIGHT_GRACEFUL_TIMEOUT="7",
                        SAMPLEWRIGHT_MAX_REQUESTS="0", SAMPLEWRIGHT_HOST="::1", SAMPLEWRIGHT_PORT="9001",
                        SAMPLEWRIGHT_ACCESS_LOG="false", SAMPLEWRIGHT_LOG_LEVEL="warning")
    assert (cfg["workers"], cfg["threads"], cfg["timeout"], cfg["graceful_timeout"]) == ("3", "8", "60", "7")
    assert cfg["max_requests"] == "0"
    assert cfg["bind"] == "['[::1]:9001']"
    assert cfg["accesslog"] == "None"
    assert cfg["loglevel"] == "warning"


@pytest.mark.parametrize(("name", "value"), [("SAMPLEWRIGHT_WORKERS", "0"), ("SAMPLEWRIGHT_THREADS", "many"),
                                             ("SAMPLEWRIGHT_LIMIT_REQUEST_LINE", "100000")])
def test_invalid_values_stop_the_server_with_the_reason(tmp_path, name, value):
    """An invalid setting stops gunicorn before it binds, naming the variable."""
    environ = {k: v for k, v in os.environ.items() if not k.startswith("SAMPLEWRIGHT_")}
    environ.update({name: value, "SAMPLEWRIGHT_METRICS_DIR": str(tmp_path / "m")})
    done = subprocess.run([str(GUNICORN), "--print-config", "--config", "deploy/gunicorn.conf.py",
                           "samplewright.wsgi:app"], cwd=REPO, env=environ, capture_output=True,
                          text=True, timeout=60)
    assert done.returncode != 0
    assert name in done.stderr
