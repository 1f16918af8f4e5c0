"""Stock files: a whole shelf (CSV, XLSX, JSON or YAML) imported or counted.

One record per row as ``schemas/stock.schema.json`` states it (the catalogue
record by ``id`` or by manufacturer and part number, quantity, location,
condition, serial numbers, notes, reorder level).  Files are read with the
datasheet readers, every row is checked before anything is written, and a file
with any problem is refused whole.

``import_stock`` receives every row; a file whose content was received before
(the same bytes, under any name) is refused unless ``again=True``, naming the
batch that received it (the content's SHA-256 is kept in the batch's note).
``count_stock`` reconciles a counted shelf
against the records: the differences come first, and ``apply=True`` writes them
as ``adjust`` movements, computed again inside the write transaction.
"""
from __future__ import annotations

__all__ = ["StockFile", "parse_stock_files", "read_stock_files", "import_stock", "count_stock", "STOCK_FIELDS",
           "content_prints", "earlier_receipts"]

import difflib
import re
from dataclasses import dataclass, field

from ..errors import ImportRejected, Problem
from ..fields import load_schema
from .ledger import merge_serials, post, read_count, split_serials

_SCHEMA = load_schema("stock")
STOCK_FIELDS = dict(_SCHEMA["properties"])
_ALIASES = {"serial": "serial_numbers", "serials": "serial_numbers", "lot": "serial_numbers",
            "lot_numbers": "serial_numbers", "record_id": "id", "qty": "quantity", "note": "notes"}


@dataclass
class StockFile:
    """Checked rows of stock files: a DataFrame and every problem found."""

    rows: object = None  # DataFrame: source, row, record_id, location, condition, quantity, ...
    problems: list = field(default_factory=list)
    sources: list = field(default_factory=list)


def _key(header: str) -> str:
    k = re.sub(r"[\s\-]+", "_", str(header).strip().lower())
    return _ALIASES.get(k, k)


def _cell(value, kind: str):
    """(value, error) of one cell for a field of JSON type ``kind``; value None = missing."""
    if value is None or (isinstance(value, str) and not value.strip()):
        return None, None
    if isinstance(value, dict):  # a JSON/YAML {value, unit} mapping: stock fields take one plain value
        keys = ", ".join(repr(str(k)) for k in list(value)[:5])
        return None, f"a mapping with keys {keys}, expected a single value"
    if kind == "integer":
        return read_count(value)  # strict: thousands separators, decimal commas, nan and inf say so
    if isinstance(value, float) and value.is_integer():
        value = int(value)  # a part number a spreadsheet stored as a number
    return " ".join(str(value).split()), None


def _same(a, b) -> bool:
    """Names equal as the catalogue matches them: case and runs of spaces aside."""
    return " ".join(str(a).split()).lower() == " ".join(str(b).split()).lower()


def _named(part_number, manufacturer) -> str:
    """How a row names a record, for messages."""
    if part_number is not None and manufacturer is not None:
        return f"{part_number!r} of {manufacturer!r}"
    return f"part number {part_number!r}" if part_number is not None else f"manufacturer {manufacturer!r}"


def _check(name, value, spec):
    if spec.get("enum") and value not in spec["enum"]:
        return f"{value!r} is not allowed, expected one of {', '.join(spec['enum'])}"
    if "minimum" in spec and value < spec["minimum"]:
        return f"{value} is too small, expected at least {spec['minimum']}"
    if "maximum" in spec and value > spec["maximum"]:
        return f"{value} is too large, expected at most {spec['maximum']}"
    if "maxLength" in spec and len(value) > spec["maxLength"]:
        return f"text of {len(value)} characters, expected at most {spec['maxLength']}"
    return None


def _read_one(path, out: list, problems: list) -> None:
    from ..errors import InputError
    from ..ingest.readers import read_file

    try:
        tables = read_file(path)
    except InputError as exc:
        problems.extend(exc.problems)
        return
    for raw in tables:
        cols = {}
        for i, h in enumerate(raw.headers):
            if not h:
                continue
            key = _key(h)
            if key not in STOCK_FIELDS:
                close = difflib.get_close_matches(key, list(STOCK_FIELDS), n=1)
                hint = f"; did you mean {close[0]}?" if close else f"; expected one of {', '.join(STOCK_FIELDS)}"
                problems.append(Problem(raw.source, raw.header_row, str(h), f"unknown column{hint}"))
            elif key in cols:
                first = raw.headers[cols[key]]
                if raw.header_row is None:  # JSON/YAML: keys, whose order means nothing
                    what = f"field {key!r} given by two keys ({first!r} and {str(h)!r}), expected one"
                elif first == h:
                    what = f"column {str(h)!r} appears twice (columns {cols[key] + 1} and {i + 1}), expected once"
                else:
                    what = (f"field {key!r} given by two columns ({cols[key] + 1} {first!r} and {i + 1} "
                            f"{str(h)!r}), expected one")
                problems.append(Problem(raw.source, raw.header_row, str(h), what))
            else:
                cols[key] = i
        problems.extend(raw.problems)  # cells beyond the header, keys twice in a record, lists as cells
        read_badly = {(p.row, _key(p.field)) for p in raw.problems if p.field}
        if not raw.rows:
            problems.append(Problem(raw.source, None, None, "no records, expected at least one row"))
        for cells, rowno in zip(raw.rows, raw.row_numbers):
            rec = {"source": raw.source, "row": rowno}
            for name, spec in STOCK_FIELDS.items():
                value, err = _cell(cells[cols[name]] if name in cols and cols[name] < len(cells) else None,
                                   spec.get("type", "string"))
                if value is not None and name == "condition":
                    value = value.lower()
                if value is not None and err is None:
                    err = _check(name, value, spec)
                if err:
                    problems.append(Problem(raw.source, rowno, name, err))
                    value = None
                rec[name] = value
            for name in _SCHEMA.get("required", []):
                if rec[name] is None and (rowno, name) not in read_badly and not any(
                        p.file == raw.source and p.row == rowno and p.field == name for p in problems):
                    problems.append(Problem(raw.source, rowno, name, "missing, expected a value"))
            if rec["id"] is None and (rec["manufacturer"] is None or rec["part_number"] is None):
                problems.append(Problem(raw.source, rowno, "part_number",
                                        "no record named, expected id or manufacturer and part_number"))
            out.append(rec)


def parse_stock_files(paths) -> tuple[list, list]:
    """The rows and problems of stock files as read, before any record is looked up.

    Reading and checking the files needs no catalogue: done once, before the catalogue is
    opened, so a write never holds the lock while files are parsed.
    """
    recs, problems = [], []
    for path in paths:
        _read_one(path, recs, problems)
    return recs, problems


def read_stock_files(con, paths, parsed=None) -> StockFile:
    """Read and check stock files (or take ``parsed``, from :func:`parse_stock_files`),
    resolving every row to a catalogue record; writes nothing."""
    import pandas as pd

    recs, problems = parse_stock_files(paths) if parsed is None else (parsed[0], list(parsed[1]))
    cols = ["source", "row", *STOCK_FIELDS]
    frame = pd.DataFrame(recs, columns=cols)
    for name, spec in STOCK_FIELDS.items():  # text columns hold None, never NaN, where missing
        if spec.get("type") == "string":
            frame[name] = frame[name].astype(object).where(frame[name].notna(), None)
    frame["condition"] = frame["condition"].fillna("new")
    frame["record_id"] = None
    if len(frame):
        con.register("stock_keys", frame[["id", "manufacturer", "part_number"]].assign(pos=range(len(frame))))
        hits = con.execute(  # two equality joins (hash joins), never one join on `id = ... OR key = ...`
            "SELECT k.pos, r.record_id FROM stock_keys k JOIN records r ON r.record_id = k.id UNION ALL "
            "SELECT k.pos, r.record_id FROM stock_keys k JOIN records r ON "
            "lower(trim(r.manufacturer)) = lower(trim(k.manufacturer)) AND "
            "lower(trim(r.part_number)) = lower(trim(k.part_number)) WHERE k.id IS NULL").fetchall()
        con.unregister("stock_keys")
        found = dict(hits)
        frame["record_id"] = [found.get(i) for i in range(len(frame))]
        catalogue = {rid: (man, pn) for rid, man, pn in
                     con.execute("SELECT record_id, manufacturer, part_number FROM records").fetchall()}
        named: dict = {}  # part number -> manufacturers
        for man, pn in catalogue.values():
            named.setdefault(pn, []).append(man)
        for r in frame[frame["record_id"].isna()].itertuples(index=False):
            if r.id is None and (r.manufacturer is None or r.part_number is None):
                continue  # already reported
            if r.id is not None:
                close = difflib.get_close_matches(r.id, list(catalogue), n=2, cutoff=0.7)
                hint = f" (close: {', '.join(close)})" if close else ""
                what, field_ = f"no catalogue record with id {r.id!r}{hint}", "id"
            else:
                close = [pn if _same(man, r.manufacturer) else f"{pn} of {man!r}"
                         for pn in difflib.get_close_matches(r.part_number, list(named), n=2, cutoff=0.7)
                         for man in named[pn]][:2]
                hint = f" (close: {', '.join(close)})" if close else ""
                what, field_ = f"no catalogue record {r.part_number!r} of {r.manufacturer!r}{hint}", "part_number"
            problems.append(Problem(r.source, r.row, field_, what + "; import its datasheet first"))
        for r in frame[frame["record_id"].notna() & frame["id"].notna()].itertuples(index=False):
            man, pn = catalogue[r.record_id]  # named by id: a manufacturer or part number beside it must agree
            if (r.manufacturer is not None and not _same(r.manufacturer, man)) or (
                    r.part_number is not None and not _same(r.part_number, pn)):
                problems.append(Problem(r.source, r.row, "id",
                                        f"id {r.id!r} is {pn!r} of {man!r} but the row names "
                                        f"{_named(r.part_number, r.manufacturer)}, expected both to name "
                                        "the same record"))
        frame["location"] = pd.Series([s if not isinstance(s, str) else " ".join(s.split()) for s in frame["location"]],
                                      index=frame.index, dtype=object)
        seen: dict = {}
        for r in frame.itertuples(index=False):
            if not isinstance(r.record_id, str) or not isinstance(r.location, str):
                continue
            key = (r.record_id, r.location.lower(), r.condition)
            if key in seen:
                problems.append(Problem(r.source, r.row, "location",
                                        f"{r.record_id} at {r.location!r} ({r.condition}) appears twice "
                                        f"(first at {seen[key]}), expected once"))
            seen.setdefault(key, f"{r.source}:{r.row}")
    problems.sort(key=lambda p: (p.file, p.row or 0, p.field or ""))
    return StockFile(frame, problems, [str(p) for p in paths])


_PRINT = "content sha256:"


def content_prints(paths) -> list[tuple[str, str]]:
    """``(path, SHA-256 of the file's bytes)`` of each stock file that can be read (others are skipped)."""
    import hashlib

    out = []
    for path in paths:
        try:
            with open(path, "rb") as fh:
                out.append((str(path), hashlib.file_digest(fh, "sha256").hexdigest()))
        except OSError:
            continue  # the reader reports a file it cannot open
    return out


def _receipt_note(prints) -> str:
    return "; ".join(f"{_PRINT}{digest} {path}" for path, digest in prints)


def earlier_receipts(con, prints) -> list[Problem]:
    """One problem per stock file whose content a stock import received before (or twice in ``prints``)."""
    problems, seen = [], {}
    for path, digest in prints:
        if digest in seen:
            problems.append(Problem(path, None, None, f"the same content as {seen[digest]} in this import, "
                                                      "expected each shelf once"))
            continue
        seen[digest] = path
        hit = con.execute(
            "SELECT batch_id, started_at, files, user_name FROM batches WHERE kind = 'stock-import' "
            "AND contains(note, ?) ORDER BY batch_id LIMIT 1", [_PRINT + digest]).fetchall()
        if hit:
            batch, at, files, user = hit[0]
            when = at.strftime("%Y-%m-%d %H:%M") if at is not None else "?"
            by = f" by {user}" if user else ""
            problems.append(Problem(path, None, None,
                                    f"already received in batch {batch} on {when}{by} (as {files}); "
                                    "nothing received twice: pass --again to receive the same content again"))
    return problems


def _refuse(checked: StockFile, store, verb: str):
    n = len(checked.problems)
    raise ImportRejected(f"{n} problem(s); nothing was {verb}, {store.path} is unchanged", checked.problems)


def _ensure_items(con, batch, frame):
    """Item ids for (record_id, location, condition) of ``frame``, creating the missing items in bulk."""
    keys = frame[["record_id", "location", "condition"]].drop_duplicates()
    con.register("wanted_items", keys)
    con.execute(
        "INSERT INTO stock_items SELECT nextval('stock_item_seq'), w.record_id, coalesce((SELECT min_by(k.location, "
        "k.item_id) FROM stock_items k WHERE lower(k.location) = lower(w.location)), w.location), w.condition, "
        "NULL, NULL, CAST(now() AS TIMESTAMP), ? FROM wanted_items w "
        "WHERE NOT EXISTS (SELECT 1 FROM stock_items i WHERE "
        "i.record_id = w.record_id AND lower(i.location) = lower(w.location) AND i.condition = w.condition)", [batch])
    rows = con.execute(
        "SELECT w.record_id, lower(w.location), w.condition, i.item_id, i.location FROM wanted_items w "
        "JOIN stock_items i ON i.record_id = w.record_id AND lower(i.location) = lower(w.location) "
        "AND i.condition = w.condition").fetchall()
    con.unregister("wanted_items")
    return {(r, loc, c): (item, stored) for r, loc, c, item, stored in rows}


def import_stock(store, paths, person=None, reason=None, at=None, again: bool = False):
    """Receive every row of the stock files in one transaction; returns (rows received, pieces, batch id).

    ``at`` (a datetime, default now) dates the receive movements, e.g. for a shelf
    recorded after the fact.  A file whose content an earlier stock import received
    is refused (naming that batch) unless ``again``.
    """
    import pandas as pd

    parsed = parse_stock_files(paths)  # before any lock: under it only the records are looked up
    prints = content_prints(paths)

    def checked_rows(con):
        checked = read_stock_files(con, paths, parsed)
        if not again:
            checked.problems.extend(earlier_receipts(con, prints))
        for r in checked.rows[checked.rows["quantity"] == 0].itertuples(index=False):
            checked.problems.append(Problem(r.source, r.row, "quantity",
                                            "0 pieces, expected at least 1 to receive (a count file may list 0)"))
        if checked.problems:
            checked.problems.sort(key=lambda p: (p.file, p.row or 0, p.field or ""))
            _refuse(checked, store, "imported")
        return checked

    with store.read() as con:
        checked_rows(con)  # every problem is found before the file is opened for writing
    with store.write() as con:
        checked = checked_rows(con)
        frame = checked.rows
        batch = store.new_batch(con, "stock-import", files=", ".join(checked.sources), note=_receipt_note(prints))
        items = _ensure_items(con, batch, frame)
        moves, attrs, levels = [], [], []
        for r in frame.itertuples(index=False):
            item, loc = items[(r.record_id, r.location.lower(), r.condition)]
            moves.append({"item_id": item, "record_id": r.record_id, "location": loc, "condition": r.condition,
                          "kind": "receive", "quantity_change": int(r.quantity), "person": person, "at": at,
                          "reason": reason or f"stock import {r.source}:{r.row}",
                          "serial_numbers": r.serial_numbers})
            if r.serial_numbers or r.notes:
                attrs.append((item, r.serial_numbers, r.notes))
            if r.min_quantity is not None and r.min_quantity == r.min_quantity:
                levels.append((r.record_id, int(r.min_quantity), batch))
        post(con, batch, moves)
        if attrs:
            current = dict(con.execute("SELECT item_id, serial_numbers FROM stock_items WHERE item_id IN "
                                       "(SELECT unnest(?))", [[a[0] for a in attrs]]).fetchall())
            upd = pd.DataFrame([(i, merge_serials(current.get(i), split_serials(s)), n) for i, s, n in attrs],
                               columns=["item_id", "serial_numbers", "notes"])
            con.register("item_attrs", upd)
            con.execute("UPDATE stock_items SET serial_numbers = a.serial_numbers, "
                        "notes = coalesce(a.notes, stock_items.notes) FROM item_attrs a "
                        "WHERE stock_items.item_id = a.item_id")
            con.unregister("item_attrs")
        if levels:
            con.register("levels", pd.DataFrame(levels, columns=["record_id", "min_quantity", "batch_id"]))
            con.execute("INSERT OR REPLACE INTO stock_levels SELECT * FROM levels")
            con.unregister("levels")
        return len(frame), int(frame["quantity"].sum()), batch


_DIFF_SQL = (
    "WITH counted AS (SELECT record_id, location, lower(location) AS lloc, condition, quantity, source, row "
    "FROM counted_rows), "
    "scope AS (SELECT DISTINCT lloc FROM counted), "
    "recorded AS (SELECT s.item_id, s.record_id, s.location, lower(s.location) AS lloc, s.condition, s.on_hand, "
    "s.reserved FROM stock s WHERE (s.on_hand <> 0 OR s.reserved <> 0) AND "
    "lower(s.location) IN (SELECT lloc FROM scope)) "
    "SELECT coalesce(c.record_id, r.record_id) AS id, coalesce(r.location, c.location) AS location, "
    "coalesce(c.condition, r.condition) AS condition, CAST(coalesce(r.on_hand, 0) AS INTEGER) AS recorded, "
    "CAST(coalesce(c.quantity, 0) AS INTEGER) AS counted, "
    "CAST(coalesce(c.quantity, 0) - coalesce(r.on_hand, 0) AS INTEGER) AS change, "
    "CAST(coalesce(r.reserved, 0) AS INTEGER) AS reserved, r.item_id, "
    "CASE WHEN c.record_id IS NULL THEN 'not found' WHEN r.record_id IS NULL THEN 'not recorded' "
    "ELSE 'different' END AS finding, c.source, c.row "
    "FROM counted c FULL JOIN recorded r ON r.record_id = c.record_id AND r.lloc = c.lloc "
    "AND r.condition = c.condition "
    "WHERE (c.record_id IS NOT NULL OR ?) AND coalesce(c.quantity, 0) <> coalesce(r.on_hand, 0) "
    "ORDER BY location, id, condition")


def _differences(con, frame, keep_unlisted: bool):
    con.register("counted_rows", frame[["record_id", "location", "condition", "quantity", "source", "row"]])
    try:
        # the scope is the locations of the count; with keep_unlisted only the listed items
        return con.execute(_DIFF_SQL, [not keep_unlisted]).fetchdf()
    finally:
        con.unregister("counted_rows")


def count_stock(store, path, apply: bool = False, keep_unlisted: bool = False, person=None):
    """Reconcile a counted shelf file against the records.

    Every location named in the file counts as counted whole: an item recorded
    there but missing from the file was not found (counted 0), unless
    ``keep_unlisted``.  Returns ``(differences DataFrame, applied, batch id)``;
    the frame has id, location, condition, recorded, counted, change, reserved
    and finding (different, not found, not recorded).  With ``apply`` the
    differences are written as ``adjust`` movements in one transaction; a count
    below what is reserved refuses the whole count.
    """
    import pandas as pd

    paths = [path]
    parsed = parse_stock_files(paths)  # before any lock: under it only the records are looked up
    with store.read() as con:
        checked = read_stock_files(con, paths, parsed)
        if checked.problems:
            _refuse(checked, store, "counted")
        if not apply:
            return _differences(con, checked.rows, keep_unlisted), False, None
    with store.write() as con:
        checked = read_stock_files(con, paths, parsed)
        if checked.problems:
            _refuse(checked, store, "counted")
        diff = _differences(con, checked.rows, keep_unlisted)
        for r in diff[diff["counted"] < diff["reserved"]].itertuples(index=False):
            checked.problems.append(Problem(str(path), None if pd.isna(r.row) else int(r.row), "quantity",
                                            f"{r.id} at {r.location!r} ({r.condition}): counted {r.counted} but "
                                            f"{r.reserved} reserved; release or take the reservation first"))
        if checked.problems:
            _refuse(checked, store, "adjusted")
        if diff.empty:
            return diff, True, None
        batch = store.new_batch(con, "stock-count", files=str(path))
        new = diff[diff["item_id"].isna()]
        items = _ensure_items(con, batch, new.rename(columns={"id": "record_id"})) if len(new) else {}
        moves = []
        known = diff["item_id"].notna().tolist()
        for r, has_item in zip(diff.itertuples(index=False), known):
            if has_item:
                item, loc = int(r.item_id), r.location
            else:
                item, loc = items[(r.id, r.location.lower(), r.condition)]
            moves.append({"item_id": item, "record_id": r.id, "location": loc, "condition": r.condition,
                          "kind": "adjust", "quantity_change": int(r.change), "person": person,
                          "reason": f"count {path}: {r.finding}, recorded {r.recorded}, counted {r.counted}"})
        post(con, batch, moves)
        return diff, True, batch

