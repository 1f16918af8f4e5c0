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
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import ImportRejected, InputError, Problem
from ..validate import check_table
from .mapping import load_mapping
from .normalise import NormalTable, normalise, slug
from .readers import read_file
from .writer import store_tables, unique_id


@dataclass
class FileResult:
    source: str
    record_type: str | None = None
    mapping: str | None = None          # the mapping profile the file was read with, None: canonical headers
    mapping_from: str = ""              # where that mapping came from (given with the file, a manifest, --mapping)
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


def _default_ids(man: list, pn: list) -> list:
    """:func:`default_id` of every (manufacturer, part number) pair, None where either is missing.

    The first words come from the few distinct makers; the slugs of ASCII text are made
    with pyarrow at once (for ASCII, ``str.lower`` and the slug pattern mean the same
    there), the others one by one.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    first_word = {m: slug(m).split("-")[0] for m in set(man) if m}
    words = [first_word[m] if m and p else None for m, p in zip(man, pn)]
    try:
        joined = pc.binary_join_element_wise(pa.array(words, pa.string()), pa.array(pn, pa.string()), "-")
    except (pa.ArrowException, UnicodeError, TypeError):  # text pyarrow cannot hold
        return [slug(w, p) if w else None for w, p in zip(words, pn)]
    slugs = pc.replace_substring_regex(pc.ascii_lower(joined), pattern="[^a-z0-9._]+", replacement="-")
    slugs = pc.utf8_trim(slugs, characters="-._")
    slugs = pc.if_else(pc.equal(slugs, ""), "record", slugs).to_pylist()
    ascii = pc.fill_null(pc.string_is_ascii(joined), True).to_numpy(zero_copy_only=False)
    for i in np.flatnonzero(~ascii).tolist():
        slugs[i] = slug(words[i], pn[i])
    return slugs


def _identity(table: NormalTable, seen: dict | None = None) -> tuple[list, list[Problem]]:
    """Record ids for the rows; default a slug of manufacturer and part_number.

    ``seen`` carries the ids and keys of the tables read before, so one import never
    holds a record twice (the same key, or one id for two keys) across its files.
    """
    from itertools import repeat

    cols = table.columns
    n = table.n
    man = cols["manufacturer"].values if "manufacturer" in cols else [None] * n
    pn = cols["part_number"].values if "part_number" in cols else [None] * n
    given = cols["id"].values if "id" in cols else [None] * n
    ids = _default_ids(man, pn) if n else []
    if "id" in cols:
        ids = [g if g else rid for g, rid in zip(given, ids)]
    problems = []
    seen = {} if seen is None else seen
    first: dict = seen.setdefault("id", {})  # id -> (source, row)
    keyfirst: dict = seen.setdefault("key", {})  # key -> (source, row)
    owner: dict = seen.setdefault("owner", {})  # id -> key
    keys = list(zip(map(str.lower, map(str.strip, map(str, man))),
                    map(str.lower, map(str.strip, map(str, pn)))))
    distinct = set(ids)
    if None not in distinct and len(distinct) == n and first.keys().isdisjoint(distinct) \
            and len(set(keys)) == n and keyfirst.keys().isdisjoint(keys):
        # the common case: every row has an id, and no id or key is held twice (here or
        # before): nothing to report or rename, as the loop below would find
        where = list(zip(repeat(table.source), table.row_numbers))
        owner.update(zip(ids, keys))
        keyfirst.update(zip(keys, where))
        first.update(zip(ids, where))
        return ids, problems
    for i, rid in enumerate(ids):
        if rid is None:
            continue
        key = keys[i]
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


def read_and_check(paths, mapping=None, manifest=None,
                   progress=None) -> list[tuple[NormalTable | None, FileResult, list]]:
    """Read, normalise and check every file; nothing is written.

    ``mapping`` is one profile for every file or a dict ``{file: profile}``;
    ``manifest`` an import manifest choosing profiles by file pattern (see
    :func:`catalog.ingest.manifest.mappings_for` for which wins).  Returns, per
    table, the normalised table, its :class:`FileResult` (naming the mapping used)
    and its ids.  ``progress(stage, done, total)``, when given, hears of each file before it is read.
    """
    from .manifest import mappings_for

    out = []
    seen: dict = {}  # ids and keys of every table so far (see _identity)
    chosen = mappings_for(paths, mapping, manifest)
    profiles: dict = {}
    for _, mp, _ in chosen:     # an invalid profile raises: nothing else is read
        if mp is not None and mp not in profiles:
            profiles[mp] = load_mapping(mp)
    for done, (path, mp, why) in enumerate(chosen):
        if progress is not None:
            progress("checking", done, len(chosen))
        profile = profiles.get(mp) if mp is not None else None
        try:
            raws = read_file(path, sheet=profile.sheet if profile else None,
                             header_row=profile.header_row if profile else 1)
        except InputError as exc:
            out.append((None, FileResult(str(path), None, mp, why, problems=list(exc.problems)), []))
            continue
        for raw in raws:
            table = normalise(raw, profile)
            result = FileResult(raw.source, table.record_type, mp, why, rows=table.n,
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
    from ..export.writers import neutralise
    from ..store.files import output_file

    path = Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        text = f"{path}: cannot create its folder ({exc.strerror or exc}); nothing was written"
        raise InputError(f"--rejects: {text}", [Problem("--rejects", None, None, text)]) from None
    fields = ["source_file", "source_row", "reasons", *headers]
    with output_file(path, "--rejects") as tmp, tmp.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)  # a spreadsheet opens it: formula starts are neutralised as in every export
        writer.writerow([neutralise(str(h)) for h in fields])
        for row in rows:
            writer.writerow([neutralise(v) if isinstance(v, str) else ("" if v is None else v)
                             for v in (row.get(h, "") for h in fields)])
    return len(rows)


def _rejects_is_an_input(rejects, paths, mapping) -> str | None:
    """The input file (datasheet or mapping profile) that ``rejects`` names, or None."""
    target = Path(rejects)
    for given in [*paths, *([mapping] if mapping is not None else [])]:
        given = Path(given)
        try:
            if target.exists() and given.exists() and os.path.samefile(target, given):
                return str(given)
        except OSError:
            pass
        if target.resolve() == given.resolve():
            return str(given)
    return None


def validate_files(paths, mapping=None, manifest=None) -> ImportReport:
    """Check files as an import would, writing nothing."""
    report = ImportReport()
    for table, result, _ids in read_and_check(paths, mapping, manifest):
        result.accepted = 0 if result.problems else result.rows
        report.files.append(result)
        report.converted += result.converted
    return report


def import_files(store, paths, mapping=None, keep_valid=False, rejects=None, derive=True,
                 progress=None, manifest=None) -> ImportReport:
    """Import ``paths`` into ``store`` in one transaction; see the module docstring.

    Raises :class:`~catalog.errors.ImportRejected` (nothing written) when any file has
    a problem and ``keep_valid`` is false.  ``mapping`` and ``manifest`` choose each
    file's mapping profile (:func:`read_and_check`).
    """
    if keep_valid and rejects is None:
        raise InputError("--keep-valid needs --rejects FILE to write the rejected rows to",
                         [Problem("--rejects", None, None, "missing, expected a file for the rejected rows")])
    if rejects is not None:
        same = _rejects_is_an_input(rejects, paths, mapping)
        if same is not None:
            text = f"{rejects} is {same}, an input of this import; expected another file for the rejected rows"
            raise InputError(f"--rejects: {text}", [Problem("--rejects", None, None, text)])
    checked = read_and_check(paths, mapping, manifest, progress)
    report = ImportReport()
    kept = []  # (table, ids, keep mask) of the tables with rows to import
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
        kept.append((table, ids, keep))
    problems = report.problems
    if problems and not keep_valid:
        raise ImportRejected(f"{len(problems)} problem(s); nothing was imported", problems, report=report)
    if keep_valid and problems:
        write_rejects(rejects, checked)
        report.rejects_file = str(rejects)
    checked = table = None
    for t, _ids, _keep in kept:
        t.raw = None  # the cells as read are not needed any more: free them before writing
    if kept:
        if progress is not None:
            progress("writing", 0, sum(int(k.sum()) for _t, _i, k in kept))
        store_tables(store, report, kept, files=", ".join(str(p) for p in paths), derive=derive)
    return report
