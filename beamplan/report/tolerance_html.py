"""The tolerance run as one self-contained HTML page (the report frame of report/html.py)."""

from __future__ import annotations

import datetime
import os

from beamplan.analyses.tolerance_summary import ToleranceSummary
from beamplan.layout.tolerances import Tolerance
from beamplan.report.html import facts, figure, inline_svg, page, pct, table
from beamplan.report.tolerance_doc import SOBOL_SOURCE, WILSON_SOURCE
from beamplan.report.tolerance_plots import headroom_cdf, sensitivity_chart
from beamplan.report.tolerance_view import percent

__all__ = ["tolerance_html"]

_SECTIONS = (("summary", "Summary"), ("scanners", "Scanners"),
             ("sensitivity", "What to tighten first"), ("tolerances", "Tolerances"),
             ("method", "Method"))


def tolerance_html(summary: ToleranceSummary, *, layout_path: str, tolerance_path: str | None,
                   version: str, date: str | None = None) -> str:
    """The report as the text of one HTML file.

    Examples
    --------
    >>> import numpy as np
    >>> from beamplan.analyses.tolerance import EDGES, Tally, ToleranceRun
    >>> from beamplan.analyses.tolerance_model import ToleranceModel
    >>> from beamplan.analyses.tolerance_summary import summarise
    >>> h = np.zeros((1, len(EDGES) - 1), dtype=int); h[0, 1050] = 5
    >>> run = ToleranceRun("x", "fixed", "random", 0, 5, ("a",), (1.0,), (1.05,),
    ...     Tally(5, np.array([5]), 5, h, h[0]), ToleranceModel((), (), (), (), (), ()),
    ...     None, False)
    >>> tolerance_html(summarise(run), layout_path="x.yaml", tolerance_path=None,
    ...                version="0.1.0", date="2024-01-31").startswith("<!DOCTYPE html>")
    True
    """
    run = summary.run
    when = date or datetime.date.today().isoformat()
    interval = f"[{percent(summary.all_low)}, {percent(summary.all_high)}]"
    status = (f"P(every scanner meets its need) = {percent(summary.all_met)}, 95 % interval "
              f"{interval}" + (" (PARTIAL: interrupted)" if summary.partial else ""))
    rows = [("layout", run.layout), ("mode", "settings fixed as planned" if run.mode == "fixed"
                                     else "re-planned for every sample"),
            ("samples", f"{run.tally.samples} of {run.requested} ({run.sampler}, seed "
                        f"{run.seed})"),
            ("fab-wide", status)]
    if summary.needed is not None and run.width is not None:
        rows.append(("samples for the width", f"about {summary.needed} for a "
                                              f"{100 * run.width:g} % wide interval"))
    scanners = table("Probability of meeting the need, 95 % Wilson interval, headroom "
                     "quantiles", ["scanner", "planned", "P(meet)", "interval", "5 %", "50 %",
                                   "95 %"],
                     [[s.id, pct(s.planned_headroom), percent(s.probability),
                       f"[{percent(s.low)}, {percent(s.high)}]", *(pct(h) for h in s.headroom)]
                      for s in summary.scanners], numeric=(1, 2, 3, 4, 5, 6))
    scanners += "\n" + figure(inline_svg(headroom_cdf(summary), "cdf", "headroom CDF"),
                              "Cumulative distribution of headroom for the scanners least "
                              "likely to meet their need.", "plot")
    if summary.ranking:
        sens = table("Sobol' indices of the lowest headroom factor, ranked",
                     ["rank", "tolerance", "total", "first order"],
                     [[str(i), r.tolerance, f"{r.total:.3f} ± {r.total_conf:.3f}",
                       f"{r.first:.3f} ± {r.first_conf:.3f}"]
                      for i, r in enumerate(summary.ranking, 1)], numeric=(0, 2, 3))
        sens += "\n" + figure(inline_svg(sensitivity_chart(summary), "sens", "sensitivity"),
                              f"Tighten '{summary.ranking[0].tolerance}' first.", "plot")
    else:
        sens = "<p>No sensitivity indices were computed for this run.</p>"
    tols = table("Tolerances sampled", ["tolerance", "property", "spread", "distribution",
                                        "group", "members"],
                 [[t.name, t.property, (f"{100 * t.spread:g} %" if t.relative
                                        else f"{t.spread:g} (SI)"), t.distribution,
                   t.group or "", str(n)] for t, n in _tolerances(summary)])
    method = facts([("interval", WILSON_SOURCE), ("sensitivity", SOBOL_SOURCE),
                    ("quantiles", "from a histogram of delivered / need in steps of 0.001"),
                    ("method", "docs/tolerance.md"),
                    ("inputs", os.path.basename(layout_path) + (
                        f", {os.path.basename(tolerance_path)}" if tolerance_path else "")),
                    ("beamplan", version), ("date", when)])
    body = {"summary": facts(rows), "scanners": scanners, "sensitivity": sens,
            "tolerances": tols, "method": method}
    return page(f"beamplan tolerance: {run.layout}", f"Margin under uncertainty: {run.layout}",
                status, _SECTIONS, body, f"beamplan {version}; {when}.")


def _tolerances(summary: ToleranceSummary) -> list[tuple[Tolerance, int]]:
    counts: dict[str, int] = {}
    first: dict[str, Tolerance] = {}
    for v in summary.run.model.variables:
        counts[v.tolerance.name] = counts.get(v.tolerance.name, 0) + 1
        first.setdefault(v.tolerance.name, v.tolerance)
    return [(first[name], counts[name]) for name in first]
