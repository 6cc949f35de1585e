"""Drawing the summary diagram (:mod:`beamplan.report.summary_diagram`) with matplotlib.

The outline runs top to bottom: a bus line leaves each box at its left edge
and runs down to the last box it feeds; each branch joins it with a short
stub. Boxes, legend and caution are those of the detailed diagram
(:mod:`beamplan.report.draw`).
"""

from __future__ import annotations

import textwrap
from typing import Any

from beamplan.network.graph import Network
from beamplan.optimise.result import Plan
from beamplan.report import CAUTION
from beamplan.report.diagram import Diagram
from beamplan.report.draw import _canvas, _draw_box, _draw_legend, _legend_height
from beamplan.report.palette import PALETTE
from beamplan.report.plots import Picture, _styled
from beamplan.report.summary_diagram import BOX_BUDGET, INDENT_IN, Summary, summary_model

__all__ = ["draw_summary", "summary_picture"]

_NOTE = ("Box text: power in, delivered, worst headroom, hottest heat use. "
         "beamplan draw --focus ID draws one subtree; --detail draws every box.")


def _legend_diagram(s: Summary) -> Diagram:
    return Diagram(s.title, s.subtitle, {str(i): r.box for i, r in enumerate(s.rows)}, (),
                   (0.0,), s.box_width, s.height, s.planned, s.max_power_w)


@_styled
def draw_summary(s: Summary) -> Picture:
    """Draw a laid-out :class:`~beamplan.report.summary_diagram.Summary`.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> from beamplan.report.summary_diagram import summary_model
    >>> net = build_network(beamplan.load("layouts/two-bay.yaml"))
    >>> picture = draw_summary(summary_model(net, budget=8))
    >>> bool(picture.figure.get_size_inches()[1] > 3)
    True
    """
    margin, head = 0.35, 0.7
    legend = _legend_diagram(s)
    indents = max((r.indent for r in s.rows), default=0)
    width = max(margin * 2 + indents * INDENT_IN + s.box_width, 3 * 2.9 + 2 * margin)
    legend_top = head + s.height + 0.45
    caution = textwrap.wrap(CAUTION, int(width * 72 / (6.0 * 0.55)))
    height = legend_top + _legend_height(legend) + 0.15 * len(caution) + 0.35
    figure, ax = _canvas(width, height)
    ax.text(margin, 0.25, s.title, fontsize=11, fontweight="bold", va="center")
    ax.text(margin, 0.48, s.subtitle, fontsize=7.5, va="center")

    def left(indent: int) -> float:
        return margin + indent * INDENT_IN

    for row in s.rows:
        if row.parent < 0:
            continue
        up = s.rows[row.parent]
        x = left(up.indent) + INDENT_IN / 2
        idle = row.power_w == 0
        style: dict[str, Any] = {"lw": row.width_pt, "solid_capstyle": "butt", "zorder": 1,
                                 "color": PALETTE["idle" if idle else "beam"],
                                 "ls": ":" if idle else "-"}
        top = head + up.y + up.box.height / 2
        if row.indent == up.indent:  # straight on down
            ax.plot([x, x], [top, head + row.y - row.box.height / 2], **style)
        else:  # down the bus, then a stub into the branch
            ax.plot([x, x, left(row.indent)], [top, head + row.y, head + row.y], **style)
    for row in s.rows:
        _draw_box(ax, row.box, left(row.indent) + s.box_width / 2, head + row.y, s.box_width)
    _draw_legend(ax, legend, margin, legend_top, "top to bottom", _NOTE)
    ax.text(margin, height - 0.2 - 0.15 * len(caution), "\n".join(caution), fontsize=6.0,
            style="italic", va="top", color=PALETTE["ink"])
    return Picture(figure, "summary")


def summary_picture(network: Network, plan: Plan | None = None, *,
                    budget: int = BOX_BUDGET) -> Picture:
    """The summary drawn with matplotlib, with its legend and the safety caution.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(beamplan.load("layouts/two-bay.yaml"))
    >>> "a-fold and below" in summary_picture(net, beamplan.plan(net), budget=8).svg()
    True
    """
    return draw_summary(summary_model(network, plan, budget=budget))
