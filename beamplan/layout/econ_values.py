"""Value kinds of the economics inputs: amounts, prices per kWh, times, shares, powers.

:class:`EconReader` wraps a :class:`~beamplan.layout.reader.MapReader` for
:mod:`beamplan.layout.economics`: it accepts ``400 million``, ``80 per MWh``,
``20 years`` as well as plain numbers, reports a wrong value located, and
records which keys took their default.
"""

from __future__ import annotations

import re

from beamplan.layout.reader import MISSING, MapReader

__all__ = ["EconReader"]

_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"
_AMOUNT = re.compile(rf"^\s*({_NUMBER})\s*(thousand|million|billion|k|M|bn)?\s*$")
_SCALE = {None: 1.0, "thousand": 1e3, "k": 1e3, "million": 1e6, "M": 1e6, "billion": 1e9,
          "bn": 1e9}
_PRICE = re.compile(rf"^\s*({_NUMBER})\s*(?:per|/)\s*(kWh|MWh|Wh)\s*$")
_PER_KWH = {"Wh": 1e3, "kWh": 1.0, "MWh": 1e-3}
_TIME = re.compile(rf"^\s*({_NUMBER})\s*(h|hours?|d|days?|y|yr|years?)?\s*$")
_HOURS = {"h": 1.0, "hour": 1.0, "hours": 1.0, "d": 24.0, "day": 24.0, "days": 24.0,
          "y": 8760.0, "yr": 8760.0, "year": 8760.0, "years": 8760.0}



class EconReader:
    """A MapReader with the economics value kinds (amounts, prices, times).

    Each method returns the value in base units (money, money per kWh, hours,
    a fraction, W), or ``default`` when the key is absent or wrong; an absent
    key is added to ``defaulted`` (with ``prefix``), a wrong one is reported
    on the reader's :class:`~beamplan.layout.reader.Context`.

    Examples
    --------
    >>> from beamplan.layout.reader import Context, MapReader
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml("capital: 2 million\\nprice: 80 per MWh\\nlife: 10 years", "e.yaml")
    >>> r = MapReader(Context(doc.positions), doc.data, {k: (k,) for k in doc.data}, "x", ())
    >>> defaulted: list[str] = []
    >>> rd = EconReader(r, defaulted, "x.")
    >>> rd.amount("capital", 0.0), round(rd.price("price", 0.0), 6), rd.years("life", 5.0)
    (2000000.0, 0.08, 10.0)
    >>> rd.number("passes", 30.0), defaulted
    (30.0, ['x.passes'])
    """

    def __init__(self, r: MapReader, defaulted: list[str], prefix: str) -> None:
        self.r, self.defaulted, self.prefix = r, defaulted, prefix

    def _value(self, key: str, pattern: re.Pattern[str], what: str, example: str
               ) -> tuple[float, str | None] | None:
        value = self.r.raw(key)
        if value is MISSING:
            self.defaulted.append(f"{self.prefix}{key}")
            return None
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return float(value), None
        match = pattern.match(value) if isinstance(value, str) else None
        if match is None:
            self.r.ctx.error("bad-value", f"{self.r.subject}: '{key}' is {value!r}, expected "
                             f"{what}", self.r.value_loc(key), f"write e.g. '{key}: {example}'")
            return None
        return float(match.group(1)), match.group(2)

    def _check(self, key: str, number: float, low: float, high: float = float("inf"),
               strict: bool = False) -> float | None:
        if number < low or (strict and number <= low) or number > high:
            bound = f"above {low:g}" if strict else f"at least {low:g}"
            if high != float("inf"):
                bound += f" and at most {high:g}"
            self.r.ctx.error("out-of-range", f"{self.r.subject}: '{key}' is {number:g}, it must "
                             f"be {bound}", self.r.value_loc(key), "correct the value")
            return None
        return number

    def amount(self, key: str, default: float) -> float:
        got = self._value(key, _AMOUNT, "an amount (a number, or e.g. '400 million')",
                          "400 million")
        if got is None:
            return default
        checked = self._check(key, got[0] * _SCALE[got[1]], 0.0)
        return default if checked is None else checked

    def price(self, key: str, default: float) -> float:
        got = self._value(key, _PRICE, "a price per kWh or per MWh", "0.10 per kWh")
        if got is None:
            return default
        if got[1] is None:
            self.r.ctx.error("bad-unit", f"{self.r.subject}: '{key}' needs its energy unit",
                             self.r.value_loc(key), f"write e.g. '{key}: {got[0]:g} per kWh'")
            return default
        checked = self._check(key, got[0] * _PER_KWH[got[1]], 0.0)
        return default if checked is None else checked

    def hours(self, key: str, default: float, unit: str = "h", low: float = 0.0,
              high: float = float("inf"), strict: bool = True) -> float:
        got = self._value(key, _TIME, "a time (e.g. '8000 h', '20 years')", f"{default:g} {unit}")
        if got is None:
            return default
        checked = self._check(key, got[0] * _HOURS[got[1] or unit], low, high, strict)
        return default if checked is None else checked

    def years(self, key: str, default: float) -> float:
        return self.hours(key, default * 8760.0, "years") / 8760.0

    def share(self, key: str, default: float, strict: bool = False) -> float:
        if not self.r.has(key):
            self.r.raw(key)
            self.defaulted.append(f"{self.prefix}{key}")
            return default
        got = self.r.quantity(key, "fraction", minimum=0.0, maximum=1.0, strict_minimum=strict)
        return default if got is None else got

    def number(self, key: str, default: float, low: float = 0.0) -> float:
        got = self._value(key, _AMOUNT, "a number", f"{default:g}")
        if got is None:
            return default
        checked = self._check(key, got[0] * _SCALE[got[1]], low, strict=True)
        return default if checked is None else checked

    def power(self, key: str, default: float) -> float:
        if not self.r.has(key):
            self.r.raw(key)
            self.defaulted.append(f"{self.prefix}{key}")
            return default
        got = self.r.quantity(key, "power", minimum=0.0, strict_minimum=True)
        return default if got is None else got
