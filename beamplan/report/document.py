"""The versioned JSON document of a plan (``beamplan-plan/1``) and its CSV tables.

The document is documented in docs/json-format.md. Keys keep a fixed order
and every number goes through :func:`number` (the one rounding rule of the
JSON and CSV outputs), so that the same input gives byte-identical output.
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Iterable
from typing import Any

from beamplan.optimise.result import Plan
from beamplan.optimise.sizing import Sizing
from beamplan.report import CAUTION
from beamplan.report.files import write_tables
from beamplan.units import format_power

__all__ = ["PLAN_FORMAT", "csv_tables", "number", "plan_document", "plan_json", "signed_number",
           "signed_percent", "signed_power", "strict", "to_json", "write_csv"]

PLAN_FORMAT = "beamplan-plan/1"


POWER_RESOLUTION_W = 1e-6
"""Powers (keys ending in ``_w``) are given to 1 µW."""

RATIO_RESOLUTION = 1e-8
"""Dimensionless ratios (headroom, efficiency, gains, shares) are given to 1e-8."""

SIGNIFICANT_DIGITS = 9
"""Every number is also rounded to this many significant digits."""

_RATIO_KEYS = frozenset({"headroom", "headroom_factor", "headroom_lost", "best_headroom_factor",
                         "efficiency", "gain", "setting", "base", "case",
                         "settings_stability", "probability", "low", "high", "first",
                         "total", "first_conf", "total_conf", "headroom_q05", "headroom_q50",
                         "headroom_q95", "planned_headroom", "interpolation_error",
                         "exposing", "cost_share", "discount_rate", "full_power_availability",
                         "limiting_gain", "lowest_headroom", "gap"})
# {name: number} maps whose values share the key's kind
_MAP_KEYS = frozenset({"setting", "headroom", "gain", "lowest_headroom"})


def _decimals(key: str | None) -> int | None:
    if key is None:
        return None
    if key.endswith("_w") or key == "power_w":
        return 6  # POWER_RESOLUTION_W
    if key in _RATIO_KEYS:
        return 8  # RATIO_RESOLUTION
    return None


def number(value: float | None, key: str | None = None) -> float | None:
    """A number as every JSON and CSV output gives it: the one rounding rule.

    Rounded to :data:`SIGNIFICANT_DIGITS` significant digits; then a power (a
    ``key`` ending in ``_w``) to 1 µW and a dimensionless ratio (headroom,
    efficiency, gain, share) to 1e-8, so solver noise below the resolution
    reads 0. Negative zero becomes 0. A number that is not finite (an
    unbounded limit, a ratio to a zero need) becomes ``None`` (JSON ``null``,
    an empty CSV cell). Integers and ``None`` pass unchanged.

    Examples
    --------
    >>> number(1399.9999991, "delivered_w"), number(-2.220446049250313e-16, "headroom")
    (1400.0, 0.0)
    >>> number(3.4e-7, "shortfall_w"), number(-0.0), number(float("inf"), "max_w")
    (0.0, 0.0, None)
    >>> number(1.35e-08, "wavelength_m"), number(7)
    (1.35e-08, 7)
    """
    if value is None or isinstance(value, (bool, int)):
        return value
    value = float(value)
    if value != value or value in (float("inf"), float("-inf")):
        return None
    result = float(f"{value:.{SIGNIFICANT_DIGITS}g}")
    decimals = _decimals(key)
    if decimals is not None:
        result = round(result, decimals)
    return result + 0.0  # -0.0 + 0.0 is +0.0


def signed_number(value: float, decimals: int) -> str:
    """A number with its sign at ``decimals`` places; zero (also -0 and noise) has no sign.

    The one minus sign of every report is ASCII ``-``.

    Examples
    --------
    >>> signed_number(0.25, 2), signed_number(-3.0, 0), signed_number(-4e-9, 4)
    ('+0.25', '-3', '0.0000')
    """
    text = f"{value:+.{decimals}f}"
    return text[1:] if float(text[1:]) == 0 else text


def signed_percent(fraction: float, decimals: int = 1) -> str:
    """A fraction as a signed percentage, never ``-0.0%``.

    Examples
    --------
    >>> signed_percent(0.125), signed_percent(-0.5, 0), signed_percent(-1e-12)
    ('+12.5%', '-50%', '0.0%')
    """
    return signed_number(fraction * 100, decimals) + "%"


def signed_power(power_w: float) -> str:
    """A power change with its sign (ASCII), ``0 W`` when it rounds to nothing.

    Examples
    --------
    >>> signed_power(12.0), signed_power(-1200.0), signed_power(-1e-9)
    ('+12.0 W', '-1.20 kW', '0 W')
    """
    text = format_power(power_w)
    return text if text.startswith(("-", "0 ")) else "+" + text


def rounded(value: float | None) -> float | None:
    """:func:`number` without a key (significant digits only; the writers add the rest)."""
    return number(value)


def strict(document: Any, key: str | None = None) -> Any:
    """The document with every number as :func:`number` gives it, by its key.

    Lists pass their key to their items; a ``{name: number}`` map (a key ending
    in ``_w``, or ``setting``) passes its own key to its values.

    Examples
    --------
    >>> strict({"need_w": 399.99999999, "absorbed_by_kind_w": {"mirror": -1e-9},
    ...         "headroom": [float("nan"), 0.1000000000004]})
    {'need_w': 400.0, 'absorbed_by_kind_w': {'mirror': 0.0}, 'headroom': [None, 0.1]}
    """
    if isinstance(document, dict):
        inherit = key is not None and (key.endswith("_w") or key in _MAP_KEYS)
        return {k: strict(v, key if inherit else k) for k, v in document.items()}
    if isinstance(document, (list, tuple)):
        return [strict(item, key) for item in document]
    if isinstance(document, float):
        return number(document, key)
    return document


def to_json(document: dict[str, Any]) -> str:
    """Strict JSON text of a document: numbers by :func:`number`, indented, newline-ended.

    Never NaN or Infinity (``allow_nan=False`` guards :func:`strict`).

    Examples
    --------
    >>> print(to_json({"a_w": 1e-9, "b": float("inf")}), end="")
    {
      "a_w": 0.0,
      "b": null
    }
    """
    return json.dumps(strict(document), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _setting(value: Any) -> Any:
    if value is None:
        return None
    if isinstance(value, tuple):
        return {name: number(fraction, "setting") for name, fraction in value}
    return number(value, "setting")


def plan_document(plan: Plan, version: str, sizing: Sizing | None = None) -> dict[str, Any]:
    """The plan as a JSON-ready dict in the documented key order.

    ``sizing`` (what it takes, when asked or when the plan falls short) adds
    the optional ``sizing`` object after ``binding``.

    Examples
    --------
    >>> import beamplan
    >>> doc = plan_document(beamplan.plan("layouts/pilot-line.yaml"), "0.1.0")
    >>> doc["format"], doc["status"], [s["id"] for s in doc["scanners"]][:1]
    ('beamplan-plan/1', 'met', ['litho-p1'])
    """
    doc = {
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
                      "absorbed_w": rounded(e.absorbed_w), "dumped_w": rounded(e.dumped_w),
                      "output_w": rounded(e.output_w), "heat_limit_w": rounded(e.heat_limit_w),
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
    if sizing is None:
        return doc
    from beamplan.report.sizing_view import sizing_document

    keys = list(doc)
    at = keys.index("binding") + 1
    extra = {"sizing": sizing_document(sizing)}
    return {k: v for part in (keys[:at], list(extra), keys[at:]) for k in part
            for v in [extra[k] if k in extra else doc[k]]}


def plan_json(plan: Plan, version: str, sizing: Sizing | None = None) -> str:
    """The JSON text of a plan (indented, newline-terminated)."""
    return to_json(plan_document(plan, version, sizing))


def csv_text(header: list[str], rows: Iterable[list[Any]]) -> str:
    """One CSV table; numbers by :func:`number` with the column name as key.

    Examples
    --------
    >>> print(csv_text(["id", "need_w"], [["a", 499.99999999], ["b", float("nan")]]), end="")
    id,need_w
    a,500.0
    b,
    """
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for row in rows:
        cells = [number(v, k) if isinstance(v, float) else v
                 for k, v in zip(header, row, strict=True)]
        writer.writerow(["" if v is None else v for v in cells])
    return buffer.getvalue()


def csv_tables(plan: Plan, sizing: Sizing | None = None) -> dict[str, str]:
    """One CSV text per table: sources, scanners, elements, losses, binding (and sizing)."""
    def setting(value: Any) -> str:
        s = _setting(value)
        if isinstance(s, dict):
            return ";".join(f"{k}={v}" for k, v in s.items())
        return "" if s is None else str(s)

    tables = {
        "sources.csv": csv_text(["id", "available_w", "output_w", "electrical_w"],
                              ([s.id, rounded(s.available_w), rounded(s.output_w),
                                rounded(s.electrical_w)] for s in plan.sources)),
        "scanners.csv": csv_text(["id", "need_w", "delivered_w", "max_w", "priority", "headroom",
                                "shortfall_w", "status"],
                               ([s.id, rounded(s.need_w), rounded(s.delivered_w), rounded(s.max_w),
                                 s.priority, rounded(s.headroom), rounded(s.shortfall_w), s.status]
                                for s in plan.scanners)),
        "elements.csv": csv_text(["id", "kind", "incident_w", "absorbed_w", "dumped_w",
                                  "output_w", "heat_limit_w", "heat_margin_w", "setting",
                                  "gain"],
                               ([e.id, e.kind, rounded(e.incident_w), rounded(e.absorbed_w),
                                 rounded(e.dumped_w), rounded(e.output_w), rounded(e.heat_limit_w),
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
    if sizing is not None:
        from beamplan.report.sizing_view import sizing_csv

        tables["sizing.csv"] = csv_text(*sizing_csv(sizing))
    return tables


def write_csv(plan: Plan, folder: str, inputs: Iterable[str] = (),
              sizing: Sizing | None = None) -> list[str]:
    """Write the CSV tables into ``folder`` (created if needed); return the paths."""
    return write_tables(folder, csv_tables(plan, sizing), inputs)
