"""The element kinds a layout may use, and how each reads its own keys.

To add a kind: write a reader here that returns a new
:class:`~beamplan.layout.model.ElementSpec` subclass, register it in
:data:`KINDS`, and give the kind its physics in
:mod:`beamplan.network.behaviour` (see DEVELOPERS.md).
"""

from __future__ import annotations

import contextlib
from collections.abc import Callable
from typing import Any

from beamplan.errors import did_you_mean, excerpt
from beamplan.layout.model import (
    AttenuatorSpec,
    CoatingSpec,
    DriftSpec,
    DumpSpec,
    ElementSpec,
    GasFillSpec,
    InterlayerSpec,
    MirrorSpec,
    MultilayerSpec,
    OutputSpec,
    SplitterSpec,
    SwitchSpec,
)
from beamplan.layout.reader import ID_PATTERN, MISSING, MapReader
from beamplan.layout.spec import SECTIONS, element_keys, quantity
from beamplan.layout.spec_defaults import default_range, default_value
from beamplan.units import UnitError, parse_quantity
from beamplan.vocabulary import NodeKind

__all__ = ["KINDS", "read_element"]

Common = dict[str, Any]
KindReader = Callable[[MapReader, Common], ElementSpec | None]


def _coating(r: MapReader) -> CoatingSpec | None:
    value = r.raw("coating")
    if value is MISSING:
        return None
    if isinstance(value, str):
        return CoatingSpec(value.strip())
    if not isinstance(value, dict):
        r.ctx.error("bad-type", f"{r.subject}: 'coating' must be a formula such as 'Ru' or a "
                    "mapping {material: Ru, density: 12.4 g/cm^3}", r.value_loc("coating"))
        return None
    sub = r.sub("coating", f"{r.subject} coating")
    material = sub.text("material", required=True)
    density = sub.quantity("density", "density", minimum=0.0, strict_minimum=True)
    delta = sub.quantity("delta", "fraction")
    beta = sub.quantity("beta", "fraction", minimum=0.0)
    sub.finish(table=SECTIONS["coating"])
    if (delta is None) != (beta is None):
        r.ctx.error("missing-key", f"{r.subject}: a measured index needs both 'delta' and "
                    "'beta'", r.value_loc("coating"), "give both, or neither")
        return None
    return CoatingSpec(material, density, delta, beta) if material else None


#: Keys renamed in the multilayer mapping: old name -> new name.
RENAMED_MULTILAYER_KEYS = {"bilayers": "periods", "gamma": "absorber_fraction",
                           "capping": "cap", "capping_thickness": "cap_thickness"}
#: The physical range of a multilayer's number of periods.
PERIODS_RANGE = (1, 1000)


def _periods(sub: MapReader, default: int) -> int | None:
    value = sub.raw("periods")
    if value is MISSING:
        return default
    low, high = PERIODS_RANGE
    if isinstance(value, bool) or not isinstance(value, int) or not low <= value <= high:
        sub.ctx.error("out-of-range", f"{sub.subject}: 'periods' is {value!r}, it must be a "
                      f"whole number from {low} to {high}", sub.value_loc("periods"),
                      "Mo/Si mirrors use 40 to 60 periods")
        return None
    return value


def _interlayers(sub: MapReader, default: InterlayerSpec | None
                 ) -> tuple[bool, InterlayerSpec | None]:
    """Whether the interlayers read well, and what they are (None for ``none``)."""
    value = sub.raw("interlayers")
    if value is MISSING:
        return True, default
    if isinstance(value, str) and value.strip().lower() == "none":
        return True, None
    if not isinstance(value, dict):
        sub.ctx.error("bad-type", f"{sub.subject}: 'interlayers' must be 'none' or a mapping "
                      "{material, density, absorber_on_spacer, spacer_on_absorber}",
                      sub.value_loc("interlayers"), "e.g. 'interlayers: none' for sharp "
                      "interfaces (an ideal stack)")
        return False, None
    base = InterlayerSpec()
    il = sub.sub("interlayers", f"{sub.subject} interlayers")
    material = il.text("material", default=base.material).strip()
    density = il.quantity("density", "density", minimum=0.0, strict_minimum=True,
                          default=base.density_g_cm3 if material == base.material else None)
    on_spacer = il.quantity("absorber_on_spacer", "length", minimum=0.0,
                            default=base.absorber_on_spacer_m)
    on_absorber = il.quantity("spacer_on_absorber", "length", minimum=0.0,
                              default=base.spacer_on_absorber_m)
    il.finish(table=SECTIONS["interlayers"])
    if on_spacer is None or on_absorber is None or (density is None and il.has("density")):
        return False, None
    return True, InterlayerSpec(material or base.material, density, on_spacer, on_absorber)


def read_multilayer(r: MapReader, key: str = "multilayer") -> MultilayerSpec | None:
    """Read a multilayer stack given under ``key`` (see docs/layout-format.md).

    Every key is optional; the defaults are those of
    :class:`~beamplan.layout.model.MultilayerSpec` (a realistic Mo/Si stack). The
    MoSi2 interlayers apply by default to the Mo/Si pair only; ``interlayers: none``
    gives sharp interfaces, and ``cap: none`` no cap. Without its own
    ``roughness``, a mirror's multilayer takes the mirror's ``roughness`` if given.
    """
    if r.mapping(key) is None:
        return None
    base = MultilayerSpec()
    sub = r.sub(key, f"{r.subject} {key}")
    ok = True
    for old, new in RENAMED_MULTILAYER_KEYS.items():
        if sub.has(old):
            sub.raw(old)
            r.ctx.error("renamed-key", f"{sub.subject}: '{old}' is now called '{new}'",
                        sub.key_loc(old), f"rename it to '{new}'")
            ok = False
    pair = sub.text("pair", default=f"{base.absorber}/{base.spacer}")
    absorber, _, spacer = (part.strip() for part in pair.partition("/"))
    if not absorber or not spacer:
        r.ctx.error("bad-value", f"{r.subject}: multilayer 'pair' must read absorber/spacer, "
                    f"got {excerpt(pair)}", sub.value_loc("pair"), "e.g. 'pair: Mo/Si'")
        ok = False
    period = sub.quantity("period", "length", default=base.period_m, minimum=0.0,
                          strict_minimum=True)
    fraction = sub.quantity("absorber_fraction", "fraction", default=base.absorber_fraction,
                            minimum=0.0, maximum=1.0)
    periods = _periods(sub, base.periods)
    cap_text = sub.text("cap", default=base.cap or "none").strip()
    cap = None if cap_text.lower() in ("none", "") else cap_text
    cap_m = sub.quantity("cap_thickness", "length", default=base.cap_thickness_m,
                         minimum=0.0)
    substrate = sub.text("substrate", default=base.substrate)
    rough_default = base.roughness_m
    if not sub.has("roughness") and key == "multilayer" and r.has("roughness"):
        with contextlib.suppress(UnitError):  # the mirror's own reader reports it
            rough_default = parse_quantity(r.data["roughness"], "length")
    roughness = sub.quantity("roughness", "length", default=rough_default, minimum=0.0)
    is_mosi = (absorber, spacer) == (base.absorber, base.spacer)
    read_ok, interlayers = _interlayers(sub, base.interlayers if is_mosi else None)
    sub.finish(tuple(RENAMED_MULTILAYER_KEYS), SECTIONS["multilayer"])
    if not (ok and read_ok) or None in (period, fraction, periods, cap_m, roughness):
        return None
    assert period is not None and fraction is not None and periods is not None
    assert cap_m is not None and roughness is not None
    return MultilayerSpec(absorber, spacer, period, fraction, periods, cap,
                          cap_m if cap else 0.0, substrate, roughness, interlayers)


def _mirror(r: MapReader, common: Common) -> ElementSpec | None:
    before = len(r.ctx.diagnostics)
    reflectivity = r.fraction("reflectivity")
    coating = _coating(r)
    grazing = quantity(r, "mirror", "grazing")
    multilayer = read_multilayer(r)
    incidence = quantity(r, "mirror", "incidence")
    roughness = quantity(r, "mirror", "roughness",
                         default=default_value("mirror", "roughness", float))
    plane = quantity(r, "mirror", "plane", default=default_value("mirror", "plane", float))
    if len(r.ctx.diagnostics) > before and reflectivity is None:
        return None
    if reflectivity is None:
        single = coating is not None and grazing is not None
        stack = multilayer is not None and incidence is not None
        if not (single or stack) or (coating is not None and multilayer is not None):
            r.ctx.error("missing-key", f"{r.subject}: a mirror needs 'reflectivity', or "
                        "'coating' with 'grazing', or 'multilayer' with 'incidence'",
                        r.ctx.positions.key(r.where),
                        "e.g. '{kind: mirror, coating: Ru, grazing: 5 deg}'")
            return None
    return MirrorSpec(reflectivity=reflectivity, coating=coating, grazing_rad=grazing,
                      roughness_m=roughness or 0.0, multilayer=multilayer,
                      incidence_rad=incidence, plane_rad=plane or 0.0, **common)


def _attenuator(r: MapReader, common: Common) -> ElementSpec | None:
    span = r.fraction_range("transmission", required=True)
    if span is None:
        return None
    return AttenuatorSpec(transmission_min=span[0], transmission_max=span[1], **common)


def _drift(r: MapReader, common: Common) -> ElementSpec | None:
    before = len(r.ctx.diagnostics)
    transmission = r.fraction("transmission")
    length = quantity(r, "drift", "length")
    gas = r.text("gas") or None
    pressure = quantity(r, "drift", "pressure")
    room_k = default_value("drift", "temperature", float)
    temperature = quantity(r, "drift", "temperature", default=room_k)
    fill = None
    if gas is not None or pressure is not None:
        if gas is None or pressure is None or length is None:
            r.ctx.error("missing-key", f"{r.subject}: a gas-filled drift needs 'gas', "
                        "'pressure' and 'length'", r.ctx.positions.key(r.where),
                        "e.g. '{kind: drift, length: 40 m, gas: H2, pressure: 2 Pa}'")
            return None
        fill = GasFillSpec(gas, pressure, temperature or room_k, length)
    if transmission is None and fill is None:
        if len(r.ctx.diagnostics) > before:
            return None
        r.ctx.error("missing-key", f"{r.subject}: a drift needs 'transmission', or 'gas', "
                    "'pressure' and 'length'", r.ctx.positions.key(r.where),
                    "e.g. 'transmission: 0.99' or 'gas: H2, pressure: 2 Pa, length: 40 m'")
        return None
    return DriftSpec(transmission=transmission, fill=fill, length_m=length, **common)


def _dump(r: MapReader, common: Common) -> ElementSpec | None:
    return DumpSpec(**common)


def _switch(r: MapReader, common: Common) -> ElementSpec | None:
    efficiency = quantity(r, "switch", "efficiency",
                          default=default_value("switch", "efficiency", float))
    select = r.text("select") or None
    if efficiency is None:
        return None
    where = r.value_loc("select") if select else None
    return SwitchSpec(efficiency=efficiency, select=select, select_location=where, **common)


def _splitter(r: MapReader, common: Common) -> ElementSpec | None:
    outputs = r.mapping("outputs", required=True)
    if outputs is None:
        return None
    where = r.paths["outputs"]
    if len(outputs) < 2:
        r.ctx.error("too-few-outputs",
                    f"{r.subject}: a splitter needs two or more outputs, it has {len(outputs)}",
                    r.key_loc("outputs"), "add outputs such as 'pick:' and 'pass:'")
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
        efficiency = quantity(out, "output", "efficiency",
                              default=default_value("output", "efficiency", float))
        span = out.fraction_range("fraction", default=default_range("output", "fraction"))
        out.finish(table=SECTIONS["output"])
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
                    r.key_loc("outputs"),
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
    if not r.has("kind"):
        r.asked.add("kind")
        r.ctx.error("missing-key", f"{r.subject}: 'kind' is required",
                    r.ctx.positions.key(r.where), f"add 'kind:' with one of: {', '.join(KINDS)}")
        return None
    kind = r.text("kind", required=True)
    r.text("part")
    note = r.text("note")
    heat_limit_w = quantity(r, "element", "heat_limit")
    full = default_value("element", "derate", float)
    derate = quantity(r, "element", "derate", default=full)
    in_use = r.in_use("an element")
    if not kind:
        if not r.ctx.failed:
            r.ctx.error("missing-key", f"{r.subject}: 'kind' is empty", r.value_loc("kind"),
                        f"write one of: {', '.join(KINDS)}")
        return None  # its other keys cannot be judged without a kind
    reader = KINDS.get(kind)
    if reader is None:
        hint = did_you_mean(kind, KINDS) or f"the kinds are: {', '.join(KINDS)}"
        r.ctx.error("unknown-kind", f"{r.subject}: unknown kind '{kind}'", r.value_loc("kind"),
                    hint)
        return None
    common: Common = {"id": element_id, "kind": NodeKind(kind), "heat_limit_w": heat_limit_w,
                      "part": part, "note": note, "location": r.ctx.positions.key(r.where),
                      "derate": full if derate is None else derate, "in_use": in_use}
    spec = reader(r, common)
    r.finish(table=element_keys(kind))
    return spec
