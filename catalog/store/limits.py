"""Bounds for SQL that a person writes (``sql``, ``export --where``): time, memory, settings.

A query of the user's runs on a read-only connection (:meth:`Store.read`), which DuckDB's
read lock keeps writers away from for as long as it runs, so an unbounded query stalls
every writer; and DuckDB's default memory limit is 80 % of the machine.  Here each such
query gets

* a time limit (:data:`DEFAULT_TIME_LIMIT`, shorter than the 30 s a writer waits for the
  file): the connection is interrupted when it is over;
* a memory limit (:data:`DEFAULT_MEMORY_LIMIT`) for DuckDB and for the result handed to
  Python, with spills (sorts and joins larger than memory) to a private temporary folder,
  at most :data:`SPILL_FACTOR` times the memory limit, removed afterwards (DuckDB would put
  them beside the catalogue);
* no file access and no settings: ``SET``/``RESET``/``PRAGMA name = ...`` are refused, and
  the connection's configuration is locked after the limits are set.
"""
from __future__ import annotations

__all__ = ["QueryLimits", "DEFAULT_TIME_LIMIT", "DEFAULT_MEMORY_LIMIT", "SPILL_FACTOR", "parse_size",
           "bounded", "fetch_arrow"]

import contextlib
import re
import shutil
import tempfile
import threading
import time
from dataclasses import dataclass

from ..errors import InputError, Problem

#: Seconds a query may run (a writer waiting for the file gives up after 30 s).
DEFAULT_TIME_LIMIT = 20.0
#: Bytes a query may use in DuckDB, and its result in Python.
DEFAULT_MEMORY_LIMIT = 1 << 30
#: Spilled data may reach this many times the memory limit.
SPILL_FACTOR = 4

_UNITS = {"": 1, "b": 1, "kb": 10**3, "mb": 10**6, "gb": 10**9, "tb": 10**12,
          "kib": 2**10, "mib": 2**20, "gib": 2**30, "tib": 2**40}
_SIZE = re.compile(r"^\s*([0-9]+(?:\.[0-9]+)?)\s*([a-z]*)\s*$", re.IGNORECASE)


def _fail(option: str, message: str) -> InputError:
    return InputError(f"{option}: {message}", [Problem(option, None, None, message)])


def parse_size(text, option: str = "--memory-limit") -> int:
    """Bytes of a size written ``512MB``, ``4GB``, ``2GiB`` or as a number of bytes."""
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        value, unit = float(text), ""
    else:
        m = _SIZE.match(str(text))
        if not m or m.group(2).lower() not in _UNITS:
            raise _fail(option, f"{text!r} is not a size, expected e.g. 512MB, 4GB or 2GiB")
        value, unit = float(m.group(1)), m.group(2).lower()
    size = int(value * _UNITS[unit])
    if size < 16 * 2**20:
        raise _fail(option, f"{text!r} is below 16 MiB, expected a size DuckDB can work in (e.g. 512MB)")
    return size


def _shown(size: int) -> str:
    for unit, factor in (("GiB", 2**30), ("MiB", 2**20)):
        if size >= factor:
            return f"{size / factor:.3g} {unit}"
    return f"{size} bytes"


@dataclass(frozen=True)
class QueryLimits:
    """Time [s] and memory [bytes] a query may take; ``option``: how messages name the query
    (``sql``, ``--where``)."""

    time_limit: float = DEFAULT_TIME_LIMIT
    memory_limit: int = DEFAULT_MEMORY_LIMIT
    option: str = "sql"

    @classmethod
    def of(cls, time_limit=None, memory_limit=None, option: str = "sql") -> "QueryLimits":
        """Limits from what a caller gave (None: the defaults), checked."""
        t = DEFAULT_TIME_LIMIT if time_limit is None else time_limit
        try:
            t = float(t)
        except (TypeError, ValueError):
            raise _fail("--time-limit", f"{time_limit!r} is not a number of seconds, expected e.g. 60") from None
        if not t > 0 or t != t or t == float("inf"):
            raise _fail("--time-limit", f"{time_limit!r} is not a positive number of seconds, expected e.g. 60")
        m = DEFAULT_MEMORY_LIMIT if memory_limit is None else parse_size(memory_limit)
        return cls(t, m, option)

    def refuse_settings(self, query: str) -> None:
        """Refuse a query that would change settings (SET, RESET, PRAGMA name = value)."""
        import duckdb

        try:
            kinds = [s.type for s in duckdb.extract_statements(query)]
        except duckdb.Error:
            return  # a syntax error: DuckDB says what it is when the query runs
        if duckdb.StatementType.SET in kinds:
            message = ("SET, RESET and setting PRAGMAs are not allowed: the query runs with a time limit "
                       f"({self.time_limit:g} s) and a memory limit ({_shown(self.memory_limit)}) and no "
                       "settings of its own, expected a query such as SELECT ... (--time-limit and "
                       "--memory-limit raise the limits)")
            raise _fail(self.option, message)

    def timed_out(self) -> InputError:
        return _fail(self.option, f"the query ran longer than its time limit of {self.time_limit:g} s and was "
                                  "stopped; raise the limit with --time-limit SECONDS")

    def out_of_memory(self, what: str = "the query needs") -> InputError:
        return _fail(self.option, f"{what} more than its memory limit of {_shown(self.memory_limit)}; narrow the "
                                  "query or raise the limit with --memory-limit SIZE (e.g. 4GB)")


@contextlib.contextmanager
def bounded(con, limits: QueryLimits):
    """Run the block's queries on ``con`` (a read-only connection) within ``limits``.

    DuckDB's interrupt stops a query over time, its memory limit and spill limit bound its
    memory, its configuration is locked; :class:`InputError` (one line) replaces DuckDB's
    interrupt and out-of-memory errors.
    """
    import duckdb

    spill = tempfile.mkdtemp(prefix="motorshelf-spill-")
    timer = threading.Timer(limits.time_limit, con.interrupt)
    started = time.monotonic()
    try:
        con.execute(f"SET temp_directory = '{spill}'")  # a path of ours, never text from a user
        con.execute(f"SET max_temp_directory_size = '{limits.memory_limit * SPILL_FACTOR}B'")
        con.execute(f"SET memory_limit = '{limits.memory_limit}B'")
        con.execute("SET enable_external_access = false")  # no COPY TO, no read_csv of other files
        con.execute("SET lock_configuration = true")
        timer.daemon = True
        timer.start()
        try:
            yield
        except duckdb.InterruptException:
            if time.monotonic() - started >= limits.time_limit * 0.99:
                raise limits.timed_out() from None
            raise KeyboardInterrupt from None
        except duckdb.OutOfMemoryException:
            raise limits.out_of_memory() from None
    finally:
        timer.cancel()
        shutil.rmtree(spill, ignore_errors=True)


def fetch_arrow(relation, limits: QueryLimits, batch_rows: int = 65536):
    """The rows of a DuckDB ``relation`` as a pyarrow table, batch by batch, refused once they
    hold more than the memory limit (DuckDB's own limit does not bound a result in Python)."""
    import pyarrow as pa

    reader = relation.to_arrow_reader(batch_rows) if hasattr(relation, "to_arrow_reader") \
        else relation.fetch_arrow_reader(batch_rows)
    batches, held = [], 0
    for batch in reader:
        held += batch.nbytes
        if held > limits.memory_limit:
            raise limits.out_of_memory("the result holds")
        batches.append(batch)
    return pa.Table.from_batches(batches, schema=reader.schema)
