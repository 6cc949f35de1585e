"""Graph checks of a layout's beamlines, with networkx.

Fan-in of single-input kinds, more than one link from one output, cycles,
reachability from the sources, unconnected splitter outputs, chains that
end nowhere, and the warning for heat limits that can never bind.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Protocol, TypeVar

import networkx as nx

from beamplan.errors import Diagnostic, Location
from beamplan.layout.model import Layout
from beamplan.network.behaviour import Behaviour, Node


# The checks run while graph.py builds its Network, so they see the link and
# the network through these structural types, not by importing graph.py.
class Link(Protocol):
    """What the checks read of a :class:`beamplan.network.graph.Link`."""

    @property
    def index(self) -> int: ...
    @property
    def tail(self) -> str: ...
    @property
    def head(self) -> str: ...
    @property
    def port(self) -> str | None: ...
    @property
    def location(self) -> Location: ...
    @property
    def tail_location(self) -> Location: ...
    @property
    def label(self) -> str: ...


L = TypeVar("L", bound=Link)


class Network(Protocol[L]):
    """What the heat-limit check reads of a :class:`beamplan.network.graph.Network`."""

    @property
    def nodes(self) -> Sequence[Node]: ...
    @property
    def in_links(self) -> Mapping[str, Sequence[L]]: ...

    def port_gain_max(self, link: L, /) -> float: ...

__all__ = ["check_graph", "heat_limit_warnings"]


def _err(code: str, message: str, where: Node | Link, hint: str = "") -> Diagnostic:
    return Diagnostic("error", code, message, where.location, hint)


def _noun(node: Node) -> str:
    return "source" if node.is_source else "scanner" if node.is_scanner else f"{node.kind}"


def check_graph(layout: Layout, nodes: dict[str, Node], links: tuple[Link, ...]
                ) -> tuple[list[Diagnostic], list[str]]:
    """Check the graph; return the problems and a topological order of the ids.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> len(net.warnings) >= 0
    True
    """
    out: list[Diagnostic] = []
    graph = nx.MultiDiGraph()
    graph.add_nodes_from(nodes)
    seen_port: dict[tuple[str, str | None], Link] = {}
    fan_in: dict[str, list[Link]] = {}
    for link in links:
        tail, head = nodes[link.tail], nodes[link.head]
        graph.add_edge(link.tail, link.head, key=link.index)
        if head.is_source:
            out.append(_err("into-source", f"link {link.label}: a source cannot receive a beam",
                            link, "reverse the chain: it starts at the source"))
        if not tail.ports:
            out.append(_err("out-of-sink", f"link {link.label}: {_noun(tail)} '{tail.id}' has "
                            "no output", link, "a beamline ends at a scanner or a dump"))
        previous = seen_port.get((link.tail, link.port))
        if previous is not None and tail.ports:
            name = f"{link.tail}.{link.port}" if link.port else link.tail
            hint = ("put a splitter here to share the beam" if tail.behaviour
                    is not Behaviour.SPLIT else "connect each output once")
            out.append(Diagnostic("error", "output-reused", f"link {link.label}: the output of "
                                  f"'{name}' already feeds '{previous.head}'",
                                  link.tail_location, hint))
        seen_port[(link.tail, link.port)] = link
        fan_in.setdefault(link.head, []).append(link)
    for head_id, feeding in fan_in.items():
        fed = nodes[head_id]
        if len(feeding) > 1 and fed.behaviour is not Behaviour.COMBINE:
            tails = ", ".join(f"'{f.tail}.{f.port}'" if f.port else f"'{f.tail}'"
                              for f in feeding)
            out.append(_err("fan-in", f"{_noun(fed)} '{head_id}' is fed by {len(feeding)} links "
                            f"({tails}); it takes one input", feeding[1],
                            "use a switch to bring several beams together"))
    for node in nodes.values():
        if node.behaviour is Behaviour.COMBINE and node.select is not None:
            inputs = [f.tail for f in fan_in.get(node.id, [])]
            if node.select not in inputs:
                out.append(Diagnostic("error", "bad-select", f"switch '{node.id}': select "
                                      f"'{node.select}' is not one of its inputs or upstream "
                                      "of one", node.select_location or node.location,
                                      f"its inputs are: {', '.join(inputs) or 'none'}"))
    order: list[str] = []
    try:
        cycle = nx.find_cycle(graph)
    except nx.NetworkXNoCycle:
        order = list(nx.lexicographical_topological_sort(graph, key=_layout_rank(layout)))
    else:
        ring = " -> ".join([str(e[0]) for e in cycle] + [str(cycle[0][0])])
        closing = max((links[e[2]] for e in cycle), key=lambda lk: lk.location)
        out.append(_err("cycle", f"the beamlines form a loop: {ring}", closing,
                        "a beam cannot return to an element it has passed"))
        return out, order
    out.extend(_reachability(nodes, graph, seen_port, fan_in))
    return out, order


def _layout_rank(layout: Layout) -> object:
    rank = {node_id: i for i, node_id in enumerate(layout.node_ids)}
    return lambda node_id: f"{rank.get(node_id, 0):08d}"


def _reachability(nodes: dict[str, Node], graph: nx.MultiDiGraph,
                  used: dict[tuple[str, str | None], Link],
                  into: dict[str, list[Link]]) -> list[Diagnostic]:
    out: list[Diagnostic] = []
    sources = [n for n in nodes.values() if n.is_source]
    reached: set[str] = set()
    for source in sources:
        reached |= nx.descendants(graph, source.id) | {source.id}
    for node in nodes.values():
        if node.is_source:
            if graph.out_degree(node.id) == 0:
                out.append(Diagnostic("warning", "idle-source",
                                      f"source '{node.id}' feeds no beamline", node.location,
                                      "connect it or remove it"))
            continue
        if node.id not in reached:
            if node.is_scanner:
                out.append(_err("no-path", f"scanner '{node.id}' has no path from any source",
                                node, "connect its beamline to a source"))
            elif graph.in_degree(node.id) == 0:
                out.append(_err("unreached", f"{_noun(node)} '{node.id}' receives no beam: it "
                                "is not on a beamline from a source", node,
                                "add it to a beamline or remove it"))
        for port in node.ports:
            if (node.id, port.name) in used:
                continue
            if node.behaviour is Behaviour.SPLIT:
                out.append(Diagnostic("error", "open-output", f"splitter '{node.id}' output "
                                      f"'{port.name}' is not connected",
                                      port.location or node.location,
                                      f"continue a beamline from '{node.id}.{port.name}', or "
                                      "send it to a dump"))
            elif not node.is_scanner and node.id in reached:
                ends = [lk.location for lk in into.get(node.id, [])]
                out.append(Diagnostic("error", "dangling", f"{_noun(node)} '{node.id}' sends "
                                      "its beam nowhere", max(ends, default=node.location),
                                      "continue the beamline to a scanner or a dump"))
    return out


def heat_limit_warnings(network: Network[L]) -> list[Diagnostic]:
    """Warn about heat limits that no allocation can reach.

    The most an element can absorb is bounded by the most power that can
    reach it (all sources at full power, adjustables at their maximum).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> isinstance(heat_limit_warnings(net), list)
    True
    """
    incident_max: dict[str, float] = {}
    out: list[Diagnostic] = []
    for node in network.nodes:
        if node.is_source:
            incident_max[node.id] = node.available_w
            continue
        incident = sum(incident_max[link.tail] * network.port_gain_max(link)
                       for link in network.in_links[node.id])
        incident_max[node.id] = incident
        if node.heat_limit_w is None:
            continue
        if node.behaviour is Behaviour.SPLIT:
            absorbed = incident * max(1.0 - p.efficiency for p in node.ports)
        else:
            absorbed = incident * (1.0 - node.gain_min)
        if absorbed <= node.heat_limit_w:
            out.append(Diagnostic("warning", "slack-heat-limit",
                                  f"{node.kind} '{node.id}': heat_limit {node.heat_limit_w:g} W "
                                  f"can never bind (it absorbs at most {absorbed:.4g} W)",
                                  node.location, "fine if intended; otherwise check the value"))
    return out
