"""HTML pages and plots of the cost and availability reports (cost breakdown, break-even
curve, availability per scanner), in the frame of :mod:`beamplan.report.html`."""

from __future__ import annotations

from beamplan.analyses.availability import AvailabilityReport
from beamplan.analyses.availability_sim import Simulation
from beamplan.analyses.cost import CostReport
from beamplan.report.availability_view import METHOD
from beamplan.report.cost_view import money
from beamplan.report.html import facts, figure, inline_svg, page, table
from beamplan.report.palette import PALETTE
from beamplan.report.plots import Picture, _axes, _grid, _left, _styled

__all__ = ["availability_chart", "availability_html", "break_even_chart", "cost_chart",
           "cost_html"]


def _per(total: float, count: float) -> float:
    return total / count if count > 0 else 0.0


@_styled
def cost_chart(report: CostReport) -> Picture:
    """Cost per wafer pass of each scanner: capital, maintenance, electricity (stacked).

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.analyses.cost import cost_of
    >>> from beamplan.layout.economics import Economics
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(beamplan.load("layouts/pilot-line.yaml"))
    >>> "litho-p1" in cost_chart(cost_of(beamplan.plan(net), net, Economics())).svg()
    True
    """
    from matplotlib.patches import Patch

    rows = report.scanners
    colours = (PALETTE["beam"], PALETTE["paper"], PALETTE["dump"])
    legend = [Patch(fc=c, ec=PALETTE["ink"], label=n)
              for c, n in zip(colours, ("capital", "maintenance", "electricity"), strict=True)]
    figure, ax = _axes(7.5, 0.3 + 0.26 * len(rows), _left(s.id for s in rows),
                       "Cost per wafer pass", f"{report.layout}, shared sources "
                       f"({report.economics.currency})", legend)
    for i, s in enumerate(rows):
        left = 0.0
        for part, colour in zip((s.capital_per_year, s.maintenance_per_year,
                                 s.electricity_per_year), colours, strict=True):
            width = _per(part, s.passes_per_year)
            ax.barh(i, width, 0.56, left=left, color=colour, edgecolor=PALETTE["ink"], lw=0.6)
            left += width
    ax.set_yticks(range(len(rows)), [s.id for s in rows])
    ax.set_ylim(len(rows) - 0.4, -0.6)
    ax.set_xlabel(f"{report.economics.currency} per wafer pass")
    _grid(ax, "x")
    return Picture(figure, "cost")


@_styled
def break_even_chart(report: CostReport) -> Picture:
    """Yearly cost against the number of scanners: shared sources and plasma per scanner."""
    figure, ax = _axes(7.5, 3.0, 1.0, "Break-even", f"{report.layout}: the shared source "
                       "wins from " + (f"{report.break_even} scanners" if report.break_even
                                       else "no count shown"), None)
    xs = [p.scanners for p in report.curve]
    ax.step(xs, [p.shared_per_year / 1e6 for p in report.curve], where="mid",
            color=PALETTE["ink"], label="shared source(s)")
    ax.plot(xs, [p.plasma_per_year / 1e6 for p in report.curve], color=PALETTE["beam"],
            ls="--", label="plasma source per scanner")
    if report.break_even:
        ax.axvline(report.break_even, color=PALETTE["dump"], lw=1.0)
    ax.legend(fontsize=7)
    ax.set_xlabel("number of scanners")
    ax.set_ylabel(f"million {report.economics.currency} per year")
    _grid(ax, "y")
    return Picture(figure, "break-even")


@_styled
def availability_chart(report: AvailabilityReport) -> Picture:
    """Wafer passes lost a year per scanner: shared source against plasma per scanner."""
    rows = report.scanners
    figure, ax = _axes(7.5, 0.3 + 0.3 * len(rows), _left(s.id for s in rows),
                       "Expected wafer passes lost per year", f"{report.layout}, after "
                       "corrective switching", None)
    ys = range(len(rows))
    ax.barh([y - 0.15 for y in ys], [s.wafers_lost for s in rows], 0.3, color=PALETTE["beam"],
            edgecolor=PALETTE["ink"], lw=0.6, label="shared source")
    ax.barh([y + 0.15 for y in ys], [s.plasma_wafers_lost for s in rows], 0.3,
            color=PALETTE["paper"], edgecolor=PALETTE["ink"], lw=0.6,
            label="plasma source per scanner")
    ax.set_yticks(list(ys), [s.id for s in rows])
    ax.set_ylim(len(rows) - 0.4, -0.6)
    ax.legend(fontsize=7)
    ax.set_xlabel("wafer passes lost per year")
    _grid(ax, "x")
    return Picture(figure, "availability")


def cost_html(report: CostReport, version: str,
              availability: AvailabilityReport | None = None) -> str:
    """The cost report as one self-contained page (with the availability sections if given)."""
    e = report.economics
    cur = e.currency
    summary = facts([
        ("layout", f"{report.layout} ({report.file})"), ("economics", e.file),
        ("shared sources per year", f"{money(report.total_per_year)} {cur}"),
        ("plasma per scanner per year", f"{money(report.plasma_total_per_year)} {cur}"),
        ("cost per wafer pass", f"{_per(report.total_per_year, report.passes_per_year):.2f} "
         f"{cur} (plasma {_per(report.plasma_total_per_year, report.plasma_passes_per_year):.2f})"),
        ("break-even", f"{report.break_even} scanners" if report.break_even else "none"),
        ("illustrative defaults", ", ".join(e.defaulted) or "none")])
    sources = table("Shared sources per year", ["source", "draw MW", "energy MWh", "capital",
                                                "maintenance", "electricity", "total"],
                    [[s.id, f"{s.electrical_w / 1e6:.2f}", f"{s.energy_mwh:,.0f}",
                      money(s.capital_per_year), money(s.maintenance_per_year),
                      money(s.electricity_per_year), money(s.total_per_year)]
                     for s in report.sources], numeric=range(1, 7))
    scanners = table("Per scanner", ["scanner", "wph", "passes/yr", "per pass", "kWh/pass",
                                     "plasma per pass"],
                     [[s.id, f"{s.wph:.1f}", f"{s.passes_per_year:,.0f}",
                       f"{_per(s.total_per_year, s.passes_per_year):.2f}",
                       f"{_per(s.energy_mwh * 1e3, s.passes_per_year):.1f}",
                       f"{_per(s.plasma_total_per_year, s.plasma_passes_per_year):.2f}"]
                      for s in report.scanners], numeric=range(1, 6))
    body = {
        "summary": summary, "sources": sources, "scanners": scanners,
        "charts": figure(inline_svg(cost_chart(report), "c", "cost per pass"),
                         "Cost per wafer pass by part.", "plot")
        + figure(inline_svg(break_even_chart(report), "b", "break-even"),
                 "Yearly cost against the number of scanners.", "plot"),
        "assumptions": "<ul>" + "".join(f"<li>{a}</li>" for a in report.assumptions) + "</ul>",
    }
    sections = [("summary", "Summary"), ("sources", "Sources"), ("scanners", "Scanners"),
                ("charts", "Charts"), ("assumptions", "Assumptions")]
    if availability is not None:
        extra = _availability_body(availability, None)
        body.update({f"availability-{k}": v for k, v in extra.items()})
        sections += [(f"availability-{k}", f"Availability: {name.lower()}")
                     for k, name in _AVAILABILITY_SECTIONS]
    return page(f"beamplan cost: {report.layout}", f"Cost and energy: {report.layout}",
                f"break-even at {report.break_even} scanners" if report.break_even
                else "no break-even", sections, body, f"beamplan {version}.")


_AVAILABILITY_SECTIONS = (("summary", "Summary"), ("scanners", "Scanners"),
                          ("ranking", "Ranking"), ("chart", "Chart"))


def _availability_body(report: AvailabilityReport, simulation: Simulation | None
                       ) -> dict[str, str]:
    pairs = [("layout", f"{report.layout} ({report.file})"),
             ("expected loss", f"{report.wafers_lost:,.0f} wafer passes a year"),
             ("method", METHOD)]
    if simulation is not None:
        pairs.append(("Monte Carlo check", f"{simulation.mean:,.0f} ({simulation.low:,.0f} to "
                      f"{simulation.high:,.0f}, 95 %, {simulation.years} years)"))
    scanners = table("Per scanner, per year", ["scanner", "full power", "hours lost",
                                               "passes lost", "plasma per scanner"],
                     [[s.id, f"{s.full_power:.4%}", f"{s.hours_lost:,.1f}",
                       f"{s.wafers_lost:,.0f}", f"{s.plasma_wafers_lost:,.0f}"]
                      for s in report.scanners], numeric=range(1, 5))
    ranking = table("Worth hardening first", ["part", "kind", "MTBF h", "MTTR h",
                                              "passes gained/yr"],
                    [[r.id, r.kind, f"{r.mtbf_h:,.0f}", f"{r.mttr_h:g}",
                      f"{r.wafers_gained:,.0f}"] for r in report.ranking[:20]],
                    numeric=range(2, 5))
    return {"summary": facts(pairs), "scanners": scanners, "ranking": ranking,
            "chart": figure(inline_svg(availability_chart(report), "a", "passes lost"),
                            "Expected wafer passes lost per year.", "plot")}


def availability_html(report: AvailabilityReport, version: str,
                      simulation: Simulation | None = None) -> str:
    """The availability report as one self-contained page."""
    return page(f"beamplan availability: {report.layout}", f"Availability: {report.layout}",
                f"{report.wafers_lost:,.0f} wafer passes lost a year",
                list(_AVAILABILITY_SECTIONS), _availability_body(report, simulation),
                f"beamplan {version}.")
