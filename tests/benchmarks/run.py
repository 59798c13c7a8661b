"""``make bench``: run every benchmark row, print a table, write bench-results/bench.json.

Each row is a ratio measured in this run, side by side with its reference, never an
absolute time asserted anywhere. Exit status 0 even when a target is missed: the table
says so, and the closing note explains.
"""

from __future__ import annotations

import importlib
import json
import os
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

MODULES = ("bench_core", "bench_batch", "bench_http", "bench_table")


def main() -> int:
    only = set(sys.argv[1:])
    rows = []
    for name in MODULES:
        try:
            module = importlib.import_module(name)
        except ModuleNotFoundError as exc:
            if exc.name == name:
                continue
            raise
        for fn in getattr(module, "ROWS", ()):
            if only and not any(key in fn.__name__ for key in only):
                continue
            print(f"... {fn.__name__}", file=sys.stderr, flush=True)
            rows.append(fn())
    print(f"{'row':<12} {'ratio':>12} {'target':<32} {'met':<5} notes")
    for row in rows:
        ratio = row["ratio"]
        shown = f"{ratio:.3g}" if isinstance(ratio, float) else str(ratio)
        print(f"{row['row']:<12} {shown:>12} {row['target']:<32} {str(row['met']):<5} {json.dumps(row['notes'])[:200]}")
    out = Path(os.environ.get("BENCH_OUT", "bench-results/bench.json"))
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(rows, indent=2, default=str) + "\n")
    print(f"wrote {out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
