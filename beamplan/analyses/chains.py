"""Outages of fixed-gain chains: one LP solve for every element of a chain.

The LP contracts a chain of fixed-gain (GAIN) elements into one column: the
power entering the chain, ``x``; each element's output is its gain product
times ``x`` (:func:`beamplan.optimise.lp.build_lp`), and an adjustable
element right after the chain takes ``x`` times that product as its input.
Failing element k of a chain zeroes ``x`` in every row after k and lifts k's
heat limit; failing the adjustable element zeroes ``x`` in its own rows and
lifts its heat limit (:meth:`beamplan.optimise.live.LiveModel.outage`). So
the LPs of failing member j and member k > j differ in one way only: with k
failed, the heat limits of the members j … k−1 still bound ``x`` from above
(``x ≤ limit ÷ coefficient``). Power into a failed chain reaches nothing, so
those bounds rarely bind.

That gives an exact test rather than an assumption. Solve the case of the
first element j; if ``x`` stays within every bound of the elements j … k−1 in
every LP solved for the case (each stage of the goal, each switch position
tried), then each of those primal solutions is feasible for element k's LP,
and with a zero dual on the extra bounds the same dual solutions prove them
optimal there: the whole run is a valid run for element k, and k's result is
j's under k's name. Where a bound would be exceeded, k is solved itself.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import TypeVar

from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network
from beamplan.optimise.backend import Backend, RawSolution
from beamplan.optimise.live import LiveModel

__all__ = ["ChainWatch", "chain_bound", "chain_input", "chains", "covered", "group_cases",
           "solve_sharing"]

R = TypeVar("R")
BOUND_RTOL = 1e-9  # a margin below each bound, far above the solver's feasibility tolerance


def chains(network: Network) -> dict[str, tuple[int, int]]:
    """Each chain member's chain (the index of the link into its head) and place in it.

    A chain is a run of fixed-gain elements, and an adjustable (RANGE) element
    right after one as its last member: the LP contracts the run into one
    column, which is also the adjustable element's input.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> chains(net)  # halo-fel -> m1 -> m2 -> t1; t1.pass -> d1 -> t2; t2.pick -> m3
    {'m1': (0, 0), 'm2': (0, 1), 'd1': (5, 0), 'm3': (7, 0)}
    """
    out: dict[str, tuple[int, int]] = {}
    for node in network.nodes:  # topological order: a chain's head comes first
        links = network.in_links[node.id]
        if node.behaviour not in (Behaviour.GAIN, Behaviour.RANGE) or len(links) != 1:
            continue
        [into] = links
        tail = network.node[into.tail]
        before = out.get(tail.id) if tail.behaviour is Behaviour.GAIN else None
        if before is not None:
            out[node.id] = (before[0], before[1] + 1)
        elif node.behaviour is Behaviour.GAIN:
            out[node.id] = (into.index, 0)
    return out


def group_cases(network: Network, cases: Sequence[tuple[str, ...]]
                ) -> list[list[tuple[str, ...]]]:
    """The cases in groups: the single outages of one chain together, in chain order.

    Every other case is a group of its own; groups keep the order of their
    first case.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> group_cases(net, [("m1",), ("t1",), ("m2",), ("m3",)])
    [[('m1',), ('m2',)], [('t1',)], [('m3',)]]
    """
    chain = chains(network)
    groups: list[list[tuple[str, ...]]] = []
    where: dict[int, list[tuple[str, ...]]] = {}
    for case in cases:
        if len(case) == 1 and case[0] in chain:
            head = chain[case[0]][0]
            if head in where:
                where[head].append(case)
                continue
            where[head] = [case]
            groups.append(where[head])
        else:
            groups.append([case])
    for group in where.values():
        group.sort(key=lambda case: chain[case[0]][1])
    return groups


def chain_input(live: LiveModel, node_id: str) -> int:
    """The LP column of the power entering the chain of a fixed-gain element."""
    network = live.network
    [into] = network.in_links[node_id]
    return live.model.link_col[into.index]


def chain_bound(live: LiveModel, first: str, last: str,
                chain: Mapping[str, tuple[int, int]]) -> float:
    """The bound on the chain's input that the heat limits of ``first`` up to (not
    including) ``last`` impose once ``last`` has failed (W, infinite when none)."""
    network, model = live.network, live.model
    col = chain_input(live, first)
    var = model.columns[col]
    bound = float("inf")
    node_id = first
    while node_id != last:
        node = network.node[node_id]
        row = model.heat_row.get(node_id)
        if row is not None and node.heat_limit_w is not None:
            coefficient = float(model.rows[row].expr.get(var, 0.0))
            if coefficient > 0.0:
                bound = min(bound, node.heat_limit_w / coefficient)
        node_id = network.out_link[(node_id, None)].head
        if node_id not in chain:
            raise ValueError(f"'{last}' does not follow '{first}' in one chain")
    return bound


class ChainWatch:
    """A back end that passes every call on and records the largest value of one column.

    ``largest`` is infinite once any solve is not optimal.
    """

    def __init__(self, inner: Backend, col: int) -> None:
        self.inner, self.col, self.largest = inner, col, 0.0
        self.name, self.version = inner.name, inner.version
        self.freeze_slack, self.freeze_abs_w = inner.freeze_slack, inner.freeze_abs_w

    def set_objective(self, costs: Mapping[int, float]) -> None:
        """Pass on."""
        self.inner.set_objective(costs)

    def set_bounds(self, col: int, low: float, high: float) -> None:
        """Pass on."""
        self.inner.set_bounds(col, low, high)

    def set_rhs(self, row: int, value: float) -> None:
        """Pass on."""
        self.inner.set_rhs(row, value)

    def set_coefficient(self, row: int, col: int, value: float) -> None:
        """Pass on."""
        self.inner.set_coefficient(row, col, value)

    def solve(self) -> RawSolution:
        """Solve, and keep the largest value the watched column has taken."""
        solution = self.inner.solve()
        if solution.status != "optimal":
            self.largest = float("inf")
        else:
            self.largest = max(self.largest, float(solution.columns[self.col]))
        return solution


def covered(largest: float, bound: float) -> bool:
    """Whether a chain input that reached ``largest`` W stays within ``bound`` W.

    An infinite bound (no heat limit between the two members) means the
    very same LP, and always covers.

    Examples
    --------
    >>> covered(300.0, 7333.0), covered(300.0, 300.0), covered(0.0, 0.0)
    (True, False, True)
    """
    return bound == float("inf") or largest == 0.0 or largest <= bound * (1.0 - BOUND_RTOL)


def solve_sharing(live: LiveModel, chain: Mapping[str, tuple[int, int]],
                  cases: Sequence[tuple[str, ...]], solve: Callable[[tuple[str, ...]], R],
                  share: Callable[[R, tuple[str, ...]], R]) -> list[R]:
    """``solve`` each case on ``live``, except where a chain's earlier case covers it.

    A single outage of a fixed-gain element that follows a solved outage of
    an earlier element of the same chain gets ``share(that result, case)``
    when the chain's input stayed within the bounds that separate the two
    LPs in every solve of the earlier case (see the module notes).
    """
    out: list[R] = []
    solved: tuple[str, float, R] | None = None  # (element, largest input, result)
    for failed in cases:
        node = failed[0] if len(failed) == 1 and failed[0] in chain else None
        if node is None:
            out.append(solve(failed))
            continue
        if solved is not None and chain[solved[0]][0] == chain[node][0] \
                and chain[solved[0]][1] < chain[node][1] \
                and covered(solved[1], chain_bound(live, solved[0], node, chain)):
            out.append(share(solved[2], failed))
            continue
        watch = ChainWatch(live.backend, chain_input(live, node))
        live.backend = watch
        try:
            result = solve(failed)
        finally:
            live.backend = watch.inner
        solved = (node, watch.largest, result)
        out.append(result)
    return out
