"""What it takes, checked: each sizing answer applied to the network and re-planned.

:func:`beamplan.optimise.sizing.size_network` answers from LPs; here each
answer that closes the gap (or, when every need is met, each margin) is
applied to a copy of the network's nodes and planned again, and the answer
is marked ``checked`` when every scanner then meets its need (to the
planner's ``MET_RTOL``). The combined answer is applied all at once. Each
check is a whole plan, so on large layouts only the first ``MAX_CHECKS``
single-limit answers are checked.
"""

from __future__ import annotations

from dataclasses import replace

from beamplan.network.behaviour import Node
from beamplan.network.graph import Network
from beamplan.optimise.planner import MET_RTOL, plan_network
from beamplan.optimise.result import Plan
from beamplan.optimise.sizing import Answer, Sizing, size_network
from beamplan.vocabulary import Family, Goal, Solver

__all__ = ["MAX_CHECKS", "apply_answers", "replan_meets", "what_it_takes"]

MAX_CHECKS = 8  # single-limit answers re-planned per report (each is one plan)


def _changed(node: Node, answer: Answer) -> Node:
    value = answer.needed
    assert value is not None
    family = answer.family
    if family == Family.SOURCE:
        extra = dict(answer.parts).get(node.id)
        return replace(node, available_w=value if extra is None else node.available_w + extra)
    if family == Family.HEAT:
        return replace(node, heat_limit_w=value)
    if family == Family.MAX_POWER:
        return replace(node, max_w=value)
    if family == Family.RANGE_HIGH:
        return replace(node, gain_max=value)
    if family == Family.RANGE_LOW:
        return replace(node, gain_min=value)
    high = family == Family.SHARE_HIGH
    ports = tuple((replace(p, fraction_max=value) if high else replace(p, fraction_min=value))
                  if p.name == answer.port else p for p in node.ports)
    return replace(node, ports=ports)


def apply_answers(network: Network, answers: tuple[Answer, ...]) -> Network:
    """The network with each answer's limit set to its ``needed`` value.

    A source answer with ``parts`` adds each part to its source; one without
    (a margin) sets its single source to the needed power.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> answer = Answer("heat", "m3", None, "W", 150.0, 200.0, 50.0)
    >>> apply_answers(net, (answer,)).node["m3"].heat_limit_w
    200.0
    """
    changed: dict[str, Node] = {}
    for answer in answers:
        ids = [i for i, _ in answer.parts] if answer.parts else [answer.element]
        for node_id in ids:
            changed[node_id] = _changed(changed.get(node_id, network.node[node_id]), answer)
    return network.with_nodes(changed)


def replan_meets(network: Network, scanners: tuple[str, ...],
                 solver: Solver | str = Solver.AUTO) -> bool:
    """Whether a plan of ``network`` meets the need of every scanner in ``scanners``."""
    plan = plan_network(network, Goal.MIN_SOURCE, solver)
    return all(plan.scanner(sid).delivered_w >= plan.scanner(sid).need_w * (1 - MET_RTOL)
               for sid in scanners)


def _check(network: Network, answers: tuple[Answer, ...], served: tuple[str, ...],
           solver: str) -> bool | None:
    if any(a.needed is None for a in answers) or not answers:
        return None
    if any(a.family == Family.SOURCE and not a.parts and "," in a.element for a in answers):
        return None  # a margin shared by several sources: no single change to apply
    return replan_meets(apply_answers(network, answers), served, solver)


def what_it_takes(network: Network, plan: Plan, solver: Solver | str = Solver.AUTO,
                  max_checks: int = MAX_CHECKS) -> Sizing:
    """The sizing answers of a plan, each checked by re-planning with it applied.

    The source answer and the combined answer are always checked; of the
    single-limit answers, the ``max_checks`` with the largest change (or the
    smallest margin) are, the rest keep ``checked=None``.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/overbooked.yaml"))
    >>> sizing = what_it_takes(net, plan_network(net))
    >>> [(a.key, a.checked) for a in sizing.combined]
    [('source:fel-interim', True), ('heat:cs-fold', True)]
    """
    sizing = size_network(network, plan)
    served = tuple(s.id for s in network.scanners
                   if s.in_use and s.need_w > 0 and s.id not in sizing.unreachable)

    def checked(answer: Answer) -> Answer:
        return replace(answer, checked=_check(network, (answer,), served, solver))

    combined = sizing.combined
    if combined:
        ok = _check(network, combined, served, solver)
        combined = tuple(replace(a, checked=ok) for a in combined)
    answerable = [i for i, a in enumerate(sizing.limits) if a.change is not None]
    first = sorted(answerable, key=lambda i: -(sizing.limits[i].change or 0.0))[:max_checks]
    limits = tuple(checked(a) if i in first else a for i, a in enumerate(sizing.limits))
    return replace(sizing, source=checked(sizing.source), limits=limits, combined=combined)
