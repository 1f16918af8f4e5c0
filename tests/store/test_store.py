"""The catalogue file: migrations, refusal of newer files, the write lock, record ids."""
from __future__ import annotations

import hashlib
import subprocess
import sys
import threading
import types

import duckdb
import pytest
from click.testing import CliRunner

import catalog
import catalog.store as store_mod
from catalog.cli import cli
from catalog.errors import StoreBusy, StoreError
from catalog.fields import fields_for
from catalog.ingest.importer import default_id
from catalog.store import SCHEMA_VERSION, Store
from catalog.store.schema import MIGRATIONS


def digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def connect(path, read_only=True):
    return duckdb.connect(str(path), read_only=read_only)


# -- migrations ----------------------------------------------------------------

def test_fresh_file_gets_current_version_tables_and_views(db):
    with Store(db).write():
        pass
    con = connect(db)
    try:
        versions = [r[0] for r in con.execute("SELECT version FROM schema_version ORDER BY version").fetchall()]
        assert versions == list(range(1, SCHEMA_VERSION + 1))
        kinds = dict(con.execute("SELECT table_name, table_type FROM information_schema.tables").fetchall())
        for table in ("schema_version", "meta", "batches", "records", "record_values", "value_history", "flags"):
            assert kinds[table] == "BASE TABLE", table
        assert kinds["motors"] == "VIEW" and kinds["gearheads"] == "VIEW"
        for view, rtype in (("motors", "motor"), ("gearheads", "gearhead")):
            cols = [r[0] for r in con.execute(f"DESCRIBE {view}").fetchall()]
            assert cols[:3] == ["id", "manufacturer", "part_number"]
            assert set(cols) == set(fields_for(rtype)), view
        assert con.execute("SELECT count(*) FROM meta WHERE key = 'fields_signature'").fetchall() == [(1,)]
    finally:
        con.close()
    with Store(db).write():  # an up-to-date file is not migrated again
        pass
    con = connect(db)
    try:
        assert con.execute("SELECT count(*) FROM schema_version").fetchall() == [(SCHEMA_VERSION,)]
    finally:
        con.close()
    assert Store._file_version(duckdb.connect(":memory:")) is None


def test_reading_a_missing_file_is_an_empty_catalogue_and_creates_nothing(db):
    cat = catalog.open(db)
    assert len(cat.motors()) == 0 and len(cat.gearheads()) == 0
    assert cat.summary() == {"suppliers": 0, "motors": 0, "gearheads": 0, "given_values": 0, "derived_values": 0}
    assert not db.exists()


def test_old_file_is_migrated_step_by_step_keeping_its_data(db):
    """A file written at layout version 1 is brought to SCHEMA_VERSION on open."""
    con = connect(db, read_only=False)
    for stmt in MIGRATIONS[1]:
        con.execute(stmt)
    con.execute("INSERT INTO schema_version (version) VALUES (1)")
    con.execute("INSERT INTO records VALUES ('x-1', 'motor', 'X Co', '1', 1, 1)")
    con.execute("INSERT INTO record_values (record_id, field, value_num, origin, batch_id) "
                "VALUES ('x-1', 'nominal_voltage', 24.0, 'given', 1)")
    con.close()
    m = catalog.open(db).motors()  # a read migrates (views missing, version old)
    assert m[["id", "nominal_voltage"]].values.tolist() == [["x-1", 24.0]]
    con = connect(db)
    try:
        assert [r[0] for r in con.execute("SELECT version FROM schema_version ORDER BY 1").fetchall()] == \
            list(range(1, SCHEMA_VERSION + 1))
    finally:
        con.close()


def test_stale_views_are_regenerated(db):
    with Store(db).write():
        pass
    con = connect(db, read_only=False)
    con.execute("DROP VIEW motors")
    con.execute("UPDATE meta SET value = 'an older field list' WHERE key = 'fields_signature'")
    con.close()
    assert list(catalog.open(db).motors().columns)[:3] == ["id", "manufacturer", "part_number"]


@pytest.fixture
def newer_file(db):
    """A catalogue whose layout version is one above what this code knows."""
    with Store(db).write():
        pass
    con = connect(db, read_only=False)
    con.execute("INSERT INTO schema_version (version) VALUES (?)", [SCHEMA_VERSION + 1])
    con.execute("CHECKPOINT")
    con.close()
    assert not db.with_name(db.name + ".wal").exists()
    return db


def newer_message(db):
    return (f"{db}: catalogue file has layout version {SCHEMA_VERSION + 1}, newer than this motorshelf "
            f"knows ({SCHEMA_VERSION}); upgrade motorshelf, the file was not changed")


def test_newer_file_is_refused_for_writing_and_left_byte_identical(newer_file):
    before = digest(newer_file)
    with pytest.raises(StoreError) as info:
        with Store(newer_file).write():
            pytest.fail("a newer file must not be opened for writing")
    assert str(info.value) == newer_message(newer_file)
    assert info.value.version == SCHEMA_VERSION + 1 and info.value.path == str(newer_file)
    assert not isinstance(info.value, StoreBusy)
    assert digest(newer_file) == before
    assert not newer_file.with_name(newer_file.name + ".wal").exists()


def test_newer_file_is_refused_for_reading_too(newer_file):
    before = digest(newer_file)
    with pytest.raises(StoreError) as info:
        catalog.open(newer_file).motors()
    assert str(info.value) == newer_message(newer_file)
    with pytest.raises(StoreError, match="newer than this motorshelf knows"):
        catalog.open(newer_file).derive()
    assert digest(newer_file) == before


def test_cli_on_newer_file_prints_one_error_line(newer_file):
    before = digest(newer_file)
    r = CliRunner().invoke(cli, ["--db", str(newer_file), "list", "motors"], catch_exceptions=False)
    assert r.exit_code == 2
    assert r.output.splitlines() == [f"error: {newer_message(newer_file)}"]
    assert digest(newer_file) == before


def test_not_a_catalogue_file_is_a_clear_store_error(tmp_path):
    path = tmp_path / "notes.duckdb"
    path.write_text("this is not a database\n", encoding="utf-8")
    with pytest.raises(StoreError) as info:
        with Store(path, wait=0.1).write():
            pass
    assert str(info.value) == (f"{path}: not a catalogue file (not a DuckDB database), expected a file "
                               "made by motorshelf; the file was not changed")
    assert path.read_text(encoding="utf-8") == "this is not a database\n"


# -- the write lock ------------------------------------------------------------

HOLDER = """
import sys, duckdb
con = duckdb.connect(sys.argv[1])
print("locked", flush=True)
sys.stdin.readline()
con.close()
print("released", flush=True)
"""


@pytest.fixture
def holder(db):
    """Another process holding the catalogue's write connection until told to let go."""
    with Store(db).write() as con:
        Store.new_batch(con, "import")
    proc = subprocess.Popen([sys.executable, "-c", HOLDER, str(db)], stdin=subprocess.PIPE,
                            stdout=subprocess.PIPE, text=True)
    assert proc.stdout.readline().strip() == "locked"

    def release():
        if proc.poll() is None:
            proc.stdin.write("\n")
            proc.stdin.flush()
            assert proc.stdout.readline().strip() == "released"
        proc.wait(timeout=60)

    try:
        yield release
        release()
    finally:
        if proc.poll() is None:  # only the holder this fixture started
            proc.kill()
            proc.wait()


@pytest.fixture
def sleeps(monkeypatch):
    """Count the store's retry sleeps; ``first`` is set at the first one."""
    import time

    calls = []
    first = threading.Event()

    def sleep(seconds):
        calls.append(seconds)
        first.set()
        time.sleep(seconds)

    monkeypatch.setattr(store_mod, "time", types.SimpleNamespace(monotonic=time.monotonic, sleep=sleep))
    return types.SimpleNamespace(calls=calls, first=first)


def busy_message(db, wait):
    return (f"{db}: the catalogue is busy (another motorshelf process is using it); "
            f"gave up after {wait:g} s, try again when it has finished")


def test_writer_waits_then_fails_with_store_busy(db, holder, sleeps):
    with pytest.raises(StoreBusy) as info:
        with Store(db, wait=0.3).write():
            pytest.fail("the lock is held by another process")
    assert str(info.value) == busy_message(db, 0.3)
    assert info.value.path == str(db)
    assert len(sleeps.calls) >= 1  # it retried before giving up
    with pytest.raises(StoreBusy) as info:  # a reader waits the same way
        catalog.open(db, wait=0.2).motors()
    assert str(info.value) == busy_message(db, 0.2)


def test_cli_busy_catalogue_exit_2_with_message(db, holder, sleeps, monkeypatch):
    from catalog.api import Catalog

    monkeypatch.setattr("catalog.cli.Context.catalog", lambda self: Catalog(self.db, wait=0.2))
    r = CliRunner().invoke(cli, ["--db", str(db), "derive"], catch_exceptions=False)
    assert r.exit_code == 2
    assert r.output.splitlines() == [f"error: {busy_message(db, 0.2)}"]


def test_writer_succeeds_when_the_holder_releases_within_the_wait(db, holder, sleeps):
    outcome = {}

    def writer():
        try:
            with Store(db, wait=120).write() as con:
                outcome["batch"] = Store.new_batch(con, "import", note="after the wait")
        except BaseException as exc:  # reported below
            outcome["error"] = exc

    thread = threading.Thread(target=writer)
    thread.start()
    assert sleeps.first.wait(timeout=120), "the writer never had to wait"
    holder()  # let go while the writer is retrying
    thread.join(timeout=120)
    assert not thread.is_alive()
    assert "error" not in outcome, outcome.get("error")
    assert outcome["batch"] == 2
    con = connect(db)
    try:
        assert con.execute("SELECT batch_id, note FROM batches ORDER BY 1").fetchall() == \
            [(1, ""), (2, "after the wait")]
    finally:
        con.close()


# -- record ids ------------------------------------------------------------------

@pytest.mark.parametrize("maker, part, expected", [
    ("Vaskeline Antriebstechnik GmbH", "VK-C2232-24", "vaskeline-vk-c2232-24"),
    ("Sorvanto Oy", "00341-06", "sorvanto-00341-06"),  # leading zeros kept
    ("Halvard & Pim", "HP 42/3", "halvard-hp-42-3"),
    ("Quill", "QM-22/8", "quill-qm-22-8"),
    ("  Testwerk  Antriebe ", "TA.1", "testwerk-ta.1"),
])
def test_default_id_is_first_word_and_part_number(maker, part, expected):
    assert default_id(maker, part) == expected


HEAD = "manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm]\n"


def ids_and_makers(cat):
    return dict(cat.sql("SELECT record_id, manufacturer FROM records ORDER BY 1").values.tolist())


def test_two_makers_sharing_a_first_word_in_one_file_get_distinct_ids(cat, write):
    path = write("a.csv", HEAD + "Testwerk Antriebe,M-1,24,2\nTestwerk Motoren,M-1,12,1\n")
    report = cat.import_([path])
    assert report.created == 2
    assert ids_and_makers(cat) == {"testwerk-m-1": "Testwerk Antriebe",
                                   "testwerk-motoren-m-1": "Testwerk Motoren"}
    m = cat.motors().set_index("id")
    assert m.loc["testwerk-motoren-m-1", "nominal_voltage"] == 12.0


def test_two_makers_sharing_a_first_word_across_imports_get_distinct_ids(cat, write):
    first = write("a.csv", HEAD + "Testwerk Antriebe,M-1,24,2\n")
    second = write("b.csv", HEAD + "Testwerk Motoren,M-1,12,1\n")
    cat.import_([first])
    r = cat.import_([second])
    assert (r.created, r.updated) == (1, 0)
    expected = {"testwerk-m-1": "Testwerk Antriebe", "testwerk-motoren-m-1": "Testwerk Motoren"}
    assert ids_and_makers(cat) == expected
    # importing each again updates its own record under its own id
    for path, rid, volts in ((second, "testwerk-motoren-m-1", 12.0), (first, "testwerk-m-1", 24.0)):
        r = cat.import_([path])
        assert (r.created, r.updated) == (0, 1)
        assert ids_and_makers(cat) == expected
        assert cat.motors().set_index("id").loc[rid, "nominal_voltage"] == volts
    # both in one later file, the long-id maker first: the stored ids are kept
    both = write("c.csv", HEAD + "Testwerk Motoren,M-1,12,1.5\nTestwerk Antriebe,M-1,24,2.5\n")
    r = cat.import_([both])
    assert (r.created, r.updated) == (0, 2)
    assert ids_and_makers(cat) == expected
    m = cat.motors().set_index("id")
    assert (m.loc["testwerk-m-1", "terminal_resistance"], m.loc["testwerk-motoren-m-1", "terminal_resistance"]) \
        == (2.5, 1.5)


def test_reimport_keeps_the_id_and_moves_old_values_to_history(cat, write):
    first = cat.import_([write("a.csv", HEAD + "Testwerk Antriebe,M-1,24,2\n")])
    # same maker spelled in another case: the same record
    second = cat.import_([write("b.csv", HEAD + "TESTWERK ANTRIEBE,M-1,24,3\n")])
    assert (second.created, second.updated) == (0, 1)
    assert cat.ids() == ["testwerk-m-1"]
    rec = cat.sql("SELECT created_batch, updated_batch, manufacturer FROM records").values.tolist()
    assert rec == [[first.batch_id, second.batch_id, "TESTWERK ANTRIEBE"]]
    now = cat.sql("SELECT field, value_num, raw_text, source_file, batch_id FROM record_values "
                  "WHERE origin = 'given' ORDER BY field").values.tolist()
    assert [row[:3] for row in now] == [["nominal_voltage", 24.0, "24"], ["terminal_resistance", 3.0, "3"]]
    assert all(row[4] == second.batch_id for row in now) and all(row[3].endswith("b.csv") for row in now)
    hist = cat.sql("SELECT field, value_num, raw_text, origin, source_file, batch_id, replaced_by_batch "
                   "FROM value_history WHERE origin = 'given' ORDER BY field").values.tolist()
    assert [h[:4] for h in hist] == [["nominal_voltage", 24.0, "24", "given"],
                                     ["terminal_resistance", 2.0, "2", "given"]]
    assert all(h[4].endswith("a.csv") and h[5] == first.batch_id and h[6] == second.batch_id for h in hist)
    # the derived values of the first import went to history too, and were recomputed
    old = cat.sql("SELECT value_num FROM value_history WHERE field = 'stall_current'").value_num.tolist()
    assert old == [12.0]
    assert cat.motors().set_index("id").loc["testwerk-m-1", "stall_current"] == 8.0


def test_reimport_keeps_unchanged_derived_values_out_of_history(cat, write):
    first = cat.import_([write("a.csv", HEAD + "Testwerk Antriebe,M-1,24,2\n")])
    cat.import_([write("b.csv", HEAD + "Testwerk Antriebe,M-1,24,2\n")])   # the same values again
    assert cat.sql("SELECT count(*) AS n FROM value_history WHERE origin = 'derived'")["n"].item() == 0
    third = cat.import_([write("c.csv", HEAD + "Testwerk Antriebe,M-1,24,4\n")])
    moved = cat.sql("SELECT field, value_num, batch_id, replaced_by_batch FROM value_history "
                    "WHERE origin = 'derived' ORDER BY field").values.tolist()
    assert ["stall_current", 12.0, first.batch_id, third.batch_id] in moved
    # the assumed reference temperature does not depend on R: derived once, kept with its batch
    assert "resistance_reference_temperature" not in [m[0] for m in moved]
    kept = cat.sql("SELECT batch_id FROM record_values WHERE field = 'resistance_reference_temperature'")
    assert kept["batch_id"].tolist() == [first.batch_id]
    assert cat.motors().set_index("id").loc["testwerk-m-1", "stall_current"] == 6.0


# -- the lock file beside the catalogue (catalog/store: FileLock) ------------------------------
def _other_opening_can_lock(db, exclusive=True) -> bool:
    """True if a second opening of the lock file gets the lock at once (flock: per opening)."""
    import time

    from catalog.errors import StoreBusy
    from catalog.store import FileLock

    lock = FileLock(db)
    try:
        lock.acquire(exclusive=exclusive, deadline=time.monotonic(), busy=lambda: StoreBusy("busy"))
    except StoreBusy:
        return False
    lock.release()
    return True


def test_a_writer_holds_the_lock_file_from_open_to_after_close(tmp_path):
    from catalog.store import Store

    db = tmp_path / "cat.duckdb"
    store = Store(db)
    with store.write() as con:
        Store.new_batch(con, "test")
        assert (tmp_path / "cat.duckdb.lock").exists()
        assert not _other_opening_can_lock(db, exclusive=False)  # no reader may open the file now
    assert _other_opening_can_lock(db)  # closed (and checkpointed): free again


def test_a_reader_holds_the_lock_file_only_while_opening(tmp_path):
    from catalog.store import Store

    db = tmp_path / "cat.duckdb"
    with Store(db).write() as con:
        Store.new_batch(con, "test")
    with Store(db).read() as con:
        # DuckDB's read lock now keeps writers out; the lock file is free for them to queue on
        assert _other_opening_can_lock(db)
        assert con.execute("SELECT count(*) FROM batches").fetchall() == [(1,)]


@pytest.mark.parametrize("action", ["read", "write"])
def test_a_held_lock_file_makes_readers_and_writers_wait_then_fail_clearly(tmp_path, action):
    import time

    from catalog.errors import StoreBusy
    from catalog.store import FileLock, Store

    db = tmp_path / "cat.duckdb"
    with Store(db).write() as con:
        Store.new_batch(con, "test")
    held = FileLock(db)
    held.acquire(exclusive=True, deadline=time.monotonic(), busy=lambda: StoreBusy("busy"))
    try:
        t0 = time.monotonic()
        with pytest.raises(StoreBusy, match=r"cat.duckdb: the catalogue is busy \(another motorshelf process "
                                            r"is using it\); gave up after 0.3 s, try again when it has finished"):
            with getattr(Store(db, wait=0.3), action)():
                pass
        assert time.monotonic() - t0 >= 0.3
    finally:
        held.release()
    with Store(db).read() as con:  # nothing was changed
        assert con.execute("SELECT count(*) FROM batches").fetchall() == [(1,)]


def test_a_lock_file_that_cannot_be_made_refuses_writes_but_not_reads(tmp_path):
    from catalog.errors import StoreError
    from catalog.store import Store

    db = tmp_path / "cat.duckdb"
    with Store(db).write() as con:
        Store.new_batch(con, "test")
    (tmp_path / "cat.duckdb.lock").unlink()
    (tmp_path / "cat.duckdb.lock").mkdir()  # as a folder without write permission would: no lock file
    with pytest.raises(StoreError, match=r"cat.duckdb: cannot write the catalogue \(cannot create its lock "
                                         r"file cat.duckdb.lock: Is a directory\); nothing was changed"):
        with Store(db).write():
            pass
    with Store(db).read() as con:
        assert con.execute("SELECT count(*) FROM batches").fetchall() == [(1,)]


# -- one value per record and field (record_values carries no key index since layout 3) ---------

def _pairs_held_twice(cat) -> int:
    return int(cat.sql("SELECT count(*) AS n FROM (SELECT record_id, field FROM record_values "
                       "GROUP BY ALL HAVING count(*) > 1 UNION ALL SELECT record_id, relation FROM flags "
                       "GROUP BY ALL HAVING count(*) > 1)")["n"].item())


def test_record_values_has_no_key_index_and_the_writers_keep_one_value_per_field(cat, write):
    cat.import_([write("a.csv", HEAD + "Testwerk Antriebe,M-1,24,2\nTestwerk Antriebe,M-2,12,1\n")])
    assert cat.sql("SELECT table_name FROM duckdb_constraints() WHERE table_name IN ('record_values', 'flags') "
                   "AND constraint_type IN ('PRIMARY KEY', 'UNIQUE')").empty
    # the same records again, one changed, with a column more: stored rows meet new ones
    cat.import_([write("b.csv", "manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm],"
                            "torque_constant [mNm/A]\nTestwerk Antriebe,M-1,24,3,20\n"
                            "Testwerk Antriebe,M-2,12,1,10\nTestwerk Antriebe,M-3,6,1,5\n")])
    cat.derive()
    assert _pairs_held_twice(cat) == 0
    assert cat.motors().set_index("id").loc["testwerk-m-1", "terminal_resistance"] == 3.0


def test_a_write_that_would_hold_a_field_twice_is_refused_and_nothing_is_written(cat, write, db):
    from catalog.store import check_unique_values

    cat.import_([write("a.csv", HEAD + "Testwerk Antriebe,M-1,24,2\n")])
    before = cat.sql("SELECT * FROM record_values ORDER BY ALL").astype(str).values.tolist()
    for scope in (None, ["testwerk-m-1"]):
        with pytest.raises(StoreError, match=r"^internal error: a record would hold a field or a residual "
                                             r"twice \(testwerk-m-1:nominal_voltage\); nothing was written"):
            with Store(db).write() as con:
                con.execute("INSERT INTO record_values (record_id, field, value_num, origin, batch_id) "
                            "VALUES ('testwerk-m-1', 'nominal_voltage', 48.0, 'given', 9)")
                check_unique_values(con, scope)
        assert cat.sql("SELECT * FROM record_values ORDER BY ALL").astype(str).values.tolist() == before
    with pytest.raises(StoreError, match=r"twice \(testwerk-m-1:made-up relation\); nothing was written"):
        with Store(db).write() as con:
            for _ in range(2):
                con.execute("INSERT INTO flags (record_id, relation, batch_id) "
                            "VALUES ('testwerk-m-1', 'made-up relation', 9)")
            check_unique_values(con)
    assert cat.sql("SELECT count(*) AS n FROM flags WHERE relation = 'made-up relation'")["n"].item() == 0
    with pytest.raises(RuntimeError, match="^rolled back by the test$"):
        with Store(db).write() as con:  # another record's pair is not in the scope checked
            con.execute("INSERT INTO record_values (record_id, field, value_num, origin, batch_id) "
                        "VALUES ('testwerk-m-1', 'nominal_voltage', 48.0, 'given', 9)")
            check_unique_values(con, ["testwerk-m-2"])
            raise RuntimeError("rolled back by the test")
