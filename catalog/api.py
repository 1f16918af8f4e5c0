"""The Python API: ``catalog.open(path)`` returns a :class:`Catalog`.

Every method is one operation on the catalogue file (opened, used, closed), so a
notebook and the command line can share one file.  DataFrames are in SI units with
the canonical field names as columns.
"""
from __future__ import annotations

__all__ = ["Catalog", "open_catalog"]

import difflib
from pathlib import Path

from .errors import InputError, NotFound, Problem
from .inventory.methods import StockMethods
from .store import Store, default_path, is_damage, one

_VIEWS = {"motors": "motors", "gearheads": "gearheads", "motor": "motors", "gearhead": "gearheads"}


class Catalog(StockMethods):
    """One catalogue file (the shelf methods ``stock_*`` and ``history``: :mod:`catalog.inventory.methods`).

    Parameters
    ----------
    path : str or Path, optional
        The DuckDB file; default ``$MOTORSHELF_DB`` or ``./motorshelf.duckdb``.
    wait : float
        Seconds to wait for a catalogue that another process is writing.
    """

    def __init__(self, path=None, wait: float = 30.0):
        self.path = Path(path) if path is not None else default_path()
        self.store = Store(self.path, wait=wait)

    def __repr__(self) -> str:
        return f"Catalog({str(self.path)!r})"

    # -- import ----------------------------------------------------------------
    def import_files(self, paths, mapping=None, keep_valid: bool = False, rejects=None,
                     derive: bool = True, progress=None):
        """Import datasheet files (CSV, XLSX, JSON, YAML); see :func:`catalog.ingest.import_files`."""
        from .ingest import import_files

        paths = [paths] if isinstance(paths, (str, Path)) else list(paths)
        return import_files(self.store, paths, mapping=mapping, keep_valid=keep_valid,
                            rejects=rejects, derive=derive, progress=progress)

    def validate_files(self, paths, mapping=None):
        """Check files as an import would; writes nothing."""
        from .ingest import validate_files

        paths = [paths] if isinstance(paths, (str, Path)) else list(paths)
        return validate_files(paths, mapping=mapping)

    # -- reading ---------------------------------------------------------------
    def _view(self, name: str):
        with self.store.read() as con:  # the view name comes from _VIEWS, never from a caller's text
            return con.sql(f"SELECT * FROM {_VIEWS[name]} ORDER BY id").to_arrow_table().to_pandas()

    def motors(self):
        """Every motor as a pandas DataFrame, one SI column per canonical field."""
        return self._view("motors")

    def gearheads(self):
        """Every gearhead as a pandas DataFrame, one SI column per canonical field."""
        return self._view("gearheads")

    def sql(self, query: str, params=None, time_limit=None, memory_limit=None):
        """Run a read-only SQL query; returns a pandas DataFrame.

        The query gets ``time_limit`` seconds and ``memory_limit`` (bytes, or ``"4GB"``) at
        most, defaults :data:`catalog.store.limits.DEFAULT_TIME_LIMIT` and
        ``DEFAULT_MEMORY_LIMIT``; it cannot change settings or reach other files.
        """
        import duckdb

        from .store.limits import QueryLimits, bounded, fetch_arrow

        limits = QueryLimits.of(time_limit, memory_limit, "sql")
        limits.refuse_settings(query)
        with self.store.read() as con:
            try:
                with bounded(con, limits):
                    rel = con.sql(query, params=params) if params else con.sql(query)
                    if rel is None:
                        import pandas as pd

                        return pd.DataFrame()
                    return fetch_arrow(rel, limits).to_pandas()
            except duckdb.Error as exc:
                if is_damage(exc):
                    raise self.store.damaged(exc) from None
                first = str(exc).splitlines()[0]
                raise InputError(f"sql: {first}", [Problem("sql", None, None, first)]) from None

    def ids(self) -> list[str]:
        with self.store.read() as con:
            return [r[0] for r in con.execute("SELECT record_id FROM records ORDER BY record_id").fetchall()]

    def record(self, record_id: str):
        """One record: (record_type, manufacturer, part_number, values DataFrame).

        The values frame has one row per stored field with the SI value, the raw text
        and unit, the origin (given or derived), the relation and its inputs, and the
        source file and row.  An unknown id raises :class:`NotFound` with suggestions.
        """
        with self.store.read() as con:
            head = one(con.execute(
                "SELECT record_type, manufacturer, part_number FROM records WHERE record_id = ?",
                [record_id]))
            if head is None:
                ids = [r[0] for r in con.execute("SELECT record_id FROM records").fetchall()]
                close = difflib.get_close_matches(record_id, ids, n=5, cutoff=0.5)
                hint = f"; did you mean {', '.join(close)}?" if close else "; `motorshelf list motors` shows the ids"
                raise NotFound(f"no record with id {record_id!r}{hint}", suggestions=close)
            values = con.sql(
                "SELECT field, value_num, value_text, raw_text, raw_unit, origin, relation, inputs, "
                "source_file, source_row, batch_id FROM record_values WHERE record_id = $id",
                params={"id": record_id}).to_arrow_table().to_pandas()
        return head[0], head[1], head[2], values

    def flags(self, tolerance: float | None = None, record_id: str | None = None) -> list:
        """Consistency flags: over-determined relations whose residual exceeds ``tolerance``."""
        from .derive import DEFAULT_TOLERANCE, Flag

        tol = DEFAULT_TOLERANCE if tolerance is None else float(tolerance)
        sql = ("SELECT record_id, relation, field, given, given_value, implied_value, residual FROM flags "
               "WHERE abs(residual) > $tol")
        params = {"tol": tol}
        if record_id is not None:
            sql += " AND record_id = $rid"
            params["rid"] = record_id
        with self.store.read() as con:
            rows = con.execute(sql.replace("$tol", "?").replace("$rid", "?") + " ORDER BY record_id, relation",
                               list(params.values())).fetchall()
            out = []
            for r in rows:  # the flagged few: show the given values of the relation's fields
                names = [f.strip() for f in (r[3] or "").split(",") if f.strip()]
                given = {}
                if names:
                    vals = con.execute(
                        "SELECT field, value_num FROM record_values WHERE record_id = ? AND origin = 'given'",
                        [r[0]]).fetchall()
                    given = {f: v for f, v in vals if f in names}
                text = ", ".join(f"{f}={given[f]:.6g}" for f in names if f in given)
                out.append(Flag(r[0], r[1], r[2], text, r[4], r[5], r[6]))
        return out

    def derive(self, tolerance: float | None = None):
        """Recompute every derived value and consistency residual of the catalogue."""
        from .derive import DEFAULT_TOLERANCE, derive_in_store

        with self.store.write() as con:
            batch = self.store.new_batch(con, "derive")
            outcome = derive_in_store(con, batch, record_ids=None,
                                      tolerance=DEFAULT_TOLERANCE if tolerance is None else tolerance)
        return outcome

    def select(self, envelope, stock=None, **kw):
        """Evaluate every motor × gear option against a load envelope; see :func:`catalog.select.select`.

        ``envelope`` is a TOML path or a parsed dict; returns a :class:`catalog.select.Selection`.
        ``stock`` (``only``, ``prefer``, ``ignore``; default the envelope's ``ranking.stock``)
        takes the shelf into account, see :mod:`catalog.inventory.selection`.
        """
        from .inventory import select_with_stock, stock_mode
        from .select import load_envelope, select

        envelope = load_envelope(envelope)   # envelope mistakes first, before reading the file
        kw.setdefault("motor_notes", self._flag_notes())
        if stock_mode(envelope, stock) != "ignore":
            sel = select_with_stock(self.motors(), self.gearheads(), envelope, self.stock_available(),
                                    stock, **kw)
        else:
            sel = select(self.motors(), self.gearheads(), envelope, **kw)
        sel.catalog = self  # exports read the provenance of the values used from here
        return sel

    def _flag_notes(self) -> dict:
        """motor id -> a warning for datasheets that contradict themselves (selection notes)."""
        counts: dict = {}
        for flag in self.flags():
            counts[flag.record_id] = counts.get(flag.record_id, 0) + 1
        return {rid: f"datasheet contradicts itself in {n} relation(s) (see motorshelf check)"
                for rid, n in counts.items()}

    def summary(self) -> dict:
        """Counts: suppliers, motors, gearheads, values, derived values."""
        with self.store.read() as con:
            row = one(con.execute(
                "SELECT count(DISTINCT manufacturer), count(*) FILTER (WHERE record_type='motor'), "
                "count(*) FILTER (WHERE record_type='gearhead') FROM records"))
            vals = one(con.execute(
                "SELECT count(*) FILTER (WHERE origin='given'), count(*) FILTER (WHERE origin='derived') "
                "FROM record_values"))
        return {"suppliers": row[0], "motors": row[1], "gearheads": row[2],
                "given_values": vals[0], "derived_values": vals[1]}


def open_catalog(path=None, wait: float = 30.0) -> Catalog:
    """Open (or prepare to create) the catalogue file at ``path``."""
    return Catalog(path, wait=wait)
