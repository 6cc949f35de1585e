"""The versioned JSON document of a plan (``beamplan-plan/1``) and its CSV tables.

The document is documented in docs/json-format.md. Keys keep a fixed order
and floats are rounded to 10 significant digits, so that the same input
gives byte-identical output.
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Iterable
from typing import Any

from beamplan.optimise.result import Plan
from beamplan.report import CAUTION
from beamplan.report.files import write_tables

__all__ = ["PLAN_FORMAT", "csv_tables", "plan_document", "plan_json", "write_csv"]

PLAN_FORMAT = "beamplan-plan/1"


def rounded(value: float | None) -> float | None:
    if value is None:
        return None
    rounded = float(f"{value:.10g}")
    return 0.0 if rounded == 0 else rounded


def _setting(value: Any) -> Any:
    if value is None:
        return None
    if isinstance(value, tuple):
        return {name: rounded(fraction) for name, fraction in value}
    return rounded(value)


def plan_document(plan: Plan, version: str) -> dict[str, Any]:
    """The plan as a JSON-ready dict in the documented key order.

    Examples
    --------
    >>> import beamplan
    >>> doc = plan_document(beamplan.plan("layouts/pilot-line.yaml"), "0.1.0")
    >>> doc["format"], doc["status"], [s["id"] for s in doc["scanners"]][:1]
    ('beamplan-plan/1', 'met', ['litho-p1'])
    """
    return {
        "format": PLAN_FORMAT,
        "beamplan_version": version,
        "layout": {"name": plan.layout, "file": plan.file, "sha256": plan.sha256},
        "goal": plan.goal,
        "status": plan.status,
        "headroom_factor": rounded(plan.headroom_factor),
        "source_used_w": rounded(plan.source_used_w),
        "source_available_w": rounded(plan.source_available_w),
        "delivered_w": rounded(plan.delivered_w),
        "efficiency": rounded(plan.efficiency),
        "wavelength_m": rounded(plan.wavelength_m),
        "photon_energy_ev": rounded(plan.photon_energy_ev),
        "photon_flux_per_w": rounded(plan.photon_flux_per_watt),
        "electrical_w": rounded(plan.electrical_w),
        "electrical_per_delivered": rounded(plan.electrical_per_delivered),
        "surplus": {"mode": plan.surplus_mode, "unused_w": rounded(plan.unused_w),
                    "sent_w": rounded(plan.surplus_w),
                    "to": {eid: rounded(w) for eid, w in plan.surplus_to}},
        "sources": [{"id": s.id, "available_w": rounded(s.available_w),
                     "output_w": rounded(s.output_w), "electrical_w": rounded(s.electrical_w),
                     "electrical_full_w": rounded(s.electrical_full_w),
                     "electrical_fixed_w": rounded(s.electrical_fixed_w),
                     "surplus": s.surplus, "standby": s.standby}
                    for s in plan.sources],
        "scanners": [{"id": s.id, "need_w": rounded(s.need_w),
                      "delivered_w": rounded(s.delivered_w),
                      "max_w": rounded(s.max_w), "max_power_w": rounded(s.max_power_w),
                      "useful_ceiling_w": rounded(s.useful_ceiling_w), "priority": s.priority,
                      "headroom": rounded(s.headroom), "shortfall_w": rounded(s.shortfall_w),
                      "status": s.status, "limits": list(s.limits),
                      "over_delivery_reason": s.over_delivery_reason,
                      "need_provenance": s.need_provenance,
                      "dose_mj_cm2": rounded(None if s.dose_j_m2 is None else s.dose_j_m2 / 10),
                      "dose_set_by": s.dose_set_by, "target_wph": rounded(s.target_wph),
                      "achieved_wph": rounded(s.achieved_wph),
                      "throughput_limit": s.throughput_limit} for s in plan.scanners],
        "elements": [{"id": e.id, "kind": e.kind, "incident_w": rounded(e.incident_w),
                      "absorbed_w": rounded(e.absorbed_w), "output_w": rounded(e.output_w),
                      "heat_limit_w": rounded(e.heat_limit_w),
                      "heat_margin_w": rounded(e.heat_margin_w), "setting": _setting(e.setting),
                      "gain": rounded(e.gain), "provenance": e.provenance}
                     for e in plan.elements],
        "losses": {"source_w": rounded(plan.losses.source_w),
                   "delivered_w": rounded(plan.losses.delivered_w),
                   "absorbed_w": rounded(plan.losses.absorbed_w),
                   "dumped_w": rounded(plan.losses.dumped_w),
                   "absorbed_by_kind_w": {k: rounded(v) for k, v in plan.losses.by_kind}},
        "binding": [{"constraint": b.constraint, "family": b.family, "subject": b.subject,
                     "description": b.description, "shadow_price": rounded(b.shadow_price),
                     "unit": b.unit, "meaning": b.meaning} for b in plan.binding],
        "solver": {"name": plan.solver, "version": plan.solver_version,
                   "lp_stages": plan.stages},
        "warnings": list(plan.warnings),
        "caution": CAUTION,
    }


def plan_json(plan: Plan, version: str) -> str:
    """The JSON text of a plan (indented, newline-terminated)."""
    return json.dumps(plan_document(plan, version), indent=2, ensure_ascii=False) + "\n"


def csv_text(header: list[str], rows: Iterable[list[Any]]) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for row in rows:
        writer.writerow(["" if v is None else v for v in row])
    return buffer.getvalue()


def csv_tables(plan: Plan) -> dict[str, str]:
    """One CSV text per table: sources, scanners, elements, losses, binding."""
    def setting(value: Any) -> str:
        s = _setting(value)
        if isinstance(s, dict):
            return ";".join(f"{k}={v}" for k, v in s.items())
        return "" if s is None else str(s)

    return {
        "sources.csv": csv_text(["id", "available_w", "output_w", "electrical_w"],
                              ([s.id, rounded(s.available_w), rounded(s.output_w),
                                rounded(s.electrical_w)] for s in plan.sources)),
        "scanners.csv": csv_text(["id", "need_w", "delivered_w", "max_w", "priority", "headroom",
                                "shortfall_w", "status"],
                               ([s.id, rounded(s.need_w), rounded(s.delivered_w), rounded(s.max_w),
                                 s.priority, rounded(s.headroom), rounded(s.shortfall_w), s.status]
                                for s in plan.scanners)),
        "elements.csv": csv_text(["id", "kind", "incident_w", "absorbed_w", "output_w",
                                "heat_limit_w", "heat_margin_w", "setting", "gain"],
                               ([e.id, e.kind, rounded(e.incident_w), rounded(e.absorbed_w),
                                 rounded(e.output_w), rounded(e.heat_limit_w),
                                 rounded(e.heat_margin_w),
                                 setting(e.setting), rounded(e.gain)] for e in plan.elements)),
        "losses.csv": csv_text(["where", "power_w"],
                             [["delivered", rounded(plan.losses.delivered_w)],
                              *([f"absorbed:{k}", rounded(v)] for k, v in plan.losses.by_kind),
                              ["dumped", rounded(plan.losses.dumped_w)],
                              ["source", rounded(plan.losses.source_w)]]),
        "binding.csv": csv_text(["constraint", "family", "subject", "shadow_price", "unit",
                               "description"],
                              ([b.constraint, b.family, b.subject, rounded(b.shadow_price), b.unit,
                                b.description] for b in plan.binding)),
    }


def write_csv(plan: Plan, folder: str, inputs: Iterable[str] = ()) -> list[str]:
    """Write the CSV tables into ``folder`` (created if needed); return the paths."""
    return write_tables(folder, csv_tables(plan), inputs)
