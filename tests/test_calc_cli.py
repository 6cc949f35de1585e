"""The ``beamplan calc`` calculators through the command line.

Unless a comment says otherwise, an expected value comes from calling the pure
physics function with the same inputs (so the JSON must carry exactly its value),
and the rounded reference numbers are the documented examples of those functions
(Henke et al. 1993 tables via periodictable; common-practice throughput model;
the planar-undulator resonance formula, X-ray Data Booklet section 2.1).
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
import time
from typing import Any

import pytest

from beamplan.cli.main import main
from beamplan.physics.demand import ScannerTool, required_if_power, throughput_at_power
from beamplan.physics.gas import gas_transmission
from beamplan.physics.multilayer import multilayer_peak, multilayer_reflectivity
from beamplan.physics.optics import mirror_reflectivity
from beamplan.physics.resonance import resonance_check
from beamplan.physics.shot_noise import absorbed_fraction, stochastic_dose_floor_j_m2
from beamplan.physics.undulator import (
    k_for_wavelength,
    resonant_wavelength_m,
    undulator_k,
)
from beamplan.units import parse_quantity

Capsys = pytest.CaptureFixture[str]


def run(capsys: Capsys, *args: str) -> tuple[int, str, str]:
    code = main(["calc", *args])
    out, err = capsys.readouterr()
    return code, out, err


def doc_of(capsys: Capsys, *args: str) -> dict[str, Any]:
    """Run with --json; the output must be one JSON document and stderr empty."""
    code, out, err = run(capsys, *args, "--json")
    assert (code, err) == (0, ""), err
    document: dict[str, Any] = json.loads(out)
    return document


# ---- mirror --------------------------------------------------------------------------------

def test_mirror_text_and_json_match_mirror_reflectivity(capsys: Capsys) -> None:
    expected = mirror_reflectivity("Ru", math.radians(10), 13.5e-9, polarisation=1.0)
    assert round(expected.reflectivity, 3) == 0.894  # documented example of mirror_reflectivity
    code, out, err = run(capsys, "mirror", "--grazing", "10deg", "--polarisation", "s")
    assert (code, err) == (0, "")
    assert "Grazing-incidence mirror" in out and f"R = {expected.reflectivity:.5f}" in out
    assert f"critical grazing {math.degrees(expected.critical_angle_rad):.4g}°" in out  # 27.32
    assert "--grazing" in out and "10deg" in out  # the header shows the inputs as given

    doc = doc_of(capsys, "mirror", "--grazing", "10deg", "--polarisation", "s")
    assert list(doc) == ["format", "calculator", "beamplan_version", "given", "defaults",
                         "inputs", "points", "summary", "method"]
    assert (doc["format"], doc["calculator"]) == ("beamplan-calc/2", "mirror")
    assert doc["given"] == {"grazing": "10deg", "polarisation": "s"}
    assert doc["defaults"] == {"coating": "Ru", "wavelength": "13.5nm", "density": "handbook",
                               "roughness": "0nm"}
    assert doc["inputs"] == {"coating": "Ru", "density_g_cm3": None, "roughness_m": 0.0,
                             "polarisation": "s", "s_fraction": 1.0, "delta": None,
                             "beta": None}
    (point,) = doc["points"]
    assert list(point) == ["grazing_rad", "grazing_deg", "wavelength_m", "reflectivity",
                           "reflectivity_s", "reflectivity_p", "delta", "beta",
                           "critical_grazing_rad", "critical_grazing_deg"]
    assert point["grazing_rad"] == pytest.approx(math.radians(10), rel=1e-15)  # 10 deg in rad
    assert point["grazing_deg"] == pytest.approx(10.0, rel=1e-12)
    again = mirror_reflectivity("Ru", point["grazing_rad"], point["wavelength_m"],
                                polarisation=1.0)
    assert point["reflectivity"] == again.reflectivity
    assert point["reflectivity_s"] == again.reflectivity_s
    assert point["reflectivity_p"] == again.reflectivity_p
    assert (point["delta"], point["beta"]) == (again.delta, again.beta)
    assert point["critical_grazing_rad"] == again.critical_angle_rad
    assert doc["method"] == again.method


@pytest.mark.parametrize(("word", "physics"), [
    ("s", 1.0), ("p", -1.0), ("unpolarised", 0.0), ("unpolarized", 0.0),
    ("s=0.7", 0.4), ("s=70%", 0.4), ("p=0.3", 0.4), ("s=0", -1.0),
])  # hand calculation: the physics' degree along s is 2 × (fraction of s) − 1
def test_polarisation_words(capsys: Capsys, word: str, physics: float) -> None:
    (point,) = doc_of(capsys, "mirror", "--grazing", "8deg", "--polarisation", word)["points"]
    expected = mirror_reflectivity("Ru", point["grazing_rad"], 13.5e-9, polarisation=physics)
    assert point["reflectivity"] == pytest.approx(expected.reflectivity, rel=1e-12)


def test_mirror_options_reach_the_physics(capsys: Capsys) -> None:
    doc = doc_of(capsys, "mirror", "--coating", "Ru", "--density", "Ru=12g/cm^3", "--grazing",
                 "8deg", "--wavelength", "13.2nm", "--roughness", "0.5nm",
                 "--polarisation", "s=0.3")
    (point,) = doc["points"]
    expected = mirror_reflectivity("Ru", point["grazing_rad"], 13.2e-9, density_g_cm3=12.0,
                                   roughness_m=0.5e-9, polarisation=-0.4)  # 2 × 0.3 − 1
    assert point["wavelength_m"] == 13.2e-9  # 13.2 nm parsed exactly (units table)
    assert point["reflectivity"] == pytest.approx(expected.reflectivity, rel=1e-12)
    assert doc["inputs"]["density_g_cm3"] == 12.0 and doc["inputs"]["roughness_m"] == 0.5e-9
    assert doc["inputs"]["polarisation"] == "s=0.3" and doc["inputs"]["s_fraction"] == 0.3
    code, _, err = run(capsys, "mirror", "--grazing", "8deg", "--density", "Mo=10g/cm^3")
    assert code == 2 and "--density: Mo is not the coating 'Ru'" in err


def test_mirror_delta_beta_override(capsys: Capsys) -> None:
    doc = doc_of(capsys, "mirror", "--coating", "x", "--grazing", "2deg", "--delta-beta",
                 "0.02,0.001")
    (point,) = doc["points"]
    # Documented example of mirror_reflectivity: δ = 0.02, β = 0.001 at 2 deg gives 0.982.
    assert round(point["reflectivity"], 3) == 0.982
    assert (doc["inputs"]["delta"], doc["inputs"]["beta"]) == (0.02, 0.001)
    assert (point["delta"], point["beta"]) == (0.02, 0.001)


def test_mirror_range_makes_one_point_per_value(capsys: Capsys) -> None:
    for grazing, extra in (("1deg..20deg/20", ()), ("1deg..20deg", ("--steps", "20"))):
        points = doc_of(capsys, "mirror", "--grazing", grazing, *extra)["points"]
        assert len(points) == 20  # 1, 2, ..., 20 deg in 20 points, ends included (hand count)
        for i, point in enumerate(points, start=1):
            assert point["grazing_rad"] == pytest.approx(math.radians(i), rel=1e-12)
            assert point["reflectivity"] == mirror_reflectivity(
                "Ru", point["grazing_rad"], 13.5e-9).reflectivity
        # The end itself, exactly as the units table reads "20deg" (15 significant digits).
        assert points[-1]["grazing_rad"] == parse_quantity("20deg", "angle")
    listed = doc_of(capsys, "mirror", "--grazing", "2deg,5deg,10deg")["points"]
    assert [round(r["grazing_deg"], 9) for r in listed] == [2, 5, 10]
    code, out, _ = run(capsys, "mirror", "--grazing", "1deg..20deg/20")
    assert code == 0 and "→ 20 points; highest R" in out
    assert "grazing °" in out and "R s-pol" in out  # our column names


def test_range_points_are_evenly_spaced_ends_included(capsys: Capsys) -> None:
    # Hand counts: 1 m to 2 m in 5 points is 1, 1.25, 1.5, 1.75, 2; a falling range works too.
    points = doc_of(capsys, "drift", "--gas", "H2", "--pressure", "2Pa", "--length",
                    "1m..2m/5")["points"]
    assert [r["length_m"] for r in points] == pytest.approx([1.0, 1.25, 1.5, 1.75, 2.0],
                                                            rel=1e-12)
    points = doc_of(capsys, "drift", "--gas", "H2", "--pressure", "2Pa", "--length",
                    "0.3m..0.1m/3")["points"]
    assert [r["length_m"] for r in points] == pytest.approx([0.3, 0.2, 0.1], rel=1e-12)
    assert points[-1]["length_m"] == 0.1


# ---- stack ---------------------------------------------------------------------------------

def test_stack_text_and_json(capsys: Capsys) -> None:
    expected = multilayer_reflectivity(wavelength_m=13.4e-9)
    assert round(expected.reflectivity, 3) == 0.726  # documented example (Mo/Si, 50 periods)
    code, out, _ = run(capsys, "stack", "--wavelength", "13.4nm")
    assert code == 0 and "multilayer stack" in out and f"R = {expected.reflectivity:.5f}" in out

    doc = doc_of(capsys, "stack", "--wavelength", "13.4nm")
    assert (doc["format"], doc["calculator"]) == ("beamplan-calc/2", "stack")
    assert list(doc) == ["format", "calculator", "beamplan_version", "given", "defaults",
                         "inputs", "points", "peak", "summary", "method"]
    assert doc["inputs"] == {"absorber": "Mo", "spacer": "Si", "period_m": 6.9e-9,
                             "absorber_fraction": 0.4, "periods": 50, "cap": None,
                             "cap_thickness_m": None, "substrate": "SiO2", "roughness_m": 0.0,
                             "polarisation": "unpolarised", "s_fraction": 0.5,
                             "densities_g_cm3": {}}
    (point,) = doc["points"]
    assert point == {"incidence_rad": 0.0, "incidence_deg": 0.0, "wavelength_m": 13.4e-9,
                     "reflectivity": expected.reflectivity,
                     "reflectivity_s": expected.reflectivity_s,
                     "reflectivity_p": expected.reflectivity_p}
    assert doc["peak"] is None


def test_stack_peak_and_options(capsys: Capsys) -> None:
    doc = doc_of(capsys, "stack", "--peak")
    expected = multilayer_peak()
    # Documented example of multilayer_peak: 0.737 at 13.49 nm, FWHM 0.6 nm.
    assert (round(expected.peak_reflectivity, 3), round(expected.peak_wavelength_m * 1e9, 2),
            round(expected.fwhm_m * 1e9, 2)) == (0.737, 13.49, 0.6)
    assert doc["peak"] == {"incidence_rad": 0.0, "incidence_deg": 0.0,
                           "wavelength_m": expected.peak_wavelength_m,
                           "reflectivity": expected.peak_reflectivity,
                           "bandwidth_fwhm_m": expected.fwhm_m,
                           "index_wavelength_m": 13.5e-9}
    code, out, _ = run(capsys, "stack", "--peak")
    assert code == 0 and f"FWHM {expected.fwhm_m * 1e9:.3g} nm" in out

    doc = doc_of(capsys, "stack", "--pair", "Mo/Si", "--period", "7nm", "--absorber-fraction",
                 "0.35", "--periods", "40", "--incidence", "5deg", "--cap", "Ru",
                 "--cap-thickness", "2nm", "--substrate", "Si", "--roughness", "0.3nm",
                 "--density", "Mo=10g/cm^3", "--polarisation", "p")
    (point,) = doc["points"]
    expected_point = multilayer_reflectivity(("Mo", "Si"), 7e-9, 0.35, 40, point["incidence_rad"],
                                             13.5e-9, capping=("Ru", 2e-9), substrate="Si",
                                             roughness_m=0.3e-9, polarisation=-1.0,
                                             densities_g_cm3={"Mo": 10.0})
    assert point["reflectivity"] == expected_point.reflectivity
    assert (doc["inputs"]["cap"], doc["inputs"]["cap_thickness_m"]) == ("Ru", 2e-9)
    assert (doc["inputs"]["absorber_fraction"], doc["inputs"]["periods"]) == (0.35, 40)


def test_stack_wavelength_range(capsys: Capsys) -> None:
    doc = doc_of(capsys, "stack", "--wavelength", "13.2nm..13.8nm/7")
    points = doc["points"]
    assert len(points) == 7  # 13.2, 13.3, ..., 13.8 nm (hand count)
    for point in points:
        assert point["reflectivity"] == multilayer_reflectivity(
            wavelength_m=point["wavelength_m"]).reflectivity
    code, _, err = run(capsys, "stack", "--incidence", "0deg,5deg", "--peak")
    assert code == 2 and "--peak" in err


def test_stack_cap_needs_its_thickness(capsys: Capsys) -> None:
    code, _, err = run(capsys, "stack", "--cap", "Ru")
    assert code == 2 and "--cap Ru needs --cap-thickness" in err
    code, _, err = run(capsys, "stack", "--cap-thickness", "2nm")
    assert code == 2 and "--cap-thickness goes with --cap" in err


def test_stack_periods_and_work_are_bounded(capsys: Capsys) -> None:
    code, _, err = run(capsys, "stack", "--periods", "1001")
    assert code == 2 and "--periods: '1001' is out of range" in err and "1 to 1000" in err
    # Hand calculation: 91 points × (1000 + 100) = 100,100 is above the work bound of 100,000;
    # 90 points × 1100 = 99,000 is not (checked without running it: one point is enough here).
    code, _, err = run(capsys, "stack", "--periods", "1000", "--wavelength", "13nm..14nm/91")
    assert code == 2 and "too much work" in err and err.count("\n") == 1
    assert doc_of(capsys, "stack", "--periods", "1000")["inputs"]["periods"] == 1000
    code, _, err = run(capsys, "mirror", "--grazing", "5deg", "--wavelength", "1nm..2nm/2001")
    assert code == 2 and "--wavelength: 2,001 wavelengths is too many" in err


def test_a_closed_end_of_a_range_is_reachable(capsys: Capsys) -> None:
    # '90deg' reads as 1.5707963267949 (15 digits), a hair above π/2: it is the end itself.
    (point,) = doc_of(capsys, "mirror", "--grazing", "90deg")["points"]
    assert point["grazing_rad"] == math.pi / 2 and point["grazing_deg"] == 90.0
    code, _, err = run(capsys, "mirror", "--grazing", "90.001deg")
    assert code == 2 and "give a value in (0, 90 deg]" in err


# ---- drift ---------------------------------------------------------------------------------

def test_drift_text_and_json(capsys: Capsys) -> None:
    args = ("drift", "--gas", "H2", "--pressure", "10Pa", "--temperature", "300K", "--length",
            "2m")
    expected = gas_transmission("H2", 10.0, 300.0, 2.0, 13.5e-9)
    # Documented example of gas_transmission: T = 0.976, n = 2.414e21 /m³.
    assert (round(expected.transmission, 3), f"{expected.number_density_m3:.3e}") == (
        0.976, "2.414e+21")
    code, out, _ = run(capsys, *args)
    assert code == 0 and f"T = {expected.transmission:.5f}" in out and "1/e length" in out
    doc = doc_of(capsys, *args)
    assert (doc["format"], doc["calculator"]) == ("beamplan-calc/2", "drift")
    assert doc["inputs"] == {"gas": "H2", "temperature_k": 300.0, "wavelength_m": 13.5e-9}
    assert doc["points"] == [{"pressure_pa": 10.0, "length_m": 2.0,
                              "transmission": expected.transmission,
                              "number_density_m3": expected.number_density_m3,
                              "cross_section_m2": expected.cross_section_m2,
                              "attenuation_length_m": expected.attenuation_length_m}]


def test_drift_length_range_and_vacuum(capsys: Capsys) -> None:
    points = doc_of(capsys, "drift", "--gas", "H2", "--pressure", "2Pa", "--length",
                    "10m..40m/4")["points"]
    assert [r["length_m"] for r in points] == [10.0, 20.0, 30.0, 40.0]  # hand count
    for r in points:
        assert r["transmission"] == gas_transmission("H2", 2.0, 295.0, r["length_m"],
                                                     13.5e-9).transmission
    # No gas, no absorption: the 1/e length is infinite, written as null (JSON has no inf).
    (point,) = doc_of(capsys, "drift", "--gas", "air", "--pressure", "0Pa", "--length",
                      "5m")["points"]
    assert point["transmission"] == 1.0 and point["attenuation_length_m"] is None


def test_old_calculator_names_say_the_new_one(capsys: Capsys) -> None:
    for old, new in (("reflect", "mirror"), ("multilayer", "stack"), ("gas", "drift")):
        code, out, err = run(capsys, old, "--grazing", "5deg")
        assert (code, out) == (2, "")
        assert err == f"beamplan: error: 'calc {old}' is now 'calc {new}'; see 'beamplan calc " \
                      f"{new} --help'\n"
    code, _, err = run(capsys, "bogus")  # the retired names are not offered as choices
    assert code == 2 and "'mirror', 'stack', 'drift', 'demand', 'undulator', 'beam')" in err
    assert "'reflect'" not in err


# ---- demand --------------------------------------------------------------------------------

def test_demand_need_text_and_json(capsys: Capsys) -> None:
    expected = required_if_power(ScannerTool(), 300.0, 150.0)  # 30 mJ/cm² = 300 J/m²
    # Documented example of required_if_power: 200.8 W at IF, 0.3294 m/s, power-limited.
    assert (round(expected.if_power_w, 1), round(expected.scan_speed_m_s, 4)) == (200.8, 0.3294)
    code, out, _ = run(capsys, "demand", "--dose", "30mJ/cm^2", "--wph", "150")
    assert code == 0 and "200.8 W" in out and "power" in out

    doc = doc_of(capsys, "demand", "--dose", "30mJ/cm^2", "--wph", "150")
    assert (doc["format"], doc["calculator"], doc["mode"]) == ("beamplan-calc/2", "demand",
                                                                "need")
    assert list(doc) == ["format", "calculator", "beamplan_version", "mode", "given",
                         "defaults", "inputs", "result", "summary", "method"]
    assert doc["given"] == {"dose": "30mJ/cm^2", "wph": "150"}
    assert doc["defaults"]["fields"] == "96" and doc["defaults"]["stage-speed"] == "0.8m/s"
    assert doc["inputs"]["tool"] == {
        "field_width_m": 0.026, "field_length_m": 0.033, "fields_per_wafer": 96,
        "slit_height_m": 0.002, "wafer_overhead_s": 9.0, "field_overhead_s": 0.05,
        "stage_max_speed_m_s": 0.8, "mirror_reflections": 10, "mirror_reflectivity": 0.7,
        "mask_reflectivity": 0.65, "pellicle_transmission": 0.88, "other_losses_factor": 1.0,
        "dose_control_margin": 0.1}  # the ScannerTool defaults
    result = doc["result"]
    assert result["dose_j_m2"] == 300.0 and result["dose_source"] == "recipe"
    assert result["if_power_w"] == expected.if_power_w
    assert result["scan_speed_m_s"] == expected.scan_speed_m_s
    assert result["wafer_power_w"] == expected.wafer_power_w
    assert result["stage_limited_wph"] == expected.stage_limited_wph
    assert result["limit"] == "power"


def test_demand_throughput_and_tool_options(capsys: Capsys) -> None:
    doc = doc_of(capsys, "demand", "--dose", "30mJ/cm^2", "--power", "200W")
    expected = throughput_at_power(ScannerTool(), 300.0, 200.0)
    assert round(expected.wafers_per_hour, 2) == 149.75  # documented example
    assert doc["mode"] == "throughput"
    assert doc["result"]["wafers_per_hour"] == expected.wafers_per_hour
    assert doc["result"]["limit"] == "power"
    assert doc_of(capsys, "demand", "--dose", "30mJ/cm^2", "--power", "1kW")[
        "result"]["limit"] == "stage"  # documented example: 1 kW is stage-limited

    doc = doc_of(capsys, "demand", "--dose", "20mJ/cm^2", "--wph", "100", "--field",
                 "26mm:16.5mm", "--fields", "192", "--slit-height", "3mm", "--wafer-overhead",
                 "8s", "--field-overhead", "40ms", "--stage-speed", "1m/s", "--reflections", "11",
                 "--mirror-reflectivity", "69%", "--mask-reflectivity", "0.6", "--pellicle",
                 "0.9", "--other-losses", "0.95", "--dose-margin", "5%")
    tool = ScannerTool(field_width_m=0.026, field_length_m=0.0165, fields_per_wafer=192,
                       slit_height_m=0.003, wafer_overhead_s=8.0, field_overhead_s=0.04,
                       stage_max_speed_m_s=1.0, mirror_reflections=11, mirror_reflectivity=0.69,
                       mask_reflectivity=0.6, pellicle_transmission=0.9,
                       other_losses_factor=0.95, dose_control_margin=0.05)
    assert doc["result"]["if_power_w"] == required_if_power(tool, 200.0, 100.0).if_power_w
    doc = doc_of(capsys, "demand", "--dose", "20mJ/cm^2", "--wph", "100", "--field-width",
                 "20mm", "--field-length", "30mm")
    assert doc["inputs"]["tool"]["field_width_m"] == 0.02
    assert doc["inputs"]["tool"]["field_length_m"] == 0.03


def test_demand_stochastic_floor_sets_the_dose(capsys: Capsys) -> None:
    doc = doc_of(capsys, "demand", "--dose", "30mJ/cm^2", "--wph", "150", "--critical-area",
                 "100nm^2", "--absorption", "5/um", "--thickness", "40nm", "--noise", "5%")
    fraction = absorbed_fraction(5e6, 40e-9)
    floor = stochastic_dose_floor_j_m2(13.5e-9, 100e-18, fraction, 0.05)
    assert round(floor / 10, 2) == 32.47  # documented example: 32.47 mJ/cm² > 30 mJ/cm²
    result = doc["result"]
    assert result["dose_source"] == "stochastic floor"
    assert result["stochastic_floor_j_m2"] == pytest.approx(floor, rel=1e-15)
    assert result["dose_j_m2"] == result["stochastic_floor_j_m2"]
    assert result["if_power_w"] == required_if_power(ScannerTool(), result["dose_j_m2"],
                                                     150.0).if_power_w
    assert doc["inputs"]["stochastic"] == pytest.approx(
        {"critical_area_m2": 1e-16, "absorption_per_m": 5e6, "thickness_m": 4e-8,
         "noise_budget": 0.05}, rel=1e-15)
    code, _, err = run(capsys, "demand", "--dose", "30mJ/cm^2", "--wph", "150", "--noise", "5%")
    assert code == 2 and "--critical-area" in err


def test_demand_beyond_the_stage_exits_1_with_one_line(capsys: Capsys) -> None:
    # 250 wph > 200 wph, the stage-limited throughput of the default tool (documented example).
    code, out, err = run(capsys, "demand", "--dose", "30mJ/cm^2", "--wph", "250")
    assert code == 1 and out == ""
    assert err.count("\n") == 1 and "beyond the stage limit" in err and "200.00 wph" in err
    assert "Traceback" not in err


def test_demand_help_shows_the_tool_defaults(capsys: Capsys) -> None:
    code, out, _ = run(capsys, "demand", "--help")
    tool = ScannerTool()
    assert code == 0
    flat = " ".join(out.split())
    for text in (f"default {tool.fields_per_wafer})", f"default {tool.stage_max_speed_m_s:g} m/s",
                 f"default {tool.mirror_reflectivity:g})", f"default {tool.mirror_reflections})",
                 f"default {tool.field_width_m * 1e3:g}mm:{tool.field_length_m * 1e3:g}mm"):
        assert text in flat, text


# ---- undulator -----------------------------------------------------------------------------

def resonance_formula(energy_ev: float, period_m: float, k: float, harmonic: int = 1) -> float:
    """λ_n = λ_u/(2nγ²)(1 + K²/2), γ = E/(m_e c²), m_e c² = 510998.95069 eV (CODATA 2022);
    X-ray Data Booklet, section 2.1. Written out here, independent of beamplan."""
    gamma = energy_ev / 510998.95069
    return period_m / (2 * harmonic * gamma**2) * (1 + k**2 / 2)


def test_undulator_wavelength_from_k_and_field(capsys: Capsys) -> None:
    doc = doc_of(capsys, "undulator", "--energy", "1GeV", "--period", "2.8cm", "--k", "2.32")
    assert (doc["format"], doc["mode"]) == ("beamplan-calc/2", "wavelength")
    result = doc["result"]
    assert result["resonant_wavelength_m"] == resonant_wavelength_m(1e9, 0.028, 2.32)
    assert round(result["resonant_wavelength_m"] * 1e9, 3) == 13.494  # documented example
    assert result["resonant_wavelength_m"] == pytest.approx(
        resonance_formula(1e9, 0.028, 2.32), rel=1e-9)
    code, out, _ = run(capsys, "undulator", "--energy", "1GeV", "--period", "2.8cm", "--k",
                       "2.32")
    assert code == 0 and "13.4938 nm" in out and "2.8cm" in out

    doc = doc_of(capsys, "undulator", "--energy", "1GeV", "--period", "2.8cm", "--field", "0.9T",
                 "--harmonic", "3")
    k = undulator_k(0.9, 0.028)
    assert doc["result"]["k"] == k and doc["result"]["peak_field_t"] == 0.9
    assert doc["result"]["resonant_wavelength_m"] == resonant_wavelength_m(1e9, 0.028, k, 3)


def test_undulator_target_round_trip(capsys: Capsys) -> None:
    doc = doc_of(capsys, "undulator", "--energy", "1GeV", "--period", "2.8cm", "--target",
                 "13.5nm")
    assert doc["mode"] == "k"
    k = doc["result"]["k"]
    assert k == k_for_wavelength(13.5e-9, 1e9, 0.028)
    assert round(k, 4) == 2.3207  # documented example of k_for_wavelength
    # Back through the resonance formula (written out in this file): 13.5 nm again.
    assert resonance_formula(1e9, 0.028, k) == pytest.approx(13.5e-9, rel=1e-9)
    assert doc["result"]["resonant_wavelength_m"] == pytest.approx(13.5e-9, rel=1e-9)
    # ... and the K fed back through the command line gives the target wavelength.
    back = doc_of(capsys, "undulator", "--energy", "1GeV", "--period", "2.8cm", "--k", repr(k))
    assert back["result"]["resonant_wavelength_m"] == pytest.approx(13.5e-9, rel=1e-9)


def test_undulator_check_and_unreachable(capsys: Capsys) -> None:
    args = ("undulator", "--energy", "1GeV", "--period", "2.8cm", "--check", "13.5nm")
    doc = doc_of(capsys, *args, "--k", "2.32")
    expected = resonance_check(13.5e-9, 1e9, 0.028, k=2.32)
    assert doc["mode"] == "check" and doc["result"]["reachable"] is True  # documented example
    assert doc["result"]["k_required"] == expected.k_required
    assert doc["summary"] == expected.message
    # 0.5 T is too weak (documented example): the report is printed, and the exit code is 1.
    code, out, err = run(capsys, *args, "--field", "0.5T", "--json")
    assert code == 1 and err == "" and json.loads(out)["result"]["reachable"] is False
    code, out, _ = run(capsys, *args, "--field", "1T", "--tunable")
    assert code == 0 and "reachable" in out  # documented example: tunable to 13.5 nm
    # Even K = 0 radiates 3.66 nm (resonance formula), so 1 nm is out of reach.
    code, out, err = run(capsys, "undulator", "--energy", "1GeV", "--period", "2.8cm",
                         "--target", "1nm")
    assert code == 1 and out == "" and "unreachable" in err and err.count("\n") == 1


# ---- usage errors --------------------------------------------------------------------------

@pytest.mark.parametrize(("args", "option"), [
    (("mirror", "--grazing", "5 kg"), "--grazing"),
    (("mirror", "--grazing", "5"), "--grazing"),  # no unit: 5 rad or 5 deg?
    (("mirror", "--grazing", "5deg", "--wavelength", "13.5 eV"), "--wavelength"),
    (("stack", "--period", "7deg"), "--period"),
    (("stack", "--cap", "Ru", "--cap-thickness", "2"), "--cap-thickness"),
    (("stack", "--absorber-fraction", "1.5"), "--absorber-fraction"),
    (("stack", "--periods", "0"), "--periods"),
    (("stack", "--periods", "4.5"), "--periods"),
    (("stack", "--pair", "Mo"), "--pair"),
    (("mirror", "--grazing", "5deg", "--polarisation", "0.5"), "--polarisation"),
    (("mirror", "--grazing", "5deg", "--polarisation", "s=1.5"), "--polarisation"),
    (("mirror", "--grazing", "95deg"), "--grazing"),
    (("mirror", "--grazing", "2deg..10deg"), "--grazing"),  # a range needs its points
    (("mirror", "--grazing", "2deg..10deg/1"), "--grazing (points after '/')"),
    (("mirror", "--grazing", "2deg..10deg/20000"), "--grazing (points after '/')"),
    (("mirror", "--grazing", "1,5deg"), "--grazing"),  # a decimal comma
    (("mirror", "--grazing", "\u0663deg"), "--grazing"),  # a digit that is not 0-9
    (("mirror", "--grazing", "5deg\x1b[2J"), "--grazing"),  # a control sequence
    (("mirror", "--grazing", "9" * 5000 + "deg"), "--grazing"),
    (("mirror", "--grazing", "5deg", "--steps", "9"), "--steps"),
    (("mirror", "--grazing", "5deg", "--density", "Ru=-1g/cm^3"), "--density"),
    (("drift", "--gas", "H2", "--pressure", "2Pa", "--length", "1m", "--temperature", "0K"),
     "--temperature"),
    (("drift", "--gas", "H2 O", "--pressure", "2Pa", "--length", "1m"), "--gas"),
    (("drift", "--gas", "H2", "--pressure", "2m", "--length", "1m"), "--pressure"),
    (("drift", "--gas", "H2", "--pressure", "2Pa", "--length", "1m:2m"), "--length"),
    (("demand", "--dose", "30W", "--wph", "100"), "--dose"),
    (("demand", "--dose", "30mJ/cm^2", "--power", "3m"), "--power"),
    (("undulator", "--energy", "1T", "--period", "2cm", "--k", "1"), "--energy"),
    (("undulator", "--energy", "1GeV", "--period", "2cm", "--k", "one"), "--k"),
])
def test_bad_values_exit_2_naming_the_option(capsys: Capsys, args: tuple[str, ...],
                                             option: str) -> None:
    code, out, err = run(capsys, *args)
    assert code == 2 and out == ""
    assert err.startswith(f"beamplan: error: {option}: "), err
    assert err.count("\n") == 1


def test_usage_errors_exit_2(capsys: Capsys) -> None:
    assert run(capsys)[0] == 2  # no calculator
    assert run(capsys, "mirror")[0] == 2  # --grazing is required
    assert run(capsys, "demand", "--dose", "30mJ/cm^2")[0] == 2  # neither --wph nor --power
    assert run(capsys, "demand", "--dose", "30mJ/cm^2", "--wph", "1", "--power", "1W")[0] == 2
    assert run(capsys, "demand", "--dose", "30mJ/cm^2", "--wph", "100", "--field",
               "26mm:33mm", "--field-width", "20mm")[0] == 2
    assert run(capsys, "undulator", "--energy", "1GeV", "--period", "2cm")[0] == 2
    assert run(capsys, "undulator", "--energy", "1GeV", "--period", "2cm", "--k", "1",
               "--target", "13.5nm")[0] == 2
    code, _, err = run(capsys, "mirror", "--grazing", "5deg:1deg:1deg")
    assert code == 2 and "--grazing" in err


def test_bad_physical_input_exits_1_with_one_line(capsys: Capsys) -> None:
    for args in (("mirror", "--grazing", "5deg", "--coating", "Qq"),
                 ("mirror", "--grazing", "5deg", "--wavelength", "500nm"),  # beyond the tables
                 ("drift", "--gas", "Xx2", "--pressure", "2Pa", "--length", "1m"),
                 ("stack", "--substrate", "CH4"),  # no handbook density: give --density
                 ("demand", "--dose", "30mJ/cm^2", "--wph", "100", "--mask-reflectivity",
                  "0")):  # in [0, 1] as a fraction, but the tool needs a mask that reflects
        code, out, err = run(capsys, *args)
        assert code == 1 and out == "" and err.count("\n") == 1, (args, err)
        assert err.startswith("beamplan: error: ") and "Traceback" not in err


# ---- a real process ------------------------------------------------------------------------

def test_calculator_runs_as_a_process_without_heavy_imports() -> None:
    script = ("import json, sys\n"
              "from beamplan.cli.main import main\n"
              "code = main(sys.argv[1:])\n"
              "heavy = ['pulp', 'highspy', 'networkx', 'matplotlib', 'rich', 'pint']\n"
              "sys.stderr.write(json.dumps([m for m in heavy if m in sys.modules]))\n"
              "sys.exit(code)\n")
    start = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c", script, "calc", "undulator", "--energy", "1GeV",
                           "--period", "2.8cm", "--target", "13.5nm", "--json"],
                          capture_output=True, text=True, check=False)
    elapsed = time.perf_counter() - start  # reported, not asserted: machines differ
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["mode"] == "k"
    assert json.loads(proc.stderr) == [], f"heavy imports after {elapsed:.2f} s: {proc.stderr}"
    text = subprocess.run([sys.executable, "-m", "beamplan.cli.main", "calc", "drift", "--gas",
                           "H2", "--pressure", "2Pa", "--length", "40m"],
                          capture_output=True, text=True, check=False)
    assert text.returncode == 0 and "Gas-filled drift" in text.stdout
