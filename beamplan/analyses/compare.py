"""Plan a base layout and its what-if cases side by side, with settings stability."""

from __future__ import annotations

from collections.abc import Collection
from dataclasses import dataclass

from beamplan.analyses.cases import Case, build_case, case_diagnostics
from beamplan.errors import Diagnostic, LayoutError
from beamplan.layout.model import Layout
from beamplan.layout.yamlpos import YamlDocument
from beamplan.network.graph import build_network
from beamplan.optimise.planner import plan_network
from beamplan.optimise.result import Plan

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


@dataclass(frozen=True)
class Comparison:
    """The base plan and every case, with the scanner ids of all of them in order."""

    layout: str
    goal: str
    base: Plan
    cases: tuple[CaseOutcome, ...]
    steady: float | None = None

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


def compare_cases(base: Layout, cases: dict[str, Case], *, goal: str = "headroom",
                  base_doc: YamlDocument | None = None, steady: float | None = None,
                  solver: str = "auto", names: list[str] | None = None) -> Comparison:
    """Plan ``base`` and each case with the same goal.

    Parameters
    ----------
    steady
        When given, the settings-stability tolerance: each case is planned to
        within this fraction of its best headroom factor while moving the base
        settings as little as possible (goal ``headroom`` only).

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
        if steady is not None:
            from beamplan.optimise.steady import steady_plan

            plan, best = steady_plan(network, base_settings, tolerance=steady, solver=solver)
        else:
            plan = plan_network(network, goal, solver)
        newly = tuple(b.description for b in plan.binding if b.description not in base_binding)
        failed = {n.id for n in network.nodes if not n.in_service}
        outcomes.append(CaseOutcome(name, cases[name].note, plan, newly,
                                    settings_moves(base_plan, plan, failed), best))
    return Comparison(base.name, goal, base_plan, tuple(outcomes), steady)
