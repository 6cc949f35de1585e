"""Expected availability and wafers lost to failures, by state enumeration over the sweep.

Method: state enumeration of independent two-state repairable parts (R. Billinton,
R. N. Allan, "Reliability Evaluation of Power Systems", 2nd ed., Plenum 1996):
the state with nothing down, every single outage and the states of two or more
parts down whose probability reaches a threshold are planned by the outage sweep
(:mod:`beamplan.analyses.outages`, the view after corrective switching); the
expected loss is the sum over the states of probability × loss rate, the
counterpart of the expected energy not served (EENS) of power-system studies.
With a switching time ``t``, a state spends the fraction ``1 - exp(-λ t)`` of its
time (``λ`` its total rate of leaving) in the view at failure, before the
switches have moved.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from concurrent.futures import Executor
from dataclasses import dataclass

from beamplan.analyses.cost import Throughput, throughput_models
from beamplan.analyses.outages import OutageResult, OutageView, run_chunk, run_sweep
from beamplan.layout.economics import Economics
from beamplan.layout.model import Layout
from beamplan.network.graph import Network
from beamplan.optimise.result import Plan
from beamplan.physics.reliability import availability
from beamplan.vocabulary import Goal, Solver

__all__ = ["AvailabilityReport", "Component", "Improvement", "ScannerAvailability", "State",
           "components_of", "enumerate_states", "expected_loss", "plan_state",
           "run_availability"]


@dataclass(frozen=True)
class Component:
    """A part that fails and is repaired: a source, an element or a scanner."""

    id: str
    kind: str
    mtbf_h: float
    mttr_h: float

    @property
    def q(self) -> float:
        """Unavailability ``MTTR / (MTBF + MTTR)``."""
        return 1.0 - availability(self.mtbf_h, self.mttr_h)


@dataclass(frozen=True)
class State:
    """One outage state: what is down, its probability, and the loss rates of both views.

    ``loss_wph``: wafer passes per operating hour lost (exposing share counted),
    ``(scanner, wph)`` per scanner; after switching and at failure.
    """

    failed: tuple[str, ...]
    probability: float
    exit_rate_per_h: float
    after: tuple[tuple[str, float], ...]
    at_failure: tuple[tuple[str, float], ...]
    euv_lost_w: float
    moves: tuple[str, ...]

    def loss_wph(self, switching_time_h: float) -> dict[str, float]:
        """Per scanner, the mean loss rate over the state's stay."""
        f = 1.0 - math.exp(-self.exit_rate_per_h * switching_time_h) if self.moves else 0.0
        out = {s: (1 - f) * v for s, v in self.after}
        for s, v in self.at_failure:
            out[s] = out.get(s, 0.0) + f * v
        return out


@dataclass(frozen=True)
class ScannerAvailability:
    """One scanner's expected year."""

    id: str
    wph: float
    exposing: float
    full_power: float
    hours_lost: float
    wafers_lost: float
    plasma_wafers_lost: float


@dataclass(frozen=True)
class Improvement:
    """What halving one part's unavailability (by default) gains in wafer passes a year."""

    id: str
    kind: str
    mtbf_h: float
    mttr_h: float
    unavailability: float
    wafers_gained: float


@dataclass(frozen=True)
class AvailabilityReport:
    """State probabilities, per-scanner availability, the fab's expected loss, the ranking."""

    layout: str
    file: str
    economics: Economics
    plan: Plan
    components: tuple[Component, ...]
    states: tuple[State, ...]
    truncated_probability: float
    scanners: tuple[ScannerAvailability, ...]
    wafers_lost: float
    wafers_lost_at_failure: float
    euv_not_delivered_mwh: float
    ranking: tuple[Improvement, ...]
    multiples_planned: int
    interrupted: bool = False
    wafers_lost_bound: float = 0.0  # + every state left out at the loss of every scanner


def components_of(layout: Layout, network: Network, econ: Economics) -> tuple[Component, ...]:
    """Every source, element and scanner in service with its MTBF and MTTR.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> lay = load_layout("layouts/pilot-line.yaml")
    >>> parts = components_of(lay, build_network(lay), Economics())
    >>> parts[0].kind, parts[0].mtbf_h
    ('source', 500.0)
    """
    part_of = {e.id: e.part for e in layout.elements}
    return tuple(Component(n.id, n.kind, r.mtbf_h, r.mttr_h)
                 for n in network.nodes if n.in_use
                 for r in (econ.reliability(n.id, n.kind, part_of.get(n.id)),))


def enumerate_states(components: Sequence[Component], threshold: float, max_order: int = 4
                     ) -> tuple[list[tuple[str, ...]], float]:
    """Every single outage, and the states of two or more parts down as likely as ``threshold``.

    A state is only extended while its probability stays at or above the
    threshold (state enumeration with a probability cut, Billinton and Allan
    1996), up to ``max_order`` parts down. Returns the cases (by order) and the
    probability of the states left out.

    Examples
    --------
    >>> parts = [Component("a", "mirror", 90.0, 10.0), Component("b", "mirror", 90.0, 10.0)]
    >>> cases, left = enumerate_states(parts, 0.02)
    >>> cases, round(left, 12)  # hand calculation: the pair 0.81 × (0.1 / 0.9)² = 0.01 < 0.02
    ([('a',), ('b',)], 0.01)
    """
    q = [c.q for c in components]
    none = math.prod(1.0 - x for x in q)
    odds = [x / (1.0 - x) for x in q]
    cases: list[tuple[str, ...]] = [(c.id,) for c in components]
    covered = none * (1.0 + sum(odds))
    frontier: list[tuple[tuple[int, ...], float]] = [((i,), none * odds[i])
                                                     for i in range(len(components))]
    for _ in range(2, max_order + 1):
        grown = []
        for state, p in frontier:
            for j in range(state[-1] + 1, len(components)):
                pj = p * odds[j]
                if pj >= threshold:
                    grown.append(((*state, j), pj))
        cases.extend(tuple(components[i].id for i in state) for state, _ in grown)
        covered += sum(p for _, p in grown)
        frontier = grown
    return cases, max(1.0 - covered, 0.0)


def _loss(view: OutageView, failed: tuple[str, ...], models: dict[str, Throughput],
          exposing: dict[str, float], base_w: dict[str, float]) -> tuple[tuple[str, float], ...]:
    out = {}
    for sid, was, got in view.losing:
        out[sid] = exposing[sid] * max(models[sid](was) - models[sid](got), 0.0)
    for sid in failed:
        if sid in models:
            out[sid] = exposing[sid] * models[sid](base_w[sid])
    return tuple(sorted((s, v) for s, v in out.items() if v > 0.0))


def _state(result: OutageResult | None, failed: tuple[str, ...], probability: float,
           rates: dict[str, tuple[float, float]], models: dict[str, Throughput],
           exposing: dict[str, float], base_w: dict[str, float]) -> State:
    down = set(failed)
    exit_rate = sum(1 / rates[c][1] if c in down else 1 / rates[c][0] for c in rates)
    if result is None:
        return State(failed, probability, exit_rate, (), (), 0.0, ())
    after = _loss(result.after, failed, models, exposing, base_w)
    at = _loss(result.at_failure, failed, models, exposing, base_w)
    return State(failed, probability, exit_rate, after, at, result.after.delivered_lost_w,
                 tuple(m.label for m in result.moves))


def expected_loss(states: Sequence[State], switching_time_h: float, hours: float,
                  odds_factor: dict[str, float] | None = None) -> dict[str, float]:
    """Expected wafer passes lost a year per scanner: ``H Σ_S P(S) loss(S)``.

    ``odds_factor`` rescales the probability of the states in which a part is
    down (``q'/q``) and up (``(1-q')/(1-q)``), for the ranking: ``{id: (down, up)}``
    is given as two entries ``id`` and ``id/up``.

    Examples
    --------
    >>> s = State(("a",), 0.01, 0.1, (("x", 100.0),), (("x", 100.0),), 0.0, ())
    >>> expected_loss([s], 0.0, 8000.0)  # hand calculation: 8000 × 0.01 × 100
    {'x': 8000.0}
    """
    out: dict[str, float] = {}
    for state in states:
        p = state.probability
        if odds_factor:
            for cid, factor in odds_factor.items():
                if cid.endswith("/up"):
                    if cid[:-3] not in state.failed:
                        p *= factor
                elif cid in state.failed:
                    p *= factor
        for sid, rate in state.loss_wph(switching_time_h).items():
            out[sid] = out.get(sid, 0.0) + hours * p * rate
    return out


def run_availability(layout: Layout, network: Network, econ: Economics, *,
                     goal: Goal | str = Goal.HEADROOM, solver: Solver | str = Solver.AUTO,
                     executor: Executor | None = None,
                     progress: Callable[[int, int], None] | None = None,
                     exact: bool = False) -> AvailabilityReport:
    """Enumerate the outage states, plan them with the sweep and add up the expected loss.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> lay = beamplan.load("layouts/pilot-line.yaml")
    >>> report = run_availability(lay, build_network(lay), Economics())
    >>> report.wafers_lost > 0, report.ranking[0].kind
    (True, 'source')
    """
    components = components_of(layout, network, econ)
    cases, truncated = enumerate_states(components, econ.threshold)
    sweep = run_sweep(network, cases, goal=goal, solver=solver, executor=executor,
                      progress=progress, exact=exact)
    by_case = {frozenset(r.failed): r for r in sweep.results}
    plan = sweep.base
    models, _ = throughput_models(network, econ)
    exposing = {s.id: econ.scanner(s.id).exposing for s in plan.scanners}
    base_w = {s.id: s.delivered_w for s in plan.scanners}
    rates = {c.id: (c.mtbf_h, c.mttr_h) for c in components}
    q = {c.id: c.q for c in components}
    none = math.prod(1.0 - x for x in q.values())
    states = [_state(None, (), none, rates, models, exposing, base_w)]
    for case in cases:
        p = none * math.prod(q[c] / (1.0 - q[c]) for c in case)
        states.append(_state(by_case.get(frozenset(case)), case, p, rates, models, exposing,
                             base_w))
    hours = econ.hours_per_year
    lost = expected_loss(states, econ.switching_time_h, hours)
    lost_at = expected_loss(states, math.inf, hours)
    scanners = []
    for s in plan.scanners:
        short = sum(st.probability for st in states if any(k == s.id for k, _ in st.after))
        full = max(1.0 - truncated - short, 0.0)
        wph = models[s.id](s.delivered_w)
        own = next((c for c in components if c.id == s.id), None)
        a_own = 1.0 - own.q if own else 1.0
        a_plasma = availability(econ.plasma.mtbf_h, econ.plasma.mttr_h)
        plasma_lost = hours * exposing[s.id] * models[s.id](network.node[s.id].need_w) * (
            1.0 - a_own * a_plasma)
        scanners.append(ScannerAvailability(s.id, wph, exposing[s.id], full,
                                            hours * exposing[s.id] * (1.0 - full),
                                            lost.get(s.id, 0.0), plasma_lost))
    total = sum(lost.values())
    ranking = []
    for c in components:
        new_q = c.q * econ.improvement
        factors = {c.id: new_q / c.q if c.q > 0 else 1.0, f"{c.id}/up": (1 - new_q) / (1 - c.q)}
        gained = total - sum(expected_loss(states, econ.switching_time_h, hours,
                                           factors).values())
        ranking.append(Improvement(c.id, c.kind, c.mtbf_h, c.mttr_h, c.q, gained))
    ranking.sort(key=lambda i: (-round(i.wafers_gained, 6), i.id))
    euv = hours * sum(st.probability * st.euv_lost_w for st in states) / 1e6
    return AvailabilityReport(
        plan.layout, plan.file, econ, plan, components, tuple(states), truncated,
        tuple(scanners), total, sum(lost_at.values()), euv, tuple(ranking),
        len(cases) - len(components), sweep.interrupted,
        total + truncated * hours * sum(exposing[s.id] * s.wph for s in scanners))


def plan_state(network: Network, failed: tuple[str, ...], models: dict[str, Throughput],
               exposing: dict[str, float], base_w: dict[str, float],
               goal: Goal | str = Goal.HEADROOM, solver: Solver | str = Solver.AUTO) -> State:
    """Plan one state on this process's live model (for states the enumeration left out).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> models, _ = throughput_models(net, Economics())
    >>> plan_state(net, ("t1", "t2"), models, {s: 1.0 for s in models}, {}).after[0][0]
    'litho-p1'
    """
    result = run_chunk(network, Goal.SCREEN if goal == Goal.HEADROOM else goal, solver, [failed])[0]
    return _state(result, failed, 0.0, {}, models, exposing, base_w)
