"""The planning goals as sequences of LPs on one model, re-solved in place.

* ``headroom``: progressive filling (lexicographic max-min of each scanner's
  factor delivered ÷ need), then the least source power at those factors.
* ``min-source``: the least source power that meets every need; when the
  needs cannot all be met, an elastic LP minimises the weighted shortfall.
* ``priority``: tiers in order, each filled up to its need with what the
  tiers before it left; the rest then raises everyone's headroom.

A scanner is frozen at a level when the dual value of its demand row is
positive: then every optimum keeps that row tight (complementary slackness),
so the scanner cannot rise without lowering another.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np

from beamplan.network.behaviour import Node
from beamplan.optimise.backend import INF, Backend, RawSolution
from beamplan.optimise.lp import LpModel
from beamplan.optimise.magnitudes import solver_failure
from beamplan.vocabulary import GOALS as _GOALS
from beamplan.vocabulary import Goal

__all__ = ["GOALS", "GoalOutcome", "run_goal"]

GOALS = _GOALS  # the goals a user may choose (beamplan.vocabulary)
DUAL_TOL = 1e-9
TIER_WEIGHT = 1000.0
SCREEN_SOURCE_COST = 1e-7  # per W drawn, in the screen goal's last LP: far below any path's gain
# per W delivered, so only power that reaches no scanner is turned down (common practice)


@dataclass(frozen=True)
class GoalOutcome:
    """The final solution of a goal and the primary stage, for shadow prices.

    ``primary`` is ``"factor"`` (duals are per unit of the headroom factor,
    objective −t), ``"source"`` (objective Σ source W) or ``"shortfall"``
    (objective Σ weighted shortfall W).
    """

    solution: RawSolution
    primary: str
    primary_duals: np.ndarray
    primary_value: float
    levels: dict[str, float]
    stages: int
    freeze_duals: dict[str, np.ndarray] = field(default_factory=dict)
    first_frozen: tuple[str, ...] = ()


class _Driver:
    def __init__(self, model: LpModel, backend: Backend) -> None:
        self.m = model
        self.b = backend
        self.stages = 0
        self.first: RawSolution | None = None
        self.freeze_duals: dict[str, np.ndarray] = {}
        self.first_frozen: list[str] = []

    def solve(self, allow_infeasible: bool = False) -> RawSolution:
        sol = self.b.solve()
        self.stages += 1
        if sol.status != "optimal" and not allow_infeasible:
            raise solver_failure(self.stages, sol.status)
        return sol

    @property
    def scanners(self) -> list[Node]:
        """The scanners in service (an outage takes a scanner's need away)."""
        return [s for s in self.m.network.scanners
                if s.in_use and s.id not in self.m.out_of_service]

    def need(self, sid: str) -> float:
        return self.m.network.node[sid].need_w

    def demand_active(self, sid: str, floor: float = 0.0) -> None:
        """Row reads x + u − need·t ≥ 0 (floor unused)."""
        row = self.m.demand_row[sid]
        self.b.set_coefficient(row, self.m.factor_col, -self.need(sid))
        self.b.set_rhs(row, floor)

    def demand_fixed(self, sid: str, level: float) -> None:
        """Row reads x + u ≥ level·need (t no longer in it)."""
        row = self.m.demand_row[sid]
        self.b.set_coefficient(row, self.m.factor_col, 0.0)
        held = max(level, 0.0) * self.need(sid)
        # A relative give, and an absolute one for scanners that get milliwatts, scaled
        # down with the need so that a micro-watt scanner is not held 1 % low.
        give = min(self.b.freeze_abs_w, 1e-4 * self.need(sid))
        self.b.set_rhs(row, max(held * (1.0 - self.b.freeze_slack) - give, 0.0))

    def factor_bounds(self, low: float, high: float) -> None:
        self.b.set_bounds(self.m.factor_col, low, high)

    def objective(self, costs: dict[int, float]) -> None:
        self.b.set_objective(costs)

    def fill(self, active: Iterable[str], levels: dict[str, float], low: float = 0.0,
             high: float = INF) -> None:
        """Progressive filling of ``active`` scanners; levels[sid] set for each."""
        todo = [s for s in active if s not in levels]
        for sid in todo:
            self.demand_active(sid)
        self.objective({self.m.factor_col: -1.0})
        while todo:
            self.factor_bounds(low, high)
            sol = self.solve()
            if self.first is None:
                self.first = sol
            level = float(sol.columns[self.m.factor_col])
            duals = sol.row_duals
            blocked = [s for s in todo if duals[self.m.demand_row[s]] > DUAL_TOL]
            if level >= high * (1.0 - 1e-12) or not blocked:
                blocked = list(todo)  # at the cap, or no dual certificate: freeze all
            if not self.first_frozen:
                self.first_frozen = list(blocked)
            for sid in blocked:
                levels[sid] = level
                self.freeze_duals[sid] = duals
                self.demand_fixed(sid, level)
            todo = [s for s in todo if s not in levels]
            low = level

    def hold_unreachable(self, levels: dict[str, float]) -> list[str]:
        """Hold scanners that no power can reach at 0 (no LP needed); return the others."""
        serving = {s.id for s in self.scanners}
        for sid in sorted(self.m.unreachable):
            if sid in serving and sid not in levels:
                levels[sid] = 0.0
                self.demand_fixed(sid, 0.0)
                self.first_frozen.append(sid)
        return [s.id for s in self.scanners if s.id not in levels]

    def frugal_at_need(self) -> RawSolution:
        """Least total source power with t fixed by the caller; may be infeasible."""
        self.objective({col: 1.0 for col in self.m.source_col.values()})
        return self.solve(allow_infeasible=True)

    def frugal(self) -> RawSolution:
        """Least total source power with every level held."""
        self.factor_bounds(0.0, 0.0)
        self.objective({col: 1.0 for col in self.m.source_col.values()})
        return self.solve()


def _reset(d: _Driver) -> None:
    active = {s.id for s in d.scanners}
    for sid, col in d.m.shortfall_col.items():
        d.b.set_bounds(col, 0.0, 0.0)
        if sid in active:
            d.demand_active(sid)
        else:  # out of service: no demand at all
            d.b.set_coefficient(d.m.demand_row[sid], d.m.factor_col, 0.0)
            d.b.set_rhs(d.m.demand_row[sid], 0.0)
    d.factor_bounds(0.0, INF)


def _headroom(d: _Driver) -> GoalOutcome:
    from beamplan.optimise.waterfill import tree_headroom

    levels: dict[str, float] = {}
    active = d.hold_unreachable(levels)
    if not tree_headroom(d, active, levels):  # a tree: one LP stage, then water-filling
        d.fill(active, levels)
    final = d.frugal()
    first = d.first or final
    return GoalOutcome(final, "factor", first.row_duals, float(first.columns[d.m.factor_col]),
                       levels, d.stages, d.freeze_duals, tuple(d.first_frozen))


def _weights(d: _Driver) -> dict[str, float]:
    tiers = sorted({s.priority for s in d.scanners})
    rank = {tier: len(tiers) - 1 - i for i, tier in enumerate(tiers)}
    return {s.id: TIER_WEIGHT ** rank[s.priority] for s in d.scanners}


def _min_source(d: _Driver) -> GoalOutcome:
    d.factor_bounds(1.0, 1.0)
    sol = d.frugal_at_need()
    if sol.status == "optimal":
        levels = {s.id: 1.0 for s in d.scanners}
        return GoalOutcome(sol, "source", sol.row_duals, sol.objective, levels, d.stages)
    weights = _weights(d)
    for sid in weights:
        d.b.set_bounds(d.m.shortfall_col[sid], 0.0, INF)
    d.objective({d.m.shortfall_col[s]: w for s, w in weights.items()})
    elastic = d.solve()
    for sid in weights:
        col = d.m.shortfall_col[sid]
        short = float(elastic.columns[col])
        d.b.set_bounds(col, 0.0, short * (1.0 + d.b.freeze_slack) + d.b.freeze_slack)
    d.objective({col: 1.0 for col in d.m.source_col.values()})
    final = d.solve()
    levels = {s.id: 1.0 - float(final.columns[d.m.shortfall_col[s.id]]) / s.need_w
              for s in d.scanners}
    short_ids = tuple(s for s in weights if levels[s] < 1.0)
    return GoalOutcome(final, "shortfall", elastic.row_duals, elastic.objective, levels,
                       d.stages, {s: elastic.row_duals for s in weights}, short_ids)


def _priority(d: _Driver) -> GoalOutcome:
    scanners = d.scanners
    tiers = sorted({s.priority for s in scanners})
    levels: dict[str, float] = {}
    for s in scanners:  # lower tiers wait: no demand yet
        row = d.m.demand_row[s.id]
        d.b.set_coefficient(row, d.m.factor_col, 0.0)
        d.b.set_rhs(row, 0.0)
    for tier in tiers:
        d.fill([s.id for s in scanners if s.priority == tier], levels, 0.0, 1.0)
    served = [s.id for s in scanners if levels[s.id] >= 1.0 - 1e-9]
    for sid in served:
        del levels[sid]
    if served:  # lift the served together; no floor of 1: their holds carry a slack
        d.fill(served, levels, 0.0, INF)
    final = d.frugal()
    first = d.first or final
    return GoalOutcome(final, "factor", first.row_duals, float(first.columns[d.m.factor_col]),
                       levels, d.stages, d.freeze_duals, tuple(d.first_frozen))


def _screen(d: _Driver) -> GoalOutcome:
    """The sweep's fast headroom: exact below the needs, one LP above them.

    The best common factor t* is solved exactly. Scanners that cannot reach
    their need are filled progressively, exactly as by ``headroom``; above the
    need, one LP spreads the power by maximising the total delivered with
    every scanner held at min(t*, its level). Shortfalls and the lowest factor
    are those of ``headroom``; the split of power above the needs may differ.
    """
    levels: dict[str, float] = {}
    active = d.hold_unreachable(levels)
    best = 0.0
    if active:
        for sid in active:
            d.demand_active(sid)
        d.objective({d.m.factor_col: -1.0})
        d.factor_bounds(0.0, INF)
        d.first = d.solve()
        best = float(d.first.columns[d.m.factor_col])
    if not active:
        pass
    elif best < 1.0:
        d.fill(active, levels, 0.0, 1.0)
    else:
        for sid in active:
            levels[sid] = best
            d.demand_fixed(sid, best)
        d.first_frozen = active
    d.factor_bounds(0.0, 0.0)
    costs: dict[int, float] = {}
    for sid in active:
        for link in d.m.network.in_links[sid]:
            col = d.m.link_col[link.index]
            costs[col] = costs.get(col, 0.0) - d.m.link_coef[link.index]
    for col in d.m.source_col.values():  # draw nothing that is only dumped (a standby
        costs[col] = costs.get(col, 0.0) + SCREEN_SOURCE_COST  # source behind a switch)
    d.objective(costs)
    final = d.solve()
    first = d.first or final
    return GoalOutcome(final, "factor", first.row_duals, best, levels, d.stages,
                       d.freeze_duals, tuple(d.first_frozen))


def run_goal(model: LpModel, backend: Backend, goal: Goal | str) -> GoalOutcome:
    """Solve ``goal`` on ``model`` with ``backend``; the model may be re-used.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> from beamplan.optimise.lp import build_lp
    >>> from beamplan.optimise.backend import make_backend
    >>> lp = build_lp(build_network(load_layout("layouts/pilot-line.yaml")))
    >>> outcome = run_goal(lp, make_backend(lp), "headroom")
    >>> outcome.primary, outcome.primary_value > 1.0
    ('factor', True)
    """
    try:
        chosen = Goal(goal)
    except ValueError:
        raise ValueError(f"unknown goal {goal!r}; the goals are {', '.join(GOALS)}") from None
    driver = _Driver(model, backend)
    _reset(driver)
    run = {Goal.HEADROOM: _headroom, Goal.MIN_SOURCE: _min_source, Goal.SCREEN: _screen,
           Goal.PRIORITY: _priority}
    return run[chosen](driver)
