"""Brushless constants stated line-to-line: converted to the DC-equivalent model, or refused, never misread.

References: a three-phase sinusoidal machine computed sample by sample here
(phase back-EMFs E·sin(θ − k·120°), currents in phase with them; the
line-to-line peak is the largest |e_a − e_b|, RMS values are root-mean-squares
of the samples, the torque is the power Σ e·i over ω): an independent check
of the conversion factors.  The hand cases use the DC machine equations
V = R·I + Ke·ω, T = Kt·I (textbook chapter on DC machines) and the peak factor
√2 of a sinusoid (IEC 60050-103).
"""
from __future__ import annotations

import numpy as np
import pytest
from click.testing import CliRunner

from catalog.cli import cli
from catalog.select.candidates import constant_basis_note, dc_equivalent_constants

HEADER = ("manufacturer,part_number,commutation,constant_basis,magnet_material,nominal_voltage [V],"
          "terminal_resistance [Ohm],resistance_reference_temperature [degC],{constant},friction_torque [N*m],"
          "rotor_inertia [g*cm^2],thermal_resistance_winding_housing [K/W],thermal_resistance_housing_ambient [K/W],"
          "thermal_time_constant_winding [s],thermal_time_constant_motor [s],max_winding_temperature [degC],"
          "max_speed [rpm],mass [g]\n")
ROW = "Basis Test,{part},brushless,{basis},alnico,24,1,25,{value},0,10,3,7,20,600,155,20000,300\n"

POINT = """
name = "basis"
[supply]
nominal_voltage = "24 V"
[environment]
ambient_temperature = "25 degC"
[gearing]
direct = true
catalogue = false
[[points]]
name = "run"
torque = "{torque} N*m"
speed = "{speed} rad/s"
kind = "peak"
"""


def three_phase_machine(phase_peak_emf_per_speed=1.0, samples=120_000):
    """(Ke line-to-line peak, Ke line-to-line RMS, Kt per ampere RMS) of a sinusoidal machine at ω = 1 rad/s."""
    theta = np.linspace(0, 2 * np.pi, samples, endpoint=False)
    e = [phase_peak_emf_per_speed * np.sin(theta - k * 2 * np.pi / 3) for k in range(3)]
    line = e[0] - e[1]
    current_peak = 1.0
    i = [current_peak * np.sin(theta - k * 2 * np.pi / 3) for k in range(3)]
    torque = np.mean(sum(ek * ik for ek, ik in zip(e, i)))        # power / ω, ω = 1 rad/s
    i_rms = np.sqrt(np.mean(i[0] ** 2))
    return np.max(np.abs(line)), np.sqrt(np.mean(line ** 2)), torque / i_rms


def test_conversion_factors_against_a_sampled_three_phase_machine():
    ke_pk, ke_rms, kt_rms = three_phase_machine(0.02)
    kt, ke, refused, note = dc_equivalent_constants(
        ["brushless"] * 3, ["line-to-line-rms", "line-to-line-rms", "line-to-line-peak"],
        [np.nan, kt_rms, np.nan], [ke_rms, np.nan, ke_pk])
    # the DC-equivalent Ke is the line-to-line peak back-EMF constant, and Kt = Ke (power balance)
    np.testing.assert_allclose(ke, ke_pk, rtol=1e-6)
    np.testing.assert_allclose(kt, ke_pk, rtol=1e-6)
    assert not refused.any()
    # the DC-equivalent model loses I_dc²·R_ll = 3·I_rms²·R_ll/2 in copper, as the machine does
    i_dc = 1.0 * kt_rms / kt[1]            # the current the DC model needs for the torque of 1 A RMS
    assert i_dc ** 2 * 1.0 == pytest.approx(3 * 1.0 ** 2 * 0.5, rel=1e-6)
    assert "× √2" in note[0] and "√(2/3)" in note[1] and "line-to-line peak = the DC-equivalent" in note[2]


def test_peak_torque_constant_alone_is_refused_and_plain_records_stay():
    kt, ke, refused, note = dc_equivalent_constants(
        ["brushless", "brushed", "brushless", "brushless"], ["line-to-line-peak", None, "dc-equivalent", None],
        [0.1, 0.1, 0.1, 0.1], [np.nan, np.nan, 0.1, np.nan])
    assert refused.tolist() == [True, False, False, False]
    assert np.isnan(kt[0]) and kt[1:].tolist() == [0.1, 0.1, 0.1]
    assert "depends on the waveform" in note[0]
    assert note[1] == "" and note[2] == "brushless constants stated DC-equivalent"
    assert note[3] == "brushless constants of unstated basis read as DC-equivalent"
    assert constant_basis_note("brushed", None, 0.1, 0.1) == ""


@pytest.fixture(scope="module")
def basis_catalog(tmp_path_factory):
    import catalog

    folder = tmp_path_factory.mktemp("basis")
    ke = folder / "ke.csv"
    ke.write_text(HEADER.format(constant="back_emf_constant [V*s/rad]")
                  + ROW.format(part="RMS", basis="line-to-line-rms", value=0.1)
                  + ROW.format(part="DCE", basis="dc-equivalent", value=0.1), encoding="utf-8")
    kt = folder / "kt.csv"
    kt.write_text(HEADER.format(constant="torque_constant [N*m/A]")
                  + ROW.format(part="KTRMS", basis="line-to-line-rms", value=0.1)
                  + ROW.format(part="KTPK", basis="line-to-line-peak", value=0.1), encoding="utf-8")
    cat = catalog.open(folder / "c.duckdb")
    cat.import_([ke, kt])
    return cat


def row(sel, candidate):
    t = sel.table
    return t[t["candidate"] == candidate].iloc[0]


def test_line_to_line_rms_back_emf_fails_the_voltage_it_passed_when_misread(basis_catalog, envelope_file):
    # Ke = 0.1 V·s/rad line-to-line RMS, R = 1 Ω, 0.05 N·m at 200 rad/s at 25 °C (a peak point: no heating).
    # Read as DC: I = 0.5 A, V = 0.5 + 20 = 20.5 V < 24 V.  DC-equivalent: Ke = Kt = 0.1·√2 = 0.1414,
    # I = 0.05/0.1414 = 0.354 A, V = 0.354 + 0.1414·200 = 28.64 V > 24 V: the misreading was 29 % short.
    sel = basis_catalog.select(envelope_file(POINT.format(torque=0.05, speed=200)))
    ke = 0.1 * np.sqrt(2)
    need = 1.0 * 0.05 / ke + ke * 200
    r = row(sel, "basis-rms")
    assert r["failed"] == "voltage"
    assert r["voltage_margin"] == pytest.approx((24 - need) / 24, rel=1e-9)
    assert "Ke stated line-to-line RMS: × √2" in r["notes"]
    dc = row(sel, "basis-dce")          # the same numbers stated DC-equivalent pass
    assert dc["passed"] and dc["voltage_margin"] == pytest.approx((24 - 20.5) / 24, rel=1e-9)
    assert dc["notes"] == "brushless constants stated DC-equivalent"


def test_rms_torque_constant_alone_and_a_refused_record(basis_catalog, envelope_file):
    # Kt = 0.1 N·m/A per ampere RMS: the DC-equivalent Kt = Ke = 0.1·√(2/3) = 0.08165;
    # 0.05 N·m needs 0.6124 A, and 0.6124 + 0.08165·100 = 8.777 V at 100 rad/s.
    sel = basis_catalog.select(envelope_file(POINT.format(torque=0.05, speed=100)))
    k = 0.1 * np.sqrt(2 / 3)
    r = row(sel, "basis-ktrms")
    assert r["passed"]
    assert r["peak_current"] == pytest.approx(0.05 / k, rel=1e-9)
    assert r["voltage_margin"] == pytest.approx((24 - (0.05 / k + k * 100)) / 24, rel=1e-9)
    refused = row(sel, "basis-ktpk")
    assert refused["failed"] == "constant_basis"          # one clear reason, not also "no motor constants"
    assert "Kt stated line-to-line peak without Ke: its DC equivalent depends on the waveform" in refused["reasons"]
    assert sel.reason_counts()["constant_basis"] == 1


def test_show_says_how_the_selection_reads_the_constants(basis_catalog):
    r = CliRunner().invoke(cli, ["--db", str(basis_catalog.path), "show", "basis-rms"], catch_exceptions=False)
    assert r.exit_code == 0, r.output
    assert "line-to-line-rms" in r.output
    assert "selection reads the constants: Ke stated line-to-line RMS: × √2" in r.output
