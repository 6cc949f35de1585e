"""The tolerance run in the terminal: odds per scanner, fab-wide, and what to tighten."""

from __future__ import annotations

from rich.console import Group
from rich.text import Text

from beamplan.analyses.tolerance_summary import ToleranceSummary
from beamplan.report.document import signed_percent
from beamplan.report.terminal import titled_table

__all__ = ["percent", "tolerance_renderable"]


def percent(p: float) -> str:
    """A probability as a percentage with one decimal.

    Examples
    --------
    >>> percent(0.98765)
    '98.8%'
    """
    return f"{100 * p:.1f}%" if p == p else "n/a"


def _interval(low: float, high: float) -> str:
    return f"[{percent(low)}, {percent(high)}]"


def tolerance_renderable(summary: ToleranceSummary, top: int = 10) -> Group:
    """The report: header, fab-wide odds, each scanner, the sensitivity ranking."""
    run = summary.run
    mode = ("settings fixed as planned" if run.mode == "fixed"
            else "re-planned for every sample")
    head = Text()
    partial = "  PARTIAL (interrupted)" if summary.partial else ""
    head.append(f"Tolerance run of {run.layout}: {run.tally.samples} samples "
                f"({run.sampler}, seed {run.seed}), {mode}{partial}\n", style="bold")
    head.append(f"P(every scanner meets its need) = {percent(summary.all_met)}  95 % "
                f"interval {_interval(summary.all_low, summary.all_high)} (Wilson)\n")
    if run.mode == "fixed" and run.tally.overheated:
        head.append(f"  A heat limit is exceeded in {percent(summary.overheated)} of the "
                    "samples (those count as failed): the plan's settings hold an element at "
                    "its heat limit; a re-plan (--mode retuned) would turn the power down.\n")
    if summary.needed is not None and run.width is not None:
        head.append(f"Samples for a {100 * run.width:g} % wide interval: about "
                    f"{summary.needed}\n")
    if run.model.interpolation_error:
        head.append(f"Physics tabulated: interpolation error at most "
                    f"{run.model.interpolation_error:.1e} (relative)\n")
    table = titled_table("Per scanner: probability of meeting the need; headroom quantiles")
    for name, justify in (("scanner", "left"), ("planned", "right"), ("P(meet)", "right"),
                          ("95 % interval", "right"), ("5 %", "right"), ("50 %", "right"),
                          ("95 %", "right")):
        table.add_column(name, justify=justify)  # type: ignore[arg-type]
    for s in sorted(summary.scanners, key=lambda s: (s.probability, s.id)):
        table.add_row(s.id, signed_percent(s.planned_headroom), percent(s.probability),
                      _interval(s.low, s.high), *(signed_percent(h) for h in s.headroom))
    parts: list[object] = [head, table]
    if summary.ranking:
        sens = titled_table("Tighten first: Sobol' indices of the lowest headroom factor "
                            "(total, first order)")
        for name, justify in (("rank", "right"), ("tolerance", "fold"), ("total", "right"),
                              ("first order", "right"), ("worst-hit scanner", "left")):
            folded = justify == "fold"
            sens.add_column(name, justify="left" if folded else justify,  # type: ignore
                            overflow="fold" if folded else "ellipsis")
        for i, r in enumerate(summary.ranking[:top], 1):
            worst = max(summary.per_scanner, key=lambda p: next(
                (x.total for x in p[1] if x.tolerance == r.tolerance), 0.0))[0] \
                if summary.per_scanner else ""
            sens.add_row(str(i), r.tolerance, f"{r.total:.3f} ± {r.total_conf:.3f}",
                         f"{r.first:.3f} ± {r.first_conf:.3f}", worst)
        parts.append(sens)
        parts.append(Text(f"Tighten '{summary.ranking[0].tolerance}' first: it carries the "
                          "largest share of the variance of the lowest headroom.\n"))
    if summary.partial:
        parts.append(Text("Partial: the run was interrupted; the numbers cover the samples "
                          "drawn so far.", style="bold"))
    return Group(*parts)  # type: ignore[arg-type]
