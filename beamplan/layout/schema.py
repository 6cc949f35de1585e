"""The JSON Schema (draft 2020-12) of layout and case files, from the key tables.

An editor with a YAML language server completes keys and flags mistakes as
the user types when the file starts with a modeline such as
``# yaml-language-server: $schema=beamplan-layout.schema.json`` (see
docs/layout-format.md). The schema checks structure, key names, types and
ranges; beamlines, units and the graph are left to ``beamplan check``.
"""

from __future__ import annotations

from typing import Any

from beamplan.layout.spec import CASE_VERBS, KINDS, SECTIONS, KeySpec, element_keys

__all__ = ["DRAFT", "case_schema", "layout_schema"]

DRAFT = "https://json-schema.org/draft/2020-12/schema"
ID_REGEX = r"^[A-Za-z0-9][A-Za-z0-9_\-]*$"
# A number followed by a unit, as beamplan.units reads it.
QUANTITY_REGEX = r"^\s*[-+]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][-+]?[0-9]+)?\s*\S.*$"
_NUMBER_TEXT = r"^\s*[-+]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][-+]?[0-9]+)?\s*(\S.*)?$"


def _number(spec: KeySpec) -> dict[str, Any]:
    out: dict[str, Any] = {"type": "number"}
    if spec.minimum is not None:
        out["exclusiveMinimum" if spec.exclusive else "minimum"] = spec.minimum
    if spec.maximum is not None:
        out["maximum"] = spec.maximum
    return out


def _fraction() -> dict[str, Any]:
    return {"anyOf": [{"type": "number", "minimum": 0, "maximum": 1},
                      {"type": "string", "pattern": _NUMBER_TEXT}]}


def _value(spec: KeySpec) -> dict[str, Any]:
    if spec.type == "quantity":
        text = {"type": "string", "pattern": QUANTITY_REGEX if spec.unit_required
                else _NUMBER_TEXT}
        return text if spec.unit_required else {"anyOf": [_number(spec), text]}
    if spec.type == "range":
        return {"anyOf": [*_fraction()["anyOf"],
                          {"type": "array", "items": _fraction(), "minItems": 2,
                           "maxItems": 2}]}
    if spec.type == "int":
        out = _number(spec)
        out["type"] = "integer"
        return out
    if spec.type == "number":
        return _number(spec)
    if spec.type == "bool":
        return {"type": "boolean"}
    if spec.type == "choice":
        return {"enum": list(spec.choices)}
    if spec.type == "id":
        return {"type": "string", "pattern": ID_REGEX}
    if spec.type == "text":
        return {"type": ["string", "number"]}
    if spec.type == "list":
        return {"type": "array"}
    if spec.type == "map":
        return {"$ref": f"#/$defs/{spec.nested}"} if spec.nested else {"type": "object"}
    if spec.type == "map-of":
        return {"type": "object", "propertyNames": {"pattern": ID_REGEX},
                "additionalProperties": {"$ref": f"#/$defs/{spec.nested}"}}
    if spec.type == "text-or-map":
        return {"anyOf": [{"type": "string"}, {"$ref": f"#/$defs/{spec.nested}"}]}
    if spec.type == "none-or-map":
        return {"anyOf": [{"const": "none"}, {"$ref": f"#/$defs/{spec.nested}"}]}
    raise ValueError(f"no schema for key type {spec.type!r}")


def _properties(table: tuple[KeySpec, ...]) -> dict[str, Any]:
    out = {}
    for spec in table:
        value = _value(spec)
        value["description"] = spec.doc + (f" (default {spec.default})" if spec.default else "")
        out[spec.name] = value
    return out


def _object(table: tuple[KeySpec, ...], required: bool = True) -> dict[str, Any]:
    out: dict[str, Any] = {"type": "object", "properties": _properties(table),
                           "additionalProperties": False}
    need = [spec.name for spec in table if spec.required]
    if need and required:
        out["required"] = need
    return out


def _element() -> dict[str, Any]:
    """An element (or part): the common keys and those of its kind.

    Without ``kind`` (an element that takes it from its part) any kind's keys may appear.
    """
    branches: list[dict[str, Any]] = []
    for kind in KINDS:
        own = _object(SECTIONS[kind])
        if kind == "splitter":
            own["properties"]["outputs"]["minProperties"] = 2
        branches.append({"if": {"properties": {"kind": {"const": kind}}, "required": ["kind"]},
                         "then": {"properties": own["properties"],
                                  **({"required": own["required"]} if "required" in own
                                     else {})}})
    anything: dict[str, Any] = {}
    for kind in KINDS:
        for spec in SECTIONS[kind]:
            anything.setdefault(spec.name, {})
    branches.append({"if": {"not": {"required": ["kind"]}},
                     "then": {"properties": anything, "required": ["part"]}})
    return {"type": "object", "properties": _properties(SECTIONS["element"]),
            "allOf": branches, "unevaluatedProperties": False}


def _defs() -> dict[str, Any]:
    defs: dict[str, Any] = {"element": _element()}
    for name in ("source", "undulator", "coating", "multilayer", "interlayers", "output"):
        defs[name] = _object(SECTIONS[name])
    scanner = _object(SECTIONS["scanner"])
    # its IF power, or dose and throughput, or a profile that gives them
    scanner["anyOf"] = [{"required": ["power"]}, {"required": ["dose", "wph"]},
                        {"required": ["profile"]}]
    defs["scanner"] = scanner
    profile = _object(SECTIONS["scanner"])
    defs["profile"] = profile
    return defs


def layout_schema() -> dict[str, Any]:
    """The JSON Schema of layout files.

    Examples
    --------
    >>> schema = layout_schema()
    >>> schema["$schema"].endswith("2020-12/schema"), "sources" in schema["required"]
    (True, True)
    """
    top = _object(SECTIONS["top"])
    top["properties"]["format"] = {"const": 1, "description": "the format version"}
    kinds = {f"{kind}": element_keys(kind) for kind in KINDS}
    return {"$schema": DRAFT, "$id": "https://beamplan.invalid/schema/layout-1.json",
            "title": "beamplan layout file (format 1)",
            "description": f"element kinds: {', '.join(kinds)}", **top, "$defs": _defs()}


def case_schema() -> dict[str, Any]:
    """The JSON Schema of case files (what-if changes).

    Examples
    --------
    >>> sorted(case_schema()["required"])
    ['cases', 'format']
    """
    top = _object(SECTIONS["cases-top"])
    top["properties"]["format"] = {"const": 1, "description": "the format version"}
    case = _object(SECTIONS["case"])
    change = {"type": "object", "minProperties": 1, "maxProperties": 1,
              "propertyNames": {"enum": list(CASE_VERBS)},
              "properties": {"set": {"type": "object"}, "scale": {"type": "object"},
                             "add": {"type": "object"},
                             "include": {"type": "string"}}}
    case["properties"]["changes"]["items"] = {"$ref": "#/$defs/change"}
    return {"$schema": DRAFT, "$id": "https://beamplan.invalid/schema/cases-1.json",
            "title": "beamplan case file (format 1)", **top,
            "$defs": {"case": case, "change": change}}
