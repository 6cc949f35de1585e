"""Single points of failure: nodes whose loss cuts a scanner off from every source.

Method: dominators in a flow graph (Lengauer–Tarjan, as implemented by
networkx ``immediate_dominators``). A virtual root feeds every source in
service; a node dominates a scanner when every path from the root to the
scanner passes through it. Links that can carry no power (an output whose
share is fixed at zero, an input a switch does not select, a zero gain) are
left out, so the graph is the one that can carry power.

With ``any_position=True`` a switch may take any of its inputs (every input
link is kept): the nodes found then cut a scanner off even after corrective
switching, which is what a sweep reports as single points of failure.
"""

from __future__ import annotations

import networkx as nx

from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network

__all__ = ["single_points_of_failure"]

_ROOT = "\x00root"


def _carrying_graph(network: Network, any_position: bool = False) -> nx.DiGraph:
    graph = nx.DiGraph()
    graph.add_node(_ROOT)
    for node in network.nodes:
        graph.add_node(node.id)
        if node.is_source and node.in_use and node.available_w > 0:
            graph.add_edge(_ROOT, node.id)
    for link in network.links:
        tail, head = network.node[link.tail], network.node[link.head]
        if network.port_gain_max(link) <= 0.0 or (not tail.in_use and not tail.is_scanner):
            continue
        if (head.behaviour is Behaviour.COMBINE and not any_position
                and head.select not in (None, link.tail)):
            continue
        graph.add_edge(link.tail, link.head)
    return graph


def single_points_of_failure(network: Network, *, any_position: bool = False
                             ) -> dict[str, tuple[str, ...]]:
    """For every node whose loss cuts off some scanner, the scanners it cuts off.

    Scanners already cut off in the base network are left out, and a scanner
    is not listed as its own single point of failure. With ``any_position``,
    switches may be moved to any input (after corrective switching).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> spof = single_points_of_failure(build_network(load_layout("layouts/pilot-line.yaml")))
    >>> spof["m3"], len(spof["halo-fel"])
    (('litho-p2',), 3)
    >>> two_bay = build_network(load_layout("layouts/two-bay.yaml"))
    >>> "fel-main" in single_points_of_failure(two_bay, any_position=True)
    False
    """
    graph = _carrying_graph(network, any_position)
    idom = nx.immediate_dominators(graph, _ROOT)
    cuts: dict[str, list[str]] = {}
    for scanner in network.scanners:
        if scanner.id not in idom or not scanner.in_use:
            continue
        current = idom[scanner.id]
        while current != _ROOT:
            cuts.setdefault(current, []).append(scanner.id)
            current = idom[current]
    order = {n.id: i for i, n in enumerate(network.nodes)}
    return {k: tuple(v) for k, v in sorted(cuts.items(), key=lambda kv: order[kv[0]])}
