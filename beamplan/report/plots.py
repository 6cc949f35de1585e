"""Pictures with matplotlib: the power-flow diagram and the plan plots.

Every function returns a :class:`Picture`, which renders to SVG text or to
PNG / PDF bytes. matplotlib is imported only when a picture is asked for.
The figures are plain :class:`matplotlib.figure.Figure` objects, never
pyplot ones, so no display is needed, no global figure list grows and the
backend of a notebook session is left alone. Text stays text in SVG.

Plots of several plans take ``list[(case name, Plan)]``
(:func:`headroom_across_cases`), so that what-if and outage studies can
hand over their cases as they are.
"""

from __future__ import annotations

import functools
import io
import os
import re
import textwrap
from collections.abc import Callable, Iterable, Sequence
from dataclasses import replace
from typing import Any, ParamSpec

from beamplan.optimise.result import Plan
from beamplan.report import CAUTION
from beamplan.report.diagram import (
    FONT_PT,
    HEAT_BANDS,
    LINE_IN,
    PALETTE,
    WIDTH_MAX_PT,
    WIDTH_MIN_PT,
    Box,
    Diagram,
    write_atomic_bytes,
)
from beamplan.units import format_power

P = ParamSpec("P")

__all__ = ["CASE_STYLES", "STYLE", "Picture", "draw_diagram", "headroom_across_cases",
           "headroom_chart", "loss_steps", "losses_chart"]

#: matplotlib settings for every picture: text as text, no named fonts, no dates.
STYLE: dict[str, Any] = {
    "svg.fonttype": "none", "pdf.fonttype": 42, "text.parse_math": False,
    "font.family": "sans-serif", "font.sans-serif": ["DejaVu Sans"], "font.size": 7.5,
    "text.color": PALETTE["ink"], "axes.edgecolor": PALETTE["ink"],
    "axes.labelcolor": PALETTE["ink"], "xtick.color": PALETTE["ink"],
    "ytick.color": PALETTE["ink"], "hatch.linewidth": 0.6, "axes.spines.top": False,
    "axes.spines.right": False, "legend.frameon": False,
}
_METADATA: dict[str, dict[str, Any]] = {
    "svg": {"Date": None, "Creator": None, "Format": None, "Type": None},
    "pdf": {"CreationDate": None, "Creator": None, "Producer": None},
    "png": {"Software": None},
}
#: (colour, marker) of each case in plots of several plans; beamplan's own.
CASE_STYLES = (("#1b4f8a", "o"), ("#d9822b", "s"), ("#67b3d9", "^"), ("#b94f8c", "D"),
               ("#e6df7a", "v"), ("#3a3a3a", "X"))
_FONT_FAMILY = re.compile(r"font-family: [^;\"]*")
MAX_PIXELS = 16000  # per side of a PNG


class Picture:
    """A finished figure, rendered on demand.

    Examples
    --------
    >>> import beamplan
    >>> picture = headroom_chart(beamplan.plan("layouts/pilot-line.yaml"))
    >>> picture.svg().startswith("<?xml")
    True
    """

    def __init__(self, figure: Any, name: str) -> None:
        self.figure = figure
        self.name = name

    def data(self, fmt: str) -> bytes:
        """The picture as the bytes of an ``svg``, ``png`` or ``pdf`` file."""
        if fmt not in _METADATA:
            raise ValueError(f"unknown picture format {fmt!r}; expected svg, png or pdf")
        width, height = self.figure.get_size_inches()
        dpi = min(150.0, MAX_PIXELS / max(width, height, 1.0))
        buffer = io.BytesIO()
        with _rc(self.name):  # a salt per picture: unique ids when several share a page
            self.figure.savefig(buffer, format=fmt, dpi=dpi, metadata=_METADATA[fmt])
        data = buffer.getvalue()
        if fmt == "svg":  # the reader's own sans-serif font, named by no one
            data = _FONT_FAMILY.sub("font-family: sans-serif", data.decode()).encode()
        return data

    def svg(self) -> str:
        """The picture as SVG text (a standalone file)."""
        return self.data("svg").decode("utf-8")

    def save(self, path: str, inputs: Iterable[str] = ()) -> None:
        """Write the picture to ``path`` atomically, in the format its suffix names."""
        fmt = os.path.splitext(path)[1].lower().lstrip(".")
        write_atomic_bytes(path, self.data(fmt), inputs)


def _rc(salt: str = "beamplan") -> Any:
    """A context with :data:`STYLE` in force."""
    import matplotlib

    settings: Any = {**STYLE, "svg.hashsalt": salt}
    return matplotlib.rc_context(settings)


def _figure(width: float, height: float) -> Any:
    from matplotlib.figure import Figure

    with _rc():
        return Figure(figsize=(width, height))


def _styled(build: Callable[P, Picture]) -> Callable[P, Picture]:
    """Build a picture with :data:`STYLE` in force (fonts, ticks and spines read it)."""
    @functools.wraps(build)
    def wrapper(*args: P.args, **kwargs: P.kwargs) -> Picture:
        with _rc():
            return build(*args, **kwargs)
    return wrapper


def _canvas(width: float, height: float) -> tuple[Any, Any]:
    """A figure with one axes whose data units are inches, y downwards."""
    figure = _figure(width, height)
    ax = figure.add_axes((0, 0, 1, 1))
    ax.set_xlim(0, width)
    ax.set_ylim(height, 0)
    ax.set_axis_off()
    return figure, ax


# -- the diagram ----------------------------------------------------------------

_STYLES = {"element": "square,pad=0", "chain": "square,pad=0", "source": "rarrow,pad=0",
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


def _legend_items(d: Diagram) -> list[tuple[str, list[tuple[str, Any]]]]:
    """The legend's groups of (words, mark): only the box marks the diagram shows."""
    planned, paper = d.planned, PALETTE["paper"]
    shapes = [
        ("source: drawn of available" if planned else "source: available power",
         Box("", (), "source", (), PALETTE["source"])),
        ("element: id, kind, power in" if planned else "element: id, kind, gain",
         Box("", (), "element", (), PALETTE["heat-none"])),
        ("chain of gain elements", Box("", (), "chain", (), PALETTE["heat-none"])),
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
        return [("Beam, left to right", [("a link (no plan, so no powers)", 1.2)]),
                ("Boxes", marks)]
    top = d.max_power_w
    beams: list[tuple[str, Any]] = [
        (f"{format_power(top)}: the largest power", WIDTH_MAX_PT),
        (f"{format_power(top / 2)}", WIDTH_MAX_PT / 2),
        (f"{format_power(top * WIDTH_MIN_PT / WIDTH_MAX_PT)} or less", WIDTH_MIN_PT),
        ("carries no power", 0.0)]
    heat = [("no heat limit", PALETTE["heat-none"]),
            *((words, PALETTE[key]) for key, words, _ in HEAT_BANDS)]
    return [("Beam, left to right; width ∝ power", beams),
            ("Heat: absorbed ÷ heat limit", heat), ("Boxes", marks)]


def _draw_legend(ax: Any, d: Diagram, x0: float, y0: float) -> None:
    from matplotlib.patches import FancyBboxPatch

    groups = _legend_items(d)
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
        ax.text(x0, y0 + _legend_height(d) - 0.12, "Link labels: output port; power · share "
                "of the source output. Box text: power in, heat use, setting, what binds.",
                fontsize=FONT_PT)


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


# -- plan plots -----------------------------------------------------------------

def _axes(width: float, body: float, left: float, title: str, subtitle: str,
          legend: list[Any] | None = None, bottom: float = 0.55) -> tuple[Any, Any]:
    """A figure with a title, an optional legend row and one axes ``body`` inches high."""
    rows = 0 if legend is None else (len(legend) + 3) // 4
    top = 0.5 + 0.2 * rows
    height = body + top + bottom
    figure = _figure(width, height)
    ax = figure.add_axes((left / width, bottom / height, 1 - (left + 0.3) / width,
                          body / height))
    figure.text(0.12 / width, 1 - 0.18 / height, title, fontsize=9, fontweight="bold",
                va="center")
    figure.text(0.12 / width, 1 - 0.36 / height, subtitle, fontsize=7, va="center")
    if legend:
        figure.legend(handles=legend, loc="upper left", ncols=4, fontsize=6.5,
                      bbox_to_anchor=(0.06 / width, 1 - 0.45 / height), borderaxespad=0)
    return figure, ax


@_styled
def headroom_chart(plan: Plan) -> Picture:
    """Power delivered to every scanner against its need and its max_power.

    Examples
    --------
    >>> import beamplan
    >>> "litho-p3" in headroom_chart(beamplan.plan("layouts/pilot-line.yaml")).svg()
    True
    """
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    ink, rows = PALETTE["ink"], plan.scanners
    legend = [Patch(fc=PALETTE["beam"], ec=ink, label="delivered, need met"),
              Patch(fc=PALETTE["paper"], ec=ink, hatch="////", label="delivered, short"),
              Line2D([], [], ls="none", marker="|", ms=10, mew=2.2, color=ink, label="need"),
              Line2D([], [], ls="none", marker="D", ms=4.5, mfc=PALETTE["paper"], mec=ink,
                     label="max_power")]
    figure, ax = _axes(7.5, 0.3 + 0.26 * len(rows), _left(s.id for s in rows),
                       "Headroom per scanner", f"{plan.layout}, goal {plan.goal}: lowest "
                       f"headroom {plan.headroom_factor - 1:+.1%}", legend)
    for i, s in enumerate(rows):
        short = s.status != "met"
        ax.barh(i, s.delivered_w, 0.56, color=PALETTE["paper" if short else "beam"],
                edgecolor=ink, lw=0.6, hatch=("xxxx" if s.status == "cut off" else "////")
                if short else None)
        words = f"short {format_power(s.shortfall_w)}" if short else f"{s.headroom:+.1%}"
        ax.annotate(words, (max(s.delivered_w, s.need_w, s.max_w or 0.0), i),
                    xytext=(6, 0), textcoords="offset points", va="center", fontsize=6.5)
    ax.plot([s.need_w for s in rows], range(len(rows)), ls="none", marker="|", ms=13,
            mew=2.2, color=ink)
    capped = [(i, s.max_w) for i, s in enumerate(rows) if s.max_w is not None]
    ax.plot([m for _, m in capped], [i for i, _ in capped], ls="none", marker="D", ms=4.5,
            mfc=PALETTE["paper"], mec=ink, mew=1.0)
    ax.set_yticks(range(len(rows)), [s.id for s in rows])
    ax.set_ylim(len(rows) - 0.4, -0.6)
    ax.set_xlim(0, max([s.max_w or 0.0 for s in rows] + [s.delivered_w for s in rows] +
                       [s.need_w for s in rows] + [1.0]) * 1.18)
    ax.set_xlabel("power at the intermediate focus (W)")
    _grid(ax, "x")
    return Picture(figure, "headroom")


def _left(ids: Iterable[str]) -> float:
    """The left margin (inches) that fits the longest id as a tick label."""
    return 0.3 + 0.065 * max((len(i) for i in ids), default=4)


def _grid(ax: Any, axis: str) -> None:
    ax.grid(axis=axis, color=PALETTE["dump"], lw=0.5)
    ax.set_axisbelow(True)


def loss_steps(plan: Plan, by: str = "kind", top: int = 8) -> list[tuple[str, float]]:
    """The losses from source output to delivered power, largest first (W).

    ``by="kind"`` gives one step per element kind (dumps included);
    ``by="element"`` the ``top`` largest elements, then one step for all the
    others. The steps sum to the source output minus the delivered power.

    Examples
    --------
    >>> import beamplan
    >>> [name for name, _ in loss_steps(beamplan.plan("layouts/pilot-line.yaml"))][:2]
    ['mirror', 'splitter']
    """
    if by == "kind":
        steps = sorted([*plan.losses.by_kind, ("dump", plan.losses.dumped_w)],
                       key=lambda s: -s[1])
    elif by == "element":
        ranked = sorted(((e.id, e.absorbed_w) for e in plan.elements), key=lambda s: -s[1])
        rest = ranked[top:]
        steps = ranked[:top] + ([(f"{len(rest)} others", sum(w for _, w in rest))]
                                if rest else [])
    else:
        raise ValueError(f"by must be 'kind' or 'element', not {by!r}")
    floor = 1e-9 * max(plan.source_used_w, 1.0)  # round-off is not a loss
    return [step for step in steps if step[1] > floor]


@_styled
def losses_chart(plan: Plan, by: str = "kind", top: int = 8) -> Picture:
    """A waterfall from the source output down to the delivered power.

    Examples
    --------
    >>> import beamplan
    >>> "delivered" in losses_chart(beamplan.plan("layouts/pilot-line.yaml")).svg()
    True
    """
    ink, steps = PALETTE["ink"], loss_steps(plan, by, top)
    names = ["source output", *(name for name, _ in steps), "delivered"]
    what = "by element kind" if by == "kind" else f"the {top} largest elements and the rest"
    figure, ax = _axes(max(4.5, 1.3 + 0.62 * len(names)), 2.6, 0.75,
                       f"Where the source power goes, {what}",
                       f"{plan.layout}: {plan.efficiency:.1%} of the source output is "
                       "delivered; dotted bars are absorbed as heat or dumped", bottom=0.95)
    level = plan.source_used_w
    ax.bar(0, level, 0.62, color=PALETTE["beam"], edgecolor=ink, lw=0.6)
    for i, (_, watts) in enumerate(steps, start=1):
        ax.bar(i, watts, 0.62, bottom=level - watts, color=PALETTE["heat-3"], edgecolor=ink,
               lw=0.6, hatch="..")
        ax.plot([i - 1.31, i + 0.31], [level, level], color=ink, lw=0.5, ls=":")
        ax.annotate(f"−{format_power(watts)}", (i, level), xytext=(0, 2),
                    textcoords="offset points", ha="center", va="bottom", fontsize=6)
        level -= watts
    end = len(names) - 1
    ax.bar(end, plan.delivered_w, 0.62, color=PALETTE["met"], edgecolor=ink, lw=0.6)
    for i, watts in ((0, plan.source_used_w), (end, plan.delivered_w)):
        ax.annotate(format_power(watts), (i, watts), xytext=(0, 2), textcoords="offset points",
                    ha="center", va="bottom", fontsize=6)
    ax.set_xticks(range(len(names)), names, rotation=30, ha="right")
    ax.set_ylabel("power (W)")
    ax.set_ylim(0, max(plan.source_used_w, 1.0) * 1.12)
    _grid(ax, "y")
    return Picture(figure, f"losses-{by}")


@_styled
def headroom_across_cases(cases: Sequence[tuple[str, Plan]]) -> Picture:
    """Every scanner's headroom in several plans (what-if cases, outages).

    A scanner missing from a case (taken out by it) has no mark there.

    Examples
    --------
    >>> import beamplan
    >>> cases = [(goal, beamplan.plan("layouts/pilot-line.yaml", goal=goal))
    ...          for goal in ("headroom", "min-source")]
    >>> "min-source" in headroom_across_cases(cases).svg()
    True
    """
    from matplotlib.lines import Line2D

    ids = list(dict.fromkeys(s.id for _, plan in cases for s in plan.scanners))
    styles = [CASE_STYLES[k % len(CASE_STYLES)] for k in range(len(cases))]
    legend = [Line2D([], [], ls="none", marker=marker, ms=5, mfc=colour, mec=PALETTE["ink"],
                     mew=0.5, label=name) for (name, _), (colour, marker) in zip(cases, styles,
                                                                                   strict=True)]
    figure, ax = _axes(7.5, 0.4 + 0.3 * len(ids), _left(ids), "Headroom across cases",
                       f"{len(cases)} cases; one mark per case and scanner; 0 % is the need",
                       legend)
    row = {sid: i for i, sid in enumerate(ids)}
    spread = 0.5 / max(len(cases), 1)
    for k, ((_, plan), mark) in enumerate(zip(cases, legend, strict=True)):
        ax.plot([100 * s.headroom for s in plan.scanners],
                [row[s.id] + (k - (len(cases) - 1) / 2) * spread for s in plan.scanners],
                ls="none", marker=mark.get_marker(), ms=5, mfc=mark.get_markerfacecolor(),
                mec=PALETTE["ink"], mew=0.5)
    ax.axvline(0, color=PALETTE["ink"], lw=0.9)
    ax.set_yticks(range(len(ids)), ids)
    ax.set_ylim(len(ids) - 0.5, -0.5)
    ax.set_xlabel("headroom: delivered ÷ need − 1 (%)")
    _grid(ax, "x")
    return Picture(figure, "cases")
