"""The HTML page of an ageing study and its plot: headroom over time per scanner."""

from __future__ import annotations

import datetime
import os
from typing import Any

from beamplan.analyses.ageing import Runway
from beamplan.analyses.maintenance import MaintenancePlan
from beamplan.report.ageing_view import ILLUSTRATIVE, _check_words, _runway_words
from beamplan.report.diagram import PALETTE
from beamplan.report.html import facts, figure, inline_svg, page, pct, table
from beamplan.report.plots import Picture, _figure, _grid, _styled

__all__ = ["ageing_html", "headroom_over_time"]

_SECTIONS = [("summary", "Summary"), ("chart", "Headroom over time"),
             ("schedule", "Maintenance schedule"), ("provenance", "Provenance")]


@_styled
def headroom_over_time(runway: Runway, title: str = "Headroom over time") -> Picture:
    """Each scanner's headroom against hours, maintenance events as vertical lines.

    Examples
    --------
    >>> from beamplan.analyses.ageing import Sample
    >>> r = Runway(None, 10.0, 5.0, 1.0, None, None, None, (), (
    ...     Sample(0.0, {"s1": 0.1}, {}, True), Sample(10.0, {"s1": 0.05}, {}, True)), 2)
    >>> headroom_over_time(r).svg().startswith("<?xml")
    True
    """
    fig = _figure(7.5, 3.6)
    ax = fig.add_axes((0.09, 0.14, 0.68, 0.74))
    ids = list(runway.samples[0].headroom)
    for k, sid in enumerate(ids):
        xs = [s.hour for s in runway.samples if sid in s.headroom]
        ys = [100.0 * s.headroom[sid] for s in runway.samples if sid in s.headroom]
        ax.plot(xs, ys, lw=1.0, ls=("-", "--", ":", "-.")[k % 4], label=sid)
    for hour in sorted({e.hour for e in runway.events}):
        ax.axvline(hour, color=PALETTE["ink"], lw=0.5, alpha=0.5)
    ax.axhline(0.0, color=PALETTE["ink"], lw=1.0)
    if runway.runway_h is not None and not runway.events:
        ax.axvline(runway.runway_h, color=PALETTE["ink"], lw=1.2, ls="--")
        ax.annotate(f"runway {runway.runway_h:,.0f} h", (runway.runway_h, 0.0),
                    xytext=(4, 6), textcoords="offset points", fontsize=6.5)
    ax.set_xlabel("hours from the start" + (" (vertical lines: maintenance windows used)"
                                             if runway.events else ""))
    ax.set_ylabel("headroom (%)")
    ax.set_title(title, loc="left")
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=6.5, frameon=False)
    _grid(ax, "y")
    return Picture(fig, "ageing")


def _schedule(runway: Runway, plan: MaintenancePlan | None) -> str:
    if plan is None:
        return "<p>No maintenance plan was asked for.</p>"
    if not plan.feasible:
        return "<p>No schedule of the actions given holds every need over the horizon.</p>"
    unit = plan.currency if plan.objective == "cost" else "h downtime"
    skips = {(s.element, s.window, s.action): s for s in plan.skips}
    rows = []
    for d in plan.actions:
        s = skips.get((d.element, d.window, d.action))
        words = "-" if s is None else ("no schedule holds without it"
                                       if s.objective_without is None else
                                       f"+{s.increase or 0:,.0f} {unit}")
        rows.append([str(d.window), f"{d.hour:,.0f}", runway.date(d.hour) or "-", d.element,
                     d.action, f"{d.cost:,.0f}", f"{d.downtime_h:,.0f}", words])
    head = table(f"{len(plan.actions)} actions, {plan.total_cost:,.0f} {plan.currency}, "
                 f"{plan.total_downtime_h:,.0f} h downtime (objective: {plan.objective})",
                 ["window", "hour", "date", "optic", "action", f"cost ({plan.currency})",
                  "downtime (h)", "best plan without it"], rows, numeric=(0, 1, 5, 6))
    chart = ""
    if plan.check is not None:
        chart = figure(inline_svg(headroom_over_time(plan.check, "Headroom with the schedule"),
                                  "check", "headroom over time with the schedule"),
                       "The schedule simulated step by step: " + _check_words(plan), "plot")
    return head + "\n" + chart


def ageing_html(runway: Runway, plan: MaintenancePlan | None, *, layout_path: str,
                ageing_path: str, version: str, illustrative: bool,
                date: datetime.date | str | None = None) -> str:
    """An ageing study as one self-contained HTML page."""
    when = date if isinstance(date, str) else (date or datetime.date.today()).isoformat()
    lows = runway.min_headroom
    summary: list[tuple[str, str]] = [("runway", _runway_words(runway))]
    summary += [(f"lowest headroom, {sid}", pct(h)) for sid, h in lows.items()]
    if illustrative:
        summary.append(("rates", ILLUSTRATIVE))
    body: dict[str, Any] = {
        "summary": facts(summary),
        "chart": figure(inline_svg(headroom_over_time(runway), "runway",
                                   "headroom over time without maintenance"),
                        "Each scanner's headroom (delivered ÷ need − 1) without maintenance, "
                        "re-planned at each step; 0 % is the need.", "plot"),
        "schedule": _schedule(runway, plan),
        "provenance": facts([("layout", os.path.basename(layout_path)),
                             ("ageing file", os.path.basename(ageing_path)),
                             ("beamplan", version), ("date", when)]),
    }
    status = _runway_words(runway)
    return page(f"beamplan: ageing of {runway.samples[0] and os.path.basename(layout_path)}",
                "Ageing, runway and maintenance", f"{status}; {when}", _SECTIONS, body,
                f"beamplan {version}; {when}.")
