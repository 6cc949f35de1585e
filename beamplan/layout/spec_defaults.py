"""The defaults of the key description, parsed once and typed, for the readers.

:mod:`beamplan.layout.spec` gives each default as the text the docs show
(``"295 K"``, ``"1 %"``, ``"[0, 1]"``, ``"true"``). A reader that applies a
default takes it from here, so the documented default and the applied one
cannot drift apart (tests/test_spec_defaults.py loads a minimal layout and
compares every one).
"""

from __future__ import annotations

import functools
from typing import TypeVar

from beamplan.layout.spec import find
from beamplan.units import parse_quantity

__all__ = ["default_range", "default_value"]

T = TypeVar("T", bool, int, float, str)

Value = bool | int | float | str | tuple[float, float]


@functools.cache
def _parsed(section: str, key: str) -> Value:
    """The default of ``key`` in ``section`` as a value (SI units for a quantity)."""
    spec = find(section, key)
    if spec is None or not spec.default:
        raise KeyError(f"'{key}' of section '{section}' has no default in the key description")
    text = spec.default
    if spec.type == "quantity":
        try:
            number: float | str = float(text)  # a plain number is in the SI unit
        except ValueError:
            number = text
        return parse_quantity(number, spec.dimension)
    if spec.type == "int":
        return int(text)
    if spec.type == "bool":
        if text not in ("true", "false"):
            raise ValueError(f"the default of '{key}' in section '{section}' is {text!r}, "
                             "not 'true' or 'false'")
        return text == "true"
    if spec.type == "range":
        low, _, high = text.strip("[] ").partition(",")
        return float(low), float(high)
    return text


def default_value(section: str, key: str, kind: type[T]) -> T:
    """The default of ``key`` in ``section``, as a ``kind`` (float, int, bool or str).

    A quantity comes in SI units; a choice or text as written.

    Raises
    ------
    KeyError
        The key has no default in the description.
    TypeError
        The default is not of ``kind`` (the description gives another type).

    Examples
    --------
    >>> default_value("drift", "temperature", float), default_value("undulator", "tolerance", float)
    (295.0, 0.01)
    >>> default_value("scanner", "priority", int), default_value("scanner", "cap_at_useful", bool)
    (1, True)
    >>> default_value("source", "surplus", str)
    'turn-down'
    >>> default_value("scanner", "priority", float)
    Traceback (most recent call last):
    ...
    TypeError: the default of 'priority' in section 'scanner' is of type int, not float
    """
    value = _parsed(section, key)
    if type(value) is not kind or not isinstance(value, kind):
        raise TypeError(f"the default of '{key}' in section '{section}' is of type "
                        f"{type(value).__name__}, not {kind.__name__}")
    return value


def default_range(section: str, key: str) -> tuple[float, float]:
    """The default ``[low, high]`` of a range key of ``section``.

    Raises
    ------
    KeyError
        The key has no default in the description.
    TypeError
        The key is not a range.

    Examples
    --------
    >>> default_range("output", "fraction")
    (0.0, 1.0)
    """
    value = _parsed(section, key)
    if not isinstance(value, tuple):
        raise TypeError(f"'{key}' of section '{section}' is not a range")
    return value
