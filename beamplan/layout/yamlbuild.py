"""Build plain data and positions from YAML parser events, within limits.

The builder reads the event stream of PyYAML's parser in one loop (no
recursion, so no depth can overflow the stack) and counts as it goes: nodes,
nodes reached through aliases (expanded), and depth. An aliased node is built
once and shared (memoised by its anchor), and its positions are linked rather
than copied. Merge keys (``<<``) follow YAML merge semantics: keys written in
the mapping override merged ones. Tags other than the standard scalar ones
are refused.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import yaml

from beamplan.errors import Diagnostic, LayoutError, Location, excerpt
from beamplan.layout.limits import MAX_NUMBER_CHARS, Limits
from beamplan.layout.positions import Path, Positions

__all__ = ["build_events", "measure_events"]

_T = "tag:yaml.org,2002:"
_SCALAR_TAGS = {_T + name for name in ("str", "int", "float", "bool", "null")}
_COLLECTION_TAGS = {_T + "map", _T + "seq", _T + "omap"}
_NUMBER_TAGS = {_T + "int", _T + "float"}
_MERGE = object()
_SKIP = object()
_RESOLVER = yaml.resolver.Resolver()
_CONSTRUCTOR = yaml.constructor.SafeConstructor()


@dataclass
class _Frame:
    mapping: bool
    path: Path | None
    loc: Location
    anchor: str | None
    nodes_before: int
    height: int = 1
    items: list[Any] = field(default_factory=list)
    data: dict[str, Any] = field(default_factory=dict)
    pending: Any = None  # the key whose value comes next (or _MERGE, _SKIP)
    merges: list[tuple[dict[str, Any], Path | None]] = field(default_factory=list)


@dataclass
class _Anchor:
    value: Any
    path: Path | None
    size: int
    height: int


class _Builder:
    def __init__(self, file: str, limits: Limits) -> None:
        self.file = file
        self.limits = limits
        self.positions = Positions(file)
        self.problems: list[Diagnostic] = []
        self.stack: list[_Frame] = []
        self.anchors: dict[str, _Anchor] = {}
        self.nodes = 0  # written and expanded, for anchor sizes
        self.written = 0
        self.expanded = 0
        self.root: Any = None
        self.documents = 0

    # -- errors ----------------------------------------------------------
    def _loc(self, mark: Any) -> Location:
        if mark is None:
            return Location(self.file, 1, 1)
        return Location(self.file, mark.line + 1, mark.column + 1)

    def _stop(self, code: str, message: str, loc: Location, hint: str = "") -> LayoutError:
        return LayoutError([Diagnostic("error", code, message, loc, hint)])

    def _limit(self, message: str, loc: Location) -> LayoutError:
        return self._stop("too-large", message, loc, self.limits.advice)

    # -- where the next node goes ------------------------------------------
    def _slot(self, loc: Location) -> tuple[Path | None, Any]:
        """The path of the next node and, in a mapping, its key (None for a key)."""
        if not self.stack:
            return (), None
        top = self.stack[-1]
        if top.path is None:
            return None, top.pending
        if not top.mapping:
            return (*top.path, len(top.items)), None
        if top.pending is None:
            return None, None
        if top.pending is _MERGE:
            return (*top.path, "<<"), _MERGE
        if top.pending is _SKIP:
            return None, _SKIP
        return (*top.path, top.pending), top.pending

    def _count(self, loc: Location, expanded: int = 0, height: int = 0) -> None:
        self.written += 1
        self.nodes += 1 + expanded
        self.expanded += expanded
        self._check(loc, height)

    def _check(self, loc: Location, height: int = 0) -> None:
        if self.written > self.limits.max_nodes:
            raise self._limit(f"the file has more than {self.limits.max_nodes:,} YAML nodes "
                              f"(the limit of '--limits {self.limits.name}')", loc)
        if self.expanded > self.limits.max_alias_nodes:
            raise self._limit(f"aliases expand to more than {self.limits.max_alias_nodes:,} "
                              f"nodes (the limit of '--limits {self.limits.name}')", loc)
        if len(self.stack) + height > self.limits.max_depth:
            raise self._stop("too-deep", f"lists and mappings nest more than "
                             f"{self.limits.max_depth} deep (aliases expanded)", loc,
                             "a layout nests a few levels; check the brackets and indentation")

    def _attach(self, value: Any, loc: Location, path: Path | None, height: int) -> None:
        if not self.stack:
            self.root = value
            return
        top = self.stack[-1]
        top.height = max(top.height, height + 1)
        if not top.mapping:
            top.items.append(value)
            return
        if top.pending is None:  # a key
            self._key(top, value, loc)
            return
        if top.pending is _MERGE:
            self._merge(top, value, path, loc)
        elif top.pending is not _SKIP and top.path is not None:
            top.data[top.pending] = value
        top.pending = None

    def _key(self, top: _Frame, value: Any, loc: Location) -> None:
        if isinstance(value, (dict, list)):
            self.problems.append(Diagnostic(
                "error", "bad-key", "a key must be a name, not a list or a mapping", loc,
                "write 'name: value'"))
            top.pending = _SKIP
            return
        if value is _MERGE:
            top.pending = _MERGE
            return
        key_text = str(value)
        if top.path is None:
            top.pending = key_text
            return
        sub = (*top.path, key_text)
        if key_text in top.data:
            first = self.positions.keys[sub].line
            self.problems.append(Diagnostic(
                "error", "duplicate-key",
                f"key {excerpt(key_text)} appears twice in the same mapping", loc,
                f"the first is at line {first}; keep one of them"))
            top.pending = _SKIP
            return
        self.positions.keys[sub] = loc
        top.pending = key_text

    def _merge(self, top: _Frame, value: Any, path: Path | None, loc: Location) -> None:
        sources = value if isinstance(value, list) else [value]
        if not sources or not all(isinstance(s, dict) for s in sources):
            self.problems.append(Diagnostic(
                "error", "bad-merge", "a merge key '<<' needs a mapping or a list of mappings",
                loc, "write '<<: *name' with an anchored mapping '&name {...}'"))
            return
        if isinstance(value, list):
            top.merges.extend((s, None if path is None else (*path, i))
                              for i, s in enumerate(sources))
        else:
            top.merges.append((value, path))

    def _close_mapping(self, frame: _Frame) -> dict[str, Any]:
        if not frame.merges:
            return frame.data
        merged: dict[str, Any] = {}
        for source, source_path in frame.merges:  # earlier sources win (YAML merge)
            for key, value in source.items():
                if key in merged or key in frame.data:
                    continue
                merged[key] = value
                if frame.path is not None and source_path is not None:
                    self.positions.links[(*frame.path, key)] = (*source_path, key)
        merged.update(frame.data)
        return merged

    # -- events --------------------------------------------------------------
    def scalar(self, event: Any) -> None:
        loc = self._loc(event.start_mark)
        self._count(loc)
        path, _ = self._slot(loc)
        top = self.stack[-1] if self.stack else None
        is_key = top is not None and top.mapping and top.pending is None
        value = self._construct(event, loc, is_key)
        if path is not None:
            self.positions.values[path] = loc
        if event.anchor:
            self._anchor(event.anchor, value, path, 1, 0, loc)
        self._attach(value, loc, path, 0)

    def _construct(self, event: Any, loc: Location, is_key: bool) -> Any:
        value: str = event.value
        tag = event.tag
        if tag is None or tag == "!":
            if not event.implicit[0]:
                return value  # quoted: a string
            tag = _RESOLVER.resolve(yaml.ScalarNode, value, event.implicit)  # type: ignore[no-untyped-call]
            if tag == _T + "merge" and is_key:
                return _MERGE
            if tag not in _SCALAR_TAGS and tag != _T + "timestamp":
                return value
        elif tag not in _SCALAR_TAGS:
            self._bad_tag(tag, loc)
            return None
        if tag == _T + "str":
            return value
        if tag in _NUMBER_TAGS and len(value) > MAX_NUMBER_CHARS:
            self.problems.append(Diagnostic(
                "error", "bad-number", f"the number {excerpt(value)} has {len(value):,} "
                f"characters; a number may have at most {MAX_NUMBER_CHARS}", loc,
                "write it with an exponent, e.g. 1.5e9"))
            return None
        node = yaml.ScalarNode(tag, value, event.start_mark, event.end_mark, event.style)
        try:
            return _CONSTRUCTOR.yaml_constructors[tag](_CONSTRUCTOR, node)
        except Exception:  # a value that does not fit its tag (e.g. '!!int abc')
            self.problems.append(Diagnostic(
                "error", "bad-value", f"{excerpt(value)} is not a valid {tag.rsplit(':', 1)[-1]}",
                loc, "remove the tag or correct the value"))
            return None

    def _bad_tag(self, tag: str, loc: Location) -> None:
        if tag.startswith(_T):
            tag = "!!" + tag[len(_T):]
        self.problems.append(Diagnostic(
            "error", "bad-tag", f"the tag {excerpt(tag)} is not accepted", loc,
            "remove it; values are plain text, numbers, lists and mappings"))

    def alias(self, event: Any) -> None:
        loc = self._loc(event.start_mark)
        name = event.anchor
        if any(f.anchor == name for f in self.stack):
            raise self._stop("recursive-alias", f"the alias *{excerpt(name, quote=False)} "
                             "refers to a list or mapping that contains it", loc,
                             "an alias may only repeat a node that is complete")
        anchor = self.anchors.get(name)
        if anchor is None:
            raise self._stop("unknown-alias", f"the alias *{excerpt(name, quote=False)} has "
                             "no anchor before it", loc,
                             f"define '&{excerpt(name, quote=False)}' on an earlier node")
        self._count(loc, anchor.size - 1, anchor.height)
        path, _ = self._slot(loc)
        if path is not None:
            if anchor.path is not None:
                self.positions.links[path] = anchor.path
            else:
                self.positions.values[path] = loc
        self._attach(anchor.value, loc, path, anchor.height)

    def _anchor(self, name: str, value: Any, path: Path | None, size: int, height: int,
                loc: Location) -> None:
        if name in self.anchors:
            self.problems.append(Diagnostic(
                "error", "duplicate-anchor", f"the anchor &{excerpt(name, quote=False)} is "
                "defined twice", loc, "give each anchor its own name"))
        self.anchors[name] = _Anchor(value, path, size, height)

    def start(self, event: Any, mapping: bool) -> None:
        loc = self._loc(event.start_mark)
        self._count(loc, 0, 1)
        path, _ = self._slot(loc)
        if event.tag is not None and event.tag != "!" and event.tag not in _COLLECTION_TAGS:
            self._bad_tag(event.tag, loc)
        if path is not None:
            self.positions.values[path] = loc
        self.stack.append(_Frame(mapping, path, loc, event.anchor, self.nodes - 1))

    def end(self) -> None:
        frame = self.stack.pop()
        value: Any = self._close_mapping(frame) if frame.mapping else frame.items
        if frame.anchor:
            self._anchor(frame.anchor, value, frame.path, self.nodes - frame.nodes_before,
                         frame.height, frame.loc)
        self._attach(value, frame.loc, frame.path, frame.height)


def measure_events(events: Any, file: str, limits: Limits) -> None:
    """Count nodes, alias expansions and depth; raise at the first limit passed.

    This pass keeps no data, so a file past a limit is refused quickly and in
    little memory, before anything is built.

    Raises
    ------
    LayoutError
        On a limit reached, or a recursive or unknown alias, located.
    yaml.YAMLError
        On a syntax error (the caller locates it).

    Examples
    --------
    >>> from beamplan.layout.limits import Limits
    >>> measure_events(yaml.parse("a: [1, [2]]"), "a.yaml", Limits(max_depth=1))
    Traceback (most recent call last):
    ...
    beamplan.errors.LayoutError: a.yaml:1:4: error: lists and mappings nest more than 1 \
deep (aliases expanded); a layout nests a few levels; check the brackets and indentation
    """
    sizes: dict[str, tuple[int, int]] = {}  # anchor -> (nodes, height)
    stack: list[list[Any]] = []  # [anchor, nodes before, height]
    written = nodes = expanded = 0
    max_nodes, max_alias, max_depth = (limits.max_nodes, limits.max_alias_nodes,
                                       limits.max_depth)
    scalar, alias = yaml.ScalarEvent, yaml.AliasEvent
    starts = (yaml.MappingStartEvent, yaml.SequenceStartEvent)
    ends = (yaml.MappingEndEvent, yaml.SequenceEndEvent)
    for event in events:
        kind = type(event)
        if kind is scalar or kind is alias:
            size = 1
            height = 0
            if kind is alias:
                found = sizes.get(event.anchor)
                if found is None:  # unknown or recursive: the builder says which
                    b = _Builder(file, limits)
                    b.stack = [_Frame(False, None, b._loc(None), entry[0], 0)
                               for entry in stack]
                    b.alias(event)
                    continue  # pragma: no cover - b.alias raised
                size, height = found
                expanded += size - 1
            elif event.anchor:
                sizes[event.anchor] = (1, 0)
            written += 1
            nodes += size
            if stack and stack[-1][2] <= height:
                stack[-1][2] = height + 1
        elif kind in starts:
            written += 1
            nodes += 1
            stack.append([event.anchor, nodes - 1, 1])
            height = 0
        elif kind in ends:
            anchor, before, height = stack.pop()
            if anchor:
                sizes[anchor] = (nodes - before, height)
            if stack and stack[-1][2] <= height:
                stack[-1][2] = height + 1
            continue
        else:
            continue
        if written > max_nodes or expanded > max_alias or len(stack) + height > max_depth:
            b = _Builder(file, limits)
            b.written, b.expanded = written, expanded
            b.stack = [_Frame(False, None, b._loc(None), None, 0)] * (len(stack) + height)
            b._check(b._loc(event.start_mark))


def build_events(events: Any, file: str, limits: Limits) -> tuple[Any, Positions]:
    """Build data and positions from a stream of PyYAML parser events.

    Raises
    ------
    LayoutError
        On a limit reached, a recursive or unknown alias, a refused tag, a
        duplicate key, or a second document, located.
    yaml.YAMLError
        On a syntax error (the caller locates it).

    Examples
    --------
    >>> from beamplan.layout.limits import STANDARD
    >>> data, where = build_events(yaml.parse("b: &b {x: 1}\\nc: {<<: *b, y: 2}"), "a.yaml",
    ...                            STANDARD)
    >>> data["c"], str(where.value(("c", "x")))
    ({'x': 1, 'y': 2}, 'a.yaml:1:11')
    """
    b = _Builder(file, limits)
    for event in events:
        kind = type(event)
        if kind is yaml.ScalarEvent:
            b.scalar(event)
        elif kind is yaml.MappingStartEvent or kind is yaml.SequenceStartEvent:
            b.start(event, kind is yaml.MappingStartEvent)
        elif kind is yaml.MappingEndEvent or kind is yaml.SequenceEndEvent:
            b.end()
        elif kind is yaml.AliasEvent:
            b.alias(event)
        elif kind is yaml.DocumentStartEvent:
            b.documents += 1
            if b.documents > 1:
                raise b._stop("yaml-syntax", "the file holds more than one YAML document",
                              b._loc(event.start_mark), "remove the '---' line and what "
                              "follows, or put it in its own file")
    if b.problems:
        raise LayoutError(b.problems)
    return b.root, b.positions
