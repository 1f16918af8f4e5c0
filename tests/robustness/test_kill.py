"""Faults: a large import killed (SIGKILL) at random moments leaves a catalogue that opens,
holds together and holds the whole batch or none of it."""
from __future__ import annotations

import os
import random
import shutil
import signal
import subprocess
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

from tests.robustness.conftest import PYTHON, fingerprint

WORKER = Path(__file__).with_name("kill_worker.py")
ROWS = 20_000
#: kills: (how many, counted from) - the start (reading the file), the opening of the write
#: transaction (writing), the end of its body (COMMIT and checkpoint)
PLAN = ((3, "start"), (2, "WRITE-OPEN"), (5, "WRITE-BODY"))
KILLS = sum(n for n, _ in PLAN)
RSS_BOUND_KB = 1_500 * 1024  # 1.5 GB: the reference run of the 20k-row import must stay below
SEED = int(os.environ.get("MOTORSHELF_KILL_SEED", "20261201"))


def big_file(path: Path) -> Path:
    """20k new motors plus a new value for two records the catalogue already has."""
    lines = ["manufacturer,part_number,stall_torque [mNm],no_load_speed [rpm],terminal_resistance [Ohm],notes",
             "Shelf Good Motors,G-100,360,5200,2.1,updated by the big import",
             "Shelf Good Motors,G-200,260,6100,3.3,"]
    lines += [f"Kill Test Motors,KT-{i:06d},{100 + i % 500},{3000 + i % 4000},{1 + i % 7}.5,row {i}"
              for i in range(ROWS)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def start(db: Path, data: Path) -> subprocess.Popen:
    return subprocess.Popen([PYTHON, str(WORKER), "--db", str(db), "import", str(data)],
                            stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True)


def reference_run(db: Path, data: Path) -> tuple[dict, int]:
    """Import to the end; returns (seconds from the start to each mark, peak RSS [kB])."""
    t0 = time.monotonic()
    proc = start(db, data)
    marks = {}
    for line in proc.stdout:
        if line.startswith("WRITE-"):
            marks[line.split()[0]] = time.monotonic() - t0
    _pid, status, usage = os.wait4(proc.pid, 0)
    proc.returncode = os.waitstatus_to_exitcode(status)
    assert proc.returncode == 0
    return marks, usage.ru_maxrss


def killed_run(db: Path, data: Path, delay: float, mark: str) -> str:
    """Start an import, SIGKILL it ``delay`` s after the start or after ``mark``."""
    proc = start(db, data)
    if mark != "start":
        for line in proc.stdout:
            if line.startswith(mark):
                break
    time.sleep(delay)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    rest = proc.stdout.read()
    proc.stdout.close()
    return "finished" if "WRITE-DONE" in rest else "killed"


def check_whole(db: Path, states: dict) -> str:
    """The catalogue opens, its views read, no value lacks its record, and its content is
    exactly one of ``states`` (name -> fingerprint); returns that name."""
    import catalog

    cat = catalog.open(db, wait=5)
    views = cat.sql("SELECT (SELECT count(*) FROM motors) AS motors, (SELECT count(*) FROM gearheads) AS gearheads")
    assert views["gearheads"].iat[0] == 1
    orphans = cat.sql(
        "SELECT (SELECT count(*) FROM record_values v LEFT JOIN records r USING (record_id) "
        "WHERE r.record_id IS NULL) AS values_without_record, "
        "(SELECT count(*) FROM flags f LEFT JOIN records r USING (record_id) WHERE r.record_id IS NULL) "
        "AS flags_without_record, "
        "(SELECT count(*) FROM records r LEFT JOIN batches b ON b.batch_id = r.updated_batch "
        "WHERE b.batch_id IS NULL) AS records_without_batch")
    assert orphans.iloc[0].tolist() == [0, 0, 0]
    found = fingerprint(db)
    matches = [name for name, fp in states.items() if fp == found]
    assert matches, f"content is neither the state before nor after the import: {found}"
    assert views["motors"].iat[0] == found["records"][0] - 1
    return matches[0]


def test_sigkill_during_a_large_import_keeps_the_catalogue_whole(prefilled, tmp_path):
    data = big_file(tmp_path / "big.csv")
    before = fingerprint(prefilled)
    ref = tmp_path / "reference.duckdb"
    shutil.copyfile(prefilled, ref)
    marks, rss_kb = reference_run(ref, data)
    after = fingerprint(ref)
    assert after["records"][0] == before["records"][0] + ROWS
    assert rss_kb < RSS_BOUND_KB, f"peak RSS {rss_kb / 1024:.0f} MB of a {ROWS}-row import"
    states = {"before": before, "after": after}
    assert check_whole(ref, states) == "after"

    rng = random.Random(SEED)
    spans = {"start": marks["WRITE-OPEN"], "WRITE-OPEN": marks["WRITE-BODY"] - marks["WRITE-OPEN"],
             "WRITE-BODY": 2.5 * (marks["WRITE-DONE"] - marks["WRITE-BODY"])}  # slower two at a time
    plans = [(rng.uniform(0.0, spans[mark]), mark) for n, mark in PLAN for _ in range(n)]

    def one_kill(k: int) -> str:
        db = tmp_path / f"killed{k}.duckdb"
        shutil.copyfile(prefilled, db)
        delay, mark = plans[k]
        end = killed_run(db, data, delay, mark)
        try:
            state = check_whole(db, states)
            assert mark != "start" or state == "before", "killed before the write began, yet changed"
        except AssertionError as exc:  # say which kill broke it, to reproduce with the seed
            raise AssertionError(f"seed {SEED}: kill {delay:.3f} s after {mark} ({end}) left {db.name} "
                                 f"broken: {exc}") from None
        return state

    with ThreadPoolExecutor(max_workers=2) as pool:  # two at a time: this machine has two cores
        outcomes = list(pool.map(one_kill, range(KILLS)))
    print(f"\n{KILLS} kills (seed {SEED}): {outcomes.count('before')} before, {outcomes.count('after')} after; "
          f"reference: {marks['WRITE-OPEN']:.1f} s to the write, {spans['WRITE-OPEN']:.1f} s writing, "
          f"{marks['WRITE-DONE'] - marks['WRITE-BODY']:.1f} s committing, {rss_kb / 1024:.0f} MB peak")
    # a killed catalogue stays writable
    small = tmp_path / "small.csv"
    small.write_text("manufacturer,part_number,stall_torque\nAfter Kill Motors,AK-1,1 N*m\n", encoding="utf-8")
    db = tmp_path / f"killed{KILLS - 1}.duckdb"
    proc = start(db, small)
    proc.communicate()
    assert proc.returncode == 0
    assert fingerprint(db)["records"][0] == states[outcomes[-1]]["records"][0] + 1
