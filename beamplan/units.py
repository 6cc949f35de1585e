"""Quantities with units: parse the strings that people write in layout files.

A layout value such as ``"11 kW"``, ``"0.5 %"`` or ``"2e-3 mbar"`` is turned
into a plain float in SI units (W, m, Pa, K, rad, s, J/m², ...), checked
against the dimension that the key expects. Plain numbers are taken in the
key's documented unit, which is the SI unit unless the key says otherwise.

The common units are parsed from a small table, which keeps start-up fast;
anything else is handed to pint, imported only then. Both paths agree by
construction and a test compares every table entry against pint.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Any

from beamplan.errors import excerpt

__all__ = [
    "DIMENSIONS",
    "UnitError",
    "format_power",
    "parse_quantity",
]


class UnitError(ValueError):
    """A value that is not a quantity of the expected dimension.

    Parameters
    ----------
    message
        What is wrong, in plain words.
    hint
        What would be right (an example of a valid value).
    """

    def __init__(self, message: str, hint: str = "") -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint


@dataclass(frozen=True)
class Dimension:
    """A physical dimension that a layout key may ask for.

    Attributes
    ----------
    name
        Our name for it, used in messages ("power", "length", ...).
    si_unit
        The SI unit that values are converted to.
    pint_dims
        The dimensionality as pint writes it, for the fallback path.
    units
        Unit spellings and their factor to ``si_unit`` (offset units are
        handled separately).
    example
        A valid value, quoted in error hints.
    limit
        The largest magnitude accepted anywhere, in ``si_unit``: far beyond
        any real beamline, it keeps absurd numbers out of the physics and the
        LP ("common practice, no source").
    """

    name: str
    si_unit: str
    pint_dims: str
    units: dict[str, float]
    example: str
    limit: float = 1e9


_MICRO = ("u", "µ", "μ")


def _prefixed(base: str, factors: dict[str, float]) -> dict[str, float]:
    out: dict[str, float] = {}
    for prefix, factor in factors.items():
        if prefix == "u":
            for micro in _MICRO:
                out[micro + base] = factor
        else:
            out[prefix + base] = factor
    return out


_SI_PREFIX = {"": 1.0, "k": 1e3, "M": 1e6, "G": 1e9, "m": 1e-3, "u": 1e-6, "n": 1e-9}

DIMENSIONS: dict[str, Dimension] = {
    d.name: d
    for d in (
        Dimension("power", "W", "[mass] * [length] ** 2 / [time] ** 3",
                  _prefixed("W", _SI_PREFIX), "500 W", 1e9),
        Dimension("energy", "J", "[mass] * [length] ** 2 / [time] ** 2",
                  _prefixed("J", _SI_PREFIX), "2 J", 1e12),
        Dimension("length", "m", "[length]",
                  {**_prefixed("m", {"": 1.0, "k": 1e3, "c": 1e-2, "m": 1e-3, "u": 1e-6,
                                     "n": 1e-9, "p": 1e-12}),
                   "Å": 1e-10, "A": 1e-10, "angstrom": 1e-10}, "13.5 nm", 1e6),
        Dimension("area", "m²", "[length] ** 2",
                  {"m2": 1.0, "m^2": 1.0, "cm2": 1e-4, "cm^2": 1e-4, "mm2": 1e-6,
                   "mm^2": 1e-6, "um2": 1e-12, "um^2": 1e-12, "µm2": 1e-12, "µm^2": 1e-12,
                   "nm2": 1e-18, "nm^2": 1e-18}, "400 nm^2", 1e4),
        Dimension("angle", "rad", "",
                  {"rad": 1.0, "mrad": 1e-3, "urad": 1e-6, "µrad": 1e-6,
                   "deg": math.pi / 180.0, "°": math.pi / 180.0,
                   "degree": math.pi / 180.0, "degrees": math.pi / 180.0}, "5 deg", 1e3),
        Dimension("pressure", "Pa", "[mass] / [length] / [time] ** 2",
                  {"Pa": 1.0, "hPa": 1e2, "kPa": 1e3, "MPa": 1e6, "mPa": 1e-3,
                   "bar": 1e5, "mbar": 1e2, "ubar": 0.1, "µbar": 0.1,
                   "Torr": 101325.0 / 760.0, "torr": 101325.0 / 760.0,
                   "mTorr": 101325.0 / 760.0e3, "mtorr": 101325.0 / 760.0e3,
                   "atm": 101325.0}, "1e-3 Pa", 1e8),
        Dimension("temperature", "K", "[temperature]", {"K": 1.0, "mK": 1e-3}, "295 K", 1e5),
        Dimension("time", "s", "[time]",
                  {"s": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "min": 60.0,
                   "h": 3600.0, "hour": 3600.0}, "8 s", 1e7),
        Dimension("speed", "m/s", "[length] / [time]",
                  {"m/s": 1.0, "mm/s": 1e-3, "cm/s": 1e-2}, "2 m/s", 1e3),
        Dimension("dose", "J/m²", "[mass] / [time] ** 2",
                  {"J/m2": 1.0, "J/m^2": 1.0, "mJ/cm2": 10.0, "mJ/cm^2": 10.0,
                   "mJ/cm²": 10.0, "J/m²": 1.0}, "30 mJ/cm^2", 1e6),
        Dimension("density", "g/cm³", "[mass] / [length] ** 3",
                  {"g/cm3": 1.0, "g/cm^3": 1.0, "g/cm³": 1.0, "kg/m3": 1e-3,
                   "kg/m^3": 1e-3}, "12.37 g/cm^3", 1e3),
        Dimension("rate", "1/h", "1 / [time]",
                  {"wph": 1.0, "/h": 1.0, "1/h": 1.0, "per hour": 1.0}, "150 wph", 1e5),
        Dimension("magnetic field", "T", "[mass] / [current] / [time] ** 2",
                  {"T": 1.0, "mT": 1e-3}, "0.9 T", 1e3),
        Dimension("electron energy", "eV", "[mass] * [length] ** 2 / [time] ** 2",
                  {"eV": 1.0, "keV": 1e3, "MeV": 1e6, "GeV": 1e9}, "1 GeV", 1e13),
        Dimension("absorption", "1/m", "1 / [length]",
                  {"1/m": 1.0, "/m": 1.0, "1/um": 1e6, "/um": 1e6, "1/µm": 1e6,
                   "/µm": 1e6, "1/nm": 1e9, "/nm": 1e9}, "5 /um", 1e12),
        Dimension("fraction", "1", "",
                  {"": 1.0, "%": 1e-2, "percent": 1e-2, "ppm": 1e-6}, "0.95", 1e6),
    )
}

# pint names for the non-SI-looking spellings in the table, for the cross-check.
PINT_SPELLING = {
    "wph": "1/hour", "/h": "1/hour", "1/h": "1/hour", "per hour": "1/hour",
    "A": "angstrom", "Å": "angstrom", "°": "degree",
    "/m": "1/m", "/um": "1/um", "/µm": "1/µm", "/nm": "1/nm",
    "T": "tesla", "mT": "millitesla", "ubar": "microbar", "µbar": "microbar",
    "mtorr": "millitorr", "mTorr": "millitorr", "torr": "torr", "Torr": "torr",
}

_OFFSET_TEMPERATURE = {"degC": 273.15, "°C": 273.15, "C": 273.15, "celsius": 273.15}

_NUMBER = r"[-+]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][-+]?[0-9]+)?"
_DECIMAL_COMMA = re.compile(r"^\s*([-+]?[0-9]+),([0-9]+)\s*(.*?)\s*$")
_QUANTITY_RE = re.compile(rf"^\s*({_NUMBER})\s*(.*?)\s*$")
# What pint may be asked to read as a unit: a unit expression, not a stray number,
# so that '1,5 kW', '3 kW 2' or '90 %%' are errors rather than 15 kW, 6 kW, 0.009.
_UNIT_EXPRESSION = re.compile(
    r"^[A-Za-zµμΩÅ°](?:[A-Za-zµμΩÅ°_]|\s*[/*·]\s*|\^-?\d+|\*\*-?\d+|(?<=[A-Za-z])\d|\s+(?=[A-Za-z]))*$")


def _fast_parse(text: str, dim: Dimension) -> float | None:
    """Parse with the built-in table; ``None`` when the unit is not in it."""
    match = _QUANTITY_RE.match(text)
    if match is None:
        return None
    number = float(match.group(1))
    unit = match.group(2)
    if dim.name == "temperature" and unit in _OFFSET_TEMPERATURE:
        return number + _OFFSET_TEMPERATURE[unit]
    factor = dim.units.get(unit)
    if factor is None:
        return None
    return float(f"{number * factor:.15g}")  # 95 % is 0.95, not 0.9500000000000001


def _pint_parse(text: str, dim: Dimension) -> float:
    """Parse with pint (imported lazily) and convert to the SI unit of ``dim``."""
    from beamplan._pint import registry

    ureg = registry()
    try:
        quantity = ureg.Quantity(text)
    except Exception as exc:  # pint raises many exception types for bad input
        match = _QUANTITY_RE.match(text)
        unit = match.group(2) if match else ""
        near = [u for u in dim.units if u and u.lower() == unit.lower()]
        hint = (f"did you mean '{near[0]}'?" if near
                else f"write a number and a unit, e.g. '{dim.example}'")
        raise UnitError(f"cannot read {excerpt(text)} as {_article(dim.name)}: unknown unit "
                        f"{excerpt(unit)}", hint) from exc
    if not hasattr(quantity, "dimensionality"):
        raise UnitError(f"cannot read {excerpt(text)} as a quantity",
                        f"write a number and a unit, e.g. '{dim.example}'")
    target = dim.si_unit.replace("²", "^2").replace("³", "^3")
    if dim.name == "rate":
        target = "1/hour"
    if dim.name == "fraction":
        target = "dimensionless"
    try:
        value = quantity.to(target).magnitude
    except Exception as exc:
        got = str(quantity.dimensionality) or "a pure number"
        raise UnitError(f"{excerpt(text)} is not {_article(dim.name)} (its dimension is {got})",
                        f"write it in {dim.si_unit}, e.g. '{dim.example}'") from exc
    return float(value)


def _article(word: str) -> str:
    return f"an {word}" if word[0] in "aeiou" else f"a {word}"


def _other_dimension(text: str, dim: Dimension) -> None:
    """Raise a clear error when the unit belongs to another dimension of the table."""
    match = _QUANTITY_RE.match(text)
    if match is None or not match.group(2):
        return
    unit = match.group(2)
    for other in DIMENSIONS.values():
        if other is not dim and unit in other.units and unit not in dim.units:
            raise UnitError(f"{excerpt(text)} is {_article(other.name)}, not {_article(dim.name)}",
                            f"write it in {dim.si_unit}, e.g. '{dim.example}'")


def parse_quantity(value: Any, dimension: str, plain_unit: str | None = None) -> float:
    """Convert a layout value to a float in the SI unit of ``dimension``.

    Parameters
    ----------
    value
        A number (taken in ``plain_unit``, default the SI unit) or a string
        with a number and a unit.
    dimension
        A key of :data:`DIMENSIONS`, e.g. ``"power"``.
    plain_unit
        The unit of plain numbers, when it is not the SI unit.

    Returns
    -------
    float
        The value in SI units (``DIMENSIONS[dimension].si_unit``).

    Raises
    ------
    UnitError
        The value is not a number, is not finite, or has the wrong dimension.

    Examples
    --------
    >>> parse_quantity("11 kW", "power")
    11000.0
    >>> parse_quantity("95 %", "fraction")
    0.95
    >>> round(parse_quantity("5 deg", "angle"), 6)
    0.087266
    >>> parse_quantity(320, "power")
    320.0
    """
    dim = DIMENSIONS[dimension]
    number = _number(value, dim, plain_unit)
    if not math.isfinite(number) or abs(number) > dim.limit:
        raise _out_of_range(value, dim)
    return number


def _out_of_range(value: Any, dim: Dimension) -> UnitError:
    return UnitError(f"{excerpt(value)} is out of range: {_article(dim.name)} must be finite "
                     f"and at most {dim.limit:g} {dim.si_unit} in size",
                     f"correct the value, e.g. '{dim.example}'")


def _check_text(value: str, dim: Dimension) -> None:
    """Refuse digits other than 0-9 and a decimal comma, with a clear message."""
    if not value.isascii():
        for char in value:
            if char.isdecimal() and not char.isascii():
                raise UnitError(f"expected {_article(dim.name)}, got {excerpt(value)}: "
                                f"{excerpt(char)} (U+{ord(char):04X}) is not one of the "
                                "digits 0-9", f"write it with the digits 0-9, e.g. "
                                f"'{dim.example}'")
    comma = _DECIMAL_COMMA.match(value)
    if comma:
        fixed = f"{comma[1]}.{comma[2]}" + (f" {comma[3]}" if comma[3] else "")
        raise UnitError(f"{excerpt(value)} has a decimal comma, which is not accepted",
                        f"write {excerpt(fixed)} with a decimal point")


def _number(value: Any, dim: Dimension, plain_unit: str | None) -> float:
    if isinstance(value, bool):
        raise UnitError(f"expected {_article(dim.name)}, got {value!r}",
                        f"write e.g. '{dim.example}'")
    if isinstance(value, (int, float)):
        try:
            number = float(value)
        except OverflowError:  # an int of hundreds of digits
            raise _out_of_range(value, dim) from None
        if plain_unit:
            number = _fast_parse(f"{number!r} {plain_unit}", dim) or number
    elif isinstance(value, str):
        _check_text(value, dim)
        parsed = _fast_parse(value, dim)
        if parsed is None:
            _other_dimension(value, dim)
            match = _QUANTITY_RE.match(value)
            if not match or not _UNIT_EXPRESSION.match(match.group(2)):
                raise UnitError(f"expected {_article(dim.name)}, got {excerpt(value)}",
                                f"write one number (with a decimal point, not a comma) and a "
                                f"unit, e.g. '{dim.example}'")
            parsed = _pint_parse(value, dim)
        number = parsed
    else:
        raise UnitError(f"expected {_article(dim.name)}, got {_kind(value)}",
                        f"write e.g. '{dim.example}'")
    return number


def _kind(value: Any) -> str:
    if value is None:
        return "nothing"
    kind = {"dict": "a mapping", "list": "a list"}.get(type(value).__name__,
                                                       type(value).__name__)
    return f"{kind} {excerpt(value)}"


def format_power(power_w: float) -> str:
    """Format a power in W with a sensible prefix for people.

    Examples
    --------
    >>> format_power(11000.0)
    '11.00 kW'
    >>> format_power(312.345)
    '312.3 W'
    >>> format_power(0.0)
    '0 W'
    """
    magnitude = abs(power_w)
    if magnitude < 5e-5:  # below what the report shows: solver noise reads as nothing
        return "0 W"
    if magnitude >= 999.995e3:
        return f"{power_w / 1e6:.2f} MW"
    if magnitude >= 999.95:
        return f"{power_w / 1e3:.2f} kW"
    if magnitude >= 1.0:
        return f"{power_w:.1f} W"
    return f"{power_w * 1e3:.1f} mW"
