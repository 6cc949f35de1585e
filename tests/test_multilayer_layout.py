"""Multilayers in layouts: documented defaults, renamed keys, bounds, and the off-peak warning."""

from __future__ import annotations

import math
import re
from typing import Any

import pytest

from beamplan.errors import LayoutError
from beamplan.layout.model import MirrorSpec, MultilayerSpec
from beamplan.physics.multilayer import MOSI_INTERLAYERS, multilayer_peak, multilayer_reflectivity
from beamplan.units import parse_quantity
from tests.conftest import ROOT, layout_from_text, network_from_text

BASE = """\
layout: ml
format: 1
sources: {{src: {{power: 5 kW}}}}
elements:
  m1: {{kind: mirror, incidence: {incidence}, multilayer: {multilayer}}}
scanners:
  s1: {scanner}
beamlines: ["src -> m1 -> s1"]
"""


def text(multilayer: str = "{}", incidence: str = "0 deg",
         scanner: str = "{power: 300 W}") -> str:
    return BASE.format(multilayer=multilayer, incidence=incidence, scanner=scanner)


def stack(multilayer: str = "{}") -> MultilayerSpec:
    layout = layout_from_text(text(multilayer))
    mirror = layout.elements[0]
    assert isinstance(mirror, MirrorSpec) and mirror.multilayer is not None
    return mirror.multilayer


def errors(layout_text: str) -> list[str]:
    with pytest.raises(LayoutError) as caught:
        network_from_text(layout_text)
    return [d.format() for d in caught.value.errors]


# --- the documented defaults are the code's defaults ------------------------------------------

def documented_defaults() -> dict[str, str]:
    """The key -> default table under '#### Multilayer stacks' in docs/layout-format.md."""
    doc = (ROOT / "docs" / "layout-format.md").read_text(encoding="utf-8")
    section = doc.split("#### Multilayer stacks", 1)[1]
    rows: dict[str, str] = {}
    for line in section.splitlines():
        if rows and not line.startswith("|"):
            break
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) == 3 and cells[0].startswith("`"):
            rows[cells[0].strip("`")] = cells[1]
    return rows


def code_default(key: str, spec: MultilayerSpec) -> Any:
    il = spec.interlayers
    assert il is not None
    return {
        "pair": f"{spec.absorber}/{spec.spacer}",
        "period": spec.period_m,
        "absorber_fraction": spec.absorber_fraction,
        "periods": spec.periods,
        "cap": spec.cap or "none",
        "cap_thickness": spec.cap_thickness_m,
        "substrate": spec.substrate,
        "roughness": spec.roughness_m,
        "interlayers": il.material,
        "interlayers.material": il.material,
        "interlayers.density": il.density_g_cm3,
        "interlayers.absorber_on_spacer": il.absorber_on_spacer_m,
        "interlayers.spacer_on_absorber": il.spacer_on_absorber_m,
    }[key]


DIMENSION = {"period": "length", "cap_thickness": "length", "roughness": "length",
             "interlayers.absorber_on_spacer": "length",
             "interlayers.spacer_on_absorber": "length", "interlayers.density": "density",
             "absorber_fraction": "fraction"}


def test_docs_state_the_defaults_the_reader_uses() -> None:
    documented = documented_defaults()
    read = stack("{}")  # every key left out
    assert read == MultilayerSpec()
    assert set(documented) == {"pair", "period", "absorber_fraction", "periods", "cap",
                               "cap_thickness", "substrate", "roughness", "interlayers",
                               "interlayers.material", "interlayers.density",
                               "interlayers.absorber_on_spacer",
                               "interlayers.spacer_on_absorber"}
    for key, shown in documented.items():
        value = re.search(r"`([^`]*)`", shown)
        assert value is not None, f"{key}: no default in backticks: {shown!r}"
        expected = code_default(key, read)
        if key in DIMENSION:
            assert parse_quantity(value[1], DIMENSION[key]) == pytest.approx(expected,
                                                                              rel=1e-12), key
        elif key == "periods":
            assert int(value[1]) == expected
        else:
            assert value[1] == expected, key


def test_physics_interlayer_defaults_match_the_layout_defaults() -> None:
    il = MultilayerSpec().interlayers
    assert il is not None
    assert (il.material, il.density_g_cm3, il.absorber_on_spacer_m, il.spacer_on_absorber_m) == (
        MOSI_INTERLAYERS.material, MOSI_INTERLAYERS.density_g_cm3,
        MOSI_INTERLAYERS.absorber_on_spacer_m, MOSI_INTERLAYERS.spacer_on_absorber_m)


def test_default_mirror_reflects_about_the_measured_070() -> None:
    # Best measured Mo/Si about 0.69–0.70 at 13.4–13.5 nm (S. Braun et al., Jpn. J. Appl. Phys.
    # 41 (2002) 4074: 0.687 and 0.698); the default stack at 13.5 nm, normal incidence.
    net = network_from_text(text("{}"))
    assert 0.68 <= net.node["m1"].gain_max <= 0.705
    assert "MoSi2 interlayers" in net.node["m1"].provenance


def test_ideal_stack_stays_available() -> None:
    # The ideal stack of the physics layer (Parratt, sharp interfaces, no cap).
    spec = stack("{cap: none, roughness: 0 nm, interlayers: none}")
    assert spec.cap is None and spec.roughness_m == 0.0 and spec.interlayers is None
    net = network_from_text(text("{cap: none, roughness: 0 nm, interlayers: none}"))
    assert net.node["m1"].gain_max == pytest.approx(
        multilayer_reflectivity().reflectivity, rel=1e-12)


def test_interlayers_default_only_for_mosi_and_can_be_given() -> None:
    assert stack("{pair: Mo/Be}").interlayers is None
    given = stack("{interlayers: {absorber_on_spacer: 1.2 nm, spacer_on_absorber: 6 A}}")
    assert given.interlayers is not None
    assert given.interlayers.absorber_on_spacer_m == pytest.approx(1.2e-9)
    assert given.interlayers.spacer_on_absorber_m == pytest.approx(0.6e-9)
    assert given.interlayers.density_g_cm3 == 6.2
    other = stack("{pair: Mo/Be, interlayers: {material: Be2Mo, density: 3.5 g/cm^3}}")
    assert other.interlayers is not None and other.interlayers.material == "Be2Mo"


# --- renamed keys and bounds ---------------------------------------------------------------

@pytest.mark.parametrize(("old", "new", "value"), [
    ("bilayers", "periods", "40"), ("gamma", "absorber_fraction", "0.4"),
    ("capping", "cap", "Ru"), ("capping_thickness", "cap_thickness", "2 nm")])
def test_old_keys_name_the_new_key(old: str, new: str, value: str) -> None:
    found = errors(text(f"{{{old}: {value}}}"))
    assert len(found) == 1, found
    line = text(f"{{{old}: {value}}}").splitlines()[4]
    # Located at the old key itself (hand count of its column on line 5).
    assert found[0].startswith(f"test.yaml:5:{line.index(old) + 1}: error:"), found
    assert f"'{old}' is now called '{new}'" in found[0]


@pytest.mark.parametrize("periods", ["0", "1001", "2.5", "true", "many"])
def test_periods_outside_the_physical_range(periods: str) -> None:
    found = errors(text(f"{{periods: {periods}}}"))
    assert len(found) == 1 and "from 1 to 1000" in found[0], found


@pytest.mark.parametrize("periods", [1, 1000])
def test_periods_at_the_ends_of_the_range(periods: int) -> None:
    assert stack(f"{{periods: {periods}}}").periods == periods


@pytest.mark.parametrize(("interlayers", "fragment"), [
    ("3", "'interlayers' must be 'none' or a mapping"),
    ("{thickness: 1 nm}", "unknown key 'thickness'"),
    ("{absorber_on_spacer: -1 nm}", "must be at least 0"),
    ("{absorber_on_spacer: 4 nm, spacer_on_absorber: 2 nm}", "more than the thinner layer")])
def test_bad_interlayers_are_located_errors(interlayers: str, fragment: str) -> None:
    found = errors(text(f"{{interlayers: {interlayers}}}"))
    assert any(fragment in m and m.startswith("test.yaml:5:") for m in found), found


# --- far from the peak -----------------------------------------------------------------------

def off_peak(net: Any) -> list[str]:
    return [d.format() for d in net.warnings if d.code == "off-peak-multilayer"]


def test_no_warning_near_the_peak_and_on_the_demo() -> None:
    assert off_peak(network_from_text(text("{}", "5 deg"))) == []
    from beamplan.layout.loader import load_layout
    from beamplan.network.graph import build_network

    assert off_peak(build_network(load_layout("layouts/coated-line.yaml"))) == []


def test_warning_far_from_the_peak_gives_a_period_that_works() -> None:
    warned = off_peak(network_from_text(text("{}", "15 deg")))
    assert len(warned) == 1 and warned[0].startswith("test.yaml:5:3: warning: mirror 'm1'")
    assert "Bragg's law with refraction correction" in warned[0]
    period = float(re.search(r"A period of ([\d.]+) nm", warned[0])[1])  # type: ignore[index]
    # The suggested period puts the Parratt peak at 13.5 nm at 15 deg (within 0.01 nm).
    peak = multilayer_peak(period_m=period * 1e-9, incidence_rad=math.radians(15),
                           capping=("Ru", 2e-9), roughness_m=0.4e-9,
                           interlayers=MOSI_INTERLAYERS)
    assert peak.peak_wavelength_m == pytest.approx(13.5e-9, abs=0.01e-9)
    fixed = network_from_text(text(f"{{period: {period} nm}}", "15 deg"))
    assert off_peak(fixed) == []


def test_warning_for_a_wrong_period_at_normal_incidence() -> None:
    # d = 7.5 nm peaks near 2 × 7.5 × n̄ ≈ 14.6 nm (Bragg's law, hand calculation).
    warned = off_peak(network_from_text(text("{period: 7.5 nm}")))
    assert len(warned) == 1 and "peaks at 14.5" in warned[0], warned


def test_warning_for_a_scanner_train() -> None:
    scanner = ("{dose: 30 mJ/cm^2, wph: 100, mirror_multilayer: {period: 6.9 nm}, "
               "mirror_incidence: 20 deg}")
    warned = off_peak(network_from_text(text("{}", "0 deg", scanner)))
    assert len(warned) == 1 and "scanner 's1' mirror_multilayer" in warned[0], warned
