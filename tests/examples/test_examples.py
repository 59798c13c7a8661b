"""The examples in examples/ run against a real gunicorn and print the API's own numbers.

A gunicorn started from deploy/gunicorn.conf.py (2 workers) listens on a free port of
127.0.0.1. The examples reach it through a recording pass-through on another port, so the
test sees every request they send: each body is validated against openapi/openapi.json and
answered again by the app in this process (the Flask test client), and the example's output
must carry exactly those numbers. The ELN snippet is served from a third port, the origin the
server allows by CORS, and driven in headless Chromium (Debian's, through Playwright) where it
is installed; under CI a missing browser is a failure, as in tests/web.
"""

from __future__ import annotations

import csv
import functools
import http.client
import json
import math
import os
import re
import shutil
import socket
import subprocess
import sys
import threading
import time
from dataclasses import dataclass
from html.parser import HTMLParser
from http.server import BaseHTTPRequestHandler, SimpleHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path

import pytest
from openapi_schema_validator import OAS31Validator
from referencing import Registry, Resource
from referencing.jsonschema import DRAFT202012

REPO = Path(__file__).resolve().parents[2]
EXAMPLES = REPO / "examples"
REQUESTS = EXAMPLES / "requests"
CURL = EXAMPLES / "curl"
PY_CLIENT = EXAMPLES / "python" / "plan_study.py"
NODE_CLIENT = EXAMPLES / "javascript" / "portal-backend.mjs"
BATCH_SCRIPT = EXAMPLES / "batch" / "sheet_to_batch.py"
SHEET = EXAMPLES / "batch" / "planning-sheet.csv"
SHEET_ANSWERS = EXAMPLES / "batch" / "answers.example.csv"
ELN_PAGE = EXAMPLES / "eln" / "sample-size-card.html"
SPEC_FILE = REPO / "openapi" / "openapi.json"
SPEC_URI = "urn:samplewright:openapi"
GUNICORN = Path(sys.executable).with_name("gunicorn")
LOOPBACK = "127.0.0.1"
START_TIMEOUT = 30.0
RUN_TIMEOUT = 30.0

OPERATION_PATHS = {"power": "/v1/power", "sample-size": "/v1/sample-size",
                   "detectable-effect": "/v1/detectable-effect"}
#: Each curl script, the path it posts to (its body: examples/requests/<name>.json).
CURL_SCRIPTS = {**OPERATION_PATHS, "batch": "/v1/batch", "report": "/v1/report"}
#: Python without site-packages: the examples must run on the standard library alone.
STDLIB_PYTHON = [sys.executable, "-I", "-S"]
NODE = shutil.which("node")
HOP_BY_HOP = {"connection", "keep-alive", "proxy-connection", "transfer-encoding", "te", "trailer", "upgrade"}

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
try:
    from playwright.sync_api import sync_playwright
except ImportError:  # pragma: no cover - depends on the machine
    sync_playwright = None


# -- the servers ----------------------------------------------------------------------------------


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind((LOOPBACK, 0))
        return s.getsockname()[1]


def _environ(extra: dict[str, str]) -> dict[str, str]:
    """This process's environment without SAMPLEWRIGHT_* variables, plus ``extra``."""
    env = {k: v for k, v in os.environ.items()
           if not k.startswith("SAMPLEWRIGHT_") and k.upper() != "PROMETHEUS_MULTIPROC_DIR"}
    env.update(extra)
    return env


def _get_status(port: int, path: str) -> int:
    conn = http.client.HTTPConnection(LOOPBACK, port, timeout=2)
    try:
        conn.request("GET", path)
        response = conn.getresponse()
        response.read()
        return response.status
    finally:
        conn.close()


class _QuietFiles(SimpleHTTPRequestHandler):
    def log_message(self, format, *args):  # noqa: A002 - the base class's signature
        pass


@pytest.fixture(scope="module")
def eln_site():
    """examples/eln served as static files: the origin the ELN snippet runs from."""
    handler = functools.partial(_QuietFiles, directory=str(ELN_PAGE.parent))
    httpd = ThreadingHTTPServer((LOOPBACK, 0), handler)
    httpd.daemon_threads = True
    thread = threading.Thread(target=httpd.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://{LOOPBACK}:{httpd.server_port}"
    finally:
        httpd.shutdown()
        httpd.server_close()
        thread.join(timeout=10)


@pytest.fixture(scope="module")
def service(tmp_path_factory, eln_site):
    """A gunicorn as `make serve` starts it (2 workers), allowing the ELN origin; its port."""
    port = _free_port()
    env = _environ({
        "SAMPLEWRIGHT_HOST": LOOPBACK, "SAMPLEWRIGHT_PORT": str(port), "SAMPLEWRIGHT_WORKERS": "2",
        "SAMPLEWRIGHT_THREADS": "4", "SAMPLEWRIGHT_DRAIN_SECONDS": "0", "SAMPLEWRIGHT_GRACEFUL_TIMEOUT": "5",
        "SAMPLEWRIGHT_ACCESS_LOG": "false", "SAMPLEWRIGHT_CORS_ORIGINS": eln_site,
    })
    log_path = tmp_path_factory.mktemp("gunicorn") / "gunicorn.log"
    with open(log_path, "wb") as log:
        proc = subprocess.Popen([str(GUNICORN), "--config", "deploy/gunicorn.conf.py", "samplewright.wsgi:app"],
                                cwd=REPO, env=env, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)
    try:
        deadline = time.monotonic() + START_TIMEOUT
        while True:
            if proc.poll() is not None:
                pytest.fail(f"gunicorn exited with {proc.returncode}: {log_path.read_text()[-3000:]}")
            try:
                if _get_status(port, "/readyz") == 200:
                    break
            except OSError:
                pass
            if time.monotonic() > deadline:
                pytest.fail(f"gunicorn not ready after {START_TIMEOUT} s: {log_path.read_text()[-3000:]}")
            time.sleep(0.1)
        yield port
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=10)


@dataclass
class Recorded:
    """One request as an example sent it."""

    method: str
    path: str
    headers: dict[str, str]  # names lower-cased
    body: bytes

    def json(self):
        return json.loads(self.body)


class _PassThrough(BaseHTTPRequestHandler):
    """Forwards each request to the service unchanged and records it."""

    protocol_version = "HTTP/1.1"
    timeout = 10  # an idle kept-alive connection is closed after this

    def do_GET(self):  # noqa: N802 - http.server's naming
        self._forward()

    do_POST = do_OPTIONS = do_GET

    def log_message(self, format, *args):  # noqa: A002
        pass

    def _forward(self):
        length = int(self.headers.get("Content-Length") or 0)
        body = self.rfile.read(length) if length else b""
        self.server.record(Recorded(self.command, self.path, {k.lower(): v for k, v in self.headers.items()}, body))
        headers = {k: v for k, v in self.headers.items() if k.lower() not in HOP_BY_HOP}
        conn = http.client.HTTPConnection(LOOPBACK, self.server.upstream, timeout=RUN_TIMEOUT)
        try:
            conn.request(self.command, self.path, body=body if self.command == "POST" else None, headers=headers)
            response = conn.getresponse()
            data = response.read()
        finally:
            conn.close()
        self.send_response_only(response.status, response.reason)
        for name, value in response.getheaders():
            if name.lower() not in HOP_BY_HOP | {"content-length"}:
                self.send_header(name, value)
        if response.status not in (204, 304):
            self.send_header("Content-Length", str(len(data)))
        self.end_headers()
        self.wfile.write(data)


class Recorder(ThreadingHTTPServer):
    daemon_threads = True

    def __init__(self, upstream: int):
        super().__init__((LOOPBACK, 0), _PassThrough)
        self.upstream = upstream
        self._lock = threading.Lock()
        self._records: list[Recorded] = []

    @property
    def url(self) -> str:
        return f"http://{LOOPBACK}:{self.server_port}"

    def record(self, item: Recorded) -> None:
        with self._lock:
            self._records.append(item)

    def take(self) -> list[Recorded]:
        """The requests recorded since the last call."""
        with self._lock:
            out, self._records = self._records, []
        return out


@pytest.fixture(scope="module")
def recorder(service):
    """The recording pass-through in front of the service (the examples' SAMPLEWRIGHT_URL)."""
    proxy = Recorder(service)
    thread = threading.Thread(target=proxy.serve_forever, daemon=True)
    thread.start()
    try:
        yield proxy
    finally:
        proxy.shutdown()
        proxy.server_close()
        thread.join(timeout=10)


@pytest.fixture
def traffic(recorder):
    """The recorder, emptied for this test."""
    recorder.take()
    return recorder


@pytest.fixture
def closed_url():
    """A loopback URL where nothing listens (the port stays bound, so nothing else takes it)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind((LOOPBACK, 0))
        yield f"http://{LOOPBACK}:{s.getsockname()[1]}"


def _run(command: list[str], url: str, cwd: Path = REPO) -> subprocess.CompletedProcess:
    return subprocess.run([str(c) for c in command], cwd=cwd, env=_environ({"SAMPLEWRIGHT_URL": url}),
                          capture_output=True, text=True, timeout=RUN_TIMEOUT, check=False)


# -- the contract and the answers ----------------------------------------------------------------------


class Bodies:
    """Validates request bodies against the request schemas of openapi/openapi.json."""

    def __init__(self, spec: dict):
        self.spec = spec
        self.registry = Registry().with_resource(SPEC_URI, Resource.from_contents(spec, default_specification=DRAFT202012))

    def _validator(self, path: str) -> OAS31Validator:
        ref = self.spec["paths"][path]["post"]["requestBody"]["content"]["application/json"]["schema"]["$ref"]
        return OAS31Validator({"$ref": SPEC_URI + ref}, registry=self.registry)

    def errors(self, path: str, body) -> list[str]:
        """Every way ``body`` breaks the schema of ``path`` (batch items and report requests
        also against their operation's own schema); empty when it validates."""
        out = [f"{path} /{'/'.join(map(str, e.absolute_path))}: {e.message}"
               for e in self._validator(path).iter_errors(body)]
        if path == "/v1/batch":
            for item in body.get("items", []):
                out += self.errors(OPERATION_PATHS[item["operation"]], item["request"])
        elif path == "/v1/report":
            out += self.errors(OPERATION_PATHS[body["operation"]], body["request"])
        return out


@pytest.fixture(scope="module")
def bodies() -> Bodies:
    """The request-body validator for the committed OpenAPI document."""
    return Bodies(json.loads(SPEC_FILE.read_text()))


def _api(client, path: str, body, accept: str | None = None):
    headers = {"Accept": accept} if accept else {}
    return client.post(path, data=json.dumps(body), content_type="application/json", headers=headers)


def _api_json(client, path: str, body) -> dict:
    """The app's own answer (in this process) to ``body``; must be a success."""
    response = _api(client, path, body)
    assert response.status_code == 200, response.get_data(as_text=True)[:2000]
    return response.get_json()


def _expected_fragments(script: Path) -> list[str]:
    """The fragments listed under "Expected output" in a script's header ("…" ends a prefix)."""
    lines = script.read_text().splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("# Expected output"))
    out = []
    for line in lines[start + 1:]:
        if not line.startswith("#   "):
            break
        out.append(line[4:].removesuffix("..."))
    return out


def _line(stdout: str, label: str) -> str:
    match = re.search(rf"^{re.escape(label)}: (.*)$", stdout, re.MULTILINE)
    assert match, f"no {label!r} line in:\n{stdout[:2000]}"
    return match.group(1)


# -- request bodies ---------------------------------------------------------------------------------


def test_every_request_file_validates_against_the_contract(bodies):
    """Every body in examples/requests validates against its endpoint's request schema."""
    files = sorted(REQUESTS.glob("*.json"))
    assert {f.stem for f in files} == set(CURL_SCRIPTS), "each request file belongs to one curl script"
    for file in files:
        assert bodies.errors(CURL_SCRIPTS[file.stem], json.loads(file.read_text())) == [], file.name


# -- curl -------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", sorted(CURL_SCRIPTS))
def test_curl_script_prints_the_api_answer(name, traffic, client, bodies):
    """A curl script posts its body file and prints exactly the API's answer, as its header shows."""
    script = CURL / f"{name}.sh"
    out = _run(["bash", script], traffic.url)
    assert out.returncode == 0, out.stderr
    (sent,) = traffic.take()
    assert (sent.method, sent.path) == ("POST", CURL_SCRIPTS[name])
    assert sent.json() == json.loads((REQUESTS / f"{name}.json").read_text())
    assert bodies.errors(sent.path, sent.json()) == []
    assert json.loads(out.stdout) == _api_json(client, sent.path, sent.json())
    fragments = _expected_fragments(script)
    assert len(fragments) >= 3
    for fragment in fragments:
        assert fragment in out.stdout, f"{script.name}: {fragment!r} is not in the output"


def test_curl_scripts_fail_on_a_problem_and_when_unreachable(traffic, closed_url, tmp_path):
    """The curl helper exits non-zero with the problem printed; every script fails without a service."""
    bad = tmp_path / "bad.json"
    bad.write_text('{"n_per_group": 12, "design": {"type": "one_way_anova", "group_means": [61, 64, 66], "sd": -5}}')
    out = _run(["bash", "-c", 'source "$1/_common.sh" && post /v1/power "$2"', "_", CURL, bad], traffic.url)
    assert out.returncode == 22, out.stderr
    assert "design.sd" in json.loads(out.stdout)["errors"]
    for name in CURL_SCRIPTS:
        out = _run(["bash", CURL / f"{name}.sh"], closed_url)
        assert out.returncode != 0, name
        assert out.stdout == "", name


# -- Python ------------------------------------------------------------------------------------------------


def test_python_client_sizes_reports_and_saves_the_chart(traffic, client, bodies, tmp_path):
    """The Python client prints the sample-size answer and the report text and saves the API's PNG."""
    chart = tmp_path / "curve.png"
    out = _run([*STDLIB_PYTHON, PY_CLIENT, "--chart", chart], traffic.url, cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    sent = traffic.take()
    assert [(r.method, r.path) for r in sent] == [("POST", "/v1/sample-size"), ("POST", "/v1/report"),
                                                  ("POST", "/v1/power-curve")]
    for r in sent:
        assert bodies.errors(r.path, r.json()) == [], r.path
    size = _api_json(client, "/v1/sample-size", sent[0].json())
    report = _api_json(client, "/v1/report", sent[1].json())
    assert sent[1].json()["request"] == sent[0].json() and report["result"] == size

    per_group = re.fullmatch(r"(\d+) \((\d+) groups, (\d+) in total\)", _line(out.stdout, "Units per group"))
    assert per_group and tuple(map(int, per_group.groups())) == (size["n_per_group"], len(size["group_sizes"]),
                                                                   size["n_total"])
    assert float(_line(out.stdout, "Achieved power").split()[0]) == size["achieved_power"]
    smaller = re.fullmatch(r"(\d+) per group, power (\S+)", _line(out.stdout, "One unit fewer per group"))
    assert smaller and int(smaller[1]) == size["one_step_smaller"]["group_sizes"][0]
    assert float(smaller[2]) == size["one_step_smaller"]["power"]
    enrol = re.fullmatch(r"(\d+) per group, (\d+) in total \(dropout (\S+)\)", _line(out.stdout, "Enrol"))
    assert enrol and int(enrol[1]) == size["enrolment"]["group_sizes"][0]
    assert int(enrol[2]) == size["enrolment"]["n_total"] and float(enrol[3]) == size["enrolment"]["dropout_rate"]
    assert _line(out.stdout, "Request digest") == size["provenance"]["request_digest"]
    assert report["format"] == "text" and report["text"] in out.stdout

    curve = sent[2]
    assert curve.headers["accept"] == "image/png"
    assert curve.json()["range"]["to"] == 2 * size["n_per_group"]
    png = _api(client, "/v1/power-curve", curve.json(), accept="image/png")
    assert png.status_code == 200 and png.mimetype == "image/png"
    assert chart.read_bytes().startswith(b"\x89PNG\r\n\x1a\n")
    assert chart.read_bytes() == png.data
    assert _line(out.stdout, "Power curve saved") == f"{chart} ({len(png.data)} bytes, image/png)"


def test_python_client_fails_when_a_call_fails(recorder, closed_url, tmp_path):
    """The Python client exits 1 with the reason when the service is unreachable or answers a problem."""
    out = _run([*STDLIB_PYTHON, PY_CLIENT, "--chart", tmp_path / "c.png"], closed_url, cwd=tmp_path)
    assert out.returncode == 1 and "cannot reach samplewright" in out.stderr
    out = _run([*STDLIB_PYTHON, PY_CLIENT, "--chart", tmp_path / "c.png"], recorder.url + "/elsewhere", cwd=tmp_path)
    assert out.returncode == 1 and "HTTP 404" in out.stderr and "request id:" in out.stderr
    assert not (tmp_path / "c.png").exists()


# -- JavaScript (Node) ---------------------------------------------------------------------------------------


needs_node = pytest.mark.skipif(NODE is None, reason="node is not installed")


@needs_node
def test_node_portal_backend_stores_the_api_answer(traffic, client, bodies):
    """The portal back end's record carries the report's numbers, digest and HTML, from one call."""
    out = _run([NODE, NODE_CLIENT], traffic.url)
    assert out.returncode == 0, out.stderr
    record = json.loads(out.stdout)
    (sent,) = traffic.take()
    assert (sent.method, sent.path) == ("POST", "/v1/report")
    assert sent.headers.get("x-request-id")
    body = sent.json()
    assert bodies.errors(sent.path, body) == []
    assert (body["operation"], body["format"], body["request"]["design"]["type"]) == ("sample-size", "html",
                                                                                       "two_sample_t")
    report = _api_json(client, "/v1/report", body)
    result = report["result"]
    assert record["n_per_group"] == result["n_per_group"] and record["n_total"] == result["n_total"]
    assert record["achieved_power"] == result["achieved_power"]
    assert record["target_power"] == result["target_power"]
    assert record["one_step_smaller_power"] == result["one_step_smaller"]["power"]
    assert record["enrol_per_group"] == result["enrolment"]["group_sizes"]
    assert record["enrol_total"] == result["enrolment"]["n_total"]
    assert record["request_digest"] == report["provenance"]["request_digest"]
    assert record["justification_html"] == report["text"]
    assert record["justification_html"].startswith('<article class="samplewright-report">')


@needs_node
def test_node_portal_backend_fails_when_a_call_fails(traffic, closed_url, tmp_path):
    """The portal back end exits 1 with the field errors on a problem, and when unreachable."""
    form = {"registration_id": "PKG-0000", "title": "invented", "groups": ["a", "b"], "expected_difference": 0.8,
            "sd": -1, "alpha": 0.05, "target_power": 0.9, "dropout_rate": 0.1}
    path = tmp_path / "registration.json"
    path.write_text(json.dumps(form))
    out = _run([NODE, NODE_CLIENT, path], traffic.url)
    assert out.returncode == 1 and out.stdout == ""
    assert "HTTP 422" in out.stderr and "request.design.sd" in out.stderr
    out = _run([NODE, NODE_CLIENT], closed_url)
    assert out.returncode == 1 and "cannot reach samplewright" in out.stderr


# -- batch: planning sheet -> LIMS answers ---------------------------------------------------------------------


def _sheet_ids() -> list[str]:
    with SHEET.open(newline="") as handle:
        return [row["id"] for row in csv.DictReader(handle)]


def _read_csv(path: Path) -> list[dict]:
    with path.open(newline="") as handle:
        return list(csv.DictReader(handle))


def test_batch_sheet_becomes_one_request_and_a_lims_csv(traffic, client, bodies, tmp_path):
    """The planning sheet is one valid batch call (but the deliberate mistake) and one answer row per sheet row."""
    answers = tmp_path / "answers.csv"
    out = _run([*STDLIB_PYTHON, BATCH_SCRIPT, SHEET, "--out", answers], traffic.url, cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    assert "7 rows answered, 1 failed" in out.stderr
    (sent,) = traffic.take()
    assert (sent.method, sent.path) == ("POST", "/v1/batch")
    body = sent.json()
    assert [item["id"] for item in body["items"]] == _sheet_ids()
    assert len({item["operation"] for item in body["items"]}) == 3
    assert len({item["request"]["design"]["type"] for item in body["items"]}) >= 4
    api = _api_json(client, "/v1/batch", body)

    # the contract rejects exactly the row the service rejects: the deliberate mistake
    invalid = {item["id"] for item in body["items"]
               if bodies.errors(OPERATION_PATHS[item["operation"]], item["request"])}
    failed = {item["id"] for item in api["items"] if item["status"] != 200}
    assert invalid == failed == {"CR-402"}
    assert bodies.errors("/v1/batch", {"items": [i for i in body["items"] if i["id"] not in invalid]}) == []

    rows = _read_csv(answers)
    assert [row["id"] for row in rows] == _sheet_ids()
    for row, item, asked in zip(rows, api["items"], body["items"], strict=True):
        assert int(row["status"]) == item["status"]
        assert (row["operation"], row["design"]) == (asked["operation"], asked["request"]["design"]["type"])
        if item["status"] != 200:
            problem = item["problem"]
            assert problem["detail"] in row["error"]
            assert all(field in row["error"] for field in problem["errors"])
            assert row["n_total"] == row["power"] == ""
            continue
        result = item["result"]
        assert row["error"] == ""
        assert row["group_sizes"] == ";".join(map(str, result["group_sizes"]))
        assert int(row["n_total"]) == result["n_total"]
        assert float(row["power"]) == result.get("power", result.get("achieved_power"))
        assert row["request_digest"] == result["provenance"]["request_digest"]
        effect = result if asked["operation"] == "detectable-effect" else result["effect"]
        assert float(row["effect_size"]) == effect[row["effect_measure"]]
        if result.get("enrolment"):
            assert int(row["enrol_n_total"]) == result["enrolment"]["n_total"]
            assert row["enrol_group_sizes"] == ";".join(map(str, result["enrolment"]["group_sizes"]))
        else:
            assert row["enrol_n_total"] == ""
        if asked["operation"] == "sample-size":
            assert int(row["n_per_group"]) == result["n_per_group"]


def test_batch_example_answers_file_matches_a_fresh_run(traffic, tmp_path):
    """examples/batch/answers.example.csv is what a run prints today (floats to 1e-9)."""
    answers = tmp_path / "answers.csv"
    out = _run([*STDLIB_PYTHON, BATCH_SCRIPT, "--out", answers], traffic.url, cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    fresh, shown = _read_csv(answers), _read_csv(SHEET_ANSWERS)
    assert len(fresh) == len(shown) and list(fresh[0]) == list(shown[0])
    for new, old in zip(fresh, shown, strict=True):
        for column, value in new.items():
            if re.fullmatch(r"-?\d+\.\d+(e-?\d+)?", value):
                assert math.isclose(float(value), float(old[column]), rel_tol=1e-9), (new["id"], column)
            else:
                assert value == old[column], (new["id"], column)


def test_batch_script_fails_when_the_call_or_the_sheet_fails(traffic, closed_url, tmp_path):
    """The batch script exits 1 when the service is unreachable or a row has no id, sending nothing."""
    out = _run([*STDLIB_PYTHON, BATCH_SCRIPT, SHEET], closed_url, cwd=tmp_path)
    assert out.returncode == 1 and "cannot reach samplewright" in out.stderr and out.stdout == ""
    sheet = tmp_path / "sheet.csv"
    sheet.write_text("id,operation,design,n_per_group,groups,cohens_f\n,power,one_way_anova,10,3,0.25\n")
    out = _run([*STDLIB_PYTHON, BATCH_SCRIPT, sheet], traffic.url, cwd=tmp_path)
    assert out.returncode == 1 and "id cell is empty" in out.stderr
    assert traffic.take() == []


# -- ELN snippet ---------------------------------------------------------------------------------------------


class _Inputs(HTMLParser):
    """The value of every input, by id."""

    def __init__(self):
        super().__init__()
        self.values: dict[str, str] = {}

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "input" and "id" in attrs:
            self.values[attrs["id"]] = attrs.get("value") or ""


def _snippet_request() -> dict:
    """The request the snippet sends for its pre-filled form (as its script builds it)."""
    parser = _Inputs()
    parser.feed(ELN_PAGE.read_text())
    v = parser.values
    request = {
        "alpha": float(v["sw-alpha"]),
        "target_power": float(v["sw-power"]),
        "design": {"type": "one_way_anova", "group_means": [float(x) for x in v["sw-means"].split(",") if x.strip()],
                   "sd": float(v["sw-sd"])},
    }
    if v.get("sw-dropout", "").strip():
        request["dropout_rate"] = float(v["sw-dropout"])
    return {"operation": "sample-size", "format": "text", "request": request}


def test_eln_snippet_is_configurable_and_its_request_validates(bodies):
    """The snippet takes its base URL from the template, and its pre-filled request validates."""
    page = ELN_PAGE.read_text()
    assert "window.SAMPLEWRIGHT_URL" in page
    assert 'data-samplewright-url="http://127.0.0.1:8000"' in page
    assert "samplewright snippet: begin" in page and "samplewright snippet: end" in page
    assert "SAMPLEWRIGHT_CORS_ORIGINS" in page and "/v1/report" in page
    assert "innerHTML" not in page, "answers are written as text, never as markup"
    assert bodies.errors("/v1/report", _snippet_request()) == []
    readme = (EXAMPLES / "README.md").read_text()
    assert "SAMPLEWRIGHT_CORS_ORIGINS=http://127.0.0.1:8080 make serve" in readme
    assert "python3 -m http.server 8080 --bind 127.0.0.1 --directory examples/eln" in readme


@pytest.fixture(scope="module")
def browser():
    """One headless Debian chromium (never a downloaded build); skipped without it, except in CI."""
    reason = None
    if sync_playwright is None:
        reason = "the playwright package is not installed"
    elif not Path(CHROMIUM).exists():
        reason = f"no chromium at {CHROMIUM} (apt-get install chromium)"
    if reason:
        if os.environ.get("CI"):
            pytest.fail(f"browser tests must run in CI: {reason}")
        pytest.skip(reason)
    with sync_playwright() as p:
        instance = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        try:
            yield instance
        finally:
            instance.close()


def test_eln_snippet_in_a_browser(browser, eln_site, traffic, client, bodies):
    """From the allowed origin the snippet shows the API's answer and field errors; from another, CORS blocks it."""
    context = browser.new_context()
    context.add_init_script(f"window.SAMPLEWRIGHT_URL = {json.dumps(traffic.url)};")
    page = context.new_page()
    page.set_default_timeout(15_000)
    errors: list[str] = []
    page.on("pageerror", lambda exc: errors.append(str(exc)))
    try:
        page.goto(f"{eln_site}/{ELN_PAGE.name}")
        page.click("#sw-submit")
        page.wait_for_selector("#sw-answer", state="visible")
        sent = traffic.take()
        (post,) = [r for r in sent if r.method == "POST"]
        assert post.path == "/v1/report" and post.headers["origin"] == eln_site
        assert post.json() == _snippet_request()
        assert bodies.errors(post.path, post.json()) == []
        report = _api_json(client, "/v1/report", post.json())
        result = report["result"]
        summary = page.text_content("#sw-summary")
        assert summary.startswith(f"{result['n_per_group']} per group ({result['n_total']} in total), "
                                  f"power {result['achieved_power']:.4f} for a target of ")
        assert f"enrol {result['enrolment']['group_sizes'][0]} per group ({result['enrolment']['n_total']} in total)" in summary
        assert page.text_content("#sw-digest") == report["provenance"]["request_digest"]
        assert page.input_value("#sw-text") == report["text"]
        assert page.text_content("#sw-error") == ""

        page.fill("#sw-sd", "-1")
        page.click("#sw-submit")
        page.wait_for_function("document.getElementById('sw-error').textContent.includes('request.design.sd')")
        assert page.is_hidden("#sw-answer")
        assert "samplewright answered 422" in page.text_content("#sw-error")

        # localhost is another origin than 127.0.0.1: not listed, so the browser blocks the call
        traffic.take()
        port = eln_site.rsplit(":", 1)[1]
        page.goto(f"http://localhost:{port}/{ELN_PAGE.name}")
        page.click("#sw-submit")
        page.wait_for_function("document.getElementById('sw-error').textContent.includes('could not be reached')")
        assert page.is_hidden("#sw-answer")
        blocked = traffic.take()
        assert blocked and all(r.method == "OPTIONS" for r in blocked), "the preflight fails, so nothing is posted"
        assert blocked[0].headers["origin"] == f"http://localhost:{port}"
        assert errors == []
    finally:
        context.close()


# -- the folder as a whole -------------------------------------------------------------------------------------


def test_examples_read_the_base_url_and_mark_their_scenarios_invented():
    """Every example reads SAMPLEWRIGHT_URL (default 127.0.0.1:8000) and says its scenario is invented."""
    common = (CURL / "_common.sh").read_text()
    assert 'URL="${SAMPLEWRIGHT_URL:-http://127.0.0.1:8000}"' in common and "nvented" in common
    for script in CURL.glob("[!_]*.sh"):
        assert 'source "$(dirname "$0")/_common.sh"' in script.read_text(), script.name
    for program in (PY_CLIENT, BATCH_SCRIPT, NODE_CLIENT):
        text = program.read_text()
        assert "SAMPLEWRIGHT_URL" in text and "http://127.0.0.1:8000" in text, program.name
        assert "nvented" in text, program.name
    assert "nvented" in ELN_PAGE.read_text()
    assert all("(invented)" in row["lab"] for row in _read_csv(SHEET))


def test_examples_readme_covers_every_example():
    """examples/README.md names every file in examples/ and starts from make serve."""
    readme = (EXAMPLES / "README.md").read_text()
    assert "make serve" in readme and "SAMPLEWRIGHT_URL" in readme
    files = [p for p in EXAMPLES.rglob("*") if p.is_file() and p.name != "README.md" and "__pycache__" not in p.parts]
    assert files
    missing = [str(p.relative_to(EXAMPLES)) for p in files if p.name not in readme]
    assert missing == []
    assert "examples/README.md" in (REPO / "README.md").read_text()
