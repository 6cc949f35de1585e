"""Tolerance reports as data: the ``beamplan-tolerance/1`` JSON document and CSV tables."""

from __future__ import annotations

from typing import Any

from beamplan.analyses.tolerance_stats import Z95
from beamplan.analyses.tolerance_summary import RESOLUTION, Ranked, ToleranceSummary
from beamplan.report.document import csv_text

__all__ = [
    "SOBOL_SOURCE",
    "TOLERANCE_FORMAT",
    "WILSON_SOURCE",
    "tolerance_csv",
    "tolerance_document",
]

TOLERANCE_FORMAT = "beamplan-tolerance/1"
WILSON_SOURCE = "Wilson score interval (E. B. Wilson, J. Am. Stat. Assoc. 22 (1927) 209)"
SOBOL_SOURCE = ("Sobol' first-order and total indices (Sobol' 2001), Saltelli et al. 2010 "
                "estimators (Comput. Phys. Commun. 181, 259) through SALib")


def _ranked(rows: tuple[Ranked, ...]) -> list[dict[str, Any]]:
    return [{"tolerance": r.tolerance, "first": r.first, "total": r.total,
             "first_conf": r.first_conf, "total_conf": r.total_conf} for r in rows]


def tolerance_document(summary: ToleranceSummary, version: str) -> dict[str, Any]:
    """The run as a JSON-ready dict in the documented key order (docs/json-format.md).

    Examples
    --------
    >>> import numpy as np
    >>> from beamplan.analyses.tolerance import EDGES, Tally, ToleranceRun
    >>> from beamplan.analyses.tolerance_model import ToleranceModel
    >>> from beamplan.analyses.tolerance_summary import summarise
    >>> hist = np.zeros((1, len(EDGES) - 1), dtype=int)
    >>> model = ToleranceModel((), (), (), (), (), ())
    >>> run = ToleranceRun("x", "fixed", "random", 0, 0, ("a",), (100.0,), (1.1,),
    ...                    Tally(0, np.array([0]), 0, hist, hist[0]), model, None, False)
    >>> tolerance_document(summarise(run), "0.1.0")["format"]
    'beamplan-tolerance/1'
    """
    run = summary.run
    model = run.model
    members: dict[str, list[str]] = {}
    for v in model.variables:
        members.setdefault(v.tolerance.name, []).append(
            v.knob.node + (f".{v.knob.port}" if v.knob.port else ""))
    tolerances = []
    seen = set()
    for v in model.variables:
        t = v.tolerance
        if t.name in seen:
            continue
        seen.add(t.name)
        tolerances.append({"name": t.name, t.target_kind: t.target, "property": t.property,
                           "port": t.port, "spread": t.spread, "relative": t.relative,
                           "distribution": t.distribution,
                           "bounds": list(t.bounds) if t.bounds else None, "group": t.group,
                           "members": members[t.name]})
    sensitivity = None
    if run.sensitivity is not None:
        sensitivity = {"method": SOBOL_SOURCE, "base_samples": run.sensitivity.base_samples,
                       "fab_wide_output": "lowest delivered/need factor",
                       "ranking": _ranked(summary.ranking),
                       "scanners": [{"id": sid, "ranking": _ranked(rows)}
                                    for sid, rows in summary.per_scanner]}
    return {
        "format": TOLERANCE_FORMAT,
        "beamplan": version,
        "layout": run.layout,
        "mode": run.mode,
        "sampler": run.sampler,
        "seed": run.seed,
        "samples": run.tally.samples,
        "requested": run.requested,
        "partial": run.interrupted,
        "interval": {"method": WILSON_SOURCE, "confidence": 0.95, "z": Z95},
        "all_met": {"probability": summary.all_met, "low": summary.all_low,
                    "high": summary.all_high,
                    "lowest_headroom_q05": summary.lowest_headroom[0],
                    "lowest_headroom_q50": summary.lowest_headroom[1],
                    "lowest_headroom_q95": summary.lowest_headroom[2],
                    "heat_limit_exceeded": summary.overheated},
        "width": run.width,
        "samples_for_width": summary.needed,
        "quantile_resolution": RESOLUTION,
        "interpolation_error": model.interpolation_error,
        "scanners": [{"id": s.id, "need_w": s.need_w, "planned_headroom": s.planned_headroom,
                      "probability": s.probability, "low": s.low, "high": s.high,
                      "headroom_q05": s.headroom[0], "headroom_q50": s.headroom[1],
                      "headroom_q95": s.headroom[2]} for s in summary.scanners],
        "sensitivity": sensitivity,
        "tolerances": tolerances,
    }


def tolerance_csv(summary: ToleranceSummary) -> dict[str, str]:
    """CSV tables: ``scanners.csv``, ``fab.csv`` and ``sensitivity.csv``."""
    scanners = csv_text(
        ["id", "need_w", "planned_headroom", "probability", "low", "high", "headroom_q05",
         "headroom_q50", "headroom_q95"],
        [[s.id, s.need_w, s.planned_headroom, s.probability, s.low, s.high, *s.headroom]
         for s in summary.scanners])
    run = summary.run
    fab = csv_text(["mode", "samples", "partial", "probability", "low", "high",
                    "samples_for_width"],
                   [[run.mode, run.tally.samples, str(run.interrupted).lower(),
                     summary.all_met, summary.all_low, summary.all_high, summary.needed]])
    rows = [["fab (lowest factor)", r.tolerance, r.first, r.total, r.first_conf, r.total_conf]
            for r in summary.ranking]
    for sid, ranked in summary.per_scanner:
        rows += [[sid, r.tolerance, r.first, r.total, r.first_conf, r.total_conf]
                 for r in ranked]
    sens = csv_text(["output", "tolerance", "first", "total", "first_conf", "total_conf"], rows)
    return {"scanners.csv": scanners, "fab.csv": fab, "sensitivity.csv": sens}
