"""``beamplan calc beam`` through the command line.

Every number is checked against beamplan.physics.beam / thermal called with the
same inputs (the JSON must carry exactly their values) and against a hand
calculation or scipy.stats where one is short enough to write down.
"""

from __future__ import annotations

import csv
import io
import json
import math
from typing import Any

import pytest
from scipy import stats

from beamplan.cli.main import main
from beamplan.physics import beam as bm
from beamplan.physics.thermal import SUBSTRATES, thermal_estimate, thermal_slope_error_rad

Capsys = pytest.CaptureFixture[str]
BASE = ("beam", "--size", "100um", "--divergence", "20urad", "--distance", "10m", "--grazing",
        "2deg", "--power", "1kW", "--reflectivity", "0.8")


def run(capsys: Capsys, *args: str) -> tuple[int, str, str]:
    code = main(["calc", *args])
    out, err = capsys.readouterr()
    return code, out, err


def doc_of(capsys: Capsys, *args: str) -> dict[str, Any]:
    code, out, err = run(capsys, *args, "--json")
    assert (code, err) == (0, ""), err
    document: dict[str, Any] = json.loads(out)
    return document


def test_one_point_against_the_physics_and_by_hand(capsys: Capsys) -> None:
    doc = doc_of(capsys, *BASE)
    assert list(doc) == ["format", "calculator", "beamplan_version", "given", "defaults",
                         "inputs", "points", "summary", "method"]
    assert (doc["format"], doc["calculator"]) == ("beamplan-calc/2", "beam")
    assert doc["defaults"] == {"widths": "rms", "mirror-length": "none", "mirror-width": "none",
                               "substrate": "silicon"}
    (p,) = doc["points"]
    theta = p["grazing_rad"]  # 2deg as the units table reads it
    assert theta == pytest.approx(math.radians(2.0), rel=1e-12)
    at = bm.drift(bm.PlaneBeam(100e-6, 20e-6), 10.0)
    # hand calculation: sqrt(100² + (10 m × 20 µrad)²) µm = 223.607 µm
    assert p["size_tangential_m"] == at.size_m == p["size_sagittal_m"]
    assert p["size_tangential_m"] == pytest.approx(223.607e-6, rel=1e-6)
    assert p["divergence_tangential_rad"] == pytest.approx(20e-6, rel=1e-12)  # a drift keeps it
    assert p["footprint_rms_m"] == bm.footprint_rms_m(at.size_m, theta)
    assert p["footprint_rms_m"] == pytest.approx(223.607e-6 / math.sin(theta), rel=1e-6)
    assert p["footprint_fwhm_m"] == pytest.approx(2.354820045 * p["footprint_rms_m"], rel=1e-9)
    incident = bm.surface_peak_density_w_m2(1000.0, at.size_m, at.size_m, theta)
    assert p["peak_incident_w_m2"] == incident
    # hand calculation: 1000 W × sin 2° / (2π × (223.607 µm)²) = 111.09 W/mm²
    assert p["peak_incident_w_m2"] == pytest.approx(111.09e6, rel=1e-4)
    assert p["peak_absorbed_w_m2"] == pytest.approx(0.2 * incident, rel=1e-12)  # 1 − 0.8
    assert p["accepted_fraction"] == 1.0 and p["clipped_fraction"] == 0.0  # unbounded mirror
    assert (p["power_on_mirror_w"], p["absorbed_w"]) == (1000.0, pytest.approx(200.0))
    assert p["reflected_w"] == pytest.approx(800.0)
    slope = thermal_slope_error_rad(p["peak_absorbed_w_m2"], p["footprint_rms_m"], "silicon")
    assert p["thermal_slope_rad"] == slope
    estimate = thermal_estimate(p["peak_absorbed_w_m2"], p["footprint_rms_m"], "silicon")
    assert p["thermal_slope_rms_rad"] == estimate.slope_rms_rad
    assert p["thermal_radius_m"] == estimate.radius_m
    assert p["thermal_gradient_k_m"] == estimate.gradient_k_m
    # Fourier's law: q0 / k = 22.218 W/mm² / 148 W/(m K) = 150.1 K/mm (hand calculation)
    assert p["thermal_gradient_k_m"] == pytest.approx(150.1e3, rel=1e-3)
    si = SUBSTRATES["silicon"]
    # hand calculation of the slope: √(2π) α q0 ℓ / k
    assert slope == pytest.approx(math.sqrt(2 * math.pi) * si.expansion_per_k *
                                  p["peak_absorbed_w_m2"] * p["footprint_rms_m"] /
                                  si.conductivity_w_m_k, rel=1e-12)
    assert p["focal_tangential_m"] is None and p["waist_after_tangential_m"] is None
    assert doc["inputs"]["absorptance"] == pytest.approx(0.2, rel=1e-12)
    assert doc["inputs"]["conductivity_w_m_k"] == si.conductivity_w_m_k
    assert "Timoshenko" in doc["method"] and "ISO 11146-1" in doc["method"]


def test_text_report_lists_one_point(capsys: Capsys) -> None:
    code, out, err = run(capsys, *BASE)
    assert (code, err) == (0, "")
    assert "Beam on a grazing mirror" in out
    assert "peak absorbed" in out and "22.22 W/mm²" in out  # 0.2 × 111.09, as above
    assert "thermal slope (P-V)" in out and "→ rms 0.2236 mm × 0.2236 mm at 10 m" in out
    assert "--substrate" in out and "default" in out


def test_clipping_by_length_and_width_matches_scipy(capsys: Capsys) -> None:
    (p,) = doc_of(capsys, *BASE, "--mirror-length", "10mm", "--mirror-width", "0.3mm")["points"]
    sigma = p["size_tangential_m"]
    # the length projects to 10 mm × sin 2° across the beam; kept = 2 Φ(a / 2σ) − 1 each
    along = 2 * stats.norm.cdf(0.010 * math.sin(math.radians(2)) / 2 / sigma) - 1
    across = 2 * stats.norm.cdf(0.0003 / 2 / sigma) - 1
    assert p["accepted_fraction"] == pytest.approx(along * across, rel=1e-9)
    assert p["clipped_fraction"] == pytest.approx(1 - along * across, rel=1e-9)
    assert p["power_on_mirror_w"] == pytest.approx(1000 * along * across, rel=1e-9)
    assert p["absorbed_w"] == pytest.approx(200 * along * across, rel=1e-9)
    # the centre's density does not depend on what is clipped at the edges
    full = doc_of(capsys, *BASE)["points"][0]
    assert p["peak_incident_w_m2"] == full["peak_incident_w_m2"]


def test_fwhm_widths_and_separate_planes(capsys: Capsys) -> None:
    # FWHM = 2.35482 rms (common practice): 235.482 µm and 47.0964 µrad are 100 µm and 20 µrad
    doc = doc_of(capsys, "beam", "--size", "235.482um:117.741um", "--divergence",
                 "47.0964urad:0urad", "--widths", "fwhm", "--distance", "10m", "--grazing",
                 "2deg", "--power", "1kW", "--absorptance", "0.2")
    assert doc["inputs"]["size_tangential_m"] == pytest.approx(100e-6, rel=1e-6)
    assert doc["inputs"]["size_sagittal_m"] == pytest.approx(50e-6, rel=1e-6)
    assert doc["inputs"]["divergence_sagittal_rad"] == 0.0
    (p,) = doc["points"]
    assert p["size_tangential_m"] == pytest.approx(223.607e-6, rel=1e-5)  # as above
    assert p["size_sagittal_m"] == pytest.approx(50e-6, rel=1e-6)  # no divergence: no growth
    same = doc_of(capsys, *BASE)["points"][0]  # --reflectivity 0.8 is --absorptance 0.2
    assert p["peak_absorbed_w_m2"] == pytest.approx(same["peak_absorbed_w_m2"] * 223.607 / 50,
                                                    rel=1e-5)


def test_gaussian_beam_from_wavelength(capsys: Capsys) -> None:
    doc = doc_of(capsys, "beam", "--size", "50um", "--wavelength", "13.5nm", "--distance", "0m",
                 "--grazing", "5deg", "--power", "100W", "--absorptance", "0.1")
    # M² λ / (4π σ) = 13.5 nm / (4π × 50 µm) = 21.4859 µrad (Siegman, Lasers (1986), ch. 17)
    assert doc["inputs"]["divergence_tangential_rad"] == pytest.approx(21.4859e-6, rel=1e-5)
    assert doc["inputs"]["m_squared"] == 1.0
    m2 = doc_of(capsys, "beam", "--size", "50um", "--wavelength", "13.5nm", "--m2", "2:3",
                "--distance", "0m", "--grazing", "5deg", "--power", "100W", "--absorptance",
                "0.1")["inputs"]
    assert m2["divergence_sagittal_rad"] == pytest.approx(3 * 21.4859e-6, rel=1e-5)
    assert m2["m_squared"] is None  # not one number for both planes


def test_focal_length_by_hand(capsys: Capsys) -> None:
    (p,) = doc_of(capsys, "beam", "--size", "1mm", "--divergence", "10urad", "--distance", "0m",
                  "--grazing", "3deg", "--power", "1kW", "--reflectivity", "0.9",
                  "--focal-length", "10m")["points"]
    # hand calculation, thin lens f = 10 m on a waist σ = 1 mm, σ' = 10 µrad:
    # <xx'> = −σ²/f = −1e-7, <x'²> = 1e-10 + 1e-8 = 1.01e-8; waist at 1e-7/1.01e-8 = 9.90099 m;
    # waist size ε/σ' = 1e-8 / 1.004988e-4 = 99.5037 µm
    assert p["divergence_after_tangential_rad"] == pytest.approx(1.004988e-4, rel=1e-6)
    assert p["waist_after_sagittal_m"] == pytest.approx(9.90099, rel=1e-6)
    assert p["waist_size_after_tangential_m"] == pytest.approx(99.5037e-6, rel=1e-6)
    assert (p["focal_tangential_m"], p["focal_sagittal_m"]) == (10.0, 10.0)


def test_radius_uses_coddington(capsys: Capsys) -> None:
    (p,) = doc_of(capsys, *BASE, "--radius", "1000m")["points"]
    # R sin θ / 2 and R / (2 sin θ) at 2°: 17.4497 m and 14326.85 m (beam.py, Coddington)
    assert p["focal_tangential_m"] == pytest.approx(17.4497, rel=1e-5)
    assert p["focal_sagittal_m"] == pytest.approx(14326.85, rel=1e-6)
    at = bm.drift(bm.PlaneBeam(100e-6, 20e-6), 10.0)
    after = bm.thin_lens(at, p["focal_tangential_m"])
    assert p["divergence_after_tangential_rad"] == after.divergence_rad
    assert p["waist_after_tangential_m"] == pytest.approx(after.waist_distance_m, rel=1e-12)
    convex = doc_of(capsys, *BASE, "--radius=-1000m")["points"][0]
    assert convex["waist_after_tangential_m"] < 0  # a virtual waist behind a convex mirror


def test_scan_order_and_slope_independent_of_grazing(capsys: Capsys) -> None:
    doc = doc_of(capsys, "beam", "--size", "100um", "--divergence", "20urad", "--distance",
                 "10m..30m/3", "--grazing", "1deg,2deg", "--power", "1kW", "--absorptance",
                 "0.2", "--substrate", "copper")
    points = doc["points"]
    assert [(p["distance_m"], round(p["grazing_deg"], 9)) for p in points] == [
        (10.0, 1.0), (10.0, 2.0), (20.0, 1.0), (20.0, 2.0), (30.0, 1.0), (30.0, 2.0)]
    for a, b in zip(points[::2], points[1::2], strict=True):
        # q0 ∝ sin θ and ℓ ∝ 1 / sin θ: the slope √(2π) α q0 ℓ / k = α A P / (k √(2π) σs)
        # does not depend on the grazing angle (hand calculation)
        assert a["thermal_slope_rad"] == pytest.approx(b["thermal_slope_rad"], rel=1e-9)
        cu = SUBSTRATES["copper"]
        assert a["thermal_slope_rad"] == pytest.approx(
            cu.expansion_per_k * 200.0 / (cu.conductivity_w_m_k * math.sqrt(2 * math.pi) *
                                          a["size_sagittal_m"]), rel=1e-9)
    code, out, _ = run(capsys, "beam", "--size", "100um", "--divergence", "20urad",
                       "--distance", "10m..30m", "--steps", "3", "--grazing", "1deg,2deg",
                       "--power", "1kW", "--absorptance", "0.2")
    assert code == 0 and "footprint" in out and "6 points" in out


def test_cryogenic_silicon_bends_least(capsys: Capsys) -> None:
    slopes = {name: doc_of(capsys, *BASE, "--substrate", name)["points"][0]["thermal_slope_rad"]
              for name in SUBSTRATES}
    # α/k: cryogenic silicon ≪ silicon < copper (test_thermal, Paquin's table from memory)
    assert slopes["silicon-cryo"] < slopes["silicon"] / 50 < slopes["copper"] / 50


@pytest.mark.parametrize(("extra", "option"), [
    (("--substrate", "glass"), "--substrate"),
    (("--radius", "0m"), "--radius"),
    (("--radius", "5deg"), "--radius"),
    (("--focal-length", "10m:"), "--focal-length"),
    (("--mirror-length", "0m"), "--mirror-length"),
    (("--mirror-width", "5"), "--mirror-width"),
    (("--widths", "fwhm2"), "--widths"),
    (("--size", "1mm:2mm:3mm"), "--size"),
    (("--size", "0um"), "--size"),
    (("--grazing", "95deg"), "--grazing"),
    (("--distance", "10m..20m"), "--distance"),  # a range needs its points
    (("--power", "3m"), "--power"),
    (("--reflectivity", "1.5"), "--reflectivity"),
    (("--steps", "5"), "--steps"),
])
def test_bad_values_exit_2_naming_the_option(capsys: Capsys, extra: tuple[str, str],
                                             option: str) -> None:
    args = list(BASE)
    if extra[0] in args:
        args[args.index(extra[0]) + 1] = extra[1]
    else:
        args += extra
    code, out, err = run(capsys, *args)
    assert code == 2 and out == "" and err.count("\n") == 1, err
    assert err.startswith(f"beamplan: error: {option}: "), err
    if option == "--substrate":
        assert "copper, silicon, silicon-cryo" in err


def test_usage_errors_exit_2(capsys: Capsys) -> None:
    no_spread = [a for a in BASE if a not in ("--divergence", "20urad")]
    code, _, err = run(capsys, *no_spread)
    assert code == 2 and "give --divergence, or --wavelength" in err
    code, _, err = run(capsys, *BASE, "--m2", "2")
    assert code == 2 and "--m2 goes with --wavelength" in err
    code, _, _ = run(capsys, *BASE, "--absorptance", "0.1")  # with --reflectivity: one of two
    assert code == 2
    code, _, _ = run(capsys, *BASE, "--radius", "10m", "--focal-length", "5m")
    assert code == 2


@pytest.mark.parametrize("args", [
    BASE[1:], ("--size", "100um", "--divergence", "20urad", "--distance", "10m,20m,30m",
               "--grazing", "1deg,2deg", "--power", "1kW", "--absorptance", "0.2")])
def test_csv_rows_are_the_json_points(capsys: Capsys, args: tuple[str, ...]) -> None:
    points = doc_of(capsys, "beam", *args)["points"]
    code, out, err = run(capsys, "beam", *args, "--csv")
    assert (code, err) == (0, "")
    rows = list(csv.DictReader(io.StringIO(out)))
    assert len(rows) == len(points) and list(rows[0]) == list(points[0])
    for row, point in zip(rows, points, strict=True):
        for key, value in point.items():  # floats as their exact shortest text
            assert row[key] == ("" if value is None else repr(value)), key


def test_csv_of_a_result_and_exclusive_with_json(capsys: Capsys) -> None:
    code, out, _ = run(capsys, "undulator", "--energy", "1GeV", "--period", "2.8cm", "--check",
                       "13.5nm", "--field", "0.5T", "--csv")
    (row,) = list(csv.DictReader(io.StringIO(out)))
    assert code == 1 and row["reachable"] == "false"  # documented: not reachable, exit 1
    code, out, err = run(capsys, *BASE, "--csv", "--json")
    assert code == 2 and out == "" and "not allowed with" in err
