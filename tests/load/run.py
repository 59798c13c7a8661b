"""Load and fault runs against gunicorn started from deploy/gunicorn.conf.py (``make load``).

Loopback only (127.0.0.1, a free port), bounded in time and request count, stops by itself.
Not part of ``make test``. Phases (each on a fresh server):

1. load   — ``--duration`` seconds (default 60) of mixed, realistic requests over
            ``--connections`` keep-alive connections (default 32, in 4 client processes):
            requests/s, latency p50/p90/p99/max, errors, worker RSS before and after.
            Worker recycling is off in this phase (SAMPLEWRIGHT_MAX_REQUESTS=0) so that RSS
            growth, if any, shows instead of being reset by a new worker; more than
            RSS_GROWTH_BOUND_MIB per worker fails the run.
2. kill   — the same load for ``--fault-duration`` seconds; one worker gets SIGKILL midway.
            The master must start a replacement; the failed requests are counted and
            checked against the server's access log (a failure the server never logged
            was on the killed worker: it was never answered by a live one).
3. term   — the same load; SIGTERM to the master midway. A balancer thread polls /readyz
            every 0.2 s and, once it answers 503, stops the clients from starting new
            requests (as a Service or load balancer takes the replica out). Every request
            started must get its answer; the master must exit 0.
4. term-naive — as 3, but the clients ignore readiness and keep sending until the listener
            refuses them: requests refused before being accepted are counted apart from
            requests lost after the server accepted them (which must be zero).

Every request carries a unique X-Request-ID; the access log (stdout, JSON) says which
requests the server answered. Prints a report and writes it as JSON (``--json``).
"""

from __future__ import annotations

import argparse
import http.client
import json
import multiprocessing as mp
import os
import random
import signal
import statistics
import sys
import tempfile
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "server"))
from serverutil import LOOPBACK, Server, request, rss_kib  # noqa: E402

PROCESSES = 4
#: Largest RSS growth of one worker over the load phase that counts as "no growth" (MiB).
RSS_GROWTH_BOUND_MIB = 10.0


# -- the request mix ---------------------------------------------------------------------------


def make_request(rng: random.Random) -> tuple[str, str, dict | None, int]:
    """One request: (method, path, body, expected status), drawn from a realistic mix."""
    roll = rng.random()
    alpha = rng.choice([0.05, 0.05, 0.01, 0.1])
    if roll < 0.35:  # power of a planned layout from expected means
        k = rng.randint(2, 6)
        means = [round(rng.uniform(50, 70), 1) for _ in range(k)]
        return "POST", "/v1/power", {"alpha": alpha, "n_per_group": rng.randint(4, 60),
                                     "design": {"type": "one_way_anova", "group_means": means,
                                                "sd": round(rng.uniform(2, 10), 2)}}, 200
    if roll < 0.60:  # sample size from Cohen's f
        return "POST", "/v1/sample-size", {"alpha": alpha, "target_power": rng.choice([0.8, 0.9, 0.95]),
                                           "design": {"type": "one_way_anova",
                                                      "cohens_f": round(rng.uniform(0.15, 0.6), 3),
                                                      "groups": rng.randint(2, 6)}}, 200
    if roll < 0.75:  # detectable effect for the units at hand
        return "POST", "/v1/detectable-effect", {"alpha": alpha, "target_power": 0.8,
                                                 "n_per_group": rng.randint(5, 80),
                                                 "design": {"type": "one_way_anova", "groups": rng.randint(2, 5),
                                                            "sd": round(rng.uniform(1, 8), 2)}}, 200
    if roll < 0.82:  # unequal allocation
        k = rng.randint(2, 4)
        return "POST", "/v1/power", {"n_per_group": rng.randint(5, 30),
                                     "design": {"type": "one_way_anova", "cohens_f": 0.3, "groups": k,
                                                "allocation": [rng.choice([1, 1.5, 2]) for _ in range(k)]}}, 200
    if roll < 0.90:  # sample size with dropout from means
        return "POST", "/v1/sample-size", {"target_power": 0.8, "dropout_rate": rng.choice([0, 0.1, 0.2]),
                                           "design": {"type": "one_way_anova", "group_means": [10, 11.5, 13],
                                                      "sd": round(rng.uniform(2, 5), 2)}}, 200
    if roll < 0.95:  # a client mistake: a 422 problem is the right answer
        return "POST", "/v1/power", {"alpha": 0.7, "n_per_group": 10,
                                     "design": {"type": "one_way_anova", "cohens_f": 0.25, "groups": 3}}, 422
    return "GET", rng.choice(["/v1/version", "/healthz"]), None, 200


# -- clients -----------------------------------------------------------------------------------


def _client_thread(port, rng, tag, deadline, stop, lb_aware, stop_on_refused, out):
    conn = None
    n = 0
    while time.monotonic() < deadline and not (lb_aware and stop.is_set()):
        method, path, body, expected = make_request(rng)
        rid = f"{tag}-{n}"
        n += 1
        data = json.dumps(body).encode() if body is not None else None
        headers = {"X-Request-ID": rid}
        if data is not None:
            headers["Content-Type"] = "application/json"
        started = time.monotonic()
        t0 = time.perf_counter()
        try:
            if conn is None:
                conn = http.client.HTTPConnection(LOOPBACK, port, timeout=30)
                conn.connect()
            conn.request(method, path, body=data, headers=headers)
            resp = conn.getresponse()
            resp.read()
            outcome = "ok" if resp.status == expected else f"status {resp.status}"
            if resp.getheader("Connection", "").lower() == "close":
                conn.close()
                conn = None
        except ConnectionRefusedError:
            outcome = "refused"
            conn = None
        except (OSError, http.client.HTTPException) as exc:
            outcome = f"error {type(exc).__name__}"
            if conn is not None:
                conn.close()
            conn = None
        out.append((started, time.perf_counter() - t0, outcome, rid))
        if outcome == "refused":
            if stop_on_refused:
                break
            time.sleep(0.05)
    if conn is not None:
        conn.close()


def _client_process(port, threads, seed, duration, stop, lb_aware, stop_on_refused, queue):
    deadline = time.monotonic() + duration
    results: list = []
    workers = []
    for i in range(threads):
        out: list = []
        results.append(out)
        t = threading.Thread(target=_client_thread, daemon=True,
                             args=(port, random.Random(seed * 1000 + i), f"p{seed}t{i}", deadline,
                                   stop, lb_aware, stop_on_refused, out))
        t.start()
        workers.append(t)
    for t in workers:
        t.join(timeout=duration + 60)
    queue.put([r for out in results for r in out])


def run_clients(port, connections, duration, *, lb_aware=False, stop_on_refused=False, during=None,
                seed_base=1):
    """Run the clients for ``duration`` s; ``during(t0, stop)`` runs in this process meanwhile."""
    ctx = mp.get_context("fork")
    queue = ctx.Queue()
    stop = ctx.Event()
    per = max(1, connections // PROCESSES)
    procs = [ctx.Process(target=_client_process,
                         args=(port, per, seed_base + p, duration, stop, lb_aware, stop_on_refused, queue))
             for p in range(PROCESSES)]
    t0 = time.monotonic()
    for p in procs:
        p.start()
    extra = during(t0, stop) if during else None
    records = []
    for _ in procs:
        records.extend(queue.get(timeout=duration + 120))
    for p in procs:
        p.join(timeout=30)
    return records, time.monotonic() - t0, extra


# -- reporting ---------------------------------------------------------------------------------


def summarize(records, seconds):
    ok = [r for r in records if r[2] == "ok"]
    lat = sorted(r[1] for r in ok)

    def pct(q):
        return round(lat[min(len(lat) - 1, int(q * len(lat)))] * 1000, 2) if lat else None

    outcomes: dict[str, int] = {}
    for r in records:
        outcomes[r[2]] = outcomes.get(r[2], 0) + 1
    return {"requests": len(records), "ok": len(ok), "seconds": round(seconds, 1),
            "requests_per_second": round(len(ok) / seconds, 1) if seconds else None,
            "latency_ms": {"p50": pct(0.50), "p90": pct(0.90), "p99": pct(0.99),
                           "max": round(lat[-1] * 1000, 2) if lat else None,
                           "mean": round(statistics.fmean(lat) * 1000, 2) if lat else None},
            "outcomes": outcomes}


def answered(server: Server) -> dict[str, int]:
    """Request id -> pid of the worker that wrote an access-log record for it."""
    ids = {}
    for line in server.stdout().splitlines():
        try:
            rec = json.loads(line)
        except ValueError:
            continue
        if rec.get("request_id"):
            ids[rec["request_id"]] = rec.get("pid")
    return ids


def answered_ids(server: Server) -> set[str]:
    """Request ids the server wrote an access-log record for."""
    return set(answered(server))


def previous_worker(rid: str, served: dict[str, int]) -> int | None:
    """The worker that answered this client thread's latest earlier request (its connection's worker)."""
    thread, n = rid.rsplit("-", 1)
    for k in range(int(n) - 1, -1, -1):
        pid = served.get(f"{thread}-{k}")
        if pid is not None:
            return pid
    return None


def worker_rss(server: Server) -> dict[int, float]:
    return {pid: round(rss_kib(pid) / 1024, 1) for pid in server.workers()}


def cpu_seconds(pids) -> float:
    """User + system CPU time of ``pids`` (from /proc/<pid>/stat)."""
    total = 0
    for pid in pids:
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
        total += int(fields[11]) + int(fields[12])  # utime, stime (fields 14 and 15 of stat)
    return total / os.sysconf("SC_CLK_TCK")


# -- phases ------------------------------------------------------------------------------------


def phase_load(tmp, args):
    server = Server(tmp, {"SAMPLEWRIGHT_WORKERS": str(args.workers), "SAMPLEWRIGHT_THREADS": str(args.threads),
                          "SAMPLEWRIGHT_MAX_REQUESTS": "0"}).start()
    try:
        run_clients(server.port, args.connections, 5, seed_base=900)  # warm-up: imports, caches
        time.sleep(1)
        before = worker_rss(server)
        pids = [server.pid, *server.workers()]
        cpu0 = cpu_seconds(pids)
        records, seconds, _ = run_clients(server.port, args.connections, args.duration)
        cpu = cpu_seconds(pids) - cpu0
        time.sleep(1)
        after = worker_rss(server)
        out = summarize(records, seconds)
        # The clients share the machine's CPUs: the server's own CPU time per request says
        # what a replica with the CPUs to itself sustains.
        out["server_cpu_seconds"] = round(cpu, 1)
        out["server_cpu_ms_per_request"] = round(cpu / max(1, out["ok"]) * 1000, 3)
        out["server_cpu_share"] = round(cpu / seconds / (os.cpu_count() or 1), 3)
        out["requests_per_second_per_server_cpu"] = round(out["ok"] / cpu, 1) if cpu else None
        out["worker_rss_mib_before"] = before
        out["worker_rss_mib_after"] = after
        out["worker_rss_growth_mib"] = {pid: round(after[pid] - before[pid], 1) for pid in before if pid in after}
        out["workers_unchanged"] = sorted(before) == sorted(after)
        return out
    finally:
        server.stop()


def phase_kill(tmp, args):
    server = Server(tmp, {"SAMPLEWRIGHT_WORKERS": str(args.workers), "SAMPLEWRIGHT_THREADS": str(args.threads)}).start()
    try:
        victims: dict = {}

        def during(t0, stop):
            time.sleep(max(0.0, t0 + args.fault_duration / 2 - time.monotonic()))
            victim = server.workers()[0]
            victims["pid"], victims["at"] = victim, time.monotonic()
            os.kill(victim, signal.SIGKILL)
            replaced = server.wait_for_workers(args.workers, timeout=30, exclude=(victim,))
            victims["replaced_after_s"] = round(time.monotonic() - victims["at"], 2)
            victims["replacement"] = sorted(set(replaced))
            return victims

        records, seconds, info = run_clients(server.port, args.connections, args.fault_duration, during=during)
        time.sleep(0.5)
        served = answered(server)
        logged = set(served)
        failed = [r for r in records if r[2] != "ok"]
        out = summarize(records, seconds)
        out.update(failed_on_the_killed_workers_connections=sum(
                       1 for r in failed if previous_worker(r[3], served) == info["pid"]),
                   killed_worker=info["pid"], replacement_workers=info["replacement"],
                   replaced_after_s=info["replaced_after_s"], failed=len(failed),
                   failed_but_answered_by_server=sum(1 for r in failed if r[3] in logged),
                   failed_within_1s_of_kill=sum(1 for r in failed if abs(r[0] - info["at"]) < 1.0),
                   # a request id is "<client thread>-<n>": one thread, one connection at a time
                   failed_distinct_connections=len({r[3].rsplit("-", 1)[0] for r in failed}),
                   connections=args.connections)
        out["readyz_after"] = request(server.port, "GET", "/readyz")[0]
        return out
    finally:
        server.stop()


def phase_term(tmp, args, lb_aware: bool):
    server = Server(tmp, {"SAMPLEWRIGHT_WORKERS": str(args.workers), "SAMPLEWRIGHT_THREADS": str(args.threads),
                          "SAMPLEWRIGHT_DRAIN_SECONDS": str(args.drain)}).start()
    info: dict = {}

    def during(t0, stop):
        time.sleep(max(0.0, t0 + args.fault_duration / 2 - time.monotonic()))
        info["term_at"] = time.monotonic()
        server.signal(signal.SIGTERM)
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline:  # the balancer
            try:
                status = request(server.port, "GET", "/readyz", timeout=2)[0]
            except OSError:
                status = None
            if status != 200:
                info["readiness_false_after_s"] = round(time.monotonic() - info["term_at"], 2)
                stop.set()
                break
            time.sleep(0.2)
        info["exit_code"] = server.wait(timeout=args.drain + 40)
        info["exited_after_s"] = round(time.monotonic() - info["term_at"], 2)
        return info

    try:
        records, seconds, _ = run_clients(server.port, args.connections, args.fault_duration, lb_aware=lb_aware,
                                          stop_on_refused=not lb_aware, during=during)
    finally:
        server.stop()
    logged = answered_ids(server)
    failed = [r for r in records if r[2] != "ok"]
    refused = [r for r in failed if r[2] == "refused"]
    lost = [r for r in failed if r[2] != "refused"]
    out = summarize(records, seconds)
    out.update(info, lb_aware=lb_aware,
               started_after_sigterm=sum(1 for r in records if r[0] >= info["term_at"]),
               answered_after_sigterm=sum(1 for r in records if r[0] >= info["term_at"] and r[2] == "ok"),
               refused_never_accepted=len(refused), lost=len(lost),
               lost_but_answered_by_server=sum(1 for r in lost if r[3] in logged),
               lost_examples=[r[2] for r in lost[:5]])
    return out


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--duration", type=float, default=60.0, help="seconds of the load phase (max 600)")
    parser.add_argument("--fault-duration", type=float, default=20.0, help="seconds of each fault phase")
    parser.add_argument("--connections", type=int, default=32, help="concurrent keep-alive connections (max 256)")
    parser.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    parser.add_argument("--threads", type=int, default=4)
    parser.add_argument("--drain", type=float, default=3.0, help="SAMPLEWRIGHT_DRAIN_SECONDS for the term phases")
    parser.add_argument("--phases", default="load,kill,term,term-naive")
    parser.add_argument("--json", type=Path, default=None, help="write the report here")
    args = parser.parse_args(argv)
    args.duration = min(args.duration, 600.0)
    args.fault_duration = min(max(args.fault_duration, 6.0), 120.0)
    args.connections = min(max(args.connections, PROCESSES), 256)

    report: dict = {"connections": args.connections, "workers": args.workers, "threads": args.threads,
                    "cpus": os.cpu_count(), "target": f"{LOOPBACK} (gunicorn from deploy/gunicorn.conf.py)"}
    with tempfile.TemporaryDirectory(prefix="samplewright-load-") as tmp:
        for phase in args.phases.split(","):
            print(f"== {phase} ...", flush=True)
            if phase == "load":
                report["load"] = phase_load(Path(tmp), args)
            elif phase == "kill":
                report["kill"] = phase_kill(Path(tmp), args)
            elif phase == "term":
                report["term"] = phase_term(Path(tmp), args, lb_aware=True)
            elif phase == "term-naive":
                report["term_naive"] = phase_term(Path(tmp), args, lb_aware=False)
            print(json.dumps(report.get(phase.replace("-", "_")), indent=2), flush=True)
    text = json.dumps(report, indent=2)
    if args.json:
        args.json.write_text(text + "\n")
    problems = []
    if "load" in report and report["load"]["ok"] != report["load"]["requests"]:
        problems.append("load: some requests failed")
    if "load" in report and any(g > RSS_GROWTH_BOUND_MIB for g in report["load"]["worker_rss_growth_mib"].values()):
        problems.append(f"load: a worker's RSS grew by more than {RSS_GROWTH_BOUND_MIB} MiB")
    if "kill" in report and report["kill"]["failed_but_answered_by_server"]:
        problems.append("kill: a failed request had been answered by a live worker")
    if "term" in report and (report["term"]["lost"] or report["term"]["refused_never_accepted"]
                             or report["term"]["exit_code"] != 0):
        problems.append("term: a request was lost or the master did not exit cleanly")
    if "term_naive" in report and report["term_naive"]["lost_but_answered_by_server"]:
        problems.append("term-naive: a request the server answered did not reach the client")
    print("\n".join(problems) if problems else "all load and fault checks passed")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
