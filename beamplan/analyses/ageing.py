"""The runway: step through time, age the optics, re-plan, find the first shortfall.

At each step the layout is re-planned (headroom goal) with every aged optic's
gain applied as a ``derate`` on its element. The network is rebuilt for each
step rather than edited on :class:`beamplan.optimise.live.LiveModel`: the
live model edits outages and switch positions, not an arbitrary gain, and a
rebuild of a fab-sized layout costs tens of milliseconds. Dose-driven laws
integrate the absorbed power of the plan at the start of each step over the
step (explicit Euler: ageing depends on the plan, the plan on ageing). When a
step ends short, the crossing is refined by bisection down to a tolerance.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace

from beamplan.analyses.ageing_laws import LawModel, resolve_optics
from beamplan.layout.ageing import AgeingSpec
from beamplan.layout.model import Layout
from beamplan.optimise.result import Plan

__all__ = ["Event", "Runway", "Sample", "Stepper", "path_elements", "run_runway"]

Progress = Callable[[int, int], None]


@dataclass(frozen=True)
class Event:
    """A maintenance action on one element at one time."""

    hour: float
    element: str
    action: str  # "clean" or "replace"


@dataclass(frozen=True)
class Sample:
    """One point of the time line: each scanner's headroom, each aged optic's gain."""

    hour: float
    headroom: dict[str, float]
    gain: dict[str, float]
    met: bool
    label: str = ""  # "maintenance" just after the actions of a window


@dataclass(frozen=True)
class Runway:
    """How long every need holds, and the curves on the way.

    ``runway_h`` is the last time found with every need met (``None`` when
    every need holds to the horizon); the crossing lies within
    ``tolerance_h`` after it.
    """

    runway_h: float | None
    horizon_h: float
    step_h: float
    tolerance_h: float
    scanner: str | None
    limiting_optic: str | None
    limiting_gain: float | None
    binding: tuple[str, ...]
    samples: tuple[Sample, ...]
    replans: int
    start: dt.date | None = None
    interrupted: bool = False
    events: tuple[Event, ...] = field(default=())

    def date(self, hour: float | None) -> str | None:
        """The calendar date of an hour from the start (ISO), if a start is known."""
        if hour is None or self.start is None:
            return None
        return (self.start + dt.timedelta(hours=hour)).isoformat()

    @property
    def min_headroom(self) -> dict[str, float]:
        """The lowest headroom of each scanner over the time line."""
        out: dict[str, float] = {}
        for s in self.samples:
            for sid, h in s.headroom.items():
                out[sid] = min(out.get(sid, math.inf), h)
        return out


def path_elements(layout: Layout) -> dict[str, set[str]]:
    """Every element upstream of each scanner.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> sorted(path_elements(load_layout("layouts/pilot-line.yaml"))["litho-p1"])[:2]
    ['a1', 'm1']
    """
    feeding: dict[str, list[str]] = {}
    for link in layout.links:
        feeding.setdefault(link.head, []).append(link.tail)
    elements = {e.id for e in layout.elements}
    out = {}
    for scanner in layout.scanners:
        seen: set[str] = set()
        stack = [scanner.id]
        while stack:
            for up in feeding.get(stack.pop(), []):
                if up not in seen:
                    seen.add(up)
                    stack.append(up)
        out[scanner.id] = seen & elements
    return out


class Stepper:
    """The ageing state of a layout's optics, and the plan for a state."""

    def __init__(self, layout: Layout, spec: AgeingSpec, solver: str = "auto") -> None:
        self.layout = layout
        self.solver = solver
        self.laws = {eid: LawModel.compile(law, layout.wavelength_m)
                     for eid, law in resolve_optics(spec, layout).items()}
        self.replans = 0

    def new_state(self) -> dict[str, float]:
        """Every aged optic new."""
        return {eid: m.new_state for eid, m in self.laws.items()}

    def gains(self, state: Mapping[str, float]) -> dict[str, float]:
        """Each aged optic's gain relative to new."""
        return {eid: self.laws[eid].gain(s) for eid, s in state.items()}

    def plan(self, state: Mapping[str, float]) -> Plan:
        """Re-plan (headroom goal) with each aged optic derated by its gain."""
        return self.plan_gains(self.gains(state))

    def plan_gains(self, gains: Mapping[str, float]) -> Plan:
        """Re-plan (headroom goal) with these gains relative to new."""
        from beamplan.network.graph import build_network
        from beamplan.optimise.planner import plan_network

        elements = tuple(replace(e, derate=e.derate * gains[e.id]) if e.id in gains else e
                         for e in self.layout.elements)
        self.replans += 1
        return plan_network(build_network(replace(self.layout, elements=elements)),
                            "headroom", self.solver)

    def advance(self, state: Mapping[str, float], hours: float, plan: Plan
                ) -> dict[str, float]:
        """The state ``hours`` later, at the absorbed powers of ``plan``."""
        flows = {e.id: e for e in plan.elements}
        out = {}
        for eid, s in state.items():
            e = flows.get(eid)
            lit = e is not None and e.incident_w > 0.0
            absorbed = e.absorbed_w if e is not None else 0.0
            model = self.laws[eid]
            out[eid] = model.advance(s, model.units(hours, absorbed, lit))
        return out

    def act(self, state: Mapping[str, float], events: Sequence[Event]) -> dict[str, float]:
        """The state after maintenance actions."""
        out = dict(state)
        for ev in events:
            model = self.laws[ev.element]
            action = model.law.action(ev.action)
            fraction = 1.0 if action is None else action.restore
            out[ev.element] = model.restored(out[ev.element], fraction)
        return out


def _headroom(plan: Plan) -> dict[str, float]:
    return {s.id: s.delivered_w / s.need_w - 1.0 for s in plan.scanners if s.need_w > 0}


def _sample(stepper: Stepper, hour: float, state: Mapping[str, float], plan: Plan,
            label: str = "") -> Sample:
    return Sample(hour, _headroom(plan), stepper.gains(state), plan.status == "met", label)


def _limiting(stepper: Stepper, plan: Plan, state: Mapping[str, float]
              ) -> tuple[str | None, str | None, float | None]:
    """The scanner furthest short, and the aged optic whose renewal helps it most.

    Each aged optic is set back to new in turn and the layout re-planned: the
    optic that limits is the one whose renewal gives that scanner the most
    power. Through heat limits and splitter bounds it need not sit on the
    scanner's own path.
    """
    short = [s for s in plan.scanners if s.need_w > 0 and s.status != "met"]
    if not short:
        return None, None, None
    worst = min(short, key=lambda s: (round(s.delivered_w / s.need_w, 9), s.id))  # ties: by id
    gains = stepper.gains(state)
    best: tuple[float, str] | None = None
    for eid in sorted(gains):
        if gains[eid] >= 1.0:
            continue
        renewed = stepper.plan_gains({**gains, eid: 1.0})
        got = next(s.delivered_w for s in renewed.scanners if s.id == worst.id)
        if best is None or got > best[0] + 1e-9:
            best = (got, eid)
    if best is None:
        return worst.id, None, None
    return worst.id, best[1], gains[best[1]]


def run_runway(layout: Layout, spec: AgeingSpec, *, horizon_h: float | None = None,
               step_h: float | None = None, tolerance_h: float | None = None,
               events: Sequence[Event] = (), stop_at_shortfall: bool = True,
               solver: str = "auto", progress: Progress | None = None,
               stepper: Stepper | None = None) -> Runway:
    """Step through time until the first scanner falls short (or to the horizon).

    Parameters
    ----------
    layout, spec
        The layout and its ageing laws.
    horizon_h, step_h, tolerance_h
        End of the time line, the step (default the file's, 500 h) and the
        bisection tolerance near a crossing (default step / 64).
    events
        Maintenance actions to apply (for checking a schedule).
    stop_at_shortfall
        Stop at the first shortfall (the runway); ``False`` runs to the
        horizon and records every point (a schedule check).
    solver, progress, stepper
        LP solver; a ``(done, total)`` callback; a :class:`Stepper` to reuse.

    Returns
    -------
    Runway
        ``interrupted`` is True after Ctrl-C (the samples so far are kept).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.layout.yamlpos import load_yaml
    >>> from beamplan.layout.ageing import parse_ageing
    >>> lay = load_layout("layouts/two-bay.yaml")
    >>> spec = parse_ageing(load_yaml("layouts/ageing/two-bay.ageing.yaml"))
    >>> r = run_runway(lay, spec, step_h=2000.0)
    >>> r.scanner, r.limiting_optic, r.runway_h is not None and 4000 < r.runway_h < 20000
    ('litho-b1', 'an-fold', True)
    """
    stepper = stepper or Stepper(layout, spec, solver)
    horizon = horizon_h if horizon_h is not None else spec.horizon_h
    step = step_h if step_h is not None else spec.step_h
    tol = tolerance_h if tolerance_h is not None else step / 64.0
    by_time: dict[float, list[Event]] = {}
    for ev in events:
        by_time.setdefault(ev.hour, []).append(ev)
    marks = sorted(t for t in by_time if 0.0 < t < horizon)
    total = max(1, math.ceil(horizon / step))
    state = stepper.new_state()
    plan = stepper.plan(state)
    samples = [_sample(stepper, 0.0, state, plan)]
    result: dict[str, float | str | None] = {"runway": None, "scanner": None, "optic": None,
                                             "gain": None}
    binding: tuple[str, ...] = ()
    hour, interrupted = 0.0, False
    try:
        if plan.status != "met":
            sid, optic, g = _limiting(stepper, plan, state)
            result.update({"runway": 0.0, "scanner": sid, "optic": optic, "gain": g})
        while hour < horizon - 1e-9 and not (result["runway"] is not None
                                              and stop_at_shortfall):
            nxt = min([hour + step, horizon] + [t for t in marks if t > hour + 1e-9])
            new_state = stepper.advance(state, nxt - hour, plan)
            new_plan = stepper.plan(new_state)
            if new_plan.status != "met" and result["runway"] is None:
                low, high = hour, nxt
                while high - low > tol:
                    mid = 0.5 * (low + high)
                    if stepper.plan(stepper.advance(state, mid - hour, plan)).status == "met":
                        low = mid
                    else:
                        high = mid
                at_high = stepper.advance(state, high - hour, plan)
                sid, optic, g = _limiting(stepper, stepper.plan(at_high), at_high)
                binding = tuple(b.description for b in plan.binding[:3])
                result.update({"runway": low, "scanner": sid, "optic": optic, "gain": g})
            hour, state, plan = nxt, new_state, new_plan
            samples.append(_sample(stepper, hour, state, plan))
            if hour in by_time:
                state = stepper.act(state, by_time[hour])
                plan = stepper.plan(state)
                samples.append(_sample(stepper, hour, state, plan, "maintenance"))
            if progress is not None:
                progress(min(total, math.ceil(hour / step)), total)
    except KeyboardInterrupt:
        interrupted = True
    runway = result["runway"]
    return Runway(runway if isinstance(runway, float) else None, horizon, step, tol,
                  result["scanner"] if isinstance(result["scanner"], str) else None,
                  result["optic"] if isinstance(result["optic"], str) else None,
                  result["gain"] if isinstance(result["gain"], float) else None,
                  binding, tuple(samples), stepper.replans, spec.start, interrupted,
                  tuple(events))
