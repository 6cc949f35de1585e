"""Limits on what one input file may ask of the YAML reader.

A hand-written layout or case file is small; a file that is not (a huge
file, an alias "bomb", nesting thousands deep) is refused with a located
error before it can use much time or memory. ``--limits large`` raises the
limits for a real large campus (docs/layout-format.md, "Limits").
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["LIMITS", "MAX_NUMBER_CHARS", "STANDARD", "Limits"]

MAX_NUMBER_CHARS = 64  # a number written with more characters is refused


@dataclass(frozen=True)
class Limits:
    """The most one input file may hold.

    Attributes
    ----------
    name
        The preset's name, as given to ``--limits``.
    max_bytes
        File size.
    max_nodes
        YAML nodes as written (every scalar, list, mapping and alias).
    max_alias_nodes
        Nodes reached through aliases, counted expanded: an alias of a
        mapping of 10 nodes counts 10.
    max_depth
        Nesting depth of lists and mappings (aliases expanded).

    Examples
    --------
    >>> LIMITS["large"].max_nodes > STANDARD.max_nodes
    True
    """

    name: str = "standard"
    max_bytes: int = 8 * 1024 * 1024
    max_nodes: int = 300_000
    max_alias_nodes: int = 100_000
    max_depth: int = 64

    @property
    def advice(self) -> str:
        """What to do when a real file reaches a limit."""
        if self.name == "large":
            return "split the file, or check it for a mistake"
        return "for a real large campus, run with '--limits large'"


STANDARD = Limits()
LIMITS: dict[str, Limits] = {
    "standard": STANDARD,
    "large": Limits("large", 128 * 1024 * 1024, 5_000_000, 2_000_000, 64),
}
