"""Stock movements one after another, for test_kill.py to kill at a random moment.

``python kill_stock_worker.py DB N`` runs the first N operations of :func:`operations`
on catalogue DB (each its own transaction) and prints ``DONE i`` after operation i
has returned.  ``python kill_stock_worker.py DB --import FILE`` imports a stock file
(one transaction) and prints ``WRITE-OPEN``/``WRITE-BODY``/``WRITE-DONE`` around its
write.  Not a test module (no ``test_`` prefix).
"""
from __future__ import annotations

import contextlib
import sys

RECORD = "shelf-g-100"


def operations(n: int):
    """(kind, quantity, from location, to location) of operation 0..n-1; a fixed pattern."""
    pattern = [("receive", 3, None, "A"), ("take", 1, "A", None), ("move", 2, "A", "B"),
               ("receive", 1, None, "B"), ("move", 1, "B", "A"), ("take", 1, "B", None)]
    return [pattern[i % len(pattern)] for i in range(n)]


def replay(n: int) -> dict:
    """Quantities on hand per location after the first ``n`` operations."""
    on = {"A": 0, "B": 0}
    for kind, q, src, dst in operations(n):
        if src:
            on[src] -= q
        if dst:
            on[dst] += q
    return on


def run(cat, i: int, op) -> None:
    kind, q, src, dst = op
    if kind == "receive":
        cat.stock_receive(RECORD, q, dst, person="kill test")
    elif kind == "take":
        cat.stock_take(RECORD, q, location=src, person="kill test", project="kill")
    else:
        cat.stock_move(RECORD, q, dst, from_location=src)


def main(argv: list[str]) -> None:
    import catalog

    db = argv[0]
    if argv[1] == "--import":
        from catalog.store import Store

        original = Store.write

        @contextlib.contextmanager
        def write(self):
            print("WRITE-OPEN", flush=True)
            with original(self) as con:
                yield con
                print("WRITE-BODY", flush=True)  # COMMIT and checkpoint come next
            print("WRITE-DONE", flush=True)

        Store.write = write
        catalog.open(db).stock_import([argv[2]], person="kill test")
        return
    for i, op in enumerate(operations(int(argv[1]))):
        run(catalog.open(db), i, op)
        print(f"DONE {i}", flush=True)


if __name__ == "__main__":
    main(sys.argv[1:])
