"""Files of tens of megabytes: refused before they are read, in bounded memory, with a clear
message (the decision: an import is one transaction held in memory, so big files are split,
see catalog/ingest/readers.py:MAX_FILE_BYTES).  The memory of an accepted 20k-row import is
measured in test_kill.py's reference run."""
from __future__ import annotations

import os
import subprocess

import pytest

from catalog.ingest.readers import MAX_FILE_BYTES, MAX_YAML_BYTES
from tests.conftest import table_snapshot
from tests.robustness.conftest import PYTHON

RSS_BOUND_KB = 1_500 * 1024  # 1.5 GB
ROW = "Bulk Motors,BK-{:07d},{} mNm,{} rpm,a note long enough to make the file grow quickly\n"


def write_big(path, size: int) -> int:
    """Write a file of about ``size`` bytes in the format of its suffix; returns its size."""
    with path.open("w", encoding="utf-8") as fh:
        if path.suffix == ".csv":
            fh.write("manufacturer,part_number,stall_torque,no_load_speed,notes\n")
            i = 0
            while fh.tell() < size:
                fh.write("".join(ROW.format(i + k, 100 + k, 3000 + k) for k in range(1000)))
                i += 1000
        elif path.suffix == ".json":
            fh.write('{"motors": [')
            i = 0
            while fh.tell() < size:
                fh.write(",".join(f'{{"manufacturer": "Bulk Motors", "part_number": "BK-{i + k}", '
                                  f'"stall_torque": "{100 + k} mNm"}}' for k in range(1000)) + ",")
                i += 1000
            fh.write('{"manufacturer": "Bulk Motors", "part_number": "end"}]}\n')
        else:
            fh.write("motors:\n")
            i = 0
            while fh.tell() < size:
                fh.write("".join(f"  - manufacturer: Bulk Motors\n    part_number: BK-{i + k}\n"
                                 f"    stall_torque: {100 + k} mNm\n" for k in range(1000)))
                i += 1000
    return path.stat().st_size


def run_measured(args) -> tuple[int, str, int]:
    """Run ``motorshelf ARGS`` in a subprocess: (exit code, stderr, its peak RSS [kB])."""
    proc = subprocess.Popen([PYTHON, "-c", "import sys; from catalog.cli import main; main(sys.argv[1:])",
                             *map(str, args)], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    err = proc.stderr.read()
    proc.stderr.close()
    _pid, status, usage = os.wait4(proc.pid, 0)
    proc.returncode = os.waitstatus_to_exitcode(status)
    return proc.returncode, err, usage.ru_maxrss


@pytest.mark.parametrize("suffix, size", [(".csv", 40_000_000), (".json", 30_000_000), (".yaml", 12_000_000)])
def test_tens_of_megabytes_are_refused_in_bounded_memory(prefilled, template_snapshot, tmp_path, suffix, size):
    path = tmp_path / f"big{suffix}"
    size = write_big(path, size)
    limit = MAX_YAML_BYTES if suffix == ".yaml" else MAX_FILE_BYTES
    assert size > limit
    code, err, rss_kb = run_measured(["--db", prefilled, "import", path])
    assert code == 2, err
    assert "Traceback" not in err
    assert err.splitlines() == [
        f"error: {path}: file of {size / 1e6:.1f} MB, expected at most {limit / 1e6:.1f} MB for a {suffix} "
        "file; split it",
        f"error: 1 problem(s); nothing was imported, {prefilled} is unchanged"]
    assert rss_kb < RSS_BOUND_KB, f"peak RSS {rss_kb / 1024:.0f} MB"
    assert table_snapshot(prefilled) == template_snapshot


def test_validate_refuses_the_same_way(tmp_path):
    path = tmp_path / "big.csv"
    size = write_big(path, 30_000_000)
    code, err, rss_kb = run_measured(["validate", path])
    assert code == 2
    assert (f"error: {path}: file of {size / 1e6:.1f} MB, expected at most {MAX_FILE_BYTES / 1e6:.1f} MB "
            "for a .csv file; split it") in err.splitlines()
    assert rss_kb < RSS_BOUND_KB
