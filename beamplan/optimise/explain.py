"""Explain a plan in a designer's words: binding constraints and shortfalls.

Every LP stage is a minimisation, so a row's dual ``y`` is
d(objective)/d(right-hand side). In the user's terms:

* headroom (objective −t): the lowest factor moves by −y per unit of the bound;
* min-source (objective Σ source W): the source power moves by y;
* shortfall (objective Σ weighted shortfall W): the weighted shortfall moves by y.

Share and range bounds are coefficients, not right-hand sides: raising a
bound f in ``s − f·in ≤ 0`` by Δ moves the row's right-hand side by Δ·in, so
its price per unit of the bound is the row's price times the input. Prices
are stated per W, or per percentage point of a share or transmission bound.

A short scanner's limits are the constraints that are priced in the LP stage
where the scanner was frozen (progressive filling), or in the elastic stage:
by complementary slackness these, and only these, hold its level down.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from beamplan.network.graph import Network
from beamplan.optimise.goals import GoalOutcome
from beamplan.optimise.lp import LpModel, Row
from beamplan.optimise.result import Binding, Flows
from beamplan.units import format_power
from beamplan.vocabulary import FAMILIES, Family, reported_families

__all__ = ["binding_constraints", "shortfall_limits", "watts"]

_FAMILIES = reported_families()
PRICE_TOL = 1e-9


def _describe(row: Row, network: Network) -> str:
    node = network.node[row.node]
    words = FAMILIES[row.family].words
    if row.family == Family.HEAT:
        return f"{words} of {node.kind} '{node.id}' ({format_power(node.heat_limit_w or 0)})"
    if row.family == Family.AVAILABLE:
        return f"{words} of source '{node.id}' ({format_power(node.available_w)})"
    if row.family == Family.MAX_POWER:
        if node.ceiling_w is not None and node.max_w == node.ceiling_w:
            return (f"useful ceiling of scanner '{node.id}' ({format_power(node.max_w)}; above "
                    "it the stage, not the light, sets its throughput)")
        return f"{words} of scanner '{node.id}' ({format_power(node.max_w or 0)})"
    if row.family == Family.DEMAND:
        return f"{words} of scanner '{node.id}' ({format_power(node.need_w)})"
    if row.family in (Family.SHARE_LOW, Family.SHARE_HIGH):
        port = next(p for p in node.ports if p.name == row.port)
        value = port.fraction_min if row.family == Family.SHARE_LOW else port.fraction_max
        return f"{words} of splitter '{node.id}' output '{row.port}' ({value:.1%})"
    value = node.gain_min if row.family == Family.RANGE_LOW else node.gain_max
    return f"{words} of attenuator '{node.id}' ({value:.1%})"


def _price(row: Row, dual: float, primary: str, flows: Flows) -> tuple[float, str]:
    """The rate of change of the goal's own quantity per unit of the bound."""
    if FAMILIES[row.family].per_element:
        per = -dual * flows.incident_w[row.node] / 100.0  # per percentage point
        unit = "per percentage point"
    else:
        per, unit = -dual, "per W"
    return (per if primary == "factor" else -per), unit


def watts(power_w: float, *, signed: bool = False) -> str:
    """A power for a price: three figures in W, with a prefix from 1 kW (no e-notation).

    Examples
    --------
    >>> watts(9040.0), watts(4.4412, signed=True), watts(0.0123)
    ('9.04 kW', '+4.44 W', '0.0123 W')
    """
    sign = ("+" if power_w >= 0 else "-") if signed else ("-" if power_w < 0 else "")
    magnitude = abs(power_w)
    if magnitude >= 999.5:
        text = format_power(magnitude)
    elif magnitude >= 1e-3:
        text = f"{magnitude:.3g} W"
    else:
        text = format_power(magnitude)
    return sign + text


def _meaning(row: Row, price: float, unit: str, primary: str,
             bottleneck: Sequence[tuple[str, float]], tiers: int) -> str:
    if row.family == Family.DEMAND:
        if primary == "source":
            return f"each W more needed here costs {watts(price)} of source power"
        return f"each W more needed here adds {watts(price)} of weighted shortfall"
    step = "1 W more" if unit == "per W" else "1 percentage point more"
    if primary == "factor":
        verb = "raises" if price >= 0 else "lowers"
        gains = ", ".join(f"{sid} {watts(price * need, signed=True)}"
                          for sid, need in bottleneck[:3])
        more = " ..." if len(bottleneck) > 3 else ""
        return f"{step} {verb} the lowest headroom factor by {abs(price):.3g} ({gains}{more})"
    if primary == "source":
        verb = "costs" if price > 0 else "saves"
        return f"{step} {verb} {watts(abs(price))} of source power"
    verb = "adds" if price > 0 else "cuts"
    what = "the shortfall" if tiers <= 1 else "the tier-weighted shortfall (a tier-1 W counts " \
        "1000× a tier-2 W)"
    return f"{step} {verb} {watts(abs(price))} of {what}"


def binding_constraints(model: LpModel, outcome: GoalOutcome, flows: Flows
                        ) -> tuple[Binding, ...]:
    """The constraints with a non-zero shadow price in the goal's primary stage.

    Examples
    --------
    >>> import beamplan
    >>> plan = beamplan.plan(beamplan.load("layouts/pilot-line.yaml"))
    >>> [b.subject for b in plan.binding][:1]
    ['m3']
    """
    network = model.network
    bottleneck = [(sid, network.node[sid].need_w) for sid in outcome.first_frozen]
    tiers = len({s.priority for s in network.scanners})
    out: list[Binding] = []
    duals = outcome.primary_duals
    priced: Any = np.flatnonzero(np.abs(duals) > PRICE_TOL) if len(duals) else []
    for index in priced:
        row = model.row_info[int(index)]
        if row.family not in _FAMILIES:
            continue
        if row.family == Family.DEMAND and outcome.primary == "factor":
            continue  # the factor's own rows: their price is the factor itself
        if row.family == Family.RANGE_HIGH and network.node[row.node].gain_max >= 1.0:
            continue  # full transmission cannot be raised further
        dual = float(duals[index])
        if abs(dual) <= PRICE_TOL:
            continue
        price, unit = _price(row, dual, outcome.primary, flows)
        out.append(Binding(row.name, row.family, row.node, _describe(row, network), price, unit,
                           _meaning(row, price, unit, outcome.primary, bottleneck, tiers)))
    out += _drawn_sources(model, outcome, flows, {b.subject for b in out})
    out.sort(key=lambda b: (-abs(b.shadow_price), b.constraint))
    return tuple(out)


def _drawn_sources(model: LpModel, outcome: GoalOutcome, flows: Flows, listed: set[str]
                   ) -> list[Binding]:
    """Sources that give all they have but carry no price in the primary stage.

    A source drawn in full is a binding constraint even when the primary
    stage's dual is zero (another limit binds at the same point, or a later
    stage drew it in full): it is listed with a price of 0 and says so.
    """
    out = []
    for node in model.network.sources:
        output = flows.incident_w[node.id]
        if node.id in listed or node.available_w <= 0 or \
                output < node.available_w * (1.0 - 1e-7):
            continue
        row = model.row_info[model.available_row[node.id]]
        priced = any(abs(float(d[model.available_row[node.id]])) > PRICE_TOL
                     for d in outcome.freeze_duals.values() if len(d))
        why = ("it held a later scanner's level when that was frozen" if priced else
               "another limit binds at the same point, so one W more alone changes nothing")
        out.append(Binding(row.name, row.family, node.id, _describe(row, model.network), 0.0,
                           "per W", f"drawn in full: the source gives all it has; {why}"))
    return out


def _below_outages(network: Network) -> set[str]:
    """Every node downstream of a node out of service (one search for the whole plan)."""
    stack = [n.id for n in network.nodes if not n.in_use]
    seen = set(stack)
    if not stack:
        return seen
    heads: dict[str, list[str]] = {}
    for link in network.links:
        heads.setdefault(link.tail, []).append(link.head)
    while stack:
        for head in heads.get(stack.pop(), ()):
            if head not in seen:
                seen.add(head)
                stack.append(head)
    return seen


class _Priced:
    """The priced rows of one stage's duals, read once for every scanner of that stage."""

    def __init__(self, model: LpModel, duals: np.ndarray) -> None:
        network = model.network
        self.by_node: dict[str, list[int]] = {}
        self.reasons: list[tuple[int, str]] = []  # (row, reason) for limit rows, row order
        self.demand: list[str] = []  # scanners whose demand row is priced, sorted
        for index in np.flatnonzero(np.abs(duals) > PRICE_TOL) if len(duals) else []:
            row = model.row_info[int(index)]
            self.by_node.setdefault(row.node, []).append(int(index))
            if row.family == Family.DEMAND:
                self.demand.append(row.node)
                continue
            if row.family not in _FAMILIES:
                continue
            if row.family == Family.RANGE_HIGH and network.node[row.node].gain_max >= 1.0:
                continue
            self.reasons.append((int(index), _describe(row, network) + " is reached"))
        self.demand.sort()
        self.described = dict(self.reasons)
        self.texts = tuple(dict.fromkeys(text for _, text in self.reasons))  # deduplicated


def _sharing_text(sharing: list[str]) -> str:
    names = ", ".join(sharing[:4]) + (" ..." if len(sharing) > 4 else "")
    return f"the power it could get is shared with {names}, held at their own levels"


def shortfall_limits(model: LpModel, outcome: GoalOutcome, scanner_id: str,
                     delivered_w: float, cache: dict[int, object] | None = None
                     ) -> tuple[str, ...]:
    """Plain-word reasons why more power cannot reach a short scanner.

    ``cache`` (a dict kept by the caller across the scanners of one plan) lets
    scanners frozen in the same stage share one reading of that stage's duals,
    so explaining every scanner costs time linear in the plan's size.

    Examples
    --------
    >>> import beamplan
    >>> plan = beamplan.plan("layouts/overbooked.yaml")
    >>> short = [s for s in plan.scanners if s.status == "short"]
    >>> all(s.limits for s in short)
    True
    """
    network = model.network
    node = network.node[scanner_id]
    cache = {} if cache is None else cache
    downstream = cache.get(0)
    if not isinstance(downstream, set):
        downstream = cache[0] = _below_outages(network)
    ups = network.upstream(scanner_id) if scanner_id in downstream \
        or outcome.primary == "shortfall" else set()
    reasons = [f"{network.node[u].kind} '{u}' on its path is out of service"
               for u in sorted(ups) if not network.node[u].in_use]
    if network.max_gains[scanner_id] <= 0.0:
        return tuple(reasons) or ("no path from a source passes any power (a gain of zero on "
                                  "every path)",)
    if node.max_w is not None and node.max_w < node.need_w:
        reasons.append(f"its max_power ({format_power(node.max_w)}) is below its need")
    duals = outcome.freeze_duals.get(scanner_id, np.empty(0))
    priced = cache.get(id(duals))
    if not isinstance(priced, _Priced):
        priced = cache[id(duals)] = _Priced(model, duals)
        cache[-id(duals)] = duals  # keep the array alive while its id is a key
    # The stage's own reasons are read (and deduplicated) once; the few of this
    # scanner's own ("out of service", "max_power", "shared with") never repeat them.
    stage: tuple[str, ...]
    if outcome.primary == "shortfall":
        # One elastic LP serves every scanner: keep the rows on this scanner's paths.
        rows = sorted(r for u in ups | {scanner_id} for r in priced.by_node.get(u, ()))
        stage = tuple(dict.fromkeys(priced.described[r] for r in rows
                                    if r in priced.described))
        sharing = sorted(model.row_info[r].node for r in rows
                         if model.row_info[r].family == Family.DEMAND
                         and model.row_info[r].node != scanner_id)
    else:
        stage = priced.texts
        sharing = [s for s in priced.demand[:6] if s != scanner_id]  # enough to say "..."
    tail = [_sharing_text(sharing)] if sharing else []
    if not reasons and not stage and not tail:
        tail.append("the available power is shared with the other scanners at the same "
                    "headroom factor")
    head = ["it receives no power"] if delivered_w <= 0.0 else []
    return tuple(dict.fromkeys(head + reasons)) + stage + tuple(tail)
