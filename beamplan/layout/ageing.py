"""Read an ageing file (or a layout's top-level ``ageing:`` section).

The file says how optics lose reflectivity in service, what cleaning and
replacement restore and cost, and when maintenance may happen::

    format: 1
    ageing:
      step: 500 h
      horizon: 5 years
      windows: {every: 3 months}
      currency: EUR
      optics:
        if-fold:                      # a part name or an element id
          law: exponential            # linear | exponential | overlayer
          loss: 2 %                   # relative loss per 'per'
          per: 1000 h                 # 1000 h of light | 1 kWh absorbed | 1 J/mm2
          clean: {restore: 99 %, downtime: 8 h, cost: 3000}
          replace: {downtime: 24 h, cost: 20000}

Every problem is a located one-line :class:`~beamplan.errors.Diagnostic`, read
with the layout loader's :class:`~beamplan.layout.reader.MapReader`.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass, field, replace
from typing import Any

from beamplan.errors import Diagnostic, LayoutError, Location, did_you_mean
from beamplan.layout.reader import MISSING, Context, MapReader
from beamplan.layout.yamlpos import Path, YamlDocument

__all__ = ["HOURS_PER_MONTH", "HOURS_PER_YEAR", "Action", "AgeingSpec", "Law", "MirrorModel",
           "duration_h", "parse_ageing"]

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
LAWS = ("linear", "exponential", "overlayer")


@dataclass(frozen=True)
class Action:
    """A maintenance action: what it restores (fraction of new), downtime, cost."""

    kind: str  # "clean" or "replace"
    restore: float
    downtime_h: float
    cost: float


@dataclass(frozen=True)
class MirrorModel:
    """The mirror under an overlayer: a thick mirror at a grazing angle, or a multilayer."""

    kind: str  # "thick" or "multilayer"
    material: str = "Ru"
    grazing_rad: float = 0.0
    pair: tuple[str, str] = ("Mo", "Si")
    period_m: float = 6.9e-9
    gamma: float = 0.4
    bilayers: int = 50
    incidence_rad: float = 0.0
    capping: tuple[str, float] | None = None


@dataclass(frozen=True)
class Law:
    """How one part or element ages, and the actions that restore it.

    ``driver`` is ``"hours"`` (hours of light), ``"energy"`` (J absorbed) or
    ``"fluence"`` (J/m² absorbed over ``area_m2``); ``unit`` is the size of one
    ``per`` in those SI units (s, J, J/m²). Empirical laws lose ``loss`` (a
    relative fraction) per unit; the overlayer law grows ``growth_m`` per unit,
    the hours driver scaled by absorbed power over ``reference_power_w``.
    """

    target: str
    kind: str
    driver: str
    unit: float
    location: Location
    loss: float = 0.0
    area_m2: float | None = None
    material: str = "C"
    density_g_cm3: float | None = None
    growth_m: float = 0.0
    saturation_m: float | None = None
    reference_power_w: float | None = None
    mirror: MirrorModel | None = None
    illustrative: bool = False
    actions: tuple[Action, ...] = ()
    note: str = ""

    def action(self, kind: str) -> Action | None:
        """The action of that kind, if the law offers it."""
        return next((a for a in self.actions if a.kind == kind), None)


@dataclass(frozen=True)
class AgeingSpec:
    """Everything an ageing file gives."""

    file: str
    laws: tuple[Law, ...]
    step_h: float = 500.0
    horizon_h: float = 5 * HOURS_PER_YEAR
    windows_every_h: float | None = None
    windows_at_h: tuple[float, ...] = ()
    start: dt.date | None = None
    currency: str = "EUR"
    objective: str = "cost"
    warnings: tuple[Diagnostic, ...] = field(default=())

    def windows_h(self, horizon_h: float | None = None) -> tuple[float, ...]:
        """Maintenance window times in hours from the start, within the horizon."""
        end = self.horizon_h if horizon_h is None else horizon_h
        if self.windows_at_h:
            return tuple(t for t in sorted(set(self.windows_at_h)) if 0.0 < t < end)
        if not self.windows_every_h:
            return ()
        count = int(end / self.windows_every_h + 1e-9)
        return tuple(k * self.windows_every_h for k in range(1, count + 1)
                     if k * self.windows_every_h < end - 1e-9)


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


def _duration(r: MapReader, key: str, default: float | None) -> float | None:
    value = r.raw(key)
    if value is MISSING:
        return default
    parts = _split(value)
    if parts is None or parts[1] not in _DURATION or parts[0] <= 0:
        r.ctx.error("bad-unit", f"{r.subject}: '{key}' is {value!r}, expected a duration",
                    r.value_loc(key), "e.g. '500 h', '3 months' or '5 years'")
        return None
    return parts[0] * _DURATION[parts[1]]


def _per(r: MapReader) -> tuple[str, float] | None:
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


def _date(r: MapReader, key: str) -> dt.date | None:
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


def _money(r: MapReader, key: str) -> float:
    value = r.raw(key)
    if value is MISSING:
        return 0.0
    if isinstance(value, bool) or not isinstance(value, (int, float)) or value < 0:
        r.ctx.error("bad-value", f"{r.subject}: '{key}' is {value!r}, expected a number >= 0 "
                    "(in the file's currency)", r.value_loc(key), f"e.g. '{key}: 5000'")
        return 0.0
    return float(value)


def _action(r: MapReader, kind: str) -> Action | None:
    if r.mapping(kind) is None:
        return None
    sub = r.sub(kind, f"{r.subject}, {kind}")
    if kind == "replace" or sub.data.get("restore") == "new":
        sub.asked.add("restore")
        restore: float | None = 1.0
    else:
        restore = sub.fraction("restore", default=1.0)
    hours = _duration(sub, "downtime", 0.0)
    cost = _money(sub, "cost")
    sub.finish()
    return Action(kind, restore or 1.0, hours or 0.0, cost)


def _mirror(r: MapReader) -> MirrorModel | None:
    if r.mapping("mirror", required=True) is None:
        return None
    m = r.sub("mirror", f"{r.subject}, mirror")
    stack = m.text("multilayer")
    if stack:
        pair = stack.split("/")
        if len(pair) != 2:
            m.ctx.error("bad-value", f"{m.subject}: 'multilayer' is {stack!r}",
                        m.value_loc("multilayer"), "write spacer/absorber, e.g. 'Mo/Si'")
            pair = ["Mo", "Si"]
        capping = None
        if m.mapping("cap") is not None:
            cap = m.sub("cap", f"{m.subject}, cap")
            capping = (cap.text("material", required=True),
                       cap.quantity("thickness", "length", required=True, minimum=0.0) or 0.0)
            cap.finish()
        model = MirrorModel(
            "multilayer", pair=(pair[0].strip(), pair[1].strip()),
            period_m=m.quantity("period", "length", default=6.9e-9, minimum=0.0,
                                strict_minimum=True) or 6.9e-9,
            gamma=m.fraction("gamma", default=0.4) or 0.4,
            bilayers=m.integer("bilayers", default=50, minimum=1),
            incidence_rad=m.quantity("incidence", "angle", default=0.0, minimum=0.0,
                                     maximum=1.5) or 0.0,
            capping=capping)
    else:
        model = MirrorModel("thick", material=m.text("material", required=True),
                            grazing_rad=m.quantity("grazing", "angle", required=True,
                                                   minimum=0.0, strict_minimum=True) or 0.05)
    m.finish()
    return model


def _law(ctx: Context, target: str, data: Any, path: Path) -> Law | None:
    where = ctx.positions.key(path)
    subject = f"ageing of '{target}'"
    if not isinstance(data, dict):
        ctx.error("bad-type", f"{subject}: expected a mapping with 'law:' and its rates", where,
                  "e.g. '{law: exponential, loss: 2 %, per: 1000 h}'")
        return None
    r = MapReader(ctx, data, {k: (*path, k) for k in data}, subject, path)
    kind = r.text("law", required=True, default="exponential")
    if kind not in LAWS:
        r.ctx.error("bad-value", f"{subject}: unknown law '{kind}'", r.value_loc("law"),
                    did_you_mean(kind, LAWS) or f"the laws are: {', '.join(LAWS)}")
    per = _per(r)
    driver, unit = per if per is not None else ("hours", 3.6e6)
    law = Law(target, kind, driver, unit, where, illustrative=r.flag("illustrative",
                                                                      default=False),
              note=r.text("note"))
    area = r.quantity("area", "area", minimum=0.0, strict_minimum=True)
    if driver == "fluence" and area is None and per is not None:
        r.ctx.error("missing-key", f"{subject}: a law per absorbed J/area needs the "
                    "illuminated 'area'", where, "add e.g. 'area: 40 mm2' (the beam footprint)")
    if kind == "overlayer":
        law = _overlayer(r, law, driver)
    else:
        law = replace(law, loss=r.fraction("loss", required=True) or 0.0)
    actions = tuple(a for a in (_action(r, "clean"), _action(r, "replace")) if a is not None)
    r.finish()
    return replace(law, area_m2=area, actions=actions)


def _overlayer(r: MapReader, law: Law, driver: str) -> Law:
    growth = r.quantity("growth", "length", required=True, minimum=0.0)
    reference = r.quantity("reference_power", "power", minimum=0.0, strict_minimum=True)
    if driver == "hours" and reference is None and r.has("growth"):
        r.ctx.error("missing-key", f"{r.subject}: growth per hour of light needs the "
                    "'reference_power' (absorbed) at which it was measured", law.location,
                    "add e.g. 'reference_power: 100 W'; growth then scales with absorbed power")
    return replace(law, material=r.text("material", default="C"),
                   density_g_cm3=r.quantity("density", "density", minimum=0.0,
                                            strict_minimum=True),
                   growth_m=growth or 0.0,
                   saturation_m=r.quantity("saturation", "length", minimum=0.0,
                                           strict_minimum=True),
                   reference_power_w=reference, mirror=_mirror(r))


def parse_ageing(doc: YamlDocument, *, in_layout: bool = False) -> AgeingSpec:
    """Validate an ageing file, or a layout's ``ageing:`` section (``in_layout``).

    Raises
    ------
    LayoutError
        With every problem found, located.

    Examples
    --------
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml('''
    ... format: 1
    ... ageing:
    ...   windows: {every: 6 months}
    ...   optics:
    ...     m1: {law: exponential, loss: 1 %, per: 1000 h}
    ... ''', "a.yaml")
    >>> spec = parse_ageing(doc)
    >>> spec.laws[0].loss, spec.windows_h(8766.0)
    (0.01, (4383.0,))
    """
    ctx = Context(doc.positions)
    data = doc.data if isinstance(doc.data, dict) else {}
    top = MapReader(ctx, data, {k: (k,) for k in data}, "ageing file", ())
    if not in_layout and top.integer("format", default=1) != 1:
        ctx.error("bad-format", "ageing file 'format' must be 1", top.value_loc("format"),
                      "write 'format: 1'")
    if top.mapping("ageing", required=True) is None:
        raise LayoutError(ctx.diagnostics)
    r = top.sub("ageing", "ageing")
    if not in_layout:
        top.finish()
    step = _duration(r, "step", 500.0) or 500.0
    horizon = _duration(r, "horizon", 5 * HOURS_PER_YEAR) or 5 * HOURS_PER_YEAR
    start = _date(r, "start")
    currency = r.text("currency", default="EUR")
    objective = r.text("objective", default="cost")
    if objective not in ("cost", "downtime"):
        ctx.error("bad-value", f"ageing: objective '{objective}'", r.value_loc("objective"),
                  "write 'objective: cost' or 'objective: downtime'")
    every: float | None = None
    at: tuple[float, ...] = ()
    if r.mapping("windows") is not None:
        w = r.sub("windows", "ageing windows")
        every = _duration(w, "every", None)
        at_raw = w.raw("at")
        if at_raw is not MISSING:
            at = _window_times(w, at_raw, start)
        w.finish()
    laws = []
    optics = r.mapping("optics", required=True) or {}
    for target, body in optics.items():
        law = _law(ctx, str(target), body, ("ageing", "optics", target))
        if law is not None:
            laws.append(law)
    r.finish()
    if ctx.failed:
        raise LayoutError(ctx.diagnostics)
    return AgeingSpec(doc.positions.file, tuple(laws), step, horizon, every, at, start,
                      currency, objective, tuple(ctx.diagnostics))


def _window_times(w: MapReader, raw: Any, start: dt.date | None) -> tuple[float, ...]:
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
