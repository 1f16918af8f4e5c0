"""Derivation of a whole 100k-row catalogue (the relation closure over columns)."""
from __future__ import annotations

import sys

import numpy as np

from benchmarks.common import median_time, report
from benchmarks.data import motor_rows

N = 100_000


def main() -> int:
    from catalog.derive import derive_columns

    full = motor_rows(N, seed=3)
    rng = np.random.default_rng(5)
    given = {}
    for name, values in full.items():  # hide about a third of the values at random
        v = values.copy()
        v[rng.random(N) < 0.33] = np.nan
        given[name] = v
    t = median_time(lambda: derive_columns(given, {}, N), runs=3)
    report("derive_100k_rows", t, "s", None, "<= 2 s", t <= 2.0, "median of 3, columns in memory")
    return 0


if __name__ == "__main__":
    sys.exit(main())
