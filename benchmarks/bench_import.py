"""Import of 100k motor rows (15 unit-bearing fields, mixed spellings) end to end,
against the naive path (one pint Quantity per value, one jsonschema validation per
record) measured on 2k rows and scaled to 100k; and the re-import of the same file over
its first import, against that first import measured in the same run (a re-import
replaces every value, keeps the old ones in history and derives from the store, all
under the write lock: it must cost about what the first import costs)."""
from __future__ import annotations

import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from benchmarks.common import report
from benchmarks.data import SPELLINGS, write_motor_csv

N = 100_000
N_NAIVE = 2_000
RUNS = 3


def naive(path: Path) -> float:
    """Parse each cell with pint and validate each record with jsonschema; seconds.

    Each cell goes to pint as text (``Quantity("12.5 ozf*in")``), only its spelling mapped
    to one pint reads: the per-value path of the baseline figure (about 290 µs a value).
    """
    import csv

    import jsonschema

    from catalog.fields import load_schema
    from catalog.units import get_registry

    ureg = get_registry()
    si_units = {"nominal_voltage": "V", "no_load_speed": "rad/s", "no_load_current": "A",
                "nominal_torque": "N*m", "stall_torque": "N*m", "stall_current": "A",
                "terminal_resistance": "ohm", "terminal_inductance": "H", "torque_constant": "N*m/A",
                "rotor_inertia": "kg*m**2", "thermal_resistance_winding_housing": "K/W",
                "thermal_resistance_housing_ambient": "K/W", "max_winding_temperature": "K",
                "mass": "kg", "diameter": "m"}
    # the naive path cannot read datasheet spellings: give pint its own spelling of each
    to_pint = {"mNm": "mN*m", "mN·m": "mN*m", "N·m": "N*m", "oz-in": "ozf*in", "oz·in": "ozf*in",
               "kg-cm": "kgf*cm", "mNm/A": "mN*m/A", "oz-in/A": "ozf*in/A", "N·m/A": "N*m/A",
               "g·cm²": "g*cm**2", "gcm²": "g*cm**2", "oz-in-s²": "ozf*in*s**2", "Ohm": "ohm",
               "Ω": "ohm", "mOhm": "mohm", "µH": "uH", "°C/W": "delta_degC/W", "°C": "degC",
               "degC": "degC", "VDC": "V", "r/min": "rpm", "rpm": "rpm"}
    validator = jsonschema.Draft202012Validator(load_schema("motor"))
    t = time.perf_counter()
    with path.open(encoding="utf-8") as fh:
        rows = csv.DictReader(fh)
        for row in rows:
            rec = {"manufacturer": row["manufacturer"], "part_number": row["part_number"]}
            for f in SPELLINGS:
                value, unit = row[f].split(" ", 1)
                unit = to_pint.get(unit, unit)
                if unit == "degC":  # pint refuses to parse an offset unit times a number from text
                    q = ureg.Quantity(float(value), unit)
                else:                # the cell as text, as a naive importer hands it to pint
                    q = ureg.Quantity(f"{value} {unit}")
                rec[f] = q.to(si_units[f]).magnitude
            validator.validate(rec)
    return time.perf_counter() - t


def main() -> int:
    from benchmarks.bench_startup import ENV, EXE

    with tempfile.TemporaryDirectory() as d:
        d = Path(d)
        big = write_motor_csv(d / "big.csv", N)
        small = write_motor_csv(d / "small.csv", N_NAIVE, seed=7)
        first, again = [], []

        def timed(db: Path) -> float:  # as a user runs it: a fresh process
            t = time.perf_counter()
            subprocess.run([EXE, "--db", str(db), "import", str(big)], check=True, capture_output=True, env=ENV)
            return time.perf_counter() - t

        for k in range(RUNS):  # first import into a new catalogue, then the same file over it
            first.append(timed(d / f"c{k}.duckdb"))
            again.append(timed(d / f"c{k}.duckdb"))
        ours = statistics.median(first)
        naive_small = naive(small)
        baseline = naive_small * N / N_NAIVE
        report("import_100k_rows", ours, "s", baseline, "<= 10 s and >= 40x",
               ours <= 10 and baseline / ours >= 40,
               f"`motorshelf import` as a fresh process, median of {RUNS}; naive path measured on "
               f"{N_NAIVE} rows and scaled x{N // N_NAIVE}")
        reimport = statistics.median(again)
        factor = reimport / ours
        report("reimport_100k_rows", reimport, "s", ours, "<= 1.5x the first import",
               factor <= 1.5,
               f"the same file over its first import, median of {RUNS}, each right after its first "
               f"import (the baseline, median {ours:.3g} s): {factor:.2f}x the first import")
    return 0


if __name__ == "__main__":
    sys.exit(main())
