"""Shared helpers of the benchmarks: medians, result files, one printed line per figure."""
from __future__ import annotations

import json
import statistics
import time
from pathlib import Path

RESULTS = Path(__file__).resolve().parent / "results"


def median_time(func, runs: int = 3) -> float:
    """Median wall time [s] of ``func()`` over ``runs`` runs."""
    times = []
    for _ in range(runs):
        t = time.perf_counter()
        func()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def report(name: str, value: float, unit: str, baseline: float | None, target: str | None, met: bool | None,
           note: str = "") -> dict:
    """Print one line and write ``benchmarks/results/NAME.json`` (``target`` None: a figure without one)."""
    ratio = (baseline / value) if baseline and value else None
    line = f"{name:<34} {value:10.4g} {unit:<4}"
    if baseline is not None:
        line += f"  baseline {baseline:10.4g} {unit:<4} ratio {ratio:7.2f}x"
    if target is not None:
        line += f"  target {target}: {'met' if met else 'MISSED'}"
    if note:
        line += f"  ({note})"
    print(line, flush=True)
    RESULTS.mkdir(parents=True, exist_ok=True)
    doc = {"name": name, "value": value, "unit": unit, "baseline": baseline, "ratio": ratio,
           "target": target, "met": None if met is None else bool(met), "note": note}
    (RESULTS / f"{name}.json").write_text(json.dumps(doc, indent=2), encoding="utf-8")
    return doc
