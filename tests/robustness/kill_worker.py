"""Run ``motorshelf ARGS`` and say on stdout when the write transaction begins.

Used by test_kill.py: the parent waits for ``WRITE-OPEN`` (the transaction opens) or
``WRITE-BODY`` (everything is written, COMMIT comes next) and then kills this process
after a random delay.  Not a test module (no ``test_`` prefix).
"""
from __future__ import annotations

import contextlib
import sys
import time


def main(argv: list[str]) -> None:
    from catalog.cli import main as cli_main
    from catalog.store import Store

    start = time.monotonic()
    original = Store.write

    @contextlib.contextmanager
    def write(self):
        print(f"WRITE-OPEN {time.monotonic() - start:.3f}", flush=True)
        with original(self) as con:
            yield con
            print(f"WRITE-BODY {time.monotonic() - start:.3f}", flush=True)  # COMMIT comes next
        print(f"WRITE-DONE {time.monotonic() - start:.3f}", flush=True)

    Store.write = write
    cli_main(argv)


if __name__ == "__main__":
    main(sys.argv[1:])
