"""Seeded generators of large, physically consistent supplier files for the benchmarks."""
from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np

#: (field, [spellings with their factor to SI]) for the 15 unit-bearing columns.
SPELLINGS = {
    "nominal_voltage": [("V", 1.0), ("VDC", 1.0)],
    "no_load_speed": [("rpm", math.pi / 30), ("r/min", math.pi / 30), ("rad/s", 1.0)],
    "no_load_current": [("mA", 1e-3), ("A", 1.0)],
    "nominal_torque": [("mNm", 1e-3), ("oz-in", 7.061551814226044e-3), ("N·m", 1.0)],
    "stall_torque": [("mN·m", 1e-3), ("oz·in", 7.061551814226044e-3), ("kg-cm", 0.0980665)],
    "stall_current": [("A", 1.0), ("mA", 1e-3)],
    "terminal_resistance": [("Ohm", 1.0), ("Ω", 1.0), ("mOhm", 1e-3)],
    "terminal_inductance": [("mH", 1e-3), ("µH", 1e-6), ("uH", 1e-6)],
    "torque_constant": [("mNm/A", 1e-3), ("oz-in/A", 7.061551814226044e-3), ("N·m/A", 1.0)],
    "rotor_inertia": [("g·cm²", 1e-7), ("gcm²", 1e-7), ("oz-in-s²", 7.061551814226044e-3)],
    "thermal_resistance_winding_housing": [("K/W", 1.0), ("°C/W", 1.0)],
    "thermal_resistance_housing_ambient": [("K/W", 1.0), ("°C/W", 1.0)],
    "max_winding_temperature": [("°C", None), ("degC", None)],
    "mass": [("g", 1e-3), ("kg", 1.0), ("oz", 0.028349523125)],
    "diameter": [("mm", 1e-3), ("in", 0.0254)],
}


def motor_rows(n: int, seed: int = 1):
    """Exact SI parameters of ``n`` consistent motors (dict of arrays)."""
    rng = np.random.default_rng(seed)
    v = rng.choice([6.0, 12.0, 24.0, 36.0, 48.0], n)
    r = 10 ** rng.uniform(-1, 1.3, n)
    kt = 10 ** rng.uniform(-2.3, -0.7, n)
    i0 = v / r * rng.uniform(0.01, 0.06, n)
    is_ = v / r
    ts = kt * (is_ - i0)
    w0 = (v - r * i0) / kt
    tn = ts * rng.uniform(0.1, 0.3, n)
    return {
        "nominal_voltage": v, "no_load_speed": w0, "no_load_current": i0, "nominal_torque": tn,
        "stall_torque": ts, "stall_current": is_, "terminal_resistance": r,
        "terminal_inductance": r * 10 ** rng.uniform(-4.5, -3, n), "torque_constant": kt,
        "rotor_inertia": 10 ** rng.uniform(-7, -4, n),
        "thermal_resistance_winding_housing": rng.uniform(1, 15, n),
        "thermal_resistance_housing_ambient": rng.uniform(5, 40, n),
        "max_winding_temperature": rng.choice([125.0, 155.0], n) + 273.15,
        "mass": rng.uniform(0.02, 1.5, n), "diameter": rng.uniform(0.013, 0.06, n),
    }


def write_motor_csv(path: Path, n: int, seed: int = 1) -> Path:
    """A CSV of ``n`` motors, value and unit in each cell, spellings mixed per row."""
    rng = np.random.default_rng(seed + 1)
    si = motor_rows(n, seed)
    fields = list(SPELLINGS)
    cols = []
    for f in fields:
        options = SPELLINGS[f]
        pick = rng.integers(0, len(options), n)
        texts = np.empty(n, dtype=object)
        for k, (unit, factor) in enumerate(options):
            m = pick == k
            if factor is None:  # temperature in °C
                vals = si[f][m] - 273.15
            else:
                vals = si[f][m] / factor
            texts[m] = [f"{x:.6g} {unit}" for x in vals]
        cols.append(texts)
    path = Path(path)
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["manufacturer", "part_number", *fields])
        makers = np.array(["Bench Alpha", "Bench Beta", "Bench Gamma"], dtype=object)[np.arange(n) % 3]
        for i in range(n):
            w.writerow([makers[i], f"BM-{i:06d}", *(c[i] for c in cols)])
    return path
