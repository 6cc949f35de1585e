"""Value kinds of the ageing inputs: durations, ageing units, dates, costs, window times.

Each reader takes a :class:`~beamplan.layout.reader.MapReader` and a key, and
returns the value in hours, seconds, joules, J/m², a date or money, or reports a
located problem on the reader's context and returns a fallback, as
:mod:`beamplan.layout.ageing` needs them.
"""

from __future__ import annotations

import datetime as dt
import re
from typing import Any

from beamplan.layout.reader import MISSING, MapReader

__all__ = ["HOURS_PER_MONTH", "HOURS_PER_YEAR", "duration_h", "read_date", "read_duration",
           "read_money", "read_per", "read_window_times"]

HOURS_PER_YEAR = 8766.0  # 365.25 days (common practice)
HOURS_PER_MONTH = HOURS_PER_YEAR / 12.0
_DURATION = {"h": 1.0, "hour": 1.0, "hours": 1.0, "d": 24.0, "day": 24.0, "days": 24.0,
             "week": 168.0, "weeks": 168.0, "month": HOURS_PER_MONTH,
             "months": HOURS_PER_MONTH, "y": HOURS_PER_YEAR, "year": HOURS_PER_YEAR,
             "years": HOURS_PER_YEAR}
_ENERGY = {"J": 1.0, "kJ": 1e3, "MJ": 1e6, "Wh": 3600.0, "kWh": 3.6e6, "MWh": 3.6e9}
_FLUENCE = {"J/mm2": 1e6, "J/mm^2": 1e6, "J/cm2": 1e4, "J/cm^2": 1e4, "J/m2": 1.0,
            "J/m^2": 1.0, "kJ/mm2": 1e9, "kJ/mm^2": 1e9, "MJ/mm2": 1e12, "MJ/mm^2": 1e12}
_QUANTITY = re.compile(r"^\s*([0-9.eE+-]+)\s*(.*?)\s*$")


def _split(value: Any) -> tuple[float, str] | None:
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return float(value), ""
    match = _QUANTITY.match(str(value))
    if match is None:
        return None
    try:
        return float(match.group(1)), match.group(2)
    except ValueError:
        return None


def duration_h(text: str) -> float:
    """Hours in a duration such as ``500 h``, ``3 months`` or ``5 years``.

    Raises
    ------
    ValueError
        Not a positive duration.

    Examples
    --------
    >>> duration_h("2 years"), duration_h("500 h")
    (17532.0, 500.0)
    """
    parts = _split(text)
    if parts is None or parts[1] not in _DURATION or parts[0] <= 0:
        raise ValueError(f"{text!r} is not a duration; write e.g. '500 h', '6 months' or "
                         "'5 years'")
    return parts[0] * _DURATION[parts[1]]


def read_duration(r: MapReader, key: str, default: float | None) -> float | None:
    """Hours in the duration at ``key``; ``default`` when absent, ``None`` (reported) when wrong.

    Examples
    --------
    >>> from beamplan.layout.reader import Context, MapReader
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml('step: 2 weeks\\nhorizon: 5 apples', "a.yaml")
    >>> r = MapReader(Context(doc.positions), doc.data, {k: (k,) for k in doc.data}, "x", ())
    >>> read_duration(r, "step", 500.0), read_duration(r, "every", None)
    (336.0, None)
    >>> read_duration(r, "horizon", 1.0), r.ctx.failed
    (None, True)
    """
    value = r.raw(key)
    if value is MISSING:
        return default
    parts = _split(value)
    if parts is None or parts[1] not in _DURATION or parts[0] <= 0:
        r.ctx.error("bad-unit", f"{r.subject}: '{key}' is {value!r}, expected a duration",
                    r.value_loc(key), "e.g. '500 h', '3 months' or '5 years'")
        return None
    return parts[0] * _DURATION[parts[1]]


def read_per(r: MapReader) -> tuple[str, float] | None:
    """The ageing unit at ``per``: ``("hours", s)``, ``("energy", J)`` or ``("fluence", J/m²)``.

    ``None`` when it is missing (a required key) or wrong, both reported.

    Examples
    --------
    >>> from beamplan.layout.reader import Context, MapReader
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml('per: 1 kWh', "a.yaml")
    >>> r = MapReader(Context(doc.positions), doc.data, {k: (k,) for k in doc.data}, "x", ())
    >>> read_per(r)
    ('energy', 3600000.0)
    """
    value = r.raw("per", True, "1000 h")
    if value is MISSING:
        return None
    parts = _split(value)
    if parts is not None and parts[0] > 0:
        number, unit = parts
        if unit in _DURATION:
            return "hours", number * _DURATION[unit] * 3600.0
        if unit in _ENERGY:
            return "energy", number * _ENERGY[unit]
        if unit in _FLUENCE:
            return "fluence", number * _FLUENCE[unit]
    r.ctx.error("bad-unit", f"{r.subject}: 'per' is {value!r}, expected hours of light, "
                "an absorbed energy or an absorbed energy per area", r.value_loc("per"),
                "e.g. 'per: 1000 h', 'per: 1 kWh' or 'per: 1 J/mm2'")
    return None


def read_date(r: MapReader, key: str) -> dt.date | None:
    """The date at ``key`` (YAML date or ISO text); ``None`` when absent or wrong (reported).

    Examples
    --------
    >>> from beamplan.layout.reader import Context, MapReader
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml('start: 2027-01-04', "a.yaml")
    >>> r = MapReader(Context(doc.positions), doc.data, {k: (k,) for k in doc.data}, "x", ())
    >>> read_date(r, "start"), read_date(r, "end")
    (datetime.date(2027, 1, 4), None)
    """
    value = r.raw(key)
    if value is MISSING:
        return None
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    try:
        return dt.date.fromisoformat(str(value))
    except ValueError:
        r.ctx.error("bad-value", f"{r.subject}: '{key}' is {value!r}, expected a date",
                    r.value_loc(key), "write it as YYYY-MM-DD, e.g. 2027-01-04")
        return None


def read_money(r: MapReader, key: str) -> float:
    """The cost at ``key`` (a number >= 0 in the file's currency); 0 when absent or wrong.

    Examples
    --------
    >>> from beamplan.layout.reader import Context, MapReader
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml('cost: 3000', "a.yaml")
    >>> r = MapReader(Context(doc.positions), doc.data, {k: (k,) for k in doc.data}, "x", ())
    >>> read_money(r, "cost"), read_money(r, "other")
    (3000.0, 0.0)
    """
    value = r.raw(key)
    if value is MISSING:
        return 0.0
    if isinstance(value, bool) or not isinstance(value, (int, float)) or value < 0:
        r.ctx.error("bad-value", f"{r.subject}: '{key}' is {value!r}, expected a number >= 0 "
                    "(in the file's currency)", r.value_loc(key), f"e.g. '{key}: 5000'")
        return 0.0
    return float(value)


def read_window_times(w: MapReader, raw: Any, start: dt.date | None) -> tuple[float, ...]:
    """Hours from the start of the windows that ``at`` lists (times, or dates after ``start``).

    Examples
    --------
    >>> from beamplan.layout.reader import Context, MapReader
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml('at: [4000 h, 2027-02-03]', "a.yaml")
    >>> r = MapReader(Context(doc.positions), doc.data, {k: (k,) for k in doc.data}, "x", ())
    >>> import datetime
    >>> read_window_times(r, r.raw("at"), datetime.date(2027, 1, 4))
    (4000.0, 720.0)
    """
    items = raw if isinstance(raw, list) else [raw]
    out = []
    for i, item in enumerate(items):
        if isinstance(item, dt.date):
            if start is None:
                w.ctx.error("missing-key", "ageing windows: a window given as a date needs "
                            "'start:' in the ageing section", w.value_loc("at", i),
                            "add e.g. 'start: 2027-01-04', or give hours ('4000 h')")
                continue
            out.append((item - start).days * 24.0)
            continue
        parts = _split(item)
        if parts is None or parts[1] not in _DURATION or parts[0] <= 0:
            w.ctx.error("bad-unit", f"ageing windows: 'at' item {item!r} is not a time",
                        w.value_loc("at", i), "e.g. '4000 h', '6 months' or a date")
            continue
        out.append(parts[0] * _DURATION[parts[1]])
    return tuple(out)
