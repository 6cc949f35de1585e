"""The power-flow diagram of a network and, optionally, of its plan.

:func:`diagram_model` lays the network out without any drawing library:
sources in the leftmost column, every sink (scanner or dump) in the
rightmost, each element in the column of its longest path from a source;
rows follow a depth-first order (no crossings in a tree, barycentre sweeps
for the rest) and each box sits centred on what it feeds. Marks (link
widths, heat-use fills, statuses, binding rings) are decided here too, so
that the matplotlib picture (:func:`beamplan.report.draw.diagram_picture`: SVG,
PNG, PDF) and the Graphviz text
(:func:`beamplan.report.dot.diagram_dot`) show the same thing. The marks
are explained in docs/pictures.md and in the legend of every picture.
"""

from __future__ import annotations

import itertools
import math
import textwrap
from dataclasses import dataclass, replace

from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network
from beamplan.optimise.result import Plan
from beamplan.report.document import signed_percent
from beamplan.report.palette import HEAT_BANDS, PALETTE
from beamplan.units import format_power
from beamplan.vocabulary import FAMILIES, ScannerStatus

__all__ = ["BINDS", "HEAT_BANDS", "PALETTE", "Box", "Diagram", "Wire", "diagram_model",
           "link_powers"]

#: The label of each binding family beside a box (from the vocabulary's registry).
BINDS: dict[str, str] = {f: info.label for f, info in FAMILIES.items() if info.label}

FONT_PT = 6.5
LINE_IN = FONT_PT * 1.3 / 72      # one text line, inches
GAP_IN = 1.0                      # between columns, room for a link label
ROW_GAP_IN = 0.16                 # between boxes of one column
DUMMY_IN = 0.2                    # height reserved by a link passing a column
WIDTH_MAX_PT, WIDTH_MIN_PT = 12.0, 0.8


@dataclass(frozen=True)
class Box:
    """One box: a node, or a chain of plain gain elements (``shape == "chain"``)."""

    key: str
    members: tuple[str, ...]
    shape: str  # "source", "element", "chain", "dump", "scanner"
    lines: tuple[str, ...]
    fill: str
    hatch: str | None = None
    dashed: bool = False
    binds: tuple[str, ...] = ()
    column: int = 0
    y: float = 0.0
    height: float = 0.0


@dataclass(frozen=True)
class Wire:
    """A drawn link: ``index`` into ``network.links``; ``ys`` one per column it spans."""

    index: int
    tail: str
    head: str
    power_w: float | None
    width_pt: float
    label: str
    ys: tuple[float, ...] = ()


@dataclass(frozen=True)
class Diagram:
    """The laid-out diagram; coordinates in inches, y downwards, column ``c`` at ``x[c]``."""

    title: str
    subtitle: str
    boxes: dict[str, Box]
    wires: tuple[Wire, ...]
    x: tuple[float, ...]
    box_width: float
    height: float
    planned: bool
    max_power_w: float


def link_powers(network: Network, plan: Plan) -> list[float]:
    """The power on every link of ``network`` under ``plan``, in link order (W).

    A link carries the tail's output; from a splitter it carries the port's
    share of the splitter's input times the port's efficiency.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(beamplan.load("layouts/pilot-line.yaml"))
    >>> powers = link_powers(net, beamplan.plan(net))
    >>> round(powers[0]) == round(beamplan.plan(net).sources[0].output_w)
    True
    """
    sources = {s.id: s.output_w for s in plan.sources}
    elements = {e.id: e for e in plan.elements}
    out = []
    for link in network.links:
        node = network.node[link.tail]
        if node.is_source:
            out.append(sources[link.tail])
            continue
        result = elements[link.tail]
        if node.behaviour is Behaviour.SPLIT:
            port = next(p for p in node.ports if p.name == link.port)
            fraction = dict(result.setting or ()).get(str(port.name), 0.0)  # type: ignore[arg-type]
            out.append(fraction * result.incident_w * port.efficiency)
        else:
            out.append(result.output_w)
    return out


def _chains(network: Network, group: bool) -> dict[str, list[str]]:
    """Box key -> member ids; with ``group``, runs of single-input gain elements merge."""
    def plain(node_id: str) -> bool:
        return network.node[node_id].behaviour is Behaviour.GAIN and \
            len(network.in_links[node_id]) == 1

    boxes: dict[str, list[str]] = {}
    key_of: dict[str, str] = {}
    for node in network.nodes:
        if group and plain(node.id) and plain(tail := network.in_links[node.id][0].tail):
            key_of[node.id] = key_of[tail]
            boxes[key_of[node.id]].append(node.id)
        else:
            key_of[node.id] = node.id
            boxes[node.id] = [node.id]
    return boxes


def _share(power: float, total: float) -> str:
    share = 100 * power / total if total > 0 else 0.0
    return f"{share:.1f}%" if share < 9.95 else f"{share:.0f}%"


def _heat(absorbed: float, limit: float | None) -> tuple[str, str]:
    """The fill of an element and its words, from absorbed ÷ heat limit."""
    if limit is None:
        return PALETTE["heat-none"], ""
    use = absorbed / limit if limit > 0 else 1.0
    band = [key for key, _, low in HEAT_BANDS if use >= low][-1]
    return PALETTE[band], f"heat {use:.0%} of {format_power(limit)}"


def _box(network: Network, plan: Plan | None, members: list[str], binds: tuple[str, ...]
         ) -> Box:
    key, node = members[0], network.node[members[0]]
    got = {e.id: e for e in plan.elements} if plan else {}
    if len(members) > 1:
        gain = math.prod(got[m].gain if plan else network.node[m].gain_max for m in members)
        lines = [*textwrap.wrap(" › ".join(members), 26, break_long_words=False,
                                break_on_hyphens=False), f"{len(members)} in a chain, ×{gain:.3f}"]
        limited = [got[m] for m in members if m in got and got[m].heat_limit_w]
        worst = max(limited, key=lambda e: e.absorbed_w / (e.heat_limit_w or 1.0), default=None)
        fill, heat = _heat(worst.absorbed_w, worst.heat_limit_w) if worst else \
            (PALETTE["heat-none"], "")
        return Box(key, tuple(members), "chain", (*lines, *([heat, f"at {worst.id}"]
                                                          if worst else [])), fill, binds=binds)
    if node.is_source:
        s = next(s for s in plan.sources if s.id == key) if plan else None
        text = f"{format_power(s.output_w)} of {format_power(s.available_w)}" if s else \
            f"{format_power(node.available_w)} available"
        return Box(key, (key,), "source", (key, "source", text), PALETTE["source"], binds=binds)
    if node.is_scanner:
        r = plan.scanner(key) if plan else None
        lines = [key, f"need {format_power(node.need_w)}"]
        if r is None or r.status == ScannerStatus.MET:
            lines += ([f"gets {format_power(r.delivered_w)}, {signed_percent(r.headroom)}"]
                      if r else [])
            return Box(key, (key,), "scanner", tuple(lines), PALETTE["met"], binds=binds)
        lines.append(f"{r.status} {format_power(r.shortfall_w)}, {signed_percent(r.headroom)}")
        return Box(key, (key,), "scanner", tuple(lines), PALETTE["paper"],
                   "xxxx" if r.status == ScannerStatus.CUT_OFF else "////", True, binds)
    e = got.get(key)
    kind = node.kind + (f", gain {node.gain_max:.3f}" if node.behaviour in (
        Behaviour.GAIN, Behaviour.COMBINE) else "" if node.behaviour is not Behaviour.RANGE
        else f", T {e.gain:.1%}" if e else f", T {node.gain_min:.0%}–{node.gain_max:.0%}")
    fill, heat = _heat(e.absorbed_w, e.heat_limit_w) if e else (PALETTE["heat-none"], "")
    more = [f"in {format_power(e.incident_w)}", heat] if e else \
        [f"heat limit {format_power(node.heat_limit_w)}" if node.heat_limit_w else ""]
    lines = [key, kind, *(line for line in more if line)]
    if node.behaviour is Behaviour.ABSORB:
        return Box(key, (key,), "dump", tuple(lines), fill if heat else PALETTE["dump"],
                   binds=binds)
    return Box(key, (key,), "element", tuple(lines), fill, binds=binds)


def _spread(desired: list[float], gaps: list[float]) -> list[float]:
    """Least-squares positions nearest ``desired``, in order, ``gaps[i]`` apart at least.

    With z = y − (running sum of gaps), the order constraint is z non-decreasing:
    an isotonic regression, solved by pooling adjacent violators.
    """
    offsets = [0.0]
    for gap in gaps:
        offsets.append(offsets[-1] + gap)
    blocks: list[list[float]] = []  # [sum, count]
    for want, offset in zip(desired, offsets, strict=True):
        blocks.append([want - offset, 1.0])
        while len(blocks) > 1 and blocks[-2][0] / blocks[-2][1] > blocks[-1][0] / blocks[-1][1]:
            total, count = blocks.pop()
            blocks[-1][0] += total
            blocks[-1][1] += count
    flat = [total / count for total, count in blocks for _ in range(int(count))]
    return [z + offset for z, offset in zip(flat, offsets, strict=True)]


Item = tuple[str, int]  # (box key, -1) or (wire index as "#i", column) for a link passing by
Links = dict[Item, list[Item]]


def _crossings(columns: list[list[Item]], succ: Links) -> int:
    count = 0
    for here, there in itertools.pairwise(columns):
        rank = {item: i for i, item in enumerate(there)}
        ends = [(i, rank[t]) for i, item in enumerate(here) for t in succ[item]]
        count += sum(1 for a, b in ends for c, d in ends if a < c and b > d)
    return count


def _order(columns: list[list[Item]], succ: Links, pred: Links) -> list[list[Item]]:
    """Barycentre sweeps, right then left, from the depth-first order; keep the fewest crossings."""
    best, fewest = columns, _crossings(columns, succ)
    current = [list(c) for c in columns]
    for sweep in range(8 if fewest else 0):
        down = sweep % 2 == 0
        for c in range(1, len(current)) if down else range(len(current) - 2, -1, -1):
            rank = {item: i for i, item in enumerate(current[c - 1 if down else c + 1])}
            near, old = pred if down else succ, {item: i for i, item in enumerate(current[c])}
            current[c].sort(key=lambda it: sum(rank[n] for n in near[it]) / len(near[it])
                            if near[it] else old[it])
        if (count := _crossings(current, succ)) < fewest:
            best, fewest = [list(c) for c in current], count
    return best


def _rows(boxes: dict[str, Box], wires: list[Wire], network: Network
          ) -> tuple[dict[str, int], dict[Item, float], dict[int, list[Item]]]:
    """Columns of the boxes, the y of every item, and the items along each wire."""
    column: dict[str, int] = {}
    for key in boxes:  # in the topological order of their first members
        column[key] = max((column[w.tail] + 1 for w in wires if w.head == key), default=0)
    sinks = {k for k in boxes if not network.node[k].is_source} - {w.tail for w in wires}
    last = max([1 if sinks else 0, *(column[k] + 1 for k in boxes if k not in sinks)])
    column.update(dict.fromkeys(sinks, last))
    succ: Links = {(k, -1): [] for k in boxes}
    pred: Links = {(k, -1): [] for k in boxes}
    path: dict[int, list[Item]] = {}
    for w in wires:
        path[w.index] = [(w.tail, -1), *((f"#{w.index}", c) for c in range(
            column[w.tail] + 1, column[w.head])), (w.head, -1)]
        for a, b in itertools.pairwise(path[w.index]):
            succ.setdefault(a, []).append(b)
            pred.setdefault(b, []).append(a)
            succ.setdefault(b, [])
            pred.setdefault(a, [])
    seen: dict[Item, int] = {}
    stack = [(k, -1) for k in reversed(boxes) if network.node[k].is_source]
    while stack:
        if (item := stack.pop()) not in seen:
            seen[item] = len(seen)
            stack.extend(reversed(succ[item]))
    columns: list[list[Item]] = [[] for _ in range(last + 1)]
    for item in sorted(succ, key=lambda it: seen.get(it, len(seen))):
        columns[column[item[0]] if item[1] < 0 else item[1]].append(item)
    columns = _order(columns, succ, pred)
    y: dict[Item, float] = {}
    for c in range(last, -1, -1):  # the last column evenly, then each centred on what it feeds
        items = columns[c]
        gaps = [(_height(boxes, a) + _height(boxes, b)) / 2 + ROW_GAP_IN
                for a, b in itertools.pairwise(items)]
        want = [sum(y[s] for s in succ[it]) / len(succ[it]) if succ[it] else sum(gaps[:i])
                for i, it in enumerate(items)]
        y.update(zip(items, _spread(want, gaps), strict=True))
    return column, y, path


def _height(boxes: dict[str, Box], item: Item) -> float:
    return len(boxes[item[0]].lines) * LINE_IN + 0.1 if item[1] < 0 else DUMMY_IN


def diagram_model(network: Network, plan: Plan | None = None, *,
                  group_chains: bool = False) -> Diagram:
    """Lay out the power-flow diagram and decide every mark.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(beamplan.load("layouts/pilot-line.yaml"))
    >>> model = diagram_model(net, beamplan.plan(net))
    >>> model.boxes["halo-fel"].column, model.boxes["litho-p3"].column == len(model.x) - 1
    (0, True)
    """
    members = _chains(network, group_chains)
    key_of = {m: key for key, ms in members.items() for m in ms}
    binds: dict[str, list[str]] = {}
    for b in plan.binding if plan else ():
        if b.subject in key_of:  # a --focus view holds only part of the network
            binds.setdefault(key_of[b.subject], []).append(BINDS.get(b.family, b.family))
    boxes = {k: _box(network, plan, ms, tuple(dict.fromkeys(binds.get(k, []))))
             for k, ms in members.items()}
    boxes = {k: replace(b, lines=(*b.lines, "binds: " + ", ".join(b.binds))) if b.binds else b
             for k, b in boxes.items()}
    powers = link_powers(network, plan) if plan else None
    top = max(powers or [0.0])
    total = plan.source_used_w if plan else 0.0
    wires = []
    for link in network.links:
        if (tail := key_of[link.tail]) == (head := key_of[link.head]):
            continue
        power = max(powers[link.index], 0.0) + 0.0 if powers else None  # no "-0 W"
        width = 1.2 if power is None else max(WIDTH_MIN_PT, WIDTH_MAX_PT * power / top) \
            if power > 0 else WIDTH_MIN_PT
        words = [link.port] if link.port else []
        words += [f"{format_power(power)} · {_share(power, total)}"] if power is not None else []
        wires.append(Wire(link.index, tail, head, power, width, "\n".join(words)))
    column, y, path = _rows(boxes, wires, network)
    low = min((v - _height(boxes, it) / 2 for it, v in y.items()), default=0.0)
    high = max((v + _height(boxes, it) / 2 for it, v in y.items()), default=0.0)
    width = min(max(max(len(t) for b in boxes.values() for t in b.lines) * FONT_PT * 0.58 / 72
                    + 0.14, 1.0), 2.4)
    placed = {k: replace(b, column=column[k], y=y[(k, -1)] - low, height=_height(boxes, (k, -1)))
              for k, b in boxes.items()}
    drawn = tuple(replace(w, ys=tuple(y[it] - low for it in path[w.index])) for w in wires)
    subtitle = "layout only: no plan, so no powers" if plan is None else (
        f"goal {plan.goal}, {plan.status}: {format_power(plan.source_used_w)} drawn of "
        f"{format_power(plan.source_available_w)}, {format_power(plan.delivered_w)} delivered "
        f"({plan.efficiency:.1%}), lowest headroom {signed_percent(plan.headroom_factor - 1)}")
    return Diagram(f"{network.name}: power flow", subtitle, placed, drawn,
                   tuple(c * (width + GAP_IN) for c in range(max(column.values()) + 1)), width,
                   high - low, plan is not None, top)
