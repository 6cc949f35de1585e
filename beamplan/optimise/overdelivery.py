"""Why a scanner gets more than it asked for, in words.

A scanner gets more than its need for one of two kinds of reason:

* the goal gives it more: ``headroom`` (and ``priority`` once every tier is
  served) shares the spare light out, and the scanner rose until a limit
  held it (the rows priced when it was frozen, as for a shortfall);
* its path forces more on it: a bound that is tight in the final LP solution
  on the way from a source, so the light cannot be turned away from it: a
  fixed split, a share held at its lower bound, the other outputs of a
  splitter held at their upper bounds, an attenuator at its lowest
  transmission. With none of these tight, the gains on its path tie it to
  the scanners that share them.

Each reason is read off the settings of the final solution, node by node
along the scanner's paths, so it names the element and the bound.
"""

from __future__ import annotations

from beamplan.network.behaviour import Behaviour, Node
from beamplan.network.graph import Network
from beamplan.optimise.goals import GoalOutcome
from beamplan.optimise.lp import LpModel
from beamplan.optimise.result import Flows

__all__ = ["OVER_RTOL", "over_delivery_reasons"]

OVER_RTOL = 1e-3  # more than 0.1 % above the need counts as over-delivery
_TIGHT = 1e-7


def _splitter(node: Node, toward: set[str], network: Network,
              fractions: dict[str, float]) -> list[str]:
    out: list[str] = []
    mine = [p for p in node.ports
            if network.out_link[(node.id, p.name)].head in toward]
    others = [p for p in node.ports if p not in mine]
    for port in mine:
        f = fractions.get(str(port.name), 0.0)
        if port.fraction_min == port.fraction_max:
            out.append(f"splitter '{node.id}' has a fixed split: output '{port.name}' always "
                       f"takes {f:.1%} of its input")
        elif port.fraction_min > 0 and f <= port.fraction_min + _TIGHT:
            out.append(f"splitter '{node.id}' output '{port.name}' is held at its lower share "
                       f"bound ({port.fraction_min:.1%})")
    if mine and others and all(fractions.get(str(p.name), 0.0) >= p.fraction_max - _TIGHT
                               and p.fraction_max < 1.0 for p in others) and \
            not any(p.fraction_min == p.fraction_max for p in mine):
        names = ", ".join(f"'{p.name}' ({p.fraction_max:.1%})" for p in others)
        out.append(f"splitter '{node.id}'s other outputs are at their upper share bounds "
                   f"({names}), so the rest comes this way")
    return out


def _path_reasons(network: Network, scanner_id: str, flows: Flows) -> list[str]:
    ups = network.upstream(scanner_id)
    toward = ups | {scanner_id}
    reasons: list[str] = []
    for node in network.nodes:  # topological order: from the source down
        if node.id not in ups or flows.incident_w.get(node.id, 0.0) <= 0.0:
            continue
        setting = flows.settings.get(node.id)
        if node.behaviour is Behaviour.SPLIT and isinstance(setting, tuple):
            reasons += _splitter(node, toward, network, dict(setting))
        elif node.behaviour is Behaviour.RANGE and isinstance(setting, float) and \
                setting <= node.gain_min + _TIGHT:
            reasons.append(f"attenuator '{node.id}' is at its lowest transmission "
                           f"({node.gain_min:.1%})")
    return reasons


def _goal_reason(model: LpModel, outcome: GoalOutcome, node: Node, delivered_w: float,
                 goal: str, cache: dict[int, object]) -> str:
    from beamplan.optimise.explain import shortfall_limits

    level = outcome.levels.get(node.id)
    if level is None or level <= 1.0 + OVER_RTOL or delivered_w > level * node.need_w * \
            (1.0 + OVER_RTOL):
        return ""
    limits = shortfall_limits(model, outcome, node.id, delivered_w, cache)
    held = [r for r in limits if not r.startswith(("the available power is shared",
                                                     "the power it could get is shared"))]
    why = "; ".join(held) if held else "the light it could get is shared with the others"
    return f"the {goal} goal shares out the spare light, until: {why}"


def over_delivery_reasons(model: LpModel, outcome: GoalOutcome, flows: Flows,
                          goal: str) -> dict[str, str]:
    """A reason in words for each scanner that gets more than its need (beyond 0.1 %).

    Examples
    --------
    >>> import beamplan
    >>> plan = beamplan.plan("layouts/two-bay.yaml", goal="min-source")
    >>> sorted({s.id[:7] for s in plan.scanners if s.over_delivery_reason})  # bay A only
    ['litho-a']
    """
    network = model.network
    out: dict[str, str] = {}
    cache: dict[int, object] = {}  # each stage's duals read once (see shortfall_limits)
    for node in network.scanners:
        delivered = flows.incident_w.get(node.id, 0.0)
        if not node.in_use or delivered <= node.need_w * (1.0 + OVER_RTOL):
            continue
        reasons = []
        goal_reason = _goal_reason(model, outcome, node, delivered, goal, cache)
        if goal_reason:
            reasons.append(goal_reason)
        else:
            reasons += _path_reasons(network, node.id, flows)
        if not reasons:
            reasons.append("the fixed gains on its path tie it to the scanners that share "
                           "them: less here would starve one of them")
        out[node.id] = "; ".join(dict.fromkeys(reasons))
    return out
