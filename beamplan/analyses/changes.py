"""The change language of what-if cases, applied to a loaded layout.

A case is a list of changes applied in order to a copy of the base layout
(frozen objects: the base is never touched), then re-checked like any
layout. Changes:

* ``drop: ID`` (or a list): remove scanners; the beam that fed each is dumped;
* ``add: {scanner: ID, at: SPLITTER.OUTPUT, ...scanner keys}``: a new scanner
  on a free splitter output (one that feeds a dump), or
  ``add: {scanner: ID, behind: ELEMENT, part: PART, port: OUTPUT, ...}``: a new
  splitter made from a part, inserted after an element, its ``port`` feeding
  the scanner, its next output continuing the line, any others dumped;
* ``set: {ID.KEY: VALUE, ...}`` and ``scale: {ID.KEY: FACTOR, ...}``: change a
  numeric property of a source, element or scanner (see :data:`SETTABLE`);
  ``set: {SWITCH.select: INPUT}`` moves a switch to another of its inputs;
* ``fail: ID`` (or a list): take sources, elements or scanners out of service;
* ``include: CASE``: apply another case's changes first.

Every problem is a :class:`~beamplan.errors.Diagnostic` located at the change.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

from beamplan.errors import Diagnostic, Location, did_you_mean, excerpt
from beamplan.layout.model import (
    AttenuatorSpec,
    DumpSpec,
    ElementSpec,
    Layout,
    LinkSpec,
    MirrorSpec,
    ScannerSpec,
    SourceSpec,
    SplitterSpec,
    SwitchSpec,
)
from beamplan.layout.positions import Positions
from beamplan.layout.spec import settable
from beamplan.layout.yamlpos import YamlDocument
from beamplan.vocabulary import NodeKind

__all__ = ["SETTABLE", "Change", "ChangeError", "apply_change", "command_line_document",
           "switch_inputs"]

# Settable keys: the layout key -> (spec field, dimension). Scaling a computed
# reflectivity or transmission scales the element's derate factor instead.
# Derived from the tables of beamplan.layout.spec (``settable=`` on a key).
SETTABLE: dict[str, dict[str, tuple[str, str]]] = {
    group: settable(group) for group in ("source", "element", "scanner")}


@dataclass(frozen=True)
class Change:
    """One change of a case: its verb, its argument, and where it was written."""

    verb: str
    argument: Any
    location: Location
    case: str
    index: int


class ChangeError(Exception):
    """A change that cannot be applied; carries its located diagnostic."""

    def __init__(self, change: Change, message: str, hint: str = "") -> None:
        super().__init__(message)
        self.diagnostic = Diagnostic(
            "error", "bad-change", f"case '{change.case}', change {change.index + 1} "
            f"({change.verb}): {message}", change.location, hint)


def _ids(layout: Layout) -> list[str]:
    return list(layout.node_ids)


def _missing(change: Change, layout: Layout, item_id: str, noun: str) -> ChangeError:
    hint = did_you_mean(item_id, _ids(layout))
    return ChangeError(change, f"no {noun} '{item_id}'", hint)


def _as_list(change: Change) -> list[str]:
    value = change.argument
    items = value if isinstance(value, list) else [value]
    if not items or not all(isinstance(v, str) for v in items):
        raise ChangeError(change, f"expected an id or a list of ids, got {excerpt(value)}")
    return list(items)


def _drop(layout: Layout, change: Change) -> Layout:
    scanners = {s.id: s for s in layout.scanners}
    elements = list(layout.elements)
    for sid in _as_list(change):
        if sid not in scanners:
            if sid in layout.by_id:
                raise ChangeError(change, f"'{sid}' is not a scanner",
                                  f"take it out of service with 'fail: {sid}'")
            raise _missing(change, layout, sid, "scanner")
        del scanners[sid]
        elements.append(DumpSpec(sid, NodeKind.DUMP, note="dropped scanner",
                                 location=change.location))
    return replace(layout, scanners=tuple(s for s in layout.scanners if s.id in scanners),
                   elements=tuple(elements))


def _fail(layout: Layout, change: Change) -> Layout:
    chosen = set(_as_list(change))
    for item_id in chosen:
        if item_id not in layout.by_id:
            raise _missing(change, layout, item_id, "source, element or scanner")
    return replace(
        layout,
        sources=tuple(replace(s, in_use=False) if s.id in chosen else s
                      for s in layout.sources),
        elements=tuple(replace(e, in_use=False) if e.id in chosen else e
                       for e in layout.elements),
        scanners=tuple(replace(s, in_use=False) if s.id in chosen else s
                       for s in layout.scanners))


def _target(layout: Layout, change: Change, dotted: str) -> tuple[Any, str, str]:
    item_id, _, key = str(dotted).rpartition(".")
    if not item_id or not key:
        raise ChangeError(change, f"{excerpt(str(dotted))} must read ID.KEY",
                          "e.g. 'fel-1.power'")
    item = layout.by_id.get(item_id)
    if item is None:
        raise _missing(change, layout, item_id, "source, element or scanner")
    group = ("source" if isinstance(item, SourceSpec) else
             "scanner" if isinstance(item, ScannerSpec) else "element")
    if key not in settable(group):
        hint = did_you_mean(key, settable(group)) or \
            f"the keys here are: {', '.join(settable(group))}"
        raise ChangeError(change, f"'{key}' cannot be changed on {group} '{item_id}'", hint)
    return item, group, key


def _current(item: Any, field_name: str, change: Change, dotted: str) -> float:
    if isinstance(item, ScannerSpec) and field_name in ("dose_j_m2", "wafers_per_hour"):
        if item.demand is None:
            raise ChangeError(change, f"'{dotted}': the scanner has no dose/wph model")
        return float(getattr(item.demand, field_name))
    if isinstance(item, AttenuatorSpec) and field_name == "transmission":
        return item.transmission_max
    value = getattr(item, field_name, None)
    if value is None:
        raise ChangeError(change, f"'{dotted}' has no value to change on this "
                          f"{getattr(item, 'kind', 'item') or 'item'}",
                          "use 'set' with a value, or 'derate' for a computed gain")
    return float(value)


def _store(item: Any, field_name: str, value: float) -> Any:
    if isinstance(item, ScannerSpec) and field_name in ("dose_j_m2", "wafers_per_hour"):
        assert item.demand is not None
        demand = (replace(item.demand, dose_j_m2=value) if field_name == "dose_j_m2"
                  else replace(item.demand, wafers_per_hour=value))
        return replace(item, demand=demand, need_w=None)
    if isinstance(item, AttenuatorSpec) and field_name == "transmission":
        return replace(item, transmission_min=min(item.transmission_min, value),
                       transmission_max=value)
    if isinstance(item, SplitterSpec) and field_name == "efficiency":
        return replace(item, outputs=tuple(replace(o, efficiency=value) for o in item.outputs))
    if not hasattr(item, field_name):
        raise AttributeError(field_name)
    return replace(item, **{field_name: value})


def _check_range(change: Change, dotted: str, value: float, dimension: str) -> None:
    from beamplan.units import DIMENSIONS

    dim = DIMENSIONS[dimension]
    top = 1.0 if dimension == "fraction" else dim.limit
    if not 0 <= value <= top:  # NaN fails too
        bound = ("between 0 and 1" if dimension == "fraction"
                 else f"between 0 and {top:g} {dim.si_unit}")
        raise ChangeError(change, f"'{dotted}' would become {value:g}; it must be {bound}")


def _set_or_scale(layout: Layout, change: Change, scale: bool) -> Layout:
    from beamplan.units import UnitError, parse_quantity

    if not isinstance(change.argument, dict) or not change.argument:
        raise ChangeError(change, "expected a mapping such as {fel-1.power: 9 kW}")
    for dotted, raw in change.argument.items():
        item, group, key = _target(layout, change, dotted)
        if key == "select":
            layout = _replace_item(layout, _select(layout, change, item, dotted, raw, scale))
            continue
        field_name, dimension = settable(group)[key]
        computed = (isinstance(item, MirrorSpec) and key == "reflectivity"
                    and item.reflectivity is None) or (
            key == "transmission" and getattr(item, "transmission", 1.0) is None)
        try:
            number = parse_quantity(raw, "fraction" if scale else dimension)
        except UnitError as exc:
            raise ChangeError(change, f"'{dotted}': {exc.message}", exc.hint) from exc
        if scale and computed:
            field_name, dimension, value = "derate", "fraction", item.derate * number
        elif scale:
            value = _current(item, field_name, change, dotted) * number
        else:
            value = number
        _check_range(change, dotted, value, dimension)
        try:
            updated = _store(item, field_name, value)
        except AttributeError:
            raise ChangeError(change, f"'{key}' does not apply to {group} '{item.id}' "
                              f"({getattr(item, 'kind', group)})") from None
        layout = _replace_item(layout, updated)
    return layout


def switch_inputs(layout: Layout, switch_id: str) -> dict[str, tuple[str, ...]]:
    """Each input of a switch (the element that feeds it) and the sources behind it.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> switch_inputs(load_layout("layouts/two-bay.yaml"), "sw-source")
    {'src-tunnel': ('fel-main',), 'sb-drift': ('fel-standby',)}
    """
    feeding: dict[str, list[str]] = {}
    for link in layout.links:
        feeding.setdefault(link.head, []).append(link.tail)
    sources = {s.id for s in layout.sources}
    out = {}
    for tail in feeding.get(switch_id, []):
        seen, stack = {tail}, [tail]
        while stack:
            for up in feeding.get(stack.pop(), []):
                if up not in seen:
                    seen.add(up)
                    stack.append(up)
        out[tail] = tuple(s.id for s in layout.sources if s.id in seen and s.id in sources)
    return out


def _select(layout: Layout, change: Change, item: Any, dotted: str, raw: Any,
            scale: bool) -> Any:
    """The switch with its ``select`` moved to another input (or the input behind a source)."""
    if not isinstance(item, SwitchSpec):
        raise ChangeError(change, f"'select' applies to switches only; '{item.id}' is a "
                          f"{getattr(item, 'kind', 'node')}")
    inputs = switch_inputs(layout, item.id)
    choices = ", ".join(f"{tail} (from {' and '.join(src) or 'no source'})"
                        for tail, src in inputs.items())
    if scale:
        raise ChangeError(change, f"'{dotted}' names an input and cannot be scaled",
                          f"write 'set: {{{dotted}: INPUT}}'; the inputs are: {choices}")
    value = str(raw).strip()
    behind = [tail for tail, src in inputs.items() if value in src]
    if value not in inputs and len(behind) == 1:
        value = behind[0]  # a source named: the input it feeds
    if value not in inputs:
        hint = did_you_mean(value, list(inputs))
        raise ChangeError(change, f"'{dotted}': '{value}' is not an input of switch "
                          f"'{item.id}'", (hint + " " if hint else "") +
                          f"the inputs are: {choices}")
    return replace(item, select=value, select_location=change.location)


def _replace_item(layout: Layout, item: Any) -> Layout:
    def swap(group: tuple[Any, ...]) -> tuple[Any, ...]:
        return tuple(item if x.id == item.id else x for x in group)

    return replace(layout, sources=swap(layout.sources), elements=swap(layout.elements),
                   scanners=swap(layout.scanners))


def apply_change(layout: Layout, change: Change, *, add: Any = None) -> Layout:
    """Apply one change; ``add`` builds the pieces of an ``add`` change.

    Raises
    ------
    ChangeError
        When the change does not fit the layout (unknown id, a value out of
        range, an output already in use, ...).
    """
    if change.verb == "drop":
        return _drop(layout, change)
    if change.verb == "fail":
        return _fail(layout, change)
    if change.verb in ("set", "scale"):
        return _set_or_scale(layout, change, change.verb == "scale")
    if change.verb == "add":
        added: Layout = add(layout, change)
        return added
    raise ChangeError(change, f"unknown change '{change.verb}'",
                      did_you_mean(change.verb, ["drop", "add", "set", "scale", "fail",
                                                 "include"]))


def relink(layout: Layout, remove: LinkSpec | None, new: list[LinkSpec],
           elements: list[ElementSpec], drop_ids: set[str]) -> Layout:
    """The layout with one link removed, links and elements added, elements dropped."""
    links = [lk for lk in layout.links if lk is not remove] + new
    kept = [e for e in layout.elements if e.id not in drop_ids] + elements
    return replace(layout, links=tuple(links), elements=tuple(kept))


COMMAND_LINE = "<command line>"


def command_line_document(options: list[tuple[str, int, Any]]) -> YamlDocument:
    """A one-case document of changes given as command-line options.

    Each option is ``(verb, occurrence, argument)``; every problem with it is
    located at ``--VERB, argument N`` (the N-th use of that option).

    Examples
    --------
    >>> from beamplan.analyses.cases import parse_cases
    >>> doc = command_line_document([("fail", 1, "m1"), ("fail", 2, "m9")])
    >>> [str(c.location) for c in parse_cases(doc)["command-line"].changes]
    ['--fail, argument 1', '--fail, argument 2']
    """
    nowhere = Location(COMMAND_LINE, 0, 0)
    positions = Positions(COMMAND_LINE)
    case: tuple[str | int, ...] = ("cases", "command-line")
    for path in ((), ("format",), ("cases",), case, (*case, "changes")):
        positions.keys[path] = nowhere
        positions.values[path] = nowhere
    changes: list[dict[str, Any]] = []
    for index, (verb, occurrence, argument) in enumerate(options):
        where = Location(f"--{verb}, argument {occurrence}", 0, 0)
        path = (*case, "changes", index)
        for sub in (path, (*path, verb)):
            positions.keys[sub] = where
            positions.values[sub] = where
        if isinstance(argument, dict):
            for key in argument:
                positions.keys[(*path, verb, key)] = where
                positions.values[(*path, verb, key)] = where
        changes.append({verb: argument})
    data = {"format": 1, "cases": {"command-line": {"changes": changes}}}
    return YamlDocument(data, positions, "")
