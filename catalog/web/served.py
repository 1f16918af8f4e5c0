"""The catalogue as the server holds it: one writer, reads that never wait behind it.

:class:`ServedStore` is the :class:`~catalog.store.Store` of a server process:

* **one writer**: every write of the process (a stock take, an import, a derive) goes
  through one lock, so the server's own writes queue up in the process instead of
  contending for the file; beside it, the file's lock protocol (``<catalogue>.lock``,
  :class:`~catalog.store.FileLock`) is kept unchanged, so ``motorshelf`` commands run
  by hand beside the server keep working (they wait for the server's write in flight,
  the server waits for theirs);
* **reads during the server's own write** (a long import) do not wait for it: while
  the write transaction is open they read through a second connection of the same
  database (DuckDB's multi-version concurrency: the state of the last commit), and
  the write commits and closes the file only once those readers are done, still under
  the file lock.  Reads while *another process* writes wait as every reader does.

:class:`ServedCatalog` is a :class:`~catalog.api.Catalog` over that store that keeps
the frames every page and selection reads (motors, gearheads, flags, the shelf's
availability) while the file is unchanged: the file's header blocks, size and
modification time (and its write-ahead log's) make the signature, read without
opening the database, so a change by the server or by any other process is seen on
the next request.
"""
from __future__ import annotations

__all__ = ["ServedStore", "ServedCatalog"]

import contextlib
import hashlib
import os
import threading

from ..api import Catalog
from ..errors import StoreBusy
from ..store import Store

#: Bytes read from the start of the file for its signature: DuckDB's main header and both
#: database headers (each checkpoint writes one of them with a new iteration count).
_HEADER_BYTES = 3 * 4096


class ServedStore(Store):
    """A :class:`Store` whose writes in this process take turns and whose reads borrow the
    write in flight (see the module notes)."""

    def __init__(self, path, wait: float = 30.0):
        super().__init__(path, wait=wait)
        self._turn = threading.Lock()          # one writer in the process
        self._borrow = threading.Condition()   # guards _base and _borrowers
        self._base = None                      # a spare connection of the write in flight
        self._borrowers = 0
        self._readers = 0                      # read-only connections of this process to the file
        self._opening = False                  # a write of this process is opening the file
        self.writing: str | None = None        # what the write in flight is, for pages
        self.on_change = []                    # callables run after every write of this process
        self._what = threading.local()

    @contextlib.contextmanager
    def doing(self, what: str):
        """Name the writes this thread makes inside the block (shown to others while they run)."""
        self._what.text = what
        try:
            yield
        finally:
            self._what.text = None

    @contextlib.contextmanager
    def write(self):
        if not self._turn.acquire(timeout=self.wait):
            raise StoreBusy(f"{self.path}: the catalogue is busy with another change in this server "
                            f"({self.writing or 'a write'}); gave up after {self.wait:g} s, try again "
                            "when it has finished", path=str(self.path))
        self.writing = getattr(self._what, "text", None) or "a change"
        try:
            # DuckDB refuses, in one process, a read-write opening of a file that a read-only
            # connection holds: let the readers of the file finish, hold new ones back until the
            # write's spare connection is there to borrow
            with self._borrow:
                self._opening = True
                while self._readers:
                    self._borrow.wait()
            with super().write() as con:
                base = con.cursor()   # a second connection of the same database, idle, to make readers from
                with self._borrow:
                    self._base = base
                    self._borrow.notify_all()
                try:
                    yield con
                finally:
                    with self._borrow:
                        self._base = None   # no new borrower; the write commits once the last one is done
                        while self._borrowers:
                            self._borrow.wait()
                    base.close()
        finally:
            with self._borrow:
                self._opening = False
                self._borrow.notify_all()
            self.writing = None
            self._turn.release()
            for hook in list(self.on_change):
                hook()

    @contextlib.contextmanager
    def read(self):
        with self._borrow:
            while self._base is None and self._opening:
                self._borrow.wait()
            base = self._base
            cur = None
            if base is not None:
                cur = base.cursor()
                self._borrowers += 1
            else:
                self._readers += 1
        if cur is None:
            try:
                with super().read() as con:
                    yield con
            finally:
                with self._borrow:
                    self._readers -= 1
                    self._borrow.notify_all()
            return
        try:
            yield cur
        finally:
            try:
                cur.close()
            finally:
                with self._borrow:
                    self._borrowers -= 1
                    self._borrow.notify_all()

    def signature(self):
        """A value that changes whenever the file's committed content may have changed; None for
        a catalogue that does not exist yet."""
        try:
            st = os.stat(self.path)
        except FileNotFoundError:
            return None
        try:
            with open(self.path, "rb") as fh:
                head = hashlib.blake2b(fh.read(_HEADER_BYTES), digest_size=16).hexdigest()
        except OSError:
            return None
        wal = self.path.with_name(self.path.name + ".wal")
        try:
            ws = os.stat(wal)
            wal_sig = (ws.st_size, ws.st_mtime_ns, ws.st_ino)
        except FileNotFoundError:
            wal_sig = None
        return (st.st_ino, st.st_size, st.st_mtime_ns, head, wal_sig)


class ServedCatalog(Catalog):
    """A :class:`Catalog` for the server: :class:`ServedStore`, and the whole-catalogue frames
    kept while the file is unchanged.

    The frames handed out are shallow copies (pandas copy-on-write): a caller that adds a
    column changes its own copy only.
    """

    def __init__(self, path=None, wait: float = 30.0):
        super().__init__(path, wait=wait)
        if self.path.exists():
            with Store(self.path, wait=wait).read():
                pass   # an older layout is migrated now, before any request (a reader never writes then)
        self.store = ServedStore(self.path, wait=wait)
        self._kept: dict = {}
        self._kept_lock = threading.Lock()
        self.store.on_change.append(self.forget)

    def forget(self) -> None:
        """Drop every kept frame (after a write of this process)."""
        with self._kept_lock:
            self._kept.clear()

    def _keep(self, key, load):
        sig = self.store.signature()
        with self._kept_lock:
            hit = self._kept.get(key)
        if hit is not None and sig is not None and hit[0] == sig:
            return hit[1]
        value = load()
        if sig is not None and self.store.signature() == sig:
            with self._kept_lock:
                self._kept[key] = (sig, value)
        return value

    def motors(self):
        return self._keep("motors", super().motors).copy(deep=False)

    def gearheads(self):
        return self._keep("gearheads", super().gearheads).copy(deep=False)

    def flags(self, tolerance=None, record_id=None):
        if tolerance is None and record_id is None:
            return list(self._keep("flags", super().flags))
        return super().flags(tolerance=tolerance, record_id=record_id)

    def stock_available(self):
        return self._keep("stock_available", super().stock_available).copy(deep=False)

    def summary(self) -> dict:
        return dict(self._keep("summary", super().summary))
