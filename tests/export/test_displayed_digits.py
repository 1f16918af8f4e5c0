"""What a person sees in the spreadsheet: every shown number keeps its significant digits.

The workbooks are opened by LibreOffice (headless) and saved as CSV "as shown", so
the cells are read as formatted text, the way a person reads them; each is compared
with the number stored in the cell.  Every shown number must keep at least three
significant digits, and as many as the datasheet gave (up to six) where it gave more.
"""
from __future__ import annotations

import csv
import re
import subprocess

import pytest
from click.testing import CliRunner

from catalog.cli import cli

NUMBER = re.compile(r"^-?(\d+)(?:\.(\d+))?(?:E([-+]\d+))?$")


def lo_sheets_as_shown(soffice, path, tmp_path) -> dict:
    """Sheet title → rows of ``path`` as LibreOffice shows them (formatted text, US English)."""
    conv = tmp_path / f"shown-{path.stem}"
    # UTF-8, en-US, "save cell contents as shown", every sheet to its own file
    opts = "44,34,76,1,,1033,false,true,true,false,false,-1"
    subprocess.run([soffice, f"-env:UserInstallation=file://{tmp_path / 'lo-profile'}", "--headless",
                    "--convert-to", f"csv:Text - txt - csv (StarCalc):{opts}", "--outdir", str(conv), str(path)],
                   check=True, capture_output=True, timeout=240)
    out = {}
    for found in conv.glob("*.csv"):
        title = found.stem[len(path.stem) + 1:]
        out[title] = list(csv.reader(found.read_text(encoding="utf-8").splitlines()))
    return out


def shown_digits(text: str) -> int:
    """Significant digits a shown number carries (``'0.450'`` → 3, ``'350'`` → 3, ``'1.23E-05'`` → 3)."""
    m = NUMBER.match(text)
    assert m, f"not a shown number: {text!r}"
    return len((m.group(1) + (m.group(2) or "")).lstrip("0")) or 1


def check_sheet(shown_rows, ws, wanted=None) -> int:
    """Compare every numeric cell of ``ws`` (openpyxl) with its shown text; returns the count checked.

    ``wanted(row_values, header) -> int`` gives the digits a cell must keep (default 3).
    """
    ours = [[c.value for c in r] for r in ws.iter_rows()]
    assert shown_rows[0] == ours[0]
    assert len(shown_rows) == len(ours)
    checked = 0
    for theirs, mine in zip(shown_rows[1:], ours[1:]):
        for j, (text, value) in enumerate(zip(theirs, mine)):
            if isinstance(value, bool) or not isinstance(value, (int, float)) or value == 0:
                continue
            checked += 1
            shown = float(text)
            if shown == value:          # shown exactly (a whole number, a count): nothing hidden
                continue
            need = wanted(mine, ours[0][j]) if wanted else 3
            assert shown_digits(text) >= need, (ours[0][j], text, value, need)
            # the shown number is the stored one rounded to the digits shown
            m = NUMBER.match(text)
            decimals = len(m.group(2) or "") - int(m.group(3) or 0)
            assert abs(shown - value) <= 0.5 * 10 ** -decimals * (1 + 1e-9) + 1e-12 * abs(value), \
                (ours[0][j], text, value)
    return checked


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)


@pytest.mark.parametrize("kind, units", [("motors", "metric"), ("motors", "si"), ("gearheads", "imperial")])
def test_catalogue_numbers_keep_their_digits(demo_db, demo_cat, tmp_path, need, kind, units):
    import openpyxl

    from catalog.export.columns import given_digits

    soffice = need("soffice", "libreoffice")
    out = tmp_path / f"{kind}-{units}.xlsx"
    r = run("--db", demo_db, "export", kind, "--out", out, "--units", units)
    assert r.exit_code == 0, r.output
    given = demo_cat.sql("SELECT record_id, field, raw_text FROM record_values WHERE origin = 'given' "
                         "AND value_num IS NOT NULL")
    digits = {(a, b): given_digits(t) for a, b, t in zip(given["record_id"], given["field"], given["raw_text"])}
    wb = openpyxl.load_workbook(out)
    shown = lo_sheets_as_shown(soffice, out, tmp_path)
    header = [c.value for c in wb[kind][1]]

    def wanted(row, head):
        field = head.split(" [")[0]
        return digits.get((row[header.index("id")], field), 3)

    n = check_sheet(shown[kind], wb[kind], wanted)
    assert n > 200
    # the cells the datasheet gave four or more digits for really show them
    assert any(v >= 4 for v in digits.values())
    n_prov = check_sheet(shown["provenance"], wb["provenance"])
    assert n_prov > 500


def test_selection_numbers_keep_their_digits(wheel, demo_cat, tmp_path, need):
    import openpyxl

    from catalog.export import write_selection

    soffice = need("soffice", "libreoffice")
    out = write_selection(wheel, tmp_path / "wheel.xlsx", catalog=demo_cat)
    wb = openpyxl.load_workbook(out)
    shown = lo_sheets_as_shown(soffice, out, tmp_path)
    total = 0
    for title in ("shortlist", "rejected", "envelope", "provenance"):
        total += check_sheet(shown[title], wb[title])
    assert total > 300


def test_small_values_are_not_rounded_away(tmp_path, need):
    """The values that used to show as 1, 0, 7 and 0.0 (one format per column)."""
    import openpyxl

    from catalog.export.columns import Table, quantity_column
    from catalog.export.writers import write_tables_to_file

    soffice = need("soffice", "libreoffice")
    table = Table("t", [
        quantity_column("drive_voltage_drop", [0.5, 12.0, 48.0], "voltage", "metric"),
        quantity_column("terminal_inductance", [0.00045, 0.012, 0.0021], "inductance", "metric"),
        quantity_column("terminal_inductance_si", [0.00045, 0.012, 0.0021], "inductance", "si"),
        quantity_column("mass", [0.0121, 2.5, 0.4], "mass", "metric"),
    ])
    path = write_tables_to_file([table], tmp_path / "small.xlsx")
    rows = lo_sheets_as_shown(soffice, path, tmp_path)["t"]
    assert rows[0] == ["drive_voltage_drop [V]", "terminal_inductance [mH]", "terminal_inductance_si [H]",
                       "mass [g]"]
    assert [r[0] for r in rows[1:]] == ["0.500", "12.0", "48.0"]
    assert [r[1] for r in rows[1:]] == ["0.450", "12.0", "2.10"]
    assert [r[2] for r in rows[1:]] == ["0.000450", "0.0120", "0.00210"]
    assert [r[3] for r in rows[1:]] == ["12.1", "2500", "400"]
    assert check_sheet(rows, openpyxl.load_workbook(path)["t"]) == 12
