"""Pictures with matplotlib: the :class:`Picture` and the plan plots.

Every function returns a :class:`Picture`, which renders to SVG text or to
PNG / PDF bytes; the power-flow diagram is drawn by
:func:`beamplan.report.draw.draw_diagram`. matplotlib is imported only when
a picture is asked for. The figures are plain
:class:`matplotlib.figure.Figure` objects, never pyplot ones, so no display
is needed, no global figure list grows and the backend of a notebook
session is left alone. Text stays text in SVG.

Plots of several plans take ``list[(case name, Plan)]``
(:func:`headroom_across_cases`), so that what-if studies can hand over
their cases as they are; :func:`outage_impact` takes a sweep's report.
"""

from __future__ import annotations

import functools
import io
import os
import re
from collections.abc import Callable, Iterable, Sequence
from typing import TYPE_CHECKING, Any, ParamSpec

from beamplan.optimise.result import Plan
from beamplan.report.document import signed_percent
from beamplan.report.files import write_atomic
from beamplan.report.palette import PALETTE
from beamplan.units import format_power
from beamplan.vocabulary import ScannerStatus

if TYPE_CHECKING:
    from beamplan.analyses.outages import OutageResult, SweepReport

P = ParamSpec("P")

__all__ = ["CASE_STYLES", "STYLE", "Picture", "case_style", "headroom_across_cases",
           "headroom_chart", "loss_steps", "losses_chart", "outage_impact"]

#: matplotlib settings for every picture: text as text, no named fonts, no dates.
STYLE: dict[str, Any] = {
    "svg.fonttype": "none", "pdf.fonttype": 42, "text.parse_math": False,
    "font.family": "sans-serif", "font.sans-serif": ["DejaVu Sans"], "font.size": 7.5,
    "text.color": PALETTE["ink"], "axes.edgecolor": PALETTE["ink"],
    "axes.labelcolor": PALETTE["ink"], "xtick.color": PALETTE["ink"],
    "ytick.color": PALETTE["ink"], "hatch.linewidth": 0.6, "axes.spines.top": False,
    "axes.spines.right": False, "legend.frameon": False,
    "axes.unicode_minus": False,  # one minus sign in every report: ASCII
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
        write_atomic(path, self.data(fmt), inputs)


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


# -- plan plots -----------------------------------------------------------------

def _axes(width: float, body: float, left: float, title: str, subtitle: str,
          legend: list[Any] | None = None, bottom: float = 0.55, right: float = 0.3
          ) -> tuple[Any, Any]:
    """A figure with a title, an optional legend row and one axes ``body`` inches high."""
    rows = 0 if legend is None else (len(legend) + 3) // 4
    top = 0.5 + 0.2 * rows
    height = body + top + bottom
    figure = _figure(width, height)
    ax = figure.add_axes((left / width, bottom / height, 1 - (left + right) / width,
                          body / height))
    figure.text(0.12 / width, 1 - 0.18 / height, title, fontsize=9, fontweight="bold",
                va="center")
    figure.text(0.12 / width, 1 - 0.36 / height, subtitle, fontsize=7, va="center")
    if legend:  # matplotlib fills the columns first: reorder so that the rows read in order
        legend = [legend[i] for c in range(4) for i in range(c, len(legend), 4)]
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
                       f"headroom {signed_percent(plan.headroom_factor - 1)}", legend)
    for i, s in enumerate(rows):
        short = s.status != ScannerStatus.MET
        ax.barh(i, s.delivered_w, 0.56, color=PALETTE["paper" if short else "beam"],
                edgecolor=ink, lw=0.6, hatch=("xxxx" if s.status == ScannerStatus.CUT_OFF
                                                   else "////")
                if short else None)
        words = f"short {format_power(s.shortfall_w)}" if short else signed_percent(s.headroom)
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
        ax.annotate(f"-{format_power(watts)}", (i, level), xytext=(0, 2),
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


def case_style(k: int) -> tuple[str, str]:
    """The (colour, marker) of the ``k``-th case: colours cycle, and the markers shift
    by one every round of colours, so that 36 cases stay apart.

    Examples
    --------
    >>> case_style(0) == CASE_STYLES[0], case_style(6)
    (True, ('#1b4f8a', 's'))
    """
    n = len(CASE_STYLES)
    return CASE_STYLES[k % n][0], CASE_STYLES[(k + k // n) % n][1]


@_styled
def headroom_across_cases(cases: Sequence[tuple[str, Plan]]) -> Picture:
    """Every scanner's headroom in several plans (what-if cases, outages).

    A scanner missing from a case (dropped by it) or out of service in it has
    no mark there; a scanner cut off sits at −100 %.

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
    styles = [case_style(k) for k in range(len(cases))]
    legend = [Line2D([], [], ls="none", marker=marker, ms=5, mfc=colour, mec=PALETTE["ink"],
                     mew=0.5, label=name) for (name, _), (colour, marker) in zip(cases, styles,
                                                                                   strict=True)]
    figure, ax = _axes(7.5, 0.4 + 0.3 * len(ids), _left(ids), "Headroom across cases",
                       f"{len(cases)} cases; one mark per case and scanner; 0 % is the need; "
                       "no mark: dropped or out of service", legend)
    row = {sid: i for i, sid in enumerate(ids)}
    spread = 0.5 / max(len(cases), 1)
    for k, ((_, plan), mark) in enumerate(zip(cases, legend, strict=True)):
        serving = [s for s in plan.scanners if s.status != ScannerStatus.OUT_OF_SERVICE]
        ax.plot([100 * s.headroom for s in serving],
                [row[s.id] + (k - (len(cases) - 1) / 2) * spread for s in serving],
                ls="none", marker=mark.get_marker(), ms=5, mfc=mark.get_markerfacecolor(),
                mec=PALETTE["ink"], mew=0.5)
    ax.axvline(0, color=PALETTE["ink"], lw=0.9)
    ax.set_yticks(range(len(ids)), ids)
    ax.set_ylim(len(ids) - 0.5, -0.5)
    ax.set_xlabel("headroom: delivered ÷ need − 1 (%)")
    _grid(ax, "x")
    return Picture(figure, "cases")


def _impact_words(r: OutageResult) -> str:
    """What an outage does, in a few words: whom it cuts off or leaves short, power lost."""
    words = []
    if r.cut_off:
        words.append("cuts off " + ", ".join(r.cut_off[:3]) +
                     (f" +{len(r.cut_off) - 3} more" if len(r.cut_off) > 3 else ""))
    if len(r.short) > len(r.cut_off):
        words.append(f"{len(r.short) - len(r.cut_off)} short")
    if r.delivered_lost_w > 0:
        words.append(f"-{format_power(r.delivered_lost_w)} delivered")
    return "; ".join(words) or "no loss"


@_styled
def outage_impact(report: SweepReport, top: int = 20) -> Picture:
    """The ``top`` outages of a sweep in its ranking, as bars of the headroom they cost.

    A bar is the lowest headroom of the base minus that of the case (points
    of % of need); cross-hatched when the outage cuts a scanner off, hatched
    when it leaves one short but fed. The words beside each bar name the
    scanners cut off, how many others fall short and the delivered power lost.

    Examples
    --------
    >>> from beamplan.analyses.outages import outage_cases, run_sweep
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> "cuts off litho-p2" in outage_impact(run_sweep(net, outage_cases(net))).svg()
    True
    """
    from matplotlib.patches import Patch

    ink, rows = PALETTE["ink"], report.results[:max(top, 0)]
    words = [_impact_words(r) for r in rows]
    marks = [(ScannerStatus.MET, PALETTE["beam"], None),
             (ScannerStatus.SHORT, PALETTE["paper"], "////"),
             (ScannerStatus.CUT_OFF, PALETTE["paper"], "xxxx")]
    legend = [Patch(fc=fill, ec=ink, hatch=hatch, label=f"every scanner {name}"
                    if name == ScannerStatus.MET else f"a scanner {name}")
              for name, fill, hatch in marks]
    shown = f"the top {len(rows)} of {report.finished}" if len(rows) < report.finished \
        else f"all {report.finished}"
    right = 0.4 + 0.052 * max((len(w) for w in words), default=0)
    figure, ax = _axes(max(7.5, 4.5 + right), 0.3 + 0.26 * max(len(rows), 1),
                       _left(r.label for r in rows), f"Outage impact: {report.layout}",
                       f"{shown} outage cases, ranked: scanners cut off, then short, then "
                       "headroom lost; base lowest headroom "
                       f"{signed_percent(report.base.headroom_factor - 1)}" +
                       (" (sweep interrupted)" if report.interrupted else ""), legend,
                       right=right)
    lost = [100 * r.headroom_lost for r in rows]
    for i, (r, value, text) in enumerate(zip(rows, lost, words, strict=True)):
        _, fill, hatch = marks[2 if r.cut_off else 1 if r.short else 0]
        ax.barh(i, value, 0.56, color=fill, edgecolor=ink, lw=0.6, hatch=hatch)
        ax.annotate(text, (1, i), xycoords=("axes fraction", "data"), xytext=(6, 0),
                    textcoords="offset points", va="center", fontsize=6.5, annotation_clip=False)
    if not rows:
        ax.text(0.5, 0.5, "no outage cases", transform=ax.transAxes, ha="center", va="center")
    ax.axvline(0, color=ink, lw=0.9)
    ax.set_yticks(range(len(rows)), [r.label for r in rows])
    ax.set_ylim(max(len(rows), 1) - 0.4, -0.6)
    low, high = min([0.0, *lost]), max([0.0, *lost])
    pad = 0.05 * (high - low) or 1.0
    ax.set_xlim(low - (pad if low < 0 else 0.0), high + pad)
    ax.set_xlabel("headroom lost: base lowest headroom − case lowest headroom (points of % "
                  "of need)")
    _grid(ax, "x")
    return Picture(figure, "outages")
