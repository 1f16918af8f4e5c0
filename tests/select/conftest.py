"""Fixtures of the selection tests: a small hand-made catalogue and the demo catalogue."""
from __future__ import annotations

import textwrap
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]

# Every motor: R = 1 ohm and Kt = Ke = 0.1 N*m/A at 25 degC, no friction (I0 = 0),
# AlNiCo magnet (beta = -0.0002 /K, catalog.physics MAGNET_MATERIALS), copper winding.
MOTORS = """\
manufacturer,part_number,commutation,magnet_material,nominal_voltage [V],terminal_resistance [Ohm],resistance_reference_temperature [degC],torque_constant [N*m/A],no_load_current [A],rotor_inertia [g*cm^2],thermal_resistance_winding_housing [K/W],thermal_resistance_housing_ambient [K/W],thermal_time_constant_winding [s],thermal_time_constant_motor [s],max_winding_temperature [degC],max_speed [rpm],mass [g],diameter [mm],length [mm],mount
Hand Test,HOTV,brushed,alnico,24,1,25,0.1,0,10,3,7,20,600,155,9000,300,40,60,H40
Hand Test,HEAT,brushed,alnico,24,1,25,0.1,0,10,6,14,20,600,130,9000,300,40,60,H40
Hand Test,GEAR,brushed,alnico,24,1,25,0.1,0,10,3,7,20,600,155,9000,300,40,60,G40
"""
GEARHEADS = """\
manufacturer,part_number,ratio,stages,efficiency,max_continuous_torque [N*m],max_intermittent_torque [N*m],max_input_speed [rpm],inertia [g*cm^2],mass [g],diameter [mm],length [mm],mount
Hand Test,GH10,10,2,0.8,1.0,1.5,6000,0.001,100,40,30,G40
"""


@pytest.fixture(scope="session")
def hand_catalog(tmp_path_factory):
    import catalog

    folder = tmp_path_factory.mktemp("hand")
    (folder / "motors.csv").write_text(MOTORS, encoding="utf-8")
    (folder / "gearheads.csv").write_text(GEARHEADS, encoding="utf-8")
    cat = catalog.open(folder / "c.duckdb")
    cat.import_([folder / "motors.csv", folder / "gearheads.csv"])
    return cat


@pytest.fixture(scope="session")
def demo_catalog(tmp_path_factory):
    import catalog
    from catalog.demo import build

    db = tmp_path_factory.mktemp("demo") / "demo.duckdb"
    build(db, out=lambda *a, **k: None)
    return catalog.open(db)


@pytest.fixture
def envelope_file(tmp_path):
    def _write(text: str, name: str = "e.toml") -> Path:
        path = tmp_path / name
        path.write_text(textwrap.dedent(text).lstrip("\n"), encoding="utf-8")
        return path

    return _write
