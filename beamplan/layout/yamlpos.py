"""Read YAML while keeping the position of every key and value.

PyYAML's composer gives nodes with marks; this module turns them into plain
Python data and a :class:`Positions` map from paths (tuples of keys and list
indices) to 1-based file locations, so that later checks can point at the
exact spot of a mistake.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import yaml

from beamplan.errors import Diagnostic, LayoutError, Location

__all__ = ["Path", "Positions", "YamlDocument", "load_yaml", "parse_yaml"]

Path = tuple[str | int, ...]

try:  # the C loader is much faster; fall back to pure Python where it is absent
    _Loader: Any = yaml.CSafeLoader
except AttributeError:  # pragma: no cover - depends on how PyYAML was built
    _Loader = yaml.SafeLoader


@dataclass
class Positions:
    """Where each path of a document starts: its key and its value."""

    file: str
    keys: dict[Path, Location] = field(default_factory=dict)
    values: dict[Path, Location] = field(default_factory=dict)

    def key(self, path: Path) -> Location:
        """The location of the key at ``path`` (or the nearest enclosing one)."""
        return self._nearest(self.keys, path) or self.value(path)

    def value(self, path: Path) -> Location:
        """The location of the value at ``path`` (or the nearest enclosing one)."""
        return self._nearest(self.values, path) or Location(self.file, 1, 1)

    @staticmethod
    def _nearest(table: dict[Path, Location], path: Path) -> Location | None:
        for cut in range(len(path), -1, -1):
            loc = table.get(path[:cut])
            if loc is not None:
                return loc
        return None


@dataclass(frozen=True)
class YamlDocument:
    """A parsed YAML document: its data, positions and the text it came from."""

    data: Any
    positions: Positions
    text: str


def _loc(file: str, mark: Any) -> Location:
    return Location(file, mark.line + 1, mark.column + 1)


class _Builder:
    def __init__(self, file: str) -> None:
        self.file = file
        self.positions = Positions(file)
        self.problems: list[Diagnostic] = []
        self.constructor = yaml.constructor.SafeConstructor()

    def build(self, node: yaml.Node, path: Path) -> Any:
        self.positions.values[path] = _loc(self.file, node.start_mark)
        if isinstance(node, yaml.MappingNode):
            self.constructor.flatten_mapping(node)  # resolve '<<' merge keys
            out: dict[str, Any] = {}
            for key_node, value_node in node.value:
                key = self.constructor.construct_object(key_node, deep=True)
                key_text = str(key)
                sub = (*path, key_text)
                if key_text in out:
                    self.problems.append(Diagnostic(
                        "error", "duplicate-key",
                        f"key {key_text!r} appears twice in the same mapping",
                        _loc(self.file, key_node.start_mark),
                        f"the first is at line {self.positions.keys[sub].line}; "
                        "keep one of them"))
                    continue
                self.positions.keys[sub] = _loc(self.file, key_node.start_mark)
                out[key_text] = self.build(value_node, sub)
            return out
        if isinstance(node, yaml.SequenceNode):
            return [self.build(item, (*path, i)) for i, item in enumerate(node.value)]
        return self.constructor.construct_object(node, deep=True)


def parse_yaml(text: str, file: str) -> YamlDocument:
    """Parse YAML text into data and positions.

    Parameters
    ----------
    text
        The YAML source.
    file
        The name shown in locations.

    Returns
    -------
    YamlDocument

    Raises
    ------
    LayoutError
        On a syntax error or a duplicate key, located.

    Examples
    --------
    >>> doc = parse_yaml("elements:\\n  m1: {reflectivity: 0.9}\\n", "a.yaml")
    >>> doc.data["elements"]["m1"]["reflectivity"]
    0.9
    >>> str(doc.positions.key(("elements", "m1", "reflectivity")))
    'a.yaml:2:8'
    """
    try:
        node = yaml.compose(text, Loader=_Loader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        loc = _loc(file, mark) if mark is not None else Location(file, 1, 1)
        what = exc.problem or exc.context or "syntax error"
        raise LayoutError([Diagnostic("error", "yaml-syntax", f"YAML syntax: {what}", loc,
                                      "check indentation, colons and brackets here")]) from exc
    except yaml.YAMLError as exc:
        raise LayoutError([Diagnostic("error", "yaml-syntax", f"YAML: {exc}",
                                      Location(file, 1, 1))]) from exc
    builder = _Builder(file)
    if node is None:
        return YamlDocument({}, builder.positions, text)
    try:
        data = builder.build(node, ())
    except yaml.constructor.ConstructorError as exc:
        mark = exc.problem_mark
        loc = _loc(file, mark) if mark is not None else Location(file, 1, 1)
        raise LayoutError([Diagnostic("error", "yaml-syntax", f"YAML: {exc.problem}",
                                      loc)]) from exc
    if builder.problems:
        raise LayoutError(builder.problems)
    return YamlDocument(data, builder.positions, text)


def load_yaml(path: str) -> YamlDocument:
    """Read and parse a YAML file; an unreadable file is a located error.

    Examples
    --------
    >>> load_yaml("/no/such/file.yaml")
    Traceback (most recent call last):
    ...
    beamplan.errors.LayoutError: /no/such/file.yaml:1:1: error: cannot read the file: ...
    """
    try:
        with open(path, encoding="utf-8") as handle:
            text = handle.read()
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        raise LayoutError([Diagnostic("error", "unreadable", f"cannot read the file: {reason}",
                                      Location(path, 1, 1))]) from exc
    return parse_yaml(text, path)
