"""Writing checked tables into the store: ids, records, long values, history, derive.

Everything happens in the one transaction of :meth:`Store.write`, so an import is
whole or absent.  The values are built, written and derived in chunks of
:data:`CHUNK_ROWS` records (no frame of every value of the file at once).  DuckDB
keeps what a transaction wrote, and every frame registered in it, until COMMIT, so
the memory of an import still grows with its size: the readers' limits bound it.
"""
from __future__ import annotations

__all__ = ["CHUNK_ROWS", "unique_id", "write_tables"]

import hashlib

import numpy as np

from ..fields import fields_for
from ..store import one
from .normalise import NormalTable, slug

#: Records per chunk of values written and derived inside the one transaction.
CHUNK_ROWS = 20_000


def unique_id(manufacturer: str, part_number: str) -> str:
    """The full slug plus a digest of the key, for when slugs collide.

    A slug drops what is not a-z, 0-9, '.', '_' or '-', so ``M-1`` and ``M/1`` (or two
    part numbers in another script) give one slug; the digest of the key as written
    (case and surrounding spaces aside) tells them apart.
    """
    key = f"{str(manufacturer).strip().lower()}\x1f{str(part_number).strip().lower()}"
    digest = hashlib.sha256(key.encode("utf-8", "surrogatepass")).hexdigest()[:12]
    return f"{slug(manufacturer, part_number)[:180].rstrip('-._')}-{digest}"


def _stored_ids(con, records) -> dict:
    """incoming id -> stored id of the same record, or None where the id is another record's."""
    con.register("incoming_keys", records[["record_id", "manufacturer", "part_number"]])
    rows = con.execute(
        "SELECT i.record_id, r.record_id, lower(trim(r.manufacturer)) = lower(trim(i.manufacturer)) "
        "AND lower(trim(r.part_number)) = lower(trim(i.part_number)) "
        "FROM incoming_keys i JOIN records r ON r.record_id = i.record_id "
        "OR (lower(trim(r.manufacturer)) = lower(trim(i.manufacturer)) "
        "AND lower(trim(r.part_number)) = lower(trim(i.part_number)))").fetchall()
    con.unregister("incoming_keys")
    remap: dict = {}
    for incoming, stored, same_key in rows:
        if same_key:
            remap[incoming] = stored
        elif incoming not in remap:
            remap[incoming] = None  # id taken by another record
    return remap


def _resolve_existing(con, records):
    """Reuse the id of a record already stored under the same manufacturer and part number;
    where a short id belongs to another record, fall back to the full slug, and where that
    is taken too, to :func:`unique_id`.  Returns (records, {incoming id: new id})."""
    remap = _stored_ids(con, records)
    if not remap:
        return records, {}
    rids = records["record_id"]
    full = {}
    for i, rid in enumerate(rids):
        if rid in remap:
            full[rid] = remap[rid] or slug(records["manufacturer"].iat[i], records["part_number"].iat[i])
    # a fallback slug may itself belong to another record (stored, or of this import)
    renamed = [i for i, rid in enumerate(rids) if rid in full and remap[rid] is None]
    if renamed:
        trial = records.iloc[renamed].assign(record_id=[full[rids.iat[i]] for i in renamed])
        taken = _stored_ids(con, trial)
        incoming = set(rids) - set(full)
        new_ids = list(trial["record_id"])
        for i, new in zip(renamed, new_ids):
            if new in incoming or new in taken or new_ids.count(new) > 1:
                full[rids.iat[i]] = unique_id(records["manufacturer"].iat[i], records["part_number"].iat[i])
    return records.assign(record_id=[full.get(r, r) for r in rids]), full


def long_frame(table: NormalTable, ids: list, keep: np.ndarray, lo: int = 0, hi: int | None = None):
    """The long rows (record, field, value...) of the kept rows ``lo:hi`` of one table."""
    import pandas as pd

    hi = table.n if hi is None else hi
    frames = []
    idx = np.flatnonzero(keep[lo:hi])
    rows = np.asarray(table.row_numbers[lo:hi])[idx]
    id_arr = np.asarray(ids[lo:hi], dtype=object)[idx]
    for fname, col in table.columns.items():
        if fname in ("id", "manufacturer", "part_number"):
            continue
        fdesc = fields_for(table.record_type)[fname]
        raw_text = np.asarray(col.raw_text[lo:hi], dtype=object)[idx]
        raw_unit = np.asarray(col.raw_unit[lo:hi], dtype=object)[idx]
        if fdesc.is_numeric:
            vals = np.asarray(col.values[lo:hi], dtype=float)[idx]
            present = ~np.isnan(vals)
            vnum, vtext = vals[present], None
        else:
            vals = np.asarray(col.values[lo:hi], dtype=object)[idx]
            present = np.array([v is not None for v in vals], dtype=bool)
            vnum, vtext = None, vals[present]
        m = int(present.sum())
        if m == 0:
            continue
        frames.append(pd.DataFrame({
            "record_id": id_arr[present],
            "field": fname,
            "value_num": vnum if vnum is not None else np.full(m, np.nan),
            "value_text": vtext if vtext is not None else np.full(m, None, dtype=object),
            "raw_text": raw_text[present],
            "raw_unit": raw_unit[present],
            "origin": "given",
            "relation": None,
            "inputs": None,
            "source_file": table.source,
            "source_row": rows[present].astype("int64"),
        }))
    if not frames:
        return None
    return pd.concat(frames, ignore_index=True)


def records_frame(table: NormalTable, ids: list, keep: np.ndarray):
    import pandas as pd

    idx = np.flatnonzero(keep)
    return pd.DataFrame({
        "record_id": np.asarray(ids, dtype=object)[idx],
        "record_type": table.record_type,
        "manufacturer": np.asarray(table.columns["manufacturer"].values, dtype=object)[idx],
        "part_number": np.asarray(table.columns["part_number"].values, dtype=object)[idx],
    })


def _write_values(con, values, batch: int) -> None:
    """Store one chunk of given values; the values they replace go to history."""
    values["batch_id"] = batch
    con.register("incoming_values", values)
    con.execute(
        "INSERT INTO value_history SELECT v.*, ?, now() FROM record_values v "
        "WHERE (v.record_id, v.field) IN (SELECT record_id, field FROM incoming_values)", [batch])
    con.execute(
        "DELETE FROM record_values WHERE (record_id, field) IN (SELECT record_id, field FROM incoming_values)")
    con.execute("INSERT INTO record_values SELECT * FROM incoming_values")
    con.unregister("incoming_values")


def write_tables(store, report, kept, files: str, derive: bool = True) -> None:
    """Write ``kept`` — (table, ids, keep mask) of every table with rows to import — in
    one transaction, filling ``report`` (batch, created, updated, values, derived, flags)."""
    import pandas as pd

    records = pd.concat([records_frame(t, ids, keep) for t, ids, keep in kept], ignore_index=True)
    with store.write() as con:
        batch = store.new_batch(con, "import", files=files)
        report.batch_id = batch
        records, renamed = _resolve_existing(con, records)
        con.register("incoming_records", records)
        existing = one(con.execute(
            "SELECT count(*) FROM incoming_records i JOIN records r USING (record_id)"))[0]
        report.updated = int(existing)
        report.created = len(records) - report.updated
        con.execute(
            "UPDATE records SET updated_batch = ?, manufacturer = i.manufacturer, part_number = i.part_number "
            "FROM incoming_records i WHERE records.record_id = i.record_id", [batch])
        con.execute(
            "INSERT INTO records SELECT record_id, record_type, manufacturer, part_number, ?, ? "
            "FROM incoming_records WHERE record_id NOT IN (SELECT record_id FROM records)", [batch, batch])
        # every derived value of a touched record goes to history: it is derived again below
        con.execute(
            "INSERT INTO value_history SELECT v.*, ?, now() FROM record_values v "
            "WHERE v.origin = 'derived' AND v.record_id IN (SELECT record_id FROM incoming_records)", [batch])
        con.execute("DELETE FROM record_values WHERE origin = 'derived' "
                    "AND record_id IN (SELECT record_id FROM incoming_records)")
        con.unregister("incoming_records")
        for table, ids, keep in kept:
            for lo in range(0, table.n, CHUNK_ROWS):
                values = long_frame(table, ids, keep, lo, lo + CHUNK_ROWS)
                if values is None:
                    continue
                if renamed:
                    values["record_id"] = [renamed.get(r, r) for r in values["record_id"]]
                _write_values(con, values, batch)
                report.values += len(values)
        if derive:
            from ..derive import derive_in_store

            rids = list(records["record_id"])
            for lo in range(0, len(rids), CHUNK_ROWS):
                outcome = derive_in_store(con, batch, record_ids=rids[lo:lo + CHUNK_ROWS])
                report.derived += outcome.derived
                report.flags.extend(outcome.flags)
