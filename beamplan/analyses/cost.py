"""Energy and cost per wafer of a planned layout, against one plasma source per scanner.

The model (docs/cost.md): each shared source costs its capital recovered with
the annuity factor, its maintenance and its electricity (the planned wall-plug
draw over the operating hours); the fab's yearly cost is shared among the
scanners in proportion to the EUV power each is delivered. Each scanner exposes
``exposing × hours`` a year at the wafers per hour its planned power gives
(:func:`beamplan.physics.demand.throughput_at_power`). The alternative gives
each scanner its own plasma source sized to its need (power, draw, capital and
maintenance scaled linearly from the rated plasma source).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from beamplan.errors import Diagnostic, LayoutError
from beamplan.layout.economics import SHARED_W_PER_W, Economics
from beamplan.network.graph import Network
from beamplan.optimise.result import Plan
from beamplan.physics.demand import throughput_at_power
from beamplan.physics.economics import (
    annual_capital,
    break_even_count,
    dose_for_throughput,
    energy_mwh,
    sources_needed,
)
from beamplan.physics.scanner_tool import ScannerTool

__all__ = ["BreakEvenPoint", "CostReport", "ScannerCost", "SourceCost", "cost_of",
           "throughput_models"]


@dataclass(frozen=True)
class SourceCost:
    """One shared source's year: draw, energy and money."""

    id: str
    output_w: float
    electrical_w: float
    energy_mwh: float
    capital: float
    life_years: float
    capital_per_year: float
    maintenance_per_year: float
    electricity_per_year: float
    standby: bool
    draw_basis: str  # "layout", "illustrative 0.7 MW per kW" or "kept warm"

    @property
    def total_per_year(self) -> float:
        """Capital recovery + maintenance + electricity."""
        return self.capital_per_year + self.maintenance_per_year + self.electricity_per_year


@dataclass(frozen=True)
class ScannerCost:
    """One scanner's share of the fab's year, and its own plasma source's year."""

    id: str
    need_w: float
    delivered_w: float
    exposing: float
    wph: float
    passes_per_year: float
    share: float
    capital_per_year: float
    maintenance_per_year: float
    electricity_per_year: float
    energy_mwh: float
    basis: str
    plasma_wph: float
    plasma_passes_per_year: float
    plasma_capital_per_year: float
    plasma_maintenance_per_year: float
    plasma_electricity_per_year: float
    plasma_energy_mwh: float

    @property
    def total_per_year(self) -> float:
        """The scanner's share of the shared sources' yearly cost."""
        return self.capital_per_year + self.maintenance_per_year + self.electricity_per_year

    @property
    def plasma_total_per_year(self) -> float:
        """Its own plasma source's yearly cost."""
        return (self.plasma_capital_per_year + self.plasma_maintenance_per_year
                + self.plasma_electricity_per_year)


@dataclass(frozen=True)
class BreakEvenPoint:
    """The yearly cost of N scanners on shared sources and on plasma sources."""

    scanners: int
    shared_sources: int
    shared_per_year: float
    plasma_per_year: float


@dataclass(frozen=True)
class CostReport:
    """Cost and energy of a layout's plan, the alternative, and the break-even curve."""

    layout: str
    file: str
    economics: Economics
    plan: Plan
    sources: tuple[SourceCost, ...]
    scanners: tuple[ScannerCost, ...]
    per_scanner_source_w: float
    rated_w: float
    curve: tuple[BreakEvenPoint, ...]
    break_even: int | None
    assumptions: tuple[str, ...]

    @property
    def total_per_year(self) -> float:
        """The shared sources' yearly cost."""
        return sum(s.total_per_year for s in self.sources)

    @property
    def energy_mwh(self) -> float:
        """Electrical energy of the shared sources per year."""
        return sum(s.energy_mwh for s in self.sources)

    @property
    def passes_per_year(self) -> float:
        """Wafer exposure passes per year over all scanners."""
        return sum(s.passes_per_year for s in self.scanners)

    @property
    def plasma_total_per_year(self) -> float:
        """The alternative's yearly cost."""
        return sum(s.plasma_total_per_year for s in self.scanners)

    @property
    def plasma_energy_mwh(self) -> float:
        """The alternative's electrical energy per year."""
        return sum(s.plasma_energy_mwh for s in self.scanners)

    @property
    def plasma_passes_per_year(self) -> float:
        """The alternative's wafer passes per year (each scanner at its need)."""
        return sum(s.plasma_passes_per_year for s in self.scanners)


Throughput = Callable[[float], float]


def throughput_models(network: Network, econ: Economics) -> tuple[dict[str, Throughput],
                                                                 dict[str, str]]:
    """Wafers per hour against IF power for every scanner, and how each was modelled.

    A scanner with a dose and wph in the layout uses its own tool and dose. A
    scanner given by plain watts uses the default tool at the dose at which its
    need reaches the economics file's ``wph`` (illustrative 150).

    Raises
    ------
    LayoutError
        When a stated ``wph`` is beyond what the stage allows (located).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> models, basis = throughput_models(build_network(load_layout(
    ...     "layouts/pilot-line.yaml")), Economics())
    >>> round(models["litho-p1"](900.0), 6)  # its need, 900 W: the illustrative 150 wph
    150.0
    """
    models: dict[str, Throughput] = {}
    basis: dict[str, str] = {}
    for node in network.scanners:
        if node.demand is not None:
            tool, dose = node.demand.tool, node.demand.dose_j_m2
            basis[node.id] = "dose and wph of the layout"
        else:
            tool = ScannerTool()
            wph = econ.scanner(node.id).wph_at_need
            try:
                dose = dose_for_throughput(tool, node.need_w, wph)
            except ValueError as exc:
                key = "default" if node.id not in dict(econ.scanners) else node.id
                raise LayoutError([Diagnostic(
                    "error", "out-of-range", f"economics: scanner '{node.id}': {exc} of the "
                    "default tool (about 200 wph)", econ.where(f"scanners.{key}.wph"),
                    "give a lower 'wph'")]) from None
            basis[node.id] = f"default tool, {wph:g} wph at its need (dose {dose / 10:.1f} mJ/cm²)"

        def model(power_w: float, tool: ScannerTool = tool, dose: float = dose) -> float:
            return throughput_at_power(tool, dose, max(power_w, 0.0)).wafers_per_hour

        models[node.id] = model
    return models, basis


def _source_costs(plan: Plan, network: Network, econ: Economics, hours: float
                  ) -> list[SourceCost]:
    out = []
    for s in plan.sources:
        money = econ.source(s.id, s.available_w)
        if s.electrical_w is not None:
            draw, how = s.electrical_w, "layout"
            if s.output_w <= 0 and money.kept_warm:
                draw, how = s.electrical_fixed_w, "kept warm (fixed part)"
        else:
            draw, how = SHARED_W_PER_W * s.output_w, "illustrative 0.7 MW per kW"
        energy = energy_mwh(draw, hours)
        out.append(SourceCost(
            s.id, s.output_w, draw, energy, money.capital, money.life_years,
            annual_capital(money.capital, econ.discount_rate, money.life_years),
            money.maintenance_per_year, energy * 1e3 * econ.price_per_kwh,
            s.id in network.standby_sources, how))
    return out


def cost_of(plan: Plan, network: Network, econ: Economics, max_scanners: int = 0) -> CostReport:
    """The cost report of a plan.

    Parameters
    ----------
    max_scanners
        Last N of the break-even curve (default: three times the layout's scanners).

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(beamplan.load("layouts/pilot-line.yaml"))
    >>> report = cost_of(beamplan.plan(net), net, Economics())
    >>> len(report.scanners), report.break_even is None or report.break_even > 0
    (3, True)
    """
    hours = econ.hours_per_year
    models, basis = throughput_models(network, econ)
    sources = _source_costs(plan, network, econ, hours)
    total_delivered = plan.delivered_w or 1.0
    totals = {k: sum(getattr(s, k) for s in sources) for k in
              ("capital_per_year", "maintenance_per_year", "electricity_per_year", "energy_mwh")}
    pl = econ.plasma
    plasma_capital = annual_capital(pl.capital, econ.discount_rate, pl.life_years)
    scanners = []
    for r in plan.scanners:
        node = network.node[r.id]
        money = econ.scanner(r.id)
        share = r.delivered_w / total_delivered
        wph = models[r.id](r.delivered_w)
        units = node.need_w / pl.power_w  # a plasma source sized to the need
        plasma_energy = energy_mwh(pl.electrical_w * units, hours)
        plasma_wph = models[r.id](node.need_w)
        scanners.append(ScannerCost(
            r.id, node.need_w, r.delivered_w, money.exposing, wph,
            wph * hours * money.exposing, share, share * totals["capital_per_year"],
            share * totals["maintenance_per_year"], share * totals["electricity_per_year"],
            share * totals["energy_mwh"], basis[r.id], plasma_wph,
            plasma_wph * hours * money.exposing, units * plasma_capital,
            units * pl.maintenance_per_year, plasma_energy * 1e3 * econ.price_per_kwh,
            plasma_energy))
    curve, break_even, per_scanner_w, rated_w = _curve(plan, sources, scanners, econ,
                                                       max_scanners or 3 * len(scanners))
    assumptions = (
        "shared cost split among scanners in proportion to the EUV power each is delivered",
        "the plasma alternative: one source per scanner, sized to its need (draw, capital "
        "and maintenance scaled linearly from the rated plasma source)",
        "break-even curve: N scanners that each take the plan's mean source power "
        f"({per_scanner_w / 1e3:.3g} kW); a further main source ({rated_w / 1e3:.3g} kW) "
        "each time N of them exceed the sources' power; standby sources not counted",
    )
    return CostReport(plan.layout, plan.file, econ, plan, tuple(sources), tuple(scanners),
                      per_scanner_w, rated_w, curve, break_even, assumptions)


def _curve(plan: Plan, sources: list[SourceCost], scanners: list[ScannerCost],
           econ: Economics, max_n: int
           ) -> tuple[tuple[BreakEvenPoint, ...], int | None, float, float]:
    """Yearly cost of N scanners both ways (the model of :func:`break_even_count`)."""
    live = [s for s in sources if not s.standby] or sources
    main = max(live, key=lambda s: next(p.available_w for p in plan.sources if p.id == s.id))
    spec = next(p for p in plan.sources if p.id == main.id)
    rated_w = spec.available_w
    n = max(len(scanners), 1)
    per_scanner_w = sum(s.output_w for s in live) / n
    if spec.electrical_full_w is not None:
        fixed_w = spec.electrical_fixed_w
        per_w = max(spec.electrical_full_w - fixed_w, 0.0) / rated_w if rated_w > 0 else 0.0
    else:
        fixed_w, per_w = 0.0, SHARED_W_PER_W
    price_per_mwh = econ.price_per_kwh * 1e3
    hours = econ.hours_per_year
    fixed = (main.capital_per_year + main.maintenance_per_year
             + energy_mwh(fixed_w, hours) * price_per_mwh)
    variable = energy_mwh(per_w * per_scanner_w, hours) * price_per_mwh
    plasma = sum(s.plasma_total_per_year for s in scanners) / n
    points = []
    for count in range(1, max_n + 1):
        k = sources_needed(count * per_scanner_w, rated_w)
        points.append(BreakEvenPoint(count, k, k * fixed + count * variable, count * plasma))
    even = break_even_count(fixed, rated_w, per_scanner_w, variable, plasma, max_count=max_n)
    return tuple(points), even, per_scanner_w, rated_w
