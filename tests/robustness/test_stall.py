"""A write holds the catalogue's lock only for its own work, and that work scales with its size.

Every other command waits for a writer (readers too, while they open the file) and gives
up "busy" after 30 s, so a write that stalls stalls everybody.  Two causes were seen:

* a join on ``id = ... OR key = ...`` (the stored ids of a re-import) planned as a nested
  loop: a re-import of 25k records over 25k stored ones took 52 s against 4 s for the
  first import, all of it under the write lock.  Every statement an import, a re-import,
  a stock file or a derivation runs is planned here (``EXPLAIN``, as DuckDB will run it on
  a catalogue of a few hundred records) and none may be a nested-loop join or a cross
  product: their cost grows with the product of two tables' sizes.
* a file parsed while the lock is held: every file is read and checked before the
  catalogue is opened for writing (checked by taking the lock from inside the reader).

How fast a re-import is against a first import is a benchmark (``benchmarks/bench_import.py``),
not a timed test.
"""
from __future__ import annotations

import fcntl
import os
import re

import pytest

import catalog
from catalog.store import FileLock, Store

#: Physical operators whose work grows with the product of their inputs' sizes.
QUADRATIC = re.compile(r"nested loop|nl join|cross product", re.IGNORECASE)
_PLANNED = ("SELECT", "WITH", "INSERT", "UPDATE", "DELETE", "CREATE OR REPLACE TEMP TABLE", "CREATE TEMP TABLE")


class PlanChecked:
    """A DuckDB connection that plans each query it runs first and keeps the quadratic ones."""

    def __init__(self, con, found: list):
        self._con, self._found = con, found

    def _check(self, sql, params=None):
        text = " ".join(str(sql).split())
        if not text.upper().startswith(_PLANNED):
            return
        args = [params] if params is not None else []
        plan = "\n".join(row[1] for row in self._con.execute("EXPLAIN " + text, *args).fetchall())
        if QUADRATIC.search(plan):
            self._found.append((text, QUADRATIC.search(plan).group()))

    def execute(self, sql, *args, **kw):
        self._check(sql, args[0] if args else kw.get("parameters"))
        return self._con.execute(sql, *args, **kw)

    def sql(self, query, *args, **kw):
        self._check(query, kw.get("params"))
        return self._con.sql(query, *args, **kw)

    def __getattr__(self, name):
        return getattr(self._con, name)


@pytest.fixture
def planned(monkeypatch):
    """Every connection a Store opens checks the plans of its queries; returns what it found."""
    found: list = []
    real = Store._connect

    def connect(self, read_only, deadline=None):
        return PlanChecked(real(self, read_only, deadline), found)

    monkeypatch.setattr(Store, "_connect", connect)
    return found


def motors_csv(path, n: int, torque: int = 350, maker: str = "Stall Test Motors"):
    lines = ["manufacturer,part_number,nominal_voltage [V],stall_torque [mNm],no_load_speed [rpm],"
             "terminal_resistance [Ohm],no_load_current [mA],mass [g]"]
    lines += [f"{maker},ST-{i:04d},24,{torque + i % 50},{5000 + i},{1 + i % 7},{50 + i % 30},{100 + i % 90}"
              for i in range(n)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_no_write_runs_a_nested_loop(tmp_path, planned):
    cat = catalog.open(tmp_path / "cat.duckdb")
    first = motors_csv(tmp_path / "m.csv", 300)
    cat.import_([first])
    # the same records again with other values, plus new ones: every path of a re-import
    again = motors_csv(tmp_path / "m2.csv", 400, torque=360)
    report = cat.import_([again])
    assert (report.created, report.updated) == (100, 300)
    # a maker whose short ids collide with the stored ones (the fallback ids of a re-import)
    cat.import_([motors_csv(tmp_path / "m3.csv", 50, maker="Stall Other")])
    stock = tmp_path / "stock.csv"
    stock.write_text("manufacturer,part_number,quantity,location\n" + "".join(
        f"Stall Test Motors,ST-{i:04d},{1 + i % 3},Lab {i % 4}\n" for i in range(200)), encoding="utf-8")
    cat.stock_import([stock])
    by_id = tmp_path / "count.csv"
    by_id.write_text("id,quantity,location\n" + "".join(f"stall-st-{i:04d},{i % 4},Lab {i % 4}\n" for i in range(150)),
                     encoding="utf-8")
    cat.stock_count(by_id, apply=True)
    cat.derive()
    assert planned == []


def test_the_old_stored_id_join_is_caught(tmp_path, planned):
    """The check itself: the join that stalled re-imports is found (so the test above can fail)."""
    cat = catalog.open(tmp_path / "cat.duckdb")
    cat.import_([motors_csv(tmp_path / "m.csv", 20)])
    with cat.store.write() as con:
        con.execute("CREATE TEMP TABLE incoming_keys AS SELECT record_id, manufacturer, part_number FROM records")
        con.execute("SELECT i.record_id, r.record_id FROM incoming_keys i JOIN records r ON r.record_id = i.record_id "
                    "OR (lower(trim(r.manufacturer)) = lower(trim(i.manufacturer)) "
                    "AND lower(trim(r.part_number)) = lower(trim(i.part_number)))").fetchall()
    assert len(planned) == 1 and planned[0][0].startswith("SELECT i.record_id")


def lock_is_free(db) -> bool:
    """Can another process take the catalogue's write lock right now?"""
    fd = os.open(FileLock(db).path, os.O_RDWR | os.O_CREAT, 0o666)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        return True
    except BlockingIOError:
        return False
    finally:
        os.close(fd)


def test_files_are_read_before_the_lock_is_taken(tmp_path, monkeypatch):
    import catalog.ingest.importer as importer
    import catalog.ingest.readers as readers

    db = tmp_path / "cat.duckdb"
    cat = catalog.open(db)
    cat.import_([motors_csv(tmp_path / "m.csv", 30)])
    seen = []
    real = readers.read_file

    def reading(path, *args, **kw):
        seen.append((os.path.basename(path), lock_is_free(db)))
        return real(path, *args, **kw)

    monkeypatch.setattr(readers, "read_file", reading)     # stock files (read through the module)
    monkeypatch.setattr(importer, "read_file", reading)    # datasheets
    cat.import_([motors_csv(tmp_path / "m2.csv", 30, torque=400)])
    stock = tmp_path / "stock.csv"
    stock.write_text("id,quantity,location\n" + "".join(f"stall-st-{i:04d},2,Lab 1\n" for i in range(30)),
                     encoding="utf-8")
    cat.stock_import([stock])
    cat.stock_count(stock, apply=True)
    assert seen and all(free for _name, free in seen), seen
    assert {name for name, _ in seen} == {"m2.csv", "stock.csv"}
