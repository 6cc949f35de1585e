"""Plan a base layout and its what-if cases side by side, with settings stability."""

from __future__ import annotations

from collections.abc import Collection
from dataclasses import dataclass, replace

from beamplan.analyses.cases import Case, build_case, case_diagnostics
from beamplan.analyses.switching import SwitchMove, best_positions
from beamplan.errors import Diagnostic, LayoutError
from beamplan.layout.model import Layout
from beamplan.layout.yamlpos import YamlDocument
from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network, build_network
from beamplan.optimise.planner import MET_RTOL, plan_network
from beamplan.optimise.result import Plan
from beamplan.vocabulary import Goal, ScannerStatus, Solver

__all__ = ["CaseOutcome", "Comparison", "SettingMove", "compare_cases", "settings_moves"]

MOVE_TOL = 1e-6  # a setting that changes by less than this (as a fraction) has not moved


@dataclass(frozen=True)
class SettingMove:
    """A splitter share or attenuator transmission that differs from the base plan."""

    element: str
    output: str | None
    base: float
    case: float

    @property
    def change(self) -> float:
        """Case minus base."""
        return self.case - self.base


@dataclass(frozen=True)
class CaseOutcome:
    """One case planned: its plan, what newly binds, and which settings moved."""

    name: str
    note: str
    plan: Plan
    newly_binding: tuple[str, ...]
    moves: tuple[SettingMove, ...]
    best_factor: float | None = None  # with settings stability: the best factor it was held near
    switch_moves: tuple[SwitchMove, ...] = ()  # with --steady-switches: switches moved


@dataclass(frozen=True)
class Comparison:
    """The base plan and every case, with the scanner ids of all of them in order."""

    layout: str
    goal: str
    base: Plan
    cases: tuple[CaseOutcome, ...]
    steady: float | None = None
    steady_switches: bool = False

    @property
    def scanner_ids(self) -> tuple[str, ...]:
        """Every scanner of the base and of the cases, base order first."""
        seen = [s.id for s in self.base.scanners]
        for case in self.cases:
            seen += [s.id for s in case.plan.scanners if s.id not in seen]
        return tuple(seen)


def _flat(setting: object) -> dict[str | None, float]:
    if isinstance(setting, tuple):
        return {name: fraction for name, fraction in setting}
    if isinstance(setting, float):
        return {None: setting}
    return {}


def settings_moves(base: Plan, case: Plan, out_of_service: Collection[str] = ()
                   ) -> tuple[SettingMove, ...]:
    """The settings of ``case`` that differ from those of ``base`` (elements in both).

    Elements idle in the case, or listed in ``out_of_service``, have no setting
    that matters and are left out.

    Examples
    --------
    >>> import beamplan
    >>> plan = beamplan.plan("layouts/pilot-line.yaml")
    >>> settings_moves(plan, plan)
    ()
    """
    before = {e.id: _flat(e.setting) for e in base.elements}
    moves = []
    for element in case.elements:
        if element.incident_w <= 0.0 or element.id in out_of_service:
            continue  # an idle element's setting does not matter
        old = before.get(element.id, {})
        for output, value in _flat(element.setting).items():
            if output in old and abs(value - old[output]) > MOVE_TOL:
                moves.append(SettingMove(element.id, output, old[output], value))
    return tuple(moves)


def _service(plan: Plan) -> tuple[int, int, float, float]:
    """Smaller is better: fewer cut off, fewer short, a higher lowest factor of the
    scanners still served, more power delivered (rounded against round-off)."""
    serving = [s for s in plan.scanners if s.status != ScannerStatus.OUT_OF_SERVICE]
    cut = [s for s in serving if s.status == ScannerStatus.CUT_OFF]
    short = [s for s in serving if s.delivered_w < s.need_w * (1 - MET_RTOL)]
    served = min((s.delivered_w / s.need_w for s in serving if s not in cut), default=0.0)
    return (len(cut), len(short), -round(served, 7), -round(plan.delivered_w, 3))


def _switched_network(network: Network, goal: str, solver: str
                      ) -> tuple[Network, tuple[SwitchMove, ...]]:
    """The case with its switches where they restore the most service (fewest moves)."""
    switches = {n.id: tuple(link.tail for link in network.in_links[n.id])
                for n in network.elements
                if n.behaviour is Behaviour.COMBINE and n.select is not None and n.in_use}
    if not switches:
        return network, ()
    current = {sid: str(network.node[sid].select) for sid in switches}

    def moved(positions: dict[str, str]) -> Network:
        return network.with_nodes({sid: replace(network.node[sid], select=sel)
                                   for sid, sel in positions.items()})

    _, moves = best_positions(switches, current, lambda p: plan_network(moved(p), goal, solver),
                              _service, plan_network(network, goal, solver))[:2]
    return moved({**current, **{m.switch: m.after for m in moves}}), moves


def compare_cases(base: Layout, cases: dict[str, Case], *, goal: Goal | str = Goal.HEADROOM,
                  base_doc: YamlDocument | None = None, steady: float | None = None,
                  solver: Solver | str = Solver.AUTO, names: list[str] | None = None,
                  steady_switches: bool = False) -> Comparison:
    """Plan ``base`` and each case with the same goal.

    Parameters
    ----------
    steady
        When given, the settings-stability tolerance: each scanner is served at
        least (1 − steady) × its level in the plain plan of the case, while the
        base settings move as little as possible (goal ``headroom`` only).
    steady_switches
        With ``steady``: switches may move too, but only to positions that
        serve strictly better (fewer scanners cut off, then fewer short, then a
        higher lowest factor, then more power); of equally good positions the
        one with the fewest moves. Without it switches stay where the case puts
        them.

    Raises
    ------
    LayoutError
        With the located diagnostics of every case that does not apply or check.
    """
    base_plan = plan_network(build_network(base), goal, solver)
    networks = {}
    problems: list[Diagnostic] = []
    for name in names or list(cases):
        try:
            networks[name] = build_network(build_case(base, cases, name, base_doc))
        except LayoutError as exc:
            problems.extend(case_diagnostics(exc, name))
    if problems:
        raise LayoutError(problems)
    base_binding = {b.description for b in base_plan.binding}
    base_settings = {e.id: e.setting for e in base_plan.elements}
    outcomes = []
    for name, network in networks.items():
        best = None
        switch_moves: tuple[SwitchMove, ...] = ()
        if steady is not None:
            from beamplan.optimise.steady import steady_plan

            if steady_switches:
                network, switch_moves = _switched_network(network, goal, solver)
            plan, best = steady_plan(network, base_settings, tolerance=steady, solver=solver)
        else:
            plan = plan_network(network, goal, solver)
        newly = tuple(b.description for b in plan.binding if b.description not in base_binding)
        failed = {n.id for n in network.nodes if not n.in_use}
        outcomes.append(CaseOutcome(name, cases[name].note, plan, newly,
                                    settings_moves(base_plan, plan, failed), best,
                                    switch_moves))
    return Comparison(base.name, goal, base_plan, tuple(outcomes), steady,
                      steady_switches and steady is not None)
