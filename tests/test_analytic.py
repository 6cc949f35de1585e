"""Hand-solvable layouts: beamplan's plans against arithmetic done in the comments.

Every expected value comes from the hand calculation next to it. Tolerances are
1e-8 relative: beamplan holds frozen levels with a slack of 1e-9 (HiGHS).
"""

from __future__ import annotations

import pytest

import beamplan
from beamplan.layout.loader import parse_layout
from beamplan.layout.yamlpos import parse_yaml
from beamplan.network.graph import Network, build_network
from beamplan.optimise.result import Plan

RTOL = 1e-8


def network_of(text: str) -> Network:
    """Build a Network from layout text."""
    return build_network(parse_layout(parse_yaml(text, "analytic.yaml")))


def plan_of(text: str, goal: str = "headroom", solver: str = "highs") -> Plan:
    """Plan layout text."""
    return beamplan.plan(network_of(text), goal=goal, solver=solver)


def delivered(plan: Plan) -> dict[str, float]:
    """Delivered power per scanner."""
    return {s.id: s.delivered_w for s in plan.scanners}


def price(plan: Plan, family: str, subject: str) -> float:
    """The reported shadow price of one binding constraint."""
    found = [b for b in plan.binding if b.family == family and b.subject == subject]
    assert len(found) == 1, [(b.family, b.subject) for b in plan.binding]
    return found[0].shadow_price


# -- a chain of gains ----------------------------------------------------------------

CHAIN = """
layout: chain
format: 1
sources: {src: {power: 10 kW}}
elements:
  m1: {kind: mirror, reflectivity: 0.9}
  d1: {kind: drift, transmission: 0.95}
  a1: {kind: attenuator, transmission: 0.5}
scanners:
  s1: {power: 1000 W}
beamlines:
  - src -> m1 -> d1 -> a1 -> s1
"""


@pytest.mark.parametrize("solver", ["highs", "cbc"])
def test_chain_delivers_source_times_product_of_gains(solver: str) -> None:
    # Hand calculation: 10 000 W × 0.9 × 0.95 × 0.5 = 4275 W at s1, factor 4.275.
    # m1 takes 10 000 W and absorbs 1000 W; d1 takes 9000 W and absorbs 450 W;
    # a1 takes 8550 W and absorbs 4275 W.
    plan = plan_of(CHAIN, solver=solver)
    rtol = RTOL if solver == "highs" else 1e-5
    assert plan.scanner("s1").delivered_w == pytest.approx(4275.0, rel=rtol)
    assert plan.headroom_factor == pytest.approx(4.275, rel=rtol)
    for eid, incident, absorbed in (("m1", 10000.0, 1000.0), ("d1", 9000.0, 450.0),
                                    ("a1", 8550.0, 4275.0)):
        element = plan.element(eid)
        assert element.incident_w == pytest.approx(incident, rel=rtol)
        assert element.absorbed_w == pytest.approx(absorbed, rel=rtol)


def test_chain_min_source_is_need_over_product_of_gains() -> None:
    # Hand calculation: 1000 W ÷ (0.9 × 0.95 × 0.5) = 1000 ÷ 0.4275 = 2339.181 W.
    plan = plan_of(CHAIN, goal="min-source")
    assert plan.status == "met"
    assert plan.source_used_w == pytest.approx(1000.0 / 0.4275, rel=RTOL)
    assert plan.scanner("s1").delivered_w == pytest.approx(1000.0, rel=RTOL)


SWITCH = """
layout: switch
format: 1
sources:
  src-a: {power: 5 kW}
  src-b: {power: 3 kW}
elements:
  sw: {kind: switch, efficiency: 0.9SELECT}
scanners:
  s1: {power: 1000 W}
beamlines:
  - src-a -> sw
  - src-b -> sw
  - sw -> s1
"""


def test_switch_combines_two_sources() -> None:
    # Hand calculation: 0.9 × (5000 + 3000) W = 7200 W, factor 7.2.
    plan = plan_of(SWITCH.replace("SELECT", ""))
    assert plan.scanner("s1").delivered_w == pytest.approx(7200.0, rel=RTOL)
    assert plan.source_used_w == pytest.approx(8000.0, rel=RTOL)


def test_switch_with_select_passes_one_source() -> None:
    # Hand calculation: only src-a passes: 0.9 × 5000 W = 4500 W; src-b draws 0 W.
    plan = plan_of(SWITCH.replace("SELECT", ", select: src-a"))
    assert plan.scanner("s1").delivered_w == pytest.approx(4500.0, rel=RTOL)
    outputs = {s.id: s.output_w for s in plan.sources}
    assert outputs["src-a"] == pytest.approx(5000.0, rel=RTOL)
    assert outputs["src-b"] == pytest.approx(0.0, abs=1e-6)


FIXED_SPLIT = """
layout: fixed-split
format: 1
sources: {src: {power: 10 kW}}
elements:
  t1: {kind: splitter, outputs: {a: {efficiency: 0.9, fraction: 0.3}, b: {fraction: 0.7}}}
scanners:
  s1: {power: 1000 W}
  s2: {power: 2000 W}
beamlines:
  - src -> t1
  - t1.a -> s1
  - t1.b -> s2
"""


def test_fixed_splitter_shares_by_its_fractions() -> None:
    # Hand calculation: s1 gets 0.3 × 0.9 × 10 000 = 2700 W (level 2.7), s2 gets
    # 0.7 × 10 000 = 7000 W (level 3.5). The factor is the lower: 2.7. t1 absorbs
    # 0.3 × 0.1 × 10 000 = 300 W.
    plan = plan_of(FIXED_SPLIT)
    got = delivered(plan)
    assert got["s1"] == pytest.approx(2700.0, rel=RTOL)
    assert got["s2"] == pytest.approx(7000.0, rel=RTOL)
    assert plan.headroom_factor == pytest.approx(2.7, rel=RTOL)
    assert plan.element("t1").absorbed_w == pytest.approx(300.0, rel=RTOL)


MAX_POWER = """
layout: max-power
format: 1
sources: {src: {power: 10 kW}}
elements:
  v1: {kind: attenuator, transmission: [0.2, 1.0]}
scanners:
  s1: {power: 500 W, max_power: 1 kW}
beamlines:
  - src -> v1 -> s1
"""


def test_max_power_caps_and_least_source_follows() -> None:
    # Hand calculation: s1 takes at most 1000 W, so the factor is 1000 / 500 = 2;
    # the least source power for 1000 W is 1000 W with v1 at full transmission.
    plan = plan_of(MAX_POWER)
    assert plan.headroom_factor == pytest.approx(2.0, rel=RTOL)
    assert plan.source_used_w == pytest.approx(1000.0, rel=RTOL)
    assert plan.element("v1").setting == pytest.approx(1.0, rel=RTOL)


# -- a tree of adjustable splitters --------------------------------------------------

TREE = """
layout: tree
format: 1
sources: {src: {power: 10 kW}}
elements:
  t1: {kind: splitter, outputs: {a: {efficiency: 0.95}, b: {efficiency: 0.9}}}
  m1: {kind: mirror, reflectivity: 0.8}
  t2: {kind: splitter, outputs: {c: {}, d: {efficiency: 0.8}}}
scanners:
  s1: {power: 760 W}
  s2: {power: 900 W}
  s3: {power: 720 W}
beamlines:
  - src -> t1
  - t1.a -> m1 -> s1
  - t1.b -> t2
  - t2.c -> s2
  - t2.d -> s3
"""
# Path gains: s1 0.95 × 0.8 = 0.76; s2 0.9 × 1.0 = 0.9; s3 0.9 × 0.8 = 0.72.
GAINS = {"s1": 0.76, "s2": 0.9, "s3": 0.72}
NEEDS = {"s1": 760.0, "s2": 900.0, "s3": 720.0}


def test_tree_path_gains() -> None:
    # Hand calculation: the products of gains listed above.
    net = network_of(TREE)
    for sid, gain in GAINS.items():
        assert net.path_gain(sid) == pytest.approx(gain, rel=1e-12)


@pytest.mark.parametrize("solver", ["highs", "cbc"])
def test_tree_factor_is_power_over_sum_of_need_over_gain(solver: str) -> None:
    # Hand calculation: with free splitters every watt can go anywhere, so at a
    # common factor t scanner j costs t × need_j / gain_j of source power:
    # t × (760/0.76 + 900/0.9 + 720/0.72) = t × 3000 W = 10 000 W → t = 10/3.
    # Max-min fair: no scanner can rise without another falling, so all three sit
    # at 10/3: s1 2533.33 W, s2 3000 W, s3 2400 W.
    plan = plan_of(TREE, solver=solver)
    rtol = RTOL if solver == "highs" else 1e-5
    t = 10000.0 / sum(NEEDS[j] / GAINS[j] for j in NEEDS)
    assert t == pytest.approx(10.0 / 3.0, rel=1e-12)
    assert plan.headroom_factor == pytest.approx(t, rel=rtol)
    for sid, got in delivered(plan).items():
        assert got == pytest.approx(t * NEEDS[sid], rel=rtol)


def test_tree_price_of_source_power_by_finite_difference() -> None:
    # Hand calculation: t = P / 3000 W, so dt/dP = 1/3000 per W. The finite
    # difference (P + 10 W) must agree with the reported price.
    plan = plan_of(TREE)
    reported = price(plan, "available", "src")
    assert reported == pytest.approx(1.0 / 3000.0, rel=1e-6)
    more = plan_of(TREE.replace("10 kW", "10010 W"))
    assert (more.headroom_factor - plan.headroom_factor) / 10.0 == pytest.approx(reported,
                                                                                 rel=1e-6)


def test_tree_min_source_and_price_of_a_need() -> None:
    # Hand calculation: least source = Σ need_j / gain_j = 1000 + 1000 + 1000 =
    # 3000 W. Each more watt needed at j costs 1 / gain_j W of source:
    # s1 1/0.76 = 1.3158, s2 1/0.9 = 1.1111, s3 1/0.72 = 1.3889.
    plan = plan_of(TREE, goal="min-source")
    assert plan.status == "met"
    assert plan.source_used_w == pytest.approx(3000.0, rel=RTOL)
    for sid, gain in GAINS.items():
        assert price(plan, "demand", sid) == pytest.approx(1.0 / gain, rel=1e-9)


def test_tree_min_source_price_by_finite_difference() -> None:
    # Hand calculation: needing 10 W more at s3 costs 10 / 0.72 = 13.889 W more source.
    base = plan_of(TREE, goal="min-source")
    more = plan_of(TREE.replace("s3: {power: 720 W}", "s3: {power: 730 W}"), goal="min-source")
    assert more.source_used_w - base.source_used_w == pytest.approx(10.0 / 0.72, rel=1e-6)


# -- a heat limit that binds -------------------------------------------------------------

HEAT = """
layout: heat
format: 1
sources: {src: {power: 10 kW}}
elements:
  t1: {kind: splitter, outputs: {a: {}, b: {}}}
  m1: {kind: mirror, reflectivity: 0.9, heat_limit: LIMIT W}
scanners:
  s1: {power: 500 W}
  s2: {power: 1000 W}
beamlines:
  - src -> t1
  - t1.a -> m1 -> s1
  - t1.b -> s2
"""


def heat(limit_w: float) -> str:
    return HEAT.replace("LIMIT", repr(limit_w))


def test_binding_heat_limit_by_hand() -> None:
    # Hand calculation: without the limit t = 10 000 / (500/0.9 + 1000) = 6.43 and
    # m1 would absorb 0.1 × 3571 W = 357 W. With heat_limit 100 W: m1 takes at most
    # 100 / (1 − 0.9) = 1000 W, so s1 gets at most 900 W: level 1.8 — the common
    # factor (s2 needs only 1800 W of the 9000 W left). Then s2 alone rises to
    # 10 000 − 1000 = 9000 W, level 9.0; m1 absorbs exactly 100 W.
    plan = plan_of(heat(100.0))
    got = delivered(plan)
    assert plan.headroom_factor == pytest.approx(1.8, rel=RTOL)
    assert got["s1"] == pytest.approx(900.0, rel=RTOL)
    assert got["s2"] == pytest.approx(9000.0, rel=RTOL)
    assert plan.element("m1").absorbed_w == pytest.approx(100.0, rel=RTOL)
    assert plan.source_used_w == pytest.approx(10000.0, rel=RTOL)


def test_heat_limit_shadow_price_by_finite_difference() -> None:
    # Hand calculation: t = (H / 0.1) × 0.9 / 500 W = 0.018 H, so dt/dH = 0.018
    # per W. Finite difference: re-plan with H + 1 W (101 W → t = 1.818).
    delta = 1.0
    base = plan_of(heat(100.0))
    raised = plan_of(heat(100.0 + delta))
    reported = price(base, "heat", "m1")
    assert reported == pytest.approx(0.018, rel=1e-6)
    assert raised.headroom_factor == pytest.approx(1.818, rel=RTOL)
    assert (raised.headroom_factor - base.headroom_factor) / delta == pytest.approx(
        reported, rel=1e-6)


def test_a_lossier_mirror_can_raise_the_headroom_factor() -> None:
    # Hand calculation (why test_properties only lowers reflectivities in layouts
    # without heat limits and max_power): fixed 50/50 splits, P drawn from 20 kW.
    # m2 (R 0.9, heat 10 W) takes at most 100 W = 0.25 × R × P, so P ≤ 400 / R.
    # s1 = 0.9 × 0.25 R P, s2 = 0.25 R P (both ≤ 90 W, 100 W: levels ≤ 1.8, 2.0);
    # s3 = 0.5 P ≤ 200 / R W, level 0.2 / R. The factor is 0.2 / R: with m1 at
    # R = 0.9 it is 0.2222; at R = 0.6 it is 0.3333 — lower reflectivity, more
    # headroom, because less of the source reaches the heat-limited m2.
    layout = """
layout: lossy
format: 1
sources: {src: {power: 20 kW}}
elements:
  t1: {kind: splitter, outputs: {a: {fraction: 0.5}, b: {fraction: 0.5}}}
  m1: {kind: mirror, reflectivity: R}
  t2: {kind: splitter, outputs: {c: {fraction: 0.5}, d: {fraction: 0.5}}}
  m2: {kind: mirror, reflectivity: 0.9, heat_limit: 10 W}
scanners:
  s1: {power: 50 W}
  s2: {power: 50 W}
  s3: {power: 1000 W}
beamlines:
  - src -> t1
  - t1.a -> m1 -> t2
  - t2.c -> m2 -> s1
  - t2.d -> s2
  - t1.b -> s3
"""
    high = plan_of(layout.replace("R}", "0.9}"))
    low = plan_of(layout.replace("R}", "0.6}"))
    assert high.headroom_factor == pytest.approx(0.2 / 0.9, rel=RTOL)
    assert low.headroom_factor == pytest.approx(0.2 / 0.6, rel=RTOL)


# -- regressions: bugs these tests found, fixed since -----------------------------------

ZERO_INFLOW = """
layout: zero-inflow
format: 1
sources: {src: {power: 1000 W}}
elements:
  t1: {kind: splitter, outputs: {o1: {}, o2: {}}}
  t2: {kind: splitter, outputs: {o1: {efficiency: 0.8, fraction: [0, 0.5]}, o2: {efficiency: 0.8}}}
scanners:
  s1: {power: 1000 W}
  s2: {power: 100 W}
  s3: {power: 100 W}
beamlines:
  - src -> t1
  - t1.o1 -> s1
  - t1.o2 -> t2
  - t2.o1 -> s2
  - t2.o2 -> s3
"""


def test_zero_inflow_splitter_plan() -> None:
    # Hand calculation: the needs (1200 W + losses) exceed 1000 W, so min-source goes
    # elastic and minimises the total shortfall. A watt sent to s1 cuts it by 1 W, a
    # watt through t2 by only 0.8 W: all 1000 W go to s1 (met), s2 and s3 get 0 W
    # (short by 100 W each) and t2 carries nothing.
    # Regression: at 4d5b04a result.propagate gave the unlit t2 the setting
    # (1.0, 0.0), outside o1's [0, 0.5], and verify() raised InternalError; fixed
    # since by _idle_fractions (below 1 nW a splitter is idle); for ~1e-8 W of
    # input see test_crosscheck's test_nearly_idle_splitter_passes_its_own_check.
    plan = plan_of(ZERO_INFLOW, goal="min-source")
    got = delivered(plan)
    assert plan.status == "short"
    assert got["s1"] == pytest.approx(1000.0, rel=1e-6)
    assert got["s2"] == pytest.approx(0.0, abs=1e-6)
    assert got["s3"] == pytest.approx(0.0, abs=1e-6)
    setting = dict(plan.element("t2").setting)  # type: ignore[arg-type]
    assert 0.0 <= setting["o1"] <= 0.5


PRIORITY = """
layout: priority-refill
format: 1
sources: {src: {power: 1000 W}}
elements:
  t1: {kind: splitter, outputs: {o1: {}, o2: {}}}
scanners:
  s1: {power: 900 W}
  s2: {power: 1000 W, priority: 2}
beamlines:
  - src -> t1
  - t1.o1 -> s1
  - t1.o2 -> s2
"""


@pytest.mark.parametrize("solver", ["highs", "cbc"])
def test_priority_fully_served_tier_then_refill(solver: str) -> None:
    # Hand calculation: tier 1 (s1) is filled to its need, 900 W; tier 2 (s2) gets
    # the remaining 100 W (level 0.1); nothing is left to raise anyone further.
    # Regression: at 66934e6 s1 was held at 900 × (1 − freeze_slack) W, s2 took that
    # give too, and the refill of the served tier asked for t ≥ 1.0 again, which was
    # infeasible: InternalError "the LP stage 3 ended infeasible" (fixed in fd857f0).
    plan = plan_of(PRIORITY, goal="priority", solver=solver)
    got = delivered(plan)
    assert got["s1"] == pytest.approx(900.0, rel=1e-5)
    assert got["s2"] == pytest.approx(100.0, rel=1e-4)
