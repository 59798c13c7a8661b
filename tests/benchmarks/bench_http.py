"""HTTP benchmark: the computation routes under gunicorn vs the health check on the same server.

gunicorn is started from deploy/gunicorn.conf.py (``tests/server/serverutil.Server``: the
same command as ``make serve``) on 127.0.0.1 and a free port; every wait is bounded and the
server is always stopped. A loopback load generator keeps a fixed number of keep-alive
connections busy for a bounded time per route: ``wrk`` when it is installed, otherwise
client processes with one thread per connection that send prebuilt requests on raw sockets
(cheaper per request than http.client, so the client takes less of the shared CPUs).

Routes are measured in interleaved rounds (healthz, power, sample-size, repeated) so that
drift in the machine's load hits all three alike. The ratio is
min(power, sample-size requests/s) / healthz requests/s: the share of the framework's floor
(the same server answering its cheapest route) that a real computation keeps.

Environment: ``BENCH_HTTP_SECONDS`` (per route, default 12), ``BENCH_HTTP_CONNECTIONS``
(default 8), ``BENCH_HTTP_ROUNDS`` (default 3).
"""

from __future__ import annotations

import json
import multiprocessing as mp
import os
import random
import shutil
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "server"))
from serverutil import LOOPBACK, Server  # noqa: E402

SECONDS = min(max(float(os.environ.get("BENCH_HTTP_SECONDS", "12")), 2.0), 60.0)
CONNECTIONS = min(max(int(os.environ.get("BENCH_HTTP_CONNECTIONS", "8")), 1), 64)
ROUNDS = min(max(int(os.environ.get("BENCH_HTTP_ROUNDS", "3")), 1), 10)
WARMUP_SECONDS = 1.0
CLIENT_PROCESSES = 2
TARGET = 0.60


def _bodies(route: str, count: int = 64) -> list[dict | None]:
    """Realistic one-way bodies (a fixed, seeded set, cycled by each connection)."""
    rng = random.Random(20261202)
    out: list[dict | None] = []
    for _ in range(count):
        alpha = rng.choice([0.05, 0.05, 0.01, 0.1])
        k = rng.randint(2, 6)
        if route == "/v1/power":
            if rng.random() < 0.5:
                design = {"type": "one_way_anova", "group_means": [round(rng.uniform(50, 70), 1) for _ in range(k)],
                          "sd": round(rng.uniform(2, 10), 2)}
            else:
                design = {"type": "one_way_anova", "cohens_f": round(rng.uniform(0.1, 0.6), 3), "groups": k}
            out.append({"alpha": alpha, "n_per_group": rng.randint(4, 60), "design": design})
        elif route == "/v1/sample-size":
            if rng.random() < 0.5:
                design = {"type": "one_way_anova", "cohens_f": round(rng.uniform(0.15, 0.6), 3), "groups": k}
            else:
                design = {"type": "one_way_anova", "group_means": [round(rng.uniform(10, 14), 1) for _ in range(k)],
                          "sd": round(rng.uniform(2, 5), 2)}
            out.append({"alpha": alpha, "target_power": rng.choice([0.8, 0.9, 0.95]), "design": design})
        else:
            out.append(None)
    return out


def _raw_request(route: str, body: dict | None, port: int) -> bytes:
    if body is None:
        return f"GET {route} HTTP/1.1\r\nHost: {LOOPBACK}:{port}\r\n\r\n".encode()
    data = json.dumps(body).encode()
    head = (f"POST {route} HTTP/1.1\r\nHost: {LOOPBACK}:{port}\r\nContent-Type: application/json\r\n"
            f"Content-Length: {len(data)}\r\n\r\n")
    return head.encode() + data


def _read_response(sock: socket.socket, buf: bytearray) -> tuple[int, bool]:
    """Read one Content-Length framed response; (status, server asked to close)."""
    while True:
        end = buf.find(b"\r\n\r\n")
        if end >= 0:
            break
        chunk = sock.recv(65536)
        if not chunk:
            raise ConnectionError("closed before the headers")
        buf += chunk
    head = bytes(buf[:end]).decode("latin-1").split("\r\n")
    status = int(head[0].split(" ", 2)[1])
    length = 0
    close = False
    for line in head[1:]:
        name, _, value = line.partition(":")
        name = name.strip().lower()
        if name == "content-length":
            length = int(value)
        elif name == "connection" and value.strip().lower() == "close":
            close = True
    need = end + 4 + length
    while len(buf) < need:
        chunk = sock.recv(65536)
        if not chunk:
            raise ConnectionError("closed in the body")
        buf += chunk
    del buf[:need]
    return status, close


def _connection(port, payloads, deadline, out):
    latencies: list[float] = []
    errors = 0
    sock = None
    buf = bytearray()
    i = random.randrange(len(payloads))
    while time.monotonic() < deadline:
        payload = payloads[i % len(payloads)]
        i += 1
        t0 = time.perf_counter()
        try:
            if sock is None:
                sock = socket.create_connection((LOOPBACK, port), timeout=30)
                sock.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
                buf.clear()
            sock.sendall(payload)
            status, close = _read_response(sock, buf)
        except OSError:
            errors += 1
            if sock is not None:
                sock.close()
            sock = None
            continue
        latencies.append(time.perf_counter() - t0)
        if status != 200:
            errors += 1
        if close:
            sock.close()
            sock = None
    if sock is not None:
        sock.close()
    out.append((latencies, errors))


def _client_process(port, payloads, threads, seconds, queue):
    deadline = time.monotonic() + seconds
    out: list = []
    workers = [threading.Thread(target=_connection, args=(port, payloads, deadline, out), daemon=True)
               for _ in range(threads)]
    for t in workers:
        t.start()
    for t in workers:
        t.join(timeout=seconds + 60)
    queue.put(out)


def _python_load(port: int, route: str, seconds: float) -> tuple[list[float], int, float]:
    payloads = [_raw_request(route, b, port) for b in _bodies(route)]
    ctx = mp.get_context("fork")
    queue = ctx.Queue()
    per = [CONNECTIONS // CLIENT_PROCESSES + (1 if i < CONNECTIONS % CLIENT_PROCESSES else 0)
           for i in range(CLIENT_PROCESSES)]
    procs = [ctx.Process(target=_client_process, args=(port, payloads, n, seconds, queue))
             for n in per if n]
    t0 = time.monotonic()
    for p in procs:
        p.start()
    results = []
    try:
        for _ in procs:
            results.extend(queue.get(timeout=seconds + 90))
    finally:
        for p in procs:
            p.join(timeout=30)
            if p.is_alive():
                p.kill()
    elapsed = time.monotonic() - t0
    lat = [x for latencies, _ in results for x in latencies]
    return lat, sum(e for _, e in results), elapsed


def _wrk_load(wrk: str, port: int, route: str, seconds: float, tmp: Path):
    """wrk with a Lua script cycling the same bodies; returns (rps, p50_ms, p99_ms, errors)."""
    bodies = _bodies(route)
    script = tmp / f"bench{route.replace('/', '_')}.lua"
    if bodies[0] is None:
        script.write_text('wrk.method = "GET"\n'
                          'done = function(summary, latency, requests)\n'
                          '  io.write(string.format("BENCH %d %d %f %f %f\\n", summary.requests, '
                          'summary.errors.status + summary.errors.connect + summary.errors.read + '
                          'summary.errors.write + summary.errors.timeout, summary.duration, '
                          'latency:percentile(50), latency:percentile(99)))\nend\n')
    else:
        lua_bodies = ",\n".join("[==[" + json.dumps(b) + "]==]" for b in bodies)
        script.write_text('wrk.method = "POST"\nwrk.headers["Content-Type"] = "application/json"\n'
                          f'local bodies = {{\n{lua_bodies}\n}}\nlocal i = 0\n'
                          'request = function()\n  i = i % #bodies + 1\n'
                          '  return wrk.format(nil, nil, nil, bodies[i])\nend\n'
                          'done = function(summary, latency, requests)\n'
                          '  io.write(string.format("BENCH %d %d %f %f %f\\n", summary.requests, '
                          'summary.errors.status + summary.errors.connect + summary.errors.read + '
                          'summary.errors.write + summary.errors.timeout, summary.duration, '
                          'latency:percentile(50), latency:percentile(99)))\nend\n')
    threads = min(CONNECTIONS, 2)
    proc = subprocess.run([wrk, "-t", str(threads), "-c", str(CONNECTIONS), "-d", f"{seconds:g}s",
                           "-s", str(script), f"http://{LOOPBACK}:{port}{route}"],
                          capture_output=True, text=True, timeout=seconds + 60)
    for line in proc.stdout.splitlines():
        if line.startswith("BENCH "):
            n, errors, duration_us, p50_us, p99_us = line.split()[1:]
            return int(n) / (float(duration_us) / 1e6), float(p50_us) / 1000, float(p99_us) / 1000, int(errors)
    raise RuntimeError(f"wrk gave no summary: {proc.stdout[-500:]} {proc.stderr[-500:]}")


def _pct(sorted_values: list[float], q: float) -> float:
    return sorted_values[min(len(sorted_values) - 1, int(q * len(sorted_values)))] * 1000


def bench_http() -> dict:
    """requests/s and p50/p99 of /v1/power, /v1/sample-size and /healthz on one gunicorn."""
    routes = ("/healthz", "/v1/power", "/v1/sample-size")
    wrk = shutil.which("wrk")
    per_round = SECONDS / ROUNDS
    stats: dict[str, dict] = {r: {"requests": 0, "seconds": 0.0, "errors": 0, "latencies": [], "wrk": []}
                              for r in routes}
    with tempfile.TemporaryDirectory(prefix="samplewright-bench-http-") as tmp:
        # The deploy config's defaults (one worker per CPU, 4 threads, access log on);
        # recycling off so that a worker restart does not land inside a measurement.
        server = Server(Path(tmp), env={"SAMPLEWRIGHT_WORKERS": os.environ.get("SAMPLEWRIGHT_WORKERS", ""),
                                        "SAMPLEWRIGHT_MAX_REQUESTS": "0"})
        try:
            server.start(timeout=60)
            server.wait_for_workers(1, timeout=30)
            for route in routes:  # warm every worker's code paths and caches
                _python_load(server.port, route, WARMUP_SECONDS)
            workers = len(server.workers())
            for _ in range(ROUNDS):
                for route in routes:
                    s = stats[route]
                    if wrk:
                        rps, p50, p99, errors = _wrk_load(wrk, server.port, route, per_round, Path(tmp))
                        s["wrk"].append((rps, p50, p99))
                        s["errors"] += errors
                    else:
                        lat, errors, elapsed = _python_load(server.port, route, per_round)
                        s["requests"] += len(lat)
                        s["seconds"] += elapsed
                        s["errors"] += errors
                        s["latencies"].extend(lat)
        finally:
            server.stop(timeout=30)
    summary = {}
    for route, s in stats.items():
        if wrk:
            summary[route] = {"rps": round(statistics.fmean(r for r, _, _ in s["wrk"]), 1),
                              "p50_ms": round(statistics.median(p for _, p, _ in s["wrk"]), 3),
                              "p99_ms": round(max(p for _, _, p in s["wrk"]), 3),
                              "errors": s["errors"]}
        else:
            lat = sorted(s["latencies"])
            summary[route] = {"rps": round(s["requests"] / s["seconds"], 1) if s["seconds"] else 0.0,
                              "p50_ms": round(_pct(lat, 0.50), 3) if lat else None,
                              "p99_ms": round(_pct(lat, 0.99), 3) if lat else None,
                              "requests": s["requests"], "errors": s["errors"]}
    health = summary["/healthz"]["rps"]
    slowest = min(summary["/v1/power"]["rps"], summary["/v1/sample-size"]["rps"])
    ratio = slowest / health if health else 0.0
    errors = sum(v["errors"] for v in summary.values())
    return {
        "row": "http",
        "scenarios": sum(v.get("requests", 0) for v in summary.values()) or len(routes),
        "ours_s": 1.0 / slowest if slowest else None,
        "reference_s": 1.0 / health if health else None,
        "ratio": ratio,
        "target": f">= {TARGET:.2f} of /healthz req/s",
        "met": ratio >= TARGET and errors == 0,
        "notes": {
            "routes": summary,
            "load_generator": "wrk" if wrk else f"python raw-socket keep-alive ({CLIENT_PROCESSES} processes)",
            "connections": CONNECTIONS,
            "seconds_per_route": SECONDS,
            "rounds": ROUNDS,
            "workers": workers,
            "cpus": os.cpu_count(),
            "server": f"gunicorn --config deploy/gunicorn.conf.py on {LOOPBACK}",
        },
    }


ROWS = (bench_http,)


if __name__ == "__main__":
    print(json.dumps(bench_http(), indent=2))
