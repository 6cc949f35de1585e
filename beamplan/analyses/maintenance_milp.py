"""The maintenance plan as a mixed-integer program (HiGHS), and its brute-force twin.

Model (docs/ageing.md writes it out): binaries ``x[i,w,a]`` choose action
``a`` on optic ``i`` in window ``w``; ``l[i,c]`` is the log gain of optic ``i``
at checkpoint ``c`` (just before each window, and at the horizon: ageing is
monotone, so the end of each interval is its worst point). With the power
distribution of a reference plan fixed, the log gain at ``c`` after a last
reset ``(r, a)`` is a precomputed number ``L[i,r,a,c]``; continuous
``z[i,c,r,a]`` in [0, 1] mark the last reset (exact for binary ``x``, and a
tight relaxation), so::

    z[i,1,0,new] = 1
    z[i,c,c-1,a] = x[i,c-1,a]                    (a reset in the window just before)
    z[i,c,r,a] <= z[i,c-1,r,a]                   (r < c-1: an older reset still last)
    sum_{r<c-1,a} z[i,c,r,a] + sum_a x[i,c-1,a] = 1
    l[i,c] = sum_{r<c,a} L[i,r,a,c] * z[i,c,r,a]
    sum_i k[s,i] * l[i,c] >= b[s]                 for every scanner s, checkpoint c
    minimise sum cost[i,a] * x[i,w,a]   (or downtime)

where ``b[s] = ln(need / delivered)`` in the reference plan (plus any
tightening from the simulation check) and ``k[s,i]`` is 1, or ``1 / (1 − R)``
for a heat-limited mirror whose limit binds (tangent of a convex function, a
lower bound). :func:`evaluate` computes the same model for one schedule in
plain Python; :func:`brute_force` enumerates every schedule (tests).
"""

from __future__ import annotations

import itertools
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

__all__ = ["MaintenanceModel", "Schedule", "brute_force", "evaluate", "solve"]

Choice = tuple[str, int, str]  # (element, window index 1..W, action)


@dataclass(frozen=True)
class MaintenanceModel:
    """The data of the maintenance MILP.

    ``log_gain[(i, r, a, c)]`` is the log gain of optic ``i`` at checkpoint
    ``c`` (1..W+1) after its last reset ``(r, a)``: ``r = 0, a = "new"`` for
    the start, else window ``r`` (1..W) and action ``a``.
    """

    elements: tuple[str, ...]
    windows_h: tuple[float, ...]
    horizon_h: float
    actions: Mapping[str, Mapping[str, tuple[float, float]]]  # i -> a -> (cost, downtime_h)
    log_gain: Mapping[tuple[str, int, str, int], float]
    paths: Mapping[str, Mapping[str, float]]  # scanner -> {element: coefficient}
    required: Mapping[str, float]  # scanner -> b[s]
    objective: str = "cost"

    @property
    def checkpoints(self) -> range:
        """Checkpoint indices 1..W+1 (before each window, then the horizon)."""
        return range(1, len(self.windows_h) + 2)

    def weight(self, element: str, action: str) -> float:
        """The objective coefficient of an action (cost or downtime hours)."""
        cost, downtime = self.actions[element][action]
        return cost if self.objective == "cost" else downtime

    def choices(self) -> list[Choice]:
        """Every (element, window, action) the model may choose."""
        return [(i, w, a) for i in self.elements for w in range(1, len(self.windows_h) + 1)
                for a in sorted(self.actions.get(i, {}))]


@dataclass(frozen=True)
class Schedule:
    """The actions chosen and their total objective (cost or downtime)."""

    chosen: tuple[Choice, ...]
    objective_value: float
    gap: float = 0.0  # relative gap HiGHS proved (0: optimal to the tolerance)


def _log_gains_for(model: MaintenanceModel, chosen: Iterable[Choice]) -> dict[tuple[str, int],
                                                                              float]:
    last: dict[str, list[tuple[int, str]]] = {}
    for i, w, a in chosen:
        last.setdefault(i, []).append((w, a))
    out = {}
    for i in model.elements:
        resets = sorted(last.get(i, []))
        for c in model.checkpoints:
            before = [(w, a) for w, a in resets if w < c]
            r, a = before[-1] if before else (0, "new")
            out[(i, c)] = model.log_gain[(i, r, a, c)]
    return out


def evaluate(model: MaintenanceModel, chosen: Iterable[Choice]) -> tuple[bool, float]:
    """Whether a schedule meets every need in the model, and its objective value.

    Examples
    --------
    >>> m = MaintenanceModel(("m1",), (100.0,), 200.0, {"m1": {"clean": (5.0, 1.0)}},
    ...     {("m1", 0, "new", 1): -0.1, ("m1", 0, "new", 2): -0.2,
    ...      ("m1", 1, "clean", 2): -0.1}, {"s": {"m1": 1.0}}, {"s": -0.15})
    >>> evaluate(m, []), evaluate(m, [("m1", 1, "clean")])
    ((False, 0.0), (True, 5.0))
    """
    chosen = list(chosen)
    windows = {(i, w) for i, w, _ in chosen}
    if len(windows) != len(chosen):
        return False, float("inf")  # two actions on one optic in one window
    logs = _log_gains_for(model, chosen)
    ok = all(sum(k * logs[(i, c)] for i, k in path.items()) >= model.required[s] - 1e-9
             for s, path in model.paths.items() for c in model.checkpoints)
    return ok, float(sum(model.weight(i, a) for i, _, a in chosen))


def brute_force(model: MaintenanceModel) -> Schedule | None:
    """The best schedule by enumerating every one (small models only; tests).

    Examples
    --------
    >>> m = MaintenanceModel(("m1",), (100.0,), 200.0, {"m1": {"clean": (5.0, 1.0)}},
    ...     {("m1", 0, "new", 1): -0.1, ("m1", 0, "new", 2): -0.2,
    ...      ("m1", 1, "clean", 2): -0.1}, {"s": {"m1": 1.0}}, {"s": -0.15})
    >>> brute_force(m)
    Schedule(chosen=(('m1', 1, 'clean'),), objective_value=5.0, gap=0.0)
    """
    slots = [(i, w) for i in model.elements for w in range(1, len(model.windows_h) + 1)]
    options = [[None, *sorted(model.actions.get(i, {}))] for i, _ in slots]
    best: Schedule | None = None
    for combo in itertools.product(*options):
        chosen = tuple((i, w, a) for (i, w), a in zip(slots, combo, strict=True)
                       if a is not None)
        ok, value = evaluate(model, chosen)
        if ok and (best is None or value < best.objective_value - 1e-9):
            best = Schedule(chosen, value)
    return best


def solve(model: MaintenanceModel, forbid: Iterable[Choice] = (),
          time_limit_s: float = 10.0, gap: float = 1e-4) -> Schedule | None:
    """Solve the MILP with HiGHS; ``None`` when no schedule meets every need.

    ``forbid`` fixes some actions to "not taken" (what skipping one costs).
    At the time limit the best schedule found is returned with the gap
    HiGHS proved (``Schedule.gap``); ``None`` if none was found by then.

    Examples
    --------
    >>> m = MaintenanceModel(("m1",), (100.0,), 200.0, {"m1": {"clean": (5.0, 1.0)}},
    ...     {("m1", 0, "new", 1): -0.1, ("m1", 0, "new", 2): -0.2,
    ...      ("m1", 1, "clean", 2): -0.1}, {"s": {"m1": 1.0}}, {"s": -0.15})
    >>> solve(m)
    Schedule(chosen=(('m1', 1, 'clean'),), objective_value=5.0, gap=0.0)
    >>> solve(m, forbid=[("m1", 1, "clean")]) is None
    True
    """
    import highspy
    import numpy as np

    from beamplan.optimise.backend import quiet_stdout

    inf = highspy.kHighsInf
    with quiet_stdout():
        h = highspy.Highs()  # type: ignore[no-untyped-call]
    h.setOptionValue("output_flag", False)
    h.setOptionValue("time_limit", float(time_limit_s))
    h.setOptionValue("mip_rel_gap", float(gap))
    h.setOptionValue("random_seed", 0)
    forbidden = set(forbid)
    col: dict[object, int] = {}

    def add(key: object, hi: float, cost: float, integer: bool) -> None:
        col[key] = len(col)
        h.addVar(0.0, hi)
        h.changeColCost(col[key], cost)
        if integer:
            h.changeColIntegrality(col[key], highspy.HighsVarType.kInteger)

    def row(lo: float, hi: float, terms: dict[int, float]) -> None:
        idx = np.array(list(terms), dtype=np.int32)
        h.addRow(lo, hi, len(terms), idx, np.array(list(terms.values()), dtype=float))

    for ch in model.choices():
        add(ch, 0.0 if ch in forbidden else 1.0, model.weight(ch[0], ch[2]), True)
    # z[i,c,r,a] = 1 when the last reset of optic i before checkpoint c is (r, a)
    starts: dict[str, list[tuple[int, str]]] = {}
    for i in model.elements:
        acts = sorted(model.actions.get(i, {}))
        starts[i] = [(0, "new")] + [(r, a) for r in range(1, len(model.windows_h) + 1)
                                    for a in acts]
        for c in model.checkpoints:
            for r, a in starts[i]:
                if r < c:
                    add((i, c, r, a), 1.0, 0.0, False)
        row(1.0, 1.0, {col[(i, 1, 0, "new")]: 1.0})
        for c in model.checkpoints[1:]:
            fresh = {col[(i, c - 1, a)]: 1.0 for a in acts}
            for a in acts:
                row(0.0, 0.0, {col[(i, c, c - 1, a)]: 1.0, col[(i, c - 1, a)]: -1.0})
            older = [(r, a) for r, a in starts[i] if r < c - 1]
            for r, a in older:
                row(-inf, 0.0, {col[(i, c, r, a)]: 1.0, col[(i, c - 1, r, a)]: -1.0})
            row(1.0, 1.0, {**{col[(i, c, r, a)]: 1.0 for r, a in older}, **fresh})
    for s, path in model.paths.items():
        for c in model.checkpoints:
            terms: dict[int, float] = {}
            for i, k in path.items():
                for r, a in starts[i]:
                    if r < c:
                        terms[col[(i, c, r, a)]] = k * model.log_gain[(i, r, a, c)]
            if not terms:
                if model.required[s] > 1e-9:
                    return None
                continue
            row(model.required[s], inf, terms)
    with quiet_stdout():
        h.run()
    status = h.getModelStatus()
    info = h.getInfo()
    if status != highspy.HighsModelStatus.kOptimal and info.primal_solution_status != 2:
        return None  # infeasible, or nothing feasible found within the time limit
    values = h.getSolution().col_value
    chosen = tuple(ch for ch in model.choices() if values[col[ch]] > 0.5)
    proved = 0.0 if status == highspy.HighsModelStatus.kOptimal else float(info.mip_gap)
    return Schedule(chosen, float(sum(model.weight(i, a) for i, _, a in chosen)),
                    max(proved, 0.0))
