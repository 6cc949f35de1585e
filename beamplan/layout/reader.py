"""Read one YAML mapping against the keys a section expects, collecting problems.

A :class:`MapReader` hands out typed, unit-converted values and remembers
which keys were asked for; :meth:`MapReader.finish` then reports every key
that nobody asked for, with a "did you mean" hint. The keys a section
accepts are therefore exactly the keys its reading code asks for.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from beamplan.errors import Diagnostic, Location, did_you_mean, excerpt
from beamplan.layout.spec import KeySpec, read_by_spec
from beamplan.layout.yamlpos import Path, Positions
from beamplan.units import DIMENSIONS, UnitError, parse_quantity

__all__ = ["ID_PATTERN", "MISSING", "Context", "MapReader"]

ID_PATTERN = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_\-]*$")
MISSING = object()
MAX_COUNT = 1_000_000  # the largest whole number a key takes unless it says less
_NUMBER_START = re.compile(r"^[0-9]+(\s*[A-Za-zµ%/].*)?$")
_MISSING = MISSING


class Context:
    """Collects diagnostics for one input file and knows its positions."""

    def __init__(self, positions: Positions) -> None:
        self.positions = positions
        self.diagnostics: list[Diagnostic] = []

    def error(self, code: str, message: str, location: Location, hint: str = "") -> None:
        """Record an error."""
        self.diagnostics.append(Diagnostic("error", code, message, location, hint))

    def warning(self, code: str, message: str, location: Location, hint: str = "") -> None:
        """Record a warning."""
        self.diagnostics.append(Diagnostic("warning", code, message, location, hint))

    @property
    def failed(self) -> bool:
        """Whether any error was recorded."""
        return any(d.is_error for d in self.diagnostics)


class MapReader:
    """Typed access to one mapping of a layout.

    Parameters
    ----------
    ctx
        Where problems go.
    data
        The mapping's keys and values.
    paths
        For each key, its path in the document (keys merged from a part
        point into the part).
    subject
        How messages name the thing, e.g. ``"element 'm2'"``.
    """

    def __init__(self, ctx: Context, data: Mapping[str, Any], paths: Mapping[str, Path],
                 subject: str, where: Path) -> None:
        self.ctx = ctx
        self.data = data
        self.paths = paths
        self.subject = subject
        self.where = where
        self.asked: set[str] = set()

    # -- positions ---------------------------------------------------------
    def key_loc(self, key: str) -> Location:
        """Location of a key, or of the mapping when the key is absent."""
        if key in self.paths:
            return self.ctx.positions.key(self.paths[key])
        return self.ctx.positions.key(self.where)

    def value_loc(self, key: str, index: int | None = None) -> Location:
        """Location of a key's value (or one item of a list value)."""
        if key not in self.paths:
            return self.ctx.positions.key(self.where)
        path = self.paths[key]
        return self.ctx.positions.value(path if index is None else (*path, index))

    def _bad(self, key: str, message: str, hint: str = "", index: int | None = None,
             code: str = "bad-value") -> None:
        self.ctx.error(code, f"{self.subject}: {message}", self.value_loc(key, index), hint)

    # -- raw access ----------------------------------------------------------
    def raw(self, key: str, required: bool = False, example: str = "") -> Any:
        """The raw value of ``key`` or a sentinel for a missing key."""
        self.asked.add(key)
        if key in self.data and self.data[key] is not None:
            return self.data[key]
        if required:
            hint = f"add e.g. '{key}: {example}'" if example else f"add '{key}'"
            self.ctx.error("missing-key", f"{self.subject}: '{key}' is required",
                           self.ctx.positions.key(self.where), hint)
        return _MISSING

    def has(self, key: str) -> bool:
        """Whether the mapping gives ``key`` (does not mark it as asked)."""
        return key in self.data and self.data[key] is not None

    # -- typed access --------------------------------------------------------
    def quantity(self, key: str, dimension: str, *, required: bool = False,
                 default: float | None = None, minimum: float | None = None,
                 maximum: float | None = None, strict_minimum: bool = False,
                 plain_unit: str | None = None) -> float | None:
        """A quantity in SI units, checked against ``dimension`` and bounds."""
        dim = DIMENSIONS[dimension]
        value = self.raw(key, required, dim.example)
        if value is _MISSING:
            return default
        try:
            number = parse_quantity(value, dimension, plain_unit)
        except UnitError as exc:
            self._bad(key, f"'{key}': {exc.message}", exc.hint, code="bad-unit")
            return None
        return self._bounded(key, number, value, minimum, maximum, strict_minimum)

    def _bounded(self, key: str, number: float, shown: Any, minimum: float | None,
                 maximum: float | None, strict_minimum: bool,
                 index: int | None = None) -> float | None:
        if minimum is not None and (number < minimum or (strict_minimum and number <= minimum)):
            relation = "above" if strict_minimum else "at least"
            self._bad(key, f"'{key}' is {excerpt(shown)}, it must be {relation} {minimum:g}",
                      "correct the value", index, code="out-of-range")
            return None
        if maximum is not None and number > maximum:
            self._bad(key, f"'{key}' is {excerpt(shown)}, it must be at most {maximum:g}",
                      "correct the value", index, code="out-of-range")
            return None
        return number

    def fraction(self, key: str, *, required: bool = False,
                 default: float | None = None) -> float | None:
        """A fraction in [0, 1] (plain number or percent)."""
        return self.quantity(key, "fraction", required=required, default=default,
                             minimum=0.0, maximum=1.0)

    def fraction_range(self, key: str, *, required: bool = False,
                       default: tuple[float, float] | None = None
                       ) -> tuple[float, float] | None:
        """A fixed fraction or an adjustable ``[low, high]`` range in [0, 1]."""
        value = self.raw(key, required, "[0.2, 1.0]")
        if value is _MISSING:
            return default
        if not isinstance(value, list):
            fixed = self.fraction(key)
            return None if fixed is None else (fixed, fixed)
        if len(value) != 2:
            self._bad(key, f"'{key}' has {len(value)} values",
                      "give one value, or a range as [low, high]")
            return None
        bounds: list[float] = []
        for i, item in enumerate(value):
            try:
                number = parse_quantity(item, "fraction")
            except UnitError as exc:
                self._bad(key, f"'{key}': {exc.message}", exc.hint, index=i, code="bad-unit")
                return None
            checked = self._bounded(key, number, item, 0.0, 1.0, False, index=i)
            if checked is None:
                return None
            bounds.append(checked)
        low, high = bounds
        if low > high:
            self._bad(key, f"'{key}' range [{low:g}, {high:g}] is reversed",
                      f"write it as [{high:g}, {low:g}]")
            return None
        return low, high

    def integer(self, key: str, *, default: int, minimum: int | None = None,
                maximum: int = MAX_COUNT) -> int:
        """A whole number, at most ``maximum`` (a million unless the key says less)."""
        value = self.raw(key)
        if value is _MISSING:
            return default
        if isinstance(value, bool) or not isinstance(value, int):
            self._bad(key, f"'{key}' must be a whole number, got {excerpt(value)}",
                      f"e.g. '{key}: 1'")
            return default
        low = minimum if minimum is not None else -maximum
        if not low <= value <= maximum:
            self._bad(key, f"'{key}' is {excerpt(value)}, it must be from {low} to {maximum}",
                      "correct the value", code="out-of-range")
            return default
        return value

    def flag(self, key: str, *, default: bool) -> bool:
        """A yes/no value."""
        value = self.raw(key)
        if value is _MISSING:
            return default
        if not isinstance(value, bool):
            self._bad(key, f"'{key}' must be true or false, got {excerpt(value)}")
            return default
        return value

    def in_use(self, noun: str) -> bool:
        """False when the mapping says ``offline: true`` (default: in use).

        The retired key ``in_service`` is refused with a located error that names
        ``offline``; ``noun`` says what is taken out of use (``"an element"``).

        Examples
        --------
        >>> from beamplan.layout.yamlpos import parse_yaml
        >>> doc = parse_yaml("m1: {offline: true}", "x.yaml")
        >>> r = MapReader(Context(doc.positions), doc.data["m1"], {"offline": ("m1", "offline")},
        ...               "element 'm1'", ("m1",))
        >>> r.in_use("an element")
        False
        """
        if "in_service" in self.data:
            self.asked.add("in_service")
            self.ctx.error("renamed-key", f"{self.subject}: 'in_service' is not a key",
                           self.key_loc("in_service"),
                           f"to take {noun} out of use write 'offline: true'")
        return not self.flag("offline", default=False)

    def text(self, key: str, *, required: bool = False, default: str = "") -> str:
        """A string value."""
        value = self.raw(key, required, "a-name")
        if value is _MISSING:
            return default
        if not isinstance(value, (str, int, float)) or isinstance(value, bool):
            self._bad(key, f"'{key}' must be text, got {excerpt(value)}")
            return default
        return str(value)

    def mapping(self, key: str, *, required: bool = False) -> dict[str, Any] | None:
        """A nested mapping."""
        value = self.raw(key, required, "{...}")
        if value is _MISSING:
            return None
        if not isinstance(value, dict):
            self._bad(key, f"'{key}' must be a mapping of names to settings, "
                           f"got {type(value).__name__}", code="bad-type")
            return None
        return value

    def sub(self, key: str, subject: str) -> MapReader:
        """A reader for the nested mapping at ``key`` (which must be a mapping)."""
        value = self.data.get(key) or {}
        path = self.paths[key]
        return MapReader(self.ctx, value, {k: (*path, k) for k in value}, subject, path)

    def finish(self, hint_keys: tuple[str, ...] = (),
               table: tuple[KeySpec, ...] = ()) -> None:
        """Report every key that was not asked for.

        A key that ``table`` (see :mod:`beamplan.layout.spec`) describes but
        that no reader code asked for is checked by its description.
        """
        for spec in table:
            if spec.name not in self.asked and spec.name in self.data:
                read_by_spec(self, spec)
        known = sorted(self.asked | set(hint_keys) | {spec.name for spec in table})
        for key in self.data:
            if key not in self.asked:
                hint = did_you_mean(key, known) or f"the keys here are: {', '.join(known)}"
                if _NUMBER_START.match(key):  # '{power: 1,5 kW}' reads as key '5 kW'
                    hint = ("a decimal comma is not accepted: write e.g. '1.5 kW' with a "
                            "decimal point (in '{...}' a comma starts a new key)")
                self.ctx.error("unknown-key", f"{self.subject}: unknown key {excerpt(key)}",
                               self.key_loc(key), hint)
