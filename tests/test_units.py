"""Quantities with units: the built-in table against pint, dimensions, errors."""

from __future__ import annotations

import math
import re

import pytest

from beamplan._pint import registry
from beamplan.units import DIMENSIONS, PINT_SPELLING, UnitError, parse_quantity


@pytest.mark.parametrize("dimension", sorted(DIMENSIONS))
def test_every_table_unit_agrees_with_pint(dimension: str) -> None:
    # Reference: pint's own unit definitions (a general-purpose library from PyPI).
    ureg = registry()
    dim = DIMENSIONS[dimension]
    target = {"rate": "1/hour", "fraction": "dimensionless"}.get(
        dimension, dim.si_unit.replace("²", "^2").replace("³", "^3"))
    for unit in dim.units:
        spelled = PINT_SPELLING.get(unit, unit.replace("µ", "u").replace("μ", "u"))
        spelled = re.sub(r"([a-zA-Z])([23])$", r"\1^\2", spelled)
        spelled = spelled.replace("²", "^2").replace("³", "^3")
        if unit in ("", "%", "percent", "ppm"):
            spelled = {"": "1", "%": "percent", "percent": "percent", "ppm": "ppm"}[unit]
        # 0.25 of each unit: 0.25 GW is inside the accepted range of a power (at most 1e9 W)
        expected = ureg.Quantity(f"0.25 {spelled}").to(target).magnitude
        assert parse_quantity(f"0.25 {unit}", dimension) == pytest.approx(expected, rel=1e-12), unit


def test_examples_and_plain_numbers() -> None:
    # Hand conversions (SI definitions, common practice).
    assert parse_quantity("11 kW", "power") == 11000.0
    assert parse_quantity(320, "power") == 320.0
    assert parse_quantity("0.5 %", "fraction") == pytest.approx(0.005)
    assert parse_quantity("30 mJ/cm^2", "dose") == pytest.approx(300.0)  # 1 mJ/cm² = 10 J/m²
    assert parse_quantity("1e-3 mbar", "pressure") == pytest.approx(0.1)
    assert parse_quantity("20 degC", "temperature") == pytest.approx(293.15)
    assert parse_quantity("5 deg", "angle") == pytest.approx(math.radians(5.0))


def test_pint_fallback_handles_units_outside_the_table() -> None:
    # 1 horsepower (mechanical) = 745.69987 W (pint's definition; NIST SP 811).
    assert parse_quantity("1 hp", "power") == pytest.approx(745.69987, rel=1e-6)
    assert parse_quantity("3 ft", "length") == pytest.approx(0.9144)  # 1 ft = 0.3048 m exactly


@pytest.mark.parametrize(("value", "dimension", "fragment"), [
    ("500 mJ", "power", "is an energy, not a power"),
    ("five watts", "power", "expected a power"),
    (True, "power", "expected a power"),
    ("inf W", "power", "expected a power"),
    ([1, 2], "length", "expected a length"),
    ("3 furlongs per fortnight", "power", "not a power"),
])
def test_bad_values_name_the_problem(value: object, dimension: str, fragment: str) -> None:
    with pytest.raises(UnitError) as info:
        parse_quantity(value, dimension)
    assert fragment in info.value.message
    assert info.value.hint
