"""The availability report: terminal tables, ``beamplan-availability/1`` JSON and CSV."""

from __future__ import annotations

from typing import Any

from beamplan.analyses.availability import AvailabilityReport
from beamplan.analyses.availability_sim import Simulation
from beamplan.report.document import csv_text

__all__ = [
    "AVAILABILITY_FORMAT",
    "METHOD",
    "availability_csv",
    "availability_document",
    "availability_renderable",
]

AVAILABILITY_FORMAT = "beamplan-availability/1"
METHOD = ("state enumeration (R. Billinton, R. N. Allan, Reliability Evaluation of Power "
          "Systems, 2nd ed., Plenum 1996) over the outage sweep after corrective switching")


def availability_document(report: AvailabilityReport, version: str,
                          simulation: Simulation | None = None) -> dict[str, Any]:
    """The ``beamplan-availability/1`` document (docs/json-format.md)."""
    e = report.economics
    doc: dict[str, Any] = {
        "format": AVAILABILITY_FORMAT, "beamplan": version, "layout": report.layout,
        "file": report.file, "economics_file": e.file, "method": METHOD,
        "illustrative_defaults": list(e.defaulted),
        "inputs": {"hours_per_year": e.hours_per_year, "pair_threshold": e.threshold,
                   "switching_time_h": e.switching_time_h, "improvement": e.improvement},
        "components": [{"id": c.id, "kind": c.kind, "mtbf_h": c.mtbf_h, "mttr_h": c.mttr_h,
                        "unavailability": c.q} for c in report.components],
        "states": {"planned": len(report.states), "multiple": report.multiples_planned,
                   "probability_left_out": report.truncated_probability,
                   "list": [{"failed": list(s.failed), "probability": s.probability,
                             "moves": list(s.moves),
                             "passes_lost_per_hour": sum(v for _, v in s.after),
                             "passes_lost_per_hour_at_failure":
                                 sum(v for _, v in s.at_failure)}
                            for s in report.states if s.after or s.at_failure]},
        "scanners": [{"id": s.id, "wafers_per_hour": s.wph, "exposing": s.exposing,
                      "full_power_availability": s.full_power,
                      "exposure_hours_lost_per_year": s.hours_lost,
                      "passes_lost_per_year": s.wafers_lost,
                      "plasma_passes_lost_per_year": s.plasma_wafers_lost}
                     for s in report.scanners],
        "fab": {"passes_lost_per_year": report.wafers_lost,
                "passes_lost_per_year_upper_bound": report.wafers_lost_bound,
                "passes_lost_per_year_at_failure": report.wafers_lost_at_failure,
                "euv_not_delivered_mwh_per_year": report.euv_not_delivered_mwh,
                "plasma_passes_lost_per_year": sum(s.plasma_wafers_lost
                                                   for s in report.scanners)},
        "ranking": [{"id": r.id, "kind": r.kind, "mtbf_h": r.mtbf_h, "mttr_h": r.mttr_h,
                     "unavailability": r.unavailability, "passes_gained_per_year":
                         r.wafers_gained} for r in report.ranking],
        "interrupted": report.interrupted,
    }
    if simulation is not None:
        doc["simulation"] = {"years": simulation.years, "seed": simulation.seed,
                             "passes_lost_per_year": simulation.mean,
                             "ci95_low": simulation.low, "ci95_high": simulation.high,
                             "states_visited": simulation.states_visited,
                             "states_planned_on_the_way": simulation.states_planned,
                             "agrees": simulation.low <= report.wafers_lost <= simulation.high}
    return doc


def availability_csv(report: AvailabilityReport) -> dict[str, str]:
    """CSV tables: scanners and the ranking."""
    doc = availability_document(report, "")
    keys = ["id", "wafers_per_hour", "exposing", "full_power_availability",
            "exposure_hours_lost_per_year", "passes_lost_per_year", "plasma_passes_lost_per_year"]
    rank = ["id", "kind", "mtbf_h", "mttr_h", "unavailability", "passes_gained_per_year"]
    return {"availability_scanners.csv": csv_text(keys, [[s[k] for k in keys]
                                                         for s in doc["scanners"]]),
            "availability_ranking.csv": csv_text(rank, [[r[k] for k in rank]
                                                        for r in doc["ranking"]])}


def availability_renderable(report: AvailabilityReport, simulation: Simulation | None = None,
                            top: int = 10) -> Any:
    """The terminal report: per scanner, the fab's expected loss, the parts worth hardening."""
    from rich.console import Group
    from rich.text import Text

    from beamplan.report.cost_view import table

    e = report.economics
    sc = table("Per scanner and year (a pass is one wafer exposed once; plasma: the passes "
               "lost with its own plasma source)",
                ["scanner", "wph", "exposing", "full power", "hours lost", "passes lost",
                 "plasma"])
    for s in report.scanners:
        sc.add_row(s.id, f"{s.wph:.1f}", f"{s.exposing:.0%}", f"{s.full_power:.4%}",
                   f"{s.hours_lost:,.1f}", f"{s.wafers_lost:,.0f}", f"{s.plasma_wafers_lost:,.0f}")
    rank = table(f"Worth hardening first (unavailability × {e.improvement:g}; sources and "
                  "elements)", ["part", "kind", "MTBF h", "MTTR h", "passes gained/yr"], 2)
    shown = [r for r in report.ranking if r.kind != "scanner"][:top]
    for r in shown:
        rank.add_row(r.id, r.kind, f"{r.mtbf_h:,.0f}", f"{r.mttr_h:g}", f"{r.wafers_gained:,.0f}")
    plasma = sum(s.plasma_wafers_lost for s in report.scanners)
    lines = [
        f"Expected loss: {report.wafers_lost:,.0f} wafer passes a year after switching"
        + (f" ({report.wafers_lost_at_failure:,.0f} if no switch were moved; switching takes "
           f"{e.switching_time_h:g} h)" if report.wafers_lost_at_failure != report.wafers_lost
           else "")
        + f"; {report.euv_not_delivered_mwh:,.2f} MWh of EUV not "
        f"delivered a year. One plasma source per scanner: {plasma:,.0f} passes a year.",
        f"States planned: {len(report.states)} (none, {len(report.components)} single, "
        f"{report.multiples_planned} of two or more parts down, each of probability >= "
        f"{e.threshold:g}); probability left "
        f"out {report.truncated_probability:.2e} (counted as not at full power; at most "
        f"{report.wafers_lost_bound:,.0f} passes a year if every scanner lost all in them).",
        f"Method: {METHOD}.",
    ]
    if simulation is not None:
        agrees = simulation.low <= report.wafers_lost <= simulation.high
        lines.append(f"Check by sequential Monte Carlo ({simulation.years} years, seed "
                     f"{simulation.seed}): {simulation.mean:,.0f} passes a year, 95 % interval "
                     f"{simulation.low:,.0f} to {simulation.high:,.0f}: "
                     + ("the enumeration agrees." if agrees else "the enumeration is OUTSIDE."))
    if e.defaulted:
        lines.append("Illustrative defaults used for: " + ", ".join(e.defaulted) + ".")
    top_all = report.ranking[0] if report.ranking else None
    if top_all is not None and top_all.kind == "scanner":
        lines.append(f"(A scanner's own reliability ranks too: {top_all.id} would gain "
                     f"{top_all.wafers_gained:,.0f}; the full ranking is in the JSON and CSV.)")
    return Group(Text(f"Availability: {report.layout} ({report.file})", style="bold"), sc,
                 rank, Text("\n".join(lines)))
