"""The network built from a layout: nodes, links, and fast lookups.

:func:`build_network` runs the graph checks of :mod:`beamplan.network.checks`
and returns a frozen :class:`Network` ready for the optimiser.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field, replace

from beamplan.errors import Diagnostic, LayoutError, Location
from beamplan.layout.model import DriftSpec, ElementSpec, Layout, MirrorSpec, SourceSpec
from beamplan.network.behaviour import (
    Behaviour,
    Node,
    Optics,
    element_node,
    scanner_node,
    source_node,
)

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
    tail_location: Location = _NOWHERE

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

    @functools.cached_property
    def sources(self) -> tuple[Node, ...]:
        """The sources, in layout order."""
        return tuple(n for n in self.nodes if n.is_source)

    @functools.cached_property
    def scanners(self) -> tuple[Node, ...]:
        """The scanners, in layout order."""
        return tuple(n for n in self.nodes if n.is_scanner)

    @functools.cached_property
    def elements(self) -> tuple[Node, ...]:
        """The elements (neither sources nor scanners), in topological order."""
        return tuple(n for n in self.nodes if not (n.is_source or n.is_scanner))

    @functools.cached_property
    def standby_sources(self) -> frozenset[str]:
        """Sources from which no power can reach any scanner (a switch selects another)."""
        carry: dict[str, list[str]] = {}
        for link in self.links:
            head = self.node[link.head]
            blocked = head.behaviour is Behaviour.COMBINE and head.select not in (None,
                                                                                 link.tail)
            if not blocked and self.port_gain_max(link) > 0.0:
                carry.setdefault(link.tail, []).append(link.head)
        standby = set()
        for source in self.sources:
            seen, stack = {source.id}, [source.id]
            while stack:
                for nxt in carry.get(stack.pop(), ()):
                    if nxt not in seen:
                        seen.add(nxt)
                        stack.append(nxt)
            if not any(self.node[n].is_scanner for n in seen):
                standby.add(source.id)
        return frozenset(standby)

    def with_nodes(self, changed: dict[str, Node]) -> Network:
        """The same network with some nodes replaced (same ids, same links).

        The link tables are shared with this network, so this is cheap.
        """
        nodes = tuple(changed.get(n.id, n) for n in self.nodes)
        other = replace(self, nodes=nodes)
        for name in ("in_links", "out_link"):
            other.__dict__[name] = getattr(self, name)
        other.__dict__["node"] = {**self.node, **changed}
        for name in ("sources", "scanners", "elements"):
            other.__dict__[name] = tuple(changed.get(n.id, n) for n in getattr(self, name))
        return other

    def upstream(self, node_id: str) -> set[str]:
        """Every node from which power can flow into ``node_id`` (not the node itself).

        Examples
        --------
        >>> from beamplan.layout.loader import load_layout
        >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
        >>> net.sources[0].id in net.upstream(net.scanners[0].id)
        True
        """
        seen: set[str] = set()
        stack = [node_id]
        while stack:
            for link in self.in_links[stack.pop()]:
                if link.tail not in seen:
                    seen.add(link.tail)
                    stack.append(link.tail)
        return seen

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


def _feeding_source(layout: Layout) -> dict[str, SourceSpec]:
    """The first source (in layout order) whose beam reaches each node."""
    following: dict[str, list[str]] = {}
    for link in layout.links:
        following.setdefault(link.tail, []).append(link.head)
    first: dict[str, SourceSpec] = {}
    for source in layout.sources:
        stack = [source.id]
        while stack:
            current = stack.pop()
            for head in following.get(current, []):
                if head not in first:
                    first[head] = source
                    stack.append(head)
    return first


def _s_polarisation(spec: ElementSpec, source: SourceSpec | None) -> float:
    if source is None or not isinstance(spec, MirrorSpec) or source.polarisation_degree == 0:
        return 0.0
    from beamplan.physics.optics import s_polarisation

    return float(s_polarisation(source.polarisation_degree, source.polarisation_angle_rad,
                                spec.plane_rad))


def _nodes(layout: Layout) -> tuple[dict[str, Node], list[Diagnostic]]:
    """Every node with its physics; a node whose physics fails is reported, kept neutral."""
    errors: list[Diagnostic] = []
    nodes: dict[str, Node] = {}
    feeding = _feeding_source(layout)
    wavelength = layout.wavelength_m

    def failed(what: str, item_id: str, exc: Exception, location: Location) -> None:
        errors.append(Diagnostic("error", "physics", f"{what} '{item_id}': {exc}", location,
                                 "check its physical settings"))

    for s in layout.sources:
        try:
            nodes[s.id] = source_node(s, wavelength)
        except ValueError as exc:
            failed("source", s.id, exc, s.location)
            nodes[s.id] = source_node(replace(s, undulator=None), wavelength)
    for e in layout.elements:
        optics = Optics(wavelength, _s_polarisation(e, feeding.get(e.id)))
        try:
            nodes[e.id] = element_node(e, optics)
        except ValueError as exc:
            failed(e.kind, e.id, exc, e.location)
            neutral = replace(e, reflectivity=1.0) if isinstance(e, MirrorSpec) else \
                replace(e, transmission=1.0) if isinstance(e, DriftSpec) else e
            nodes[e.id] = element_node(neutral, optics)
    for sc in layout.scanners:
        try:
            nodes[sc.id] = scanner_node(sc, wavelength)
        except ValueError as exc:
            failed("scanner", sc.id, exc, sc.location)
            nodes[sc.id] = scanner_node(replace(sc, need_w=1.0, demand=None), wavelength)
    return nodes, errors


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
    from beamplan.network.offpeak import multilayer_warnings

    nodes, physics_errors = _nodes(layout)
    links = tuple(Link(i, spec.tail, spec.head, spec.port, spec.head_location,
                       spec.tail_location) for i, spec in enumerate(layout.links))
    problems, order = check_graph(layout, nodes, links)
    problems = [*physics_errors, *problems]
    if any(p.is_error for p in problems):
        raise LayoutError([*layout.warnings, *problems])
    network = Network(layout.name, layout.file, layout.wavelength_m,
                      tuple(nodes[i] for i in order), links, layout.sha256)
    warnings = (*layout.warnings, *problems, *heat_limit_warnings(network),
                *multilayer_warnings(layout))
    return Network(network.name, network.file, network.wavelength_m, network.nodes,
                   network.links, network.sha256, tuple(warnings))
