"""The layout and case file formats, described once as tables of keys.

Every key of every section (the top level, sources and their undulator,
each element kind with its nested coating, multilayer, interlayers and
splitter outputs, scanners with their tool and stochastic keys, profiles,
parts, case files) is one :class:`KeySpec`: its type, dimension and unit,
default, allowed range, one-line doc, whether it is required, and whether a
what-if change may set or scale it. From these tables come

* the dimension and range of the quantities the readers read (:func:`quantity`);
* the keys each reader accepts (:func:`accepted`, used by
  :meth:`~beamplan.layout.reader.MapReader.finish`, which also checks a key
  that no reader code reads by its description, see :func:`read_by_spec`);
* the settable keys of the change language (:func:`settable`);
* the scanner tool keys of the layout and ``beamplan calc demand`` (:func:`tool_keys`);
* the JSON Schema (:mod:`beamplan.layout.jsonschema`) and the key tables of
  docs/layout-format.md (:mod:`beamplan.layout.docgen`).

Plain frozen dataclasses are used rather than pydantic models: the readers
keep their located FILE:LINE:COL errors from the YAML positions, and start-up
stays as it is (importing pydantic and building one model took 0.17 to 0.31 s
wall on this machine against 0.03 s for a bare interpreter; ``check`` must stay
below 0.4 s, see tests/perf/bench_check.py).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

__all__ = ["CASE_VERBS", "KINDS", "SECTIONS", "KeySpec", "accepted", "element_keys", "find",
           "quantity", "read_by_spec", "settable", "tool_keys"]


@dataclass(frozen=True)
class KeySpec:
    """One key of a layout or case file section.

    Attributes
    ----------
    name
        The key as written in the file.
    type
        ``quantity`` (a number with a unit, see ``dimension``), ``range`` (a
        fraction or ``[low, high]``), ``int``, ``number`` (plain), ``bool``,
        ``text``, ``id``, ``choice`` (one of ``choices``), ``map`` (a nested
        section named by ``nested``), ``map-of`` (names to ``nested``
        sections), ``text-or-map``, ``none-or-map``, ``list``.
    dimension
        For quantities: a :data:`beamplan.units.DIMENSIONS` name.
    default
        The default as shown in the docs (empty: none).
    minimum, maximum
        The allowed range (in SI units); ``exclusive`` makes the minimum strict.
    doc
        One line for the docs and the schema.
    required
        Whether the key must be given.
    settable
        The spec field a what-if ``set``/``scale`` change writes (empty: not settable).
    tool
        The :class:`beamplan.physics.demand.ScannerTool` field of a scanner tool key.
    """

    name: str
    type: str
    doc: str
    dimension: str = ""
    default: str = ""
    minimum: float | None = None
    maximum: float | None = None
    exclusive: bool = False
    required: bool = False
    settable: str = ""
    tool: str = ""
    nested: str = ""
    choices: tuple[str, ...] = ()
    unit_required: bool = False


K = KeySpec
_HALF_PI = math.pi / 2

#: The element kinds, in the order the docs list them.
KINDS = ("mirror", "splitter", "attenuator", "drift", "dump", "switch")
#: The verbs of the change language of case files.
CASE_VERBS = ("drop", "add", "set", "scale", "fail", "include")
#: What a source does with light no scanner can use (as in layout.model.SURPLUS_MODES).
SURPLUS = ("turn-down", "dump", "attenuate")

SECTIONS: dict[str, tuple[KeySpec, ...]] = {
    "top": (
        K("layout", "text", "the layout's name", required=True),
        K("format", "int", "the format version, must be 1", required=True, minimum=1,
          maximum=1),
        K("wavelength", "quantity", "the source wavelength", "length", "13.5 nm",
          minimum=0.0, exclusive=True),
        K("note", "text", "free text"),
        K("sources", "map-of", "source id -> settings", nested="source", required=True),
        K("parts", "map-of", "part name -> element settings (templates)", nested="element"),
        K("profiles", "map-of", "profile name -> scanner settings (templates)",
          nested="profile"),
        K("elements", "map-of", "element id -> settings", nested="element"),
        K("scanners", "map-of", "scanner id -> settings", nested="scanner", required=True),
        K("beamlines", "list", "chains such as 'fel-1 -> m1 -> litho-01'", required=True),
        K("tolerances", "map", "tolerance ranges (see docs/tolerance.md)"),
        K("economics", "map", "costs and availability inputs (see docs/cost.md)"),
        K("ageing", "map", "ageing laws, actions and maintenance windows (see docs/ageing.md)"),
    ),
    "source": (
        K("power", "quantity", "power available at the source exit", "power", required=True,
          settable="power_w", minimum=0.0),
        K("electrical", "quantity", "wall-plug draw at full output, at least 'power'", "power",
          settable="electrical_w", minimum=0.0, exclusive=True),
        K("electrical_fixed", "quantity", "part of the draw that does not scale with output",
          "power", "0 W", minimum=0.0),
        K("electrical_per_euv_watt", "number", "instead of 'electrical': W electrical per W "
          "of EUV", minimum=0.0, maximum=1000.0),
        K("surplus", "choice", "what happens to light no scanner can use", default="turn-down",
          choices=SURPLUS),
        K("polarisation", "quantity", "degree of linear polarisation", "fraction", "0",
          minimum=0.0, maximum=1.0),
        K("polarisation_angle", "quantity", "angle of the E-field to the lab horizontal",
          "angle", "0"),
        K("undulator", "map", "check that 'wavelength' is reachable", nested="undulator"),
        K("offline", "bool", "true takes the source out of use", default="false"),
        K("note", "text", "free text"),
    ),
    "undulator": (
        K("energy", "quantity", "electron beam energy", "electron energy", required=True,
          minimum=0.0, exclusive=True),
        K("period", "quantity", "undulator period", "length", required=True,
          minimum=0.0, exclusive=True),
        K("k", "number", "deflection parameter K (or 'field')", minimum=0.0, maximum=1000.0),
        K("field", "quantity", "peak field (or 'k')", "magnetic field", minimum=0.0),
        K("harmonic", "int", "odd harmonic used", default="1", minimum=1, maximum=99),
        K("tunable", "bool", "'k' or 'field' is the largest the gap allows", default="false"),
        K("tolerance", "quantity", "relative mismatch allowed", "fraction", "1 %", minimum=0.0),
    ),
    "element": (
        K("kind", "choice", "the element kind", choices=KINDS),
        K("part", "id", "take the keys of this part first"),
        K("note", "text", "free text"),
        K("heat_limit", "quantity", "most power the element may absorb", "power",
          settable="heat_limit_w", minimum=0.0),
        K("derate", "quantity", "factor on its transmission or reflectivity (ageing)",
          "fraction", "1", minimum=0.0, maximum=1.0, settable="derate"),
        K("offline", "bool", "true takes the element out of use", default="false"),
    ),
    "mirror": (
        K("reflectivity", "quantity", "fixed reflectivity", "fraction", minimum=0.0,
          maximum=1.0, settable="reflectivity"),
        K("coating", "text-or-map", "grazing-incidence coating: a formula or a mapping",
          nested="coating"),
        K("grazing", "quantity", "grazing angle of a coated mirror", "angle", minimum=0.0,
          exclusive=True, maximum=_HALF_PI, settable="grazing_rad"),
        K("multilayer", "map", "a multilayer stack", nested="multilayer"),
        K("incidence", "quantity", "angle of incidence from the normal of a multilayer mirror",
          "angle", minimum=0.0, maximum=_HALF_PI, settable="incidence_rad"),
        K("roughness", "quantity", "rms surface roughness", "length", "0 m", minimum=0.0,
          settable="roughness_m"),
        K("plane", "quantity", "angle of the plane of incidence to the lab horizontal",
          "angle", "0"),
    ),
    "splitter": (
        K("outputs", "map-of", "output name -> settings, two or more", nested="output",
          required=True),
    ),
    "output": (
        K("efficiency", "quantity", "transmission of this output", "fraction", "1",
          minimum=0.0, maximum=1.0),
        K("fraction", "range", "share of the input, fixed or [low, high]", default="[0, 1]"),
    ),
    "attenuator": (
        K("transmission", "range", "fixed transmission or [low, high] chosen by the plan",
          required=True, settable="transmission"),
    ),
    "drift": (
        K("transmission", "quantity", "fixed transmission", "fraction", minimum=0.0,
          maximum=1.0, settable="transmission"),
        K("length", "quantity", "length of the drift", "length", minimum=0.0),
        K("gas", "text", "fill gas (with 'pressure' and 'length')"),
        K("pressure", "quantity", "gas pressure", "pressure", minimum=0.0),
        K("temperature", "quantity", "gas temperature", "temperature", "295 K",
          minimum=0.0, exclusive=True),
    ),
    "dump": (),
    "switch": (
        K("efficiency", "quantity", "transmission of the switch", "fraction", "1",
          minimum=0.0, maximum=1.0, settable="efficiency"),
        K("select", "id", "the input it takes (default: the plan chooses)",
          settable="select"),
    ),
    "coating": (
        K("material", "text", "chemical formula", required=True),
        K("density", "quantity", "density", "density", minimum=0.0, exclusive=True),
        K("delta", "quantity", "measured index decrement (with 'beta')", "fraction"),
        K("beta", "quantity", "measured absorption index (with 'delta')", "fraction", minimum=0.0),
    ),
    "multilayer": (
        K("pair", "text", "absorber/spacer", default="Mo/Si"),
        K("period", "quantity", "bilayer period", "length", "6.9 nm", minimum=0.0, exclusive=True),
        K("absorber_fraction", "quantity", "absorber share of the period", "fraction", "0.4",
          minimum=0.0, maximum=1.0),
        K("periods", "int", "number of periods", default="50", minimum=1, maximum=1000),
        K("cap", "text", "cap material or 'none'", default="Ru"),
        K("cap_thickness", "quantity", "cap thickness", "length", "2 nm", minimum=0.0),
        K("substrate", "text", "substrate material", default="SiO2"),
        K("roughness", "quantity", "interface roughness (default: the mirror's, else "
          "0.4 nm)", "length", "0.4 nm", minimum=0.0),
        K("interlayers", "none-or-map", "'none' or the diffused interlayers",
          nested="interlayers"),
    ),
    "interlayers": (
        K("material", "text", "interlayer compound", default="MoSi2"),
        K("density", "quantity", "density", "density", "6.2 g/cm^3", minimum=0.0, exclusive=True),
        K("absorber_on_spacer", "quantity", "thickness where absorber lies on spacer",
          "length", "1 nm", minimum=0.0),
        K("spacer_on_absorber", "quantity", "thickness where spacer lies on absorber",
          "length", "0.5 nm", minimum=0.0),
    ),
    "scanner": (
        K("profile", "id", "take the keys of this profile first"),
        K("power", "quantity", "IF power needed (or 'dose' and 'wph')", "power",
          settable="need_w", minimum=0.0, exclusive=True),
        K("dose", "quantity", "resist dose (a unit is required)", "dose", settable="dose_j_m2",
          unit_required=True, minimum=0.0, exclusive=True),
        K("wph", "quantity", "wafers per hour", "rate", settable="wafers_per_hour",
          minimum=0.0, exclusive=True),
        K("fields", "int", "exposure fields per wafer", minimum=0, maximum=10_000,
          tool="fields_per_wafer"),
        K("field_width", "quantity", "field width", "length", tool="field_width_m", minimum=0.0),
        K("field_length", "quantity", "field length", "length", tool="field_length_m", minimum=0.0),
        K("slit_height", "quantity", "slit height along the scan", "length",
          tool="slit_height_m", minimum=0.0),
        K("wafer_overhead", "quantity", "time per wafer not spent in fields", "time",
          tool="wafer_overhead_s", minimum=0.0),
        K("field_overhead", "quantity", "time per field not spent scanning", "time",
          tool="field_overhead_s", minimum=0.0),
        K("stage_speed", "quantity", "maximum scan speed", "speed", tool="stage_max_speed_m_s",
          minimum=0.0),
        K("reflections", "int", "mirror reflections IF to wafer, mask excluded", minimum=0,
          maximum=10_000, tool="mirror_reflections"),
        K("mirror_reflectivity", "quantity", "reflectivity of each mirror", "fraction",
          tool="mirror_reflectivity", minimum=0.0, maximum=1.0),
        K("mask_reflectivity", "quantity", "mask reflectivity", "fraction",
          tool="mask_reflectivity", minimum=0.0, maximum=1.0),
        K("pellicle", "quantity", "pellicle transmission, one pass (crossed twice)", "fraction",
          tool="pellicle_transmission", minimum=0.0, maximum=1.0),
        K("other_losses", "quantity", "further transmission factor", "fraction",
          tool="other_losses_factor", minimum=0.0, maximum=1.0),
        K("dose_margin", "quantity", "share of IF power held back for dose control",
          "fraction", tool="dose_control_margin", minimum=0.0, maximum=1.0),
        K("mirror_multilayer", "map", "the tool mirrors' multilayer instead of a fixed "
          "reflectivity", nested="multilayer"),
        K("mirror_incidence", "quantity", "angle of incidence on the tool mirrors", "angle",
          "0", minimum=0.0, maximum=1.5),
        K("critical_area", "quantity", "stochastic floor: critical area", "area",
          minimum=0.0, exclusive=True),
        K("resist_absorption", "quantity", "stochastic floor: resist absorption",
          "absorption", minimum=0.0, exclusive=True),
        K("resist_thickness", "quantity", "stochastic floor: resist thickness", "length",
          minimum=0.0, exclusive=True),
        K("noise", "quantity", "stochastic floor: relative noise allowed", "fraction",
          minimum=0.0, exclusive=True),
        K("max_power", "quantity", "most IF power it may take", "power", settable="max_w",
          minimum=0.0),
        K("priority", "int", "priority tier (1 first)", default="1", minimum=1, maximum=1000),
        K("cap_at_useful", "bool", "cap delivery at what the tool can use", default="true"),
        K("offline", "bool", "true takes the scanner out of use", default="false"),
        K("note", "text", "free text"),
    ),
    "cases-top": (
        K("format", "int", "the format version, must be 1", required=True, minimum=1,
          maximum=1),
        K("layout", "text", "the layout the cases apply to"),
        K("cases", "map-of", "case name -> case", nested="case", required=True),
    ),
    "case": (
        K("note", "text", "free text"),
        K("changes", "list", "changes applied in order: " + ", ".join(CASE_VERBS),
          required=True),
    ),
}


def accepted(section: str) -> tuple[str, ...]:
    """The keys a section accepts, from its table.

    Examples
    --------
    >>> accepted("undulator")[:3]
    ('energy', 'period', 'k')
    """
    return tuple(spec.name for spec in SECTIONS[section])


def element_keys(kind: str) -> tuple[KeySpec, ...]:
    """The keys of an element of ``kind``: the common ones, then its own.

    Examples
    --------
    >>> [s.name for s in element_keys("switch")][-2:]
    ['efficiency', 'select']
    """
    return SECTIONS["element"] + SECTIONS.get(kind, ())


def settable(group: str) -> dict[str, tuple[str, str]]:
    """The keys a what-if change may set or scale: key -> (spec field, dimension).

    ``group`` is ``source``, ``element`` or ``scanner``; an id-valued key (a
    switch's ``select``) has the dimension ``input``.

    Examples
    --------
    >>> settable("source")["power"]
    ('power_w', 'power')
    """
    sections = ("element", *KINDS) if group == "element" else (group,)
    out: dict[str, tuple[str, str]] = {}
    for section in sections:
        for spec in SECTIONS[section]:
            if spec.settable and spec.name not in out:
                dimension = "input" if spec.type == "id" else spec.dimension or "fraction"
                out[spec.name] = (spec.settable, dimension)
    return out


def tool_keys() -> dict[str, tuple[str, str]]:
    """The scanner tool keys: key -> (dimension or ``int``, ScannerTool field).

    Examples
    --------
    >>> tool_keys()["stage_speed"]
    ('speed', 'stage_max_speed_m_s')
    """
    return {spec.name: ("int" if spec.type == "int" else spec.dimension, spec.tool)
            for spec in SECTIONS["scanner"] if spec.tool}


def find(section: str, key: str) -> KeySpec | None:
    """The description of ``key`` in ``section``, or None."""
    return next((s for s in SECTIONS.get(section, ()) if s.name == key), None)


def quantity(reader: Any, section: str, name: str, default: float | None = None
             ) -> float | None:
    """Read the quantity ``name`` of ``section`` with the dimension and range of its table.

    Examples
    --------
    >>> from beamplan.layout.reader import Context, MapReader
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml("d: {length: 40 m}", "x.yaml")
    >>> r = MapReader(Context(doc.positions), doc.data["d"], {"length": ("d", "length")},
    ...               "element 'd'", ("d",))
    >>> quantity(r, "drift", "length")
    40.0
    """
    spec = find(section, name)
    if spec is None or spec.type != "quantity":
        raise KeyError(f"no quantity '{name}' in section '{section}'")
    value: float | None = reader.quantity(
        name, spec.dimension, required=spec.required, default=default, minimum=spec.minimum,
        maximum=spec.maximum, strict_minimum=spec.exclusive)
    return value


def read_by_spec(reader: Any, spec: KeySpec) -> None:
    """Check a key that no reader code asked for, by its description alone.

    A key added to a table is thereby accepted and checked (type, dimension,
    range) before any code uses it; errors are located like all others.
    """
    bounds = {"minimum": spec.minimum, "maximum": spec.maximum}
    if spec.type == "quantity":
        reader.quantity(spec.name, spec.dimension, strict_minimum=spec.exclusive, **bounds)
    elif spec.type == "range":
        reader.fraction_range(spec.name)
    elif spec.type == "int":
        reader.integer(spec.name, default=0, minimum=None if spec.minimum is None
                       else int(spec.minimum), maximum=int(spec.maximum or 1_000_000))
    elif spec.type == "bool":
        reader.flag(spec.name, default=False)
    elif spec.type in ("map", "map-of"):
        reader.mapping(spec.name)
    else:
        reader.raw(spec.name)
