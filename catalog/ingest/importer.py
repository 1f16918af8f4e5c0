"""Import: files -> normalised, validated tables -> one transaction in the store.

Every file of one call is read and checked before anything is written.  Without
``keep_valid`` a single problem anywhere rejects the whole call and the catalogue
stays exactly as it was; with it, the valid rows are imported and the rejected ones
written with their reasons.  Re-importing a record (same manufacturer and
part_number) updates its values and moves the previous ones to ``value_history``.
"""
from __future__ import annotations

__all__ = ["default_id", "ImportReport", "read_and_check", "import_files", "validate_files", "write_rejects"]

import csv
import hashlib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import ImportRejected, InputError, Problem
from ..fields import fields_for
from ..store import one
from ..validate import check_table
from .mapping import load_mapping
from .normalise import NormalTable, normalise, slug
from .readers import read_file


@dataclass
class FileResult:
    source: str
    record_type: str | None = None
    rows: int = 0
    accepted: int = 0
    problems: list = field(default_factory=list)
    warnings: list = field(default_factory=list)
    converted: int = 0


@dataclass
class ImportReport:
    """What an import (or a validation) did, file by file."""

    files: list = field(default_factory=list)  # FileResult
    created: int = 0
    updated: int = 0
    values: int = 0
    converted: int = 0
    batch_id: int | None = None
    rejects_file: str | None = None
    derived: int = 0
    flags: list = field(default_factory=list)

    @property
    def problems(self) -> list[Problem]:
        return [p for f in self.files for p in f.problems]

    @property
    def warnings(self) -> list[Problem]:
        return [p for f in self.files for p in f.warnings]

    @property
    def ok(self) -> bool:
        return not self.problems


def default_id(manufacturer: str, part_number: str) -> str:
    """Short record id: the maker's first word and the part number, as a slug."""
    words = slug(manufacturer).split("-")
    return slug(words[0], part_number)


def unique_id(manufacturer: str, part_number: str) -> str:
    """The full slug plus a digest of the key, for when slugs collide.

    A slug drops what is not a-z, 0-9, '.', '_' or '-', so ``M-1`` and ``M/1`` (or two
    part numbers in another script) give one slug; the digest of the key as written
    (case and surrounding spaces aside) tells them apart.
    """
    key = f"{str(manufacturer).strip().lower()}\x1f{str(part_number).strip().lower()}"
    digest = hashlib.sha256(key.encode("utf-8", "surrogatepass")).hexdigest()[:12]
    return f"{slug(manufacturer, part_number)[:180].rstrip('-._')}-{digest}"


def _resolve_existing(con, records):
    """Reuse the id of a record already stored under the same manufacturer and part number,
    and fall back to the full slug where a short id belongs to another record."""
    remap = _stored_ids(con, records)
    if not remap:
        return records, {}
    full = {}
    for i, rid in enumerate(records["record_id"]):
        if rid in remap:
            full[rid] = remap[rid] or slug(records["manufacturer"].iat[i], records["part_number"].iat[i])
    # a fallback slug may itself belong to another record (stored, or of this import)
    renamed = [i for i, rid in enumerate(records["record_id"]) if rid in full and remap[rid] is None]
    if renamed:
        trial = records.iloc[renamed].assign(record_id=[full[records["record_id"].iat[i]] for i in renamed])
        taken = _stored_ids(con, trial)
        incoming = set(records["record_id"]) - set(full)
        new_ids = list(trial["record_id"])
        for i, new in zip(renamed, new_ids):
            if new in incoming or new in taken or new_ids.count(new) > 1:
                full[records["record_id"].iat[i]] = unique_id(records["manufacturer"].iat[i],
                                                              records["part_number"].iat[i])
    records = records.assign(record_id=[full.get(r, r) for r in records["record_id"]])
    return records, full


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


def _identity(table: NormalTable, seen: dict | None = None) -> tuple[list, list[Problem]]:
    """Record ids for the rows; default a slug of manufacturer and part_number.

    ``seen`` carries the ids and keys of the tables read before, so one import never
    holds a record twice (the same key, or one id for two keys) across its files.
    """
    cols = table.columns
    n = table.n
    man = cols["manufacturer"].values if "manufacturer" in cols else [None] * n
    pn = cols["part_number"].values if "part_number" in cols else [None] * n
    given = cols["id"].values if "id" in cols else [None] * n
    ids = [g if g else (default_id(m, p) if m and p else None) for g, m, p in zip(given, man, pn)]
    problems = []
    seen = {} if seen is None else seen
    first: dict = seen.setdefault("id", {})  # id -> (source, row)
    keyfirst: dict = seen.setdefault("key", {})  # key -> (source, row)
    owner: dict = seen.setdefault("owner", {})  # id -> key
    for i, rid in enumerate(ids):
        if rid is None:
            continue
        key = (str(man[i]).strip().lower(), str(pn[i]).strip().lower())
        if not given[i] and rid in owner and owner[rid] != key:
            rid = ids[i] = slug(man[i], pn[i])  # two makers share a first word: use the full name
            if rid in owner and owner[rid] != key:  # the slugs of two keys coincide (M-1, M/1)
                rid = ids[i] = unique_id(man[i], pn[i])
        owner.setdefault(rid, key)
        row = table.row_numbers[i]
        if key in keyfirst:
            problems.append(Problem(table.source, row, "part_number",
                                    f"{pn[i]!r} of {man[i]!r} appears twice in {_where(keyfirst[key], table)}, "
                                    "expected once"))
        elif rid in first:
            problems.append(Problem(table.source, row, "id",
                                    f"id {rid!r} appears twice in {_where(first[rid], table)}, expected once"))
        keyfirst.setdefault(key, (table.source, row))
        first.setdefault(rid, (table.source, row))
    return ids, problems


def _where(first: tuple, table: NormalTable) -> str:
    source, row = first
    if source == table.source:
        return f"this file (first at row {row})"
    return f"this import (first in {source} at row {row})"


def read_and_check(paths, mapping=None) -> list[tuple[NormalTable | None, FileResult, list]]:
    """Read, normalise and check every file; nothing is written.

    Returns, per table, the normalised table, its :class:`FileResult` and its ids.
    """
    profile = None
    out = []
    seen: dict = {}  # ids and keys of every table so far (see _identity)
    if mapping is not None:
        profile = load_mapping(mapping)  # an invalid profile raises: nothing else is read
    for path in paths:
        try:
            raws = read_file(path, sheet=profile.sheet if profile else None,
                             header_row=profile.header_row if profile else 1)
        except InputError as exc:
            out.append((None, FileResult(str(path), problems=list(exc.problems)), []))
            continue
        for raw in raws:
            table = normalise(raw, profile)
            result = FileResult(raw.source, table.record_type, rows=table.n,
                                problems=list(raw.problems) + list(table.problems), warnings=list(table.warnings),
                                converted=table.converted)
            if table.n == 0:
                result.problems.append(Problem(raw.source, None, None, "no records, expected at least one row"))
            columns = {f: c.values for f, c in table.columns.items()}
            raw_texts = {f: c.raw_text for f, c in table.columns.items()}
            bad_cells = {(p.row, p.field) for p in result.problems}
            for pos, fname, msg in check_table(table.record_type, columns, raw_texts) if table.n else []:
                row = table.row_numbers[pos]
                if (row, fname) not in bad_cells:  # a cell that failed to parse is reported once
                    result.problems.append(Problem(raw.source, row, fname, msg))
            ids, id_problems = _identity(table, seen)
            result.problems.extend(id_problems)
            result.problems.sort(key=lambda p: (p.row or 0, p.field or ""))
            out.append((table, result, ids))
    return out


def _long_frame(table: NormalTable, ids: list, keep: np.ndarray):
    """The long rows (record, field, value...) of the kept rows of one table."""
    import pandas as pd

    frames = []
    rows = np.asarray(table.row_numbers)
    idx = np.flatnonzero(keep)
    id_arr = np.asarray(ids, dtype=object)[idx]
    for fname, col in table.columns.items():
        if fname in ("id", "manufacturer", "part_number"):
            continue
        fdesc = fields_for(table.record_type)[fname]
        raw_text = np.asarray(col.raw_text, dtype=object)[idx]
        raw_unit = np.asarray(col.raw_unit, dtype=object)[idx]
        if fdesc.is_numeric:
            vals = np.asarray(col.values, dtype=float)[idx]
            present = ~np.isnan(vals)
            vnum, vtext = vals[present], None
        else:
            vals = np.asarray(col.values, dtype=object)[idx]
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
            "source_row": rows[idx][present].astype("int64"),
        }))
    if not frames:
        return None
    return pd.concat(frames, ignore_index=True)


def _records_frame(table: NormalTable, ids: list, keep: np.ndarray):
    import pandas as pd

    idx = np.flatnonzero(keep)
    return pd.DataFrame({
        "record_id": np.asarray(ids, dtype=object)[idx],
        "record_type": table.record_type,
        "manufacturer": np.asarray(table.columns["manufacturer"].values, dtype=object)[idx],
        "part_number": np.asarray(table.columns["part_number"].values, dtype=object)[idx],
    })


def write_rejects(path, checked) -> int:
    """Write the rejected rows of ``checked`` with their reasons as CSV; returns the count."""
    headers: list[str] = []
    rows = []
    for table, result, _ids in checked:
        by_row: dict = {}
        for p in result.problems:
            by_row.setdefault(p.row, []).append(p)
        raw = table.raw if table is not None else None
        if raw is not None:
            for h in raw.headers:
                if h not in headers:
                    headers.append(h)
        for row, problems in by_row.items():
            reasons = "; ".join(f"{p.field + ': ' if p.field else ''}{p.message}" for p in problems)
            cells = {}
            if raw is not None and row in raw.row_numbers:
                r = raw.rows[raw.row_numbers.index(row)]
                cells = {h: ("" if v is None else v) for h, v in zip(raw.headers, r)}
            rows.append({"source_file": result.source, "source_row": row if row is not None else "",
                         "reasons": reasons, **cells})
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    with path.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, fieldnames=["source_file", "source_row", "reasons", *headers],
                                extrasaction="ignore")
        writer.writeheader()
        writer.writerows(rows)
    return len(rows)


def validate_files(paths, mapping=None) -> ImportReport:
    """Check files as an import would, writing nothing."""
    report = ImportReport()
    for table, result, _ids in read_and_check(paths, mapping):
        result.accepted = 0 if result.problems else result.rows
        report.files.append(result)
        report.converted += result.converted
    return report


def import_files(store, paths, mapping=None, keep_valid=False, rejects=None, derive=True,
                 progress=None) -> ImportReport:
    """Import ``paths`` into ``store`` in one transaction; see the module docstring.

    Raises :class:`~catalog.errors.ImportRejected` (nothing written) when any file has
    a problem and ``keep_valid`` is false.
    """
    import pandas as pd

    if keep_valid and rejects is None:
        raise InputError("--keep-valid needs --rejects FILE to write the rejected rows to",
                         [Problem("--rejects", None, None, "missing, expected a file for the rejected rows")])
    checked = read_and_check(paths, mapping)
    report = ImportReport()
    longs, recs = [], []
    for table, result, ids in checked:
        report.files.append(result)
        if table is None:
            continue
        bad_rows = {p.row for p in result.problems}
        if None in bad_rows or table.raw is None:
            keep = np.zeros(table.n, dtype=bool)  # a problem of the whole file rejects the file
        else:
            header_row = table.raw.header_row
            if header_row is not None and header_row in bad_rows:
                keep = np.zeros(table.n, dtype=bool)
            else:
                keep = np.array([r not in bad_rows for r in table.row_numbers], dtype=bool)
        result.accepted = int(keep.sum())
        if not keep.any():
            continue
        report.converted += result.converted
        lf = _long_frame(table, ids, keep)
        if lf is not None:
            longs.append(lf)
        recs.append(_records_frame(table, ids, keep))
    problems = report.problems
    if problems and not keep_valid:
        raise ImportRejected(f"{len(problems)} problem(s); nothing was imported", problems, report=report)
    if keep_valid and problems:
        write_rejects(rejects, checked)
        report.rejects_file = str(rejects)
    checked = table = None  # the raw cells are not needed any more: free them before writing
    if not recs:
        return report
    records = pd.concat(recs, ignore_index=True)
    values = pd.concat(longs, ignore_index=True) if longs else None
    recs = longs = lf = None
    files = ", ".join(str(p) for p in paths)
    with store.write() as con:
        batch = store.new_batch(con, "import", files=files)
        report.batch_id = batch
        records, renamed = _resolve_existing(con, records)
        if renamed and values is not None:
            values["record_id"] = [renamed.get(r, r) for r in values["record_id"]]
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
        if values is not None:
            values["batch_id"] = batch
            con.register("incoming_values", values)
            # previous given values and every derived value of touched records go to history
            con.execute(
                "INSERT INTO value_history SELECT v.*, ?, now() FROM record_values v "
                "WHERE (v.record_id, v.field) IN (SELECT record_id, field FROM incoming_values) "
                "OR (v.origin = 'derived' AND v.record_id IN (SELECT record_id FROM incoming_records))",
                [batch])
            con.execute(
                "DELETE FROM record_values WHERE (record_id, field) IN (SELECT record_id, field FROM incoming_values) "
                "OR (origin = 'derived' AND record_id IN (SELECT record_id FROM incoming_records))")
            con.execute("INSERT INTO record_values SELECT * FROM incoming_values")
            report.values = len(values)
            con.unregister("incoming_values")
        con.unregister("incoming_records")
        if derive:
            from ..derive import derive_in_store

            outcome = derive_in_store(con, batch, record_ids=list(records["record_id"]))
            report.derived = outcome.derived
            report.flags = outcome.flags
    return report
