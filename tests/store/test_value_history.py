"""`history ID` / `Catalog.history`: every replaced value of a catalogue record with its time and batch."""
from __future__ import annotations

import pytest

from catalog.errors import NotFound

V1 = """\
manufacturer,part_number,nominal_voltage [V],stall_torque [mNm],mass [g],commutation
Hist Test,H-1,24,350,180,brushed
"""
V2 = """\
manufacturer,part_number,nominal_voltage [V],stall_torque [mNm],mass [kg],commutation
Hist Test,H-1,24,360,0.18,brushless
"""


def test_a_reimport_keeps_old_values_with_time_and_batch(cat, write):
    first = cat.import_(write("v1.csv", V1), derive=False)
    second = cat.import_(write("v2.csv", V2), derive=False)
    assert cat.history("hist-h-1")["changed"].all()   # by default only the values that changed
    h = cat.history("hist-h-1", changed_only=False)
    changed = h[h["changed"]].set_index("field")
    assert sorted(changed.index) == ["commutation", "mass", "stall_torque"]
    st = changed.loc["stall_torque"]
    assert st["old_value"] == pytest.approx(0.35) and st["new_value"] == pytest.approx(0.36)
    assert (st["old_raw"], st["new_raw"], st["old_batch"], st["replaced_by_batch"]) == \
        ("350", "360", first.batch_id, second.batch_id)
    assert st["old_files"].endswith("v1.csv") and st["replaced_by_files"].endswith("v2.csv")
    assert st["replaced_by_kind"] == "import" and st["replaced_at"] is not None
    mass = changed.loc["mass"]  # same SI value, written differently: still a change of the record
    assert mass["old_value"] == pytest.approx(mass["new_value"])
    assert (mass["old_raw"], mass["new_raw"]) == ("180", "0.18")
    assert changed.loc["commutation", ["old_text", "new_text"]].tolist() == ["brushed", "brushless"]
    assert not h.set_index("field").loc["nominal_voltage", "changed"]  # written again unchanged
    assert h.attrs["record"]["created_batch"] == first.batch_id
    assert h.attrs["record"]["updated_batch"] == second.batch_id


def test_three_versions_chain_old_to_new(cat, write):
    cat.import_(write("v1.csv", V1), derive=False)
    cat.import_(write("v2.csv", V2), derive=False)
    cat.import_(write("v3.csv", V2.replace("360", "370")), derive=False)
    h = cat.history("hist-h-1")
    st = h[h["field"] == "stall_torque"]
    assert st[["old_raw", "new_raw"]].values.tolist() == [["350", "360"], ["360", "370"]]


def test_history_of_an_unknown_record(cat, write):
    cat.import_(write("v1.csv", V1), derive=False)
    with pytest.raises(NotFound, match="did you mean hist-h-1"):
        cat.history("hist-h-2")
    assert cat.history("hist-h-1").empty


DERIVABLE = """\
manufacturer,part_number,nominal_voltage [V],terminal_resistance [Ohm],torque_constant [mNm/A]
Hist Test,H-9,24,2.0,30
"""


def test_a_derived_value_that_changes_is_kept_in_history(cat, write):
    cat.import_(write("d.csv", DERIVABLE))
    cat.derive()
    assert cat.history("hist-h-9").empty  # deriving again unchanged moves nothing aside
    # a value derived by an older relation table (simulated): the next derive replaces it
    with cat.store.write() as con:
        con.execute("UPDATE record_values SET value_num = 0.031 WHERE record_id = 'hist-h-9' "
                    "AND field = 'back_emf_constant'")
    outcome = cat.derive()
    h = cat.history("hist-h-9").set_index("field")
    assert list(h.index) == ["back_emf_constant"]
    row = h.loc["back_emf_constant"]
    assert row["old_value"] == pytest.approx(0.031) and row["new_value"] == pytest.approx(0.030)
    assert row["replaced_by_kind"] == "derive" and bool(row["changed"])
    assert outcome.derived > 0
