"""Max-min headroom levels on a tree network by water-filling, without an LP.

When one source feeds the scanners through a tree (every node fed once, no
switch joining beams, splitter shares free in [0, 1]), every limit of the
allocation LP bounds a weighted sum of the powers delivered in one subtree:

* the source's available power: Σ need_s · t_s / G_s ≤ available (G_s the
  gain from the source to scanner s);
* a heat limit H of a fixed-gain element, a switch or an attenuator with
  gain g (at its highest transmission, which wastes least): (1 − g) × input
  ≤ H, i.e. input ≤ H / (1 − g);
* a heat limit of a splitter: Σ_k (1 − e_k) × share_k ≤ H, each share being
  what its output's subtree needs divided by the output's efficiency e_k;
* a scanner's max_power or useful ceiling: t_s ≤ max_w / need_s.

These supports are nested (a laminar family), so progressive filling has a
combinatorial solution (water-filling on a tree, as in max-min fair rate
allocation, Bertsekas and Gallager, *Data Networks*, 2nd ed., §6.5.2): going
up the tree, each limit's demand as a function of the common level t is the
piecewise-linear Σ w_s · min(t, τ_s), where τ_s is the level at which a limit
further down freezes scanner s; the limit binds at the t where that sum
equals its bound (exact inversion of the piece), and every scanner below it
freezes at min(τ_s, t). The levels are each scanner's τ once the source is
reached. The least source power at those levels is the root's demand, since
nothing forces power anywhere in such a tree.

Splitters with share bounds other than [0, 1] (they couple siblings and may
force power into a branch), a switch whose ``select`` shuts its only input,
several sources, outages applied in place and scanners that no power can
reach are left to the LP: :func:`is_tree` says no.
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass
from typing import Any

import numpy as np

from beamplan.network.behaviour import Behaviour, Node
from beamplan.network.graph import Network

__all__ = ["WaterFill", "is_tree", "tree_headroom", "water_fill"]

INF = float("inf")
DUAL_TOL = 1e-9  # as beamplan.optimise.goals
MAX_PRICED = 200_000_000  # rounds × rows of priced-row marks kept (200 MB, a byte each)
_TREES: dict[int, tuple[weakref.ref[Network], list[str] | None]] = {}  # per network


@dataclass(frozen=True)
class WaterFill:
    """The max-min levels of a tree and the powers that hold them.

    Attributes
    ----------
    levels
        Each scanner in service: delivered ÷ need at the max-min optimum.
    input_w
        The power entering each node fed from the source at those levels.
    source_w
        The least source power that holds the levels (the root's demand).
    rounds
        The distinct levels in increasing order (the stages of progressive
        filling when no two limits bind at the same level).
    held_by
        For each scanner, the node whose limit sets its level: the source
        (available power), an element (heat limit) or the scanner itself
        (max_power or useful ceiling).
    """

    levels: dict[str, float]
    input_w: dict[str, float]
    source_w: float
    rounds: tuple[float, ...]
    held_by: dict[str, str]


def _trivial_shares(node: Node) -> bool:
    return all(p.fraction_min <= 0.0 and p.fraction_max >= 1.0 for p in node.ports)


def _order(network: Network, root: str) -> list[str] | None:
    """The nodes below ``root`` in depth-first pre-order, or None if not a tree."""
    heads: dict[str, list[str]] = {}
    for link in network.links:
        heads.setdefault(link.tail, []).append(link.head)
    order: list[str] = []
    seen = {root}
    stack = [root]
    while stack:
        current = stack.pop()
        order.append(current)
        for head in reversed(heads.get(current, [])):
            if head in seen:
                return None
            seen.add(head)
            stack.append(head)
    return order


def is_tree(network: Network) -> bool:
    """Whether :func:`water_fill` solves the headroom levels of ``network`` exactly.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> is_tree(build_network(beamplan.load("layouts/pilot-line.yaml")))  # bounded shares
    False
    """
    return _tree_order(network) is not None


def _tree_order(network: Network) -> list[str] | None:
    """The tree's nodes in pre-order from its source, or None (remembered per network)."""
    known = _TREES.get(id(network))
    if known is not None and known[0]() is network:
        return known[1]
    answer = _is_tree(network)
    _TREES[id(network)] = (weakref.ref(network), answer)
    if len(_TREES) > 64:  # forget networks that are gone
        for key in [k for k, (ref, _) in list(_TREES.items()) if ref() is None]:
            _TREES.pop(key, None)
    return answer


def _is_tree(network: Network) -> list[str] | None:
    sources = network.sources
    if len(sources) != 1 or not sources[0].in_use:
        return None
    if any(len(links) > 1 for links in network.in_links.values()):
        return None
    gains = network.max_gains
    for node in network.nodes:
        if node.behaviour is Behaviour.SPLIT and not _trivial_shares(node):
            return None
        if node.behaviour is Behaviour.COMBINE and node.select is not None and \
                node.select not in {link.tail for link in network.in_links[node.id]}:
            return None
        if node.is_scanner and node.in_use and (node.need_w <= 0.0 or gains[node.id] <= 0.0):
            return None
    order = _order(network, sources[0].id)
    return order if order is not None and len(order) == len(network.nodes) else None


def _bind(weights: np.ndarray, taus: np.ndarray, bound: float, held: np.ndarray) -> float:
    """The largest t with Σ w · min(t, τ) ≤ bound (inf when never reached).

    A scanner frozen below t counts at ``held`` (its level less the give of
    a held demand row) rather than at τ, as in the LP's later stages.
    """
    if len(weights) == 1:  # one scanner: one piece, no sort
        one, cap = float(weights[0]), float(taus[0])
        if one <= 0.0 or one * cap <= bound:
            return INF
        return max(bound / one, 0.0)
    order = np.argsort(taus, kind="stable")
    w, tau, hold = weights[order], taus[order], held[order]
    finite = np.isfinite(tau)
    capped = np.where(finite, w * np.where(finite, hold, 0.0), 0.0)
    below = np.concatenate(([0.0], np.cumsum(capped)[:-1]))  # Σ_{i<k} w_i h_i
    rising = np.cumsum(w[::-1])[::-1]  # Σ_{i≥k} w_i
    with np.errstate(invalid="ignore"):
        at = below + rising * np.where(finite, tau, INF)
    over = np.flatnonzero(at > bound)
    if not len(over):
        return INF
    k = int(over[0])
    return max((bound - float(below[k])) / float(rising[k]), 0.0)


def _limit(node: Node) -> float | None:
    """The factor that turns the node's input into absorbed power, when it has a heat limit."""
    if node.heat_limit_w is None or node.behaviour in (Behaviour.SPLIT, Behaviour.ABSORB,
                                                       Behaviour.SOURCE, Behaviour.SINK):
        return None
    loss = 1.0 - node.gain_max
    return loss if loss > 0.0 else None


def water_fill(network: Network, slack: float = 0.0, give_w: float = 0.0) -> WaterFill:
    """The headroom goal's progressive-filling levels of a tree network, exactly.

    ``slack`` and ``give_w``: the relative and absolute give with which the
    LP holds a frozen scanner (see ``_Driver.demand_fixed`` in
    :mod:`beamplan.optimise.goals`); with them, later levels match the LP's
    to rounding, without them they are the exact max-min levels. Raises
    ``ValueError`` when :func:`is_tree` is false.

    Examples
    --------
    >>> from beamplan.network.behaviour import Behaviour, Node
    >>> from beamplan.network.graph import Link, Network
    >>> nodes = (Node("fel", "source", Behaviour.SOURCE, available_w=100.0),
    ...          Node("m1", "mirror", Behaviour.GAIN, 0.5, 0.5),
    ...          Node("s1", "scanner", Behaviour.SINK, need_w=10.0))
    >>> net = Network("demo", "demo.yaml", 13.5e-9, nodes,
    ...               (Link(0, "fel", "m1"), Link(1, "m1", "s1")))
    >>> fill = water_fill(net)
    >>> fill.levels, fill.source_w
    ({'s1': 5.0}, 100.0)
    """
    order = _tree_order(network)
    if order is None:
        raise ValueError(f"network {network.name!r} is not a tree of one source")
    node, gains = network.node, network.max_gains
    children: dict[str, list[tuple[str, str | None]]] = {}
    for link in network.links:
        children.setdefault(link.tail, []).append((link.head, link.port))
    # Scanners in pre-order: every subtree's scanners are one slice [lo, hi).
    ids = [n for n in order if node[n].is_scanner and node[n].in_use]
    who = np.array(ids, dtype=object)  # a scanner's own cap, until a limit above sets less
    index = {sid: i for i, sid in enumerate(ids)}
    need = np.array([node[s].need_w for s in ids], dtype=float)
    gain = np.array([gains[s] for s in ids], dtype=float)
    caps = [node[s].max_w for s in ids]
    tau = np.array([INF if cap is None else cap / node[s].need_w
                    for s, cap in zip(ids, caps, strict=True)], dtype=float)
    lo: dict[str, int] = {}
    count: dict[str, int] = {}
    seen = 0
    for name in order:  # pre-order: a subtree's scanners start where the subtree does
        lo[name] = seen
        seen += name in index
    for name in reversed(order):  # post-order: children before parents
        count[name] = int(name in index) + sum(count[k] for k, _ in children.get(name, []))
    hi = {name: lo[name] + count[name] for name in order}
    for name in reversed(order):  # children before parents: inner limits first
        n = node[name]
        a, b = lo[name], hi[name]
        if a >= b:
            continue
        weights: np.ndarray
        bound: float
        if n.is_source:
            weights, bound = need[a:b] / gain[a:b], n.available_w
        elif n.behaviour is Behaviour.SPLIT and n.heat_limit_w is not None:
            weights = np.zeros(b - a)
            for kid, port_name in children.get(name, []):
                port = next(p for p in n.ports if p.name == port_name)
                ka, kb = lo[kid] - a, hi[kid] - a
                weights[ka:kb] = (1.0 - port.efficiency) * need[lo[kid]:hi[kid]] \
                    * gains[name] / gain[lo[kid]:hi[kid]]
            bound = float(n.heat_limit_w)
        else:
            loss = _limit(n)
            if loss is None:
                continue
            if b - a == 1:  # one scanner below (a branch): plain floats, no arrays
                one = loss * float(need[a]) * gains[name] / float(gain[a])
                bound = n.heat_limit_w or 0.0
                if one > 0.0 and one * float(tau[a]) > bound:
                    tau[a], who[a] = max(bound / one, 0.0), name
                continue
            weights, bound = loss * need[a:b] * gains[name] / gain[a:b], n.heat_limit_w or 0.0
        give = np.minimum(give_w, 1e-4 * need[a:b]) / need[a:b]
        held = np.maximum(tau[a:b] * (1.0 - slack) - give, 0.0)
        level = _bind(weights, tau[a:b], bound, held)
        lowered = (tau[a:b] > level) & (weights > 0.0)  # a lossless output is not held
        who[a:b][lowered] = name
        tau[a:b][lowered] = level
    levels = {sid: float(tau[i]) for i, sid in enumerate(ids)}
    delivered = tau * need / gain  # each scanner's share of the source power
    prefix = np.concatenate(([0.0], np.cumsum(delivered)))
    input_w = {name: float(prefix[hi[name]] - prefix[lo[name]]) * gains[name]
               for name in order if not node[name].is_source}
    root = float(prefix[-1])
    return WaterFill(levels, input_w, root, tuple(sorted(set(levels.values()))),
                     {sid: str(who[i]) for i, sid in enumerate(ids)})


def _subtree(network: Network, heads: dict[str, list[str]], top: str
             ) -> tuple[list[str], list[str]]:
    """The scanners in service and the attenuators below ``top`` (``top`` included)."""
    scanners, ranges, stack = [], [], [top]
    while stack:
        name = stack.pop()
        n = network.node[name]
        if n.is_scanner and n.in_use:
            scanners.append(name)
        if n.behaviour is Behaviour.RANGE and n.gain_max < 1.0:
            ranges.append(name)
        stack.extend(heads.get(name, ()))
    return scanners, ranges


def _stage_duals(model: Any, top: str, levels: dict[str, float], range_rows: dict[str, int],
                 heads: dict[str, list[str]]) -> np.ndarray:
    """Which rows the LP stage that freezes ``top``'s scanners prices (sign and size unused).

    The limit of ``top``; the demand rows of the scanners it feeds (those
    frozen before are held, and cost it power); the highest transmission of
    every attenuator on their paths (more transmission, less power needed).
    """
    node = model.network.node[top]
    duals = np.zeros(len(model.row_info), dtype=np.int8)  # a byte a row: marks, not prices
    row = (model.available_row[top] if node.is_source else
           model.max_row[top] if node.is_scanner else model.heat_row[top])
    duals[row] = 1
    if node.behaviour is Behaviour.SPLIT:  # only its lossy outputs heat it
        scanners, ranges = [], []
        for port in node.ports:
            link = model.network.out_link.get((top, port.name))
            if link is not None and port.efficiency < 1.0:
                below, attenuators = _subtree(model.network, heads, link.head)
                scanners += below
                ranges += attenuators
    else:
        scanners, ranges = _subtree(model.network, heads, top)
    powered = {s for s in scanners if levels.get(s, 0.0) > 0.0}
    for sid in powered:
        duals[model.demand_row[sid]] = 1
    for name in ranges:
        if name in range_rows and _subtree(model.network, heads, name)[0]:
            duals[range_rows[name]] = 1
    return duals


def tree_headroom(driver: Any, active: list[str], levels: dict[str, float]) -> bool:
    """The headroom goal's filling on a tree: one LP stage, then water-filling.

    ``driver`` is the goal driver of :mod:`beamplan.optimise.goals`. The first
    stage (the lowest level, whose duals are the plan's shadow prices) is
    solved by the LP; when it freezes exactly the scanners that water-filling
    says the same limit holds, every later level comes from water-filling and
    each later stage's priced rows are derived from the limit that binds
    there. Returns False, with the first stage's scanners frozen, when the
    network is not a tree or the two disagree: the LP filling then goes on.
    Where several limits bind at one level, each makes its own round (the LP
    would freeze whichever its dual prices), so reasons name each scanner's
    own limit.
    """
    m = driver.m
    if m.out_of_service or m.unreachable or not active or not is_tree(m.network):
        return False
    for sid in active:
        driver.demand_active(sid)
    driver.objective({m.factor_col: -1.0})
    driver.factor_bounds(0.0, INF)
    sol = driver.first = driver.solve()
    level = float(sol.columns[m.factor_col])
    duals = sol.row_duals
    blocked = [s for s in active if duals[m.demand_row[s]] > DUAL_TOL] or list(active)
    driver.first_frozen = list(blocked)
    for sid in blocked:
        levels[sid] = level
        driver.freeze_duals[sid] = duals
        driver.demand_fixed(sid, level)
    if len(blocked) == len(active):  # one stage froze them all: nothing left to fill
        return True
    fill = water_fill(m.network, driver.b.freeze_slack, driver.b.freeze_abs_w)
    if set(fill.levels) != set(active):
        return False
    groups: dict[str, list[str]] = {}
    for sid in active:
        groups.setdefault(fill.held_by[sid], []).append(sid)
    done = {fill.held_by[sid] for sid in blocked}  # the limits the LP stage priced
    if any(abs(fill.levels[sid] - level) > 1e-9 * max(abs(level), 1e-300) for sid in blocked) \
            or sum(len(groups[top]) for top in done) != len(blocked):
        return False
    # Later rounds by level; limits that bind at the same level (a tie, where the LP
    # freezes whichever its dual prices) each make their own round.
    order = sorted((top for top in groups if top not in done),
                   key=lambda top: (fill.levels[groups[top][0]], top))
    if len(order) * len(m.row_info) > MAX_PRICED:
        return False  # too many rounds to keep each one's priced rows: the LP goes on
    range_rows = {info.node: r for r, info in enumerate(m.row_info)
                  if info.family == "range-high"}
    held = {**fill.levels, **levels}
    heads: dict[str, list[str]] = {}
    for link in m.network.links:
        heads.setdefault(link.tail, []).append(link.head)
    for top in order:
        group = groups[top]
        for sid in group:
            levels[sid] = fill.levels[sid]
            driver.demand_fixed(sid, fill.levels[sid])
        stage = _stage_duals(m, top, held, range_rows, heads)
        for sid in group:
            driver.freeze_duals[sid] = stage
        driver.stages += 1  # the LP stage this round stands for
    return True
