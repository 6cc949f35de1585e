"""Every default of the key description (layout/spec.py) is the one the readers apply.

A minimal layout leaves out every key that has a default; what the loaded
layout holds for that key must equal the description's text default, parsed
(the docs tables and the JSON schema show that text). The expected values are
the description's own; the hand values of the parser are checked in its
doctests (layout/spec_defaults.py) and below.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import pytest

from beamplan.layout.loader import parse_layout
from beamplan.layout.model import (
    DriftSpec,
    ElementSpec,
    Layout,
    MirrorSpec,
    MultilayerSpec,
    SplitterSpec,
    SwitchSpec,
)
from beamplan.layout.spec import SECTIONS, find
from beamplan.layout.spec_defaults import default_range, default_value
from beamplan.layout.yamlpos import parse_yaml

# Every key with a default is left out; the multilayers are empty mappings.
MINIMAL = """\
layout: defaults
format: 1
sources:
  fel:
    power: 1 kW
    electrical: 2 MW
    undulator: {energy: 1 GeV, period: 2.8 cm, k: 2.32}
elements:
  m1: {kind: mirror, reflectivity: 0.9}
  ml: {kind: mirror, multilayer: {}, incidence: 5 deg}
  s1: {kind: splitter, outputs: {a: {}, b: {}}}
  d1: {kind: drift, gas: H2, pressure: 2 Pa, length: 10 m}
  sw: {kind: switch}
  x1: {kind: dump}
scanners:
  sc1: {dose: 30 mJ/cm^2, wph: 100, mirror_multilayer: {}}
beamlines:
  - fel -> m1 -> ml -> s1
  - s1.a -> d1 -> sw -> sc1
  - s1.b -> x1
"""


def _element(layout: Layout, eid: str) -> ElementSpec:
    return next(e for e in layout.elements if e.id == eid)


def _mirror(layout: Layout, eid: str) -> MirrorSpec:
    spec = _element(layout, eid)
    assert isinstance(spec, MirrorSpec)
    return spec


def _stack(layout: Layout) -> MultilayerSpec:
    stack = _mirror(layout, "ml").multilayer
    assert stack is not None
    return stack


def _output(layout: Layout) -> Any:
    splitter = _element(layout, "s1")
    assert isinstance(splitter, SplitterSpec)
    return splitter.outputs[0]


def _gas_temperature(layout: Layout) -> float:
    drift = _element(layout, "d1")
    assert isinstance(drift, DriftSpec) and drift.fill is not None
    return drift.fill.temperature_k


def _switch(layout: Layout) -> SwitchSpec:
    switch = _element(layout, "sw")
    assert isinstance(switch, SwitchSpec)
    return switch


def _interlayer(layout: Layout, field: str) -> Any:
    interlayers = _stack(layout).interlayers
    assert interlayers is not None
    return getattr(interlayers, field)


def _undulator(layout: Layout, field: str) -> Any:
    undulator = layout.sources[0].undulator
    assert undulator is not None
    return getattr(undulator, field)


def _scanner_demand(layout: Layout) -> Any:
    demand = layout.scanners[0].demand
    assert demand is not None
    return demand


# (section, key) -> what the loaded layout holds when the key is left out.
APPLIED: dict[tuple[str, str], Callable[[Layout], Any]] = {
    ("top", "wavelength"): lambda lay: lay.wavelength_m,
    ("source", "electrical_fixed"): lambda lay: lay.sources[0].electrical_fixed_w,
    ("source", "surplus"): lambda lay: lay.sources[0].surplus,
    ("source", "polarisation"): lambda lay: lay.sources[0].polarisation_degree,
    ("source", "polarisation_angle"): lambda lay: lay.sources[0].polarisation_angle_rad,
    ("source", "offline"): lambda lay: not lay.sources[0].in_use,
    ("undulator", "harmonic"): lambda lay: _undulator(lay, "harmonic"),
    ("undulator", "tunable"): lambda lay: _undulator(lay, "tunable"),
    ("undulator", "tolerance"): lambda lay: _undulator(lay, "tolerance"),
    ("element", "derate"): lambda lay: _element(lay, "m1").derate,
    ("element", "offline"): lambda lay: not _element(lay, "m1").in_use,
    ("mirror", "roughness"): lambda lay: _mirror(lay, "m1").roughness_m,
    ("mirror", "plane"): lambda lay: _mirror(lay, "m1").plane_rad,
    ("output", "efficiency"): lambda lay: _output(lay).efficiency,
    ("output", "fraction"): lambda lay: (_output(lay).fraction_min, _output(lay).fraction_max),
    ("drift", "temperature"): _gas_temperature,
    ("switch", "efficiency"): lambda lay: _switch(lay).efficiency,
    ("multilayer", "pair"): lambda lay: f"{_stack(lay).absorber}/{_stack(lay).spacer}",
    ("multilayer", "period"): lambda lay: _stack(lay).period_m,
    ("multilayer", "absorber_fraction"): lambda lay: _stack(lay).absorber_fraction,
    ("multilayer", "periods"): lambda lay: _stack(lay).periods,
    ("multilayer", "cap"): lambda lay: _stack(lay).cap,
    ("multilayer", "cap_thickness"): lambda lay: _stack(lay).cap_thickness_m,
    ("multilayer", "substrate"): lambda lay: _stack(lay).substrate,
    ("multilayer", "roughness"): lambda lay: _stack(lay).roughness_m,
    ("interlayers", "material"): lambda lay: _interlayer(lay, "material"),
    ("interlayers", "density"): lambda lay: _interlayer(lay, "density_g_cm3"),
    ("interlayers", "absorber_on_spacer"): lambda lay: _interlayer(lay, "absorber_on_spacer_m"),
    ("interlayers", "spacer_on_absorber"): lambda lay: _interlayer(lay, "spacer_on_absorber_m"),
    ("scanner", "mirror_incidence"): lambda lay: _scanner_demand(lay).train_incidence_rad,
    ("scanner", "priority"): lambda lay: lay.scanners[0].priority,
    ("scanner", "cap_at_useful"): lambda lay: lay.scanners[0].cap_at_useful,
    ("scanner", "offline"): lambda lay: not lay.scanners[0].in_use,
}


@pytest.fixture(scope="module")
def minimal() -> Layout:
    return parse_layout(parse_yaml(MINIMAL, "defaults.yaml"))


def _described(section: str, key: str) -> Any:
    spec = find(section, key)
    assert spec is not None and spec.default
    kinds = {"quantity": float, "int": int, "bool": bool, "choice": str, "text": str}
    if spec.type == "range":
        return default_range(section, key)
    return default_value(section, key, kinds[spec.type])


def test_every_described_default_is_checked() -> None:
    described = {(s, spec.name) for s, specs in SECTIONS.items() for spec in specs
                 if spec.default}
    assert described == set(APPLIED)


@pytest.mark.parametrize(("section", "key"), sorted(APPLIED))
def test_the_reader_applies_the_described_default(minimal: Layout, section: str,
                                                  key: str) -> None:
    assert APPLIED[section, key](minimal) == _described(section, key)


def test_the_minimal_layout_leaves_every_defaulted_key_out() -> None:
    # A test of the test: no key with a default is written in MINIMAL.
    written = {word.strip("{},:") for word in MINIMAL.split() if word.endswith(":")}
    keys = {key for _, key in APPLIED}
    assert written & keys == {"period"}  # the undulator's period, which has no default
    undulator_period = find("undulator", "period")
    assert undulator_period is not None and not undulator_period.default


@pytest.mark.parametrize(("section", "key", "expected"), [
    ("top", "wavelength", 13.5e-9),  # "13.5 nm", hand conversion
    ("undulator", "tolerance", 0.01),  # "1 %"
    ("drift", "temperature", 295.0),  # "295 K"
    ("interlayers", "density", 6.2),  # "6.2 g/cm^3" stays in g/cm³ (the unit of 'density')
    ("multilayer", "period", 6.9e-9),  # "6.9 nm"
    ("scanner", "cap_at_useful", True),  # "true"
])
def test_the_text_defaults_parse_to_hand_values(section: str, key: str, expected: Any) -> None:
    assert _described(section, key) == expected  # hand conversions of the text above
