"""The catalogue file: a DuckDB database opened per operation.

DuckDB lets one process at a time hold a file open for writing, so every operation
opens the file, does its work in one transaction and closes it again.  A process
that finds the file busy waits and retries for a bounded time, then fails with
:class:`~catalog.errors.StoreBusy`.  Writes go in bulk (a registered pyarrow table or
DataFrame and ``INSERT ... SELECT``), never row by row.

DuckDB's own file lock is not enough between processes: opening a file, DuckDB
reads its header before it takes the lock, so a process that opens the file
while another one is checkpointing can start from a stale header and lose the
other's committed rows or read past the end of the file (seen here with four
writers and two readers: a few rows of every 800 committed were missing, with no
error).  So every opening also takes an advisory lock on a file beside the
catalogue (``<catalogue>.lock``, :class:`FileLock`): a writer holds it exclusively
from before it opens the catalogue until after it has closed it (checkpoint
included); a reader holds it shared only while it opens the catalogue, after
which DuckDB's own read lock keeps writers out until the reader has finished.
Readers so never block a waiting writer for long, and nobody opens the file
while somebody else is changing it.
"""
from __future__ import annotations

__all__ = ["Store", "FileLock", "default_path", "one", "check_unique_values", "is_damage", "SCHEMA_VERSION"]

import contextlib
import errno
import os
import random
import stat
import time
from pathlib import Path

from ..errors import StoreBusy, StoreDamaged, StoreError
from .schema import MIGRATIONS, SCHEMA_VERSION, all_view_sql

_FIELDS_KEY = "fields_signature"


def check_unique_values(con, record_ids=None) -> None:
    """Refuse the transaction ``con`` if a record holds two values of one field, or two
    residuals of one relation.

    ``record_values`` and ``flags`` carry no key index (see schema v3), so a writer that
    meets stored rows checks the rule here before it commits: on the records
    ``record_ids`` (a list of ids), or on the whole catalogue.
    """
    import pyarrow as pa

    if record_ids is None:
        con.execute("CREATE OR REPLACE TEMP VIEW checked_records AS SELECT record_id FROM records")
    else:
        con.register("checked_records", pa.table({"record_id": pa.array(list(record_ids), type=pa.string())}))
    # grouped by a hash of the key first (half the work of grouping two strings on millions of
    # rows); only where two rows share a hash are the keys themselves compared
    suspect = one(con.execute(
        "SELECT count(*) FROM (SELECT hash(record_id, field) FROM record_values WHERE record_id IN "
        "(SELECT record_id FROM checked_records) GROUP BY ALL HAVING count(*) > 1 UNION ALL "
        "SELECT hash(record_id, relation) FROM flags WHERE record_id IN (SELECT record_id FROM checked_records) "
        "GROUP BY ALL HAVING count(*) > 1)"))[0]
    twice = con.execute(
        "SELECT record_id, field FROM record_values WHERE record_id IN (SELECT record_id FROM checked_records) "
        "GROUP BY ALL HAVING count(*) > 1 UNION ALL "
        "SELECT record_id, relation FROM flags WHERE record_id IN (SELECT record_id FROM checked_records) "
        "GROUP BY ALL HAVING count(*) > 1 ORDER BY ALL LIMIT 3").fetchall() if suspect else []
    if record_ids is None:
        con.execute("DROP VIEW checked_records")
    else:
        con.unregister("checked_records")
    if twice:
        shown = ", ".join(f"{r}:{f}" for r, f in twice)
        raise StoreError(f"internal error: a record would hold a field or a residual twice ({shown}); "
                         "nothing was written, please report this")


def one(result):
    """First row of a query result (or None), reading the result to its end.

    DuckDB refuses further work on a connection whose last result is unfinished,
    so a single row is taken with ``fetchall``.
    """
    rows = result.fetchall()
    return rows[0] if rows else None


def default_path() -> Path:
    """``$MOTORSHELF_DB`` if set, else ``./motorshelf.duckdb``."""
    return Path(os.environ.get("MOTORSHELF_DB") or "motorshelf.duckdb")


#: What DuckDB says when a block of the file does not read back as it was written.
_DAMAGE_TEXTS = ("Corrupt database file", "does not match stored checksum", "Could not read enough bytes",
                 "database has been invalidated")


def is_damage(exc: Exception, reading: bool = True) -> bool:
    """True if the DuckDB error ``exc`` says the catalogue file is damaged (cut short, blocks
    that fail their checksum) rather than that a query or a write went wrong.  Reading
    (``reading``), any I/O error counts: a read-only connection writes nothing."""
    import duckdb

    if not isinstance(exc, duckdb.Error):
        return False
    if reading and isinstance(exc, (duckdb.IOException, duckdb.FatalException)):
        return True
    return any(t in str(exc) for t in _DAMAGE_TEXTS)


def _is_lock_error(exc: Exception) -> bool:
    text = str(exc).lower()
    return "lock" in text and ("conflict" in text or "could not set" in text or "held" in text)


def _fields_signature() -> str:
    from ..fields import RECORD_TYPES, fields_for

    return ";".join(f"{t}:" + ",".join(f"{f.name}/{f.kind}" for f in fields_for(t).values())
                    for t in RECORD_TYPES)


class FileLock:
    """An advisory lock (``flock``) on ``<catalogue>.lock``, shared or exclusive, taken with a deadline.

    ``flock`` locks belong to the open file, not to the process, so two openings in
    one process exclude each other as two processes do, and closing some other
    descriptor of the file never drops them.  The kernel releases the lock when
    its holder dies (a killed process leaves no stale lock).  Where ``fcntl`` is
    not available (Windows) the lock is a no-op and DuckDB's own lock remains.
    """

    def __init__(self, db_path: Path):
        self.db_path = Path(db_path)
        self.path = self.db_path.with_name(self.db_path.name + ".lock")
        self._fd = None

    def acquire(self, exclusive: bool, deadline: float, busy) -> bool:
        """Take the lock before ``deadline`` (``time.monotonic``) or raise ``busy()``.

        Returns False (and holds nothing) where no lock file can be opened for a
        shared lock (a read-only folder: nobody can write there either).
        """
        try:
            import fcntl
        except ImportError:  # pragma: no cover - not on POSIX
            return False
        try:
            fd = self._open_file()
        except OSError as exc:
            if exclusive:
                raise self._unusable(exc) from None
            return False
        flag = (fcntl.LOCK_EX if exclusive else fcntl.LOCK_SH) | fcntl.LOCK_NB
        delay = 0.005
        while True:
            try:
                fcntl.flock(fd, flag)
                self._fd = fd
                return True
            except BlockingIOError:
                if time.monotonic() >= deadline:
                    os.close(fd)
                    raise busy() from None
            except OSError:  # a file system without flock: DuckDB's own lock remains
                os.close(fd)
                return False
            time.sleep(delay * (0.5 + random.random()))
            delay = min(delay * 1.5, 0.1)

    def _open_file(self) -> int:
        """A descriptor of the lock file, made if missing with the catalogue file's permissions and group.

        A link is never followed (a link planted there could make us create or lock any
        file) and only a plain file is used.  ``flock`` needs no write access, so a lock
        file another user made without write permission for us is opened for reading.
        """
        base = os.O_NOFOLLOW | os.O_NONBLOCK | getattr(os, "O_CLOEXEC", 0)
        created = False
        try:
            fd = os.open(self.path, os.O_RDWR | os.O_CREAT | os.O_EXCL | base, 0o666)
            created = True
        except FileExistsError:
            try:
                fd = os.open(self.path, os.O_RDWR | base)
            except PermissionError:
                fd = os.open(self.path, os.O_RDONLY | base)
        try:
            info = os.fstat(fd)
            if not stat.S_ISREG(info.st_mode):
                raise OSError(errno.EINVAL, "not a plain file")
            if created:
                self._share_like_the_catalogue(fd)
        except BaseException:
            os.close(fd)
            raise
        return fd

    def _share_like_the_catalogue(self, fd: int) -> None:
        """Give a new lock file the catalogue file's read/write permissions and group, so every
        user who may write the catalogue may take its lock (whatever the creator's umask)."""
        try:
            cat = os.stat(self.db_path)
        except OSError:
            return  # a new catalogue: DuckDB creates it with the same umask as this file
        try:
            os.fchown(fd, -1, cat.st_gid)
        except OSError:
            pass  # not a member of the catalogue's group: the permissions below still hold
        try:
            os.fchmod(fd, stat.S_IMODE(cat.st_mode) & 0o666)
        except OSError:
            pass

    def _unusable(self, exc: OSError) -> StoreError:
        if exc.errno == errno.ELOOP:
            why = "it is a symbolic link, expected a plain file; remove the link"
        elif exc.errno == errno.EINVAL:
            why = "it is not a plain file; remove it"
        else:
            why = f"cannot create its lock file {self.path.name}: {exc.strerror or exc}"
            return StoreError(f"{self.db_path}: cannot write the catalogue ({why}); nothing was changed, check "
                              "the folder's permissions and try again", path=str(self.db_path))
        return StoreError(f"{self.db_path}: cannot write the catalogue (its lock file {self.path.name}: {why}); "
                          "nothing was changed", path=str(self.db_path))

    def release(self) -> None:
        if self._fd is not None:
            fd, self._fd = self._fd, None
            os.close(fd)  # closing the only descriptor of this opening drops the lock


class Store:
    """Access to one catalogue file.

    Parameters
    ----------
    path : str or Path
        The DuckDB file; created (with its tables) on the first write.
    wait : float
        How long [s] a writer or reader waits for a busy file before giving up.
    """

    def __init__(self, path, wait: float = 30.0):
        self.path = Path(path)
        self.wait = float(wait)
        self._migrated = False

    # -- connections ---------------------------------------------------------
    def _busy(self) -> StoreBusy:
        return StoreBusy(
            f"{self.path}: the catalogue is busy (another motorshelf process is using it); "
            f"gave up after {self.wait:g} s, try again when it has finished", path=str(self.path))

    def _open(self, read_only: bool):
        """(DuckDB connection, :class:`FileLock` held) opened under the catalogue's lock file.

        A writer keeps the lock until the connection is closed; a reader releases it
        as soon as the connection is open (see the module notes).
        """
        deadline = time.monotonic() + self.wait
        lock = FileLock(self.path)
        lock.acquire(exclusive=not read_only, deadline=deadline, busy=self._busy)
        try:
            return self._connect(read_only, deadline=deadline), lock
        except BaseException:
            lock.release()
            raise

    def _connect(self, read_only: bool, deadline: float | None = None):
        import duckdb

        if deadline is None:
            deadline = time.monotonic() + self.wait
        delay = 0.02
        while True:
            try:
                con = duckdb.connect(str(self.path), read_only=read_only)
                try:
                    self._check_whole(con)
                except BaseException:
                    con.close()
                    raise
                return con
            except duckdb.IOException as exc:
                if not _is_lock_error(exc):
                    raise self._open_error(exc) from None
                if time.monotonic() >= deadline:
                    raise self._busy() from None
            except duckdb.Error as exc:
                raise StoreError(f"{self.path}: cannot open the catalogue: {exc}", path=str(self.path)) from None
            time.sleep(delay * (0.5 + random.random()))
            delay = min(delay * 1.6, 0.5)

    def _check_whole(self, con) -> None:
        """Refuse a file too short to hold the blocks its header says are in use (cut short by a
        copy, a full disk or a crash of the storage): reading it would fail part-way, writing it
        would add to the damage.  One pragma; the blocks themselves are checked (checksums) as
        they are read.  (Free blocks at the end may have been cut off by DuckDB itself: only
        the used ones count.)"""
        if not self.path.exists():
            return
        row = one(con.execute("PRAGMA database_size"))
        used, block_size = (int(row[4]), int(row[2])) if row else (0, 0)
        size = self.path.stat().st_size
        if size < used * block_size:
            raise self.damaged(f"the file has {size} bytes, too few for the {used} blocks of {block_size} "
                               "bytes it holds")

    def damaged(self, exc) -> StoreDamaged:
        """The error of a damaged catalogue file (``exc``: DuckDB's error, or what was found)."""
        text = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        return StoreDamaged(f"{self.path}: the catalogue file is damaged ({text}); nothing was changed, "
                            "restore it from a backup", path=str(self.path))

    def _open_error(self, exc) -> StoreError:
        text = str(exc).splitlines()[0]
        if is_damage(exc, reading=False):
            return self.damaged(exc)
        if "not a valid DuckDB database file" in text:
            return StoreError(f"{self.path}: not a catalogue file (not a DuckDB database), expected a file "
                              "made by motorshelf; the file was not changed", path=str(self.path))
        return StoreError(f"{self.path}: cannot open the catalogue: {text}", path=str(self.path))

    def _write_error(self, exc, committed: bool = False) -> StoreError:
        text = str(exc).splitlines()[0]
        if not committed and is_damage(exc, reading=False):
            return self.damaged(exc)
        if committed:
            return StoreError(f"{self.path}: the change was committed, but closing the catalogue failed "
                              f"({text}); it is kept in the file's write-ahead log", path=str(self.path))
        return StoreError(f"{self.path}: cannot write the catalogue ({text}); nothing was changed, "
                          "free some space or check the file's permissions and try again", path=str(self.path))

    @contextlib.contextmanager
    def write(self):
        """A read-write connection inside one transaction (committed on success).

        A failure of the file itself (disk full, I/O error, no permission) rolls the
        transaction back and is raised as :class:`StoreError`: nothing was changed.
        """
        import duckdb

        # the file's own faults; a constraint or binder error is a bug and stays as it is
        faults = (duckdb.IOException, duckdb.OutOfMemoryException, duckdb.PermissionException,
                  duckdb.FatalException)
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StoreError(f"{self.path}: cannot create the catalogue's folder ({exc.strerror or exc})",
                             path=str(self.path)) from None
        con, lock = self._open(read_only=False)
        committed = False
        try:
            try:
                self._migrate(con)
                con.execute("BEGIN TRANSACTION")
            except (*faults, duckdb.TransactionException) as exc:  # a migration's COMMIT included
                raise self._write_error(exc) from None
            except duckdb.Error as exc:
                if is_damage(exc, reading=False):
                    raise self.damaged(exc) from None
                raise
            try:
                yield con
            except BaseException as exc:
                self._rollback(con)
                if isinstance(exc, faults) or is_damage(exc, reading=False):
                    raise self._write_error(exc) from None
                raise
            try:
                con.execute("COMMIT")
            except duckdb.Error as exc:  # any failed COMMIT (WAL or checkpoint not written) rolls back
                self._rollback(con)
                raise self._write_error(exc) from None
            committed = True
        finally:
            try:
                con.close()  # the checkpoint happens here, still under the lock
            except duckdb.Error as exc:
                if committed:
                    raise self._write_error(exc, committed=True) from None
            finally:
                lock.release()

    @staticmethod
    def _rollback(con) -> None:
        import duckdb

        try:
            con.execute("ROLLBACK")
        except duckdb.Error:
            pass  # already rolled back (a failed COMMIT) or the connection is gone

    @contextlib.contextmanager
    def read(self):
        """A read-only connection.  A missing file reads as an empty catalogue."""
        if not self.path.exists():
            import duckdb

            con = duckdb.connect(":memory:")
            try:
                self._migrate(con)
                yield con
            finally:
                con.close()
            return
        import duckdb

        con = self._open_reader()
        try:
            version = self._file_version(con)
            if version is not None and version > SCHEMA_VERSION:
                raise self._newer(version)  # its layout may mean something else: read nothing
            if version is None or version < SCHEMA_VERSION or self._stale_views(con):
                con.close()
                con = self._upgraded_reader(version)
            yield con
        except duckdb.Error as exc:
            if is_damage(exc):
                raise self.damaged(exc) from None
            raise
        finally:
            con.close()

    def _upgraded_reader(self, version: int | None):
        """A read-only connection to a file that needs migrating or new views: migrated (and
        the views rebuilt) in the file where it can be written; where it cannot (read-only
        storage, another user's file), the views of the current field set are built in the
        connection only and the file is left as it is."""
        try:
            with self.write():
                pass  # migrate, then reopen read-only
        except StoreBusy:
            raise
        except StoreError as exc:
            if version is None:
                raise
            if version < SCHEMA_VERSION:
                why = exc.message.removeprefix(f"{self.path}: ").split("; ")[0]
                raise StoreError(
                    f"{self.path}: catalogue file has layout version {version}, older than this motorshelf's "
                    f"({SCHEMA_VERSION}), and it cannot be upgraded where it is ({why}); open it once with write "
                    "access to upgrade it; the file was not changed", path=str(self.path), version=version) from None
            con = self._open_reader()
            try:
                for stmt in all_view_sql(temporary=True):
                    con.execute(stmt)
            except BaseException:
                con.close()
                raise
            return con
        return self._open_reader()

    def _open_reader(self):
        con, lock = self._open(read_only=True)
        lock.release()  # DuckDB's own read lock keeps writers out from here on
        return con

    # -- migrations ----------------------------------------------------------
    @staticmethod
    def _file_version(con) -> int | None:
        import duckdb

        try:
            row = one(con.execute("SELECT max(version) FROM schema_version"))
        except duckdb.CatalogException:  # no such table: not (yet) a catalogue; damage is raised
            return None
        return None if row is None or row[0] is None else int(row[0])

    @staticmethod
    def _foreign(con) -> bool:
        """True for a database holding tables or views but no ``schema_version`` of ours."""
        names = {r[0] for r in con.execute(
            "SELECT table_name FROM information_schema.tables WHERE table_catalog = current_database()"
        ).fetchall()}
        return bool(names) and "schema_version" not in names

    @staticmethod
    def _stale_views(con) -> bool:
        import duckdb

        try:
            row = one(con.execute("SELECT value FROM meta WHERE key = ?", [_FIELDS_KEY]))
        except duckdb.CatalogException:
            return True
        return row is None or row[0] != _fields_signature()

    def _newer(self, version: int) -> StoreError:
        return StoreError(
            f"{self.path}: catalogue file has layout version {version}, newer than this motorshelf "
            f"knows ({SCHEMA_VERSION}); upgrade motorshelf, the file was not changed",
            path=str(self.path), version=version)

    def _migrate(self, con) -> None:
        version = self._file_version(con) or 0
        if version > SCHEMA_VERSION:
            raise self._newer(version)
        if version == 0 and self._foreign(con):
            raise StoreError(f"{self.path}: not a catalogue file (a DuckDB database without motorshelf's "
                             "tables), expected a file made by motorshelf; the file was not changed",
                             path=str(self.path))
        stale = self._stale_views(con)
        if version == SCHEMA_VERSION and not stale:
            return
        con.execute("BEGIN TRANSACTION")
        try:
            for v in range(version + 1, SCHEMA_VERSION + 1):
                for stmt in MIGRATIONS[v]:
                    con.execute(stmt)
                con.execute("INSERT INTO schema_version (version) VALUES (?)", [v])
            for stmt in all_view_sql():
                con.execute(stmt)
            con.execute("INSERT OR REPLACE INTO meta VALUES (?, ?)", [_FIELDS_KEY, _fields_signature()])
            con.execute("COMMIT")
        except BaseException:
            con.execute("ROLLBACK")
            raise

    # -- helpers -------------------------------------------------------------
    @staticmethod
    def new_batch(con, kind: str, files: str = "", note: str = "") -> int:
        batch_id = one(con.execute("SELECT nextval('batch_seq')"))[0]
        con.execute(
            "INSERT INTO batches (batch_id, kind, started_at, files, note, user_name) "
            "VALUES (?, ?, now(), ?, ?, ?)",
            [batch_id, kind, files, note, os.environ.get("USER", "")],
        )
        return int(batch_id)
