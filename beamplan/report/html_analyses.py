"""What-if comparisons and outage sweeps as self-contained HTML files.

The pages look and print like the plan report (:mod:`beamplan.report.html`):
the same inline CSS, tables and inline SVG charts, no scripts and no
external resources, every text escaped. :func:`cases_html` reports a
:class:`~beamplan.analyses.compare.Comparison`, :func:`sweep_html` a
:class:`~beamplan.analyses.outages.SweepReport`. Writing the file is the
caller's job (:func:`beamplan.report.files.write_atomic`).
"""

from __future__ import annotations

import datetime
import os
from collections.abc import Sequence
from html import escape

from beamplan.analyses.compare import CaseOutcome, Comparison
from beamplan.analyses.outages import SweepReport
from beamplan.network.graph import Network
from beamplan.optimise.result import Plan, ScannerResult
from beamplan.report.analyses import search_words
from beamplan.report.document import signed_number
from beamplan.report.html import facts, figure, inline_svg, page, pct, table
from beamplan.report.plots import headroom_across_cases, outage_impact
from beamplan.units import format_power
from beamplan.vocabulary import ScannerStatus

__all__ = ["cases_html", "comparison_plans", "sweep_html"]

SAME_RTOL = 1e-6  # a delivered power within this fraction of the base has not changed

_CASE_SECTIONS = (("summary", "Summary"), ("cases", "Cases"), ("scanners", "Scanners"),
                  ("changes", "What changes per case"), ("chart", "Headroom across cases"),
                  ("provenance", "Provenance"))
_SWEEP_SECTIONS = (("summary", "Summary"), ("outages", "Outages ranked by impact"),
                   ("chart", "Impact chart"), ("spof", "Single points of failure"),
                   ("check", "Cross-check"), ("base", "Base plan"),
                   ("provenance", "Provenance"))

_MORE_CSS = """.num { white-space: nowrap; }
h3 { font-size: 1rem; margin: 1.2rem 0 .3rem; }
"""


def comparison_plans(comparison: Comparison) -> list[tuple[str, Plan]]:
    """``[("base", base plan), (case name, case plan), ...]``, as the plots take them."""
    return [("base", comparison.base), *((c.name, c.plan) for c in comparison.cases)]


def _date(date: datetime.date | str | None) -> str:
    return date if isinstance(date, str) else (date or datetime.date.today()).isoformat()


def _signed(watts: float, scale: float = 1.0) -> str:
    """A change of power with its sign, ``+12.0 W``, ``-1.20 kW``; ``0 W`` within
    :data:`SAME_RTOL` of ``scale`` (W).

    Examples
    --------
    >>> _signed(12.0), _signed(-1200.0), _signed(-1e-9, 6000.0)
    ('+12.0 W', '-1.20 kW', '0 W')
    """
    if abs(watts) <= SAME_RTOL * max(abs(scale), 1.0):
        return "0 W"
    return ("+" if watts > 0 else "-") + format_power(abs(watts))


def _points(fraction: float) -> str:
    """A change of a fraction in signed percentage points, never ``-0.0``."""
    return signed_number(100 * fraction, 1)


def _short(plan: Plan) -> str:
    short = [s for s in plan.scanners if s.status in (ScannerStatus.SHORT, ScannerStatus.CUT_OFF)]
    return ", ".join(f"{s.id} {s.status} -{format_power(s.shortfall_w)}" for s in short) \
        or "none"


def _provenance(layout_path: str, base: Plan, version: str, when: str,
                more: Sequence[tuple[str, str]] = ()) -> list[tuple[str, str]]:
    return [("layout file", os.path.basename(layout_path)), ("SHA-256", base.sha256),
            *more, ("beamplan", version), ("solver", f"{base.solver} {base.solver_version}"),
            ("goal", base.goal), ("date", when)]


# -- what-if cases ----------------------------------------------------------------

def _cases_table(comparison: Comparison) -> str:
    base = comparison.base
    steady = comparison.steady is not None
    header = ["case", "status", "headroom factor", "change", "source used", "change",
              "delivered", "change", *(["best factor"] if steady else []), "short", "note"]
    rows = [["base", base.status, f"{base.headroom_factor:.4f}", "", format_power(
        base.source_used_w), "", format_power(base.delivered_w), "", *([""] if steady else []),
        _short(base), "the layout as it is"]]
    for c in comparison.cases:
        p = c.plan
        rows.append([c.name, p.status, f"{p.headroom_factor:.4f}",
                     signed_number(p.headroom_factor - base.headroom_factor, 4),
                     format_power(p.source_used_w),
                     _signed(p.source_used_w - base.source_used_w, base.source_used_w),
                     format_power(p.delivered_w),
                     _signed(p.delivered_w - base.delivered_w, base.delivered_w),
                     *([f"{c.best_factor:.4f}" if c.best_factor is not None else "-"]
                       if steady else []), _short(p), c.note])
    numeric = (2, 3, 4, 5, 6, 7, *((8,) if steady else ()))
    listed = table(f"The base layout and every case (goal {comparison.goal})", header, rows,
                   numeric)
    return f'<div class="scroll">\n{listed}\n</div>'


def _scanner_cell(s: ScannerResult | None, base: ScannerResult | None, *,
                  is_base: bool = False) -> str:
    """Delivered power and headroom; in a case, also the change from the base."""
    if s is None:
        return "dropped" if base else "-"
    if s.status == ScannerStatus.OUT_OF_SERVICE:
        return str(ScannerStatus.OUT_OF_SERVICE)
    words = f"{format_power(s.delivered_w)}, {pct(s.headroom)}"
    if not is_base and (base is None or base.status == ScannerStatus.OUT_OF_SERVICE):
        words += ", new"
    elif not is_base and base is not None:
        change = _signed(s.delivered_w - base.delivered_w, base.delivered_w)
        words += ", no change" if change == "0 W" else f", {change}"
    return words + ("" if s.status == ScannerStatus.MET else f", {s.status}")


def _scanners_table(comparison: Comparison) -> str:
    plans = comparison_plans(comparison)
    found = [{s.id: s for s in plan.scanners} for _, plan in plans]
    rows = []
    for sid in comparison.scanner_ids:
        base = found[0].get(sid)
        rows.append([sid, "-" if base is None else format_power(base.need_w),
                     _scanner_cell(base, None, is_base=True),
                     *(_scanner_cell(got.get(sid), base) for got in found[1:])])
    listed = table("Delivered power and headroom per scanner; in the cases, the change of "
                   "delivered power from the base", ["scanner", "need (base)",
                                                     *(name for name, _ in plans)], rows,
                   tuple(range(1, len(plans) + 2)))
    return f'<div class="scroll">\n{listed}\n</div>'


def _changes(case: CaseOutcome, steady: float | None) -> str:
    out = [f"<h3>{escape(case.name)}</h3>"]
    if case.note:
        out.append(f"<p>{escape(case.note)}</p>")
    if case.newly_binding:
        out.append("<p>Newly binding constraints (not binding in the base plan):</p>\n<ul>" +
                   "".join(f"<li>{escape(b)}</li>" for b in case.newly_binding) + "</ul>")
    else:
        out.append("<p>No constraint binds that did not bind in the base plan.</p>")
    if case.moves:
        out.append(table(f"Settings of {case.name} that moved from the base plan",
                         ["element", "output", "base", "case", "change"],
                         [[m.element, m.output or "transmission", f"{m.base:.1%}",
                           f"{m.case:.1%}", f"{_points(m.change)} points"]
                          for m in case.moves], (2, 3, 4)))
    else:
        out.append("<p>No setting moved from the base plan.</p>")
    if case.switch_moves:
        out.append("<p>Switches moved to restore service: " +
                   escape("; ".join(m.label for m in case.switch_moves)) + ".</p>")
    if steady is not None and case.best_factor is not None:
        out.append(f"<p>Settings stability: held within {escape(f'{steady:.2%}')} of each "
                   "scanner's level in the plain plan of the case (best headroom factor "
                   f"{escape(f'{case.best_factor:.4f}')}).</p>")
    return "\n".join(out)


def cases_html(comparison: Comparison, *, layout_path: str, cases_path: str | None,
               version: str, date: datetime.date | str | None = None) -> str:
    """A what-if comparison as the text of one self-contained HTML file.

    Parameters
    ----------
    comparison
        The base plan and its cases (:func:`beamplan.analyses.compare.compare_cases`).
    layout_path, cases_path
        The base layout and the case file (``None``: the cases came from
        command-line options); the report names them (not their folders).
    version
        The beamplan version, for the provenance.
    date
        The date of the report (default: today), so that tests can fix it.

    Examples
    --------
    >>> from beamplan.analyses.cases import parse_cases
    >>> from beamplan.analyses.compare import compare_cases
    >>> from beamplan.layout.loader import parse_layout
    >>> from beamplan.layout.yamlpos import load_yaml, parse_yaml
    >>> doc = load_yaml("layouts/pilot-line.yaml")
    >>> cases = parse_cases(parse_yaml("format: 1\\ncases:\\n  m3-out: {changes: [{fail: m3}]}\\n",
    ...                                "cases.yaml"))
    >>> comparison = compare_cases(parse_layout(doc), cases, base_doc=doc)
    >>> page = cases_html(comparison, layout_path="layouts/pilot-line.yaml",
    ...                   cases_path="cases.yaml", version="0.1.0", date="2024-01-31")
    >>> page.startswith("<!DOCTYPE html>"), "m3-out" in page, "<script" in page
    (True, True, False)
    """
    when, base = _date(date), comparison.base
    short = [c.name for c in comparison.cases if c.plan.status != ScannerStatus.MET]
    status = (f"{len(comparison.cases)} case(s) against the base layout, goal "
              f"{comparison.goal}: " + (f"{len(short)} of them leave a scanner short ("
                                        f"{', '.join(short)})" if short else
                                        "every case meets every need"))
    summary = [("layout", comparison.layout), ("goal", comparison.goal),
               ("cases", ", ".join(c.name for c in comparison.cases) or "none"),
               ("base plan", f"{base.status}, headroom factor {base.headroom_factor:.4f}, "
                             f"{format_power(base.delivered_w)} delivered of "
                             f"{format_power(base.source_used_w)} drawn"),
               ("cases short", ", ".join(short) or "none"),
               ("settings stability", "off: each case is planned afresh"
                if comparison.steady is None else f"within {comparison.steady:.2%} of each "
                "case's best headroom, moving the base settings as little as possible")]
    chart = inline_svg(headroom_across_cases(comparison_plans(comparison)), "cases",
                       "headroom of every scanner across the cases")
    files = [("cases file", os.path.basename(cases_path) if cases_path
              else "none: changes given on the command line")]
    body = {
        "summary": facts(summary),
        "cases": _cases_table(comparison),
        "scanners": _scanners_table(comparison),
        "changes": "\n".join(_changes(c, comparison.steady) for c in comparison.cases)
        or "<p>No cases.</p>",
        "chart": figure(chart, "Each scanner's headroom (delivered ÷ need − 1) in the base "
                        "plan and in every case, one mark per case; 0 % is the need. No mark: "
                        "the case drops the scanner or takes it out of service.", "plot"),
        "provenance": facts(_provenance(layout_path, base, version, when, files)),
    }
    return page(f"beamplan: what-if cases for {comparison.layout}, goal {comparison.goal}",
                 f"What-if cases for {comparison.layout}", f"{status}; {when}",
                 _CASE_SECTIONS, body, f"beamplan {version}; layout "
                 f"{os.path.basename(layout_path)} (SHA-256 {base.sha256}); {when}.",
                 _MORE_CSS)


# -- outage sweeps ----------------------------------------------------------------

def _outages_table(report: SweepReport) -> str:
    switching = bool(report.switches)
    rows = []
    for rank, r in enumerate(report.results, start=1):
        row = [str(rank), r.label, ", ".join(r.kinds), r.status, pct(r.headroom_factor - 1),
               _points(r.headroom_lost), format_power(r.delivered_lost_w),
               ", ".join(r.cut_off) or "-",
               ", ".join(f"{sid} -{format_power(w)}" for sid, w in r.short
                         if sid not in r.cut_off) or "-"]
        if switching:
            at = r.at_failure
            row += ["; ".join(m.label for m in r.moves) or "-",
                    (f"{pct(at.headroom_factor - 1)}; cut off: {', '.join(at.cut_off) or '-'}"
                     if r.moves else "same")]
        rows.append(row)
    headers = ["rank", "out of service", "kind", "status", "lowest headroom",
               "headroom lost (points)", "delivered lost", "cut off", "short (fed)"]
    caption = ("Every outage case, most harmful first: scanners cut off, then scanners "
               "short, then headroom lost, then delivered power lost")
    if switching:
        headers += ["switch moves", "at the moment of failure"]
        caption += (", after corrective switching (the moves, and the impact before them, "
                    "in the last two columns)")
    listed = table(caption, headers, rows, (0, 4, 5, 6))
    return f'<div class="scroll">\n{listed}\n</div>'


def _spof(report: SweepReport, network: Network) -> str:
    rescued = [n for n in report.single_points_at_failure if n not in report.single_points]
    note = ""
    if report.switches:
        note = ("<p>With corrective switching: a switch may take any of its inputs, so a "
                "node is listed only when no switch position brings the beam around it." +
                (f" Single points of failure only at the moment of failure (switching "
                 f"restores their scanners): {escape(', '.join(rescued))}." if rescued else "")
                + "</p>\n")
    if not report.single_points:
        return note + ("<p>No single node cuts a scanner off: every scanner has a second "
                       "path.</p>")
    kinds = {n.id: n.kind for n in network.nodes}
    return (note + "<p>Nodes that lie on every beam path to a scanner (dominators in the beam "
            "graph): each one, out of service, cuts those scanners off.</p>\n" +
            table("Single points of failure", ["node", "kind", "scanners", "cuts off"],
                  [[node, kinds.get(node, "-"), str(len(cut)), ", ".join(cut)]
                   for node, cut in report.single_points.items()], (2,)))


def _check(report: SweepReport) -> str:
    singles = sum(1 for r in report.results if len(r.failed) == 1)
    if report.disagreements:
        return ("<p><strong>The dominator analysis and the re-plans disagree</strong>; "
                "check the layout and report this:</p>\n<ul>" + "".join(
                    f"<li>{escape(d)}</li>" for d in report.disagreements) + "</ul>")
    if not singles:
        return ("<p>No single outage in this sweep, so the re-plans were not checked against "
                "the dominator analysis.</p>")
    views = (" in both views (at the moment of failure, and after switching)"
             if report.switches else "")
    return (f"<p>The dominator analysis and the re-plans agree{views}: each of the {singles} "
            "single outages cuts off exactly the scanners that the graph says it must.</p>")


def _base_table(plan: Plan) -> str:
    return table("Power at each scanner's intermediate focus (IF) in the base plan",
                 ["scanner", "need", "delivered", "headroom", "status"],
                 [[s.id, format_power(s.need_w), format_power(s.delivered_w), pct(s.headroom),
                   s.status if s.status == ScannerStatus.MET else f"{s.status}: "
                   f"{format_power(s.shortfall_w)}"] for s in plan.scanners], (1, 2, 3))


def sweep_html(report: SweepReport, network: Network, *, layout_path: str, version: str,
               date: datetime.date | str | None = None, top: int = 20) -> str:
    """An outage sweep as the text of one self-contained HTML file.

    Parameters
    ----------
    report, network
        The sweep (:func:`beamplan.analyses.outages.run_sweep`) and the network swept.
    layout_path
        The layout file; the report names it (not its folder).
    version
        The beamplan version, for the provenance.
    date
        The date of the report (default: today), so that tests can fix it.
    top
        How many outages the impact chart shows (the table lists them all).

    Examples
    --------
    >>> from beamplan.analyses.outages import outage_cases, run_sweep
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> page = sweep_html(run_sweep(net, outage_cases(net)), net,
    ...                   layout_path="layouts/pilot-line.yaml", version="0.1.0",
    ...                   date="2024-01-31")
    >>> "Single points of failure" in page, "<script" in page
    (True, False)
    """
    when, base = _date(date), report.base
    cut = [r for r in report.results if r.cut_off]
    status = (f"{report.finished} of {report.total_cases} outage cases"
              + (" (interrupted)" if report.interrupted else "") + f", goal {report.goal}: "
              f"{len(cut)} cut a scanner off, {len(report.single_points)} single points of "
              f"failure" + ("; the cross-check disagrees" if report.disagreements else ""))
    pairs = any(len(r.failed) > 1 for r in report.results)
    summary = [("layout", report.layout), ("goal", report.goal),
               ("cases", f"{report.finished} of {report.total_cases} planned, "
                         f"{'two' if pairs else 'one'} node(s) out of service at a time" +
                         ("; the sweep was interrupted" if report.interrupted else "")),
               ("network", f"{len(network.sources)} source(s), {len(network.scanners)} "
                           f"scanner(s), {len(network.nodes)} nodes in all"),
               ("base plan", f"{base.status}, lowest headroom {pct(base.headroom_factor - 1)}, "
                             f"{format_power(base.delivered_w)} delivered of "
                             f"{format_power(base.source_used_w)} drawn"),
               ("cut a scanner off", f"{len(cut)} case(s)"),
               ("leave a scanner short", f"{sum(1 for r in report.results if r.short)} "
                                         "case(s)"),
               *([("corrective switching", search_words(report))] if report.switches else []),
               ("single points of failure" + (" after switching" if report.switches else ""),
                ", ".join(report.single_points) or "none"),
               ("cross-check", "disagrees" if report.disagreements else "agrees")]
    chart = inline_svg(outage_impact(report, top), "outages", "headroom lost per outage case")
    shown = min(top, report.finished)
    body = {
        "summary": facts(summary),
        "outages": _outages_table(report) if report.results else "<p>No outage cases.</p>",
        "chart": figure(chart, f"The {shown} most harmful outages, in the table's order: the "
                        "headroom each costs (bars; cross-hatched: it cuts a scanner off; "
                        "hatched: it leaves one short), and whom it cuts off.", "plot"),
        "spof": _spof(report, network),
        "check": _check(report),
        "base": _base_table(base),
        "provenance": facts(_provenance(layout_path, base, version, when)),
    }
    return page(f"beamplan: outage sweep of {report.layout}, goal {report.goal}",
                 f"Outage sweep of {report.layout}", f"{status}; {when}", _SWEEP_SECTIONS,
                 body, f"beamplan {version}; layout {os.path.basename(layout_path)} "
                 f"(SHA-256 {base.sha256}); {when}.", _MORE_CSS)
