"""Ageing: the runway against a closed form, the overlayer against an independent
transfer-matrix computation, properties of the laws, input errors and the command."""

from __future__ import annotations

import json
import math
import pathlib

import numpy as np
import periodictable
import pytest
from hypothesis import given
from hypothesis import strategies as st

from beamplan.analyses.ageing import Event, run_runway
from beamplan.analyses.ageing_laws import LawModel
from beamplan.cli.main import main
from beamplan.errors import LayoutError, Location
from beamplan.layout.ageing import Law, MirrorModel, parse_ageing
from beamplan.layout.yamlpos import parse_yaml
from beamplan.physics.overlayer import overlayer_on_mirror, overlayer_on_multilayer
from tests.conftest import layout_from_text

CHAIN = """
layout: chain
format: 1
sources: {src: {power: 1 kW}}
elements:
  m1: {kind: mirror, reflectivity: 0.9}
  m2: {kind: mirror, reflectivity: 0.8}
scanners: {s1: {power: 500 W}}
beamlines: ["src -> m1 -> m2 -> s1"]
"""

CHAIN_AGEING = """
format: 1
ageing:
  step: 500 h
  horizon: 10 years
  optics:
    m1: {law: exponential, loss: 1 %, per: 1000 h, clean: {restore: new, cost: 100}}
    m2: {law: exponential, loss: 2 %, per: 1000 h, clean: {restore: new, cost: 100}}
"""


def _spec(text: str = CHAIN_AGEING):  # type: ignore[no-untyped-def]
    return parse_ageing(parse_yaml(text, "chain.ageing.yaml"))


def test_single_chain_runway_matches_the_closed_form() -> None:
    # hand calculation: R_i(t) = R0_i exp(-k_i t), k_i = -ln(1 - loss_i) / 1000 h;
    # delivered = P R01 R02 exp(-(k1 + k2) t) = need at t* = ln(P R01 R02 / need) / (k1 + k2)
    k = -math.log(1 - 0.01) / 1000.0 - math.log(1 - 0.02) / 1000.0
    t_star = math.log(1000.0 * 0.9 * 0.8 / 500.0) / k  # about 12,100 h
    runway = run_runway(layout_from_text(CHAIN), _spec())
    assert runway.runway_h is not None and runway.scanner == "s1"
    assert runway.runway_h <= t_star <= runway.runway_h + runway.tolerance_h
    assert runway.tolerance_h == pytest.approx(500.0 / 64)
    assert runway.limiting_optic == "m2"  # the faster-ageing mirror: renewing it helps most


def test_dose_driven_law_uses_the_absorbed_power_of_the_plan() -> None:
    # hand calculation: m1 absorbs 10 % of 1 kW = 100 W = 0.1 kWh per hour; loss 1 % per kWh
    # exponential: gain after 100 h = 0.99 ** 10
    text = CHAIN_AGEING.replace("per: 1000 h, clean", "per: 1 kWh, clean", 1)
    runway = run_runway(layout_from_text(CHAIN), _spec(text), horizon_h=100.0, step_h=100.0,
                        stop_at_shortfall=False)
    assert runway.samples[-1].gain["m1"] == pytest.approx(0.99 ** 10, rel=1e-9)


def _never_cleaned_runway() -> float:
    r = run_runway(layout_from_text(CHAIN), _spec())
    assert r.runway_h is not None
    return r.runway_h


@pytest.mark.parametrize("hours", [(3000.0,), (6000.0, 9000.0), (11000.0,)])
def test_never_cleaning_gives_a_runway_no_longer_than_cleaning(hours: tuple[float, ...]) -> None:
    events = [Event(h, eid, "clean") for h in hours for eid in ("m1", "m2")]
    cleaned = run_runway(layout_from_text(CHAIN), _spec(), events=events)
    assert cleaned.runway_h is None or cleaned.runway_h >= _never_cleaned_runway() - 1e-9


_WHERE = Location("t.yaml", 1, 1)
_LAWS = [
    Law("m", "linear", "hours", 3.6e6, _WHERE, loss=0.05),
    Law("m", "exponential", "energy", 3.6e6, _WHERE, loss=0.02),
    Law("m", "exponential", "fluence", 1e6, _WHERE, loss=0.01, area_m2=4e-4),
    # an uncapped multilayer: the physics raises R a little for thin carbon (phase)
    Law("m", "overlayer", "energy", 3.6e6, _WHERE, growth_m=0.5e-9, saturation_m=10e-9,
        mirror=MirrorModel("multilayer")),
    Law("m", "overlayer", "hours", 3.6e3, _WHERE, growth_m=0.1e-9, reference_power_w=100.0,
        mirror=MirrorModel("thick", material="Ru", grazing_rad=math.radians(8))),
]
_MODELS = [LawModel.compile(law, 13.5e-9) for law in _LAWS]


@given(st.integers(0, len(_MODELS) - 1), st.floats(0.0, 5e3), st.floats(0.0, 500.0),
       st.floats(0.0, 1e4))
def test_ageing_never_raises_a_reflectivity(which: int, hours: float, absorbed_w: float,
                                            before: float) -> None:
    model = _MODELS[which]
    state = model.advance(model.new_state, model.units(before, absorbed_w, True))
    later = model.advance(state, model.units(hours, absorbed_w, True))
    assert model.gain(later) <= model.gain(state) <= 1.0
    assert model.gain(model.restored(later, 0.9)) >= model.gain(later)


# -- the overlayer against an independent transfer-matrix computation -------------------

def _n(formula: str, density: float | None = None) -> complex:
    # periodictable returns n = 1 - delta - i beta (Angstrom); take the conjugate
    kwargs = {"density": density} if density else {}
    n = periodictable.xsf.index_of_refraction(formula, wavelength=135.0, **kwargs)
    return complex(np.conj(n))


def _tmm_s(layers: list[tuple[complex, float]], substrate: complex, incidence: float) -> float:
    """s-polarised R by 2x2 transfer matrices (Born & Wolf form), written here on purpose."""
    k = 2 * math.pi / 13.5e-9
    sin2 = math.sin(incidence) ** 2

    def q(n: complex) -> complex:
        root = np.sqrt(n * n - sin2 + 0j)
        return complex(-root if root.imag < 0 else root)

    total = np.eye(2, dtype=complex)
    for n, d in layers:
        qj, phase = q(n), k * q(n) * d
        total = total @ np.array([[np.cos(phase), -1j * np.sin(phase) / qj],
                                  [-1j * qj * np.sin(phase), np.cos(phase)]])
    q0, qs = q(1.0 + 0j), q(substrate)
    b, c = total @ np.array([1.0, qs])
    r = (q0 * b - c) / (q0 * b + c)
    return float(abs(r) ** 2)


@pytest.mark.parametrize("nm", [0.5, 1.0, 2.0, 5.0])
def test_carbon_on_a_thick_ru_mirror_against_transfer_matrices(nm: float) -> None:
    grazing = math.radians(10)
    expected = _tmm_s([(_n("C"), nm * 1e-9)], _n("Ru"), math.pi / 2 - grazing)
    got = overlayer_on_mirror("C", nm * 1e-9, "Ru", grazing, polarisation=1.0).reflectivity
    assert got == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize("nm", [0.5, 1.0, 2.0, 5.0])
def test_carbon_on_mo_si_against_transfer_matrices(nm: float) -> None:
    stack = [(_n("C"), nm * 1e-9), (_n("Ru"), 2e-9)]
    stack += [(_n("Si"), 0.6 * 6.9e-9), (_n("Mo"), 0.4 * 6.9e-9)] * 50
    expected = _tmm_s(stack, _n("SiO2", 2.2), 0.0)
    got = overlayer_on_multilayer("C", nm * 1e-9, capping=("Ru", 2e-9),
                                  polarisation=1.0).reflectivity
    assert got == pytest.approx(expected, rel=1e-6)


def test_one_nm_of_carbon_costs_about_one_percent_of_capped_mo_si() -> None:
    # from memory (/work/shared/README.md): ~1 nm carbon costs ~1 % of Mo/Si R; computed here
    clean = overlayer_on_multilayer("C", 0.0, capping=("Ru", 2e-9)).reflectivity
    dirty = overlayer_on_multilayer("C", 1e-9, capping=("Ru", 2e-9)).reflectivity
    assert 0.005 < 1 - dirty / clean < 0.02


# -- input errors and the command ---------------------------------------------------------

@pytest.mark.parametrize(("body", "fragment", "line"), [
    ("    m1: {law: expo, loss: 1 %, per: 1000 h}", "unknown law 'expo'", 5),
    ("    m1: {law: linear, loss: 1 %, per: 3 furlongs}", "'per' is '3 furlongs'", 5),
    ("    m1: {law: linear, loss: 1 %, per: 1 J/mm2}", "needs the illuminated 'area'", 5),
    ("    m1: {law: linear, los: 1 %, per: 1000 h}", "unknown key 'los'", 5),
    ("    m1: {law: overlayer, growth: 1 nm, per: 10 h, mirror: {material: Ru}}",
     "'grazing' is required", 5),
])
def test_bad_ageing_input_is_one_located_error(body: str, fragment: str, line: int) -> None:
    text = "format: 1\nageing:\n  horizon: 1 year\n  optics:\n" + body + "\n"
    with pytest.raises(LayoutError) as info:
        parse_ageing(parse_yaml(text, "bad.yaml"))
    message = "\n".join(d.format() for d in info.value.errors)
    assert fragment in message and f"bad.yaml:{line}:" in message


def test_unknown_target_is_located_by_the_command(tmp_path: pathlib.Path,
                                                  capsys: pytest.CaptureFixture[str]) -> None:
    bad = tmp_path / "bad.ageing.yaml"
    bad.write_text(CHAIN_AGEING.replace("    m2:", "    m9:"))
    lay = tmp_path / "chain.yaml"
    lay.write_text(CHAIN)
    assert main(["ageing", str(lay), str(bad)]) == 1
    err = capsys.readouterr().err
    assert "bad.ageing.yaml:8:5" in err and "'m9' is no element or part" in err
    assert "Traceback" not in err


def test_the_layout_may_carry_its_own_ageing_section(tmp_path: pathlib.Path,
                                                     capsys: pytest.CaptureFixture[str]) -> None:
    lay = tmp_path / "chain.yaml"
    lay.write_text(CHAIN + CHAIN_AGEING.replace("format: 1\n", ""))
    assert main(["plan", str(lay), "-q"]) == 0  # the loader lets the section through
    code = main(["ageing", str(lay), "--no-plan", "--json", "-", "--start", "2027-01-04"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 0 and doc["format"] == "beamplan-ageing/1"
    assert doc["runway"]["scanner"] == "s1" and doc["runway"]["date"].startswith("2028-")


def test_demo_command_holds_every_need_and_writes_every_format(
        tmp_path: pathlib.Path, capsys: pytest.CaptureFixture[str]) -> None:
    args = ["ageing", "layouts/two-bay.yaml", "layouts/ageing/two-bay.ageing.yaml",
            "--horizon", "2 years", "--step", "2000 h"]
    code = main([*args, "--json", "-", "--csv", str(tmp_path / "csv"),
                 "--html", str(tmp_path / "a.html"), "--plot", str(tmp_path / "a.svg")])
    text = capsys.readouterr().out
    doc = json.loads(text)
    assert code == 0
    plan = doc["maintenance"]
    assert plan["feasible"] and plan["check"]["ok"] and plan["actions"]
    assert min(plan["check"]["lowest_headroom"].values()) >= 0
    assert doc["illustrative_rates"] is True
    assert sorted(p.name for p in (tmp_path / "csv").glob("*.csv")) == [
        "check.csv", "gains.csv", "runway.csv", "schedule.csv"]
    assert "Maintenance schedule" in (tmp_path / "a.html").read_text()
    assert (tmp_path / "a.svg").read_text().startswith("<?xml")
    assert main([*args, "--json", "-"]) == 0
    assert capsys.readouterr().out == text  # byte-identical on a re-run
