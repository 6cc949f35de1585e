"""Read the endpoints of a network: sources (with polarisation and an optional
undulator check) and scanners (a fixed IF power, or dose and throughput with
a tool description, optionally from a reusable profile)."""

from __future__ import annotations

from typing import Any

from beamplan.errors import did_you_mean, excerpt
from beamplan.layout.kinds import read_multilayer
from beamplan.layout.model import (
    SURPLUS_MODES,
    DemandSpec,
    ScannerSpec,
    SourceSpec,
    UndulatorSpec,
)
from beamplan.layout.reader import ID_PATTERN, MISSING, Context, MapReader
from beamplan.layout.spec import SECTIONS, quantity, tool_keys
from beamplan.layout.spec_defaults import default_value
from beamplan.layout.yamlpos import Path

__all__ = ["TOOL_KEYS", "entries", "read_scanners", "read_sources"]

# Layout key -> (dimension or "int", field of beamplan.physics.demand.ScannerTool),
# from the scanner table of beamplan.layout.spec.
TOOL_KEYS: dict[str, tuple[str, str]] = tool_keys()


def entries(ctx: Context, section: dict[str, Any], name: str, noun: str,
            example: str = "{power: 300 W}") -> list[tuple[str, dict[str, Any], Path]]:
    """The (id, settings, path) of each valid entry of a section; bad ones are reported."""
    out = []
    for item_id, settings in section.items():
        path: Path = (name, item_id)
        if not ID_PATTERN.match(item_id):
            ctx.error("bad-id", f"{noun} id {excerpt(item_id)} is not a valid id",
                      ctx.positions.key(path),
                      "use letters, digits, '-' and '_', starting with a letter or digit")
            continue
        if not isinstance(settings, dict):
            ctx.error("bad-type", f"{noun} '{item_id}': expected a mapping of settings, "
                      f"got {excerpt(settings)}", ctx.positions.value(path),
                      f"write e.g. '{example}'")
            continue
        out.append((item_id, settings, path))
    return out


def _undulator(r: MapReader) -> UndulatorSpec | None:
    if r.mapping("undulator") is None:
        return None
    u = r.sub("undulator", f"{r.subject} undulator")
    energy = quantity(u, "undulator", "energy")
    period = quantity(u, "undulator", "period")
    k = _plain(u, "k")
    field = quantity(u, "undulator", "field")
    harmonic = u.integer("harmonic", default=default_value("undulator", "harmonic", int),
                         minimum=1, maximum=99)
    tunable = bool(u.raw("tunable") is True)
    one_percent = default_value("undulator", "tolerance", float)
    tolerance = quantity(u, "undulator", "tolerance", default=one_percent)
    u.finish(table=SECTIONS["undulator"])
    if energy is None or period is None:
        return None
    if (k is None) == (field is None):
        r.ctx.error("missing-key", f"{r.subject}: the undulator needs exactly one of 'k' and "
                    "'field'", r.value_loc("undulator"), "e.g. 'k: 2.3' or 'field: 0.9 T'")
        return None
    return UndulatorSpec(energy, period, k, field, harmonic, tunable,
                         one_percent if tolerance is None else tolerance)


def _plain(r: MapReader, key: str) -> float | None:
    """A plain non-negative number (the deflection parameter K has no unit)."""
    value = r.raw(key)
    if value is MISSING:
        return None
    if (isinstance(value, bool) or not isinstance(value, (int, float))
            or not 0 <= value <= 1000):  # K is a few units; NaN fails the test too
        r.ctx.error("bad-value", f"{r.subject}: '{key}' must be a number from 0 to 1000, "
                    f"got {excerpt(value)}",
                    r.value_loc(key), f"e.g. '{key}: 2.3'")
        return None
    return float(value)


def _electrical(r: MapReader, power: float | None) -> tuple[float | None, float] | None:
    """The wall-plug model of a source: (draw at full output, fixed part), checked.

    Either ``electrical`` (the draw at full output) or ``electrical_per_euv_watt``
    (W electrical per W of EUV), each with an optional ``electrical_fixed``.
    """
    full = r.quantity("electrical", "power", minimum=0.0, strict_minimum=True)
    fixed = r.quantity("electrical_fixed", "power", minimum=0.0)
    per_watt = _plain(r, "electrical_per_euv_watt")
    if full is None and per_watt is None:
        if fixed is not None:
            r._bad("electrical_fixed", "'electrical_fixed' needs 'electrical' (the draw at "
                   "full output) or 'electrical_per_euv_watt'",
                   "e.g. 'electrical: 14 MW' or 'electrical_per_euv_watt: 500'", code="missing-key")
        return None if r.has("electrical") or r.has("electrical_per_euv_watt") else (None, 0.0)
    if full is not None and per_watt is not None:
        r._bad("electrical_per_euv_watt", "give 'electrical' or 'electrical_per_euv_watt', "
               "not both", "the draw at full output follows from the other")
        return None
    if power is None:
        return None
    fixed = fixed or default_value("source", "electrical_fixed", float)
    if full is None:
        assert per_watt is not None
        full = fixed + per_watt * power
    key = "electrical" if r.has("electrical") else "electrical_per_euv_watt"
    if fixed > full:
        r._bad("electrical_fixed", f"'electrical_fixed' {fixed:g} W is above the draw at full "
               f"output {full:g} W", "the fixed part is part of the draw at full output",
               code="out-of-range")
        return None
    if full < power:
        r._bad(key, f"the electrical draw at full output {full:g} W is below the EUV power "
               f"{power:g} W", "a source cannot give more light than it draws; correct the "
               "value", code="out-of-range")
        return None
    return full, fixed


def read_sources(ctx: Context, section: dict[str, Any]) -> list[SourceSpec]:
    """Read the ``sources`` section."""
    out = []
    for sid, settings, path in entries(ctx, section, "sources", "source"):
        r = MapReader(ctx, settings, {k: (*path, k) for k in settings}, f"source '{sid}'", path)
        power = r.quantity("power", "power", required=True, minimum=0.0)
        wall = _electrical(r, power)
        surplus = r.text("surplus", default=default_value("source", "surplus", str))
        if surplus not in SURPLUS_MODES:
            r._bad("surplus", f"'surplus' is {surplus!r}",
                   f"give one of {', '.join(SURPLUS_MODES)}")
        degree = quantity(r, "source", "polarisation",
                          default=default_value("source", "polarisation", float))
        angle = quantity(r, "source", "polarisation_angle",
                         default=default_value("source", "polarisation_angle", float))
        undulator = _undulator(r)
        note = r.text("note")
        in_use = r.in_use("a source")
        r.finish(table=SECTIONS["source"])
        if power is not None and wall is not None and surplus in SURPLUS_MODES:
            out.append(SourceSpec(sid, power, wall[0], note, ctx.positions.key(path),
                                  degree or 0.0, angle or 0.0, undulator, in_use,
                                  wall[1], surplus))
    return out


def _merged(ctx: Context, settings: dict[str, Any], path: Path, profiles: dict[str, Any],
            used: set[str], subject: str) -> tuple[dict[str, Any], dict[str, Path]] | None:
    merged: dict[str, Any] = {}
    paths: dict[str, Path] = {}
    profile = settings.get("profile")
    if profile is not None:
        template = profiles.get(str(profile))
        if not isinstance(template, dict):
            hint = did_you_mean(str(profile), profiles) or (
                f"the profiles are: {', '.join(profiles)}" if profiles
                else "define it under 'profiles:'")
            ctx.error("unknown-profile", f"{subject}: unknown profile '{profile}'",
                      ctx.positions.value((*path, "profile")), hint)
            return None
        used.add(str(profile))
        for key, value in template.items():
            merged[key] = value
            paths[key] = ("profiles", str(profile), key)
    for key, value in settings.items():
        merged[key] = value
        paths[key] = (*path, key)
    return merged, paths


def _demand(r: MapReader, profile: str | None) -> DemandSpec | None:
    if not (r.has("dose") or r.has("wph")):
        for key in (*TOOL_KEYS, "critical_area", "resist_absorption", "resist_thickness",
                    "noise", "mirror_multilayer", "mirror_incidence"):
            r.asked.add(key)  # allowed keys, unused without a dose
        return None
    if r.has("dose") and isinstance(r.data["dose"], (int, float)):
        r.asked.add("dose")
        r.ctx.error("bad-unit", f"{r.subject}: 'dose' needs a unit", r.value_loc("dose"),
                    f"write e.g. 'dose: {r.data['dose']} mJ/cm^2'")
        return None
    dose = r.quantity("dose", "dose", required=True, minimum=0.0, strict_minimum=True)
    wph = r.quantity("wph", "rate", required=True, minimum=0.0, strict_minimum=True)
    tool: list[tuple[str, float]] = []
    for key, (dimension, name) in TOOL_KEYS.items():
        if dimension == "int":
            if r.has(key):
                tool.append((name, float(r.integer(key, default=0, minimum=0, maximum=10_000))))
            else:
                r.asked.add(key)
            continue
        value = r.quantity(key, dimension, minimum=0.0)
        if value is not None:
            tool.append((name, value))
    train = read_multilayer(r, "mirror_multilayer")
    normal = default_value("scanner", "mirror_incidence", float)
    incidence = quantity(r, "scanner", "mirror_incidence", default=normal)
    if train is not None and any(name == "mirror_reflectivity" for name, _ in tool):
        r.ctx.error("bad-value", f"{r.subject}: give 'mirror_reflectivity' or "
                    "'mirror_multilayer', not both", r.key_loc("mirror_multilayer"),
                    "a computed multilayer replaces the fixed value")
        return None
    area = quantity(r, "scanner", "critical_area")
    alpha = quantity(r, "scanner", "resist_absorption")
    thickness = quantity(r, "scanner", "resist_thickness")
    noise = quantity(r, "scanner", "noise")
    stochastic = (area, alpha, thickness, noise)
    if any(v is not None for v in stochastic) and any(v is None for v in stochastic):
        r.ctx.error("missing-key", f"{r.subject}: the stochastic dose floor needs "
                    "'critical_area', 'resist_absorption', 'resist_thickness' and 'noise'",
                    r.ctx.positions.key(r.where), "give all four, or none")
        return None
    if dose is None or wph is None:
        return None
    return DemandSpec(dose, wph, tuple(tool), train_multilayer=train,
                      train_incidence_rad=incidence or normal, critical_area_m2=area,
                      resist_absorption_per_m=alpha, resist_thickness_m=thickness, noise=noise,
                      profile=profile)


def read_scanners(ctx: Context, section: dict[str, Any], profiles: dict[str, Any]
                  ) -> tuple[list[ScannerSpec], set[str]]:
    """Read the ``scanners`` section (with ``profiles``); return them and the profiles used."""
    out = []
    used: set[str] = set()
    for sid, settings, path in entries(ctx, section, "scanners", "scanner"):
        subject = f"scanner '{sid}'"
        found = _merged(ctx, settings, path, profiles, used, subject)
        if found is None:
            continue
        merged, paths = found
        r = MapReader(ctx, merged, paths, subject, path)
        profile = r.text("profile") or None
        before = len(ctx.diagnostics)
        need = r.quantity("power", "power", minimum=0.0, strict_minimum=True)
        demand = _demand(r, profile)
        max_w = quantity(r, "scanner", "max_power")
        priority = r.integer("priority", default=default_value("scanner", "priority", int),
                             minimum=1, maximum=1000)
        note = r.text("note")
        in_use = r.in_use("a scanner")
        cap_at_useful = r.flag("cap_at_useful",
                               default=default_value("scanner", "cap_at_useful", bool))
        r.finish(table=SECTIONS["scanner"])
        if len(ctx.diagnostics) > before and any(d.is_error for d in ctx.diagnostics[before:]):
            continue
        if need is None and demand is None:
            ctx.error("missing-key", f"{subject}: give its IF 'power', or its 'dose' and 'wph'",
                      ctx.positions.key(path), "e.g. 'power: 300 W' or 'dose: 30 mJ/cm^2, "
                      "wph: 150'")
            continue
        if max_w is not None and need is not None and max_w < need:
            ctx.warning("max-below-need",
                        f"scanner '{sid}': max_power {max_w:g} W is below its need {need:g} W",
                        r.value_loc("max_power"), "it can never be fully served")
        out.append(ScannerSpec(sid, need, max_w, priority, note, ctx.positions.key(path),
                               demand, in_use, cap_at_useful))
    return out, used
