"""Text fields are read in any case and by their documented synonyms; the value is stored as the
schema's enum value and the text as written is kept.

The spellings are what datasheets print for the magnet materials of IEC 60404-8-1 (NdFeB, SmCo,
hard ferrite, AlNiCo; from memory), for commutation and for the basis of brushless constants.
"""
from __future__ import annotations

import re

import numpy as np
import pytest
from click.testing import CliRunner

from catalog import physics as ph
from catalog.cli import cli
from catalog.fields import fields_for
from tests.conftest import table_snapshot

CSV = """
manufacturer,part_number,commutation,construction,magnet_material,constant_basis,nominal_voltage [V],terminal_resistance [Ohm],torque_constant [mNm/A]
Testwerk,T-1,Brushless,Slotless,NdFeB,Line-to-Line RMS,24,2,20
Testwerk,T-2,BRUSHED,Iron Core,SmCo,,12,1,15
Testwerk,T-3,BLDC,ironless,Samarium-Cobalt,phase_to_phase peak,48,4,40
Testwerk,T-4,brushed,coreless, neodymium ,,24,2,20
"""


def values(cat, field):
    rows = cat.sql("SELECT record_id, value_text, raw_text FROM record_values "
                   f"WHERE field = '{field}' ORDER BY record_id")
    return {r.record_id: (r.value_text, r.raw_text) for r in rows.itertuples()}


def test_any_case_and_synonyms_store_the_enum_value_and_keep_the_text(cat, write):
    cat.import_([write("m.csv", CSV)])
    assert values(cat, "commutation") == {
        "testwerk-t-1": ("brushless", "Brushless"), "testwerk-t-2": ("brushed", "BRUSHED"),
        "testwerk-t-3": ("brushless", "BLDC"), "testwerk-t-4": ("brushed", "brushed")}
    assert values(cat, "construction") == {
        "testwerk-t-1": ("slotless", "Slotless"), "testwerk-t-2": ("iron-core", "Iron Core"),
        "testwerk-t-3": ("coreless", "ironless"), "testwerk-t-4": ("coreless", "coreless")}
    assert values(cat, "magnet_material") == {
        "testwerk-t-1": ("ndfeb", "NdFeB"), "testwerk-t-2": ("smco", "SmCo"),
        "testwerk-t-3": ("smco", "Samarium-Cobalt"), "testwerk-t-4": ("ndfeb", " neodymium ")}  # as written
    assert values(cat, "constant_basis") == {
        "testwerk-t-1": ("line-to-line-rms", "Line-to-Line RMS"),
        "testwerk-t-3": ("line-to-line-peak", "phase_to_phase peak")}


def test_the_stored_value_drives_the_physics(cat, write):
    cat.import_([write("m.csv", CSV)])
    m = cat.motors().set_index("id")
    # magnet coefficient of the material (IEC 60404-8-1 typical values, catalog.physics table)
    assert ph.magnet_coefficient(m.loc["testwerk-t-1", "magnet_material"]) == ph.magnet_coefficient("ndfeb")
    assert ph.magnet_coefficient(m.loc["testwerk-t-2", "magnet_material"]) == ph.magnet_coefficient("smco")
    # line-to-line constants (read from "Line-to-Line RMS") are not taken as Kt = Ke
    assert np.isnan(m.loc["testwerk-t-1", "back_emf_constant"])
    assert m.loc["testwerk-t-2", "back_emf_constant"] == pytest.approx(0.015, rel=1e-12)   # Ke = Kt in SI


def test_an_unknown_word_is_refused_with_one_line_and_nothing_is_stored(tmp_path, write):
    db = tmp_path / "c.duckdb"
    path = write("bad.csv", "manufacturer,part_number,magnet_material\nTestwerk,T-9,Unobtainium\n")
    before = table_snapshot(db)
    r = CliRunner().invoke(cli, ["--db", str(db), "import", str(path)])
    assert r.exit_code == 2
    errors = [line for line in r.output.splitlines() if line.startswith("error:") or "bad.csv:" in line]
    assert any(re.search(r"bad\.csv:2:magnet_material: 'Unobtainium' is not allowed, expected one of ndfeb, "
                         r"ndfeb_bonded, smco, ferrite, alnico, unknown", line) for line in errors), r.output
    assert "Traceback" not in r.output
    assert table_snapshot(db) == before


def test_yaml_records_are_read_the_same_way(cat, write):
    path = write("m.yaml", """
        motors:
          - manufacturer: Testwerk
            part_number: Y-1
            commutation: Brushless
            magnet_material: NdFeB
            constant_basis: DC
        """)
    cat.import_([path])
    assert values(cat, "magnet_material") == {"testwerk-y-1": ("ndfeb", "NdFeB")}
    assert values(cat, "constant_basis") == {"testwerk-y-1": ("dc-equivalent", "DC")}


@pytest.mark.parametrize("record_type", ["motor", "gearhead"])
def test_every_synonym_names_one_enum_value(record_type):
    for f in fields_for(record_type).values():
        for spelling, value in f.synonyms:
            assert f.enum is not None and value in f.enum, (f.name, spelling, value)
            assert f.canonical_texts([spelling.upper()]) == [value]
        if f.enum:
            assert f.canonical_texts(list(f.enum)) == list(f.enum)
            assert f.canonical_texts(["not a value"]) == ["not a value"]
