"""One writer: the server's writes take turns, its reads never wait behind its own write,
commands beside it keep working, and what another process writes is seen on the next request."""
from __future__ import annotations

import subprocess
import time
import sys
import threading
from concurrent.futures import ThreadPoolExecutor

from webhelp import movement_total

#: ``motorshelf`` as a separate process, as a person runs it beside the server.
MOTORSHELF = [sys.executable, "-c", "from catalog.cli import main; main()"]
ITEM = {"record_id": "brackwater-bs2860-36", "location": "Lab 2 / cabinet A / bin 7"}


def test_reads_borrow_the_write_in_flight(demo_db):
    """A read while the server holds a write transaction open returns the last committed state
    without waiting; the write commits only after the read is done."""
    from catalog.web.served import ServedCatalog

    cat = ServedCatalog(demo_db, wait=5.0)
    started, release, seen = threading.Event(), threading.Event(), {}

    def long_write():
        with cat.store.write() as con:
            con.execute("UPDATE records SET manufacturer = 'Renamed' WHERE record_id = 'sorvanto-00341-06'")
            started.set()
            release.wait(60)

    writer = threading.Thread(target=long_write)
    writer.start()
    assert started.wait(60)
    seen["maker"] = cat.show("sorvanto-00341-06").manufacturer       # would block on the file lock without borrowing
    seen["motors"] = len(cat.motors())
    seen["still_writing"] = writer.is_alive()
    release.set()
    writer.join(60)
    assert seen == {"maker": "Sorvanto Micromotors Oy", "motors": 60, "still_writing": True}
    assert cat.show("sorvanto-00341-06").manufacturer == "Renamed"


def test_kept_frames_follow_changes_of_another_process(client, demo_db):
    first = client.get("/api/motors", params={"q": "UT-9"}).json()
    assert first["total"] == 0
    csv = demo_db.parent / "one.csv"
    csv.write_text("manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm],torque_constant [mN*m/A]\n"
                   "Beside Test,UT-9,24,2.5,30\n", encoding="utf-8")
    done = subprocess.run([*MOTORSHELF, "--db", str(demo_db), "import", str(csv)],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert client.get("/api/motors", params={"q": "UT-9"}).json()["total"] == 1
    assert client.get("/api/health").json()["counts"]["motors"] == 61


def test_concurrent_takes_through_the_server_and_a_command_beside_it(client, demo_db):
    import catalog

    cat = catalog.open(demo_db)
    cat.stock_receive(ITEM["record_id"], 40, ITEM["location"], person="setup")
    before = movement_total(demo_db)
    body = {**ITEM, "quantity": 1, "person": "Fay", "project": "soak", "condition": "new"}

    def take(_):
        return client.post("/api/stock/take", json=body).status_code

    def beside():
        return subprocess.run([*MOTORSHELF, "--db", str(demo_db), "stock", "take",
                               ITEM["record_id"], "2", "--location", ITEM["location"], "--condition", "new",
                               "--by", "Gus", "--project", "cli"], capture_output=True, text=True, timeout=300)

    with ThreadPoolExecutor(max_workers=6) as pool:
        cli_run = pool.submit(beside)
        codes = list(pool.map(take, range(12)))
        done = cli_run.result()
    assert codes == [200] * 12
    assert done.returncode == 0, done.stderr
    assert movement_total(demo_db) == before - 12 - 2
    hist = cat.stock_history(ITEM["record_id"])
    assert (hist["person"] == "Fay").sum() == 12 and (hist["person"] == "Gus").sum() == 1


def test_reads_and_writes_of_the_server_at_once(client, demo_db):
    """Pages, API reads and takes from many threads: DuckDB refuses a read-write opening of a file a
    read-only connection of the same process holds, so the server must order them itself."""
    import catalog

    catalog.open(demo_db).stock_receive(ITEM["record_id"], 100, ITEM["location"], person="setup")
    before = movement_total(demo_db)
    body = {**ITEM, "quantity": 1, "person": "Ida", "project": "mix", "condition": "new"}
    reads = ["/api/records/sorvanto-00341-06", "/shelf", "/api/health", "/records/brackwater-bs2860-36",
             "/api/motors?mass.max=0.2"]

    def work(k):
        if k % 3 == 0:
            return client.post("/api/stock/take", json=body).status_code
        return client.get(reads[k % len(reads)]).status_code

    with ThreadPoolExecutor(max_workers=8) as pool:
        codes = list(pool.map(work, range(90)))
    assert codes == [200] * 90
    assert movement_total(demo_db) == before - 30


def test_a_queue_of_writes_shares_one_opening(demo_db):
    """Takes waiting behind a write are committed one by one through the open file; the file is
    closed when the queue is empty (another process can then write)."""
    import catalog
    from catalog.web.served import ServedCatalog, ServedStore

    cat = ServedCatalog(demo_db)
    cat.stock_receive(ITEM["record_id"], 50, ITEM["location"], person="setup")
    before = movement_total(demo_db)
    openings = []
    real_open = ServedStore._open

    def counting_open(self, read_only):
        if not read_only:
            openings.append(1)
        return real_open(self, read_only)

    first_in, go = threading.Event(), threading.Event()

    def first():
        with cat.store.write():
            first_in.set()
            go.wait(60)

    def take(_):
        return cat.stock_take(ITEM["record_id"], 1, ITEM["location"], "new", person="Jo", project="q").quantity

    ServedStore._open = counting_open
    try:
        holder = threading.Thread(target=first)
        holder.start()
        assert first_in.wait(60)
        with ThreadPoolExecutor(max_workers=8) as pool:
            futures = [pool.submit(take, k) for k in range(8)]
            deadline = time.monotonic() + 60
            while cat.store._queued < 8 and time.monotonic() < deadline:   # every take waits for its turn
                time.sleep(0.01)
            go.set()
            assert [f.result() for f in futures] == [1] * 8
        holder.join(60)
    finally:
        ServedStore._open = real_open
    assert len(openings) < 1 + 8            # without the queue: one opening per write
    assert cat.store._held is None          # closed once the queue was empty
    assert movement_total(demo_db) == before - 8
    done = subprocess.run([*MOTORSHELF, "--db", str(demo_db), "stock", "take", ITEM["record_id"], "1", "--location",
                           ITEM["location"], "--condition", "new", "--by", "Kim", "--project", "cli"],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert movement_total(catalog.open(demo_db).path) == before - 9


# -- what a selection answers follows every change the server makes ---------------------------------------
def _select(client, name="lift_axis", **params):
    from webhelp import QUERIES

    r = client.post("/api/select", params=params, content=(QUERIES / f"{name}.toml").read_bytes(),
                    headers={"Content-Type": "application/toml"})
    assert r.status_code == 200, r.text[:500]
    return r.json()


def _provenance(doc, record_id, field):
    return [row for row in doc["tables"]["provenance"]["records"]
            if row["record_id"] == record_id and row["field"] == field]


def test_a_selection_follows_an_import_through_the_server(client, demo_db, tmp_path):
    """A shortlisted motor re-imported through the import page at a lower price: the next selection
    ranks it first by that price and its provenance shows the new value and file (the server's kept
    frames and provenance, both read for the first selection, are dropped after its own write)."""
    import csv
    import io

    import catalog
    from test_pages import _upload, _wait

    before = _select(client)
    top = before["records"][0]["motor"]
    other = next(rec["motor"] for rec in before["records"] if rec["motor"] != top)
    old = _provenance(before, other, "price")[0]
    assert old["value_si"] > 1 and "repriced.csv" not in (old["source"] or "")
    exported = tmp_path / "other.csv"
    catalog.open(demo_db).export("motors", exported, where="id = $id", params={"id": other}, units="si")
    rows = list(csv.DictReader(io.StringIO(exported.read_text(encoding="utf-8"))))
    # the export heads plain numbers "[1]" and the price by its currency; the import takes them bare
    rows = [{k.split(" [")[0] if k.startswith("price") or k.endswith(" [1]") else k: v for k, v in row.items()}
            for row in rows]
    rows[0]["price"] = "1"
    out = io.StringIO()
    writer = csv.DictWriter(out, fieldnames=list(rows[0]))
    writer.writeheader()
    writer.writerows(rows)
    r = _upload(client, [("repriced.csv", out.getvalue())], action="import")
    assert r.status_code == 303
    page = _wait(client, r.headers["location"])
    assert "done" in page and "0 record(s) created, 1 updated" in page, page[-3000:]
    after = _select(client)
    assert after["records"][0]["motor"] == other and after["records"][0]["price"] == 1
    new = _provenance(after, other, "price")[0]
    assert new["value_si"] == 1 and new["source"].endswith("repriced.csv:2")   # the upload as the server kept it
    assert after["about"]["candidates"] == before["about"]["candidates"]


def test_a_selection_from_the_shelf_follows_a_movement_through_the_api(client):
    """stock = only: a motor received through the API becomes a candidate of the next selection (the
    water pump is driven directly), and is gone again once every piece is taken."""
    before = _select(client, "water_pump", stock="only")
    ids = {rec["candidate"] for rec in before["records"]} | {
        rec["candidate"] for rec in before["tables"]["rejected"]["records"]}
    new = "vaskeline-vk-c3250-24"
    assert new not in ids
    item = {"record_id": new, "location": "Bench / new", "condition": "new", "person": "Test"}
    r = client.post("/api/stock/receive", json={**item, "quantity": 2})
    assert r.status_code == 200, r.text
    received = _select(client, "water_pump", stock="only")
    ids = {rec["candidate"] for rec in received["records"]} | {
        rec["candidate"] for rec in received["tables"]["rejected"]["records"]}
    assert new in ids
    assert received["about"]["candidates"] > before["about"]["candidates"]
    r = client.post("/api/stock/take", json={**item, "quantity": 2, "project": "test"})
    assert r.status_code == 200, r.text
    assert _select(client, "water_pump", stock="only")["about"]["candidates"] == before["about"]["candidates"]
