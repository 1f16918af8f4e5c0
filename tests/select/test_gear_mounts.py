"""A gearhead sold for several motor flanges: one record with a list of mounts, fitted to each."""
from __future__ import annotations

import pytest

MOTORS = """\
manufacturer,part_number,commutation,magnet_material,nominal_voltage [V],terminal_resistance [Ohm],resistance_reference_temperature [degC],torque_constant [N*m/A],no_load_current [A],rotor_inertia [g*cm^2],thermal_resistance_winding_housing [K/W],thermal_resistance_housing_ambient [K/W],thermal_time_constant_winding [s],thermal_time_constant_motor [s],max_winding_temperature [degC],max_speed [rpm],mass [g],diameter [mm],length [mm],mount
Mount Test,M22,brushed,ndfeb,24,1,25,0.1,0,10,3,7,20,600,155,9000,200,22,60,F22
Mount Test,M28,brushed,ndfeb,24,1,25,0.1,0,10,3,7,20,600,155,9000,300,28,60,F28
Mount Test,M32,brushed,ndfeb,24,1,25,0.1,0,10,3,7,20,600,155,9000,400,32,60,F32
"""
GEARS_CSV = """\
manufacturer,part_number,ratio,stages,efficiency,max_continuous_torque [N*m],max_intermittent_torque [N*m],max_input_speed [rpm],mass [g],mount
Mount Test,G10,10,2,0.8,1.0,1.5,8000,100,F22; F28
"""
GEARS_YAML = """\
gearheads:
  - manufacturer: Mount Test
    part_number: G20
    ratio: 20
    efficiency: 0.75
    max_continuous_torque: 1.0 N*m
    max_intermittent_torque: 1.5 N*m
    max_input_speed: 8000 rpm
    mount: [F28, F32]
"""
ENVELOPE = """\
name = "mounts"
[supply]
nominal_voltage = "24 V"
[environment]
ambient_temperature = "25 degC"
[gearing]
direct = false
catalogue = true
[[points]]
name = "run"
torque = "0.5 N*m"
speed = "20 rpm"
kind = "continuous"
[ranking]
keys = ["mass"]
"""


@pytest.fixture
def mounted(tmp_path, write):
    import catalog

    cat = catalog.open(tmp_path / "m.duckdb")
    cat.import_([write("motors.csv", MOTORS), write("gears.csv", GEARS_CSV), write("gears.yaml", GEARS_YAML)])
    return cat


def test_one_record_lists_every_mount(mounted):
    g = mounted.gearheads().set_index("id")
    assert len(g) == 2                                    # one record each, no duplicate part numbers
    assert g.loc["mount-g10", "mount"] == "F22; F28"
    assert g.loc["mount-g20", "mount"] == "F28; F32"      # a YAML list is read as the list it is


def test_the_gearhead_fits_each_listed_flange(mounted, write):
    sel = mounted.select(write("mounts.toml", ENVELOPE))
    pairs = {(m, g) for m, g in zip(sel.table["motor"], sel.table["gear"])}
    assert pairs == {("mount-m22", "mount-g10"), ("mount-m28", "mount-g10"), ("mount-m28", "mount-g20"),
                     ("mount-m32", "mount-g20")}


@pytest.mark.parametrize("cell", ["F22;;F28", "; F22", "F22;"])
def test_an_empty_mount_in_the_list_is_refused(tmp_path, write, cell):
    import catalog

    bad = write("bad.csv", GEARS_CSV.replace("F22; F28", cell))
    report = catalog.open(tmp_path / "x.duckdb").validate([bad])
    (problem,) = report.problems
    assert str(problem) == (f"{bad}:2:mount: {cell!r} does not match the expected form of mount codes separated by "
                            "';', none empty (e.g. 'F22; F28')")
