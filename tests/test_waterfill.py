"""Water-filling on tree networks (optimise/waterfill.py) against the LP's progressive filling."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings

from beamplan.layout.loader import parse_layout
from beamplan.layout.yamlpos import parse_yaml
from beamplan.network.graph import Network, build_network
from beamplan.optimise import waterfill
from beamplan.optimise.backend import make_backend
from beamplan.optimise.goals import run_goal
from beamplan.optimise.lp import build_lp
from beamplan.optimise.planner import plan_network
from beamplan.optimise.waterfill import is_tree, water_fill
from beamplan.report.document import plan_json
from tests.layoutgen import layout_specs, random_layout

ROOT = Path(__file__).resolve().parent.parent
DEMOS = sorted((ROOT / "layouts").glob("*.yaml"))
RTOL = 1e-9


def network(text: str, name: str = "test.yaml") -> Network:
    return build_network(parse_layout(parse_yaml(text, name)))


def lp_levels(net: Network, monkeypatch: Any) -> tuple[dict[str, float], float]:
    """The LP's progressive filling (water-filling turned off): levels and the source power."""
    with monkeypatch.context() as patch:
        patch.setattr(waterfill, "tree_headroom", lambda *args: False)
        model = build_lp(net)
        backend = make_backend(model)
        outcome = run_goal(model, backend, "headroom")
    source = sum(float(outcome.solution.columns[c]) for c in model.source_col.values())
    return outcome.levels, source


def both_plans(net: Network, monkeypatch: Any) -> tuple[str, str]:
    """The plan's JSON by the water-filling path and by the LP filling."""
    fast = plan_json(plan_network(net), "test")
    with monkeypatch.context() as patch:
        patch.setattr(waterfill, "tree_headroom", lambda *args: False)
        slow = plan_json(plan_network(net), "test")
    return fast, slow


def assert_same_levels(net: Network, monkeypatch: Any) -> None:
    backend = make_backend(build_lp(net))
    fill = water_fill(net, backend.freeze_slack, backend.freeze_abs_w)  # held as the LP holds
    want, _ = lp_levels(net, monkeypatch)
    assert set(fill.levels) == set(want)
    for sid, level in want.items():
        assert fill.levels[sid] == pytest.approx(level, rel=RTOL, abs=1e-12), sid


TWO = """\
layout: hand
format: 1
sources:
  fel: {power: 10 kW}
elements:
  m1: {kind: mirror, reflectivity: 0.5%s}
  t1: {kind: splitter, outputs: {o1: {}, o2: {efficiency: 0.8}}}
scanners:
  s1: {power: 1000 W%s}
  s2: {power: 2000 W}
beamlines:
  - fel -> m1 -> t1
  - t1.o1 -> s1
  - t1.o2 -> s2
"""


def test_two_scanners_by_hand(monkeypatch: Any) -> None:
    # hand calculation: the source gives (1000 t + 2000 t / 0.8) / 0.5 = 7000 t W, so with
    # 10 kW both reach t = 10/7.
    fill = water_fill(network(TWO % ("", "")))
    assert fill.levels == pytest.approx({"s1": 10 / 7, "s2": 10 / 7}, rel=1e-12)
    assert fill.source_w == pytest.approx(10000.0, rel=1e-12)
    # hand calculation: s1 capped at 1200 W (t = 1.2); then (1200 + 2500 t) / 0.5 = 10000
    # gives s2 t = 3800 / 2500 = 1.52.
    fill = water_fill(network(TWO % ("", ", max_power: 1200 W")))
    assert fill.levels == pytest.approx({"s1": 1.2, "s2": 1.52}, rel=1e-12)
    assert fill.held_by == {"s1": "s1", "s2": "fel"}
    # hand calculation: a 4.5 kW heat limit on the 50 % mirror caps its input at 9 kW:
    # (1200 + 2500 t) / 0.5 = 9000 gives t = 3300 / 2500 = 1.32, and the source gives 9 kW.
    net = network(TWO % (", heat_limit: 4.5 kW", ", max_power: 1200 W"))
    fill = water_fill(net)
    assert fill.levels == pytest.approx({"s1": 1.2, "s2": 1.32}, rel=1e-12)
    assert fill.held_by["s2"] == "m1"
    assert fill.source_w == pytest.approx(9000.0, rel=1e-12)
    assert fill.input_w["t1"] == pytest.approx(4500.0, rel=1e-12)  # hand calculation: 9 kW × 0.5
    assert_same_levels(net, monkeypatch)
    fast, slow = both_plans(net, monkeypatch)
    assert fast == slow


def freed(text: str) -> str:
    """A demo with its splitter share bounds taken away (so that it is a tree)."""
    return re.sub(r",\s*fraction:\s*\[[^\]]*\]", "", text)


@pytest.mark.parametrize("path", DEMOS, ids=[p.stem for p in DEMOS])
def test_demos(path: Path, monkeypatch: Any) -> None:
    """Every demo has bounded shares (the LP plans it); freed of them, the one-source demos
    are trees and water-filling gives the LP's levels and the same report."""
    text = path.read_text(encoding="utf-8")
    net = network(text, str(path))
    assert not is_tree(net)
    with pytest.raises(ValueError, match="not a tree"):
        water_fill(net)
    tree = network(freed(text), str(path))
    if len(tree.sources) > 1:
        assert not is_tree(tree)
        return
    assert is_tree(tree)
    assert_same_levels(tree, monkeypatch)
    fast, slow = both_plans(tree, monkeypatch)
    assert fast == slow


@pytest.mark.parametrize("seed", range(40))
def test_random_trees(seed: int, monkeypatch: Any) -> None:
    net = network(random_layout(seed, tree=True))
    assert is_tree(net)
    assert_same_levels(net, monkeypatch)
    fast, slow = both_plans(net, monkeypatch)
    assert fast == slow  # levels, statuses, limits and reasons alike


@settings(max_examples=25, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(spec=layout_specs(tree=True))
def test_hypothesis_trees(spec: Any, monkeypatch: Any) -> None:
    net = network(spec.yaml())
    assert is_tree(net)
    assert_same_levels(net, monkeypatch)


def test_exact_levels_close_to_the_lp(monkeypatch: Any) -> None:
    """Without the LP's give on held rows the levels are the exact max-min ones, a hair lower."""
    net = network(random_layout(3, tree=True))
    exact = water_fill(net).levels
    want, source = lp_levels(net, monkeypatch)
    for sid, level in want.items():
        assert exact[sid] == pytest.approx(level, rel=1e-6)
    assert water_fill(net).source_w == pytest.approx(source, rel=1e-6)


def test_non_tree_falls_back(monkeypatch: Any) -> None:
    seed = next(s for s in range(100) if not is_tree(network(random_layout(s))))
    net = network(random_layout(seed))
    called: list[bool] = []
    keep = waterfill.tree_headroom

    def spy(*args: Any) -> bool:
        called.append(keep(*args))
        return called[-1]

    monkeypatch.setattr(waterfill, "tree_headroom", spy)
    fast = plan_json(plan_network(net), "test")
    assert called == [False]
    monkeypatch.setattr(waterfill, "tree_headroom", lambda *args: False)
    assert plan_json(plan_network(net), "test") == fast
