"""Table benchmark: 100,000 power scenarios in one ``POST /v1/table`` request.

Measured in the same run, side by side (these machines are shared and noisy; the ratios
are what is reported, never an absolute time):

* against single ``POST /v1/power`` calls through the same Flask test client: SINGLES of
  the scenarios are sent one by one and the per-scenario time scaled to all of them
  (target: the table at least 100× the single calls' throughput);
* against the bare vectorised evaluation of the same scenarios: the F critical value and
  the noncentral F upper tail on arrays of 100,000 (``core.distributions``, what the
  engine calls, and ``scipy.stats.f.isf`` / ``ncf.sf`` directly); the faster of the two is
  the floor no service can beat (target: the table within 3× of it).

The scenarios are invented and seeded (Cohen's f or η², 2 to 6 groups, 5 to 120 per group,
three α levels). Every single call's answer is also compared with its table row (equal,
bit for bit). Run through ``make bench`` (``tests/benchmarks/run.py bench_table``), or alone:
``python tests/benchmarks/bench_table.py [--rows N]`` (``run.py table`` also matches
bench_detectable, whose name contains "table").
"""

from __future__ import annotations

import argparse
import json
import sys
import time

import numpy as np

from samplewright.app import create_app
from samplewright.config import Settings

ROWS_COUNT = 100_000
SINGLES = 2_000
SINGLE_TARGET = 100.0
FLOOR_TARGET = 3.0


def scenarios(count: int, seed: int = 20240602) -> dict[str, list]:
    """``count`` invented power scenarios as columns."""
    rng = np.random.default_rng(seed)
    return {
        "cohens_f": np.round(rng.uniform(0.05, 0.8, count), 3).tolist(),
        "groups": rng.integers(2, 7, count).tolist(),
        "n_per_group": rng.integers(5, 121, count).tolist(),
        "alpha": rng.choice([0.05, 0.01, 0.1], count).tolist(),
    }


def _interleaved(fns: dict, repeat: int = 7) -> tuple[dict, dict, dict]:
    """Best wall and CPU seconds of each function, run in turn ``repeat`` times (noise hits all alike)."""
    wall = {name: float("inf") for name in fns}
    cpu = dict(wall)
    out = {}
    for _ in range(repeat):
        for name, fn in fns.items():
            t0, c0 = time.perf_counter(), time.process_time()
            out[name] = fn()
            wall[name] = min(wall[name], time.perf_counter() - t0)
            cpu[name] = min(cpu[name], time.process_time() - c0)
    return wall, cpu, out


def _stages(payload: str, repeat: int = 5) -> dict:
    """Best seconds of each stage of the table route, called directly (where the time goes)."""
    from samplewright.api import table
    from samplewright.api.body import parse_json_text

    best: dict[str, float] = {}
    for _ in range(repeat):
        t0 = time.perf_counter()
        body = parse_json_text(payload)  # the route's reader, without the request object
        t1 = time.perf_counter()
        result = table.run_table(body)
        t2 = time.perf_counter()
        table.table_json(result)
        t3 = time.perf_counter()
        for name, seconds in (("parse_json", t1 - t0), ("validate_compute_write_columns", t2 - t1),
                              ("write_envelope", t3 - t2)):
            best[name] = round(min(best.get(name, float("inf")), seconds), 4)
    return best


def measure(count: int = ROWS_COUNT, singles: int = SINGLES) -> dict:
    """Time one table, ``singles`` single calls and the bare evaluation; check agreement."""
    from scipy import stats

    from samplewright.core.distributions import f_critical_value, f_test_power

    app = create_app(Settings(max_batch_bytes=64 * 1024 * 1024))
    client = app.test_client()
    columns = scenarios(count)
    payload = json.dumps({"operation": "power", "design": {"type": "one_way_anova"}, "columns": columns})

    def single_body(i: int) -> dict:
        return {"design": {"type": "one_way_anova", "cohens_f": columns["cohens_f"][i],
                           "groups": columns["groups"][i]},
                "n_per_group": columns["n_per_group"][i], "alpha": columns["alpha"][i]}

    for i in range(50):  # warm-up: imports, caches
        client.post("/v1/power", json=single_body(i))
    client.post("/v1/table", json={"operation": "power", "design": {"type": "one_way_anova"},
                                   "columns": {k: v[:50] for k, v in columns.items()}})

    t0 = time.perf_counter()
    answers = [client.post("/v1/power", json=single_body(i)) for i in range(singles)]
    single_seconds = time.perf_counter() - t0
    per_single = single_seconds / singles

    def table():
        response = client.post("/v1/table", data=payload, content_type="application/json")
        assert response.status_code == 200, response.get_data(as_text=True)[:500]
        return response

    k = np.asarray(columns["groups"], dtype=float)
    n = np.asarray(columns["n_per_group"], dtype=float)
    f = np.asarray(columns["cohens_f"])
    alpha = np.asarray(columns["alpha"])
    total = k * n
    df1, df2, lam = k - 1.0, total - k, total * f**2

    def core():
        crit = f_critical_value(alpha, df1, df2)
        return f_test_power(alpha, df1, df2, lam, critical=crit)

    def scipy_direct():
        crit = stats.f.isf(alpha, df1, df2)
        return stats.ncf.sf(crit, df1, df2, lam)

    wall, cpu, out = _interleaved({"table": table, "core": core, "scipy": scipy_direct})
    table_seconds, core_seconds, scipy_seconds = wall["table"], wall["core"], wall["scipy"]
    response, power = out["table"], out["core"]
    got = response.get_json()["columns"]
    mismatches = 0
    for i, single in enumerate(answers):
        body = single.get_json()
        same = all(got[name][i] == body[name] for name in
                   ("power", "noncentrality", "critical_value", "df_numerator", "df_denominator", "n_total"))
        mismatches += not same

    scipy_power = out["scipy"]
    scipy_differs = int(np.sum(scipy_power != power))
    with np.errstate(all="ignore"):
        scipy_max_rel = float(np.nanmax(np.abs(scipy_power - power) / power))
    stages = _stages(payload)
    floor = min(core_seconds, scipy_seconds)
    floor_mismatches = int(np.sum(np.asarray(got["power"]) != power))
    single_ratio = per_single * count / table_seconds
    floor_ratio = table_seconds / floor
    floor_cpu_ratio = cpu["table"] / min(cpu["core"], cpu["scipy"])
    distinct_tests = len(set(zip(columns["alpha"], columns["groups"], columns["n_per_group"], strict=True)))
    return {
        "rows": count,
        "table_s": round(table_seconds, 4),
        "single_call_us": round(per_single * 1e6, 1),
        "singles_timed": singles,
        "singles_scaled_s": round(per_single * count, 2),
        "single_ratio": round(single_ratio, 1),
        "core_arrays_s": round(core_seconds, 4),
        "scipy_stats_arrays_s": round(scipy_seconds, 4),
        "floor_ratio": round(floor_ratio, 3),
        "floor_ratio_vs_core_arrays": round(table_seconds / core_seconds, 3),
        "floor_cpu_ratio": round(floor_cpu_ratio, 3),
        "distinct_alpha_df_triples": distinct_tests,
        "scipy_stats_power_differs_rows": scipy_differs,
        "scipy_stats_power_max_rel_diff": scipy_max_rel,
        "stages_s": stages,
        "mismatches_vs_single": mismatches,
        "power_differs_from_core_arrays": floor_mismatches,
    }


def bench_table() -> dict:
    """100,000 power scenarios in one /v1/table request vs single calls and the bare array evaluation."""
    got = measure()
    met = (got["single_ratio"] >= SINGLE_TARGET and got["floor_ratio"] <= FLOOR_TARGET
           and got["mismatches_vs_single"] == 0)
    return {
        "row": "table",
        "scenarios": got["rows"],
        "ours_s": got["table_s"],
        "reference_s": got["singles_scaled_s"],
        "ratio": got["single_ratio"],
        "target": f">= {SINGLE_TARGET:g}x single, <= {FLOOR_TARGET:g}x bare arrays",
        "met": met,
        "notes": got,
    }


ROWS = (bench_table,)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--rows", type=int, default=ROWS_COUNT)
    parser.add_argument("--singles", type=int, default=SINGLES)
    args = parser.parse_args(argv)
    print(json.dumps(measure(args.rows, args.singles), indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
