"""Untrusted text: part numbers, makers and notes with quotes, semicolons, SQL, control
characters, any script and the schema's full length go in through CSV, YAML and JSON and
come back exactly (import, show, list, sql with parameters, derive); nothing is executed."""
from __future__ import annotations

import csv
import io
import json
import shutil
import uuid

import pytest
import yaml
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

import catalog
from catalog.cli.output import _TERMINAL_ACTIVE as TERMINAL_ACTIVE
from catalog.cli.output import safe_text
from tests.robustness.conftest import run_cli

SQLISH = ["'", '"', "''", "';", "; DROP TABLE records; --", "' OR '1'='1", "\\", "$1", "?", "%s", "{0}",
          "${x}", "/*", "*/", "--", "NULL", "null", "~", "SELECT * FROM record_values", "x'00'",
          "\n", "\r\n", "\r", "\t", "\x1b[31m", "\u202e", "\u2028", "\x85", "\x7f", "\x01", "é", "𝔘𝔫𝔦",
          "Ж", "中文", "🙂", " ", ",", "=1+1", "- ", "#", ": ", "&a", "*a", "!!python/object", "[", "{"]

# every character but NUL (refused as binary data, see the corpus) and lone surrogates
_chars = st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00")
_piece = st.one_of(st.sampled_from(SQLISH), st.text(_chars, min_size=1, max_size=12))


def _text(max_len: int):
    base = st.lists(_piece, min_size=1, max_size=8).map("".join)
    long = st.tuples(base, st.integers(1, max_len)).map(lambda t: (t[0] * max_len)[: t[1]])
    return st.one_of(base, long).map(lambda s: s[:max_len]).filter(lambda s: s.strip())


RECORD = st.fixed_dictionaries({
    "manufacturer": _text(200),  # maxLength of manufacturer, part_number, series in the schema
    "part_number": _text(200),
    "series": _text(200),
    "mount": _text(100),
    "notes": _text(10_000),
})


def _key(rec):
    return rec["manufacturer"].strip().lower(), rec["part_number"].strip().lower()


RECORDS = st.lists(RECORD, min_size=1, max_size=3, unique_by=_key)


def _write(path, fmt: str, records) -> None:
    rows = [{**r, "stall_torque": f"{i + 1} mNm"} for i, r in enumerate(records)]
    if fmt == "csv":
        buf = io.StringIO(newline="")
        writer = csv.DictWriter(buf, fieldnames=list(rows[0]))  # \r\n rows: a lone \r in a cell is quoted
        writer.writeheader()
        writer.writerows(rows)
        path.write_text(buf.getvalue(), encoding="utf-8", newline="")
    elif fmt == "yaml":
        # double-quoted style: PyYAML's default style writes NEL (\x85) raw, which YAML reads as a line break
        path.write_text(yaml.safe_dump({"motors": rows}, allow_unicode=True, width=1 << 30, default_style='"'),
                        encoding="utf-8")
    else:
        path.write_text(json.dumps({"motors": rows}, ensure_ascii=False), encoding="utf-8")


@pytest.fixture(scope="module")
def empty_db(tmp_path_factory):
    """An empty catalogue with its tables and views (copied per example: faster than creating)."""
    from catalog.store import Store

    db = tmp_path_factory.mktemp("empty") / "empty.duckdb"
    with Store(db).write():
        pass
    return db


_SETTINGS = dict(deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])


@settings(max_examples=100, **_SETTINGS)
@given(records=RECORDS, fmt=st.sampled_from(["csv", "yaml", "json"]))
def test_readers_keep_text_exactly(tmp_path, records, fmt):
    """Every reader hands the text on as written; the checked table holds it stripped."""
    from catalog.ingest import read_and_check

    path = tmp_path / f"{uuid.uuid4().hex}.{fmt}"
    _write(path, fmt, records)
    [(table, result, ids)] = read_and_check([path])
    assert result.problems == []
    assert len(set(ids)) == len(records)
    for field in ("manufacturer", "part_number", "series", "mount", "notes"):
        column = table.columns[field]
        assert column.values == [r[field].strip() for r in records]
        assert column.raw_text == [r[field] if r[field].strip() else None for r in records]


# each example runs six commands: shrinking a failure would take minutes, so it is not shrunk
@settings(max_examples=15, phases=[Phase.explicit, Phase.reuse, Phase.generate], **_SETTINGS)
@given(records=RECORDS, fmt=st.sampled_from(["csv", "yaml", "json"]))
def test_text_is_stored_and_returned_exactly(tmp_path, empty_db, records, fmt):
    """Through the store and every catalogue command: values come back as written
    (surrounding whitespace aside, which import strips)."""
    from click.testing import CliRunner

    from catalog.cli import cli

    folder = tmp_path / uuid.uuid4().hex  # tmp_path is shared by the examples of one run
    folder.mkdir()
    db = folder / "text.duckdb"
    shutil.copyfile(empty_db, db)
    path = folder / f"records.{fmt}"
    _write(path, fmt, records)
    result = run_cli("--db", db, "import", path)
    assert result.exit_code == 0, result.output
    want = [{k: v.strip() for k, v in rec.items()} for rec in records]
    # sql with parameters finds the record by its text; the API returns it exactly
    cat = catalog.open(db)
    found = cat.sql("SELECT id FROM motors WHERE manufacturer = ? AND part_number = ? AND notes = ?",
                    params=[want[0]["manufacturer"], want[0]["part_number"], want[0]["notes"]])
    assert len(found) == 1
    first = found["id"].iat[0]
    rtype, man, pn, values, _ = cat.show(first)
    assert (rtype, man, pn) == ("motor", want[0]["manufacturer"], want[0]["part_number"])
    assert values.set_index("field")["raw_text"]["notes"] == records[0]["notes"]  # as written, spaces too
    # the sql command prints every text as stored
    cols = ["manufacturer", "part_number", "series", "mount", "notes"]
    queried = run_cli("--db", db, "sql", f"SELECT {', '.join(cols)} FROM motors ORDER BY id", "--format", "json")
    assert queried.exit_code == 0, queried.output
    assert sorted(tuple(r[c] for c in cols) for r in json.loads(queried.stdout)) == sorted(
        tuple(w[c] for c in cols) for w in want)
    # show prints the record for people: as stored, but every character a terminal would act on
    # (escape sequences, carriage returns, bidi overrides) written as its escape (colour on: click
    # strips nothing itself)
    shown = CliRunner().invoke(cli, ["--db", str(db), "show", first], color=True)
    assert shown.exit_code == 0, shown.output
    out = shown.stdout_bytes.decode()
    assert out.startswith(f"{safe_text(first)}  (motor: {safe_text(man)} {safe_text(pn)})\n")
    assert not TERMINAL_ACTIVE.search(out)
    table = CliRunner().invoke(cli, ["--db", str(db), "list", "motors"], color=True)
    assert table.exit_code == 0 and not TERMINAL_ACTIVE.search(table.stdout_bytes.decode())
    # list --format json prints ids and mounts exactly as stored
    listed = json.loads(run_cli("--db", db, "list", "motors", "--format", "json").stdout)
    assert sorted(m["mount"] for m in listed) == sorted(w["mount"] for w in want)
    # derive rewrites derived values only: every text stays
    assert run_cli("--db", db, "derive").exit_code == 0
    again = run_cli("--db", db, "sql", f"SELECT {', '.join(cols)} FROM motors ORDER BY id", "--format", "json")
    assert again.stdout == queried.stdout


@pytest.mark.parametrize("text, shown", [
    ("M\x1b[2J-1", "M\\x1b[2J-1"),          # clear screen
    ("abc\rXYZ", "abc\\rXYZ"),              # overwrite the line
    ("\u202eevil", "\\u202eevil"),          # right-to-left override
    ("\x9b31m", "\\x9b31m"),                # C1 control sequence introducer
    ("a\tb\nc é 中 🙂", "a\tb\nc é 中 🙂"),  # tab, newline and any script stay
])
def test_text_for_the_terminal_shows_control_characters_as_escapes(text, shown):
    assert safe_text(text) == shown


@settings(max_examples=200, **_SETTINGS)
@given(value=st.text(_chars))
def test_safe_text_leaves_nothing_a_terminal_acts_on(value):
    out = safe_text(value)
    assert not TERMINAL_ACTIVE.search(out)
    if not TERMINAL_ACTIVE.search(value):  # text without them is shown exactly
        assert out == value


@settings(max_examples=40, **_SETTINGS)
@given(value=_text(200))
def test_sql_parameters_are_values_never_sql(prefilled, value):
    """A parameter holding SQL is compared as text: it matches nothing and runs nothing."""
    cat = catalog.open(prefilled)
    found = cat.sql("SELECT ? AS v, count(*) AS n FROM records WHERE part_number = ? OR manufacturer = ?",
                    params=[value, value, value])
    assert found["v"].iat[0] == value and found["n"].iat[0] == 0
    assert cat.summary()["motors"] == 3  # the good records are all there, nothing ran


def test_sql_in_an_identifier_from_a_file_never_reaches_sql(tmp_path):
    """Headers and mapping names are checked against the schema before anything else."""
    path = tmp_path / "evil.csv"
    path.write_text('manufacturer,part_number,"stall_torque; DROP TABLE records; --"\nA,1,5\n', encoding="utf-8")
    result = run_cli("--db", tmp_path / "c.duckdb", "import", path)
    assert result.exit_code == 2
    assert f"error: {path}:1:stall_torque; DROP TABLE records; --: cannot read column header " in result.stderr
    profile = tmp_path / "evil.mapping.yaml"
    profile.write_text("profile: \"x'); DROP TABLE records; --\"\nrecord_type: motor\ncolumns:\n"
                       "  \"A\": {field: \"manufacturer; DROP TABLE records\"}\n", encoding="utf-8")
    result = run_cli("--db", tmp_path / "c.duckdb", "import", path, "--mapping", profile)
    assert result.exit_code == 2
    assert (f"error: {profile}:columns/A/field: 'manufacturer; DROP TABLE records' does not match '^[a-z_]+$'"
            in result.stderr)


@pytest.mark.parametrize("folder", ["catalog/ingest", "catalog/store", "catalog/units", "catalog/validate.py"])
def test_no_sql_is_built_from_text_in_the_import_path(folder):
    """An f-string or concatenation handed to execute()/sql() may only embed names from the
    schema files (the allow-list below, each checked where it is built)."""
    import ast
    from pathlib import Path

    allowed = {  # (file, function): why it is safe
        ("catalog/store/schema.py", "_column_expr"): "field names from schemas/*.json, asserted identifiers",
        ("catalog/store/schema.py", "view_sql"): "view and field names from the schema files",
        ("catalog/store/__init__.py", "_migrate"): "runs MIGRATIONS and view_sql(): constants of schema.py",
        ("catalog/store/derived.py", "derive_in_store"): "scope: one of two constant conditions",
        ("catalog/store/derived.py", "_replace_derived"): "scope: a constant condition of derive_in_store",
        ("catalog/store/derived.py", "_replace_flags"): "scope: a constant condition of derive_in_store",
        ("catalog/ingest/writer.py", "_replace_given"): "same_key: a constant join condition",
        ("catalog/store/__init__.py", "_upgraded_reader"): "runs all_view_sql(): view and field names of the schema",
        ("catalog/store/limits.py", "bounded"): "a temporary folder made there and byte counts (integers)",
    }
    root = Path(__file__).resolve().parents[2]
    target = root / folder
    files = [target] if target.is_file() else sorted(target.rglob("*.py"))
    bad = []
    for file in files:
        rel = file.relative_to(root).as_posix()
        tree = ast.parse(file.read_text(encoding="utf-8"))
        for func in [n for n in ast.walk(tree) if isinstance(n, (ast.FunctionDef, ast.AsyncFunctionDef))]:
            for call in [n for n in ast.walk(func) if isinstance(n, ast.Call)]:
                name = getattr(call.func, "attr", None)
                if name not in ("execute", "sql", "query") or not call.args:
                    continue
                arg = call.args[0]
                # a variable, an f-string, or a concatenation with anything but literals
                dynamic = isinstance(arg, (ast.Name, ast.JoinedStr)) or (isinstance(arg, ast.BinOp) and any(
                    isinstance(n, (ast.Name, ast.JoinedStr, ast.Call, ast.Attribute, ast.Subscript))
                    for n in ast.walk(arg)))
                if dynamic and (rel, func.name) not in allowed:
                    bad.append(f"{rel}:{call.lineno} in {func.name}()")
    assert bad == []


# -- out again: select and the spreadsheet exports ---------------------------------------------
_PHYSICS = {"nominal_voltage": "24 V", "terminal_resistance": "2 Ohm", "torque_constant": "30 mNm/A",
            "no_load_current": "0.05 A", "rotor_inertia": "20 g*cm^2",
            "thermal_resistance_winding_housing": "3 K/W", "thermal_resistance_housing_ambient": "9 K/W",
            "thermal_time_constant_winding": "10 s", "thermal_time_constant_motor": "600 s",
            "max_winding_temperature": "125 degC", "max_speed": "8000 rpm"}
_POINT_ENVELOPE = """
name = "untrusted"
[supply]
nominal_voltage = "24 V"
[[points]]
name = "run"
kind = "continuous"
torque = "10 mN*m"
speed = "1000 rpm"
[gearing]
direct = true
catalogue = false
"""
# spreadsheet-safe text must be exact text; XLSX cannot hold C0 controls at all (XML 1.0)
_FORMULAISH = st.sampled_from(["=1+2", "+A1", "-2+3", "@SUM(A1:A2)", "=HYPERLINK(\"http://x\",\"y\")",
                               "\t=1", "=cmd|' /C calc'!A0"])
_CELL = st.one_of(_FORMULAISH, _text(60), st.tuples(_FORMULAISH, _text(20)).map("".join))


@settings(max_examples=12, phases=[Phase.explicit, Phase.reuse, Phase.generate], **_SETTINGS)
@given(texts=st.lists(st.fixed_dictionaries({"manufacturer": _CELL, "part_number": _CELL, "notes": _CELL}),
                      min_size=1, max_size=3, unique_by=_key))
def test_selection_and_exports_keep_text_and_never_a_formula(tmp_path, empty_db, texts):
    """Text that a spreadsheet would run (=, +, -, @ first) goes through import, select and every
    export: JSON keeps it exactly, CSV puts an apostrophe in front, XLSX writes a text cell with
    the quote-prefix flag (the text itself unchanged); nothing is ever a formula cell."""
    import openpyxl

    from catalog.export.writers import FORMULA_PREFIXES, neutralise, xlsx_text

    folder = tmp_path / uuid.uuid4().hex
    folder.mkdir()
    db = folder / "text.duckdb"
    shutil.copyfile(empty_db, db)
    path = folder / "records.json"
    path.write_text(json.dumps({"motors": [{**t, **_PHYSICS} for t in texts]}, ensure_ascii=False),
                    encoding="utf-8")
    assert run_cli("--db", db, "import", path).exit_code == 0
    want = {(t["manufacturer"].strip(), t["part_number"].strip()): t["notes"].strip() for t in texts}
    env = folder / "env.toml"
    env.write_text(_POINT_ENVELOPE, encoding="utf-8")
    for name in ("short.xlsx", "short.json"):
        result = run_cli("--db", db, "select", env, "--out", folder / name)
        assert result.exit_code in (0, 1), result.output
    for name in ("motors.xlsx", "motors.csv", "motors.json"):
        assert run_cli("--db", db, "export", "motors", "--out", folder / name).exit_code == 0

    doc = json.loads((folder / "motors.json").read_text(encoding="utf-8"))
    assert {(r["manufacturer"], r["part_number"]): r["notes"] for r in doc["records"]} == want
    with (folder / "motors.csv").open(encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert {(r["manufacturer"], r["part_number"]): r["notes"] for r in rows} == {
        (neutralise(m), neutralise(p)): neutralise(n) for (m, p), n in want.items()}

    def cells(book):
        for ws in openpyxl.load_workbook(book).worksheets:
            for row in ws.iter_rows():
                for c in row:
                    if isinstance(c.value, str):
                        assert c.data_type == "s", f"{ws.title}!{c.coordinate} is a {c.data_type} cell"
                        assert c.quotePrefix == c.value.startswith(FORMULA_PREFIXES) or not \
                            c.value.startswith(FORMULA_PREFIXES), f"{ws.title}!{c.coordinate} {c.value!r}"
                        yield c.value

    seen = set(cells(folder / "motors.xlsx"))   # controls XLSX cannot hold are shown as escapes
    for (m, p), n in want.items():
        assert {xlsx_text(m), xlsx_text(p), xlsx_text(n)} <= seen
    seen = set(cells(folder / "short.xlsx"))   # shortlist or rejected sheet: makers and part numbers
    assert {xlsx_text(t) for pair in want for t in pair} <= seen
    short = json.loads((folder / "short.json").read_text(encoding="utf-8"))
    rows = short["records"] + short["tables"]["rejected"]["records"]
    assert {(r["manufacturer"], r["part_number"]) for r in rows} == set(want)  # JSON: exactly as stored
