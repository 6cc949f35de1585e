"""Drawing the power-flow diagram with matplotlib.

:func:`draw_diagram` draws a laid-out :class:`~beamplan.report.diagram.Diagram`
(boxes, wires, link labels), its legend and the safety caution, and returns a
:class:`~beamplan.report.plots.Picture`. The layout and every mark are decided
in :mod:`beamplan.report.diagram`; this module only draws them. matplotlib is
imported only when a diagram is drawn.
"""

from __future__ import annotations

import textwrap
from dataclasses import replace
from typing import Any

from beamplan.network.graph import Network
from beamplan.optimise.result import Plan
from beamplan.report import CAUTION
from beamplan.report.diagram import (
    FONT_PT,
    LINE_IN,
    WIDTH_MAX_PT,
    WIDTH_MIN_PT,
    Box,
    Diagram,
    diagram_model,
)
from beamplan.report.palette import HEAT_BANDS, PALETTE
from beamplan.report.plots import Picture, _figure, _styled
from beamplan.units import format_power

__all__ = ["diagram_picture", "draw_diagram"]


def _canvas(width: float, height: float) -> tuple[Any, Any]:
    """A figure with one axes whose data units are inches, y downwards."""
    figure = _figure(width, height)
    ax = figure.add_axes((0, 0, 1, 1))
    ax.set_xlim(0, width)
    ax.set_ylim(height, 0)
    ax.set_axis_off()
    return figure, ax



_STYLES = {"element": "square,pad=0", "chain": "square,pad=0", "fold": "square,pad=0",
           "source": "rarrow,pad=0",
           "dump": "sawtooth,pad=0,tooth_size=0.05", "scanner": "round,pad=0,rounding_size=0.07"}


def _draw_box(ax: Any, box: Box, x: float, y: float, width: float) -> None:
    from matplotlib.patches import FancyBboxPatch

    top, h = y - box.height / 2, box.height
    if box.binds:  # a ring, apart from the box, so it never touches a dark fill
        ax.add_patch(FancyBboxPatch((x - width / 2 - 0.05, top - 0.05), width + 0.1, h + 0.1,
                                    "square,pad=0", fc="none", ec=PALETTE["bind"], lw=2.6,
                                    zorder=2))
    corner, style = (x - width / 2, top), _STYLES[box.shape]
    ax.add_patch(FancyBboxPatch(corner, width, h, style, fc=box.fill, hatch=box.hatch, lw=0,
                                ec=PALETTE["idle"], zorder=3))  # a grey hatch, no border
    ax.add_patch(FancyBboxPatch(corner, width, h, style, fc="none", ec=PALETTE["ink"], lw=0.8,
                                ls="--" if box.dashed else "-", zorder=3,
                                gid=f"node-{box.key}" if box.key else None))
    if box.shape == "chain":
        ax.add_patch(FancyBboxPatch((x - width / 2 + 0.03, top + 0.03), width - 0.06, h - 0.06,
                                    "square,pad=0", fc="none", ec=PALETTE["ink"], lw=0.5,
                                    zorder=3))
    if box.shape == "fold":  # a heavy left edge: many boxes stand behind this one
        ax.plot([x - width / 2 + 0.025] * 2, [top, top + h], color=PALETTE["ink"], lw=3.5,
                solid_capstyle="butt", zorder=3)
    colour = PALETTE["paper"] if box.fill == PALETTE["heat-4"] else PALETTE["ink"]
    for i, line in enumerate(box.lines):
        ax.text(x, top + 0.05 + LINE_IN * (i + 0.5), line, ha="center", va="center",
                fontsize=FONT_PT, color=colour, zorder=4,
                fontweight="bold" if i == 0 and box.shape != "chain" else "normal",
                bbox={"boxstyle": "square,pad=0.25", "fc": PALETTE["paper"], "ec": "none"}
                if box.hatch else None)


def _wire_path(d: Diagram, xs: list[float], ys: list[float], y0: float, y1: float) -> Any:
    from matplotlib.path import Path

    half = d.box_width / 2
    ys = [y0, *ys[1:-1], y1]
    verts, codes = [(xs[0] + half, ys[0])], [Path.MOVETO]
    for i in range(1, len(xs)):  # an S-bend over the first half of a gap, then straight
        xa, ya, xb, yb = xs[i - 1] + half, ys[i - 1], xs[i] - half, ys[i]
        bend = xa + (xb - xa) / 2
        verts += [((xa + bend) / 2, ya), ((xa + bend) / 2, yb), (bend, yb), (xb, yb)]
        codes += [Path.CURVE4] * 3 + [Path.LINETO]
        if i < len(xs) - 1:  # a column passed by: straight through
            verts.append((xs[i] + half, yb))
            codes.append(Path.LINETO)
    return Path(verts, codes)


def _slots(d: Diagram) -> dict[tuple[int, str], float]:
    """Where each wire meets its boxes: ports spread along the box edge, in row order."""
    out: dict[tuple[int, str], float] = {}
    for end, near in (("tail", 1), ("head", -2)):
        groups: dict[str, list[Any]] = {}
        for w in d.wires:
            groups.setdefault(getattr(w, end), []).append(w)
        for key, wires in groups.items():
            wires.sort(key=lambda w: w.ys[near])
            step = min(0.09, 0.8 * d.boxes[key].height / len(wires))
            for i, w in enumerate(wires):
                out[(w.index, end)] = d.boxes[key].y + (i - (len(wires) - 1) / 2) * step
    return out


def _legend_items(d: Diagram, flow: str = "left to right"
                  ) -> list[tuple[str, list[tuple[str, Any]]]]:
    """The legend's groups of (words, mark): only the box marks the diagram shows."""
    planned, paper = d.planned, PALETTE["paper"]
    shapes = [
        ("source: drawn of available" if planned else "source: available power",
         Box("", (), "source", (), PALETTE["source"])),
        ("element: id, kind, power in" if planned else "element: id, kind, gain",
         Box("", (), "element", (), PALETTE["heat-none"])),
        ("chain of gain elements", Box("", (), "chain", (), PALETTE["heat-none"])),
        ("folded subtree: totals, worst case", Box("", (), "fold", (), PALETTE["heat-none"])),
        ("dump", Box("", (), "dump", (), PALETTE["dump"])),
        ("scanner: need met, headroom" if planned else "scanner: id, need",
         Box("", (), "scanner", (), PALETTE["met"])),
        ("scanner short of its need", Box("", (), "scanner", (), paper, "////", True)),
        ("scanner cut off (no power)", Box("", (), "scanner", (), paper, "xxxx", True)),
        ("ring: a binding constraint", Box("", (), "element", (), paper, binds=("x",)))]
    shown = {(b.shape, b.hatch) for b in d.boxes.values()} | \
        ({("element", None)} if d.boxes else set())
    ringed = any(b.binds for b in d.boxes.values())
    marks: list[tuple[str, Any]] = [(words, box) for words, box in shapes if (
        ringed if box.binds else (box.shape, box.hatch) in shown)]
    if not planned:
        return [(f"Beam, {flow}", [("a link (no plan, so no powers)", 1.2)]),
                ("Boxes", marks)]
    top = d.max_power_w
    beams: list[tuple[str, Any]] = [
        (f"{format_power(top)}: the largest power", WIDTH_MAX_PT),
        (f"{format_power(top / 2)}", WIDTH_MAX_PT / 2),
        (f"{format_power(top * WIDTH_MIN_PT / WIDTH_MAX_PT)} or less", WIDTH_MIN_PT),
        ("carries no power", 0.0)]
    heat = [("no heat limit", PALETTE["heat-none"]),
            *((words, PALETTE[key]) for key, words, _ in HEAT_BANDS)]
    return [(f"Beam, {flow}; width ∝ power", beams),
            ("Heat: absorbed ÷ heat limit", heat), ("Boxes", marks)]


def _draw_legend(ax: Any, d: Diagram, x0: float, y0: float, flow: str = "left to right",
                 note: str = "") -> None:
    from matplotlib.patches import FancyBboxPatch

    groups = _legend_items(d, flow)
    for g, (title, items) in enumerate(groups):
        x = x0 + g * 2.9
        ax.text(x, y0, title, fontsize=FONT_PT + 0.5, fontweight="bold", va="top")
        for i, (words, mark) in enumerate(items):
            y = y0 + 0.24 + i * 0.2
            if isinstance(mark, Box):
                _draw_box(ax, replace(mark, height=0.13), x + 0.25, y, 0.42)
            elif isinstance(mark, str):
                ax.add_patch(FancyBboxPatch((x + 0.04, y - 0.065), 0.42, 0.13, "square,pad=0",
                                            fc=mark, ec=PALETTE["ink"], lw=0.6))
            else:
                ax.plot([x + 0.04, x + 0.46], [y, y], lw=max(mark, WIDTH_MIN_PT),
                        ls=":" if mark == 0 else "-", solid_capstyle="butt",
                        color=PALETTE["idle"] if mark == 0 else PALETTE["beam"])
            ax.text(x + 0.58, y, words, fontsize=FONT_PT, va="center")
    if d.planned:
        ax.text(x0, y0 + _legend_height(d) - 0.12, note or "Link labels: output port; power "
                "· share of the source output. Box text: power in, heat use, setting, what "
                "binds.", fontsize=FONT_PT)


def _legend_height(d: Diagram) -> float:
    rows = max(len(items) for _, items in _legend_items(d))
    return 0.3 + rows * 0.2 + (0.25 if d.planned else 0.0)


@_styled
def draw_diagram(d: Diagram) -> Picture:
    """Draw a laid-out :class:`~beamplan.report.diagram.Diagram` with legend and caution.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> from beamplan.report.diagram import diagram_model
    >>> net = build_network(beamplan.load("layouts/pilot-line.yaml"))
    >>> bool(draw_diagram(diagram_model(net)).figure.get_size_inches()[0] > 8)
    True
    """
    margin, head = 0.35, 0.6
    groups = len(_legend_items(d))
    width = max(d.x[-1] + d.box_width + 2 * margin + 0.2, groups * 2.9 + 2 * margin)
    legend_top = head + d.height + 0.45
    caution = textwrap.wrap(CAUTION, int(width * 72 / (6.0 * 0.55)))
    height = legend_top + _legend_height(d) + 0.15 * len(caution) + 0.35
    figure, ax = _canvas(width, height)
    ax.text(margin, 0.25, d.title, fontsize=11, fontweight="bold", va="center")
    ax.text(margin, 0.45, d.subtitle, fontsize=7.5, va="center")
    xs = [margin + d.box_width / 2 + x for x in d.x]
    slots = _slots(d)
    for w in d.wires:
        from matplotlib.patches import PathPatch

        first, last = d.boxes[w.tail].column, d.boxes[w.head].column
        ys = [head + y for y in w.ys]
        path = _wire_path(d, xs[first:last + 1], ys, head + slots[(w.index, "tail")],
                          head + slots[(w.index, "head")])
        idle = w.power_w == 0
        ax.add_patch(PathPatch(path, fill=False, lw=w.width_pt, capstyle="butt", zorder=1,
                               ec=PALETTE["idle" if idle else "beam"], ls=":" if idle else "-",
                               gid=f"link-{w.index}"))
        if w.label:
            xa, xb = xs[first] + d.box_width / 2, xs[first + 1] - d.box_width / 2
            yb = ys[1] if last > first + 1 else head + slots[(w.index, "head")]
            ax.text(xa + 0.68 * (xb - xa), yb - w.width_pt / 144 - 0.015, w.label,
                    ha="center", va="bottom", fontsize=FONT_PT - 1, zorder=5,
                    linespacing=1.1, bbox={"boxstyle": "square,pad=0.08", "ec": "none",
                                           "fc": PALETTE["paper"], "alpha": 0.85})
    for box in d.boxes.values():
        _draw_box(ax, box, xs[box.column], head + box.y, d.box_width)
    _draw_legend(ax, d, margin, legend_top)
    ax.text(margin, height - 0.2 - 0.15 * len(caution), "\n".join(caution), fontsize=6.0,
            style="italic", va="top", color=PALETTE["ink"])
    return Picture(figure, "diagram")


def diagram_picture(network: Network, plan: Plan | None = None, *,
                    group_chains: bool = False) -> Picture:
    """The diagram drawn with matplotlib, with its legend and the safety caution.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(beamplan.load("layouts/pilot-line.yaml"))
    >>> "litho-p2" in diagram_picture(net, beamplan.plan(net)).svg()
    True
    """
    return draw_diagram(diagram_model(network, plan, group_chains=group_chains))
