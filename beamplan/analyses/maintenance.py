"""The cheapest maintenance plan that holds every need over the horizon, checked.

1. A reference plan of the new layout fixes the power distribution (the
   absorbed power of each optic, so dose-driven ageing is linear in time).
2. Sensitivities ``k[s,i]``: 1 for every lit aged optic on the scanner's
   path (with settings and source power fixed, the delivered power is the
   product of the path's gains), or more where re-planning shows more: each
   aged optic's gain is lowered by 1 % in turn and the layout re-planned,
   ``Δ ln(delivered to s) / Δ ln(gain of i)``. This carries heat limits and
   splitter bounds that couple one bay's optics to another bay's scanners.
3. The MILP of :mod:`beamplan.analyses.maintenance_milp` chooses the actions.
4. The schedule is simulated by the stepped runway engine (re-planning at
   every step, the real laws). Where a scanner falls short, its requirement
   is tightened by the shortfall and the MILP solved again (a few rounds).
5. For each action chosen: the best schedule without it (cost increase, or
   no schedule at all), from the MILP.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from concurrent.futures import Executor
from dataclasses import dataclass, field

from beamplan.analyses.ageing import Event, Runway, Stepper, path_elements, run_runway
from beamplan.analyses.maintenance_milp import MaintenanceModel, Schedule, solve
from beamplan.layout.ageing import AgeingSpec
from beamplan.layout.model import Layout

__all__ = ["Done", "MaintenancePlan", "Skip", "build_model", "plan_maintenance"]

PERTURBATION = 0.99  # gain factor for the finite-difference sensitivities
TIGHTEN_MARGIN = 0.002  # extra log margin added with each tightening (common practice, no source)
MAX_ROUNDS = 4


@dataclass(frozen=True)
class Done:
    """One action of the schedule."""

    element: str
    window: int
    hour: float
    action: str
    cost: float
    downtime_h: float


@dataclass(frozen=True)
class Skip:
    """What the best schedule without one action would lose (``None``: no schedule)."""

    element: str
    window: int
    action: str
    objective_without: float | None
    increase: float | None


@dataclass(frozen=True)
class MaintenancePlan:
    """The schedule, its totals, the what-if-skipped table and the simulated check."""

    objective: str
    currency: str
    windows_h: tuple[float, ...]
    horizon_h: float
    feasible: bool
    actions: tuple[Done, ...]
    total_cost: float
    total_downtime_h: float
    skips: tuple[Skip, ...]
    check: Runway | None
    check_ok: bool
    rounds: int
    tightened: dict[str, float] = field(default_factory=dict)
    binaries: int = 0
    gap: float = 0.0


def _sensitivities(stepper: Stepper, elements: Sequence[str]) -> dict[str, dict[str, float]]:
    base = stepper.plan(stepper.new_state())
    ref = {s.id: s.delivered_w for s in base.scanners if s.need_w > 0}
    lit = {e.id for e in base.elements if e.incident_w > 0}
    paths = path_elements(stepper.layout)
    # 1 on the lit path: settings and source power fixed, delivered = product of gains
    out: dict[str, dict[str, float]] = {
        s: {eid: 1.0 for eid in elements if eid in paths[s] and eid in lit} for s in ref}
    gains = {eid: 1.0 for eid in stepper.laws}
    for eid in elements:
        plan = stepper.plan_gains({**gains, eid: PERTURBATION})
        for s in plan.scanners:
            if s.id in ref and ref[s.id] > 0:
                k = (math.log(max(s.delivered_w, 1e-30)) - math.log(ref[s.id])) / \
                    math.log(PERTURBATION)
                if k > out[s.id].get(eid, 0.0) + 1e-6:
                    out[s.id][eid] = k
    return out


def build_model(stepper: Stepper, spec: AgeingSpec, windows_h: Sequence[float],
                horizon_h: float, objective: str,
                tightened: dict[str, float] | None = None) -> MaintenanceModel:
    """The MILP's data for a layout's ageing laws (see the module notes).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.layout.yamlpos import load_yaml
    >>> from beamplan.layout.ageing import parse_ageing
    >>> spec = parse_ageing(load_yaml("layouts/ageing/two-bay.ageing.yaml"))
    >>> st = Stepper(load_layout("layouts/two-bay.yaml"), spec)
    >>> m = build_model(st, spec, (4383.0,), 8766.0, "cost")
    >>> len(m.elements), sorted(m.actions["bn-fold"])
    (21, ['clean', 'replace'])
    """
    base = stepper.plan(stepper.new_state())
    flows = {e.id: e for e in base.elements}
    laws = stepper.laws
    with_actions = [eid for eid in laws if laws[eid].law.actions]
    paths = _sensitivities(stepper, with_actions)
    used = sorted({eid for path in paths.values() for eid in path})
    checkpoints = [*windows_h, horizon_h]
    times = [0.0, *windows_h]
    log_gain: dict[tuple[str, int, str, int], float] = {}
    actions: dict[str, dict[str, tuple[float, float]]] = {}
    for eid in used:
        model = laws[eid]
        e = flows.get(eid)
        rate = model.units(1.0, e.absorbed_w if e else 0.0, bool(e and e.incident_w > 0))
        acts = {a.kind: a for a in model.law.actions}
        actions[eid] = {k: (a.cost, a.downtime_h) for k, a in acts.items()}
        starts = [(0, "new", model.new_state)] + [
            (r, k, model.new_state if k == "replace" else
             model.restored(model.new_state, a.restore, worst=True))
            for r in range(1, len(windows_h) + 1) for k, a in acts.items()]
        for r, kind, state in starts:
            for c in range(r + 1, len(checkpoints) + 1):
                hours = checkpoints[c - 1] - times[r]
                log_gain[(eid, r, kind, c)] = math.log(model.gain(
                    model.advance(state, rate * hours)))
    extra = tightened or {}
    required = {s.id: -math.log(s.delivered_w / s.need_w) + extra.get(s.id, 0.0)
                for s in base.scanners if s.need_w > 0 and s.delivered_w > 0}
    return MaintenanceModel(tuple(used), tuple(windows_h), horizon_h, actions, log_gain,
                            {s: paths.get(s, {}) for s in required}, required, objective)


def _skip(args: tuple[MaintenanceModel, tuple[str, int, str], float]) -> Schedule | None:
    model, choice, seconds = args
    return solve(model, forbid=[choice], time_limit_s=seconds)


def plan_maintenance(layout: Layout, spec: AgeingSpec, *, objective: str | None = None,
                     horizon_h: float | None = None, step_h: float | None = None,
                     solver: str = "auto", executor: Executor | None = None,
                     time_limit_s: float = 10.0,
                     progress: Callable[[int, int], None] | None = None,
                     stepper: Stepper | None = None) -> MaintenancePlan:
    """Choose, check and explain the maintenance schedule.

    Parameters
    ----------
    layout, spec
        The layout and its ageing laws, actions and windows.
    objective
        ``"cost"`` or ``"downtime"`` (default: the file's).
    horizon_h, step_h
        The horizon and the simulation step (default: the file's).
    time_limit_s
        Time limit of the MILP (each skip re-solve gets a fifth of it, at most 2 s);
        the gap proved is reported.
    solver, executor, progress, stepper
        LP solver for the re-plans; an executor for the skip re-solves (any
        ``concurrent.futures.Executor``; ``None`` runs them here); a
        ``(done, total)`` callback; a :class:`Stepper` to reuse.

    Returns
    -------
    MaintenancePlan

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.layout.yamlpos import load_yaml
    >>> from beamplan.layout.ageing import parse_ageing
    >>> spec = parse_ageing(load_yaml("layouts/ageing/two-bay.ageing.yaml"))
    >>> p = plan_maintenance(load_layout("layouts/two-bay.yaml"), spec,
    ...                      horizon_h=2 * 8766.0, step_h=2000.0)
    >>> p.feasible, p.check_ok, len(p.actions) > 0
    (True, True, True)
    """
    stepper = stepper or Stepper(layout, spec, solver)
    goal = objective or spec.objective
    horizon = horizon_h if horizon_h is not None else spec.horizon_h
    windows = spec.windows_h(horizon)
    tightened: dict[str, float] = {}
    schedule: Schedule | None = None
    check: Runway | None = None
    model = build_model(stepper, spec, windows, horizon, goal)
    rounds = 0
    while rounds < MAX_ROUNDS:
        rounds += 1
        schedule = solve(model, time_limit_s=time_limit_s)
        if schedule is None:
            break
        events = [Event(windows[w - 1], i, a) for i, w, a in schedule.chosen]
        check = run_runway(layout, spec, horizon_h=horizon, step_h=step_h, events=events,
                           stop_at_shortfall=False, stepper=stepper, progress=progress)
        if check.interrupted:
            break
        lows = {s: h for s, h in check.min_headroom.items() if h < 0}
        if not lows:
            break
        for s, h in lows.items():
            tightened[s] = tightened.get(s, 0.0) - math.log1p(h) + TIGHTEN_MARGIN
        model = build_model(stepper, spec, windows, horizon, goal, tightened)
    check_ok = bool(schedule is not None and check is not None and not check.interrupted
                    and all(h >= 0 for h in check.min_headroom.values()))
    done: list[Done] = []
    skips: list[Skip] = []
    if schedule is not None:
        for i, w, a in schedule.chosen:
            cost, downtime = model.actions[i][a]
            done.append(Done(i, w, windows[w - 1], a, cost, downtime))
        seconds = min(2.0, time_limit_s / 5.0)
        jobs = [(model, ch, seconds) for ch in schedule.chosen]
        results = list(executor.map(_skip, jobs) if executor is not None else map(_skip, jobs))
        for (i, w, a), other in zip(schedule.chosen, results, strict=True):
            without = None if other is None else other.objective_value
            skips.append(Skip(i, w, a, without, None if without is None
                              else without - schedule.objective_value))
    done.sort(key=lambda d: (d.hour, d.element, d.action))
    return MaintenancePlan(goal, spec.currency, tuple(windows), horizon, schedule is not None,
                           tuple(done), sum(d.cost for d in done),
                           sum(d.downtime_h for d in done), tuple(skips), check, check_ok,
                           rounds, tightened, len(model.choices()),
                           schedule.gap if schedule is not None else 0.0)
