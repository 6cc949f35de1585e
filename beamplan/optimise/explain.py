"""Explain a plan in a designer's words: binding constraints and shortfalls.

Shadow prices come from the goal's primary LP stage (the one that sets the
headroom factor, the source power, or the shortfall). With every stage a
minimisation, a row's dual ``y`` is d(objective)/d(right-hand side):

* headroom (objective −t): d t / d rhs = −y;
* min-source (objective Σ source W): d source / d rhs = y;
* shortfall (objective Σ weighted shortfall W): d shortfall / d rhs = y.

Share and range bounds are coefficients, not right-hand sides: raising a
bound f in ``s − f·in ≤ 0`` by Δ moves the row's right-hand side by Δ·in, so
its price per unit of the bound is the row's price times the input.
"""

from __future__ import annotations

from collections.abc import Sequence

from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network
from beamplan.optimise.goals import GoalOutcome
from beamplan.optimise.lp import LpModel, Row
from beamplan.optimise.result import Binding, Flows
from beamplan.units import format_power

__all__ = ["binding_constraints", "shortfall_limits"]

_FAMILIES = ("heat", "available", "max-power", "share-low", "share-high", "range-low",
             "range-high", "demand")
PRICE_TOL = 1e-9
TIGHT_RTOL = 1e-6


def _describe(row: Row, network: Network) -> str:
    node = network.node[row.node]
    if row.family == "heat":
        return f"heat limit of {node.kind} '{node.id}' ({format_power(node.heat_limit_w or 0)})"
    if row.family == "available":
        return f"available power of source '{node.id}' ({format_power(node.available_w)})"
    if row.family == "max-power":
        return f"max_power of scanner '{node.id}' ({format_power(node.max_w or 0)})"
    if row.family == "demand":
        return f"need of scanner '{node.id}' ({format_power(node.need_w)})"
    if row.family in ("share-low", "share-high"):
        port = next(p for p in node.ports if p.name == row.port)
        side, value = (("lower", port.fraction_min) if row.family == "share-low"
                       else ("upper", port.fraction_max))
        return f"{side} share bound of splitter '{node.id}' output '{row.port}' ({value:.1%})"
    side, value = (("lowest", node.gain_min) if row.family == "range-low"
                   else ("highest", node.gain_max))
    return f"{side} transmission of attenuator '{node.id}' ({value:.1%})"


def _price(row: Row, dual: float, primary: str, flows: Flows) -> tuple[float, str]:
    """The shadow price in the goal's terms and its unit."""
    per_coefficient = row.family in ("share-low", "share-high", "range-low", "range-high")
    scale = flows.incident_w[row.node] if per_coefficient else 1.0
    sign = -1.0 if primary == "factor" else 1.0
    price = sign * dual * scale
    unit = "per unit of the bound" if per_coefficient else "per W"
    return price, unit


def _meaning(row: Row, price: float, unit: str, primary: str, bottleneck: Sequence[tuple[str,
             float]]) -> str:
    step = "1 percentage point more" if unit != "per W" else "1 W more"
    if row.family == "demand":
        if primary == "source":
            return f"each W more needed here costs {price:.3g} W of source power"
        return f"each W more needed here changes the objective by {price:.3g}"
    if row.family in ("share-high", "range-high", "available", "heat", "max-power"):
        verb = "raises"
    else:
        verb = "lowers"
        price = -price
    amount = price / 100.0 if unit != "per W" else price
    if row.family in ("share-low", "range-low"):
        step = "1 percentage point less"
    if primary == "factor":
        gains = ", ".join(f"{sid} +{amount * need:.3g} W" for sid, need in bottleneck[:3])
        more = " ..." if len(bottleneck) > 3 else ""
        return (f"{step} {verb} the lowest headroom factor by {amount:.3g} "
                f"({gains}{more})")
    if primary == "source":
        return f"{step} saves {amount:.3g} W of source power"
    return f"{step} cuts the weighted shortfall by {amount:.3g} W"


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
    lowest = min(outcome.levels.values(), default=0.0)
    bottleneck = [(s.id, s.need_w) for s in network.scanners
                  if abs(outcome.levels.get(s.id, 0.0) - lowest) <= 1e-9 * max(lowest, 1.0)]
    out: list[Binding] = []
    for index, row in enumerate(model.row_info):
        if row.family not in _FAMILIES:
            continue
        if row.family == "demand" and outcome.primary == "factor":
            continue  # the factor's own rows: their price is the factor itself
        if row.family == "range-high" and network.node[row.node].gain_max >= 1.0:
            continue  # full transmission cannot be raised further
        dual = float(outcome.primary_duals[index]) if len(outcome.primary_duals) else 0.0
        if abs(dual) <= PRICE_TOL:
            continue
        price, unit = _price(row, dual, outcome.primary, flows)
        out.append(Binding(row.name, row.family, row.node, _describe(row, network), price, unit,
                           _meaning(row, price, unit, outcome.primary, bottleneck)))
    out.sort(key=lambda b: (-abs(b.shadow_price), b.constraint))
    return tuple(out)


def _ancestors(network: Network, node_id: str) -> list[str]:
    seen: list[str] = []
    stack = [node_id]
    while stack:
        current = stack.pop()
        for link in network.in_links[current]:
            if link.tail not in seen:
                seen.append(link.tail)
                stack.append(link.tail)
    return seen


def _on_path_port(network: Network, splitter: str, upstream_of: set[str]) -> set[str | None]:
    return {p.name for p in network.node[splitter].ports
            if network.out_link[(splitter, p.name)].head in upstream_of}


def shortfall_limits(network: Network, scanner_id: str, flows: Flows, delivered_w: float,
                     source_w: dict[str, float]) -> tuple[str, ...]:
    """Plain-word reasons why more power cannot reach a short scanner.

    Lists the limits that are reached on the scanner's paths from the sources:
    drawn-out sources, heat limits at their value, splitter shares at a bound,
    attenuators at full transmission, and the scanner's own max_power.
    """
    node = network.node[scanner_id]
    ups = _ancestors(network, scanner_id)
    downstream = {scanner_id, *ups}
    reasons: list[str] = [f"{network.node[u].kind} '{u}' on its path is out of service"
                          for u in ups if not network.node[u].in_service]
    if network.max_gains[scanner_id] <= 0.0:
        return tuple(reasons) or ("no path from a source passes any power (a gain of zero on "
                                  "every path)",)
    if node.max_w is not None and node.max_w < node.need_w:
        reasons.append(f"its max_power ({format_power(node.max_w)}) is below its need")
    for uid in ups:
        up = network.node[uid]
        incident = flows.incident_w[uid]
        if up.is_source and source_w[uid] >= up.available_w * (1 - TIGHT_RTOL):
            reasons.append(f"source '{uid}' is fully drawn ({format_power(up.available_w)})")
        if up.heat_limit_w is not None and \
                flows.absorbed_w[uid] >= up.heat_limit_w * (1 - TIGHT_RTOL):
            reasons.append(f"{up.kind} '{uid}' is at its heat limit "
                           f"({format_power(up.heat_limit_w)} absorbed)")
        if up.behaviour is Behaviour.SPLIT and incident > 0:
            setting = dict(flows.settings[uid] or ())  # type: ignore[arg-type]
            ours = _on_path_port(network, uid, downstream)
            for port in up.ports:
                share = setting.get(str(port.name), 0.0)
                if port.name in ours and port.fraction_max < 1 and \
                        share >= port.fraction_max - 1e-9:
                    reasons.append(f"splitter '{uid}' output '{port.name}' is at its upper "
                                   f"share bound ({port.fraction_max:.1%})")
                if port.name not in ours and port.fraction_min > 0 and \
                        share <= port.fraction_min + 1e-9:
                    reasons.append(f"splitter '{uid}' must send at least "
                                   f"{port.fraction_min:.1%} to output '{port.name}'")
        at_top = up.behaviour is Behaviour.RANGE and incident > 0 and \
            (flows.settings[uid] or 0.0) >= up.gain_max - 1e-9  # type: ignore[operator]
        if at_top:
            reasons.append(f"attenuator '{uid}' is at its highest transmission "
                           f"({up.gain_max:.1%})")
    if not reasons:
        reasons.append("the available power is shared with the other scanners at the same "
                       "headroom factor")
    if delivered_w <= 0.0:
        reasons.insert(0, "it receives no power")
    return tuple(reasons)
