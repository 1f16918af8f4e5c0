"""Bad inputs written by the tests themselves: workbooks, nesting and sizes beyond the
committed corpus, and the id and duplicate rules that guard existing records."""
from __future__ import annotations

import csv
import re
import zipfile

import pytest

from tests.conftest import table_snapshot
from tests.robustness.conftest import assert_clean_failure, error_lines, run_cli

HEAD = ["manufacturer", "part_number", "stall_torque [mNm]", "notes"]


def workbook(path, rows, title=None, extra_sheets=()):
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    if title:
        ws.title = title
    for row in rows:
        ws.append(row)
    for name in extra_sheets:
        wb.create_sheet(name)
    wb.save(path)
    return path


def with_cached_values(path, values: dict):
    """Rewrite an openpyxl workbook so formula cells carry saved values, as a spreadsheet
    program writes them (``values``: cell reference -> value)."""
    with zipfile.ZipFile(path) as zf:
        parts = {name: zf.read(name) for name in zf.namelist()}
    sheet = parts["xl/worksheets/sheet1.xml"].decode()
    for ref, value in values.items():
        sheet, n = re.subn(rf'(<c r="{ref}"[^>]*>)(<f>[^<]*</f>)<v\s*/>', rf"\1\2<v>{value}</v>", sheet)
        assert n == 1, ref
    parts["xl/worksheets/sheet1.xml"] = sheet.encode()
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as zf:
        for name, data in parts.items():
            zf.writestr(name, data)
    return path


def rejected(db, before, *args) -> list[str]:
    """Run an import that must be refused; returns its error lines."""
    result = run_cli("--db", db, "import", *args)
    assert_clean_failure(result)
    assert table_snapshot(db) == before
    return error_lines(result)


def summary(db, n: int) -> str:
    return f"{n} problem(s); nothing was imported, {db} is unchanged"


# -- XLSX -------------------------------------------------------------------------------

def test_xlsx_formula_without_a_saved_value_is_an_error(prefilled, template_snapshot, tmp_path):
    path = workbook(tmp_path / "f.xlsx", [HEAD, ["Sheet Motors", "F-1", 5, None], ["Sheet Motors", "F-2", "=C2*2", None]])
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}:3:stall_torque [mNm]: cell C3 holds the formula '=C2*2' without a saved value, expected a "
        "value (open and save the workbook in a spreadsheet program, or type the value)",
        summary(prefilled, 1)]


def test_xlsx_formula_with_a_saved_value_imports_the_value(prefilled, tmp_path):
    import catalog

    path = workbook(tmp_path / "f.xlsx", [HEAD, ["Sheet Motors", "F-1", 5, None], ["Sheet Motors", "F-2", "=C2*2", None]])
    with_cached_values(path, {"C3": 10})
    result = run_cli("--db", prefilled, "import", path)
    assert result.exit_code == 0, result.output
    m = catalog.open(prefilled).motors().set_index("id")
    assert m.loc["sheet-f-2", "stall_torque"] == pytest.approx(0.010, rel=1e-12)  # 10 mN·m, SI prefix


@pytest.mark.parametrize("cut", [0.5, 0.9])
def test_truncated_xlsx(prefilled, template_snapshot, tmp_path, cut):
    good = workbook(tmp_path / "g.xlsx", [HEAD, ["Sheet Motors", "T-1", 5, None]])
    data = good.read_bytes()
    path = tmp_path / "truncated.xlsx"
    path.write_bytes(data[: int(len(data) * cut)])
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}: not a readable .xlsx workbook (BadZipFile: File is not a zip file)", summary(prefilled, 1)]


def test_csv_text_with_an_xlsx_name(prefilled, template_snapshot, tmp_path):
    path = tmp_path / "sheet.xlsx"
    path.write_text("manufacturer,part_number\nA,1\n", encoding="utf-8")
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}: not a readable .xlsx workbook (BadZipFile: File is not a zip file)", summary(prefilled, 1)]


def test_xlsx_empty_sheet_and_header_only(prefilled, template_snapshot, tmp_path):
    empty = workbook(tmp_path / "empty.xlsx", [], title="motors")
    assert rejected(prefilled, template_snapshot, empty) == [
        f"{empty}[motors]: no header row, expected column names in the first row", summary(prefilled, 1)]
    header = workbook(tmp_path / "header.xlsx", [HEAD], title="motors")
    assert rejected(prefilled, template_snapshot, header) == [
        f"{header}[motors]: no records, expected at least one row", summary(prefilled, 1)]


def test_xlsx_error_values_booleans_and_cells_beyond_the_headers(prefilled, template_snapshot, tmp_path):
    path = workbook(tmp_path / "cells.xlsx", [
        HEAD, ["Sheet Motors", "C-1", "#DIV/0!", None], ["Sheet Motors", "C-2", True, None],
        ["Sheet Motors", "C-3", 5, "ok", "stray"]])
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}:2:stall_torque: no number in '#DIV/0!': expected a number such as 12.5, then a unit",
        f"{path}:3:stall_torque: no number in 'true': expected a number such as 12.5, then a unit",
        f"{path}:4: a value in column E or beyond, expected at most 4 columns (one per header)",
        summary(prefilled, 3)]


def test_xlsx_zip_bomb_is_refused_before_parsing(prefilled, template_snapshot, tmp_path, monkeypatch):
    from catalog.ingest import readers

    monkeypatch.setattr(readers, "MAX_XLSX_UNPACKED_BYTES", 4000)
    path = workbook(tmp_path / "bomb.xlsx", [HEAD] + [["Sheet Motors", f"B-{i}", i + 1, "x" * 50] for i in range(100)])
    unpacked = sum(m.file_size for m in zipfile.ZipFile(path).infolist())
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}: workbook unpacks to {unpacked / 1e6:.0f} MB, expected at most 0 MB; split it",
        summary(prefilled, 1)]


def rewritten(src, dst, member: str, change):
    """A copy of the workbook ``src`` with the zip member ``member`` passed through ``change``."""
    with zipfile.ZipFile(src) as zf:
        parts = {name: zf.read(name) for name in zf.namelist()}
    parts[member] = change(parts[member])
    with zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zf:
        for name, data in parts.items():
            zf.writestr(name, data)
    return dst


SHEET = "xl/worksheets/sheet1.xml"
BOMB = (b'<?xml version="1.0"?>\n<!DOCTYPE x [<!ENTITY a "aaaaaaaaaa">'
        + b"".join(b'<!ENTITY %s "%s">' % (bytes([98 + i]), b"&%s;" % bytes([97 + i]) * 10) for i in range(8))
        + b"]>\n")


def _body(xml: bytes) -> bytes:
    return xml.split(b"?>", 1)[-1]


@pytest.mark.parametrize("case, member, change, message", [
    ("cut-off sheet", SHEET, lambda d: d[: len(d) // 2],
     "damaged XML: "),  # where the XML parser stops depends on where the cut falls
    ("cut-off workbook part", "xl/workbook.xml", lambda d: d[: len(d) // 2], "damaged XML: "),
    ("entity declaration", SHEET, lambda d: b'<?xml version="1.0"?>\n<!DOCTYPE x [<!ENTITY e "Sheet Motors">]>\n'
     + _body(d).replace(b"Sheet Motors", b"&e;"), SHEET + " declares XML entities (<!DOCTYPE>), which spreadsheet "
     "programs never write"),
    ("entity bomb", SHEET, lambda d: BOMB + _body(d).replace(b"<sheetData>", b"<sheetData>&i;"),
     SHEET + " declares XML entities (<!DOCTYPE>), which spreadsheet programs never write"),
    ("entity bomb in the workbook part", "xl/workbook.xml", lambda d: BOMB + _body(d),
     "xl/workbook.xml declares XML entities (<!DOCTYPE>), which spreadsheet programs never write"),
    ("number cell holding text", SHEET, lambda d: d.replace(b'<c r="C2" t="n"><v>5</v>', b'<c r="C2" t="n"><v>abc</v>'),
     "damaged content: ValueError: invalid literal for int() with base 10: 'abc'"),
    ("shared string beyond the table", SHEET,
     lambda d: d.replace(b'<c r="C2" t="n"><v>5</v>', b'<c r="C2" t="s"><v>99</v>'),
     "damaged content: IndexError: list index out of range"),
])
def test_damaged_or_hostile_workbook_xml(prefilled, template_snapshot, tmp_path, case, member, change, message):
    good = workbook(tmp_path / "g.xlsx", [HEAD, ["Sheet Motors", "X-1", 5, None]])
    path = rewritten(good, tmp_path / "bad.xlsx", member, change)
    lines = rejected(prefilled, template_snapshot, path)
    assert lines[1:] == [summary(prefilled, 1)]
    assert lines[0].startswith(f"{path}: not a readable .xlsx workbook ({message}"), lines[0]
    assert lines[0].endswith(")")


# -- text files beyond the committed corpus ------------------------------------------------

def test_nul_byte_after_the_first_block_of_a_csv(prefilled, template_snapshot, tmp_path):
    path = tmp_path / "late_nul.csv"
    rows = "".join(f"Late Motors,N-{i},{i + 1} mNm\n" for i in range(1000))
    path.write_bytes(("manufacturer,part_number,stall_torque\n" + rows).encode() + b"Late Motors,N-x,\x00\n")
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}:1002: binary data (a NUL byte), expected a UTF-8 text file", summary(prefilled, 1)]


@pytest.mark.parametrize("depth", [1_000, 100_000])
def test_json_nested_very_deeply(prefilled, template_snapshot, tmp_path, depth):
    path = tmp_path / "deep.json"
    path.write_text("[" * depth + "]" * depth, encoding="utf-8")
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}: not valid JSON (nested too deeply), expected a list of flat records", summary(prefilled, 1)]


def test_yaml_nested_very_deeply_fails_at_the_limit(prefilled, template_snapshot, tmp_path):
    path = tmp_path / "deep.yaml"
    path.write_text("motors: " + "[" * 50_000 + "]" * 50_000 + "\n", encoding="utf-8")
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}:1: not valid YAML (nested deeper than 64 levels, expected a list of flat records)",
        summary(prefilled, 1)]


def test_yaml_alias_bomb_with_merge_keys(prefilled, template_snapshot, tmp_path):
    """Merge keys (<<: *x) are a second way to multiply a document; the same bound holds."""
    lines = ["base0: &b0 {" + ", ".join(f"k{j}: v" for j in range(20)) + "}"]
    lines += [f"base{i}: &b{i} [" + ", ".join([f"*b{i - 1}"] * 20) + "]" for i in range(1, 6)]
    lines += ["motors:", "  - <<: *b0", "    manufacturer: Bomb Motors", "    part_number: A-1", "    notes: *b5"]
    path = tmp_path / "merge.yaml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    errors = rejected(prefilled, template_snapshot, path)
    assert re.fullmatch(rf"{re.escape(str(path))}:1: not valid YAML \(aliases expand the file by \d+ values, "
                        r"expected at most 100000 \(write the values out instead of repeating aliases\)\)", errors[0])


def test_yaml_scalars_are_stored_as_written(prefilled, tmp_path):
    import catalog

    path = tmp_path / "text.yaml"
    path.write_text("motors:\n  - manufacturer: Octal Motors\n    part_number: 0123\n    series: 12:30\n"
                    "    notes: no\n    mount: 1_000\n    datasheet_date: 2024-05-01\n", encoding="utf-8")
    result = run_cli("--db", prefilled, "import", path)
    assert result.exit_code == 0, result.output
    rtype, man, pn, values, _ = catalog.open(prefilled).show("octal-0123")
    assert (rtype, man, pn) == ("motor", "Octal Motors", "0123")
    text = values.set_index("field")["value_text"]
    assert text["series"] == "12:30" and text["notes"] == "no" and text["mount"] == "1_000"
    assert text["datasheet_date"] == "2024-05-01"


def test_too_many_cells_is_refused_while_reading(prefilled, template_snapshot, tmp_path, monkeypatch):
    from catalog.ingest import readers

    monkeypatch.setattr(readers, "MAX_CELLS", 100)
    path = tmp_path / "cells.csv"
    path.write_text("manufacturer,part_number,stall_torque\n" + "".join(
        f"Cell Motors,C-{i},1 mNm\n" for i in range(50)), encoding="utf-8")
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}:34: more than 100 cells, expected at most 100 (rows x columns) in one file; split it",
        summary(prefilled, 1)]


# -- records that must not overwrite each other -----------------------------------------------

def test_part_numbers_whose_slugs_collide_are_two_records(prefilled, tmp_path):
    """M-1, M/1 and m 1 give one slug; each must stay its own record (nothing overwritten)."""
    import catalog

    files = []
    for i, (pn, note) in enumerate([("M-1", "dash"), ("M/1", "slash"), ("m 1", "space"), ("Ж-1", "cyrillic"),
                                    ("Ф-1", "other cyrillic")]):
        path = tmp_path / f"s{i}.csv"
        path.write_text(f"manufacturer,part_number,notes,stall_torque\nSlug Motors,{pn},{note},1 N*m\n",
                        encoding="utf-8")
        assert run_cli("--db", prefilled, "import", path).exit_code == 0
        files.append(path)
    both = tmp_path / "both.csv"  # and in one file
    both.write_text("manufacturer,part_number,notes,stall_torque\nSlug Motors,Q.1,a,1 N*m\nSlug Motors,Q_1,b,1 N*m\n"
                    "Slug Motors,q-1,c,1 N*m\nSlug Motors,Q 1,d,1 N*m\n", encoding="utf-8")
    assert run_cli("--db", prefilled, "import", both).exit_code == 0
    df = catalog.open(prefilled).sql("SELECT r.part_number, v.value_text FROM records r JOIN record_values v "
                                     "USING (record_id) WHERE v.field = 'notes' AND r.manufacturer = 'Slug Motors'")
    assert dict(zip(df["part_number"], df["value_text"])) == {
        "M-1": "dash", "M/1": "slash", "m 1": "space", "Ж-1": "cyrillic", "Ф-1": "other cyrillic",
        "Q.1": "a", "Q_1": "b", "q-1": "c", "Q 1": "d"}
    # importing one of them again updates that record only
    files[1].write_text("manufacturer,part_number,notes,stall_torque\nSlug Motors,M/1,slash again,1 N*m\n",
                        encoding="utf-8")
    assert run_cli("--db", prefilled, "import", files[1]).exit_code == 0
    df = catalog.open(prefilled).sql("SELECT r.part_number, v.value_text FROM records r JOIN record_values v "
                                     "USING (record_id) WHERE v.field = 'notes' AND r.part_number IN ('M-1', 'M/1')")
    assert dict(zip(df["part_number"], df["value_text"])) == {"M-1": "dash", "M/1": "slash again"}


def test_one_record_in_two_files_of_one_import(prefilled, template_snapshot, tmp_path):
    a, b = tmp_path / "a.csv", tmp_path / "b.csv"
    for path in (a, b):
        path.write_text("manufacturer,part_number,stall_torque\nTwin Motors,T-1,1 N*m\n", encoding="utf-8")
    assert rejected(prefilled, template_snapshot, a, b) == [
        f"{b}:2:part_number: 'T-1' of 'Twin Motors' appears twice in this import (first in {a} at row 2), "
        "expected once",
        summary(prefilled, 1)]


# -- size limits (the real sizes are in test_large_files.py) --------------------------------

@pytest.mark.parametrize("suffix, limit", [(".csv", "MAX_FILE_BYTES"), (".json", "MAX_FILE_BYTES"),
                                           (".yaml", "MAX_YAML_BYTES")])
def test_file_over_the_size_limit_is_refused_before_reading(prefilled, template_snapshot, tmp_path,
                                                            monkeypatch, suffix, limit):
    from catalog.ingest import readers

    monkeypatch.setattr(readers, limit, 1000)
    path = tmp_path / f"big{suffix}"
    path.write_bytes(b"x" * 1500)
    assert rejected(prefilled, template_snapshot, path) == [
        f"{path}: file of 0.0 MB, expected at most 0.0 MB for a {suffix} file; split it", summary(prefilled, 1)]


def test_keep_valid_keeps_good_rows_of_a_file_with_reader_problems(prefilled, tmp_path):
    """Row-level reader problems (extra cells) reject their row only under --keep-valid."""
    path = tmp_path / "mixed.csv"
    path.write_text("manufacturer,part_number,stall_torque\nKeep Motors,K-1,1 mNm\nKeep Motors,K-2,1 mNm,extra\n",
                    encoding="utf-8")
    rejects = tmp_path / "rejects.csv"
    result = run_cli("--db", prefilled, "import", path, "--keep-valid", "--rejects", rejects)
    assert result.exit_code == 2
    assert "1 record(s) created" in result.stdout
    with rejects.open(encoding="utf-8", newline="") as fh:
        rows = [(r["source_row"], r["part_number"], r["reasons"]) for r in csv.DictReader(fh)]
    assert rows == [("3", "K-2", "4 cells, expected at most 3 (one per column); quote a cell that contains "
                                 "the delimiter ','")]


# -- envelopes too large or not files (the committed ones are in tests/bad_inputs/envelope) -----
def test_an_envelope_of_megabytes_is_refused_before_parsing(prefilled, template_snapshot, tmp_path):
    big = tmp_path / "huge.toml"
    with big.open("w", encoding="utf-8") as fh:  # a valid start, then 2 MB of comments
        fh.write('name = "huge"\n[supply]\nnominal_voltage = "24 V"\n')
        for _ in range(40_000):
            fh.write("# " + "x" * 48 + "\n")
    result = run_cli("--db", prefilled, "select", big)
    assert_clean_failure(result)
    size = big.stat().st_size / 2**20
    assert error_lines(result) == [f"{big}: {size:.1f} MiB, expected an envelope of at most 1 MiB"]
    assert table_snapshot(prefilled) == template_snapshot


def test_an_envelope_that_is_a_folder(prefilled, template_snapshot, tmp_path):
    folder = tmp_path / "axis.toml"
    folder.mkdir()
    result = run_cli("--db", prefilled, "select", folder)
    assert_clean_failure(result)  # the command line refuses it before the loader sees it
    assert f"File '{folder}' is a directory" in result.output
    assert table_snapshot(prefilled) == template_snapshot
    from catalog.errors import InputError
    from catalog.select import load_envelope

    with pytest.raises(InputError) as info:  # and so does the Python API
        load_envelope(folder)
    assert [str(p) for p in info.value.problems] == [f"{folder}: is a folder, expected an envelope file (TOML)"]
