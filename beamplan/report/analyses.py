"""Reports of what-if comparisons and outage sweeps: rich renderables, JSON, CSV.

Documents: ``beamplan-cases/1`` and ``beamplan-outages/1`` (docs/json-format.md).
"""

from __future__ import annotations

from typing import Any

from rich.console import Group
from rich.text import Text

from beamplan.analyses.compare import Comparison
from beamplan.analyses.outages import OutageView, SweepReport
from beamplan.analyses.switching import EXHAUSTIVE_MAX
from beamplan.optimise.result import Plan
from beamplan.report import CAUTION
from beamplan.report.document import csv_text, rounded, signed_percent, signed_power
from beamplan.report.document import to_json as strict_json
from beamplan.report.terminal import titled_table
from beamplan.units import format_power
from beamplan.vocabulary import ScannerStatus

__all__ = ["cases_csv", "cases_document", "cases_renderable", "search_words", "sweep_csv",
           "sweep_document", "sweep_renderable", "to_json"]

CASES_FORMAT = "beamplan-cases/1"
OUTAGES_FORMAT = "beamplan-outages/1"


def _short(plan: Plan) -> str:
    short = [s for s in plan.scanners if s.status in (ScannerStatus.SHORT, ScannerStatus.CUT_OFF)]
    if not short:
        return "none"
    return ", ".join(f"{s.id} -{format_power(s.shortfall_w)}" for s in short[:3]) + (
        f" (+{len(short) - 3})" if len(short) > 3 else "")


def _moves_json(moves: Any) -> list[dict[str, str]]:
    return [{"switch": m.switch, "from": m.before, "to": m.after} for m in moves]


def _scanner(plan: Plan, sid: str) -> Any:
    return next((s for s in plan.scanners if s.id == sid), None)


def cases_renderable(comparison: Comparison) -> Group:
    """The comparison: one row per case, then each scanner across cases."""
    summary = titled_table(f"Cases against the base layout (goal {comparison.goal})")
    for name, justify in (("case", "left"), ("headroom", "right"), ("source", "right"),
                          ("delivered", "right"), ("short", "left")):
        summary.add_column(name, justify=justify, overflow="fold")  # type: ignore[arg-type]
    rows = [("base", comparison.base)] + [(c.name, c.plan) for c in comparison.cases]
    for name, plan in rows:
        summary.add_row(name, f"{plan.headroom_factor:.4f}", format_power(plan.source_used_w),
                        format_power(plan.delivered_w), _short(plan))
    per = titled_table("Delivered power and headroom per scanner (change from base)")
    per.add_column("scanner")
    per.add_column("base", justify="right")
    for case in comparison.cases:
        per.add_column(case.name, justify="right", overflow="fold")
    for sid in comparison.scanner_ids:
        base = _scanner(comparison.base, sid)
        cells = [f"{format_power(base.delivered_w)} {signed_percent(base.headroom, 0)}"
                 if base else "-"]
        for case in comparison.cases:
            s = _scanner(case.plan, sid)
            if s is None:
                cells.append("dropped" if base else "-")
            elif s.status == ScannerStatus.OUT_OF_SERVICE:
                cells.append("out")
            else:
                delta = s.delivered_w - (base.delivered_w if base else 0.0)
                cells.append(f"{signed_percent(s.headroom, 0)} {signed_power(delta)}")
        per.add_row(sid, *cells)
    parts: list[Any] = [summary, Text(""), per]
    for case in comparison.cases:
        lines = []
        if case.newly_binding:
            lines.append("newly binding: " + "; ".join(case.newly_binding))
        if comparison.steady is not None:
            moved = ", ".join(f"{m.element}{'.' + m.output if m.output else ''} "
                              f"{m.base:.1%}→{m.case:.1%}" for m in case.moves)
            lines.append(f"settings moved: {moved or 'none'}")
        if comparison.steady_switches:
            switched = ", ".join(m.label for m in case.switch_moves)
            lines.append(f"switches moved: {switched or 'none'}")
        if lines:
            parts.append(Text(f"{case.name}: " + " | ".join(lines)))
    parts.append(Text(CAUTION, style="dim italic"))
    return Group(*parts)


def _plan_summary(plan: Plan) -> dict[str, Any]:
    return {"status": plan.status, "headroom_factor": rounded(plan.headroom_factor),
            "source_used_w": rounded(plan.source_used_w), "delivered_w": rounded(plan.delivered_w),
            "scanners": [{"id": s.id, "status": s.status, "need_w": rounded(s.need_w),
                          "delivered_w": rounded(s.delivered_w), "headroom": rounded(s.headroom),
                          "shortfall_w": rounded(s.shortfall_w)} for s in plan.scanners],
            "binding": [b.description for b in plan.binding]}


def cases_document(comparison: Comparison, version: str) -> dict[str, Any]:
    """The comparison as a JSON-ready dict (``beamplan-cases/1``)."""
    cases = []
    for case in comparison.cases:
        entry = {"name": case.name, "note": case.note, **_plan_summary(case.plan),
                 "newly_binding": list(case.newly_binding),
                 "settings_moved": [{"element": m.element, "output": m.output,
                                     "base": rounded(m.base), "case": rounded(m.case)}
                                    for m in case.moves]}
        if case.best_factor is not None:
            entry["best_headroom_factor"] = rounded(case.best_factor)
        if comparison.steady_switches:
            entry["switch_moves"] = _moves_json(case.switch_moves)
        cases.append(entry)
    return {"format": CASES_FORMAT, "beamplan_version": version, "layout": comparison.layout,
            "goal": comparison.goal, "settings_stability": comparison.steady,
            "steady_switches": comparison.steady_switches,
            "base": _plan_summary(comparison.base), "cases": cases, "caution": CAUTION}


def cases_csv(comparison: Comparison) -> dict[str, str]:
    """Tables: cases.csv (one row per case) and scanners.csv (scanner × case)."""
    rows = [("base", comparison.base)] + [(c.name, c.plan) for c in comparison.cases]
    summary = csv_text(["case", "status", "headroom_factor", "source_used_w", "delivered_w"],
                     ([n, p.status, rounded(p.headroom_factor), rounded(p.source_used_w),
                       rounded(p.delivered_w)] for n, p in rows))
    per = []
    for name, plan in rows:
        for s in plan.scanners:
            per.append([name, s.id, s.status, rounded(s.need_w), rounded(s.delivered_w),
                        rounded(s.headroom), rounded(s.shortfall_w)])
    scanners = csv_text(["case", "scanner", "status", "need_w", "delivered_w", "headroom",
                       "shortfall_w"], per)
    return {"cases.csv": summary, "scanners.csv": scanners}


def search_words(report: SweepReport) -> str:
    """How corrective switching searched and what it found, in words (terminal and HTML).

    Examples
    --------
    >>> from beamplan.analyses.outages import run_sweep
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/two-bay.yaml"))
    >>> search_words(run_sweep(net, [("fel-main",), ("an-fold",)]))
    'sw-source (2 inputs): every combination of positions tried (2 in all), for each \
outage that leaves a scanner worse off; 1 outage(s) better after switching'
    """
    count = 1
    for inputs in report.switches.values():
        count *= len(inputs)
    names = ", ".join(f"{sid} ({len(inputs)} inputs)" for sid, inputs in report.switches.items())
    if report.switch_search == "exhaustive":
        how = f"every combination of positions tried ({count} in all)"
    else:
        how = (f"greedy search ({count} combinations, more than {EXHAUSTIVE_MAX}): one switch "
               "at a time, the best move first, until no move helps")
    moved = sum(1 for r in report.results if r.moves)
    return (f"{names}: {how}, for each outage that leaves a scanner worse off; {moved} "
            "outage(s) better after switching")


def _cut(names: tuple[str, ...], switching: bool) -> str:
    if switching and len(names) > 1:  # a narrower table: the first and a count
        return f"{names[0]} +{len(names) - 1}"
    return (", ".join(names[:4]) + (" ..." if len(names) > 4 else "")) or "-"


def sweep_renderable(report: SweepReport, top: int = 20) -> Group:
    """The ranked outages, the single points of failure, and the sweep's own checks.

    With switches in the layout, outages are ranked by their impact after
    corrective switching, with the impact at the moment of failure beside it.
    """
    switching = bool(report.switches)
    table = titled_table(f"Outages ranked by impact{' after switching' if switching else ''} "
                         f"({report.finished} of {report.total_cases} cases, goal "
                         f"{report.goal}; base headroom {report.base.headroom_factor:.4f})")
    columns = [("outage" if switching else "out of service", "left"), ("headroom", "right"),
               ("lost", "right"), ("cut off", "left"), ("short", "left")]
    if switching:
        columns += [("switch moves", "left"), ("at failure", "left")]
    widths = {5: 10, 6: 7}  # the moves and the view at failure fold; keep them readable
    for k, (name, justify) in enumerate(columns):
        table.add_column(name, justify=justify, overflow="fold",  # type: ignore[arg-type]
                         no_wrap=switching and k < 5, min_width=widths.get(k))
    for r in report.results[:top]:
        short = f"{len(r.short)} scanner(s)" if r.short else "none"
        if switching:
            short = str(len(r.short))
        cells = [r.label, f"{r.headroom_factor:.4f}", format_power(r.delivered_lost_w),
                 _cut(r.cut_off, switching), short]
        if switching:
            at = r.at_failure
            cells += ["; ".join(m.label for m in r.moves) or "-",
                      f"{at.headroom_factor:.4f}; {len(at.cut_off)} cut off" if r.moves
                      else "same"]
        table.add_row(*cells)
    parts: list[Any] = [table]
    if len(report.results) > top:
        parts.append(Text(f"... {len(report.results) - top} more in the JSON/CSV output"))
    if switching:
        parts.append(Text(f"Corrective switching, {search_words(report)}."))
    title = ("Single points of failure after switching (dominators in the beam graph, any "
             "switch position)" if switching else
             "Single points of failure (dominators in the beam graph)")
    spof = titled_table(title)
    spof.add_column("node")
    spof.add_column("scanners it cuts off", overflow="fold")
    ranked = sorted(report.single_points.items(), key=lambda kv: (-len(kv[1]), kv[0]))
    for node, scanners in ranked[:top]:
        shown = ", ".join(scanners[:6]) + (f" ... ({len(scanners)} in all)"
                                           if len(scanners) > 6 else "")
        spof.add_row(node, shown)
    parts += [Text(""), spof]
    if len(ranked) > top:
        parts.append(Text(f"... {len(ranked) - top} more single points of failure in the "
                          "JSON/CSV output"))
    rescued = [n for n in report.single_points_at_failure if n not in report.single_points]
    if switching and rescued:
        parts.append(Text("Single points of failure only at the moment of failure (switching "
                          "restores their scanners): " + ", ".join(rescued)))
    if report.disagreements:
        parts.append(Text("dominators and re-plans disagree: " +
                          "; ".join(report.disagreements), style="bold red"))
    if report.interrupted:
        parts.append(Text(f"interrupted: {report.finished} of {report.total_cases} cases "
                          "finished", style="bold yellow"))
    parts.append(Text(CAUTION, style="dim italic"))
    return Group(*parts)


def _view_json(view: OutageView) -> dict[str, Any]:
    return {"status": view.status, "headroom_factor": rounded(view.headroom_factor),
            "headroom_lost": rounded(view.headroom_lost),
            "delivered_lost_w": rounded(view.delivered_lost_w),
            "source_used_w": rounded(view.source_used_w),
            "cut_off": list(view.cut_off),
            "short": [{"id": s, "shortfall_w": rounded(w)} for s, w in view.short],
            "losing": [{"id": s, "base_w": rounded(b), "case_w": rounded(c)}
                       for s, b, c in view.losing]}


def sweep_document(report: SweepReport, version: str) -> dict[str, Any]:
    """The sweep as a JSON-ready dict (``beamplan-outages/1``).

    Each outage's own fields are the view after corrective switching;
    ``at_failure`` holds the view with every switch where it was.
    """
    return {
        "format": OUTAGES_FORMAT, "beamplan_version": version, "layout": report.layout,
        "goal": report.goal, "total_cases": report.total_cases, "finished": report.finished,
        "interrupted": report.interrupted,
        "base": {"headroom_factor": rounded(report.base.headroom_factor),
                 "delivered_w": rounded(report.base.delivered_w)},
        "corrective_switching": {"search": report.switch_search,
                                 "switches": {k: list(v) for k, v in report.switches.items()}},
        "outages": [{"failed": list(r.failed), "kinds": list(r.kinds), **_view_json(r.after),
                     "switch_moves": _moves_json(r.moves), "switch_positions_tried": r.tried,
                     "at_failure": _view_json(r.at_failure)} for r in report.results],
        "single_points_of_failure": {k: list(v) for k, v in report.single_points.items()},
        "single_points_at_failure": {k: list(v)
                                     for k, v in report.single_points_at_failure.items()},
        "disagreements": list(report.disagreements), "caution": CAUTION}


def sweep_csv(report: SweepReport) -> dict[str, str]:
    """Tables: outages.csv (one row per case, both views) and single_points.csv."""
    outages = csv_text(["failed", "status", "headroom_factor", "headroom_lost",
                        "delivered_lost_w", "cut_off", "short", "switch_moves",
                        "at_failure_status", "at_failure_headroom_factor",
                        "at_failure_delivered_lost_w", "at_failure_cut_off",
                        "at_failure_short"],
                       ([" + ".join(r.failed), r.status, rounded(r.headroom_factor),
                         rounded(r.headroom_lost), rounded(r.delivered_lost_w),
                         ";".join(r.cut_off), ";".join(s for s, _ in r.short),
                         ";".join(m.label for m in r.moves), r.at_failure.status,
                         rounded(r.at_failure.headroom_factor),
                         rounded(r.at_failure.delivered_lost_w), ";".join(r.at_failure.cut_off),
                         ";".join(s for s, _ in r.at_failure.short)] for r in report.results))
    nodes = list(report.single_points) + [n for n in report.single_points_at_failure
                                          if n not in report.single_points]
    spof = csv_text(["node", "cuts_off", "cuts_off_at_failure"],
                    ([k, ";".join(report.single_points.get(k, ())),
                      ";".join(report.single_points_at_failure.get(k, ()))] for k in nodes))
    return {"outages.csv": outages, "single_points.csv": spof}


def to_json(document: dict[str, Any]) -> str:
    """Strict, indented JSON with a final newline (:func:`beamplan.report.document.to_json`)."""
    return strict_json(document)
