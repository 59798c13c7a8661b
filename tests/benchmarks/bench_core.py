"""Core benchmarks: samplewright against a general-purpose library and a 50-digit series.

Each row is a ratio measured side by side in the same run (these machines are shared
and noisy; absolute times vary, ratios much less). Run through ``make bench``.

Rows:
* solve: smallest balanced sample size, our integer search vs statsmodels'
  FTestAnovaPower.solve_power (a general statistics library), which returns a fractional
  total that still has to be rounded up to whole groups.
* detectable: Cohen's f at given sizes, ours vs statsmodels' effect-size solve.
* accuracy: power against an mpmath Poisson-mixture series at 50 digits.
* start-up: process start to first answered request vs ``import flask, scipy.stats``.
"""

from __future__ import annotations

import itertools
import math
import statistics
import subprocess
import sys
import time
import warnings

import numpy as np

from samplewright.core import planning
from samplewright.core.designs.one_way import OneWayAnova
from samplewright.core.distributions import f_critical_value, f_test_power
from samplewright.core.vectorised import Rows

#: 9 group counts × 6 effects × 3 powers × 3 levels = 486 planning scenarios.
GRID = list(itertools.product(range(2, 11), (0.1, 0.15, 0.25, 0.4, 0.6, 1.0), (0.8, 0.9, 0.95), (0.05, 0.01, 0.001)))


def _best_of(fn, repeat: int = 3) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def bench_solve() -> dict:
    """Sample size over GRID: ours vs statsmodels (rounded up to whole groups)."""
    from statsmodels.stats.power import FTestAnovaPower

    solver = FTestAnovaPower()
    ours: dict = {}
    theirs: dict = {}
    failures: list[str] = []

    by_k: dict[int, list] = {}
    for key in GRID:
        by_k.setdefault(key[0], []).append(key)

    def run_ours():
        # The core's array form: every scenario with the same number of groups searched in
        # lockstep (the path /v1/batch uses; a single request is the same code with one row).
        for k, keys in by_k.items():
            rows = Rows([OneWayAnova.from_f(f, k) for _, f, _, _ in keys])
            found, errors = planning.sample_size_rows(
                rows, alpha=np.array([a for *_, a in keys]), target_power=np.array([p for _, _, p, _ in keys])
            )
            assert not any(errors)
            for i, key in enumerate(keys):
                ours[key] = found.result(i).smallest_group

    def run_theirs():
        for k, f, p, a in GRID:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                try:
                    total = solver.solve_power(effect_size=f, nobs=None, alpha=a, power=p, k_groups=k)
                    theirs[(k, f, p, a)] = math.ceil(float(total) / k - 1e-9)
                except Exception as exc:  # noqa: BLE001 - a benchmark records every failure
                    failures.append(f"{(k, f, p, a)}: {type(exc).__name__}")
                    continue
            if caught:
                failures.append(f"{(k, f, p, a)}: warned {caught[0].category.__name__}")

    t_ours = _best_of(run_ours)
    t_theirs = _best_of(run_theirs, repeat=1)
    mismatch = [key for key in GRID if key in theirs and theirs[key] != ours[key]]
    # Ours is exact: check minimality directly for every scenario.
    not_minimal = []
    for (k, f, p, a), n in ours.items():
        d = OneWayAnova.from_f(f, k)
        hit = planning.power(d, sizes=[n] * k, alpha=a).power
        below = planning.power(d, sizes=[n - 1] * k, alpha=a).power if n > 2 else 0.0
        if not (hit >= p > below):
            not_minimal.append((k, f, p, a))
    return {
        "row": "solve",
        "scenarios": len(GRID),
        "ours_s": t_ours,
        "reference_s": t_theirs,
        "ratio": t_theirs / t_ours,
        "target": ">= 20",
        "met": t_theirs / t_ours >= 20 and not not_minimal,
        "notes": {
            "rounded_reference_differs": len(mismatch),
            "reference_failures_or_warnings": failures,
            "ours_not_minimal": not_minimal,
        },
    }


def bench_detectable() -> dict:
    """Detectable f over GRID at the sizes found above: ours vs statsmodels' effect solve."""
    from statsmodels.stats.power import FTestAnovaPower

    solver = FTestAnovaPower()
    cases = sorted({(k, n, p, a) for (k, _, p, a) in GRID for n in (4, 10, 40, 200)})
    ours: dict = {}
    theirs: dict = {}
    by_k: dict[int, list] = {}
    for key in cases:
        by_k.setdefault(key[0], []).append(key)

    def run_ours():
        # All scenarios with the same number of groups solved in lockstep (the batch path).
        for k, keys in by_k.items():
            rows = Rows([OneWayAnova.from_f(0.0, k) for _ in keys])
            found, errors = planning.detectable_rows(
                rows, sizes=np.array([[n] * k for _, n, _, _ in keys]),
                alpha=np.array([a for *_, a in keys]), target_power=np.array([p for _, _, p, _ in keys]),
            )
            assert not any(errors)
            for i, (_, n, _, _) in enumerate(keys):
                ours[keys[i]] = math.sqrt(float(found.noncentrality[i]) / (n * k))

    failures: list[str] = []

    def run_theirs():
        failures.clear()
        for k, n, p, a in cases:
            try:
                theirs[(k, n, p, a)] = float(
                    solver.solve_power(effect_size=None, nobs=n * k, alpha=a, power=p, k_groups=k)
                )
            except Exception as exc:  # noqa: BLE001 - a benchmark records every failure
                failures.append(f"{(k, n, p, a)}: {type(exc).__name__}")

    t_ours = _best_of(run_ours)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t_theirs = _best_of(run_theirs, repeat=1)
    # Accuracy: the power at our f, recomputed independently of the solver, equals the target.
    err = 0.0
    for (k, n, p, a), f in ours.items():
        N = n * k
        crit = f_critical_value(a, k - 1, N - k)
        err = max(err, abs(float(f_test_power(a, k - 1, N - k, N * f * f, critical=crit)) - p) / p)
    diff = max(abs(ours[c] - theirs[c]) / ours[c] for c in cases if c in theirs)
    return {
        "row": "detectable",
        "scenarios": len(cases),
        "ours_s": t_ours,
        "reference_s": t_theirs,
        "ratio": t_theirs / t_ours,
        "target": ">= 20, power error <= 1e-10",
        "met": t_theirs / t_ours >= 20 and err <= 1e-10,
        "notes": {
            "max_relative_power_error": err,
            "max_relative_difference_vs_reference": diff,
            "reference_failures": len(failures),
            "first_reference_failures": failures[:3],
        },
    }


def _mp_sf(x, d1, d2, lam, mp):
    x, d1, d2, lam = (mp.mpf(v) for v in (x, d1, d2, lam))
    z = d1 * x / (d1 * x + d2)
    h = lam / 2
    mode = int(h)
    width = int(40 * mp.sqrt(h + 1)) + 40
    total = mp.mpf(0)
    for j in range(max(0, mode - width), mode + width + 1):
        w = mp.exp(-h + j * mp.log(h) - mp.loggamma(j + 1))
        total += w * mp.betainc(d2 / 2, d1 / 2 + j, 0, 1 - z, regularized=True)
    return total


def bench_accuracy(count: int = 300) -> dict:
    """Max relative error of power over random in-range scenarios vs mpmath at 50 digits."""
    import mpmath as mp

    mp.mp.dps = 50
    rng = np.random.default_rng(20261202)
    worst = 0.0
    worst_case = None
    t0 = time.perf_counter()
    for _ in range(count):
        k = int(rng.integers(2, 20))
        n = int(10 ** rng.uniform(np.log10(2), 4))
        alpha = float(10 ** rng.uniform(-6, np.log10(0.2)))
        f = float(10 ** rng.uniform(-2, 0))
        d1, d2, lam = k - 1, n * k - k, n * k * f * f
        if lam > 3000:  # keep the 50-digit series affordable; larger λ has power 1 anyway
            continue
        crit = float(f_critical_value(alpha, d1, d2))
        ours = float(f_test_power(alpha, d1, d2, lam, critical=crit))
        ref = float(_mp_sf(crit, d1, d2, lam, mp))
        rel = abs(ours - ref) / ref
        if rel > worst:
            worst, worst_case = rel, (k, n, alpha, f)
    return {
        "row": "accuracy",
        "scenarios": count,
        "ours_s": time.perf_counter() - t0,
        "reference_s": None,
        "ratio": worst,
        "target": "max relative error <= 1e-9",
        "met": worst <= 1e-9,
        "notes": {"worst_case(k, n, alpha, f)": worst_case},
    }


_FIRST_REQUEST = (
    "from samplewright import create_app;"
    "c=create_app().test_client();"
    "r=c.post('/v1/power',json={'n_per_group':10,'design':{'type':'one_way_anova','cohens_f':0.25,'groups':3}});"
    "assert r.status_code==200"
)


def bench_startup(repeat: int = 5) -> dict:
    """Process start to first answered request vs a bare ``import flask, scipy.stats``."""

    def run(code: str) -> float:
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", code], check=True)
        return time.perf_counter() - t0

    ours = statistics.median(run(_FIRST_REQUEST) for _ in range(repeat))
    bare = statistics.median(run("import flask, scipy.stats") for _ in range(repeat))
    return {
        "row": "start-up",
        "scenarios": repeat,
        "ours_s": ours,
        "reference_s": bare,
        "ratio": ours / bare,
        "target": "<= 1.5",
        "met": ours / bare <= 1.5,
        "notes": {},
    }


ROWS = (bench_solve, bench_detectable, bench_accuracy, bench_startup)
