"""What it takes: the least change of a limit that lets every scanner meet its need.

Three kinds of answer, each from the sizing LP of
:mod:`beamplan.optimise.sizing_lp` (never by trial re-plans):

* the least extra source power, every other limit fixed; when other limits
  block it, which ones (from the combined relaxation with the source free);
* for each limit that binds (reached in the plan, or relaxed by the combined
  answer), the least change of that limit alone, the source at its available
  power: a heat limit, a ``max_power`` in W; a splitter share bound or an
  attenuator transmission bound as a fraction (exactly, by the
  Charnes–Cooper transformation of the ratio); or "cannot close the gap
  alone", with the other limits that would have to change too;
* the combined least-cost relaxation of all limits at once. Every change is
  costed as a relative change of its own limit: +1 % of a source's power, of a
  heat limit or of a ``max_power`` costs 0.01, and so does a share or
  transmission bound moved by one percentage point (its power past the bound
  divided by the most power that can reach the element).

When every need is already met the same LPs give margins instead: the least
source power that serves every need against the available power, and for
each limit reached in the plan how far it may move before a scanner falls
short (a negative change). The formulation is in docs/lp-formulation.md.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from beamplan.network.graph import Network
from beamplan.optimise.result import ElementResult, Plan
from beamplan.optimise.sizing_lp import INF, Limit, SizingLp, build_sizing_lp
from beamplan.vocabulary import FAMILIES, Family, ScannerStatus

__all__ = ["Answer", "Sizing", "size_network"]

CHANGE_RTOL = 1e-7  # a change below this (relative to its limit, or a fraction) is none
TIGHT_RTOL = 1e-6  # a limit within this of its value in the plan is reached
IDLE_W = 1e-9
HOLD_RTOL, HOLD_ABS = 1e-9, 1e-12  # the least relaxation cost, held in a second stage

COSTS = ("Every change is costed as a relative change of its own limit: +1 % of a source's "
         "power, of a heat limit or of a max_power costs as much as a share or "
         "transmission bound moved by one percentage point.")


@dataclass(frozen=True)
class Answer:
    """One change of one limit (or of the source power), in the limit's own unit.

    ``change`` is how far the limit must move in the direction that relaxes
    it (up for powers and upper bounds, down for lower bounds); a change of
    zero or less is a margin: the limit may tighten by that much before a
    scanner falls short. ``needed`` is the limit's least (or, for a lower
    bound, greatest) value that serves every need. Both are ``None`` when
    changing this limit alone cannot close the gap; ``blocked_by`` then names
    the other limits that would have to change too. ``checked`` is set by a
    re-plan with the change applied (``None``: not checked).
    """

    family: Family
    element: str
    port: str | None
    unit: str  # "W" or "fraction"
    limit: float
    needed: float | None
    change: float | None
    unblocks: tuple[str, ...] = ()
    blocked_by: tuple[str, ...] = ()
    checked: bool | None = None
    parts: tuple[tuple[str, float], ...] = ()  # source answers: extra W per source
    change_with_others: float | None = None  # when blocked: the change if they move too

    @property
    def key(self) -> str:
        """A stable name, e.g. ``heat:cs-fold``."""
        where = f"{self.element}.{self.port}" if self.port else self.element
        return f"{self.family}:{where}"

    @property
    def closes(self) -> bool:
        """Whether this change alone lets every scanner meet its need."""
        return self.change is not None


@dataclass(frozen=True)
class Sizing:
    """What it takes to serve every need (or the margins when all are served).

    ``short`` are the scanners short in the plan that some change can serve;
    ``unreachable`` those no power can reach (an outage, a switch setting):
    no limit serves them, and they are left out of every answer.
    """

    short: tuple[str, ...]
    unreachable: tuple[str, ...]
    source: Answer
    limits: tuple[Answer, ...]
    combined: tuple[Answer, ...]
    combined_possible: bool
    combined_cost: float = 0.0  # the least total relaxation cost (see COSTS)
    costs: str = COSTS

    @property
    def gap(self) -> bool:
        """Whether some scanner is short (else the answers are margins)."""
        return bool(self.short)


def _tol(limit: Limit | Answer) -> float:
    value = limit.limit if isinstance(limit, Answer) else limit.value
    return CHANGE_RTOL if FAMILIES[limit.family].per_element else \
        CHANGE_RTOL * max(abs(value), 1.0)


def _costs(lp: SizingLp) -> dict[int, float]:
    """The combined relaxation's cost per W of each relaxation column (see COSTS)."""
    net = lp.network
    power = sum(s.available_w for s in net.sources if s.in_use)
    cost = {}
    for limit in lp.limits:
        if limit.is_fraction:
            reach = net.max_gains[limit.element] * power
            cost[limit.relax_col] = 1.0 / max(reach, 1.0)
        else:
            cost[limit.relax_col] = 1.0 / max(limit.value, 1.0)
    return cost


def _relaxed(lp: SizingLp, free: tuple[Limit, ...] = ()) -> tuple[bool, dict[str, float],
                                                                  np.ndarray]:
    """The combined relaxation (limits in ``free`` cost nothing): r per limit key."""
    cost = _costs(lp)
    bounds = {limit.relax_col: (0.0, INF) for limit in lp.limits}
    for limit in free:
        cost[limit.relax_col] = 0.0
    status, _, x = lp.solve(cost, bounds)
    if status != "optimal":
        return False, {}, x
    return True, {lm.key: float(x[lm.relax_col]) for lm in lp.limits
                  if x[lm.relax_col] > _tol(lm) * (1.0 if not lm.is_fraction else 1e3)}, x


def _blockers(lp: SizingLp, free: tuple[Limit, ...]) -> tuple[Limit, ...]:
    """The other limits the combined relaxation moves when ``free`` costs nothing."""
    names = {lm.key for lm in free}
    ok, relaxed, _ = _relaxed(lp, free)
    return tuple(lm for lm in lp.limits if lm.key in relaxed and lm.key not in names) \
        if ok else ()


def _also(others: tuple[Limit, ...]) -> dict[int, tuple[float, float]]:
    return {lm.relax_col: (0.0, INF) for lm in others}


def _source(lp: SizingLp, unblocks: tuple[str, ...],
            others: tuple[Limit, ...] | None = None) -> Answer:
    rows = tuple(lm for lm in lp.limits if lm.family == Family.SOURCE)
    standby = lp.network.standby_sources
    available = sum(lm.value for lm in rows if lm.element not in standby)
    ids = ", ".join(lm.element for lm in rows if lm.element not in standby)
    if not rows:
        return Answer(Family.SOURCE, ids, None, "W", 0.0, None, None)
    status, extra, x = lp.solve({lm.relax_col: 1.0 for lm in rows},
                                {**_also(others or ()), **{lm.relax_col: (0.0, INF)
                                                           for lm in rows}})
    if others is not None:
        return Answer(Family.SOURCE, ids, None, "W", available, None, None,
                      change_with_others=extra if status == "optimal" else None)
    if status != "optimal":
        blockers = _blockers(lp, rows)
        return Answer(Family.SOURCE, ids, None, "W", available, None, None,
                      blocked_by=tuple(lm.key for lm in blockers),
                      change_with_others=_source(lp, unblocks, blockers).change_with_others)
    if extra > CHANGE_RTOL * max(available, 1.0):
        parts = tuple((lm.element, float(x[lm.relax_col])) for lm in rows
                      if x[lm.relax_col] > IDLE_W)
        return Answer(Family.SOURCE, ", ".join(p[0] for p in parts), None, "W", available,
                      available + extra, extra, unblocks, parts=parts)
    status, least, _ = lp.solve({col: coef for lm in rows for col, coef in lm.used.items()}, {})
    return Answer(Family.SOURCE, ids, None, "W", available, least, least - available)


def _single(lp: SizingLp, limit: Limit, unblocks: tuple[str, ...],
            others: tuple[Limit, ...] | None = None) -> Answer:
    unit = "fraction" if limit.is_fraction else "W"
    free = {**_also(others or ()), limit.relax_col: (-INF, INF)}
    if not limit.is_fraction:
        status, change, _ = lp.solve({limit.relax_col: 1.0}, free)
        needed = limit.value + change
    else:
        upward = limit.family.endswith("high")
        free[lp.z] = (0.0, INF)
        status, best, _ = lp.solve({limit.numerator: 1.0 if upward else -1.0}, free,
                                   ((limit.denominator, 1.0, 1.0),))
        if status == "optimal":
            needed = best if upward else -best
        else:  # no plan that serves every need passes power through it: any bound serves
            del free[lp.z]
            status, _, _ = lp.solve({}, free)
            needed = 0.0 if upward else 1.0
        change = needed - limit.value if upward else limit.value - needed
    if others is not None:
        return Answer(limit.family, limit.element, limit.port, unit, limit.value, None, None,
                      change_with_others=change if status == "optimal" else None)
    if status != "optimal":
        blockers = _blockers(lp, (limit,))
        with_others = _single(lp, limit, unblocks, blockers).change_with_others
        return Answer(limit.family, limit.element, limit.port, unit, limit.value, None, None,
                      blocked_by=tuple(lm.key for lm in blockers),
                      change_with_others=with_others)
    gap = change > _tol(limit)
    return Answer(limit.family, limit.element, limit.port, unit, limit.value, needed, change,
                  unblocks if gap else ())


def _combined(lp: SizingLp, unblocks: tuple[str, ...]
              ) -> tuple[bool, tuple[Answer, ...], float]:
    ok, relaxed, x = _relaxed(lp)
    if not ok:
        return False, (), 0.0
    costs = _costs(lp)
    cost = sum(c * float(x[col]) for col, c in costs.items())
    bounds = [lm for lm in lp.limits if lm.is_fraction and lm.key in relaxed]
    if bounds:
        # A bound's change is r / in(e): at the same least cost, let the elements whose
        # bounds move carry as much as they can, so that the fractions reported are small.
        held = (costs, -INF, cost * (1 + HOLD_RTOL) + HOLD_ABS)
        reach = {lm.element: costs[lm.relax_col] for lm in bounds}
        aim: dict[int, float] = {}
        for lm in bounds:
            for col, coef in lm.denominator.items():
                aim[col] = aim.get(col, 0.0) - coef * reach[lm.element]
        status, _, again = lp.solve(aim, {lm.relax_col: (0.0, INF) for lm in lp.limits},
                                    (held,))
        if status == "optimal":
            x = again
            relaxed = {lm.key: float(x[lm.relax_col]) for lm in lp.limits
                       if x[lm.relax_col] > _tol(lm) * (1.0 if not lm.is_fraction else 1e3)}
    out = []
    for limit in lp.limits:
        if limit.key not in relaxed:
            continue
        r = relaxed[limit.key]
        if not limit.is_fraction:
            parts = ((limit.element, r),) if limit.family == Family.SOURCE else ()
            out.append(Answer(limit.family, limit.element, limit.port, "W", limit.value,
                              limit.value + r, r, unblocks, parts=parts))
            continue
        inflow = sum(coef * float(x[col]) for col, coef in limit.denominator.items())
        if inflow <= IDLE_W:
            continue
        delta = r / inflow
        needed = limit.value + delta if limit.family.endswith("high") else limit.value - delta
        out.append(Answer(limit.family, limit.element, limit.port, "fraction", limit.value,
                          needed, delta, unblocks))
    return True, tuple(out), cost


def _reached(limit: Limit, plan: Plan, elements: dict[str, ElementResult]) -> bool:
    """Whether the plan reaches a limit (to TIGHT_RTOL)."""
    if limit.family == Family.SOURCE:
        return any(s.id == limit.element and s.output_w >= s.available_w * (1 - TIGHT_RTOL)
                   for s in plan.sources)
    if limit.family == Family.MAX_POWER:
        return plan.scanner(limit.element).delivered_w >= limit.value * (1 - TIGHT_RTOL)
    element = elements[limit.element]
    if limit.family == Family.HEAT:
        return element.absorbed_w >= limit.value * (1 - TIGHT_RTOL)
    if element.incident_w <= IDLE_W or element.setting is None:
        return False
    setting = element.setting if isinstance(element.setting, float) else \
        dict(element.setting).get(str(limit.port), -1.0)
    return abs(setting - limit.value) <= TIGHT_RTOL


def size_network(network: Network, plan: Plan) -> Sizing:
    """What it takes to serve every need of ``plan`` (or the margins if all are served).

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> from beamplan.optimise.planner import plan_network
    >>> net = build_network(load_layout("layouts/overbooked.yaml"))
    >>> sizing = size_network(net, plan_network(net))
    >>> sizing.source.closes, sizing.source.blocked_by
    (False, ('heat:cs-fold',))
    >>> [(a.key, round(a.change)) for a in sizing.combined]
    [('source:fel-interim', 2312), ('heat:cs-fold', 75)]
    """
    lp = build_sizing_lp(network)
    served = set(lp.served)
    failing = (ScannerStatus.SHORT, ScannerStatus.CUT_OFF)
    short = tuple(s.id for s in plan.scanners if s.status in failing and s.id in served)
    unreachable = tuple(s.id for s in plan.scanners if s.status in failing
                        and s.id not in served)
    source = _source(lp, short)
    possible, combined, cost = _combined(lp, short) if short else (True, (), 0.0)
    wanted = {a.key for a in combined}
    elements = {e.id: e for e in plan.elements}
    limits = tuple(_single(lp, lm, short) for lm in lp.limits if lm.family != Family.SOURCE
                   and (lm.key in wanted or _reached(lm, plan, elements)))
    return Sizing(short, unreachable, source, limits, combined, possible, cost)
