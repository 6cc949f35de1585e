"""Layouts written in physical terms: computed gains and needs match the physics layer."""

from __future__ import annotations

import math

import pytest

import beamplan
from beamplan.errors import LayoutError
from beamplan.physics.demand import ScannerTool, required_if_power, throughput_at_power
from beamplan.physics.gas import gas_transmission
from beamplan.physics.multilayer import MOSI_INTERLAYERS, multilayer_reflectivity
from beamplan.physics.optics import mirror_reflectivity, s_polarisation
from tests.conftest import layout_from_text, network_from_text

BASE = """\
layout: phys
format: 1
sources: {{src: {{power: 5 kW{source}}}}}
elements:
{elements}
scanners:
{scanners}
beamlines: [{beamlines}]
"""


def text(elements: str, scanners: str = "  s1: {power: 300 W}",
         beamlines: str = '"src -> m1 -> s1"', source: str = "") -> str:
    return BASE.format(elements=elements, scanners=scanners, beamlines=beamlines,
                       source=source)


def test_coated_mirror_uses_the_fresnel_reflectivity() -> None:
    # Reference: beamplan.physics.optics, itself checked against periodictable.
    net = network_from_text(text("  m1: {kind: mirror, coating: Ru, grazing: 5 deg, "
                                 "roughness: 0.5 nm}"))
    expected = mirror_reflectivity("Ru", math.radians(5), 13.5e-9, roughness_m=0.5e-9)
    assert net.node["m1"].gain_max == pytest.approx(expected.reflectivity, rel=1e-12)
    assert "Fresnel" in net.node["m1"].provenance


def test_fixed_reflectivity_wins_over_a_coating() -> None:
    # The layout's own value wins (the format's rule).
    net = network_from_text(text("  m1: {kind: mirror, reflectivity: 0.5, coating: Ru, "
                                 "grazing: 5 deg}"))
    assert net.node["m1"].gain_max == 0.5
    assert net.node["m1"].provenance == "given in the layout"


def test_measured_index_overrides_the_tables() -> None:
    net = network_from_text(text("  m1: {kind: mirror, coating: {material: Ru, delta: 0.1, "
                                 "beta: 0.02}, grazing: 3 deg}"))
    expected = mirror_reflectivity("Ru", math.radians(3), 13.5e-9, delta_beta=0.1 + 0.02j)
    assert net.node["m1"].gain_max == pytest.approx(expected.reflectivity, rel=1e-12)
    assert "measured" in net.node["m1"].provenance


def test_polarised_source_sets_s_and_p_by_the_mirror_plane() -> None:
    # Geometry of beamplan.physics.optics.s_fraction: E horizontal, plane 90 deg -> s.
    src = ", polarisation: 1.0, polarisation_angle: 0 deg"
    elements = ("  m1: {kind: mirror, coating: Au, grazing: 10 deg, plane: 90 deg}\n"
                "  m2: {kind: mirror, coating: Au, grazing: 10 deg, plane: 0 deg}")
    net = network_from_text(text(elements, beamlines='"src -> m1 -> m2 -> s1"', source=src))
    r_s = mirror_reflectivity("Au", math.radians(10), 13.5e-9, polarisation=1.0).reflectivity
    r_p = mirror_reflectivity("Au", math.radians(10), 13.5e-9, polarisation=-1.0).reflectivity
    assert s_polarisation(1.0, 0.0, math.pi / 2) == pytest.approx(1.0)
    assert net.node["m1"].gain_max == pytest.approx(r_s, rel=1e-9)
    assert net.node["m2"].gain_max == pytest.approx(r_p, rel=1e-9)
    assert r_s > r_p  # s reflects more than p off a metal at grazing incidence (Fresnel)


def test_multilayer_mirror_uses_parratt() -> None:
    # Reference: the physics layer with the documented defaults of docs/layout-format.md
    # (Ru cap 2 nm, 0.4 nm roughness, MoSi2 interlayers 1.0/0.5 nm).
    net = network_from_text(text("  m1: {kind: mirror, multilayer: {pair: Mo/Si, period: 6.9 nm,"
                                 " periods: 40}, incidence: 3 deg}"))
    expected = multilayer_reflectivity(("Mo", "Si"), 6.9e-9, 0.4, 40, math.radians(3), 13.5e-9,
                                       capping=("Ru", 2e-9), roughness_m=0.4e-9,
                                       interlayers=MOSI_INTERLAYERS)
    assert net.node["m1"].gain_max == pytest.approx(expected.reflectivity, rel=1e-12)
    # A mirror's own roughness applies to its multilayer when the multilayer gives none.
    net = network_from_text(text("  m1: {kind: mirror, multilayer: {periods: 40, cap: none, "
                                 "interlayers: none}, roughness: 0.3 nm, incidence: 3 deg}"))
    expected = multilayer_reflectivity(("Mo", "Si"), 6.9e-9, 0.4, 40, math.radians(3), 13.5e-9,
                                       roughness_m=0.3e-9)
    assert net.node["m1"].gain_max == pytest.approx(expected.reflectivity, rel=1e-12)


def test_gas_drift_uses_beer_lambert() -> None:
    elements = "  m1: {kind: drift, length: 50 m, gas: H2, pressure: 3 Pa, temperature: 300 K}"
    net = network_from_text(text(elements))
    expected = gas_transmission("H2", 3.0, 300.0, 50.0, 13.5e-9).transmission
    assert net.node["m1"].gain_max == pytest.approx(expected, rel=1e-12)
    assert expected < 1.0


def test_scanner_need_from_dose_and_wph_and_the_report_of_achieved_wph() -> None:
    scanners = ("  s1: {profile: tool, dose: 30 mJ/cm^2, wph: 150}\n"
                "profiles:\n  tool: {fields: 90, pellicle: 0.85, wafer_overhead: 8 s}")
    layout_text = text("  m1: {kind: mirror, reflectivity: 0.9}", scanners)
    plan = beamplan.plan(layout_from_text(layout_text))
    tool = ScannerTool(fields_per_wafer=90, pellicle_transmission=0.85, wafer_overhead_s=8.0)
    need = required_if_power(tool, 300.0, 150.0).if_power_w  # 30 mJ/cm² = 300 J/m²
    scanner = plan.scanner("s1")
    assert scanner.need_w == pytest.approx(need, rel=1e-12)
    achieved = throughput_at_power(tool, 300.0, scanner.delivered_w)
    assert scanner.achieved_wph == pytest.approx(achieved.wafers_per_hour, rel=1e-12)
    assert scanner.achieved_wph is not None and scanner.achieved_wph >= 150.0
    assert scanner.throughput_limit in ("stage", "power")


def test_profile_keys_are_overridden_per_scanner() -> None:
    scanners = ("  s1: {profile: tool, dose: 30 mJ/cm^2, wph: 100, pellicle: 0.9}\n"
                "profiles:\n  tool: {pellicle: 0.8}")
    net = network_from_text(text("  m1: {kind: mirror, reflectivity: 0.9}", scanners))
    tool = ScannerTool(pellicle_transmission=0.9)
    assert net.node["s1"].need_w == pytest.approx(
        required_if_power(tool, 300.0, 100.0).if_power_w, rel=1e-12)


def test_stochastic_floor_sets_the_dose_when_it_is_higher() -> None:
    # With A = 100 nm², α = 5/µm, t = 40 nm, 5 % noise the floor is 32.5 mJ/cm²
    # (beamplan.physics.photons, checked there by hand), above a 20 mJ/cm² recipe.
    scanners = ("  s1: {dose: 20 mJ/cm^2, wph: 100, critical_area: 100 nm^2, "
                "resist_absorption: 5 /um, resist_thickness: 40 nm, noise: 5 %}")
    plan = beamplan.plan(layout_from_text(text("  m1: {kind: mirror, reflectivity: 0.9}",
                                               scanners)))
    s1 = plan.scanner("s1")
    assert s1.dose_set_by == "stochastic floor"
    assert s1.dose_j_m2 is not None and s1.dose_j_m2 / 10 == pytest.approx(32.5, rel=2e-3)


@pytest.mark.parametrize(("elements", "scanners", "source", "fragment"), [
    ("  m1: {kind: mirror, coating: Ru}", "  s1: {power: 300 W}", "",
     "needs 'reflectivity', or 'coating' with 'grazing'"),
    ("  m1: {kind: mirror, coating: Unobtainium, grazing: 5 deg}", "  s1: {power: 300 W}", "",
     "mirror 'm1'"),
    ("  m1: {kind: drift, gas: H2, pressure: 2 Pa}", "  s1: {power: 300 W}", "",
     "needs 'gas', 'pressure' and 'length'"),
    ("  m1: {kind: mirror, reflectivity: 0.9}", "  s1: {dose: 30, wph: 100}", "",
     "'dose' needs a unit"),
    ("  m1: {kind: mirror, reflectivity: 0.9}", "  s1: {dose: 30 mJ/cm^2, wph: 900}", "",
     "scanner 's1'"),
    ("  m1: {kind: mirror, reflectivity: 0.9}", "  s1: {profile: nope, power: 3 W}", "",
     "unknown profile 'nope'"),
    ("  m1: {kind: mirror, reflectivity: 0.9}", "  s1: {power: 300 W}",
     ", undulator: {energy: 100 MeV, period: 2.8 cm, k: 1.0}", "source 'src'"),
])
def test_physics_mistakes_are_located_errors(elements: str, scanners: str, source: str,
                                             fragment: str) -> None:
    with pytest.raises(LayoutError) as info:
        network_from_text(text(elements, scanners, source=source))
    messages = [d.format() for d in info.value.errors]
    assert any(fragment in m for m in messages), messages
    assert all(m.startswith("test.yaml:") for m in messages), messages


def test_scanner_train_mirrors_from_a_computed_multilayer() -> None:
    # Reference: the Parratt multilayer of beamplan.physics.multilayer at the
    # layout wavelength, fed to the throughput model as the train's reflectivity.
    scanners = ("  s1: {dose: 30 mJ/cm^2, wph: 100, mirror_multilayer: {pair: Mo/Si, "
                "period: 6.9 nm, periods: 50, cap: none, roughness: 0 nm, interlayers: none}, "
                "mirror_incidence: 5 deg}")
    net = network_from_text(text("  m1: {kind: mirror, reflectivity: 0.9}", scanners))
    r = multilayer_reflectivity(("Mo", "Si"), 6.9e-9, 0.4, 50, math.radians(5), 13.5e-9)
    tool = ScannerTool(mirror_reflectivity=r.reflectivity)
    assert net.node["s1"].need_w == pytest.approx(
        required_if_power(tool, 300.0, 100.0).if_power_w, rel=1e-12)
    both = ("  s1: {dose: 30 mJ/cm^2, wph: 100, mirror_reflectivity: 0.7, "
            "mirror_multilayer: {pair: Mo/Si}}")
    with pytest.raises(LayoutError, match="not both"):
        network_from_text(text("  m1: {kind: mirror, reflectivity: 0.9}", both))


def test_undulator_tolerance_of_zero_is_kept() -> None:
    # A zero tolerance is a valid value (range minimum 0 in layout/spec.py), not "absent":
    # it must not fall back to the 1 % default (common practice, no source).
    undulator = ", undulator: {energy: 100 MeV, period: 2.8 cm, k: 1.0, tolerance: 0 %}"
    mirror, scanner = "  m1: {kind: mirror, reflectivity: 0.9}", "  s1: {power: 300 W}"
    layout = layout_from_text(text(mirror, scanner, source=undulator))
    spec = layout.sources[0].undulator
    assert spec is not None and spec.tolerance == 0.0
