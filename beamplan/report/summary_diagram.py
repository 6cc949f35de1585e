"""The power-flow diagram at campus scale: subtrees folded into one box each.

A campus of hundreds of scanners drawn box by box gives a picture nobody can
read. Past :data:`SCALE_SCANNERS` scanners, ``beamplan draw`` and the HTML
report draw this summary instead (``--detail`` draws every box).

How boxes fold, from the network's structure and never from names:

* the **dominator tree** (Lengauer–Tarjan, networkx ``immediate_dominators``;
  a virtual root feeds every source) hangs each node under the nearest node
  that every beam path to it passes through. In a tree of splitters it is the
  tree itself; a combiner hangs under the common ancestor of its inputs;
* a **fold** is the subtree under a node fed by one splitter output (its only
  input) that holds at least two scanners: it becomes one box with its totals
  (power in, power delivered, scanners, worst headroom, hottest heat use);
* the largest subtrees fold first: beamplan folds every such subtree that
  holds at most *L* scanners (the outermost one), with the smallest *L* for
  which the picture keeps within :data:`BOX_BUDGET` boxes.

The folded tree is laid out as an outline, beam from top to bottom: each box
on its own row, the branches that split off indented under a bus line, the
largest branch (the trunk) straight on below. :func:`focus_network` cuts out
the subtree under one node, for ``--focus``.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass, replace

import networkx as nx

from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network
from beamplan.optimise.result import Plan
from beamplan.report.diagram import (
    BINDS,
    LINE_IN,
    Box,
    _box,
    _heat,
    link_powers,
)
from beamplan.report.document import signed_percent
from beamplan.report.palette import PALETTE
from beamplan.units import format_power
from beamplan.vocabulary import ScannerStatus

__all__ = ["BOX_BUDGET", "SCALE_SCANNERS", "Fold", "Row", "Summary", "at_scale",
           "dominator_parents", "focus_network", "summary_model"]

#: "At scale": more scanners than this and the picture is a summary by default.
#: Our choice, no source: the detailed diagram of 40 scanners (about 400
#: boxes) still reads on a zoomed screen; past it, it does not.
SCALE_SCANNERS = 40
#: The most boxes a summary shows (our choice, no source: about one screen).
BOX_BUDGET = 60
_ROOT = "\x00root"
ROW_GAP_IN = 0.1
INDENT_IN = 0.32
WIDTH_MAX_PT = 7.0


def at_scale(network: Network) -> bool:
    """Whether ``network`` has more than :data:`SCALE_SCANNERS` scanners.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> at_scale(build_network(beamplan.load("layouts/two-bay.yaml")))
    False
    """
    return len(network.scanners) > SCALE_SCANNERS


@dataclass(frozen=True)
class Fold:
    """A folded subtree: its root, members (network order) and totals."""

    root: str
    members: tuple[str, ...]
    scanners: tuple[str, ...]
    power_in_w: float | None = None
    delivered_w: float | None = None
    worst_headroom: float | None = None
    worst_scanner: str | None = None
    hottest_use: float | None = None
    hottest: str | None = None
    short: int = 0


@dataclass(frozen=True)
class Row:
    """One box of the outline: ``parent`` is a row index (-1 for none)."""

    box: Box
    indent: int
    parent: int
    power_w: float | None
    width_pt: float
    y: float = 0.0


@dataclass(frozen=True)
class Summary:
    """The folded diagram laid out as an outline; inches, y downwards."""

    title: str
    subtitle: str
    rows: tuple[Row, ...]
    folds: dict[str, Fold]
    box_width: float
    height: float
    planned: bool
    max_power_w: float


def dominator_parents(network: Network) -> dict[str, str | None]:
    """Each node's immediate dominator (``None`` under the virtual root).

    Every link counts, whatever it carries; a virtual root feeds every source.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> parents = dominator_parents(build_network(beamplan.load("layouts/pilot-line.yaml")))
    >>> parents["halo-fel"] is None, parents["m2"]
    (True, 'm1')
    """
    graph = nx.DiGraph()
    graph.add_node(_ROOT)
    graph.add_nodes_from(n.id for n in network.nodes)
    graph.add_edges_from((_ROOT, n.id) for n in network.nodes
                         if n.is_source or not network.in_links[n.id])
    graph.add_edges_from((link.tail, link.head) for link in network.links)
    idom = nx.immediate_dominators(graph, _ROOT)
    return {n.id: None if idom.get(n.id, _ROOT) == _ROOT else idom[n.id] for n in network.nodes}


def _children(network: Network, parents: dict[str, str | None]) -> dict[str | None, list[str]]:
    kids: dict[str | None, list[str]] = {None: []}
    for node in network.nodes:
        kids.setdefault(node.id, [])
        kids.setdefault(parents[node.id], []).append(node.id)
    return kids


def _scanner_counts(network: Network, kids: dict[str | None, list[str]]) -> dict[str, int]:
    count: dict[str, int] = {}
    for node in reversed(network.nodes):  # children come after their dominator
        count[node.id] = int(node.is_scanner) + sum(count[k] for k in kids[node.id])
    return count


def _foldable(network: Network, node_id: str, count: dict[str, int]) -> bool:
    ins = network.in_links[node_id]
    return (len(ins) == 1 and network.node[ins[0].tail].behaviour is Behaviour.SPLIT
            and count[node_id] >= 2)


def _cut(network: Network, kids: dict[str | None, list[str]], count: dict[str, int],
         limit: int) -> tuple[list[str], list[str]]:
    """The nodes shown and the fold roots when subtrees of at most ``limit`` scanners fold."""
    shown: list[str] = []
    folds: list[str] = []
    stack = list(reversed(kids[None]))
    while stack:
        node_id = stack.pop()
        if _foldable(network, node_id, count) and count[node_id] <= limit:
            folds.append(node_id)
            continue
        shown.append(node_id)
        stack.extend(reversed(kids[node_id]))
    return shown, folds


def _members(kids: dict[str | None, list[str]], root: str) -> list[str]:
    out, stack = [], [root]
    while stack:
        node_id = stack.pop()
        out.append(node_id)
        stack.extend(kids[node_id])
    return out


def _fold(network: Network, plan: Plan | None, kids: dict[str | None, list[str]], root: str,
          powers: list[float] | None) -> Fold:
    order = {n.id: i for i, n in enumerate(network.nodes)}
    members = tuple(sorted(_members(kids, root), key=order.__getitem__))
    scanners = tuple(m for m in members if network.node[m].is_scanner)
    if plan is None or powers is None:
        return Fold(root, members, scanners)
    results = [plan.scanner(s) for s in scanners]
    got = [r for r in results if r is not None]
    worst = min(got, key=lambda r: r.headroom, default=None)
    inside = set(members)
    heat = [(e.absorbed_w / e.heat_limit_w, e.id) for e in plan.elements
            if e.id in inside and e.heat_limit_w]
    hottest = max(heat, default=None)
    return Fold(root, members, scanners,
                power_in_w=sum(powers[link.index] for link in network.in_links[root]),
                delivered_w=sum(r.delivered_w for r in got),
                worst_headroom=worst.headroom if worst else None,
                worst_scanner=worst.id if worst else None,
                hottest_use=hottest[0] if hottest else None, hottest=hottest[1] if hottest
                else None, short=sum(1 for r in got if r.status != ScannerStatus.MET))


def _fold_box(network: Network, fold: Fold) -> Box:
    elements = len(fold.members) - len(fold.scanners)
    lines = [f"{fold.root} and below", f"{len(fold.scanners)} scanners, {elements} elements"]
    fill, dashed, hatch = PALETTE["heat-none"], False, None
    if fold.delivered_w is None:
        need = sum(network.node[s].need_w for s in fold.scanners)
        lines.append(f"need {format_power(need)} in all")
        return Box(fold.root, fold.members, "fold", tuple(lines), fill)
    lines.append(f"in {format_power(fold.power_in_w or 0.0)}, "
                 f"delivered {format_power(fold.delivered_w)}")
    if fold.worst_headroom is not None:
        lines.append(f"worst headroom {signed_percent(fold.worst_headroom)} "
                     f"at {fold.worst_scanner}")
    if fold.short:
        lines.append(f"{fold.short} scanner{'s' if fold.short > 1 else ''} short")
        dashed, hatch = True, "////"
    if fold.hottest_use is not None and fold.hottest is not None:
        fill, _ = _heat(fold.hottest_use, 1.0)
        lines.append(f"hottest heat use {fold.hottest_use:.0%} at {fold.hottest}")
    return Box(fold.root, fold.members, "fold", tuple(lines), fill, hatch, dashed)


def _choose_limit(network: Network, kids: dict[str | None, list[str]],
                  count: dict[str, int], budget: int) -> int:
    # a limit of 1 folds nothing (a fold holds two scanners at least)
    sizes = sorted({1} | {count[n.id] for n in network.nodes if _foldable(network, n.id, count)})

    def boxes(i: int) -> int:
        shown, folds = _cut(network, kids, count, sizes[i])
        return len(shown) + len(folds)

    # fewer boxes as the limit grows: the first size that fits the budget
    i = bisect.bisect_left(range(len(sizes)), True, key=lambda i: boxes(i) <= budget)
    return sizes[min(i, len(sizes) - 1)]


def summary_model(network: Network, plan: Plan | None = None, *,
                  budget: int = BOX_BUDGET) -> Summary:
    """Fold the network's subtrees and lay the rest out as an outline.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(beamplan.load("layouts/two-bay.yaml"))
    >>> s = summary_model(net, beamplan.plan(net), budget=8)
    >>> [f.root for f in s.folds.values()]
    ['a-fold', 'b-fold']
    >>> round(sum(f.delivered_w for f in s.folds.values())) == round(beamplan.plan(net).delivered_w)
    True
    """
    parents = dominator_parents(network)
    kids = _children(network, parents)
    count = _scanner_counts(network, kids)
    shown, roots = _cut(network, kids, count, _choose_limit(network, kids, count, budget))
    powers = link_powers(network, plan) if plan else None
    folds = {r: _fold(network, plan, kids, r, powers) for r in roots}
    binds: dict[str, list[str]] = {}
    for b in plan.binding if plan else ():
        binds.setdefault(b.subject, []).append(BINDS.get(b.family, b.family))
    boxes = {k: _box(network, plan, [k], tuple(dict.fromkeys(binds.get(k, [])))) for k in shown}
    boxes = {k: replace(b, lines=(*b.lines, "binds: " + ", ".join(b.binds))) if b.binds else b
             for k, b in boxes.items()}
    boxes.update({r: _fold_box(network, f) for r, f in folds.items()})
    into = {k: sum(powers[link.index] for link in network.in_links[k]) if powers else None
            for k in boxes}
    top = max([p for p in into.values() if p is not None] or [0.0])
    rows: list[Row] = []
    visible = set(boxes)

    def weight(k: str) -> tuple[int, int]:
        return (count[k], order[k])

    order = {n.id: i for i, n in enumerate(network.nodes)}
    stack: list[tuple[str, int, int]] = [(k, 0, -1) for k in reversed(kids[None])]
    y = 0.0
    while stack:
        key, indent, parent = stack.pop()
        box = boxes[key]
        height = len(box.lines) * LINE_IN + 0.1
        power = into[key]
        width = 1.0 if power is None else max(0.6, WIDTH_MAX_PT * power / top) if top else 0.6
        rows.append(Row(replace(box, height=height), indent, parent, power, width,
                        y + height / 2))
        y += height + ROW_GAP_IN
        here = len(rows) - 1
        below = [k for k in kids[key] if k in visible] if key not in folds else []
        if below:
            trunk = max(below, key=weight)
            side = [k for k in below if k != trunk]
            stack.append((trunk, indent, here))
            stack.extend((k, indent + 1, here) for k in reversed(side))
    width = min(max((max(len(t) for r in rows for t in r.box.lines) if rows else 10)
                    * 6.5 * 0.58 / 72 + 0.14, 1.6), 3.2)
    subtitle = "layout only: no plan, so no powers" if plan is None else (
        f"goal {plan.goal}, {plan.status}: {format_power(plan.source_used_w)} drawn of "
        f"{format_power(plan.source_available_w)}, {format_power(plan.delivered_w)} delivered "
        f"({plan.efficiency:.1%}), lowest headroom {signed_percent(plan.headroom_factor - 1)}")
    return Summary(f"{network.name}: power flow, summary of {len(network.scanners)} scanners",
                   subtitle, tuple(rows), folds, width, max(y - ROW_GAP_IN, 0.0),
                   plan is not None, top)


def focus_network(network: Network, node_id: str) -> Network:
    """The part of ``network`` under ``node_id``: the nodes it dominates, and their links.

    Raises ``KeyError`` naming the node when there is no such node.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> part = focus_network(build_network(beamplan.load("layouts/two-bay.yaml")), "a-fold")
    >>> part.nodes[0].id, all(s.id.startswith("litho-a") for s in part.scanners)
    ('a-fold', True)
    """
    if node_id not in network.node:
        raise KeyError(node_id)
    kids = _children(network, dominator_parents(network))
    inside = set(_members(kids, node_id))
    links = [link for link in network.links if link.tail in inside and link.head in inside]
    return replace(network, name=f"{network.name}, under {node_id}",
                   nodes=tuple(n for n in network.nodes if n.id in inside),
                   links=tuple(replace(link, index=i) for i, link in enumerate(links)),
                   warnings=())
