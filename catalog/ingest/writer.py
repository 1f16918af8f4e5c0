"""Writing checked tables into the store: ids, records, long values, history, derive.

Everything happens in the one transaction of :meth:`Store.write`, so an import is
whole or absent.  The values are built, written and derived in chunks of
:data:`CHUNK_ROWS` records (no table of every value of the file at once), handed
to DuckDB as pyarrow tables.

A record the catalogue already holds may keep values of fields the file does not
give, and the values it replaces go to ``value_history``: its given values replace
the stored ones field by field, and its constants are derived again from what the
store then holds (:func:`catalog.store.derived.derive_in_store`).  A record new to the
catalogue has nothing to replace or keep, so its constants are derived from the SI
columns in memory (:func:`catalog.store.derived.derive_rows`, the same closure and
residuals) and its given and derived values are simply inserted.  Both give the
same rows; the new-record path skips reading the values back.

DuckDB keeps what a transaction wrote, and every table registered in it, until
COMMIT, so the memory of an import still grows with its size: the readers' limits
bound it.
"""
from __future__ import annotations

__all__ = ["CHUNK_ROWS", "unique_id", "store_tables"]

import hashlib
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from ..fields import fields_for
from ..store import check_unique_values, one
from .normalise import NormalTable, slug

#: Records per chunk of values written and derived inside the one transaction.
CHUNK_ROWS = 20_000

_IDENTITY = ("id", "manufacturer", "part_number")


def unique_id(manufacturer: str, part_number: str) -> str:
    """The full slug plus a digest of the key, for when slugs collide.

    A slug drops what is not a-z, 0-9, '.', '_' or '-', so ``M-1`` and ``M/1`` (or two
    part numbers in another script) give one slug; the digest of the key as written
    (case and surrounding spaces aside) tells them apart.
    """
    key = f"{str(manufacturer).strip().lower()}\x1f{str(part_number).strip().lower()}"
    digest = hashlib.sha256(key.encode("utf-8", "surrogatepass")).hexdigest()[:12]
    return f"{slug(manufacturer, part_number)[:180].rstrip('-._')}-{digest}"


def _strings(**columns):
    """A pyarrow table of text columns (lists or object arrays, None = null)."""
    import pyarrow as pa

    return pa.table({name: pa.array(values, type=pa.string()) for name, values in columns.items()})


def _stored_ids(con, ids: list, manufacturers: list, part_numbers: list) -> dict:
    """incoming id -> stored id of the same record, or None where the id is another record's.

    Two equality joins (by id, by key), each a hash join: one join on ``id = ... OR key =
    ...`` is planned as a nested loop, which on a re-import of 25k records over 25k stored
    ones took a minute while holding the write lock.
    """
    con.register("incoming_keys", _strings(record_id=ids, manufacturer=manufacturers, part_number=part_numbers))
    rows = con.execute(  # a record stored under its own id and key needs nothing: left out
        "WITH i AS (SELECT record_id, lower(trim(manufacturer)) AS man, lower(trim(part_number)) AS pn "
        "FROM incoming_keys), "
        "r AS (SELECT record_id, lower(trim(manufacturer)) AS man, lower(trim(part_number)) AS pn FROM records) "
        "SELECT i.record_id, r.record_id, FALSE FROM i JOIN r ON r.record_id = i.record_id "
        "WHERE r.man <> i.man OR r.pn <> i.pn "
        "UNION ALL "
        "SELECT i.record_id, r.record_id, TRUE FROM i JOIN r ON r.man = i.man AND r.pn = i.pn "
        "WHERE r.record_id <> i.record_id").fetchall()
    con.unregister("incoming_keys")
    remap: dict = {}
    for incoming, stored, same_key in rows:
        if same_key:
            remap[incoming] = stored
        elif incoming not in remap:
            remap[incoming] = None  # id taken by another record
    return remap


def _resolve_existing(con, ids: list, manufacturers: list, part_numbers: list):
    """Reuse the id of a record already stored under the same manufacturer and part number;
    where a short id belongs to another record, fall back to the full slug, and where that
    is taken too, to :func:`unique_id`.  Returns (ids, {incoming id: new id})."""
    remap = _stored_ids(con, ids, manufacturers, part_numbers)
    if not remap:
        return ids, {}
    full = {}
    for i, rid in enumerate(ids):
        if rid in remap:
            full[rid] = remap[rid] or slug(manufacturers[i], part_numbers[i])
    # a fallback slug may itself belong to another record (stored, or of this import)
    renamed = [i for i, rid in enumerate(ids) if rid in full and remap[rid] is None]
    if renamed:
        new_ids = [full[ids[i]] for i in renamed]
        taken = _stored_ids(con, new_ids, [manufacturers[i] for i in renamed], [part_numbers[i] for i in renamed])
        incoming = set(ids) - set(full)
        for i, new in zip(renamed, new_ids):
            if new in incoming or new in taken or new_ids.count(new) > 1:
                full[ids[i]] = unique_id(manufacturers[i], part_numbers[i])
    return [full.get(r, r) for r in ids], full


class _Incoming:
    """The rows of one table to write, with what the long values are made of as pyarrow arrays."""

    def __init__(self, table: NormalTable, keep: np.ndarray):
        import pyarrow as pa

        self.table = table
        self.rows = np.flatnonzero(keep)  # positions of the kept rows in the table
        self.held = np.zeros(table.n, dtype=bool)  # rows of records the catalogue held before
        self.source_rows = np.asarray(table.row_numbers, dtype=np.int64)
        self.ids = None  # pyarrow ids of every row of the table, once the stored ids are known
        self.raw = {}  # field -> (raw_text, raw_unit, value_text or None) as pyarrow arrays
        fields = fields_for(table.record_type)
        for fname, col in table.columns.items():
            if fname in _IDENTITY:
                continue
            text = None if fields[fname].is_numeric else pa.array(col.values, type=pa.string())
            raw_text = col.raw_text_array
            if raw_text is None:
                raw_text = pa.array(col.raw_text, type=pa.string())
            self.raw[fname] = (raw_text, pa.array(col.raw_unit, type=pa.string()).dictionary_encode(), text)

    def set_ids(self, ids: list, held: np.ndarray) -> None:
        """The final ids of the kept rows, in their order, and which of them the catalogue held."""
        import pyarrow as pa

        full = np.full(self.table.n, None, dtype=object)
        full[self.rows] = ids
        self.ids = pa.array(full, type=pa.string())
        self.held[self.rows] = held

    def given_values(self, rows: np.ndarray, keys_only: bool = False):
        """The long given values (record_id, field, value_num, value_text, raw_text, raw_unit,
        source_file, source_row) of the table rows ``rows`` as a pyarrow table, or None.
        With ``keys_only``, only their (record_id, field)."""
        import pyarrow as pa

        tables = []
        for fname, (raw_text, raw_unit, text) in self.raw.items():
            if text is None:
                values = np.asarray(self.table.columns[fname].values, dtype=float)[rows]
                present = rows[~np.isnan(values)]
                value_num = None if keys_only else pa.array(values[~np.isnan(values)], type=pa.float64())
                value_text = pa.nulls(len(present), type=pa.string())
            else:
                present = rows[text.take(pa.array(rows)).is_valid().to_numpy(zero_copy_only=False)]
                value_num = pa.nulls(len(present), type=pa.float64())
                value_text = None if keys_only else text.take(pa.array(present))
            if len(present) == 0:
                continue
            where = pa.array(present)
            if keys_only:
                tables.append(pa.table({"record_id": self.ids.take(where),
                                        "field": _repeat(fname, len(present))}))
                continue
            tables.append(pa.table({
                "record_id": self.ids.take(where),
                "field": _repeat(fname, len(present)),
                "value_num": value_num,
                "value_text": value_text,
                "raw_text": raw_text.take(where),
                "raw_unit": raw_unit.take(where),
                "source_file": _repeat(self.table.source, len(present)),
                "source_row": pa.array(self.source_rows[present]),
            }))
        return pa.concat_tables(tables) if tables else None


def _repeat(text: str, n: int):
    """``text`` ``n`` times, as a dictionary-encoded pyarrow column (one copy of the text)."""
    import pyarrow as pa

    return pa.DictionaryArray.from_arrays(pa.array(np.zeros(n, dtype=np.int32)), pa.array([text], type=pa.string()))


def _replace_given(con, incoming: list, batch: int, report) -> None:
    """Store the given values of the records the catalogue held before.

    The stored values of the same record and field go to history, then are overwritten
    in place (one UPDATE: the rows keep their place in the file, so the checkpoint writes
    the changed columns instead of compacting the table around deleted rows); fields the
    record did not hold are inserted.  Each step is one pass over the stored values for
    the whole import.
    """
    import pyarrow as pa

    tables = [inc.given_values(np.flatnonzero(inc.held)) for inc in incoming if inc.held.any()]
    tables = [t for t in tables if t is not None]
    if not tables:
        return
    values = pa.concat_tables(tables)
    con.register("incoming_values", values)
    moved = one(con.execute(
        "INSERT INTO value_history SELECT v.*, ?, now() FROM record_values v "
        "WHERE (v.record_id, v.field) IN (SELECT record_id, field FROM incoming_values)", [batch]))[0]
    # the value columns only where they change (writing a column costs more than finding the rows),
    # the provenance of every value
    con.execute(
        "UPDATE record_values SET value_num = i.value_num, value_text = i.value_text, raw_text = i.raw_text, "
        "raw_unit = i.raw_unit, origin = 'given', relation = NULL, inputs = NULL FROM incoming_values i "
        "WHERE record_values.record_id = i.record_id AND record_values.field = i.field "
        "AND (record_values.value_num IS DISTINCT FROM i.value_num "
        "OR record_values.value_text IS DISTINCT FROM i.value_text OR record_values.raw_text IS DISTINCT FROM "
        "i.raw_text OR record_values.raw_unit IS DISTINCT FROM i.raw_unit OR record_values.origin <> 'given' "
        "OR record_values.relation IS NOT NULL OR record_values.inputs IS NOT NULL)")
    con.execute("UPDATE record_values SET source_file = i.source_file, source_row = i.source_row, batch_id = ? "
                "FROM incoming_values i WHERE record_values.record_id = i.record_id "
                "AND record_values.field = i.field", [batch])
    if moved < values.num_rows:  # fields the records did not hold yet
        con.execute(
            "INSERT INTO record_values SELECT i.record_id, i.field, i.value_num, i.value_text, i.raw_text, "
            "i.raw_unit, 'given', NULL, NULL, i.source_file, i.source_row, ? FROM incoming_values i "
            "ANTI JOIN record_values v ON v.record_id = i.record_id AND v.field = i.field", [batch])
    con.unregister("incoming_values")
    report.values += values.num_rows


def _no_given():
    """An empty table shaped as :meth:`_Incoming.given_values` makes it."""
    import pyarrow as pa

    return pa.table({name: pa.array([], type=kind) for name, kind in (
        ("record_id", pa.string()), ("field", pa.string()), ("value_num", pa.float64()),
        ("value_text", pa.string()), ("raw_text", pa.string()), ("raw_unit", pa.string()),
        ("source_file", pa.string()), ("source_row", pa.int64()))})


def _insert_new(con, given: list, derived, batch: int) -> None:
    """Insert the given values (tables of :meth:`_Incoming.given_values`) and the derived ones
    (:class:`~catalog.store.derived.DerivedRows`) of records new to the catalogue, in one statement."""
    import pyarrow as pa

    from ..store.derived import empty_derived_table

    if given or derived.values is not None:
        con.register("new_given", pa.concat_tables(given) if given else _no_given())
        con.register("new_derived", derived.values if derived.values is not None else empty_derived_table())
        con.execute(
            "INSERT INTO record_values SELECT * FROM ("
            "SELECT record_id, field, value_num, value_text, raw_text, raw_unit, 'given', CAST(NULL AS VARCHAR), "
            "CAST(NULL AS VARCHAR), source_file, source_row, ? FROM new_given UNION ALL "
            "SELECT record_id, field, value_num, NULL, NULL, NULL, 'derived', relation, inputs, NULL, NULL, ? "
            "FROM new_derived)", [batch, batch])
        con.unregister("new_given")
        con.unregister("new_derived")
    if derived.flags is not None:
        con.register("new_flags", derived.flags)
        con.execute("INSERT INTO flags SELECT record_id, relation, given, field, given_value, implied_value, "
                    "residual, ? FROM new_flags", [batch])
        con.unregister("new_flags")


def _held_before(con) -> tuple[set, set]:
    """(ids of ``incoming_records`` in the catalogue, ids that have values or flags there
    without a record).

    The second set is empty in any catalogue this code wrote; such ids take the path of
    records held before, which replaces what is there.
    """
    stored = {r for (r,) in con.execute(
        "SELECT record_id FROM incoming_records WHERE record_id IN (SELECT record_id FROM records)").fetchall()}
    leftovers = {r for (r,) in con.execute(
        "WITH new AS (SELECT record_id FROM incoming_records WHERE record_id NOT IN (SELECT record_id FROM records)) "
        "SELECT record_id FROM new SEMI JOIN record_values USING (record_id) UNION "
        "SELECT record_id FROM new SEMI JOIN flags USING (record_id)").fetchall()}
    return stored, leftovers


def store_tables(store, report, kept, files: str, derive: bool = True) -> None:
    """Store ``kept`` — (table, ids, keep mask) of every table with rows to import — in the
    catalogue in one transaction, filling ``report`` (batch, created, updated, values,
    derived, flags).  (Writing tables to files is :func:`catalog.export.writers.write_tables_to_file`.)"""
    import pyarrow as pa

    incoming = [_Incoming(table, keep) for table, _ids, keep in kept]
    rids, rtypes, makers, parts = [], [], [], []
    for inc, (table, ids, _keep) in zip(incoming, kept):
        rids += np.asarray(ids, dtype=object)[inc.rows].tolist()
        rtypes += [table.record_type] * len(inc.rows)
        makers += np.asarray(table.columns["manufacturer"].values, dtype=object)[inc.rows].tolist()
        parts += np.asarray(table.columns["part_number"].values, dtype=object)[inc.rows].tolist()
    with store.write() as con:
        batch = store.new_batch(con, "import", files=files)
        report.batch_id = batch
        rids, _renamed = _resolve_existing(con, rids, makers, parts)
        con.register("incoming_records", _strings(record_id=rids, record_type=rtypes, manufacturer=makers,
                                                  part_number=parts))
        stored, leftovers = _held_before(con)
        report.updated = len(stored)
        report.created = len(rids) - report.updated
        con.execute(
            "UPDATE records SET updated_batch = ?, manufacturer = i.manufacturer, part_number = i.part_number "
            "FROM incoming_records i WHERE records.record_id = i.record_id", [batch])
        con.execute(
            "INSERT INTO records SELECT record_id, record_type, manufacturer, part_number, ?, ? "
            "FROM incoming_records WHERE record_id NOT IN (SELECT record_id FROM records)", [batch, batch])
        con.unregister("incoming_records")
        before = stored | leftovers
        held = np.array([r in before for r in rids], dtype=bool) if before else np.zeros(len(rids), dtype=bool)
        at = 0
        for inc in incoming:
            inc.set_ids(rids[at:at + len(inc.rows)], held[at:at + len(inc.rows)])
            at += len(inc.rows)
        if held.any():
            if not derive:
                # derived values of a touched record would no longer follow from its given ones
                con.register("touched_records", pa.table({"record_id": pa.array(
                    [r for r, h in zip(rids, held) if h], type=pa.string())}))
                con.execute(
                    "INSERT INTO value_history SELECT v.*, ?, now() FROM record_values v "
                    "WHERE v.origin = 'derived' AND v.record_id IN (SELECT record_id FROM touched_records)",
                    [batch])
                con.execute("DELETE FROM record_values WHERE origin = 'derived' "
                            "AND record_id IN (SELECT record_id FROM touched_records)")
                con.unregister("touched_records")
            # else derive_in_store (below) replaces what changed and keeps the old values in history;
            # their given values replace the stored ones before anything is derived from the store
            _replace_given(con, incoming, batch, report)
        _write_chunks(con, batch, report, incoming, rids, held, derive)
        if held.any():  # where stored rows and new ones meet (new records hold one row per field by construction)
            check_unique_values(con, [r for r, h in zip(rids, held) if h])


def _write_chunks(con, batch: int, report, incoming: list, rids: list, held: np.ndarray, derive: bool) -> None:
    """Derive the records held before from the store (all at once: each pass over the stored
    values serves the whole import), then chunk by chunk insert the new ones with the values
    derived from their columns in memory.  Flags are reported by relation, then by record id."""
    from ..derive import flag_rank
    from ..store.derived import derive_in_store

    numeric = [f.name for f in fields_for("motor").values() if f.is_numeric]
    # where each record of the import is: its table and its row there
    where_table = np.concatenate([np.full(len(inc.rows), t) for t, inc in enumerate(incoming)])
    where_row = np.concatenate([inc.rows for inc in incoming])
    flags = []
    if derive and held.any():
        outcome = derive_in_store(con, batch, record_ids=[r for r, h in zip(rids, held) if h])
        report.derived += outcome.derived
        flags += outcome.flags
    # DuckDB inserts a chunk (without the GIL) while the next one is made ready; ``con`` is
    # used by one thread at a time: every use below waits for the insert in flight
    if not held.all():
        with ThreadPoolExecutor(max_workers=1) as inserter:
            pending = None
            for lo in range(0, len(rids), CHUNK_ROWS):
                pending = _next_chunk(con, batch, report, incoming, held, derive, lo, where_table, where_row,
                                      numeric, flags, inserter, pending)
            if pending is not None:
                pending.result()
    report.flags.extend(sorted(flags, key=lambda f: (flag_rank(f.relation), f.record_id)))


def _next_chunk(con, batch, report, incoming, held, derive, lo, where_table, where_row, numeric, flags,
                inserter, pending):
    """Make the new records of ``lo:lo + CHUNK_ROWS`` ready (their flags added to ``flags``) and
    hand their insert to ``inserter`` once the insert ``pending`` (a future, or None) is done;
    returns the new insert's future."""
    from ..store.derived import DerivedRows, derive_rows

    hi = lo + CHUNK_ROWS
    new = lo + np.flatnonzero(~held[lo:hi])
    given, ids, parts, basis = [], [], {f: [] for f in numeric}, []
    for t, inc in enumerate(incoming):
        rows = where_row[new[where_table[new] == t]]
        if len(rows) == 0:
            continue
        values = inc.given_values(rows)
        if values is not None:
            given.append(values)
            report.values += values.num_rows
        if not (derive and inc.table.record_type == "motor"):
            continue
        ids.append(np.asarray(inc.ids.take(rows).to_pylist(), dtype=object))
        for f in numeric:
            col = inc.table.columns.get(f)
            parts[f].append(np.full(len(rows), np.nan) if col is None
                            else np.asarray(col.values, dtype=float)[rows])
        col = inc.table.columns.get("constant_basis")
        basis.append(np.full(len(rows), None, dtype=object) if col is None
                     else np.asarray(col.values, dtype=object)[rows])
    derived = DerivedRows()
    if ids:
        derived = derive_rows(np.concatenate(ids), {f: np.concatenate(p) for f, p in parts.items()},
                              {"constant_basis": np.concatenate(basis)})
        report.derived += derived.derived
        flags += derived.flagged
    if pending is not None:
        pending.result()
    return inserter.submit(_insert_new, con, given, derived, batch)
