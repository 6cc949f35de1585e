"""Sequential Monte Carlo simulation of failures and repairs, to check the enumeration.

Method: sequential (chronological) Monte Carlo simulation of independent two-state
parts with exponential times to failure and to repair (R. Billinton, W. Li,
"Reliability Assessment of Electric Power Systems Using Monte Carlo Methods",
Plenum 1994, from memory). Over each operating year the loss rate of the state
the fab is in is integrated; the years are the samples of the mean and of its
95 % confidence interval (normal approximation). A state the enumeration left out
is planned when the simulation first reaches it. Seeded: the same seed gives the
same result.
"""

from __future__ import annotations

import heapq
import math
import random
from collections.abc import Callable, Sequence
from dataclasses import dataclass

from beamplan.analyses.availability import Component, State

__all__ = ["Simulation", "simulate"]


@dataclass(frozen=True)
class Simulation:
    """The simulated mean loss per year and its 95 % confidence interval."""

    years: int
    seed: int
    mean: float
    half_width: float
    states_visited: int
    states_planned: int

    @property
    def low(self) -> float:
        """Lower end of the 95 % interval."""
        return self.mean - self.half_width

    @property
    def high(self) -> float:
        """Upper end of the 95 % interval."""
        return self.mean + self.half_width


def simulate(components: Sequence[Component], states: dict[frozenset[str], State],
             plan_state: Callable[[tuple[str, ...]], State], *, years: int, hours: float,
             switching_time_h: float = 0.0, seed: int = 1) -> Simulation:
    """Simulate ``years`` operating years of ``hours`` each; wafer passes lost per year.

    ``states`` holds the states already planned (by the set of parts down);
    ``plan_state`` plans any other one.

    Examples
    --------
    >>> a = Component("a", "mirror", 90.0, 10.0)
    >>> s = State(("a",), 0.1, 0.1, (("x", 1.0),), (("x", 1.0),), 0.0, ())
    >>> none = State((), 0.9, 1 / 90, (), (), 0.0, ())
    >>> sim = simulate([a], {frozenset(): none, frozenset({"a"}): s}, lambda f: s,
    ...                years=400, hours=1000.0, seed=1)
    >>> sim.low < 100.0 < sim.high  # hand calculation: 1000 h × 0.1 × 1 wph
    True
    """
    rng = random.Random(seed)
    end = years * hours
    heap = [(rng.expovariate(1.0 / c.mtbf_h), i) for i, c in enumerate(components)]
    heapq.heapify(heap)
    down: set[str] = set()
    bins = [0.0] * years
    table = dict(states)
    planned = 0
    visited = set()

    def add(t0: float, t1: float, rate: float) -> None:
        while t0 < t1 and rate > 0.0:
            year = min(int(t0 // hours), years - 1)
            stop = min(t1, (year + 1) * hours)
            bins[year] += rate * (stop - t0)
            t0 = stop

    now = 0.0
    entered = 0.0
    while now < end:
        t_next, i = heapq.heappop(heap) if heap else (end, -1)
        t_next = min(t_next, end)
        key = frozenset(down)
        state = table.get(key)
        if state is None:
            state = plan_state(tuple(c.id for c in components if c.id in down))
            table[key] = state
            planned += 1
        visited.add(key)
        after = sum(v for _, v in state.after)
        if state.moves and switching_time_h > 0.0:
            at = sum(v for _, v in state.at_failure)
            split = min(max(entered + switching_time_h, now), t_next)
            add(now, split, at)
            add(split, t_next, after)
        else:
            add(now, t_next, after)
        now = t_next
        if i < 0 or now >= end:
            break
        c = components[i]
        if c.id in down:
            down.discard(c.id)
            heapq.heappush(heap, (now + rng.expovariate(1.0 / c.mtbf_h), i))
        else:
            down.add(c.id)
            heapq.heappush(heap, (now + rng.expovariate(1.0 / c.mttr_h), i))
        entered = now
    mean = sum(bins) / years
    var = sum((b - mean) ** 2 for b in bins) / max(years - 1, 1)
    return Simulation(years, seed, mean, 1.96 * math.sqrt(var / years), len(visited), planned)
