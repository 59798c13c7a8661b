"""Batch benchmark: one ``POST /v1/batch`` of 10,000 items vs 10,000 single calls.

Both go through the Flask test client of the same app in the same run (these machines
are shared and noisy; the ratio is what is reported, never an absolute time), measured
in wall time and in this process's CPU time (steadier when other work shares the machine). The items
are invented, seeded scenarios of one-way designs (means with an SD, Cohen's f, η², some
with an unequal allocation, several α), so no two neighbours are alike. Two shapes:

* ``sweep``: 100 designs, each at 100 sizes (or α) — a what-if sweep or a month of
  studies planned at several sizes, the common use of a batch;
* ``distinct``: every item its own design, the worst case for the batch, whose
  per-design work (validation of the design, the adapter's build and reports) cannot be
  shared.

Every batch result is also checked against the single call's body (equal, bit for bit,
the request id aside). Run through ``make bench`` (``tests/benchmarks/run.py``), or alone:
``python tests/benchmarks/bench_batch.py [--items N]``.
"""

from __future__ import annotations

import argparse
import json
import random
import sys
import time

from samplewright.app import create_app
from samplewright.config import Settings

TARGET = 20.0
ITEMS = 10_000


def _design(rng: random.Random) -> dict:
    kind = rng.random()
    k = rng.randint(2, 6)
    if kind < 0.4:
        design = {"type": "one_way_anova", "group_means": [round(rng.uniform(10, 20), 2) for _ in range(k)],
                  "sd": round(rng.uniform(2, 8), 2)}
    elif kind < 0.8:
        design = {"type": "one_way_anova", "cohens_f": round(rng.uniform(0.1, 0.8), 3), "groups": k}
    else:
        design = {"type": "one_way_anova", "eta_squared": round(rng.uniform(0.01, 0.2), 3), "groups": k}
    if rng.random() < 0.2:
        design["allocation"] = [rng.choice([1, 1, 2, 3]) for _ in range(k)]
    return design


def _power(design: dict, rng: random.Random) -> dict:
    return {"design": design, "n_per_group": rng.randint(5, 120), "alpha": rng.choice([0.05, 0.01, 0.1])}


def _sample_size(design: dict, rng: random.Random) -> dict:
    return {"design": design, "target_power": rng.choice([0.8, 0.9, 0.95]), "alpha": rng.choice([0.05, 0.01]),
            "dropout_rate": rng.choice([0.0, 0.1])}


def make_items(count: int, *, shape: str, mixed: bool, seed: int = 20240601) -> list[dict]:
    """``count`` invented items; ``mixed`` alternates power and sample-size questions."""
    rng = random.Random(seed)
    designs = [_design(rng) for _ in range(max(1, count // 100))] if shape == "sweep" else None
    items = []
    for i in range(count):
        design = designs[i % len(designs)] if designs else _design(rng)
        if mixed and i % 2:
            items.append({"id": f"s{i}", "operation": "sample-size", "request": _sample_size(design, rng)})
        else:
            items.append({"id": f"p{i}", "operation": "power", "request": _power(design, rng)})
    return items


_SINGLE = {"power": "/v1/power", "sample-size": "/v1/sample-size", "detectable-effect": "/v1/detectable-effect"}


def measure(count: int = ITEMS, *, shape: str = "sweep", mixed: bool = False) -> dict:
    """Time ``count`` single calls and one batch of the same items; check they agree."""
    app = create_app(Settings(max_batch_items=max(count, 10_000), max_batch_bytes=64 * 1024 * 1024))
    client = app.test_client()
    items = make_items(count, shape=shape, mixed=mixed)
    for item in items[:50]:  # warm-up: imports, caches
        client.post(_SINGLE[item["operation"]], json=item["request"])
    client.post("/v1/batch", json={"items": items[:50]})

    t0, c0 = time.perf_counter(), time.process_time()
    singles = [client.post(_SINGLE[item["operation"]], json=item["request"]) for item in items]
    single_seconds, single_cpu = time.perf_counter() - t0, time.process_time() - c0

    payload = json.dumps({"items": items})
    batch_seconds = batch_cpu = float("inf")
    for _ in range(3):
        t0, c0 = time.perf_counter(), time.process_time()
        response = client.post("/v1/batch", data=payload, content_type="application/json")
        batch_seconds = min(batch_seconds, time.perf_counter() - t0)
        batch_cpu = min(batch_cpu, time.process_time() - c0)
    assert response.status_code == 200, response.get_data(as_text=True)[:500]
    answers = response.get_json()["items"]
    mismatches = 0
    for single, answer in zip(singles, answers, strict=True):
        body = single.get_json()
        if single.status_code == 200:
            same = answer["status"] == 200 and answer["result"] == body
        else:
            body.pop("instance", None)
            body.pop("request_id", None)
            same = answer["status"] == single.status_code and answer["problem"] == body
        mismatches += not same
    # Wall time is what a client waits; CPU time of this process (the test client runs in it)
    # is the steadier figure on a shared machine. Both are reported; `ratio` is the wall one.
    ratio = single_seconds / batch_seconds
    return {
        "items": count,
        "shape": shape,
        "mixed": mixed,
        "single_seconds": round(single_seconds, 3),
        "batch_seconds": round(batch_seconds, 4),
        "per_item_single_us": round(single_seconds / count * 1e6, 1),
        "per_item_batch_us": round(batch_seconds / count * 1e6, 1),
        "ratio": ratio,
        "cpu_ratio": single_cpu / batch_cpu,
        "mismatches": mismatches,
    }


def _row(name: str, **kwargs) -> dict:
    got = measure(**kwargs)
    return {
        "row": name,
        "ratio": got["ratio"],
        "target": f">= {TARGET:g}x single calls, 0 mismatches",
        "met": got["ratio"] >= TARGET and got["mismatches"] == 0,
        "notes": got,
    }


def bench_batch_power() -> dict:
    """10,000 power items (sweep shape) in one batch vs 10,000 single calls."""
    return _row("batch", shape="sweep", mixed=False)


def bench_batch_mixed() -> dict:
    """10,000 mixed power / sample-size items (sweep shape) in one batch vs single calls."""
    return _row("batch-mixed", shape="sweep", mixed=True)


def bench_batch_distinct() -> dict:
    """10,000 power items, every one its own design: the batch's worst case."""
    return _row("batch-dist", shape="distinct", mixed=False)


ROWS = (bench_batch_power, bench_batch_mixed, bench_batch_distinct)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--items", type=int, default=ITEMS)
    args = parser.parse_args(argv)
    for shape, mixed in (("sweep", False), ("sweep", True), ("distinct", False)):
        got = measure(args.items, shape=shape, mixed=mixed)
        print(f"{shape:<9} mixed={mixed!s:<5} single {got['per_item_single_us']:>7.1f} us/item  "
              f"batch {got['per_item_batch_us']:>6.1f} us/item  ratio {got['ratio']:6.1f}x "
              f"(CPU {got['cpu_ratio']:5.1f}x)  mismatches {got['mismatches']}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
