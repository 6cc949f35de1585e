"""Light that no scanner can use: turn the source down, dump it, or attenuate it.

Every goal ends with the least source power that keeps each scanner at its
level (the source is turned down). A source whose layout says ``surplus: dump``
or ``surplus: attenuate`` then gets one more LP stage: every scanner's intake
is pinned at what the goal gave it, each ``turn-down`` source at its output,
and the stage maximises the power absorbed in dumps (or in adjustable
attenuators). The source then runs as close to full power as those absorbers
allow, and no scanner gets a watt more or less.
"""

from __future__ import annotations

from dataclasses import replace

from beamplan.errors import Diagnostic, LayoutError
from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network
from beamplan.optimise.backend import INF, Backend
from beamplan.optimise.goals import GoalOutcome
from beamplan.optimise.lp import LpModel

__all__ = ["ABSORBERS", "check_surplus", "settle_surplus", "surplus_modes"]

# The behaviour that takes the surplus in each mode.
ABSORBERS = {"dump": Behaviour.ABSORB, "attenuate": Behaviour.RANGE}
_NOUN = {"dump": "dump", "attenuate": "adjustable attenuator"}


def _below(network: Network, node_id: str) -> set[str]:
    succ: dict[str, list[str]] = {}
    for link in network.links:
        succ.setdefault(link.tail, []).append(link.head)
    seen: set[str] = set()
    stack = [node_id]
    while stack:
        for head in succ.get(stack.pop(), ()):
            if head not in seen:
                seen.add(head)
                stack.append(head)
    return seen


def surplus_modes(network: Network) -> set[str]:
    """The surplus modes other than ``turn-down`` that sources in service ask for."""
    return {n.surplus for n in network.sources
            if n.in_use and n.available_w > 0 and n.surplus != "turn-down"}


def check_surplus(network: Network) -> None:
    """Refuse a source whose surplus mode has nothing to absorb the light.

    Raises
    ------
    LayoutError
        Located at the source: ``surplus: dump`` with no dump downstream, or
        ``surplus: attenuate`` with no adjustable attenuator downstream.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> check_surplus(build_network(beamplan.load("layouts/two-bay.yaml")))  # turn-down
    """
    problems = []
    for node in network.sources:
        if node.surplus == "turn-down" or not node.in_use:
            continue
        below = _below(network, node.id)
        wanted = ABSORBERS[node.surplus]
        if not any(network.node[n].behaviour is wanted for n in below):
            problems.append(Diagnostic(
                "error", "no-absorber",
                f"source '{node.id}': 'surplus: {node.surplus}' but no "
                f"{_NOUN[node.surplus]} is reachable from it", node.location,
                "add one on a splitter output, or use 'surplus: turn-down'"))
    if problems:
        raise LayoutError(problems)


def settle_surplus(model: LpModel, backend: Backend, outcome: GoalOutcome) -> GoalOutcome:
    """Send the light no scanner can use to dumps or attenuators, as the sources ask.

    Returns the goal's outcome unchanged when every source turns down, else
    the outcome with the surplus stage's solution (the scanners get exactly
    what the goal gave them).
    """
    network = model.network
    modes = surplus_modes(network)
    if not modes or outcome.solution.status != "optimal":
        return outcome
    cols = outcome.solution.columns
    pinned: list[int] = []
    for node in network.scanners:
        for link in network.in_links[node.id]:
            col = model.link_col[link.index]
            value = max(float(cols[col]), 0.0)
            backend.set_bounds(col, value, value)
            pinned.append(col)
    for node in network.sources:
        if node.surplus == "turn-down":
            col = model.source_col[node.id]
            backend.set_bounds(col, 0.0, max(float(cols[col]), 0.0))
            pinned.append(col)
    costs: dict[int, float] = {}
    for node in network.elements:
        if node.behaviour not in {ABSORBERS[m] for m in modes} or not node.in_use:
            continue
        for link in network.in_links[node.id]:
            col = model.link_col[link.index]
            costs[col] = costs.get(col, 0.0) - model.link_coef[link.index]
        out = network.out_link.get((node.id, None))
        if out is not None:  # an attenuator absorbs its input less its output
            col = model.link_col[out.index]
            costs[col] = costs.get(col, 0.0) + model.link_coef[out.index]
    backend.set_objective(costs)
    try:
        solution = backend.solve()
    finally:
        for col in pinned:
            backend.set_bounds(col, 0.0, INF)
    if solution.status != "optimal":
        return outcome  # keep the turned-down plan
    return replace(outcome, solution=solution, stages=outcome.stages + 1)
