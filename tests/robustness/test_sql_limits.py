"""SQL written by the user (``sql``, ``export --where``) runs within a time limit and a memory
limit, cannot change settings, and spills to a private temporary folder.

Seen before: ``SELECT count(*) FROM range(1000000000000)`` ran until killed while its read
lock kept every writer out; ``SET memory_limit`` was allowed, the default was 80 % of the
machine's memory, and spills went beside the catalogue (catalog/store/limits.py).
"""
from __future__ import annotations

import os
import subprocess
import tempfile
import threading
import time
from pathlib import Path

import pytest

from tests.conftest import table_snapshot
from tests.robustness.conftest import GOOD_MOTORS, PYTHON, assert_clean_failure, error_lines, run_cli

CLI = [PYTHON, "-c", "import sys; from catalog.cli import main; main(sys.argv[1:])"]
FOREVER = "SELECT count(*) FROM range(1000000000000)"


def test_a_runaway_query_is_stopped_and_a_waiting_writer_gets_in(prefilled, tmp_path):
    data = tmp_path / "more.csv"
    data.write_text(GOOD_MOTORS.replace("G-", "W-"), encoding="utf-8")
    t0 = time.monotonic()
    query = subprocess.Popen([*CLI, "--db", str(prefilled), "sql", FOREVER, "--time-limit", "3"],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(1.0)  # the query holds its read lock now: the import below waits for it
    writer = subprocess.run([*CLI, "--db", str(prefilled), "import", str(data)], capture_output=True, text=True,
                            timeout=120)
    out, err = query.communicate(timeout=120)
    assert query.returncode == 2 and "Traceback" not in err
    assert err.splitlines() == ["error: sql: the query ran longer than its time limit of 3 s and was stopped; "
                                "raise the limit with --time-limit SECONDS"]
    assert writer.returncode == 0, writer.stderr  # it waited (30 s at most), then wrote
    assert "3 record(s) created" in writer.stdout
    assert time.monotonic() - t0 < 60


def test_the_default_time_limit_is_below_a_writers_wait():
    from catalog.api import Catalog
    from catalog.store.limits import DEFAULT_TIME_LIMIT

    assert DEFAULT_TIME_LIMIT < Catalog().store.wait  # a runaway read never makes a writer give up


def test_a_runaway_where_condition_is_stopped(prefilled, tmp_path):
    out = tmp_path / "m.csv"
    result = run_cli("--db", prefilled, "export", "motors", "--out", out, "--where",
                     f"({FOREVER}) > 0", "--time-limit", "1")
    assert_clean_failure(result)
    assert error_lines(result) == ["--where: the query ran longer than its time limit of 1 s and was stopped; "
                                   "raise the limit with --time-limit SECONDS"]
    assert not out.exists()


@pytest.mark.parametrize("query", ["SET memory_limit = '64GB'", "PRAGMA memory_limit = '64GB'", "RESET memory_limit",
                                   "SET threads = 64", "SELECT 1; SET enable_external_access = true",
                                   "SET temp_directory = '/tmp'"])
def test_settings_are_refused(prefilled, template_snapshot, query):
    result = run_cli("--db", prefilled, "sql", query)
    assert_clean_failure(result)
    assert error_lines(result) == [
        "sql: SET, RESET and setting PRAGMAs are not allowed: the query runs with a time limit (20 s) and a "
        "memory limit (1 GiB) and no settings of its own, expected a query such as SELECT ... (--time-limit and "
        "--memory-limit raise the limits)"]
    assert table_snapshot(prefilled) == template_snapshot


def test_the_limits_hold_inside_the_query(prefilled):
    result = run_cli("--db", prefilled, "sql", "SELECT current_setting('memory_limit') AS m, "
                     "current_setting('max_temp_directory_size') AS s, current_setting('enable_external_access') AS x, "
                     "current_setting('lock_configuration') AS l", "--memory-limit", "512MiB", "--format", "csv")
    assert result.exit_code == 0, result.output
    assert result.stdout.splitlines() == ["m,s,x,l", "512.0 MiB,2.0 GiB,False,True"]


def test_memory_is_bounded_in_duckdb_and_in_the_result(prefilled):
    big = run_cli("--db", prefilled, "sql", "SELECT list(range) AS l FROM range(200000000) GROUP BY range % 2",
                  "--memory-limit", "64MB")
    assert_clean_failure(big)
    assert error_lines(big) == ["sql: the query needs more than its memory limit of 61 MiB; narrow the query or "
                                "raise the limit with --memory-limit SIZE (e.g. 4GB)"]
    rows = run_cli("--db", prefilled, "sql", "SELECT range, repeat('x', 100) AS t FROM range(5000000)",
                   "--memory-limit", "64MB", "--format", "csv")
    assert_clean_failure(rows)
    assert error_lines(rows) == ["sql: the result holds more than its memory limit of 61 MiB; narrow the query or "
                                 "raise the limit with --memory-limit SIZE (e.g. 4GB)"]


def test_spills_go_to_a_private_temporary_folder_never_beside_the_catalogue(prefilled, tmp_path, monkeypatch):
    import catalog

    scratch = tmp_path / "scratch"
    scratch.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(scratch))
    seen: set = set()
    done = threading.Event()

    def watch():
        while not done.is_set():
            for folder, _dirs, files in os.walk(scratch):
                seen.update(Path(folder, f).relative_to(scratch).parts[0] + "/" + f for f in files)
            time.sleep(0.01)

    watcher = threading.Thread(target=watch)
    watcher.start()
    try:  # a grouping larger than its memory: DuckDB spills it
        df = catalog.open(prefilled).sql("SELECT count(*) AS n FROM (SELECT range % 4000000 AS k, count(*) AS c "
                                         "FROM range(8000000) GROUP BY k)", memory_limit="48MB")
    finally:
        done.set()
        watcher.join()
    assert int(df["n"][0]) == 4_000_000
    assert any(name.startswith("motorshelf-spill-") and "/duckdb_temp" in name for name in seen), seen
    assert list(scratch.iterdir()) == []  # removed afterwards
    assert sorted(p.name for p in prefilled.parent.iterdir() if p.name.startswith(prefilled.name)) == \
        [prefilled.name, prefilled.name + ".lock"]


@pytest.mark.parametrize("option, value, message", [
    ("--time-limit", "-3", "--time-limit: '-3' is not a positive number of seconds, expected e.g. 60"),
    ("--time-limit", "soon", "--time-limit: 'soon' is not a number of seconds, expected e.g. 60"),
    ("--memory-limit", "lots", "--memory-limit: 'lots' is not a size, expected e.g. 512MB, 4GB or 2GiB"),
    ("--memory-limit", "10", "--memory-limit: '10' is below 16 MiB, expected a size DuckDB can work in (e.g. 512MB)"),
])
def test_limits_given_wrong(prefilled, option, value, message):
    result = run_cli("--db", prefilled, "sql", "SELECT 1", option, value)
    assert_clean_failure(result)
    assert error_lines(result) == [message]
