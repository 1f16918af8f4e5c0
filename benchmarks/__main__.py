"""`make bench`: run every benchmark, one line per figure (median, baseline, ratio)."""
from __future__ import annotations

import importlib
import sys

SCRIPTS = ["bench_startup", "bench_derive", "bench_import", "bench_select", "bench_serve"]


def main() -> int:
    print("motorshelf benchmarks (results also in benchmarks/results/*.json)")
    for name in SCRIPTS:
        importlib.import_module(f"benchmarks.{name}").main()
    return 0


if __name__ == "__main__":
    sys.exit(main())
