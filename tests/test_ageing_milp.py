"""The maintenance MILP (HiGHS) against brute-force enumeration of every schedule."""

from __future__ import annotations

import math

import numpy as np
import pytest

from beamplan.analyses.maintenance_milp import MaintenanceModel, brute_force, evaluate, solve


def _model(seed: int, optics: int, windows: int, objective: str = "cost") -> MaintenanceModel:
    """A random small model: exponential ageing, clean to a fraction or replace to new.

    The log gain after a last reset (r, a) at checkpoint c is ln(restore_a) - k (T_c - T_r)
    (hand calculation for an exponential law at a fixed power).
    """
    rng = np.random.default_rng(seed)
    elements = tuple(f"m{i}" for i in range(optics))
    windows_h = tuple(1000.0 * (w + 1) for w in range(windows))
    horizon = 1000.0 * (windows + 1)
    checkpoints = [*windows_h, horizon]
    times = [0.0, *windows_h]
    actions = {}
    log_gain = {}
    for eid in elements:
        k = float(rng.uniform(2e-5, 8e-5))
        restore = float(rng.uniform(0.97, 1.0))
        acts = {"clean": (float(rng.integers(1, 5)), 4.0),
                "replace": (float(rng.integers(5, 12)), 24.0)}
        if rng.random() < 0.3:
            del acts["replace"]
        actions[eid] = acts
        starts = [(0, "new", 0.0)] + [
            (r, a, math.log(restore) if a == "clean" else 0.0)
            for r in range(1, windows + 1) for a in acts]
        for r, a, log0 in starts:
            for c in range(r + 1, len(checkpoints) + 1):
                log_gain[(eid, r, a, c)] = log0 - k * (checkpoints[c - 1] - times[r])
    paths = {}
    required = {}
    for s in range(2):
        members = [e for e in elements if rng.random() < 0.8] or [elements[0]]
        paths[f"s{s}"] = {e: float(rng.choice([1.0, 1.0, 2.5])) for e in members}
        required[f"s{s}"] = -float(rng.uniform(0.04, 0.15))
    return MaintenanceModel(elements, windows_h, horizon, actions, log_gain, paths, required,
                            objective)


CASES = [(seed, optics, windows, objective)
         for seed, (optics, windows) in enumerate([(2, 3), (2, 4), (3, 3), (2, 3), (3, 3),
                                                   (2, 4)])
         for objective in ("cost", "downtime")]


@pytest.mark.parametrize(("seed", "optics", "windows", "objective"), CASES)
def test_milp_matches_brute_force(seed: int, optics: int, windows: int, objective: str) -> None:
    model = _model(seed, optics, windows, objective)
    best = brute_force(model)  # every schedule enumerated (independent of the solver)
    got = solve(model)
    if best is None:
        assert got is None
        return
    assert got is not None and got.gap == 0.0
    assert got.objective_value == pytest.approx(best.objective_value)
    ok, value = evaluate(model, got.chosen)
    assert ok and value == pytest.approx(best.objective_value)


def test_some_cases_need_maintenance_and_some_cannot_be_held() -> None:
    # the cases are not trivial: some need actions (a test that cannot fail is a defect)
    results = [brute_force(_model(seed, o, w)) for seed, o, w, _ in CASES[::2]]
    assert any(r is not None and r.chosen for r in results)


def test_forbidding_the_only_action_that_helps_leaves_no_schedule() -> None:
    # hand calculation: one optic losing 0.1 per interval, need -0.15: clean at window 1
    m = MaintenanceModel(("m1",), (100.0,), 200.0, {"m1": {"clean": (5.0, 1.0)}},
                         {("m1", 0, "new", 1): -0.1, ("m1", 0, "new", 2): -0.2,
                          ("m1", 1, "clean", 2): -0.1}, {"s": {"m1": 1.0}}, {"s": -0.15})
    assert solve(m, forbid=[("m1", 1, "clean")]) is None
    assert brute_force(m) == solve(m)
