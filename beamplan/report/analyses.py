"""Reports of what-if comparisons and outage sweeps: rich renderables, JSON, CSV.

Documents: ``beamplan-cases/1`` and ``beamplan-outages/1`` (docs/json-format.md).
"""

from __future__ import annotations

from typing import Any

from rich.console import Group
from rich.text import Text

from beamplan.analyses.compare import Comparison
from beamplan.analyses.outages import SweepReport
from beamplan.optimise.result import Plan
from beamplan.report import CAUTION
from beamplan.report.document import csv_text, rounded, signed_percent, signed_power
from beamplan.report.document import to_json as strict_json
from beamplan.report.terminal import titled_table
from beamplan.units import format_power

__all__ = ["cases_csv", "cases_document", "cases_renderable", "sweep_csv", "sweep_document",
           "sweep_renderable", "to_json"]

CASES_FORMAT = "beamplan-cases/1"
OUTAGES_FORMAT = "beamplan-outages/1"


def _short(plan: Plan) -> str:
    short = [s for s in plan.scanners if s.status in ("short", "cut off")]
    if not short:
        return "none"
    return ", ".join(f"{s.id} -{format_power(s.shortfall_w)}" for s in short[:3]) + (
        f" (+{len(short) - 3})" if len(short) > 3 else "")


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
            elif s.status == "out of service":
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
        cases.append(entry)
    return {"format": CASES_FORMAT, "beamplan_version": version, "layout": comparison.layout,
            "goal": comparison.goal, "settings_stability": comparison.steady,
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


def sweep_renderable(report: SweepReport, top: int = 20) -> Group:
    """The ranked outages, the single points of failure, and the sweep's own checks."""
    table = titled_table(f"Outages ranked by impact ({report.finished} of {report.total_cases} "
                        f"cases, goal {report.goal}; base headroom "
                        f"{report.base.headroom_factor:.4f})")
    for name, justify in (("out of service", "left"), ("headroom", "right"),
                          ("lost", "right"), ("cut off", "left"), ("short", "left")):
        table.add_column(name, justify=justify, overflow="fold")  # type: ignore[arg-type]
    for r in report.results[:top]:
        cut = ", ".join(r.cut_off[:4]) + (" ..." if len(r.cut_off) > 4 else "")
        short = f"{len(r.short)} scanner(s)" if r.short else "none"
        table.add_row(r.label, f"{r.headroom_factor:.4f}", format_power(r.delivered_lost_w),
                      cut or "-", short)
    parts: list[Any] = [table]
    if len(report.results) > top:
        parts.append(Text(f"... {len(report.results) - top} more in the JSON/CSV output"))
    spof = titled_table("Single points of failure (dominators in the beam graph)")
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
    if report.disagreements:
        parts.append(Text("dominators and re-plans disagree: " +
                          "; ".join(report.disagreements), style="bold red"))
    if report.interrupted:
        parts.append(Text(f"interrupted: {report.finished} of {report.total_cases} cases "
                          "finished", style="bold yellow"))
    parts.append(Text(CAUTION, style="dim italic"))
    return Group(*parts)


def sweep_document(report: SweepReport, version: str) -> dict[str, Any]:
    """The sweep as a JSON-ready dict (``beamplan-outages/1``)."""
    return {
        "format": OUTAGES_FORMAT, "beamplan_version": version, "layout": report.layout,
        "goal": report.goal, "total_cases": report.total_cases, "finished": report.finished,
        "interrupted": report.interrupted,
        "base": {"headroom_factor": rounded(report.base.headroom_factor),
                 "delivered_w": rounded(report.base.delivered_w)},
        "outages": [{"failed": list(r.failed), "kinds": list(r.kinds), "status": r.status,
                     "headroom_factor": rounded(r.headroom_factor),
                     "headroom_lost": rounded(r.headroom_lost),
                     "delivered_lost_w": rounded(r.delivered_lost_w),
                     "source_used_w": rounded(r.source_used_w),
                     "cut_off": list(r.cut_off),
                     "short": [{"id": s, "shortfall_w": rounded(w)} for s, w in r.short],
                     "losing": [{"id": s, "base_w": rounded(b), "case_w": rounded(c)}
                                for s, b, c in r.losing]} for r in report.results],
        "single_points_of_failure": {k: list(v) for k, v in report.single_points.items()},
        "disagreements": list(report.disagreements), "caution": CAUTION}


def sweep_csv(report: SweepReport) -> dict[str, str]:
    """Tables: outages.csv (one row per case) and single_points.csv."""
    outages = csv_text(["failed", "status", "headroom_factor", "headroom_lost",
                      "delivered_lost_w", "cut_off", "short"],
                     ([" + ".join(r.failed), r.status, rounded(r.headroom_factor),
                       rounded(r.headroom_lost), rounded(r.delivered_lost_w), ";".join(r.cut_off),
                       ";".join(s for s, _ in r.short)] for r in report.results))
    spof = csv_text(["node", "cuts_off"], ([k, ";".join(v)] for k, v in
                                         report.single_points.items()))
    return {"outages.csv": outages, "single_points.csv": spof}


def to_json(document: dict[str, Any]) -> str:
    """Strict, indented JSON with a final newline (:func:`beamplan.report.document.to_json`)."""
    return strict_json(document)
