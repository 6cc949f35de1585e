"""The plan report for a terminal, as rich renderables (the command line prints them).

Readable at 80 columns and without colour (rich honours ``NO_COLOR``):
status words carry the meaning, colour only repeats it.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from rich import box
from rich.console import Group
from rich.table import Table
from rich.text import Text

from beamplan.errors import Diagnostic
from beamplan.network.behaviour import GIVEN
from beamplan.optimise.result import ElementResult, Plan
from beamplan.optimise.sizing import Sizing
from beamplan.report import CAUTION
from beamplan.report.document import signed_percent, signed_power
from beamplan.units import format_power
from beamplan.vocabulary import ScannerStatus

__all__ = ["PLURALS", "diagnostics_text", "plan_renderable", "plural", "signed_percent",
           "signed_power", "status_note"]

_STATUS_STYLE = {ScannerStatus.MET: "green", ScannerStatus.SHORT: "bold red",
                 ScannerStatus.CUT_OFF: "bold red"}


def _pct(value: float) -> str:
    return signed_percent(value)


def _setting(element: ElementResult) -> str:
    value = element.setting
    if value is None:
        return ""
    if isinstance(value, tuple):
        return "  ".join(f"{name} {fraction:.1%}" for name, fraction in value)
    return f"transmission {value:.1%}"


def titled_table(title: str) -> Table:
    return Table(title=title, title_justify="left", box=box.SIMPLE_HEAD, padding=(0, 1),
                 title_style="bold")


def _header(plan: Plan) -> Table:
    grid = Table.grid(padding=(0, 2))
    grid.add_column(style="bold")
    grid.add_column()
    status = Text(plan.status.upper(), style=_STATUS_STYLE.get(plan.status, ""))
    status.append(status_note(plan))
    grid.add_row("layout", f"{plan.layout}  ({plan.file})")
    grid.add_row("goal", plan.goal)
    grid.add_row("status", status)
    spare = f" (+{format_power(plan.standby_w)} on standby)" if plan.standby_w else ""
    grid.add_row("source", f"{format_power(plan.source_used_w)} used of "
                           f"{format_power(plan.source_available_w)} available{spare}")
    grid.add_row("delivered", f"{format_power(plan.delivered_w)} at IF, "
                              f"overall efficiency {plan.efficiency:.1%}")
    grid.add_row("headroom", f"factor {plan.headroom_factor:.4f} (lowest scanner "
                             f"{_pct(plan.headroom_factor - 1)})")
    grid.add_row("light", f"{plan.wavelength_m * 1e9:.2f} nm, {plan.photon_energy_ev:.2f} eV "
                          f"per photon, {plan.photon_flux_per_watt:.3g} photons/s per W")
    grid.add_row("surplus", surplus_words(plan))
    per_kw = plan.electrical_per_delivered
    if per_kw is not None and plan.electrical_w is not None:
        grid.add_row("wall plug", f"{format_power(plan.electrical_w)} electrical, "
                                  f"{format_power(per_kw * 1e3)} per kW delivered at IF")
    return grid


def surplus_words(plan: Plan) -> str:
    """What happened to the light no scanner can use, in one line.

    Examples
    --------
    >>> import beamplan
    >>> surplus_words(beamplan.plan("layouts/coated-line.yaml"))
    'power left unused at the source: 5.71 kW of 8.00 kW available'
    """
    unused = (f"power left unused at the source: {format_power(plan.unused_w)} of "
              f"{format_power(plan.source_available_w)} available")
    if plan.surplus_mode == "turn-down" or not plan.surplus_to:
        return unused
    where = ", ".join(f"{eid} {format_power(w)}" for eid, w in plan.surplus_to)
    into = "dumps" if plan.surplus_mode == "dump" else "attenuators" \
        if plan.surplus_mode == "attenuate" else "dumps and attenuators"
    return (f"{format_power(plan.surplus_w)} more drawn for the {into} ({where}; the rest "
            f"is absorbed on the way); {unused}")


def _scanners(plan: Plan) -> Table:
    table = titled_table("Scanners (IF power)")
    for name, justify in (("scanner", "left"), ("need", "right"), ("delivered", "right"),
                          ("headroom", "right"), ("ceiling", "right"), ("max", "right"),
                          ("status", "left")):
        table.add_column(name, justify=justify)  # type: ignore[arg-type]
    for s in plan.scanners:
        ceiling = "-" if s.useful_ceiling_w is None else format_power(s.useful_ceiling_w)
        if s.useful_ceiling_w is not None and s.max_w != s.useful_ceiling_w and \
                (s.max_power_w is None or s.max_power_w > s.useful_ceiling_w):
            ceiling += " (off)"  # the scanner opts out of its ceiling
        table.add_row(s.id, format_power(s.need_w), format_power(s.delivered_w),
                      _pct(s.headroom), ceiling,
                      format_power(s.max_power_w) if s.max_power_w is not None else "-",
                      Text(s.status if s.status != ScannerStatus.SHORT else
                           f"short {format_power(s.shortfall_w)}",
                           style=_STATUS_STYLE.get(s.status, "")))
    return table


def plain_table(title: str, columns: Sequence[tuple[str, str]],
                rows: Sequence[Sequence[str | Text]]) -> Group:
    """A simple aligned table drawn as text: fast for hundreds of rows.

    Examples
    --------
    >>> import io
    >>> from rich.console import Console
    >>> console = Console(file=io.StringIO(), width=40, color_system=None)
    >>> console.print(plain_table("T", [("a", "left"), ("b", "right")], [["x", "1"]]))
    >>> print(console.file.getvalue().rstrip())
    T
    <BLANKLINE>
      a   b
     ───────
      x   1
    """
    cells = [[c if isinstance(c, Text) else Text(str(c)) for c in row] for row in rows]
    widths = [max([len(name), *(len(row[i].plain) for row in cells)])
              for i, (name, _) in enumerate(columns)]

    def line(items: Sequence[Text]) -> Text:
        out = Text("  ")
        for i, (item, (_, justify)) in enumerate(zip(items, columns, strict=True)):
            pad = " " * (widths[i] - len(item.plain))
            out.append_text(Text(pad) + item if justify == "right" else item + Text(pad))
            if i < len(columns) - 1:
                out.append("   ")
        return out

    body = Text("\n").join([line([Text(n, style="bold") for n, _ in columns]),
                            Text(" " + "─" * (sum(widths) + 3 * (len(widths) - 1) + 2)),
                            *(line(row) for row in cells)])
    return Group(Text(title, style="bold"), Text(""), body)


def _elements(plan: Plan) -> Group:
    rows: list[list[str | Text]] = []
    for e in plan.elements:
        limit = use = "-"
        style = ""
        if e.heat_limit_w is not None:
            limit = format_power(e.heat_limit_w)
            used = e.absorbed_w / e.heat_limit_w if e.heat_limit_w > 0 else 1.0
            use = f"{used:.0%}"
            style = "bold yellow" if used >= 1.0 - 1e-6 else ""
        rows.append([e.id, e.kind, format_power(e.incident_w), format_power(e.absorbed_w),
                     format_power(e.output_w), limit, Text(use, style=style)])
    return plain_table("Elements (power in, absorbed and out; heat limit and its use)",
                       [("element", "left"), ("kind", "left"), ("in", "right"),
                        ("absorbed", "right"), ("out", "right"), ("heat limit", "right"),
                        ("use", "right")], rows)


def _throughput(plan: Plan) -> Table | None:
    modelled = [s for s in plan.scanners if s.target_wph is not None]
    if not modelled:
        return None
    table = titled_table("Throughput at the delivered power")
    for name, justify in (("scanner", "left"), ("dose", "right"), ("set by", "left"),
                          ("target", "right"), ("achieved", "right"), ("limit", "left")):
        table.add_column(name, justify=justify)  # type: ignore[arg-type]
    for s in modelled:
        table.add_row(s.id, f"{(s.dose_j_m2 or 0) / 10:.1f} mJ/cm²", s.dose_set_by or "",
                      f"{s.target_wph:.0f} wph", f"{s.achieved_wph or 0:.1f} wph",
                      s.throughput_limit or "")
    return table


def _optics(plan: Plan) -> Table | None:
    computed = [e for e in plan.elements if e.provenance and e.provenance != GIVEN]
    if not computed:
        return None
    table = titled_table("Computed optics (gain from physics)")
    table.add_column("element")
    table.add_column("gain", justify="right")
    table.add_column("how", overflow="fold")
    for e in computed:
        table.add_row(e.id, f"{e.gain:.4f}", e.provenance)
    return table


def _settings(plan: Plan) -> Table | None:
    chosen = [e for e in plan.elements if e.setting is not None]
    if not chosen:
        return None
    table = titled_table("Settings chosen")
    table.add_column("element")
    table.add_column("kind")
    table.add_column("setting", overflow="fold")
    for e in chosen:
        table.add_row(e.id, e.kind, _setting(e))
    return table


def status_note(plan: Plan) -> str:
    """What follows the status word: scanners short (of those in service) and offline.

    Examples
    --------
    >>> import beamplan
    >>> status_note(beamplan.plan("layouts/pilot-line.yaml"))
    ''
    """
    working = [s for s in plan.scanners if s.status != ScannerStatus.OUT_OF_SERVICE]
    short = sum(s.status != ScannerStatus.MET for s in working)
    offline = len(plan.scanners) - len(working)
    note = f"  ({short} of {len(working)} {plural('scanner', len(working))} short)" if short \
        else ""
    return note + (f", {offline} {plural('scanner', offline)} offline" if offline else "")


#: Plurals of the words the report counts (element kinds, scanners, sources).
PLURALS = {"mirror": "mirrors", "splitter": "splitters", "attenuator": "attenuators",
           "drift": "drifts", "dump": "dumps", "switch": "switches", "source": "sources",
           "scanner": "scanners"}


def plural(word: str, count: int = 2) -> str:
    """``word`` for a count of one, its plural from :data:`PLURALS` otherwise.

    Examples
    --------
    >>> plural("switch"), plural("mirror", 1)
    ('switches', 'mirror')
    """
    return word if count == 1 else PLURALS[word]


def _losses(plan: Plan) -> Table:
    table = titled_table("Where the source power goes")
    table.add_column("destination")
    table.add_column("power", justify="right")
    table.add_column("share", justify="right")
    total = plan.losses.source_w or 1.0
    rows = [("delivered to scanners", plan.losses.delivered_w)]
    rows += [(f"absorbed in {plural(kind)}", value) for kind, value in plan.losses.by_kind]
    rows.append(("dumped", plan.losses.dumped_w))
    for name, value in rows:
        table.add_row(name, format_power(value), f"{value / total:.1%}")
    table.add_row(Text("source output", style="bold"), format_power(plan.losses.source_w),
                  "100.0%")
    return table


def _binding(plan: Plan) -> Table | Text:
    if not plan.binding:
        return Text("No constraint binds the primary goal.")
    table = titled_table("Binding constraints (shadow prices)")
    table.add_column("constraint", overflow="fold")
    table.add_column("marginal value", overflow="fold")
    for b in plan.binding:
        table.add_row(b.description, b.meaning)
    return table


def _over(plan: Plan) -> list[Any]:
    over = [s for s in plan.scanners if s.over_delivery_reason]
    if not over:
        return []
    out: list[Any] = [Text("Why scanners get more than their need", style="bold")]
    groups: dict[str, list[str]] = {}
    for s in over:  # scanners with the same reason share one line
        groups.setdefault(s.over_delivery_reason, []).append(f"{s.id} {_pct(s.headroom)}")
    for reason, names in groups.items():
        text = Text(f"  {', '.join(names)}: ", style="bold")
        text.append(reason)
        out.append(text)
    return out


def _shortfalls(plan: Plan) -> list[Any]:
    out: list[Any] = []
    for s in plan.scanners:
        if s.status == ScannerStatus.MET:
            continue
        text = Text(f"{s.id} is short by {format_power(s.shortfall_w)}: ", style="bold")
        text.append("; ".join(s.limits))
        out.append(text)
    return out


def plan_renderable(plan: Plan, *, elements: bool = True, sizing: Sizing | None = None
                    ) -> Group:
    """The whole plan report as one rich renderable.

    Examples
    --------
    >>> import io, beamplan
    >>> from rich.console import Console
    >>> console = Console(file=io.StringIO(), width=80, color_system=None)
    >>> console.print(plan_renderable(beamplan.plan("layouts/pilot-line.yaml")))
    >>> "litho-p1" in console.file.getvalue()
    True
    """
    parts: list[Any] = [_header(plan), Text(""), _scanners(plan)]
    parts += _shortfalls(plan)
    parts += _over(plan)
    if elements:
        parts += [Text(""), _elements(plan)]
    for extra in (_throughput(plan), _optics(plan), _settings(plan)):
        if extra is not None:
            parts += [Text(""), extra]
    parts += [Text(""), _losses(plan), Text(""), _binding(plan)]
    if sizing is not None:
        from beamplan.report.sizing_view import sizing_renderable

        parts += [Text(""), sizing_renderable(sizing)]
    parts.append(Text(CAUTION, style="dim italic"))
    return Group(*parts)


def diagnostics_text(diagnostics: Sequence[Diagnostic]) -> str:
    """Every diagnostic on its own line, errors and warnings in file order.

    Examples
    --------
    >>> from beamplan.errors import Location
    >>> print(diagnostics_text([Diagnostic("error", "x", "bad", Location("f", 1, 2))]))
    f:1:2: error: bad
    """
    return "\n".join(d.format() for d in diagnostics)
