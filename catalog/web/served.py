"""The catalogue as the server holds it: one writer, reads that never wait behind it.

:class:`ServedStore` is the :class:`~catalog.store.Store` of a server process:

* **one writer**: every write of the process (a stock take, an import, a derive) goes
  through one lock, so the server's own writes queue up in the process instead of
  contending for the file; beside it, the file's lock protocol (``<catalogue>.lock``,
  :class:`~catalog.store.FileLock`) is kept unchanged, so ``motorshelf`` commands run
  by hand beside the server keep working (they wait for the server's write in flight,
  the server waits for theirs);
* **reads during the server's own write** (a long import) do not wait for it: while
  the server holds the file open for writing, they read through a second connection of the
  same database (DuckDB's multi-version concurrency: the state of the last commit), and the
  file is closed (its checkpoint still under the file lock) only once those readers are done.
  Reads while *another process* writes wait as every reader does;
* **a queue of writes** (many people taking pieces at once) keeps the file open between its
  transactions, each still committed on its own, for at most :data:`LINGER_WRITES` writes or
  :data:`LINGER_SECONDS`: one opening and one checkpoint for the queue instead of one each.

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
import time

from ..api import Catalog
from ..errors import StoreBusy, StoreError
from ..store import Store

#: A queue of writes keeps the file open for at most this many writes, or this long [s].
LINGER_WRITES = 16
LINGER_SECONDS = 1.0
#: The provenance (stored values) of at most this many records is kept between requests.
KEEP_RECORDS = 5000
#: ... and the answers for at most this many sets of records.
KEEP_SETS = 64


def _faults() -> tuple:
    """DuckDB's errors of the file itself (disk full, I/O, permissions): a write fails whole."""
    import duckdb

    return (duckdb.IOException, duckdb.OutOfMemoryException, duckdb.PermissionException, duckdb.FatalException)

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
        self._opening = False                  # a write of this process holds the file or is opening it
        self._queued = 0                       # writes of this process waiting for their turn
        self._held = None                      # the open file between queued writes
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

    def _busy_here(self) -> StoreBusy:
        return StoreBusy(f"{self.path}: the catalogue is busy with another change in this server "
                         f"({self.writing or 'a write'}); gave up after {self.wait:g} s, try again "
                         "when it has finished", path=str(self.path))

    def _hold(self) -> None:
        """Open the file for writing (under the file lock) and lend a spare connection to readers."""
        import duckdb

        with self._borrow:
            # DuckDB refuses, in one process, a read-write opening of a file that a read-only
            # connection holds: let the readers of the file finish, hold new ones back until the
            # spare connection is there to borrow
            self._opening = True
            while self._readers:
                self._borrow.wait()
        try:
            try:
                self.path.parent.mkdir(parents=True, exist_ok=True)
            except OSError as exc:
                raise StoreError(f"{self.path}: cannot create the catalogue's folder ({exc.strerror or exc})",
                                 path=str(self.path)) from None
            con, lock = self._open(read_only=False)
            try:
                try:
                    self._migrate(con)
                except (*_faults(), duckdb.TransactionException) as exc:
                    raise self._write_error(exc) from None
                base = con.cursor()   # a second connection of the same database, idle, to make readers from
            except BaseException:
                con.close()
                lock.release()
                raise
        except BaseException:
            with self._borrow:
                self._opening = False
                self._borrow.notify_all()
            raise
        self._held = {"con": con, "lock": lock, "base": base, "since": time.monotonic(), "writes": 0}
        with self._borrow:
            self._base = base
            self._borrow.notify_all()

    def _let_go(self, committed: bool = True) -> None:
        """Close the file (its checkpoint still under the file lock) once the borrowers are done."""
        import duckdb

        held, self._held = self._held, None
        try:
            with self._borrow:
                self._base = None
                while self._borrowers:
                    self._borrow.wait()
            held["base"].close()
            try:
                held["con"].close()
            except duckdb.Error as exc:
                if committed:
                    raise self._write_error(exc, committed=True) from None
        finally:
            held["lock"].release()
            with self._borrow:
                self._opening = False
                self._borrow.notify_all()

    def _keep_open(self) -> bool:
        held = self._held
        with self._borrow:
            queued = self._queued
        return (queued > 0 and held["writes"] < LINGER_WRITES
                and time.monotonic() - held["since"] < LINGER_SECONDS)

    @contextlib.contextmanager
    def write(self):
        """One transaction, the process's writes one at a time.

        While more writes of this process wait, the file stays open between their transactions
        (at most :data:`LINGER_WRITES` writes or :data:`LINGER_SECONDS`), so a queue of stock
        movements pays one opening and one checkpoint instead of one each; then it is closed and
        other processes get their turn.
        """
        import duckdb

        with self._borrow:
            self._queued += 1
        try:
            got = self._turn.acquire(timeout=self.wait)
        finally:
            with self._borrow:
                self._queued -= 1
        if not got:
            if self._turn.acquire(blocking=False):   # the turn came free just now: close what is left open
                try:
                    if self._held is not None and not self._queued:
                        self._let_go()
                finally:
                    self._turn.release()
            raise self._busy_here()
        self.writing = getattr(self._what, "text", None) or "a change"
        faults = _faults()
        broken = False
        try:
            if self._held is None:
                self._hold()
            con = self._held["con"]
            self._held["writes"] += 1
            try:
                con.execute("BEGIN TRANSACTION")
            except (*faults, duckdb.TransactionException) as exc:
                broken = True
                raise self._write_error(exc) from None
            try:
                yield con
            except BaseException as exc:
                self._rollback(con)
                if isinstance(exc, faults):
                    broken = True
                    raise self._write_error(exc) from None
                raise
            try:
                con.execute("COMMIT")
            except duckdb.Error as exc:   # any failed COMMIT (WAL or checkpoint not written) rolls back
                self._rollback(con)
                broken = True
                raise self._write_error(exc) from None
        finally:
            try:
                if self._held is not None and (broken or not self._keep_open()):
                    self._let_go(committed=not broken)
            finally:
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


def _handed_out(kept):
    """A kept :class:`~catalog.api.Provenance` as handed to a caller: its own shallow copy of the frame
    (copy-on-write: a column the caller adds stays in its copy) and of the types."""
    return type(kept)(kept.values.copy(deep=False), dict(kept.record_types))


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

    def provenance(self, record_ids):
        """:meth:`Catalog.provenance`, kept while the file is unchanged: each record's rows (at most
        :data:`KEEP_RECORDS` records; a selection's shortlist mostly names records read before) and the
        answers of the latest :data:`KEEP_SETS` sets of records asked for (the same shortlist again)."""
        import numpy as np
        import pandas as pd

        from ..api import PROVENANCE_COLUMNS, Provenance

        ids = tuple(sorted({str(i) for i in record_ids}))
        sig = self.store.signature()
        with self._kept_lock:
            kept = self._kept.get("provenance")
            if kept is None or sig is None or kept[0] != sig:
                kept = (sig, {}, {})
            _, known, sets = kept
            if ids in sets:
                return _handed_out(sets[ids])
            missing = [i for i in ids if i not in known]
        fresh = {}
        if missing:
            read = super().provenance(missing)
            values = read.values
            rid = values["record_id"].to_numpy(dtype=object)
            starts = np.flatnonzero(np.r_[True, rid[1:] != rid[:-1]]) if len(values) else np.zeros(0, dtype=int)
            bounds = dict(zip(rid[starts], zip(starts, np.r_[starts[1:], len(values)])))
            for r in missing:   # the records asked for (a few dozen), not the catalogue's rows
                lo, hi = bounds.get(r, (0, 0))
                fresh[r] = (values.iloc[lo:hi], read.record_types.get(r))
        rows = {**known, **fresh}
        parts = [rows[i] for i in ids if rows[i][1] is not None]
        if not parts:
            answer = Provenance(pd.DataFrame(columns=list(PROVENANCE_COLUMNS)), {})
        else:
            values = pd.concat([p[0] for p in parts], ignore_index=True) if len(parts) > 1 else \
                parts[0][0].reset_index(drop=True)
            answer = Provenance(values, {i: rows[i][1] for i in ids if rows[i][1] is not None})
        if sig is not None and self.store.signature() == sig:
            with self._kept_lock:
                current = self._kept.get("provenance")
                if current is not None and current[0] == sig:
                    known, sets = current[1], current[2]
                else:
                    known, sets = {}, {}
                if len(known) + len(fresh) > KEEP_RECORDS:
                    known = {}
                known.update(fresh)
                if len(sets) >= KEEP_SETS:
                    sets.pop(next(iter(sets)))      # the oldest set first
                sets[ids] = answer
                self._kept["provenance"] = (sig, known, sets)
        return _handed_out(answer)

    def motors(self):
        return self._keep("motors", super().motors).copy(deep=False)

    def gearheads(self):
        return self._keep("gearheads", super().gearheads).copy(deep=False)

    def check(self, tolerance=None, record_id=None):
        if tolerance is None and record_id is None:
            return list(self._keep("check", super().check))
        return super().check(tolerance=tolerance, record_id=record_id)

    def stock_available(self):
        return self._keep("stock_available", super().stock_available).copy(deep=False)

    def summary(self) -> dict:
        return dict(self._keep("summary", super().summary))
