"""The fast paths of the planner give the answers of the plain ones.

* Re-solves with primal simplex (when the last optimum stays feasible, as
  after a level is frozen in progressive filling) against dual simplex from
  the same basis: the same levels and source power to 1e-9 relative, on
  every demo and on random layouts (two algorithms, one LP: the levels of a
  lexicographic max-min allocation are unique, hand reasoning).
* The LP passed to HiGHS as arrays against the same rows as pulp
  constraints (the CBC path): every coefficient and bound the same.
* Shortfall reasons read once per stage (the cache) against reading the
  duals scanner by scanner.
"""

from __future__ import annotations

import glob
import os

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from layoutgen import LayoutSpec, layout_specs

from beamplan.layout.loader import load_layout, parse_layout
from beamplan.layout.yamlpos import parse_yaml
from beamplan.network.graph import Network, build_network
from beamplan.optimise.backend import HighsBackend
from beamplan.optimise.explain import shortfall_limits
from beamplan.optimise.goals import GoalOutcome, run_goal
from beamplan.optimise.lp import build_lp

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
DEMOS = sorted(glob.glob(os.path.join(ROOT, "layouts", "*.yaml")))
RTOL = 1e-9  # the target for the fast paths (relative)


def _outcome(net: Network, goal: str, primal: bool) -> GoalOutcome:
    model = build_lp(net)
    backend = HighsBackend(model)
    backend.primal_resolves = primal
    return run_goal(model, backend, goal)


def _same(net: Network, goal: str) -> None:
    fast, plain = _outcome(net, goal, True), _outcome(net, goal, False)
    assert fast.levels.keys() == plain.levels.keys()
    for sid, level in plain.levels.items():
        assert fast.levels[sid] == pytest.approx(level, rel=RTOL, abs=1e-12), sid
    scale = max(abs(plain.solution.objective), 1.0)
    assert abs(fast.solution.objective - plain.solution.objective) <= RTOL * scale * 10


@pytest.mark.parametrize("path", DEMOS, ids=os.path.basename)
@pytest.mark.parametrize("goal", ["headroom", "priority"])
def test_primal_resolves_on_demos(path: str, goal: str) -> None:
    _same(build_network(load_layout(path)), goal)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(layout_specs(max_scanners=12))
def test_primal_resolves_on_random_layouts(spec: LayoutSpec) -> None:
    _same(build_network(parse_layout(parse_yaml(spec.yaml(), "generated"))), "headroom")


@pytest.mark.parametrize("path", DEMOS, ids=os.path.basename)
def test_arrays_match_pulp_rows(path: str) -> None:
    model = build_lp(build_network(load_layout(path)))
    starts, index, values = model.csc()
    for col, var in enumerate(model.columns):
        low = -np.inf if var.lowBound is None else var.lowBound
        high = np.inf if var.upBound is None else var.upBound
        assert (low, high) == (model.col_low[col], model.col_high[col])
        for k in range(starts[col], starts[col + 1]):
            row = model.rows[int(index[k])]
            assert row.get(var, 0.0) == values[k]
    for r, row in enumerate(model.rows):
        nonzero = {v.name: c for v, c in row.items() if c != 0.0}
        assert nonzero == {model.col_name[c]: v for c, v in model.row_coefs[r].items()
                           if v != 0.0}
        bound = -row.constant
        assert bound in (model.row_low[r], model.row_high[r])


@pytest.mark.parametrize("name", ["overbooked.yaml", "two-bay.yaml"])
def test_cached_reasons_match(name: str) -> None:
    net = build_network(load_layout(os.path.join(ROOT, "layouts", name)))
    model = build_lp(net)
    outcome = run_goal(model, HighsBackend(model), "headroom")
    cache: dict[int, object] = {}
    for s in net.scanners:
        if s.id in outcome.freeze_duals:
            alone = shortfall_limits(model, outcome, s.id, 1.0)
            assert shortfall_limits(model, outcome, s.id, 1.0, cache) == alone


@pytest.mark.parametrize("path", DEMOS, ids=os.path.basename)
def test_build_order_gives_the_same_levels(path: str, monkeypatch: pytest.MonkeyPatch) -> None:
    """Large models reach HiGHS in build order, small ones in name order: same levels."""
    from beamplan.optimise import backend

    net = build_network(load_layout(path))
    by_name = _outcome(net, "headroom", True)
    monkeypatch.setattr(backend, "LARGE_COLUMNS", 0)
    in_order = _outcome(net, "headroom", True)
    for sid, level in by_name.levels.items():
        assert in_order.levels[sid] == pytest.approx(level, rel=RTOL, abs=1e-12), sid
