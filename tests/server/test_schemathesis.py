"""Schemathesis against openapi/openapi.json and a real gunicorn: every check, a fixed seed.

All phases that apply (examples, coverage, fuzzing; no stateful links are declared), a
bounded number of examples per operation, the run's seed and positive-data rule in
tests/server/schemathesis.toml. Passing means zero server errors and zero responses that
contradict the document (status codes, media types, headers, bodies), every schema-invalid
request rejected with a 4xx, and every method the document does not list answered 405.
"""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

from serverutil import REPO

ST = Path(sys.executable).with_name("st")
CONFIG = Path(__file__).with_name("schemathesis.toml")
SPEC = REPO / "openapi" / "openapi.json"
MAX_EXAMPLES = 20


def test_schemathesis_all_checks_pass(start_server, tmp_path):
    """Zero failures of any schemathesis check over every documented operation."""
    server = start_server({"SAMPLEWRIGHT_ACCESS_LOG": "false"})
    command = [str(ST), "--config-file", str(CONFIG), "--no-color", "run", str(SPEC),
               "--url", f"http://127.0.0.1:{server.port}", "--checks", "all",
               "--max-examples", str(MAX_EXAMPLES), "--generation-database", "none",
               "--workers", "2", "--request-timeout", "20", "--max-failures", "20"]
    done = subprocess.run(command, cwd=tmp_path, capture_output=True, text=True, timeout=600)
    report = done.stdout[-20000:] + done.stderr[-5000:]
    assert done.returncode == 0, report
    counts = re.search(r"(\d+) generated, (\d+) passed", done.stdout)
    assert counts and counts[1] == counts[2] and int(counts[1]) > 100, report
    assert "Seed: 20261202" in done.stdout, report  # the seed from schemathesis.toml
    assert '"level": "error"' not in server.stderr(), server.stderr()[-5000:]
