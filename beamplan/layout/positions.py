"""Where each part of a YAML document was written: paths to 1-based locations.

A path is a tuple of keys and list indices. A node repeated by an alias, or
keys merged with ``<<``, are not copied: a link sends their paths to the
node as written, so a mistake inside it is located where it was typed.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from beamplan.errors import Location

__all__ = ["Path", "Positions"]

Path = tuple[str | int, ...]


@dataclass
class Positions:
    """Where each path of a document starts: its key and its value.

    Examples
    --------
    >>> p = Positions("a.yaml")
    >>> p.values[("base",)] = Location("a.yaml", 2, 7)
    >>> p.values[("base", "x")] = Location("a.yaml", 2, 11)
    >>> p.links[("copy",)] = ("base",)
    >>> str(p.value(("copy", "x")))
    'a.yaml:2:11'
    """

    file: str
    keys: dict[Path, Location] = field(default_factory=dict)
    values: dict[Path, Location] = field(default_factory=dict)
    links: dict[Path, Path] = field(default_factory=dict)

    def key(self, path: Path) -> Location:
        """The location of the key at ``path`` (or the nearest enclosing one)."""
        return self._nearest(self.keys, path, 0) or self.value(path)

    def value(self, path: Path) -> Location:
        """The location of the value at ``path`` (or the nearest enclosing one)."""
        return self._nearest(self.values, path, 0) or Location(self.file, 1, 1)

    def _nearest(self, table: dict[Path, Location], path: Path, hops: int) -> Location | None:
        for cut in range(len(path), -1, -1):
            head = path[:cut]
            loc = table.get(head)
            if loc is not None:
                return loc
            target = self.links.get(head)
            if target is not None and hops < 64:  # links point back to earlier text
                return self._nearest(table, target + path[cut:], hops + 1)
        return None
