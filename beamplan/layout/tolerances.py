"""Tolerances: how far each property of a layout may sit from its nominal value.

A tolerance file (or the optional top-level ``tolerances:`` section of a
layout, with the same content) reads::

    format: 1
    tolerances:
      groups:
        coating-batch: {correlation: 1.0, note: mirrors coated in one run}
      items:
        - {part: if-fold, property: reflectivity, spread: 0.01, group: coating-batch}
        - {source: fel-main, property: power, spread: 3%, distribution: uniform}
        - {element: trunk, property: fraction, port: bay-a, spread: 2%,
           distribution: truncnormal, bounds: [0.43, 0.47]}

``spread`` is relative when written with ``%`` (of the nominal value), else
absolute in the property's unit (``0.01``, ``2 Pa``, ``0.05 deg``). It is
the standard deviation for ``normal``, ``truncnormal`` and ``lognormal`` (of
the logarithm, relative) and the half-width for ``uniform``. Every problem is
a located one-line diagnostic, as for layouts. Which targets and properties
exist is checked against the layout by :mod:`beamplan.analyses.tolerance_model`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from beamplan.errors import LayoutError, Location
from beamplan.layout.reader import MISSING, Context, MapReader
from beamplan.layout.yamlpos import Path, YamlDocument, load_yaml
from beamplan.units import UnitError, parse_quantity

__all__ = ["DISTRIBUTIONS", "PROPERTIES", "TARGETS", "Group", "Tolerance", "ToleranceSet",
           "load_tolerances", "parse_tolerances"]

DISTRIBUTIONS = ("normal", "truncnormal", "uniform", "lognormal")
TARGETS = ("part", "element", "source", "scanner", "profile")
PROPERTIES: dict[str, str] = {  # property -> dimension of its absolute spread
    "reflectivity": "fraction", "transmission": "fraction", "efficiency": "fraction",
    "fraction": "fraction", "setting": "fraction", "roughness": "length",
    "grazing": "angle", "pressure": "pressure", "power": "power", "dose": "dose",
    "wph": "rate",
}
FORMAT_VERSION = 1
_NOWHERE = Location("<tolerances>", 1, 1)


@dataclass(frozen=True)
class Group:
    """A correlation group: its members share a common draw with weight ``correlation``."""

    name: str
    correlation: float = 1.0
    note: str = ""
    location: Location = _NOWHERE


@dataclass(frozen=True)
class Tolerance:
    """One tolerance line: a target, a property, a spread and a distribution.

    ``spread`` is a fraction of the nominal when ``relative``, else in SI units;
    ``bounds`` (truncated normal only) are absolute values in SI units.
    """

    name: str
    target_kind: str
    target: str
    property: str
    spread: float
    relative: bool
    distribution: str = "normal"
    port: str | None = None
    bounds: tuple[float, float] | None = None
    group: str | None = None
    location: Location = _NOWHERE


@dataclass(frozen=True)
class ToleranceSet:
    """Every tolerance and correlation group read from a file or a layout section.

    Examples
    --------
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml("format: 1\\ntolerances:\\n  items:\\n"
    ...                  "    - {element: m1, property: reflectivity, spread: 1%}\\n", "t.yaml")
    >>> tol = parse_tolerances(doc).tolerances[0]
    >>> tol.name, tol.spread, tol.relative
    ('m1.reflectivity', 0.01, True)
    """

    tolerances: tuple[Tolerance, ...]
    groups: tuple[Group, ...] = ()
    file: str = ""

    def __add__(self, other: ToleranceSet) -> ToleranceSet:
        return ToleranceSet(self.tolerances + other.tolerances, self.groups + other.groups,
                            self.file or other.file)


def _spread(r: MapReader, key: str, dimension: str) -> tuple[float, bool] | None:
    value = r.raw(key, required=True, example="2%")
    if value is MISSING:
        return None
    if isinstance(value, str) and value.strip().endswith("%"):
        try:
            number = float(value.strip()[:-1]) / 100.0
        except ValueError:
            r._bad(key, f"'{key}' is {value!r}, not a percentage", "e.g. 'spread: 2%'")
            return None
        relative = True
    else:
        try:
            number = parse_quantity(value, dimension)
        except UnitError as exc:
            r._bad(key, f"'{key}': {exc.message}", exc.hint or "e.g. 'spread: 2%' (relative) "
                   "or an absolute value with its unit", code="bad-unit")
            return None
        relative = False
    if not number >= 0.0 or number != number:
        r._bad(key, f"'{key}' is {value!r}; a spread is zero or positive", "correct the value",
               code="out-of-range")
        return None
    return number, relative


def _bounds(r: MapReader, dimension: str) -> tuple[float, float] | None:
    value = r.raw("bounds")
    if value is MISSING:
        return None
    if not isinstance(value, list) or len(value) != 2:
        r._bad("bounds", f"'bounds' is {value!r}", "give [low, high] in the property's unit")
        return None
    out = []
    for i, item in enumerate(value):
        try:
            out.append(parse_quantity(item, dimension))
        except UnitError as exc:
            r._bad("bounds", f"'bounds': {exc.message}", exc.hint, index=i, code="bad-unit")
            return None
    if out[0] >= out[1]:
        r._bad("bounds", f"'bounds' [{value[0]}, {value[1]}] is empty or reversed",
               "write [low, high] with low < high")
        return None
    return out[0], out[1]


def _item(ctx: Context, data: Any, path: Path, groups: dict[str, Group]) -> Tolerance | None:
    if not isinstance(data, dict):
        ctx.error("bad-type", f"tolerance {path[-1] + 1 if isinstance(path[-1], int) else ''}"
                  f" must be a mapping such as {{part: if-fold, property: reflectivity, "
                  f"spread: 1%}}", ctx.positions.value(path), "see docs/tolerance.md")
        return None
    given = [k for k in TARGETS if k in data]
    label = f"tolerance {int(path[-1]) + 1}"
    r = MapReader(ctx, data, {k: (*path, k) for k in data}, label, path)
    if len(given) != 1:
        what = "no target" if not given else f"{len(given)} targets ({', '.join(given)})"
        ctx.error("bad-target", f"{label}: {what}", ctx.positions.value(path),
                  f"give exactly one of {', '.join(TARGETS)}")
        for key in given:
            r.raw(key)
        r.finish()
        return None
    kind = given[0]
    target = r.text(kind)
    prop = r.text("property", required=True)
    name = r.text("name", default=f"{target}.{prop}")
    r.subject = f"tolerance '{name}'"
    port = r.text("port") or None
    dimension = PROPERTIES.get(prop)
    if prop and dimension is None:
        r._bad("property", f"unknown property '{prop}'",
               f"the properties are: {', '.join(PROPERTIES)}", code="unknown-property")
    distribution = r.text("distribution", default="normal")
    if distribution not in DISTRIBUTIONS:
        r._bad("distribution", f"unknown distribution '{distribution}'",
               f"use one of {', '.join(DISTRIBUTIONS)}")
    spread = _spread(r, "spread", dimension or "fraction")
    bounds = _bounds(r, dimension or "fraction")
    if distribution == "truncnormal" and bounds is None and r.has("spread"):
        ctx.error("missing-key", f"{r.subject}: a truncated normal needs 'bounds'",
                  ctx.positions.value(path), "add e.g. 'bounds: [0.90, 0.95]' (absolute values)")
    elif bounds is not None and distribution != "truncnormal":
        r._bad("bounds", "'bounds' apply to 'distribution: truncnormal' only",
               "remove 'bounds' or write 'distribution: truncnormal'")
    group = r.text("group") or None
    if group is not None and group not in groups:
        from beamplan.errors import did_you_mean

        r._bad("group", f"unknown group '{group}'", did_you_mean(group, groups) or
               "define it under 'groups:'", code="unknown-group")
    r.finish()
    if spread is None or not target or not prop or dimension is None:
        return None
    return Tolerance(name, kind, target, prop, spread[0], spread[1], distribution, port,
                     bounds, group, ctx.positions.value(path))


def _groups(ctx: Context, r: MapReader) -> dict[str, Group]:
    data = r.mapping("groups")
    out: dict[str, Group] = {}
    for name, settings in (data or {}).items():
        path = (*r.paths["groups"], name)
        g = MapReader(ctx, settings if isinstance(settings, dict) else {},
                      {k: (*path, k) for k in (settings if isinstance(settings, dict) else {})},
                      f"group '{name}'", path)
        rho = g.quantity("correlation", "fraction", default=1.0, minimum=0.0, maximum=1.0)
        note = g.text("note")
        g.finish()
        out[str(name)] = Group(str(name), 1.0 if rho is None else rho, note,
                               ctx.positions.key(path))
    return out


def parse_tolerances(doc: YamlDocument, in_layout: bool = False) -> ToleranceSet:
    """Read a tolerance file, or the ``tolerances:`` section of a layout document.

    Raises
    ------
    LayoutError
        With every problem found, each located at its line and column.
    """
    ctx = Context(doc.positions)
    data = doc.data if isinstance(doc.data, dict) else {}
    if not isinstance(doc.data, dict):
        ctx.error("bad-type", "a tolerance file must be a mapping with 'format:' and "
                  "'tolerances:'", doc.positions.value(()), "see docs/tolerance.md")
        raise LayoutError(ctx.diagnostics)
    top = MapReader(ctx, data, {k: (k,) for k in data}, "tolerance file", ())
    if in_layout:
        if "tolerances" not in data:
            return ToleranceSet((), (), doc.positions.file)
    else:
        fmt = top.integer("format", default=-1)
        if fmt != FORMAT_VERSION:
            ctx.error("bad-format", f"tolerance file 'format' is "
                      f"{'missing' if fmt == -1 else fmt}; this beamplan reads format "
                      f"{FORMAT_VERSION}", top.value_loc("format"), "write 'format: 1'")
        top.text("note")
    section = top.mapping("tolerances", required=not in_layout)
    if not in_layout:
        top.finish()
    if section is None:
        if ctx.failed:
            raise LayoutError(ctx.diagnostics)
        return ToleranceSet((), (), doc.positions.file)
    r = top.sub("tolerances", "'tolerances'")
    groups = _groups(ctx, r)
    items = r.raw("items", required=True, example="[{part: if-fold, property: reflectivity, "
                  "spread: 1%}]")
    out: list[Tolerance] = []
    if items is not MISSING and not isinstance(items, list):
        r._bad("items", "'items' must be a list of tolerances", "write each on a line "
               "starting with '- '", code="bad-type")
    elif isinstance(items, list):
        for index, item in enumerate(items):
            tol = _item(ctx, item, (*r.paths["items"], index), groups)
            if tol is not None:
                out.append(tol)
    r.finish()
    seen: dict[tuple[str, str, str, str | None], Tolerance] = {}
    for tol in out:
        key = (tol.target_kind, tol.target, tol.property, tol.port)
        if key in seen:
            ctx.error("duplicate-tolerance", f"tolerance '{tol.name}': {tol.target_kind} "
                      f"'{tol.target}' already has a '{tol.property}' tolerance (line "
                      f"{seen[key].location.line})", tol.location, "keep one of them")
        seen[key] = tol
    if ctx.failed:
        raise LayoutError(ctx.diagnostics)
    return ToleranceSet(tuple(out), tuple(groups.values()), doc.positions.file)


def load_tolerances(path: str) -> ToleranceSet:
    """Load a tolerance file.

    Examples
    --------
    >>> tols = load_tolerances("layouts/tolerances/two-bay.yaml")
    >>> len(tols.tolerances) > 3
    True
    """
    return parse_tolerances(load_yaml(path))
