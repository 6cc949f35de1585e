"""What-if cases: a case file (or command-line changes) against one base layout.

The case file format is documented in docs/cases.md::

    format: 1
    cases:
      bay-b-expansion:
        note: a ninth scanner in bay B, source 10 % down
        changes:
          - add: {scanner: litho-b9, at: tb4.spare, power: 320 W}
          - scale: {fel-main.power: 0.9}
      tap-fails:
        changes: [{fail: t3}]
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

from beamplan.analyses.changes import Change, ChangeError, apply_change, relink
from beamplan.errors import Diagnostic, LayoutError, Location, did_you_mean, excerpt
from beamplan.layout.endpoints import read_scanners
from beamplan.layout.kinds import read_element
from beamplan.layout.model import DumpSpec, Layout, LinkSpec, SplitterSpec
from beamplan.layout.reader import Context, MapReader
from beamplan.layout.yamlpos import Path, Positions, YamlDocument
from beamplan.vocabulary import NodeKind

__all__ = ["VERBS", "Case", "build_case", "case_diagnostics", "parse_cases"]

VERBS = ("drop", "add", "set", "scale", "fail", "include")
_NOWHERE = Location("<cases>", 1, 1)
MAX_INCLUDE_DEPTH = 50  # includes within includes
MAX_CHANGES = 10_000  # changes of one case, includes expanded


@dataclass(frozen=True)
class Case:
    """A named list of changes (and where it was written)."""

    name: str
    changes: tuple[Change, ...]
    note: str = ""
    location: Location = _NOWHERE
    doc: YamlDocument | None = None


def parse_cases(doc: YamlDocument) -> dict[str, Case]:
    """Read a case file; every structural mistake is a located error.

    Examples
    --------
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> doc = parse_yaml("format: 1\\ncases:\\n  a: {changes: [{drop: x}]}\\n", "c.yaml")
    >>> [c.verb for c in parse_cases(doc)["a"].changes]
    ['drop']
    """
    ctx = Context(doc.positions)
    data = doc.data if isinstance(doc.data, dict) else {}
    top = MapReader(ctx, data, {k: (k,) for k in data}, "case file", ())
    fmt = top.integer("format", default=-1)
    if fmt != 1:
        ctx.error("bad-format", "case file 'format' must be 1", top.value_loc("format"),
                  "write 'format: 1'")
    top.text("layout")
    section = top.mapping("cases", required=True) or {}
    top.finish()
    cases: dict[str, Case] = {}
    for name, body in section.items():
        path: Path = ("cases", name)
        if not isinstance(body, dict):
            ctx.error("bad-type", f"case '{name}' must be a mapping with 'changes:'",
                      ctx.positions.value(path))
            continue
        r = MapReader(ctx, body, {k: (*path, k) for k in body}, f"case '{name}'", path)
        note = r.text("note")
        raw = r.raw("changes", required=True, example="[{drop: litho-a3}]")
        r.finish()
        changes = []
        for i, item in enumerate(raw if isinstance(raw, list) else []):
            where = ctx.positions.value((*path, "changes", i))
            if not isinstance(item, dict) or len(item) != 1:
                ctx.error("bad-change", f"case '{name}', change {i + 1}: write one change "
                          f"per item, such as '{{drop: litho-a3}}'", where)
                continue
            [(verb, argument)] = item.items()
            if verb not in VERBS:
                ctx.error("bad-change", f"case '{name}', change {i + 1}: unknown change "
                          f"'{verb}'", where, did_you_mean(verb, VERBS) or
                          f"the changes are: {', '.join(VERBS)}")
                continue
            changes.append(Change(verb, argument, ctx.positions.value(
                (*path, "changes", i, verb)), name, i))
        if not isinstance(raw, list) and raw is not None and not ctx.failed:
            ctx.error("bad-type", f"case '{name}': 'changes' must be a list",
                      r.value_loc("changes"))
        cases[name] = Case(name, tuple(changes), note, ctx.positions.key(path), doc)
    if ctx.failed:
        raise LayoutError(ctx.diagnostics)
    return cases


def _scanner_from(case_doc: YamlDocument, change: Change, settings: dict[str, Any],
                  base_doc: YamlDocument | None) -> Any:
    """Read an added scanner's keys with positions in the case file."""
    where = change.location
    sid = settings["scanner"]
    keys = {k: v for k, v in settings.items() if k not in ("scanner", "at", "behind", "part",
                                                            "port", "splitter")}
    positions = Positions(where.file)
    path = ("cases", change.case, "changes", change.index, change.verb)
    positions.keys[("scanners", str(sid))] = where
    for key in keys:
        positions.keys[("scanners", str(sid), key)] = case_doc.positions.key((*path, key))
        positions.values[("scanners", str(sid), key)] = case_doc.positions.value((*path, key))
    ctx = Context(positions)
    profiles = (base_doc.data.get("profiles") or {}) if base_doc else {}
    found, _ = read_scanners(ctx, {str(sid): keys}, profiles)
    if ctx.failed:
        raise LayoutError([replace(d, message=f"case '{change.case}', change "
                                   f"{change.index + 1} (add): {d.message}")
                           for d in ctx.diagnostics if d.is_error])
    return found[0]


def _adder(case_doc: YamlDocument, base_doc: YamlDocument | None) -> Any:
    def add(layout: Layout, change: Change) -> Layout:
        arg = change.argument
        if not isinstance(arg, dict) or "scanner" not in arg:
            raise ChangeError(change, "expected {scanner: ID, at: SPLITTER.OUTPUT, ...} or "
                              "{scanner: ID, behind: ELEMENT, part: PART, ...}")
        sid = str(arg["scanner"])
        if sid in layout.by_id:
            raise ChangeError(change, f"id '{sid}' is already used", "choose a new id")
        scanner = _scanner_from(case_doc, change, arg, base_doc)
        layout = replace(layout, scanners=(*layout.scanners, scanner))
        if "at" in arg:
            return _attach(layout, change, sid, str(arg["at"]))
        if "behind" in arg:
            return _insert(layout, change, sid, arg, base_doc)
        raise ChangeError(change, "say where the scanner goes: 'at: SPLITTER.OUTPUT' (a free "
                          "output) or 'behind: ELEMENT' with 'part:'")
    return add


def _link_from(layout: Layout, change: Change, dotted: str) -> LinkSpec:
    tail, _, port = dotted.partition(".")
    if tail not in layout.by_id:
        hint = did_you_mean(tail, list(layout.node_ids))
        raise ChangeError(change, f"no element '{tail}'", hint)
    for link in layout.links:
        if link.tail == tail and (link.port or "") == port:
            return link
    raise ChangeError(change, f"'{dotted}' is not an output that leads anywhere",
                      "name a splitter output such as 't1.spare'")


def _attach(layout: Layout, change: Change, sid: str, at: str) -> Layout:
    link = _link_from(layout, change, at)
    head = layout.by_id[link.head]
    feeds = [lk for lk in layout.links if lk.head == link.head]
    if not isinstance(head, DumpSpec) or len(feeds) != 1:
        raise ChangeError(change, f"output '{at}' is already in use (it feeds '{link.head}')",
                          "choose a free output (one that feeds a dump), or use 'behind:'")
    new = LinkSpec(link.tail, sid, link.port, change.location, change.location)
    return relink(layout, link, [new], [], {link.head})


def _insert(layout: Layout, change: Change, sid: str, arg: dict[str, Any],
            base_doc: YamlDocument | None) -> Layout:
    link = _link_from(layout, change, str(arg["behind"]))
    part = str(arg.get("part", ""))
    parts = (base_doc.data.get("parts") or {}) if base_doc else {}
    if part not in parts:
        raise ChangeError(change, f"no part '{part}' in the layout", did_you_mean(part, parts)
                          or "give 'part:' naming a splitter part of the layout")
    split_id = str(arg.get("splitter", f"{sid}-tap"))
    if split_id in layout.by_id:
        raise ChangeError(change, f"id '{split_id}' is already used", "give 'splitter: NEW-ID'")
    assert base_doc is not None
    ctx = Context(base_doc.positions)
    template = parts[part]
    if not isinstance(template, dict):
        raise ChangeError(change, f"part '{part}' is not a splitter")
    reader = MapReader(ctx, template, {k: ("parts", part, k) for k in template},
                       f"part '{part}'", ("parts", part))
    spec = read_element(reader, split_id, part)
    if not isinstance(spec, SplitterSpec):
        raise ChangeError(change, f"part '{part}' is not a splitter")
    spec = replace(spec, location=change.location)
    names = [o.name for o in spec.outputs]
    port = str(arg.get("port", names[0]))
    if port not in names:
        raise ChangeError(change, f"part '{part}' has no output '{port}'",
                          did_you_mean(port, names) or f"its outputs are: {', '.join(names)}")
    rest = [n for n in names if n != port]
    loc = change.location
    new = [LinkSpec(link.tail, split_id, link.port, link.tail_location, loc),
           LinkSpec(split_id, sid, port, loc, loc),
           LinkSpec(split_id, link.head, rest[0], loc, link.head_location)]
    dumps = []
    for name in rest[1:]:
        dump_id = f"{split_id}-{name}-dump"
        dumps.append(DumpSpec(dump_id, NodeKind.DUMP, location=loc))
        new.append(LinkSpec(split_id, dump_id, name, loc, loc))
    return relink(layout, link, new, [spec, *dumps], set())


def build_case(base: Layout, cases: dict[str, Case], name: str,
               base_doc: YamlDocument | None = None) -> Layout:
    """The layout of case ``name``: the base with its changes (and includes) applied.

    Raises
    ------
    LayoutError
        With the located diagnostic of the first change that does not apply.
    """
    def expand(case: Case, trail: tuple[str, ...], out: list[Change]) -> list[Change]:
        for change in case.changes:
            if change.verb != "include":
                out.append(change)
                if len(out) > MAX_CHANGES:
                    raise ChangeError(change, f"with its includes, case '{name}' has more "
                                      f"than {MAX_CHANGES:,} changes", "include less")
                continue
            target = str(change.argument)
            if target not in cases:
                raise ChangeError(change, f"no case {excerpt(target)}",
                                  did_you_mean(target, cases))
            if target in trail:
                raise ChangeError(change, f"cases include each other: "
                                  f"{' -> '.join((*trail, target))}")
            if len(trail) >= MAX_INCLUDE_DEPTH:
                raise ChangeError(change, f"includes nest more than {MAX_INCLUDE_DEPTH} deep",
                                  "include fewer levels")
            expand(cases[target], (*trail, target), out)
        return out

    case = cases[name]
    layout = base
    try:
        for change in expand(case, (name,), []):
            doc = cases[change.case].doc or case.doc
            assert doc is not None
            layout = apply_change(layout, change, add=_adder(doc, base_doc))
    except ChangeError as exc:
        raise LayoutError([exc.diagnostic]) from None
    return replace(layout, warnings=(), name=f"{base.name} [{name}]")


def case_diagnostics(exc: LayoutError, name: str) -> list[Diagnostic]:
    """Diagnostics of a case's re-check, each naming the case."""
    return [d if d.message.startswith("case '") else
            replace(d, message=f"case '{name}': {d.message}") for d in exc.diagnostics]
