"""The element kinds a layout may use, and how each reads its own keys.

To add a kind: write a reader here that returns a new
:class:`~beamplan.layout.model.ElementSpec` subclass, register it in
:data:`KINDS`, and give the kind its physics in
:mod:`beamplan.network.behaviour` (see DEVELOPERS.md).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from beamplan.errors import did_you_mean
from beamplan.layout.model import (
    AttenuatorSpec,
    DriftSpec,
    DumpSpec,
    ElementSpec,
    MirrorSpec,
    OutputSpec,
    SplitterSpec,
    SwitchSpec,
)
from beamplan.layout.reader import ID_PATTERN, MapReader

__all__ = ["KINDS", "read_element"]

Common = dict[str, Any]
KindReader = Callable[[MapReader, Common], ElementSpec | None]


def _mirror(r: MapReader, common: Common) -> ElementSpec | None:
    reflectivity = r.fraction("reflectivity", required=True)
    if reflectivity is None:
        return None
    return MirrorSpec(reflectivity=reflectivity, **common)


def _attenuator(r: MapReader, common: Common) -> ElementSpec | None:
    span = r.fraction_range("transmission", required=True)
    if span is None:
        return None
    return AttenuatorSpec(transmission_min=span[0], transmission_max=span[1], **common)


def _drift(r: MapReader, common: Common) -> ElementSpec | None:
    transmission = r.fraction("transmission", required=True)
    if transmission is None:
        return None
    return DriftSpec(transmission=transmission, **common)


def _dump(r: MapReader, common: Common) -> ElementSpec | None:
    return DumpSpec(**common)


def _switch(r: MapReader, common: Common) -> ElementSpec | None:
    efficiency = r.fraction("efficiency", default=1.0)
    select = r.text("select") or None
    if efficiency is None:
        return None
    return SwitchSpec(efficiency=efficiency, select=select, **common)


def _splitter(r: MapReader, common: Common) -> ElementSpec | None:
    outputs = r.mapping("outputs", required=True)
    if outputs is None:
        return None
    where = r.paths["outputs"]
    if len(outputs) < 2:
        r.ctx.error("too-few-outputs",
                    f"{r.subject}: a splitter needs two or more outputs, it has {len(outputs)}",
                    r.value_loc("outputs"), "add outputs such as 'pick:' and 'pass:'")
        return None
    specs: list[OutputSpec] = []
    ok = True
    for name, settings in outputs.items():
        path = (*where, name)
        sub = f"{r.subject} output '{name}'"
        if not ID_PATTERN.match(name):
            r.ctx.error("bad-id", f"{sub}: the name may hold letters, digits, '-' and '_'",
                        r.ctx.positions.key(path))
            ok = False
            continue
        settings = {} if settings is None else settings
        if not isinstance(settings, dict):
            r.ctx.error("bad-type", f"{sub}: expected a mapping such as "
                        "{efficiency: 0.95, fraction: [0, 0.5]}", r.ctx.positions.value(path))
            ok = False
            continue
        out = MapReader(r.ctx, settings, {k: (*path, k) for k in settings}, sub, path)
        efficiency = out.fraction("efficiency", default=1.0)
        span = out.fraction_range("fraction", default=(0.0, 1.0))
        out.finish()
        if efficiency is None or span is None:
            ok = False
            continue
        specs.append(OutputSpec(name, efficiency, span[0], span[1], r.ctx.positions.key(path)))
    if not ok:
        return None
    low = sum(o.fraction_min for o in specs)
    high = sum(o.fraction_max for o in specs)
    if low > 1.0 + 1e-12 or high < 1.0 - 1e-12:
        side = "lower bounds add up to" if low > 1.0 else "upper bounds add up to"
        total = low if low > 1.0 else high
        r.ctx.error("fractions-sum",
                    f"{r.subject}: the output fractions cannot sum to 1 (the {side} {total:g})",
                    r.value_loc("outputs"),
                    "widen the fraction ranges so that lows sum to at most 1 and highs "
                    "to at least 1")
        return None
    return SplitterSpec(outputs=tuple(specs), **common)


KINDS: dict[str, KindReader] = {
    "mirror": _mirror,
    "splitter": _splitter,
    "attenuator": _attenuator,
    "drift": _drift,
    "dump": _dump,
    "switch": _switch,
}


def read_element(r: MapReader, element_id: str, part: str | None) -> ElementSpec | None:
    """Read one element of any kind; ``None`` when it has errors (already recorded).

    Examples
    --------
    >>> from beamplan.layout.reader import Context
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml("m1: {kind: mirror, reflectivity: 95 %}", "x.yaml")
    >>> ctx = Context(doc.positions)
    >>> data = doc.data["m1"]
    >>> r = MapReader(ctx, data, {k: ("m1", k) for k in data}, "element 'm1'", ("m1",))
    >>> read_element(r, "m1", None).reflectivity
    0.95
    """
    kind = r.text("kind", required=True)
    r.text("part")
    note = r.text("note")
    heat_limit_w = r.quantity("heat_limit", "power", minimum=0.0)
    if not kind:
        r.finish()
        return None
    reader = KINDS.get(kind)
    if reader is None:
        hint = did_you_mean(kind, KINDS) or f"the kinds are: {', '.join(KINDS)}"
        r.ctx.error("unknown-kind", f"{r.subject}: unknown kind '{kind}'", r.value_loc("kind"),
                    hint)
        return None
    common: Common = {"id": element_id, "kind": kind, "heat_limit_w": heat_limit_w,
                      "part": part, "note": note, "location": r.ctx.positions.key(r.where)}
    spec = reader(r, common)
    r.finish()
    return spec
