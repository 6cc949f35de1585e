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
with the layout loader's :class:`~beamplan.layout.reader.MapReader`; the value
kinds (durations, ageing units, dates, costs) are read in
:mod:`beamplan.layout.ageing_values`.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field, replace
from typing import Any

from beamplan.errors import Diagnostic, LayoutError, Location, did_you_mean
from beamplan.layout.ageing_values import (
    HOURS_PER_YEAR,
    read_date,
    read_duration,
    read_money,
    read_per,
    read_window_times,
)
from beamplan.layout.reader import MISSING, Context, MapReader
from beamplan.layout.yamlpos import Path, YamlDocument

__all__ = ["Action", "AgeingSpec", "Law", "MirrorModel", "parse_ageing"]

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


def _action(r: MapReader, kind: str) -> Action | None:
    if r.mapping(kind) is None:
        return None
    sub = r.sub(kind, f"{r.subject}, {kind}")
    if kind == "replace" or sub.data.get("restore") == "new":
        sub.asked.add("restore")
        restore: float | None = 1.0
    else:
        restore = sub.fraction("restore", default=1.0)
    hours = read_duration(sub, "downtime", 0.0)
    cost = read_money(sub, "cost")
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
    per = read_per(r)
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
    step = read_duration(r, "step", 500.0) or 500.0
    horizon = read_duration(r, "horizon", 5 * HOURS_PER_YEAR) or 5 * HOURS_PER_YEAR
    start = read_date(r, "start")
    currency = r.text("currency", default="EUR")
    objective = r.text("objective", default="cost")
    if objective not in ("cost", "downtime"):
        ctx.error("bad-value", f"ageing: objective '{objective}'", r.value_loc("objective"),
                  "write 'objective: cost' or 'objective: downtime'")
    every: float | None = None
    at: tuple[float, ...] = ()
    if r.mapping("windows") is not None:
        w = r.sub("windows", "ageing windows")
        every = read_duration(w, "every", None)
        at_raw = w.raw("at")
        if at_raw is not MISSING:
            at = read_window_times(w, at_raw, start)
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
