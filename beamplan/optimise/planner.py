"""Plan a network: build the LP, run the goal, propagate, explain, verify."""

from __future__ import annotations

from collections import defaultdict

from beamplan.network.behaviour import Behaviour, Node
from beamplan.network.graph import Network
from beamplan.optimise.backend import Backend, make_backend
from beamplan.optimise.explain import binding_constraints, shortfall_limits
from beamplan.optimise.goals import GoalOutcome, run_goal
from beamplan.optimise.lp import LpModel, build_lp, gc_paused
from beamplan.optimise.overdelivery import over_delivery_reasons
from beamplan.optimise.result import (
    ElementResult,
    Flows,
    Losses,
    Plan,
    ScannerResult,
    SourceResult,
    propagate,
    verify,
)
from beamplan.optimise.surplus import ABSORBERS, check_surplus, settle_surplus, surplus_modes
from beamplan.physics.source import electrical_draw_w
from beamplan.vocabulary import Goal, ScannerStatus, Solver

__all__ = ["MET_RTOL", "finish_plan", "plan_network", "solve_model"]

MET_RTOL = 1e-6  # a scanner within this relative distance of its need counts as met


def _scanners(model: LpModel, outcome: GoalOutcome, flows: Flows, goal: str
              ) -> tuple[ScannerResult, ...]:
    network = model.network
    over = over_delivery_reasons(model, outcome, flows, goal)
    out = []
    cache: dict[int, object] = {}  # each stage's duals read once (see shortfall_limits)
    for node in network.scanners:
        delivered = flows.incident_w[node.id]
        caps = {"useful_ceiling_w": node.ceiling_w, "max_power_w": node.max_given_w}
        if not node.in_use:
            out.append(ScannerResult(node.id, node.need_w, 0.0, node.max_w, node.priority, 0.0,
                                     0.0, ScannerStatus.OUT_OF_SERVICE, (), node.provenance,
                                     **caps))  # type: ignore[arg-type]
            continue
        ratio = delivered / node.need_w
        short = max(node.need_w - delivered, 0.0)
        limits: tuple[str, ...] = ()
        if short <= MET_RTOL * node.need_w:
            status, short = ScannerStatus.MET, 0.0
        else:
            status = (ScannerStatus.CUT_OFF if delivered <= 1e-9 * node.need_w
                      else ScannerStatus.SHORT)
            limits = shortfall_limits(model, outcome, node.id, delivered, cache)
        extra = {}
        if node.demand is not None:
            from beamplan.physics.demand import throughput_at_power

            d = node.demand
            achieved = throughput_at_power(d.tool, d.dose_j_m2, delivered) if delivered > 0 \
                else None
            extra = {"dose_j_m2": d.dose_j_m2, "dose_set_by": d.dose_set_by,
                     "target_wph": d.target_wph,
                     "achieved_wph": achieved.wafers_per_hour if achieved else 0.0,
                     "throughput_limit": str(achieved.limit) if achieved else "power"}
        out.append(ScannerResult(node.id, node.need_w, delivered, node.max_w, node.priority,
                                 ratio - 1.0, short, status, limits, node.provenance,
                                 over_delivery_reason=over.get(node.id, ""),
                                 **caps, **extra))  # type: ignore[arg-type]
    return tuple(out)


def _elements(network: Network, flows: Flows) -> tuple[ElementResult, ...]:
    out = []
    for node in network.elements:
        incident = flows.incident_w[node.id]
        absorbed = flows.absorbed_w[node.id]
        dumped = flows.dumped_w.get(node.id, 0.0)
        output = incident - absorbed - dumped if node.behaviour is not Behaviour.ABSORB else 0.0
        margin = None if node.heat_limit_w is None else node.heat_limit_w - absorbed
        gain = output / incident if incident > 0 else (
            node.gain_max if node.behaviour is not Behaviour.SPLIT else
            sum(p.efficiency * p.fraction_max for p in node.ports[:1]))
        out.append(ElementResult(node.id, node.kind, incident, absorbed, output,
                                 node.heat_limit_w, margin, flows.settings.get(node.id),
                                 gain, node.provenance, dumped))
    return tuple(out)


def _losses(network: Network, flows: Flows, source_total: float) -> Losses:
    by_kind: dict[str, float] = defaultdict(float)
    absorbed = dumped = delivered = 0.0
    for node in network.nodes:
        if node.is_scanner and not node.in_use:
            dumped += flows.incident_w[node.id]
        elif node.is_scanner:
            delivered += flows.incident_w[node.id]
        elif node.behaviour is Behaviour.ABSORB or (not node.in_use
                                                    and not node.is_source):
            dumped += flows.absorbed_w[node.id]
        elif not node.is_source:
            absorbed += flows.absorbed_w[node.id]
            by_kind[node.kind] += flows.absorbed_w[node.id]
        dumped += flows.dumped_w.get(node.id, 0.0)  # a switch's deselected inputs
    residual = source_total - delivered - absorbed - dumped
    return Losses(source_total, delivered, absorbed, dumped,
                  tuple(sorted(by_kind.items(), key=lambda kv: -kv[1])), residual)


def solve_model(model: LpModel, backend: Backend, goal: str) -> Plan:
    """Run ``goal`` on a built model and return the verified :class:`Plan`.

    Sources that ask for ``surplus: dump`` or ``attenuate`` get the surplus
    stage of :mod:`beamplan.optimise.surplus` after the goal.
    """
    check_surplus(model.network)
    outcome = run_goal(model, backend, goal)
    settled = settle_surplus(model, backend, outcome)
    return finish_plan(model, backend, settled, goal,
                       turned_down=outcome if settled is not outcome else None)


def _flows(model: LpModel, outcome: GoalOutcome) -> Flows:
    cols = outcome.solution.columns
    network = model.network
    source_w = {sid: float(cols[col]) for sid, col in model.source_col.items()}
    lp_link = [model.link_value(link.index, cols) for link in network.links]
    lp_share = {key: float(cols[col]) for key, col in model.share_col.items()}
    return propagate(network, source_w, lp_link, lp_share)


def _source(node: Node, output_w: float, standby: bool) -> SourceResult:
    electrical = None
    if node.electrical_w is not None:
        per_watt = max(node.electrical_w - node.electrical_fixed_w, 0.0) / node.available_w \
            if node.available_w > 0 else 0.0
        electrical = electrical_draw_w(output_w, node.electrical_fixed_w, per_watt) \
            if output_w > 0 else 0.0
    return SourceResult(node.id, node.available_w, output_w, electrical, standby,
                        node.electrical_w, node.electrical_fixed_w, node.surplus)


def _surplus(network: Network, flows: Flows, before: Flows | None
             ) -> tuple[str, float, tuple[tuple[str, float], ...]]:
    modes = surplus_modes(network)
    mode = "turn-down" if not modes else " and ".join(sorted(modes))
    if before is None:
        return mode, 0.0, ()
    extra = sum(flows.incident_w[n.id] - before.incident_w[n.id] for n in network.sources)
    wanted = {ABSORBERS[m] for m in modes}
    where = tuple((n.id, flows.absorbed_w[n.id] - before.absorbed_w[n.id])
                  for n in network.elements if n.behaviour in wanted
                  and flows.absorbed_w[n.id] - before.absorbed_w[n.id] > 1e-9 * max(extra, 1.0))
    return mode, max(extra, 0.0), where


def finish_plan(model: LpModel, backend: Backend, outcome: GoalOutcome, goal: str,
                turned_down: GoalOutcome | None = None) -> Plan:
    """Turn a goal's final LP solution into a propagated, explained, verified plan.

    ``turned_down`` is the goal's own solution when a surplus stage followed it
    (to report where the surplus went).
    """
    with gc_paused():
        return _finish(model, backend, outcome, goal, turned_down)


def _finish(model: LpModel, backend: Backend, outcome: GoalOutcome, goal: str,
            turned_down: GoalOutcome | None) -> Plan:
    network = model.network
    flows = _flows(model, outcome)
    standby = network.standby_sources
    sources = tuple(_source(n, flows.incident_w[n.id], n.id in standby)
                    for n in network.sources)
    scanners = _scanners(model, outcome, flows, goal)
    mode, surplus_w, surplus_to = _surplus(
        network, flows, None if turned_down is None else _flows(model, turned_down))
    serving = [s for s in scanners if s.status != ScannerStatus.OUT_OF_SERVICE]
    factor = min((s.delivered_w / s.need_w for s in serving), default=0.0)
    status = (ScannerStatus.MET if all(s.status == ScannerStatus.MET for s in serving)
              else ScannerStatus.SHORT)
    total = sum(s.output_w for s in sources)
    plan = Plan(layout=network.name, file=network.file, sha256=network.sha256, goal=goal,
                status=status, headroom_factor=factor, sources=sources, scanners=scanners,
                elements=_elements(network, flows), losses=_losses(network, flows, total),
                binding=binding_constraints(model, outcome, flows),
                solver=backend.name, solver_version=backend.version, stages=outcome.stages,
                warnings=tuple(w.format() for w in network.warnings),
                wavelength_m=network.wavelength_m, surplus_mode=mode, surplus_w=surplus_w,
                surplus_to=surplus_to)
    verify(plan, network)
    return plan


def plan_network(network: Network, goal: Goal | str = Goal.HEADROOM,
                 solver: Solver | str = Solver.AUTO) -> Plan:
    """Build the LP of ``network``, solve ``goal`` and return the verified plan.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> plan = plan_network(build_network(load_layout("layouts/pilot-line.yaml")))
    >>> plan.status, round(plan.headroom_factor, 3)
    ('met', 1.35)
    """
    model = build_lp(network)
    return solve_model(model, make_backend(model, solver), goal)
