"""Settings stability: reach (nearly) the best headroom while moving as few settings as possible.

After the case is planned with the headroom goal, which gives each scanner
in service its own level L_i (delivered ÷ need; t* is the lowest), this LP
holds every scanner at ≥ (1 − tolerance) · L_i · need_i and minimises the total movement of
the splitter shares and attenuator outputs away from the base plan's
settings, measured in watts: Σ |s_k − f_k^base · in| over splitter outputs
and Σ |out − τ^base · in| over attenuators (each absolute value as two rows
on a deviation column). Settings whose base ratio is kept exactly cost
nothing, so the LP moves only the knobs it must.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network
from beamplan.optimise.backend import make_backend
from beamplan.optimise.goals import GoalOutcome, run_goal
from beamplan.optimise.lp import LpModel, Row, build_lp
from beamplan.optimise.planner import finish_plan
from beamplan.optimise.result import Plan
from beamplan.vocabulary import Family, Goal, Solver

__all__ = ["Setting", "steady_plan"]

Setting = float | tuple[tuple[str, float], ...] | None
SOURCE_WEIGHT = 1e-6  # ties between equally small moves go to the frugal one


def _deviation_rows(model: LpModel, base: Mapping[str, Setting]) -> list[int]:
    net = model.network
    columns: list[int] = []
    for i, node in enumerate(net.elements):
        setting = base.get(node.id)
        if setting is None or not node.in_use:
            continue  # a failed element has no setting to keep: it passes nothing
        inflow = model.inflow(node.id)
        pairs: list[tuple[str | None, Any, float]] = []
        if node.behaviour is Behaviour.SPLIT and isinstance(setting, tuple):
            for name, fraction in setting:
                pairs.append((name, model.var(model.share_col[(node.id, name)]), fraction))
        elif node.behaviour is Behaviour.RANGE and isinstance(setting, float):
            out = model.link_expr(net.out_link[(node.id, None)].index)
            pairs.append((None, out, setting))
        for k, (port, var, ratio) in enumerate(pairs):
            col = model.add_column(f"zdev{i:05d}_{k:02d}")
            dev = model.var(col)
            tag = f"{i:05d}_{k:02d}"
            model.add_row(dev - (var - ratio * inflow) >= 0,
                          Row(f"zdp{tag}", Family.DEVIATION, node.id, port))
            model.add_row(dev + (var - ratio * inflow) >= 0,
                          Row(f"zdm{tag}", Family.DEVIATION, node.id, port))
            columns.append(col)
    return columns


def steady_plan(network: Network, base_settings: Mapping[str, Setting], *,
                tolerance: float = 0.0, solver: Solver | str = Solver.AUTO) -> tuple[Plan, float]:
    """Plan ``network`` near its best headroom, moving the base settings as little as possible.

    First the case is planned with the ``headroom`` goal (progressive
    filling), which gives every scanner in service its own level L_i (the
    lowest of them is the case's best common factor t*). Then every scanner
    is held at ≥ (1 − tolerance) · L_i · need_i while the total movement of
    the settings away from ``base_settings`` is minimised. Holding each
    scanner at its own level, not all of them at t*, is what keeps a case
    with a scanner cut off (t* = 0) from turning the whole fab off.

    Returns the plan and t*.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> base = beamplan.plan(net)
    >>> plan, best = steady_plan(net, {e.id: e.setting for e in base.elements})
    >>> plan.headroom_factor >= best * (1 - 1e-6)
    True
    """
    model = build_lp(network)
    deviations = _deviation_rows(model, base_settings)
    backend = make_backend(model, solver)
    # The plain plan's levels; the deviation columns cost nothing in this goal.
    plain = run_goal(model, backend, Goal.HEADROOM)
    keep = (1.0 - tolerance) * (1.0 - backend.freeze_slack)
    for node in network.scanners:
        row = model.demand_row[node.id]
        level = plain.levels.get(node.id)
        backend.set_coefficient(row, model.factor_col, 0.0)
        if level is None:  # out of service: no demand
            backend.set_rhs(row, 0.0)
            continue
        backend.set_rhs(row, max(keep * level * node.need_w - backend.freeze_abs_w, 0.0))
    backend.set_bounds(model.factor_col, 0.0, 0.0)
    costs = {col: 1.0 for col in deviations}
    costs.update({col: SOURCE_WEIGHT for col in model.source_col.values()})
    backend.set_objective(costs)
    solution = backend.solve()
    if solution.status != "optimal":
        from beamplan.errors import InternalError

        raise InternalError(f"the settings-stability LP ended {solution.status}")
    floors = {sid: keep * level for sid, level in plain.levels.items()}
    outcome = GoalOutcome(solution, "source", np.zeros(len(model.row_info)), solution.objective,
                          floors, plain.stages + 1)
    return finish_plan(model, backend, outcome, Goal.HEADROOM), plain.primary_value
