"""Reading the calculators' arguments: quantities, scans, counts, polarisation, densities.

Every function takes the text as typed and the option it came from, and raises
:class:`~beamplan.errors.UsageError` (exit 2) with one line that names the
option, quotes at most a short escaped excerpt of the text and says what would
be right. Text is screened first: empty, over-long, control characters and
digits outside ASCII are refused before any number is read.
"""

from __future__ import annotations

import math
import re
import unicodedata
from dataclasses import dataclass

from beamplan.errors import UsageError

__all__ = [
    "MAX_ROWS",
    "Bounds",
    "Scan",
    "count",
    "densities",
    "excerpt",
    "formula",
    "plain",
    "polarisation",
    "quantity",
    "scan",
    "screen",
]

#: The most rows one calculator run may print.
MAX_ROWS = 10_000
_MAX_TEXT = 200
_BARE_NUMBER = re.compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$")
_FORMULA = re.compile(r"^[A-Z][A-Za-z0-9().]{0,39}$")
_COUNT = re.compile(r"^\s*[0-9]{1,9}\s*$")
_DECIMAL_COMMA = re.compile(r"^\s*[-+]?[0-9]+,[0-9]+\s*(?:[^\s,0-9.]|$)")


def excerpt(text: str, limit: int = 40) -> str:
    """A short, escaped, quoted excerpt of ``text`` that is safe to print on one line.

    Examples
    --------
    >>> excerpt("5deg")
    "'5deg'"
    >>> excerpt("a\\x1b[31mb")
    "'a\\\\x1b[31mb'"
    >>> excerpt("9" * 100)
    "'9999999999999999999999999999999999999999…' (100 characters)"
    """
    shown = text if len(text) <= limit else text[:limit]
    quoted = repr(shown).encode("ascii", "backslashreplace").decode("ascii") \
        if any(unicodedata.category(c).startswith("C") for c in shown) else repr(shown)
    return quoted if len(text) <= limit else f"{quoted[:-1]}…{quoted[-1]} ({len(text)} characters)"


def screen(text: str, option: str) -> str:
    """``text`` stripped, or a usage error when it cannot be a value at all.

    Examples
    --------
    >>> screen(" 5deg ", "--grazing")
    '5deg'
    >>> screen("\\u0661\\u0663deg", "--grazing")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    beamplan.errors.UsageError: --grazing: '١٣deg' has digits that are not 0-9; write ...
    """
    if len(text) > _MAX_TEXT:
        raise UsageError(f"{option}: {excerpt(text)} is too long; a value has at most "
                         f"{_MAX_TEXT} characters")
    if any(unicodedata.category(c).startswith("C") for c in text):
        raise UsageError(f"{option}: {excerpt(text)} holds control characters; "
                         "write the value on one line, without them")
    if any(c.isdecimal() and not c.isascii() for c in text):
        raise UsageError(f"{option}: {excerpt(text)} has digits that are not 0-9; "
                         "write numbers with the digits 0-9")
    stripped = text.strip()
    if not stripped:
        raise UsageError(f"{option}: the value is empty")
    return stripped


@dataclass(frozen=True)
class Bounds:
    """The physical range of an option, in SI, and how to say it to the user.

    ``low_open``/``high_open`` exclude the end itself; ``shown`` is the range
    as the message gives it, e.g. ``"(0, 90 deg]"``.
    """

    low: float
    high: float
    shown: str
    low_open: bool = False
    high_open: bool = False

    def holds(self, value: float) -> bool:
        """Whether ``value`` lies in the range (a closed end allows for the rounding of
        units: ``90deg`` is read as 1.5707963267949, a hair above π/2)."""
        above = value > self.low if self.low_open else value >= self.low
        below = value < self.high if self.high_open else value <= self.high
        return above and below

    def clamp(self, value: float) -> float:
        """``value``, or a closed end it misses by rounding only (1e-12 relative)."""
        for end, is_open in ((self.low, self.low_open), (self.high, self.high_open)):
            if not is_open and value != end and abs(value - end) <= 1e-12 * abs(end):
                return end
        return value


def _no_decimal_comma(text: str, option: str) -> None:
    if _DECIMAL_COMMA.match(text):
        raise UsageError(f"{option}: {excerpt(text)}: a decimal comma is not accepted (write "
                         "1.5, not 1,5), and each value of a list has its unit (2deg,4deg)")


def quantity(text: str, dimension: str, option: str, bounds: Bounds | None = None,
             plain_unit: str | None = None) -> float:
    """``text`` in SI units; a bare number needs ``plain_unit`` (fractions excepted).

    Examples
    --------
    >>> round(quantity("5deg", "angle", "--grazing"), 6)
    0.087266
    >>> quantity("120deg", "angle", "--grazing", Bounds(0.0, math.pi / 2, "(0, 90 deg]", True))
    Traceback (most recent call last):
    ...
    beamplan.errors.UsageError: --grazing: '120deg' is out of range; give a value in (0, 90 deg]
    """
    from beamplan.units import DIMENSIONS, UnitError, parse_quantity

    shown = screen(text, option)
    text = shown
    if _BARE_NUMBER.match(text) and dimension != "fraction":
        if plain_unit is None:
            raise UsageError(f"{option}: {excerpt(text)} has no unit; write e.g. "
                             f"'{DIMENSIONS[dimension].example}'")
        text = f"{text} {plain_unit}"
    _no_decimal_comma(text, option)
    try:
        value = parse_quantity(text, dimension)
    except UnitError as exc:
        hint = f"; {exc.hint}" if exc.hint else ""
        said = exc.message if len(shown) <= 40 else (
            f"cannot read {excerpt(shown)} as {'an' if dimension[0] in 'aeiou' else 'a'} "
            f"{dimension}")
        raise UsageError(f"{option}: {said}{hint}") from exc
    if bounds is not None:
        value = bounds.clamp(value)
        if not bounds.holds(value):
            raise UsageError(f"{option}: {excerpt(shown)} is out of range; give a value in "
                             f"{bounds.shown}")
    return value


def plain(text: str, option: str, bounds: Bounds) -> float:
    """A plain number (no unit) within ``bounds``.

    Examples
    --------
    >>> plain("2.32", "--k", Bounds(0.0, 1000.0, "[0, 1000]"))
    2.32
    """
    text = screen(text, option)
    if not _BARE_NUMBER.match(text):
        raise UsageError(f"{option}: expected a plain number, got {excerpt(text)}")
    value = float(text)
    if not math.isfinite(value) or not bounds.holds(value):
        raise UsageError(f"{option}: {excerpt(text)} is out of range; give a number in "
                         f"{bounds.shown}")
    return value


def count(text: str, option: str, low: int, high: int) -> int:
    """A whole number from ``low`` to ``high`` written with the digits 0-9.

    Examples
    --------
    >>> count("50", "--periods", 1, 1000)
    50
    >>> count("5000", "--periods", 1, 1000)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    beamplan.errors.UsageError: --periods: '5000' is out of range; give a whole number ...
    """
    text = screen(text, option)
    if not _COUNT.match(text):
        raise UsageError(f"{option}: expected a whole number from {low} to {high}, "
                         f"got {excerpt(text)}")
    value = int(text)
    if not low <= value <= high:
        raise UsageError(f"{option}: {excerpt(text)} is out of range; give a whole number "
                         f"from {low} to {high}")
    return value


def formula(text: str, option: str, *, air: bool = False) -> str:
    """A chemical formula such as ``Ru``, ``B4C`` or ``SiO2`` (``air`` where allowed).

    Examples
    --------
    >>> formula("SiO2", "--coating")
    'SiO2'
    """
    text = screen(text, option)
    if air and text == "air":
        return text
    if not _FORMULA.match(text):
        also = " or 'air'" if air else ""
        raise UsageError(f"{option}: {excerpt(text)} is not a chemical formula; write e.g. "
                         f"Ru, B4C or SiO2{also}")
    return text


@dataclass(frozen=True)
class Scan:
    """The values of one scannable option, in SI, and how they were written."""

    values: tuple[float, ...]
    kind: str  # "single", "list" or "range"


def scan(text: str, dimension: str, option: str, steps: int | None,
         bounds: Bounds | None = None) -> Scan:
    """One value ``5deg``, a list ``2deg,5deg,10deg``, or a range ``2deg..10deg/9``.

    A range ``A..B`` takes its number of points (ends included, evenly spaced)
    from ``/N`` or else from ``steps`` (the ``--steps`` option).

    Examples
    --------
    >>> grazing = scan("2deg..10deg/5", "angle", "--grazing", None)
    >>> [round(math.degrees(v), 9) for v in grazing.values]
    [2.0, 4.0, 6.0, 8.0, 10.0]
    >>> len(scan("13nm..14nm", "length", "--wavelength", 11).values)
    11
    """
    text = screen(text, option)
    if ".." in text:
        body, slash, tail = text.rpartition("/")
        if slash and _COUNT.match(tail):
            points = count(tail, f"{option} (points after '/')", 2, MAX_ROWS)
        else:
            body = text
            if steps is None:
                raise UsageError(f"{option}: the range {excerpt(text)} needs a number of points: "
                                 "write e.g. '2deg..10deg/9', or give --steps")
            points = steps
        ends = body.split("..")
        if len(ends) != 2:
            raise UsageError(f"{option}: a range is FROM..TO or FROM..TO/POINTS, "
                             f"got {excerpt(text)}")
        start, stop = (quantity(end, dimension, option, bounds) for end in ends)
        if start == stop:
            raise UsageError(f"{option}: the range {excerpt(text)} starts and ends at the "
                             "same value; give one value instead")
        values = [start + (stop - start) * i / (points - 1) for i in range(points)]
        values[-1] = stop
        return Scan(tuple(values), "range")
    if "," in text:
        parts = text.split(",")
        if len(parts) > MAX_ROWS:
            raise UsageError(f"{option}: {len(parts)} values is too many (at most {MAX_ROWS})")
        _no_decimal_comma(text, option)
        return Scan(tuple(quantity(p, dimension, option, bounds) for p in parts), "list")
    return Scan((quantity(text, dimension, option, bounds),), "single")


_WORDS = {"s": 1.0, "p": 0.0, "unpolarised": 0.5, "unpolarized": 0.5}


def polarisation(text: str, option: str = "--polarisation") -> tuple[str, float]:
    """The polarisation as a word and its fraction of s: ``s``, ``p``, ``unpolarised``,
    or a mix ``s=0.7`` (70 % s) or ``p=0.3`` (the same mix, written by its p share).

    Examples
    --------
    >>> polarisation("unpolarised"), polarisation("s"), polarisation("p=25%")
    (('unpolarised', 0.5), ('s', 1.0), ('s=0.75', 0.75))
    """
    text = screen(text, option)
    word = text.lower()
    if word in _WORDS:
        return ("unpolarised" if _WORDS[word] == 0.5 else word), _WORDS[word]
    name, equals, share = word.partition("=")
    if equals and name.strip() in ("s", "p"):
        bounds = Bounds(0.0, 1.0, "[0, 1] (0.7 or 70%)")
        fraction = quantity(share.strip(), "fraction", option, bounds)
        s = fraction if name.strip() == "s" else 1.0 - fraction
        s = float(f"{s:.12g}")
        return f"s={s:g}", s
    raise UsageError(f"{option}: expected s, p, unpolarised or a mix such as s=0.7 "
                     f"(the fraction that is s), got {excerpt(text)}")


_DENSITY = Bounds(0.0, 30.0, "(0, 30 g/cm^3]", low_open=True)


def densities(items: list[str] | None, option: str = "--density") -> dict[str, float]:
    """``FORMULA=DENSITY`` items (repeatable option) as a mapping to g/cm³.

    Examples
    --------
    >>> densities(["Ru=12.2g/cm^3", "Mo=10200kg/m^3"])
    {'Ru': 12.2, 'Mo': 10.2}
    """
    found: dict[str, float] = {}
    for item in items or []:
        text = screen(item, option)
        name, equals, value = text.partition("=")
        if not equals or not name.strip() or not value.strip():
            raise UsageError(f"{option}: expected FORMULA=DENSITY such as Ru=12.2g/cm^3, "
                             f"got {excerpt(text)}")
        name = formula(name.strip(), option)
        if name in found:
            raise UsageError(f"{option}: {name} is given twice")
        found[name] = quantity(value.strip(), "density", option, _DENSITY)
    return found
