"""The versioned JSON document of a plan (``beamplan-plan/1``) and its CSV tables.

The document is documented in docs/json-format.md. Keys keep a fixed order
and floats are rounded to 10 significant digits, so that the same input
gives byte-identical output.
"""

from __future__ import annotations

import csv
import io
import json
import os
from collections.abc import Iterable
from typing import Any

from beamplan.optimise.result import Plan
from beamplan.report import CAUTION
from beamplan.report.files import write_atomic

__all__ = ["PLAN_FORMAT", "csv_tables", "plan_document", "plan_json", "write_csv"]

PLAN_FORMAT = "beamplan-plan/1"


def _num(value: float | None) -> float | None:
    if value is None:
        return None
    rounded = float(f"{value:.10g}")
    return 0.0 if rounded == 0 else rounded


def _setting(value: Any) -> Any:
    if value is None:
        return None
    if isinstance(value, tuple):
        return {name: _num(fraction) for name, fraction in value}
    return _num(value)


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
        "headroom_factor": _num(plan.headroom_factor),
        "source_used_w": _num(plan.source_used_w),
        "source_available_w": _num(plan.source_available_w),
        "delivered_w": _num(plan.delivered_w),
        "efficiency": _num(plan.efficiency),
        "wavelength_m": _num(plan.wavelength_m),
        "photon_energy_ev": _num(plan.photon_energy_ev),
        "electrical_per_delivered": _num(plan.electrical_per_delivered),
        "sources": [{"id": s.id, "available_w": _num(s.available_w), "output_w": _num(s.output_w),
                     "electrical_w": _num(s.electrical_w)} for s in plan.sources],
        "scanners": [{"id": s.id, "need_w": _num(s.need_w), "delivered_w": _num(s.delivered_w),
                      "max_w": _num(s.max_w), "priority": s.priority,
                      "headroom": _num(s.headroom), "shortfall_w": _num(s.shortfall_w),
                      "status": s.status, "limits": list(s.limits),
                      "need_provenance": s.need_provenance,
                      "dose_mj_cm2": _num(None if s.dose_j_m2 is None else s.dose_j_m2 / 10),
                      "dose_set_by": s.dose_set_by, "target_wph": _num(s.target_wph),
                      "achieved_wph": _num(s.achieved_wph),
                      "throughput_limit": s.throughput_limit} for s in plan.scanners],
        "elements": [{"id": e.id, "kind": e.kind, "incident_w": _num(e.incident_w),
                      "absorbed_w": _num(e.absorbed_w), "output_w": _num(e.output_w),
                      "heat_limit_w": _num(e.heat_limit_w),
                      "heat_margin_w": _num(e.heat_margin_w), "setting": _setting(e.setting),
                      "gain": _num(e.gain), "provenance": e.provenance}
                     for e in plan.elements],
        "losses": {"source_w": _num(plan.losses.source_w),
                   "delivered_w": _num(plan.losses.delivered_w),
                   "absorbed_w": _num(plan.losses.absorbed_w),
                   "dumped_w": _num(plan.losses.dumped_w),
                   "absorbed_by_kind_w": {k: _num(v) for k, v in plan.losses.by_kind}},
        "binding": [{"constraint": b.constraint, "family": b.family, "subject": b.subject,
                     "description": b.description, "shadow_price": _num(b.shadow_price),
                     "unit": b.unit, "meaning": b.meaning} for b in plan.binding],
        "solver": {"name": plan.solver, "version": plan.solver_version,
                   "lp_stages": plan.stages},
        "warnings": list(plan.warnings),
        "caution": CAUTION,
    }


def plan_json(plan: Plan, version: str) -> str:
    """The JSON text of a plan (indented, newline-terminated)."""
    return json.dumps(plan_document(plan, version), indent=2, ensure_ascii=False) + "\n"


def _table(header: list[str], rows: Iterable[list[Any]]) -> str:
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
        "sources.csv": _table(["id", "available_w", "output_w", "electrical_w"],
                              ([s.id, _num(s.available_w), _num(s.output_w),
                                _num(s.electrical_w)] for s in plan.sources)),
        "scanners.csv": _table(["id", "need_w", "delivered_w", "max_w", "priority", "headroom",
                                "shortfall_w", "status"],
                               ([s.id, _num(s.need_w), _num(s.delivered_w), _num(s.max_w),
                                 s.priority, _num(s.headroom), _num(s.shortfall_w), s.status]
                                for s in plan.scanners)),
        "elements.csv": _table(["id", "kind", "incident_w", "absorbed_w", "output_w",
                                "heat_limit_w", "heat_margin_w", "setting", "gain"],
                               ([e.id, e.kind, _num(e.incident_w), _num(e.absorbed_w),
                                 _num(e.output_w), _num(e.heat_limit_w), _num(e.heat_margin_w),
                                 setting(e.setting), _num(e.gain)] for e in plan.elements)),
        "losses.csv": _table(["where", "power_w"],
                             [["delivered", _num(plan.losses.delivered_w)],
                              *([f"absorbed:{k}", _num(v)] for k, v in plan.losses.by_kind),
                              ["dumped", _num(plan.losses.dumped_w)],
                              ["source", _num(plan.losses.source_w)]]),
        "binding.csv": _table(["constraint", "family", "subject", "shadow_price", "unit",
                               "description"],
                              ([b.constraint, b.family, b.subject, _num(b.shadow_price), b.unit,
                                b.description] for b in plan.binding)),
    }


def write_csv(plan: Plan, folder: str, inputs: Iterable[str] = ()) -> list[str]:
    """Write the CSV tables into ``folder`` (created if needed); return the paths."""
    from beamplan.errors import OutputError

    try:
        os.makedirs(folder, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"cannot create the folder {folder!r}: {exc.strerror}") from exc
    written = []
    for name, text in csv_tables(plan).items():
        path = os.path.join(folder, name)
        write_atomic(path, text, inputs)
        written.append(path)
    return written
