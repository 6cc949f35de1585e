"""Read YAML while keeping the position of every key and value.

PyYAML's parser gives events with marks; :mod:`beamplan.layout.yamlbuild`
turns them into plain Python data and a :class:`Positions` map from paths
(tuples of keys and list indices) to 1-based file locations, so that later
checks can point at the exact spot of a mistake. The file is refused, located,
when it goes past the limits of :mod:`beamplan.layout.limits`.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

import yaml

from beamplan.errors import Diagnostic, LayoutError, Location, excerpt
from beamplan.layout.limits import STANDARD, Limits
from beamplan.layout.positions import Path, Positions
from beamplan.layout.yamlbuild import build_events, measure_events

__all__ = ["Limits", "Path", "Positions", "YamlDocument", "load_yaml", "parse_yaml"]

try:  # the C parser is much faster; fall back to pure Python where it is absent
    _Loader: Any = yaml.CSafeLoader
except AttributeError:  # pragma: no cover - depends on how PyYAML was built
    _Loader = yaml.SafeLoader


@dataclass(frozen=True)
class YamlDocument:
    """A parsed YAML document: its data, positions and the text it came from."""

    data: Any
    positions: Positions
    text: str


def _events(text: str) -> Iterator[Any]:
    loader = _Loader(text)
    try:
        while loader.check_event():
            yield loader.get_event()
    finally:
        loader.dispose()


def _line_column(text: str, position: int, file: str) -> Location:
    before = text[:max(0, position)]
    line = before.count("\n") + 1
    return Location(file, line, position - (before.rfind("\n") + 1) + 1)


def _syntax_error(exc: yaml.YAMLError, text: str, file: str) -> LayoutError:
    if isinstance(exc, yaml.MarkedYAMLError):
        mark = exc.problem_mark or exc.context_mark
        loc = (Location(file, mark.line + 1, mark.column + 1) if mark is not None
               else Location(file, 1, 1))
        what = exc.problem or exc.context or "syntax error"
        if exc.context and exc.problem:
            what = f"{exc.problem} ({exc.context})"
        return LayoutError([Diagnostic("error", "yaml-syntax", f"YAML syntax: {what}", loc,
                                       "check indentation, colons and brackets here")])
    if isinstance(exc, yaml.reader.ReaderError):
        char = chr(exc.character) if isinstance(exc.character, int) else str(exc.character)
        return LayoutError([Diagnostic(
            "error", "yaml-syntax", f"the character {excerpt(char)} is not allowed in YAML",
            _line_column(text, exc.position, file), "remove it, or write it as an escape "
            "inside a double-quoted string")])
    first = str(exc).splitlines()[0] if str(exc) else "syntax error"
    return LayoutError([Diagnostic("error", "yaml-syntax", f"YAML: {first}",
                                   Location(file, 1, 1))])


def parse_yaml(text: str, file: str, limits: Limits = STANDARD) -> YamlDocument:
    """Parse YAML text into data and positions, within ``limits``.

    Parameters
    ----------
    text
        The YAML source.
    file
        The name shown in locations.
    limits
        Size, node, alias and depth limits (:mod:`beamplan.layout.limits`).

    Returns
    -------
    YamlDocument

    Raises
    ------
    LayoutError
        On a syntax error, a duplicate key, a refused tag or a limit reached,
        located.

    Examples
    --------
    >>> doc = parse_yaml("elements:\\n  m1: {reflectivity: 0.9}\\n", "a.yaml")
    >>> doc.data["elements"]["m1"]["reflectivity"]
    0.9
    >>> str(doc.positions.key(("elements", "m1", "reflectivity")))
    'a.yaml:2:8'
    >>> parse_yaml("a: &a [*a]", "r.yaml")
    Traceback (most recent call last):
    ...
    beamplan.errors.LayoutError: r.yaml:1:8: error: the alias *a refers to a list or mapping \
that contains it; an alias may only repeat a node that is complete
    """
    if len(text) > limits.max_bytes:
        raise _too_big(file, len(text), limits)
    try:
        measure_events(_events(text), file, limits)
        data, positions = build_events(_events(text), file, limits)
    except yaml.YAMLError as exc:
        raise _syntax_error(exc, text, file) from None
    return YamlDocument({} if data is None else data, positions, text)


def _too_big(file: str, size: int, limits: Limits) -> LayoutError:
    return LayoutError([Diagnostic(
        "error", "too-large", f"the file is larger than {limits.max_bytes:,} bytes (the limit "
        f"of '--limits {limits.name}')", Location(file, 1, 1), limits.advice)])


def load_yaml(path: str, limits: Limits = STANDARD) -> YamlDocument:
    """Read and parse a YAML file; an unreadable or too large file is a located error.

    Examples
    --------
    >>> load_yaml("/no/such/file.yaml")
    Traceback (most recent call last):
    ...
    beamplan.errors.LayoutError: /no/such/file.yaml:1:1: error: cannot read the file: ...
    """
    try:
        with open(path, "rb") as handle:
            raw = handle.read(limits.max_bytes + 1)
        if len(raw) > limits.max_bytes:
            raise _too_big(path, len(raw), limits)
        text = raw.decode("utf-8").replace("\r\n", "\n").replace("\r", "\n")
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        raise LayoutError([Diagnostic("error", "unreadable", f"cannot read the file: {reason}",
                                      Location(path, 1, 1))]) from exc
    return parse_yaml(text, path, limits)
