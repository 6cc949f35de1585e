"""Reports of an ageing study: terminal (rich), JSON ``beamplan-ageing/1`` and CSV tables."""

from __future__ import annotations

from typing import Any

from rich.console import Group
from rich.text import Text

from beamplan.analyses.ageing import Runway
from beamplan.analyses.maintenance import MaintenancePlan
from beamplan.report import CAUTION
from beamplan.report.document import csv_text, rounded, signed_percent
from beamplan.report.terminal import titled_table

__all__ = ["AGEING_FORMAT", "ageing_csv", "ageing_document", "ageing_renderable"]

AGEING_FORMAT = "beamplan-ageing/1"
ILLUSTRATIVE = ("rates marked illustrative are invented for the demo; take real rates from "
                "witness samples of the fab")


def _table(title: str, columns: list[str]) -> Any:
    table = titled_table(title)
    for i, name in enumerate(columns):
        table.add_column(name, justify="left" if i < 3 else "right", no_wrap=True)
    return table


def _hours(h: float | None) -> str:
    return "-" if h is None else f"{h:,.0f} h"


def _runway_words(r: Runway) -> str:
    if r.runway_h is None:
        return (f"every need holds for the whole horizon ({_hours(r.horizon_h)}) without "
                "maintenance")
    date = r.date(r.runway_h)
    when = f"{_hours(r.runway_h)}" + (f" ({date})" if date else "")
    optic = (f"; the optic that limits it: {r.limiting_optic} at "
             f"{signed_percent((r.limiting_gain or 1.0) - 1.0)} of new"
             if r.limiting_optic else "")
    return f"every need holds until {when}; then {r.scanner} falls short{optic}"


def _skip_words(value: float | None, increase: float | None, unit: str) -> str:
    if value is None:
        return "needed"
    return f"+{increase:,.0f} {unit}" if increase and increase > 0 else "+0 (a tie)"


def ageing_renderable(runway: Runway, plan: MaintenancePlan | None,
                      illustrative: bool = False) -> Group:
    """The terminal report: the runway, the margin curves in brief, the schedule."""
    parts: list[Any] = [Text("Runway: ", style="bold") + Text(_runway_words(runway))]
    if runway.binding:
        parts.append(Text("Binding at the last plan that held: " + "; ".join(runway.binding)))
    table = _table("Headroom over time (headroom goal, re-planned at each step)",
                         ["scanner", "start", "lowest", "at the end"])
    first, last = runway.samples[0], runway.samples[-1]
    lows = runway.min_headroom
    for sid in first.headroom:
        table.add_row(sid, signed_percent(first.headroom[sid]), signed_percent(lows[sid]),
                      signed_percent(last.headroom.get(sid, float("nan"))))
    parts.append(table)
    if plan is not None:
        unit = plan.currency if plan.objective == "cost" else "h downtime"
        if not plan.feasible:
            parts.append(Text("Maintenance plan: no schedule of the actions given holds "
                              "every need over the horizon", style="bold red"))
        else:
            head = (f"Maintenance plan ({plan.objective}, {len(plan.windows_h)} windows over "
                    f"{_hours(plan.horizon_h)}): {len(plan.actions)} actions, "
                    f"{plan.total_cost:,.0f} {plan.currency}, "
                    f"{plan.total_downtime_h:,.0f} h downtime")
            if plan.gap > 0:
                head += f" (within {plan.gap:.2%} of the best, time limit)"
            head += "; 'without it': the best schedule that skips the action"
            sched = _table(head, ["when", "optic", "action", "cost", "downtime", "without it"])
            skips = {(s.element, s.window, s.action): s for s in plan.skips}
            for d in plan.actions:
                s = skips.get((d.element, d.window, d.action))
                words = "-" if s is None else _skip_words(s.objective_without, s.increase, unit)
                sched.add_row(runway.date(d.hour) or _hours(d.hour),
                              d.element, d.action, f"{d.cost:,.0f}", _hours(d.downtime_h),
                              words)
            parts.append(sched)
            parts.append(Text("Check (the schedule simulated step by step, re-planning): " +
                              _check_words(plan), style="green" if plan.check_ok else "red"))
    if illustrative:
        parts.append(Text("Note: " + ILLUSTRATIVE, style="dim"))
    parts.append(Text(CAUTION, style="dim"))
    return Group(*parts)


def _check_words(plan: MaintenancePlan) -> str:
    check = plan.check
    if check is None:
        return "not run"
    if check.interrupted:
        return "interrupted"
    lows = check.min_headroom
    worst = min(lows, key=lambda k: (lows[k], k))
    verdict = "every need met over the horizon" if plan.check_ok else "a need is not met"
    rounds = f"; requirements tightened {plan.rounds - 1}x" if plan.rounds > 1 else ""
    return f"{verdict}; lowest headroom {signed_percent(lows[worst])} ({worst}){rounds}"


def _runway_json(r: Runway) -> dict[str, Any]:
    return {"runway_h": r.runway_h, "date": r.date(r.runway_h), "scanner": r.scanner,
            "limiting_optic": r.limiting_optic, "limiting_gain": r.limiting_gain,
            "binding": list(r.binding), "horizon_h": r.horizon_h, "step_h": r.step_h,
            "tolerance_h": r.tolerance_h, "replans": r.replans, "interrupted": r.interrupted}


def _samples_json(r: Runway) -> list[dict[str, Any]]:
    return [{"hour": s.hour, "date": r.date(s.hour), "label": s.label, "met": s.met,
             "headroom": dict(s.headroom), "gain": dict(s.gain)} for s in r.samples]


def ageing_document(runway: Runway, plan: MaintenancePlan | None, version: str,
                    layout: str, ageing_file: str, illustrative: bool) -> dict[str, Any]:
    """The ``beamplan-ageing/1`` document (docs/json-format.md)."""
    doc: dict[str, Any] = {"format": AGEING_FORMAT, "beamplan": version, "layout": layout,
                           "ageing_file": ageing_file, "start": runway.date(0.0),
                           "illustrative_rates": illustrative,
                           "runway": _runway_json(runway), "curve": _samples_json(runway)}
    if plan is not None:
        check = plan.check
        doc["maintenance"] = {
            "objective": plan.objective, "currency": plan.currency,
            "windows_h": list(plan.windows_h), "horizon_h": plan.horizon_h,
            "feasible": plan.feasible, "total_cost": plan.total_cost,
            "total_downtime_h": plan.total_downtime_h, "gap": plan.gap,
            "binaries": plan.binaries, "rounds": plan.rounds,
            "tightened": dict(plan.tightened),
            "actions": [{"window": d.window, "hour": d.hour, "date": runway.date(d.hour),
                         "optic": d.element, "action": d.action, "cost": d.cost,
                         "downtime_h": d.downtime_h} for d in plan.actions],
            "skips": [{"window": s.window, "optic": s.element, "action": s.action,
                       "objective_without": s.objective_without, "increase": s.increase}
                      for s in plan.skips],
            "check": None if check is None else {
                "ok": plan.check_ok, "lowest_headroom": check.min_headroom,
                "interrupted": check.interrupted, "replans": check.replans,
                "curve": _samples_json(check)}}
    return doc


def ageing_csv(runway: Runway, plan: MaintenancePlan | None) -> dict[str, str]:
    """Tables: runway.csv (headroom per scanner per time), gains.csv, schedule.csv, check.csv."""
    def curve(r: Runway, what: str) -> str:
        keys = list(getattr(r.samples[0], what))
        return csv_text(["hour", "date", "label", *keys],
                        ([rounded(s.hour), r.date(s.hour) or "", s.label,
                          *(rounded(getattr(s, what).get(k)) for k in keys)]
                         for s in r.samples))

    tables = {"runway.csv": curve(runway, "headroom"), "gains.csv": curve(runway, "gain")}
    if plan is not None:
        skips = {(s.element, s.window, s.action): s for s in plan.skips}
        rows = []
        for d in plan.actions:
            s = skips.get((d.element, d.window, d.action))
            rows.append([d.window, rounded(d.hour), runway.date(d.hour) or "", d.element,
                         d.action, rounded(d.cost), rounded(d.downtime_h),
                         "" if s is None or s.objective_without is None
                         else rounded(s.objective_without),
                         "infeasible" if s is not None and s.objective_without is None else ""])
        tables["schedule.csv"] = csv_text(["window", "hour", "date", "optic", "action", "cost",
                                           "downtime_h", "objective_without", "without"], rows)
        if plan.check is not None:
            tables["check.csv"] = curve(plan.check, "headroom")
    return tables
