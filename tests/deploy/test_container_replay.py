"""Replay deploy/Containerfile outside a container: its steps, in fresh virtual environments.

Each stage gets its own root directory (``/`` of the stage) and a fresh virtual environment
standing in for the base image's Python. WORKDIR, COPY (from the repository or from an
earlier stage) and ENV are applied as written; every RUN line is executed as written, with
absolute paths moved under the stage's root, except the user-account line (root-only, and
the account it makes is checked in test_containerfile.py). Then the final stage's CMD runs
with the final WORKDIR and ENV (bound to 127.0.0.1 and a free port instead of 0.0.0.0:8000),
the HEALTHCHECK command must pass, the API must answer, and SIGTERM must stop it cleanly.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from containerfile import REPO, Stage, parse

sys.path.insert(0, str(REPO / "tests" / "server"))
from serverutil import POWER_BODY, Server, request  # noqa: E402

#: RUN lines not replayed, with the reason (anything else that does not run fails the test).
NOT_REPLAYED = {"groupadd": "creates the container's user account (needs root and a fresh image)"}
_ABSOLUTE = re.compile(r"(?<![\w./-])/(?=[A-Za-z])")


def _under(root: Path, path: str, cwd: Path) -> Path:
    return root / path.lstrip("/") if path.startswith("/") else cwd / path


def _copy(sources: list[Path], dest: Path, dest_is_dir: bool) -> None:
    for src in sources:
        if src.is_dir():
            shutil.copytree(src, dest, dirs_exist_ok=True,
                            ignore=shutil.ignore_patterns("__pycache__", "*.egg-info"))
        else:
            target = dest / src.name if dest_is_dir else dest
            target.parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(src, target)


def _replay(stage: Stage, root: Path, roots: dict[str, Path], venv: Path, home: Path) -> tuple[Path, dict]:
    """Run one stage's steps; returns its final working directory and environment."""
    root.mkdir(parents=True)
    subprocess.run([sys.executable, "-m", "venv", str(venv)], check=True, timeout=120)
    cwd = root
    env = {"PATH": f"{venv / 'bin'}:/usr/local/bin:/usr/bin:/bin", "HOME": str(home), "LANG": "C.UTF-8"}
    for ins in stage.instructions:
        if ins.keyword == "WORKDIR":
            cwd = _under(root, ins.args, cwd)
            cwd.mkdir(parents=True, exist_ok=True)
        elif ins.keyword == "ENV":
            for token in ins.args.split():
                key, _, value = token.partition("=")
                env[key] = value
        elif ins.keyword == "COPY":
            parts = ins.args.split()
            origin = REPO
            if parts[0].startswith("--from="):
                origin = roots[parts.pop(0).split("=", 1)[1]]
            *sources, dest = parts
            srcs = [origin / s.lstrip("/") for s in sources]
            assert all(s.exists() for s in srcs), f"COPY source missing: {sources}"
            _copy(srcs, _under(root, dest, cwd), dest.endswith("/") or len(srcs) > 1)
        elif ins.keyword == "RUN":
            if any(word in ins.args for word in NOT_REPLAYED):
                continue
            command = _ABSOLUTE.sub(str(root) + "/", ins.args)
            done = subprocess.run(["bash", "-euo", "pipefail", "-c", command], cwd=cwd, env=env,
                                  capture_output=True, text=True, timeout=600)
            assert done.returncode == 0, f"RUN {ins.args}\n{done.stdout[-3000:]}\n{done.stderr[-3000:]}"
    return cwd, env


@pytest.mark.slow
def test_container_steps_install_and_serve_in_a_fresh_environment(tmp_path):
    """Build the wheel, install it in a fresh venv, start gunicorn as CMD does, pass the HEALTHCHECK, answer."""
    stages = parse()
    roots: dict[str, Path] = {}
    home = tmp_path / "home"
    home.mkdir()
    for stage in stages:
        roots[stage.name] = tmp_path / "stages" / stage.name
        workdir, env = _replay(stage, roots[stage.name], roots, tmp_path / f"venv-{stage.name}", home)
    runtime = stages[-1]
    venv_python = tmp_path / f"venv-{runtime.name}" / "bin" / "python"

    # the service comes from the installed wheel, not from the repository
    where = subprocess.run([str(venv_python), "-c", "import samplewright, sys; print(samplewright.__file__)"],
                           cwd=workdir, env=env, capture_output=True, text=True, timeout=60, check=True)
    assert "site-packages" in where.stdout and str(REPO) not in where.stdout

    server = Server(tmp_path, {"SAMPLEWRIGHT_WORKERS": "2"}, cwd=workdir,
                    command=runtime.exec_form("CMD"), base_env=env)
    server.start(timeout=90)
    try:
        health = subprocess.run(runtime.exec_form("HEALTHCHECK"), cwd=workdir, env=server.env,
                                capture_output=True, text=True, timeout=30)
        assert health.returncode == 0, health.stdout + health.stderr
        status, headers, body = request(server.port, "POST", "/v1/power", POWER_BODY)
        assert status == 200 and headers["cache-control"] == "no-store"
        assert json.loads(body)["power"] == pytest.approx(0.8039869, rel=1e-6)  # ops.py self-check value
        assert server.env["OPENBLAS_NUM_THREADS"] == "1"
        for pid in server.workers():
            assert (Path(f"/proc/{pid}/environ").read_bytes().split(b"\0")
                    .count(b"OPENBLAS_NUM_THREADS=1")) == 1
    finally:
        code = server.stop()
    assert code == 0, server.stderr()[-3000:]
