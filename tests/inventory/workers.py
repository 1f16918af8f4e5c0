"""Process bodies of the shared-use tests (importable by spawned processes)."""
from __future__ import annotations

R1, R2 = "shelf-heavy", "shelf-light"


def writer(db: str, index: int, n: int, start) -> int:
    """``n`` movements, each through a freshly opened catalogue; returns how many were written."""
    import catalog

    start.wait()
    for j in range(n):
        cat = catalog.open(db, wait=600)
        op = j % 5
        if op == 0:
            cat.stock_receive(R1, index + 1, "A", person=f"writer {index}")
        elif op == 1:
            cat.stock_take(R1, 1, location="A", person=f"writer {index}", project=f"project {index}")
        elif op == 2:
            cat.stock_move(R2, 1, "B", from_location="A")
        elif op == 3:
            cat.stock_move(R2, 2, "A", from_location="B")
        else:
            cat.stock_reserve(R1, 1, f"project {index}", location="A")
    return n


def reader(db: str, start, stop) -> tuple[int, list]:
    """Read the shelf until ``stop``; returns (reads, inconsistent states seen)."""
    import time

    import catalog

    start.wait()
    reads, bad = 0, []
    while not stop.is_set():
        df = catalog.open(db, wait=600).stock_list(include_empty=True)
        r2 = df[df["id"] == R2]
        r1 = df[df["id"] == R1]
        if int(r2["on_hand"].sum()) != 200:  # moves never change the total: a half-written move would
            bad.append(("R2 total", int(r2["on_hand"].sum())))
        if (r1["reserved"] > r1["on_hand"]).any() or (df["on_hand"] < 0).any():
            bad.append(("balance", r1.to_dict("records")))
        reads += 1
        time.sleep(0.05)  # leave the writers room; the point is to look in between them
    return reads, bad


def hold_lock(db: str, ready, release) -> None:
    """Hold the catalogue's write lock (as a long import would) until ``release``."""
    import duckdb

    con = duckdb.connect(db)
    ready.set()
    release.wait(120)
    con.close()


def batch_writer(db: str, index: int, n: int, start) -> list[int]:
    """``n`` one-row transactions straight through the store (no shelf logic); returns the batch ids."""
    from catalog.store import Store

    start.wait()
    ids = []
    for _ in range(n):
        with Store(db, wait=600).write() as con:
            ids.append(Store.new_batch(con, "stock", note=f"writer {index}"))
    return ids


def batch_reader(db: str, start, stop) -> tuple[int, list]:
    """Count batches until ``stop``; returns (reads, counts that went down)."""
    from catalog.store import Store

    start.wait()
    reads, last, bad = 0, 0, []
    while not stop.is_set():
        with Store(db, wait=600).read() as con:
            n = con.execute("SELECT count(*) FROM batches").fetchall()[0][0]
        if n < last:  # a committed row vanished from a later reader's view
            bad.append((last, n))
        last, reads = n, reads + 1
    return reads, bad
