"""The bulk paths of an import give what the general paths give.

* a plain CSV file read column by column (pyarrow) reads as the :mod:`csv` reader reads it,
  and normalises to the same values, texts, units and messages;
* default ids made at once equal :func:`default_id` of each row;
* records new to the catalogue, whose constants are derived from their columns in memory
  and inserted at once, end up exactly as through the store path (write the given
  values, read them back, derive), alone and mixed with updates of stored records.
"""
from __future__ import annotations

import numpy as np
import pytest

import catalog
import catalog.ingest.readers as readers
import catalog.ingest.writer as writer
from catalog.errors import InputError
from catalog.ingest.importer import _default_ids, default_id, read_and_check
from catalog.ingest.normalise import normalise
from tests.robustness.conftest import fingerprint

HEAD = "manufacturer,part_number,stall_torque,nominal_voltage,notes\n"
CSV_CASES = {
    "plain": HEAD + "A,1,5 mNm,12 V,x\nA,2,6 oz-in,24 VDC,\n",
    "crlf": HEAD.replace("\n", "\r\n") + "A,1,5 mNm,12 V,x\r\nA,2,6 mNm,24 V,y\r\n",
    "byte order mark": "\ufeff" + HEAD + "A,1,5 mNm,12 V,x\n",
    "no final line break": HEAD + "A,1,5 mNm,12 V,x",
    "blank lines at the end": HEAD + "A,1,5 mNm,12 V,x\n\n\r\n\n",
    "blank line inside": HEAD + "A,1,5 mNm,12 V,x\n\nA,2,6 mNm,24 V,y\n",
    "blank record inside": HEAD + "A,1,5 mNm,12 V,x\n , ,,\t,\nA,2,6 mNm,24 V,y\n",
    "spaces around cells": HEAD + " A , 1 ,\t5 mNm , 12\u00a0V ,  \n",
    "odd whitespace and separators": HEAD + "A\u3000,1\u2028x,5\u2009mNm,12 V\x0b,\x1c\x85\n",
    "semicolons": HEAD.replace(",", ";") + "A;1;5 mNm;12 V;x\n",
    "tabs": HEAD.replace(",", "\t") + "A\t1\t5 mNm\t12 V\tx\n",
    "quotes": HEAD + 'A,1,"5 mNm","12 V","a, b"\n',
    "more cells": HEAD + "A,1,5 mNm,12 V,x,extra\n",
    "more empty cells": HEAD + "A,1,5 mNm,12 V,x,,\n",
    "fewer cells": HEAD + "A,1,5 mNm\n",
    "header only": HEAD,
    "lone carriage returns": HEAD.replace("\n", "\r") + "A,1,5 mNm,12 V,x\r",
    "empty header cells": "manufacturer,,part_number,stall_torque\nA,,1,5 mNm\n",
    "blank header": " , \nA,1\n",
    "one column": "manufacturer\nA\n  \nB\n",
    "errors in cells": HEAD + "A,1,1.5 N,12 N,x\nA,1,ten mNm,1e999 V,y\nA,3,2 kg/cm,1 500 V,z\nA,4,nan,-1 V,\n",
    "errors in quoted cells": HEAD + "A,1,\"1,5 mNm\",12 N,x\nA,1,ten mNm,1e999 V,y\n",
    "cell above the csv limit": HEAD + "A,1,5 mNm,12 V," + "x" * 131_073 + "\n",
}
COLUMN_WISE = {"plain", "crlf", "byte order mark", "no final line break", "blank lines at the end",
               "spaces around cells", "odd whitespace and separators", "semicolons", "tabs",
               "header only", "empty header cells", "errors in cells"}


def _read(path, monkeypatch=None):
    try:
        return read_file_tables(path)
    except InputError as exc:
        return ("error", [str(p) for p in exc.problems])


def read_file_tables(path):
    raws = readers.read_file(path)
    return [(r.headers, list(r.rows), r.row_numbers, r.header_row, r.record_type, r.units,
             [str(p) for p in r.problems]) for r in raws], raws


def _normalised(raws):
    out = []
    for raw in raws:
        table = normalise(raw)
        cols = {f: (np.asarray(c.values, dtype=float).view(np.int64).tolist()
                    if isinstance(c.values, np.ndarray) else list(c.values), c.raw_text, c.raw_unit)
                for f, c in table.columns.items()}
        out.append((table.record_type, cols, [str(p) for p in table.problems],
                    [str(p) for p in table.warnings], table.converted))
    return out


@pytest.mark.parametrize("case", list(CSV_CASES))
def test_plain_csv_read_column_wise_as_csv_reads_it(case, tmp_path, monkeypatch):
    path = tmp_path / "m.csv"
    path.write_bytes(CSV_CASES[case].encode("utf-8"))
    fast = _read(path)
    monkeypatch.setattr(readers, "_read_csv_columns", lambda *args: None)
    slow = _read(path)
    assert fast[0] == slow[0]
    if fast[0] == "error":
        assert case not in COLUMN_WISE
        return
    assert all(raw.columns is not None for raw in fast[1]) == (case in COLUMN_WISE)
    assert _normalised(fast[1]) == _normalised(slow[1])


def test_column_wise_rows_are_lists_of_cells(tmp_path):
    path = tmp_path / "m.csv"
    path.write_text(CSV_CASES["plain"], encoding="utf-8")
    raw = readers.read_file(path)[0]
    assert raw.columns is not None and len(raw.rows) == 2 and raw.rows
    assert raw.rows[1] == raw.rows[-1] == ["A", "2", "6 oz-in", "24 VDC", ""]
    assert raw.rows[0:1] == [["A", "1", "5 mNm", "12 V", "x"]]
    with pytest.raises(IndexError):
        raw.rows[2]


@pytest.mark.parametrize("maker, part", [
    ("Quill Motion", "QM-22/8"), ("  Acme Drives ", " m 1 "), ("Émile Moteurs", "É-1"), ("İnan", "İ-2"),
    ("Kelvin", "K\u212a-3"), ("ß-Werk", "Straße 5"), ("A", "..."), ("--", "x"), ("Zeta", "Z\u00a010"),
    ("Σ Motion", "ΣΣ"), ("x", "ǅ"), (None, "1"), ("A", None), ("", "1"),
])
def test_default_ids_at_once_as_one_by_one(maker, part):
    makers = [maker, "Plain Maker", maker]
    parts = [part, "P-1", "Q 2"]
    expected = [default_id(m, p) if m and p else None for m, p in zip(makers, parts)]
    assert _default_ids(makers, parts) == expected


def test_ids_and_keys_of_one_file_are_known_to_the_next(write):
    first = write("a.csv", "manufacturer,part_number,stall_torque\nAcme Test,M-1,1 N*m\nAcme Test,M-2,2 N*m\n")
    second = write("b.csv", "manufacturer,part_number,stall_torque\nACME TEST ,m-2,1 N*m\nAcme Other,M-1,1 N*m\n")
    checked = read_and_check([first, second])
    assert checked[0][2] == ["acme-m-1", "acme-m-2"] and not checked[0][1].problems
    assert checked[1][2] == ["acme-m-2", "acme-other-m-1"]
    assert [str(p) for p in checked[1][1].problems] == [
        f"{second}:2:part_number: 'm-2' of 'ACME TEST' appears twice in this import "
        f"(first in {first} at row 3), expected once"]


# -- new records: derived in memory and inserted at once, as through the store ------------------

MOTOR_FIELDS = ("nominal_voltage [V]", "terminal_resistance [Ohm]", "torque_constant [mNm/A]",
                "no_load_current [mA]", "stall_current [A]", "stall_torque [mNm]", "no_load_speed [rpm]",
                "terminal_inductance [mH]", "rotor_inertia [g*cm^2]", "max_winding_temperature [degC]",
                "thermal_resistance_winding_housing [K/W]", "thermal_resistance_housing_ambient [K/W]",
                "speed_constant [rpm/V]", "max_efficiency [%]", "pole_pairs")


def _motors(path, seed: int, n: int, start: int = 0, maker: str = "Bulk Test Motors"):
    """``n`` motors with a random subset of consistent (or, now and then, inconsistent) fields."""
    rng = np.random.default_rng(seed)
    lines = ["manufacturer,part_number,constant_basis,commutation," + ",".join(MOTOR_FIELDS)]
    for i in range(start, start + n):
        v = rng.choice([6.0, 12.0, 24.0])
        r = 10 ** rng.uniform(-1, 1)
        kt = 10 ** rng.uniform(-2, -1)
        i0 = v / r * rng.uniform(0.01, 0.05)
        is_ = v / r * (1.3 if rng.random() < 0.15 else 1.0)  # now and then a datasheet typo: a flag
        w0 = (v - r * i0) / kt
        cells = [v, r, kt * 1e3, i0 * 1e3, is_, kt * (v / r - i0) * 1e3, w0 * 30 / np.pi, r * 1e-3 * 1e3,
                 rng.uniform(1, 100), 125, rng.uniform(1, 10), rng.uniform(5, 30), 1 / (kt * np.pi / 30),
                 rng.uniform(50, 90), rng.integers(1, 8)]
        keep = rng.random(len(cells)) < 0.6
        row = [f"{c:.6g}" if k else "" for c, k in zip(cells, keep)]
        basis = rng.choice(["", "", "", "line-to-line-rms", "dc-equivalent"])
        commutation = "brushless" if basis else rng.choice(["brushed", ""])
        lines.append(f"{maker},BT-{i:04d},{basis},{commutation}," + ",".join(row))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _gearheads(path, n: int):
    lines = ["manufacturer,part_number,ratio,stages,efficiency [%],max_continuous_torque [N*m]"]
    lines += [f"Bulk Test Gears,BG-{i},{4 + i},{1 + i % 3},{80 + i % 10},{0.5 + i / 10}" for i in range(n)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _through_the_store(monkeypatch):
    """Take every record of an import through the store path, as if the catalogue held it."""
    real = writer._held_before

    def everything_held(con):
        stored, leftovers = real(con)
        ids = {r for (r,) in con.execute("SELECT record_id FROM incoming_records").fetchall()}
        return stored, leftovers | (ids - stored)

    monkeypatch.setattr(writer, "_held_before", everything_held)


def _both_ways(monkeypatch, tmp_path, run) -> dict:
    """``run(cat)`` on a new catalogue along the bulk path and along the store path:
    {way: (what run returned, fingerprint of the catalogue)}."""
    out = {}
    for way in ("bulk", "store"):
        with monkeypatch.context() as m:
            if way == "store":
                _through_the_store(m)
            cat = catalog.open(tmp_path / f"{way}.duckdb")
            out[way] = (run(cat), fingerprint(cat.path))
    return out


def _report(report):
    return (report.created, report.updated, report.values, report.converted, report.derived,
            [str(f) for f in report.flags], [repr(f) for f in report.flags])


@pytest.mark.parametrize("chunk", [7, writer.CHUNK_ROWS])
def test_new_records_derive_and_store_as_through_the_store(tmp_path, monkeypatch, chunk):
    monkeypatch.setattr(writer, "CHUNK_ROWS", chunk)
    first = [_motors(tmp_path / "m1.csv", 1, 40), _gearheads(tmp_path / "g1.csv", 5)]
    # second import: 25 of the first motors again (fields differ: values not in the file stay),
    # new motors with the same maker and with another, and new gearheads
    second = [_motors(tmp_path / "m2.csv", 2, 45, start=15), _motors(tmp_path / "m3.csv", 3, 9, maker="Other Co"),
              _gearheads(tmp_path / "g2.csv", 8)]
    outcomes = _both_ways(monkeypatch, tmp_path, lambda cat: [
        _report(cat.import_(first)), _report(cat.import_(second)),
        _report(cat.import_(second[:1]))])  # and once more: nothing changes
    bulk, store = outcomes["bulk"], outcomes["store"]
    assert bulk[0] == store[0]
    assert bulk[1] == store[1]
    reports = bulk[0]
    assert reports[0][:2] == (45, 0) and reports[1][:2] == (32, 30) and reports[2][:2] == (0, 45)
    assert reports[0][4] > 0 and reports[1][5], "the data derives values and flags something"


def test_import_without_deriving_as_through_the_store(tmp_path, monkeypatch):
    data = [_motors(tmp_path / "m1.csv", 4, 12), _gearheads(tmp_path / "g1.csv", 3)]
    outcomes = _both_ways(monkeypatch, tmp_path, lambda cat: _report(cat.import_(data, derive=False)))
    assert outcomes["bulk"] == outcomes["store"]
    created, derived = outcomes["bulk"][0][0], outcomes["bulk"][0][4]
    assert derived == 0 and created == 15
