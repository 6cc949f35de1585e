"""The cost report: terminal tables, the ``beamplan-cost/1`` JSON document and CSV tables."""

from __future__ import annotations

from typing import Any

from beamplan.analyses.cost import CostReport
from beamplan.report.document import csv_text
from beamplan.vocabulary import ScannerStatus

__all__ = ["COST_FORMAT", "compare_renderable", "cost_csv", "cost_document", "cost_renderable",
           "money", "short_money", "table"]

COST_FORMAT = "beamplan-cost/1"


def money(value: float) -> str:
    """An amount for people: thousands, millions, billions.

    Examples
    --------
    >>> money(123_400_000.0), money(12.345), money(4_500.0)
    ('123.4 million', '12.35', '4.50 thousand')
    """
    for size, word in ((1e9, "billion"), (1e6, "million"), (1e3, "thousand")):
        if abs(value) >= size:
            return f"{value / size:.{1 if abs(value) >= 100 * size else 2}f} {word}"
    return f"{value:.2f}"


def short_money(value: float) -> str:
    """An amount in a narrow column: k, M, bn.

    Examples
    --------
    >>> short_money(37_757_170.0), short_money(950.0), short_money(2.5e9)
    ('37.8 M', '950', '2.50 bn')
    """
    for size, word in ((1e9, "bn"), (1e6, "M"), (1e3, "k")):
        if abs(value) >= size:
            return f"{value / size:.{1 if abs(value) >= 10 * size else 2}f} {word}"
    return f"{value:.0f}"


def table(title: str, columns: list[str], first: int = 1) -> Any:
    """A report table: the first ``first`` columns are names (left, never wrapped)."""
    from beamplan.report.terminal import titled_table

    out = titled_table(title)
    for i, col in enumerate(columns):
        out.add_column(col, justify="left" if i < first else "right", no_wrap=True)
    return out


def _per(total: float, count: float) -> float:
    return total / count if count > 0 else float("nan")


def _illustrative(report: CostReport) -> str:
    given = report.economics.defaulted
    if "all" in given:
        return "Every economic input is an illustrative default (docs/cost.md)"
    return ("Illustrative defaults used for: " + ", ".join(given)) if given else \
        "Every economic input given in " + report.economics.file


def cost_document(report: CostReport, version: str, availability: Any = None) -> dict[str, Any]:
    """The ``beamplan-cost/1`` document (docs/json-format.md)."""
    e = report.economics
    passes = report.passes_per_year
    doc: dict[str, Any] = {
        "format": COST_FORMAT, "beamplan": version, "layout": report.layout,
        "file": report.file, "economics_file": e.file, "currency": e.currency,
        "illustrative_defaults": list(e.defaulted),
        "inputs": {"price_per_kwh": e.price_per_kwh, "discount_rate": e.discount_rate,
                   "hours_per_year": e.hours_per_year, "passes_per_wafer": e.passes_per_wafer},
        "sources": [{"id": s.id, "output_w": s.output_w, "electrical_w": s.electrical_w,
                     "draw_basis": s.draw_basis, "standby": s.standby,
                     "energy_mwh_per_year": s.energy_mwh, "capital": s.capital,
                     "life_years": s.life_years, "capital_per_year": s.capital_per_year,
                     "maintenance_per_year": s.maintenance_per_year,
                     "electricity_per_year": s.electricity_per_year,
                     "total_per_year": s.total_per_year} for s in report.sources],
        "scanners": [{"id": s.id, "need_w": s.need_w, "delivered_w": s.delivered_w,
                      "exposing": s.exposing, "wafers_per_hour": s.wph,
                      "passes_per_year": s.passes_per_year, "throughput_basis": s.basis,
                      "cost_share": s.share, "capital_per_year": s.capital_per_year,
                      "maintenance_per_year": s.maintenance_per_year,
                      "electricity_per_year": s.electricity_per_year,
                      "energy_mwh_per_year": s.energy_mwh,
                      "cost_per_pass": _per(s.total_per_year, s.passes_per_year),
                      "cost_per_wafer": _per(s.total_per_year, s.passes_per_year)
                      * e.passes_per_wafer,
                      "energy_kwh_per_pass": _per(s.energy_mwh * 1e3, s.passes_per_year),
                      "plasma": {"passes_per_year": s.plasma_passes_per_year,
                                 "total_per_year": s.plasma_total_per_year,
                                 "energy_mwh_per_year": s.plasma_energy_mwh,
                                 "cost_per_pass": _per(s.plasma_total_per_year,
                                                       s.plasma_passes_per_year)}}
                     for s in report.scanners],
        "fab": {"total_per_year": report.total_per_year, "energy_mwh_per_year": report.energy_mwh,
                "passes_per_year": passes,
                "cost_per_pass": _per(report.total_per_year, passes),
                "cost_per_wafer": _per(report.total_per_year, passes) * e.passes_per_wafer,
                "energy_kwh_per_pass": _per(report.energy_mwh * 1e3, passes),
                "energy_kwh_per_wafer": _per(report.energy_mwh * 1e3, passes)
                * e.passes_per_wafer},
        "plasma": {"power_w": e.plasma.power_w, "electrical_w": e.plasma.electrical_w,
                   "capital": e.plasma.capital, "life_years": e.plasma.life_years,
                   "maintenance_per_year": e.plasma.maintenance_per_year,
                   "total_per_year": report.plasma_total_per_year,
                   "energy_mwh_per_year": report.plasma_energy_mwh,
                   "passes_per_year": report.plasma_passes_per_year,
                   "cost_per_pass": _per(report.plasma_total_per_year,
                                         report.plasma_passes_per_year),
                   "energy_kwh_per_pass": _per(report.plasma_energy_mwh * 1e3,
                                               report.plasma_passes_per_year)},
        "break_even": {"scanners": report.break_even,
                       "per_scanner_source_w": report.per_scanner_source_w,
                       "rated_w": report.rated_w,
                       "curve": [{"scanners": p.scanners, "shared_sources": p.shared_sources,
                                  "shared_per_year": p.shared_per_year,
                                  "plasma_per_year": p.plasma_per_year} for p in report.curve]},
        "assumptions": list(report.assumptions),
    }
    if availability is not None:
        doc["expected_passes_lost_per_year"] = availability.wafers_lost
    return doc


def cost_csv(report: CostReport) -> dict[str, str]:
    """CSV tables: sources, scanners, break-even curve."""
    doc = cost_document(report, "")
    sources = csv_text(["id", "output_w", "electrical_w", "energy_mwh_per_year",
                        "capital_per_year", "maintenance_per_year", "electricity_per_year",
                        "total_per_year"],
                       [[s[k] for k in ("id", "output_w", "electrical_w", "energy_mwh_per_year",
                                        "capital_per_year", "maintenance_per_year",
                                        "electricity_per_year", "total_per_year")]
                        for s in doc["sources"]])
    keys = ["id", "need_w", "delivered_w", "exposing", "wafers_per_hour", "passes_per_year",
            "capital_per_year", "maintenance_per_year", "electricity_per_year",
            "energy_mwh_per_year", "cost_per_pass", "energy_kwh_per_pass"]
    scanners = csv_text([*keys, "plasma_cost_per_pass"],
                        [[s[k] for k in keys] + [s["plasma"]["cost_per_pass"]]
                         for s in doc["scanners"]])
    curve = csv_text(["scanners", "shared_sources", "shared_per_year", "plasma_per_year"],
                     [[p["scanners"], p["shared_sources"], p["shared_per_year"],
                       p["plasma_per_year"]] for p in doc["break_even"]["curve"]])
    return {"cost_sources.csv": sources, "cost_scanners.csv": scanners,
            "break_even.csv": curve}


def cost_renderable(report: CostReport) -> Any:
    """The terminal report: sources, scanners, fab against the alternative, break-even."""
    from rich.console import Group
    from rich.text import Text

    e = report.economics
    cur = e.currency
    src = table(f"Shared sources, per year ({cur})", ["source", "kW out", "MW in", "MWh",
                                                      "capital", "maint.", "elec.", "total"])
    for s in report.sources:
        src.add_row(s.id + ("*" if s.standby else ""), f"{s.output_w / 1e3:.2f}",
                    f"{s.electrical_w / 1e6:.2f}", f"{s.energy_mwh:,.0f}",
                    short_money(s.capital_per_year), short_money(s.maintenance_per_year),
                    short_money(s.electricity_per_year), short_money(s.total_per_year))
    sc = table(f"Per scanner and year: passes; per wafer pass: cost ({cur}), energy, "
                "cost with its own plasma source",
                ["scanner", "wph", "passes", "capital", "maint.", "elec.", "total", "kWh",
                 "plasma"])
    for c in report.scanners:
        n = c.passes_per_year
        sc.add_row(c.id, f"{c.wph:.1f}", short_money(n), f"{_per(c.capital_per_year, n):.2f}",
                   f"{_per(c.maintenance_per_year, n):.2f}",
                   f"{_per(c.electricity_per_year, n):.2f}", f"{_per(c.total_per_year, n):.2f}",
                   f"{_per(c.energy_mwh * 1e3, n):.1f}",
                   f"{_per(c.plasma_total_per_year, c.plasma_passes_per_year):.2f}")
    fab = table(f"The fab: shared source against one plasma source per scanner ({cur})",
                 ["", "a year", "MWh", "passes", "a pass", "a wafer", "kWh/wafer"])
    n = e.passes_per_wafer
    for name, total, energy, passes in (
            ("shared", report.total_per_year, report.energy_mwh, report.passes_per_year),
            ("plasma", report.plasma_total_per_year, report.plasma_energy_mwh,
             report.plasma_passes_per_year)):
        fab.add_row(name, short_money(total), f"{energy:,.0f}", short_money(passes),
                    f"{_per(total, passes):.2f}", f"{_per(total, passes) * n:.1f}",
                    f"{_per(energy * 1e3, passes) * n:,.0f}")
    even = (f"the shared source costs less from {report.break_even} scanners on"
            if report.break_even is not None else
            f"the shared source does not cost less up to {len(report.curve)} scanners")
    notes = Text("\n".join([
        f"Break-even: {even} (each taking {report.per_scanner_source_w / 1e3:.3g} kW of "
        f"source power; a source gives {report.rated_w / 1e3:.3g} kW).",
        f"A wafer is {n:g} exposure passes. {_illustrative(report)}.",
        *(["* a standby source: " + ", ".join(s.id for s in report.sources if s.standby)
           + (" (kept warm)" if any(s.standby and s.electrical_w > 0 for s in report.sources)
              else "") + "."] if any(s.standby for s in report.sources) else []),
        *(f"Assumed: {a}." for a in report.assumptions)]))
    status = "" if report.plan.status == ScannerStatus.MET else \
        f"  [plan {report.plan.status}: some scanners get less than their need]"
    return Group(Text(f"Cost and energy: {report.layout} ({report.file}){status}",
                      style="bold"),
                 src, sc, fab, notes)


def compare_renderable(rows: list[dict[str, Any]], currency: str) -> Any:
    """Layouts side by side: cost, energy, headroom and availability."""
    out = table(f"Source options side by side ({currency})",
                ["layout", "sources", "per year", "MWh/yr", "per pass", "headroom",
                 "passes lost/yr", "break-even"], first=2)
    for r in rows:
        out.add_row(r["layout"], r["sources"], short_money(r["total_per_year"]),
                      f"{r['energy_mwh_per_year']:,.0f}", f"{r['cost_per_pass']:.2f}",
                      f"{(r['headroom_factor'] - 1) * 100:+.1f}%",
                      f"{r['passes_lost_per_year']:,.0f}",
                      str(r["break_even"]) if r["break_even"] is not None else "never")
    return out
