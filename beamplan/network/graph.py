"""The network built from a layout: nodes, links, and fast lookups.

:func:`build_network` runs the graph checks of :mod:`beamplan.network.checks`
and returns a frozen :class:`Network` ready for the optimiser.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

from beamplan.errors import Diagnostic, LayoutError, Location
from beamplan.layout.model import Layout
from beamplan.network.behaviour import Behaviour, Node, element_node, scanner_node, source_node

__all__ = ["Link", "Network", "build_network"]

_NOWHERE = Location("<layout>", 1, 1)


@dataclass(frozen=True)
class Link:
    """A link from ``tail`` (output ``port``) to ``head``; ``index`` is its position."""

    index: int
    tail: str
    head: str
    port: str | None = None
    location: Location = _NOWHERE

    @property
    def label(self) -> str:
        """The link as written in a beamline, e.g. ``t1.pick -> a1``."""
        tail = f"{self.tail}.{self.port}" if self.port else self.tail
        return f"{tail} -> {self.head}"


@dataclass(frozen=True)
class Network:
    """A checked, acyclic beam-transport network.

    Attributes
    ----------
    nodes
        Every node in topological order (each after all that feed it).
    links
        Every link; ``links[i].index == i``.
    """

    name: str
    file: str
    wavelength_m: float
    nodes: tuple[Node, ...]
    links: tuple[Link, ...]
    sha256: str = ""
    warnings: tuple[Diagnostic, ...] = field(default=(), compare=False)

    @functools.cached_property
    def node(self) -> dict[str, Node]:
        """Nodes by id."""
        return {n.id: n for n in self.nodes}

    @functools.cached_property
    def in_links(self) -> dict[str, tuple[Link, ...]]:
        """Incoming links of each node."""
        table: dict[str, list[Link]] = {n.id: [] for n in self.nodes}
        for link in self.links:
            table[link.head].append(link)
        return {k: tuple(v) for k, v in table.items()}

    @functools.cached_property
    def out_link(self) -> dict[tuple[str, str | None], Link]:
        """The link leaving each (node, port)."""
        return {(link.tail, link.port): link for link in self.links}

    @property
    def sources(self) -> tuple[Node, ...]:
        """The sources, in layout order."""
        return tuple(n for n in self.nodes if n.is_source)

    @property
    def scanners(self) -> tuple[Node, ...]:
        """The scanners, in layout order."""
        return tuple(n for n in self.nodes if n.is_scanner)

    @property
    def elements(self) -> tuple[Node, ...]:
        """The elements (neither sources nor scanners), in topological order."""
        return tuple(n for n in self.nodes if not (n.is_source or n.is_scanner))

    def path_gain(self, scanner_id: str) -> float:
        """Best product of gains from any source to a scanner (adjustables at their max).

        Examples
        --------
        >>> from beamplan.layout.loader import load_layout
        >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
        >>> 0.0 < net.path_gain(net.scanners[0].id) < 1.0
        True
        """
        return self.max_gains[scanner_id]

    @functools.cached_property
    def max_gains(self) -> dict[str, float]:
        """For every node, the best gain from any source to its input."""
        best: dict[str, float] = {}
        for node in self.nodes:
            if node.is_source:
                best[node.id] = 1.0
                continue
            gains = [best[link.tail] * self.port_gain_max(link) for link in self.in_links[node.id]]
            best[node.id] = max(gains, default=0.0)
        return best

    def port_gain_max(self, link: Link) -> float:
        """The largest fraction of the tail's input that can leave by ``link``."""
        tail = self.node[link.tail]
        if tail.behaviour is Behaviour.SPLIT:
            port = next(p for p in tail.ports if p.name == link.port)
            return port.efficiency * port.fraction_max
        if tail.is_source:
            return 1.0
        return tail.gain_max


def build_network(layout: Layout) -> Network:
    """Build and check the network of a layout.

    Raises
    ------
    LayoutError
        With every graph problem found (fan-in, cycles, reachability, ...),
        together with the layout's warnings.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> [s.id for s in net.sources]
    ['halo-fel']
    """
    from beamplan.network.checks import check_graph, heat_limit_warnings

    nodes = {s.id: source_node(s) for s in layout.sources}
    nodes.update({e.id: element_node(e) for e in layout.elements})
    nodes.update({s.id: scanner_node(s) for s in layout.scanners})
    links = tuple(Link(i, spec.tail, spec.head, spec.port, spec.head_location)
                  for i, spec in enumerate(layout.links))
    problems, order = check_graph(layout, nodes, links)
    if any(p.is_error for p in problems):
        raise LayoutError([*layout.warnings, *problems])
    network = Network(layout.name, layout.file, layout.wavelength_m,
                      tuple(nodes[i] for i in order), links, layout.sha256)
    warnings = (*layout.warnings, *problems, *heat_limit_warnings(network))
    return Network(network.name, network.file, network.wavelength_m, network.nodes,
                   network.links, network.sha256, tuple(warnings))
