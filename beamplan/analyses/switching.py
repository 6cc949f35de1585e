"""Corrective switching: the switch positions that restore the most service after a failure.

A switch with ``select`` is a knob with a few positions (its inputs). After a
failure, the positions are searched for the one that serves best, judged by
a caller's key (smaller is better: for sweeps, fewer scanners cut off, then
fewer short, then a higher lowest factor, then less power lost):

* when the switches have at most :data:`EXHAUSTIVE_MAX` combinations, every
  combination is tried, so the best is found;
* otherwise a greedy search: one switch at a time, take the move that
  improves most, repeat until no single move improves.

Of equally good positions the one with the fewest moves wins, so a switch
moves only when moving it restores service.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any, TypeVar

__all__ = ["EXHAUSTIVE_MAX", "SwitchMove", "best_positions", "search_kind"]

EXHAUSTIVE_MAX = 64
V = TypeVar("V")


@dataclass(frozen=True)
class SwitchMove:
    """One switch moved from one input to another."""

    switch: str
    before: str
    after: str

    @property
    def label(self) -> str:
        """The move as people write it, e.g. ``sw-source: src-tunnel -> sb-drift``."""
        return f"{self.switch}: {self.before} -> {self.after}"


def search_kind(switches: Mapping[str, tuple[str, ...]]) -> str:
    """``"none"`` (no switch), ``"exhaustive"`` (few combinations) or ``"greedy"``.

    Examples
    --------
    >>> search_kind({}), search_kind({"sw": ("a", "b")}), search_kind({f"s{i}": ("a", "b")
    ...                                                               for i in range(7)})
    ('none', 'exhaustive', 'greedy')
    """
    if not switches:
        return "none"
    count = math.prod(len(inputs) for inputs in switches.values())
    return "exhaustive" if count <= EXHAUSTIVE_MAX else "greedy"


def _moves(current: Mapping[str, str], positions: Mapping[str, str]) -> tuple[SwitchMove, ...]:
    return tuple(SwitchMove(s, current[s], p) for s, p in positions.items() if p != current[s])


def best_positions(switches: Mapping[str, tuple[str, ...]], current: Mapping[str, str],
                   evaluate: Callable[[dict[str, str]], V], key: Callable[[V], Any],
                   at_failure: V) -> tuple[V, tuple[SwitchMove, ...], int]:
    """Search the switch positions; return the best outcome, its moves, and how many were tried.

    Parameters
    ----------
    switches
        The switches that may move, each with its inputs.
    current
        Each switch's position at the moment of failure.
    evaluate
        Plans the case with the given positions (every switch of ``switches``).
    key
        Orders outcomes; smaller is better.
    at_failure
        The outcome at the current positions (not evaluated again).

    Examples
    --------
    >>> served = {("a", "x"): 1, ("a", "y"): 2, ("b", "x"): 3, ("b", "y"): 1}
    >>> best_positions({"s1": ("a", "b"), "s2": ("x", "y")}, {"s1": "a", "s2": "x"},
    ...                lambda p: served[(p["s1"], p["s2"])], lambda v: -v, 1)
    (3, (SwitchMove(switch='s1', before='a', after='b'),), 3)
    """
    best, best_key, tried = at_failure, (key(at_failure), 0), 0
    best_moves: tuple[SwitchMove, ...] = ()
    if search_kind(switches) == "exhaustive":
        names = list(switches)
        for combo in itertools.product(*(switches[n] for n in names)):
            positions = dict(zip(names, combo, strict=True))
            moves = _moves(current, positions)
            if not moves:
                continue
            outcome = evaluate(positions)
            tried += 1
            ranked = (key(outcome), len(moves))
            if ranked < best_key:
                best, best_key, best_moves = outcome, ranked, moves
        return (best, best_moves, tried) if best_moves else (at_failure, (), tried)
    positions = dict(current)
    for _ in range(sum(len(v) for v in switches.values())):
        step: tuple[Any, V, dict[str, str]] | None = None
        for name, inputs in switches.items():
            for choice in inputs:
                if choice == positions[name]:
                    continue
                trial = {**positions, name: choice}
                outcome = evaluate(trial)
                tried += 1
                ranked = (key(outcome), len(_moves(current, trial)))
                if step is None or ranked < step[0]:
                    step = (ranked, outcome, trial)
        if step is None or step[0][0] >= best_key[0]:
            break  # no single move improves
        best_key, best, positions = step[0], step[1], step[2]
    moves = _moves(current, positions)
    return (best, moves, tried) if moves else (at_failure, (), tried)
