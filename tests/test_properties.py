"""Properties of beamplan's plans on random layouts (hypothesis).

* Power conservation: the sources' output equals delivered + absorbed + dumped
  (1e-9 relative), each element's incident power equals absorbed + dumped +
  output (dumped: what a switch's deselected inputs bring to its beam stop), and
  every node's incident power equals what its links bring, re-computed here from
  the reported outputs and splitter settings; every limit holds.
* Monotonicity of the best common headroom factor t (the lowest delivered ÷
  need, which goal headroom maximises first):
  - more source power never lowers t (the old allocation stays feasible);
  - a lower reflectivity on one mirror never raises t when nothing downstream of
    it has a heat limit or max_power (for one setting of the adjustables every
    delivery falls with the reflectivity; test_analytic shows that with a heat
    limit downstream a lossier mirror CAN raise t);
  - dropping a scanner (its feed sent to a dump) never lowers the factor of the
    others (the old allocation stays feasible). The stronger "never lowers any
    other scanner's level" is not true of max-min fair allocations in general
    (freeing a scanner can let a neighbour rise and crowd out a third), so it is
    not tested.
  - scaling every need by k scales every level by 1/k (the LP is homogeneous in
    the needs; max_power and heat limits are in W and stay put, so this holds
    exactly only without them — they are removed first).
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from layoutgen import LayoutSpec, layout_specs
from test_crosscheck import abs_w, network_of, plan_of

from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network
from beamplan.optimise.result import Plan

CONSERVATION_RTOL = 1e-9
LIMIT_RTOL = 1e-6
FACTOR_RTOL = 1e-7

PROPERTY = settings(max_examples=40, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])


def planned(net: Network, goal: str = "headroom") -> Plan:
    """beamplan's plan (HiGHS)."""
    return plan_of(net, goal)


def factor_tolerance(net: Network) -> float:
    # Common practice, no source: the factor is good to 1e-7 relative, or to the
    # power-scaled floor of test_crosscheck (HiGHS stops early on tiny factors).
    return abs_w(net, "highs") / max(s.need_w for s in net.scanners)


# -- conservation ------------------------------------------------------------------


def sent(net: Network, plan: Plan, tail: str, port: str | None) -> float:
    """The power a node sends down one of its links, from the reported plan."""
    node = net.node[tail]
    if node.is_source:
        return next(s.output_w for s in plan.sources if s.id == tail)
    element = plan.element(tail)
    if node.behaviour is Behaviour.SPLIT:
        assert isinstance(element.setting, tuple)
        fraction = dict(element.setting)[str(port)]
        efficiency = next(p.efficiency for p in node.ports if p.name == port)
        return efficiency * fraction * element.incident_w
    return element.output_w


def check_conservation(net: Network, plan: Plan) -> None:
    # Expected: conservation of energy (common practice, no source); every watt
    # drawn is delivered, absorbed by an element, or dumped.
    total = sum(s.output_w for s in plan.sources)
    scale = max(total, 1.0)
    delivered = sum(s.delivered_w for s in plan.scanners)
    dumped = sum(e.absorbed_w for e in plan.elements if e.kind == "dump") + \
        sum(e.dumped_w for e in plan.elements)  # a switch's deselected inputs
    absorbed = sum(e.absorbed_w for e in plan.elements if e.kind != "dump")
    assert total == pytest.approx(delivered + absorbed + dumped, rel=0,
                                  abs=CONSERVATION_RTOL * scale)
    losses = plan.losses
    assert losses.delivered_w == pytest.approx(delivered, rel=0, abs=CONSERVATION_RTOL * scale)
    assert losses.absorbed_w + losses.dumped_w == pytest.approx(
        absorbed + dumped, rel=0, abs=CONSERVATION_RTOL * scale)
    for e in plan.elements:
        output = 0.0 if e.kind == "dump" else e.output_w
        assert e.incident_w == pytest.approx(e.absorbed_w + e.dumped_w + output, rel=0,
                                             abs=CONSERVATION_RTOL * scale), e.id
        node = net.node[e.id]
        if node.behaviour is Behaviour.COMBINE and node.select is not None:
            # A switch passes g × its selected input; the rest ends on its beam stop.
            chosen = sum(sent(net, plan, lk.tail, lk.port) for lk in net.in_links[e.id]
                         if lk.tail == node.select)
            assert e.dumped_w == pytest.approx(e.incident_w - chosen, rel=0,
                                               abs=CONSERVATION_RTOL * scale), e.id
            assert e.output_w == pytest.approx(node.gain_max * chosen, rel=0,
                                               abs=CONSERVATION_RTOL * scale), e.id
        else:
            assert e.dumped_w == 0.0, e.id
    incident = {s.id: s.delivered_w for s in plan.scanners}
    incident.update({e.id: e.incident_w for e in plan.elements})
    for node_id, got in incident.items():
        brought = sum(sent(net, plan, lk.tail, lk.port) for lk in net.in_links[node_id])
        assert got == pytest.approx(brought, rel=0, abs=CONSERVATION_RTOL * scale), node_id


def check_limits(net: Network, plan: Plan) -> None:
    # Expected: the layout's own limits (heat_limit, max_power, source power,
    # fraction and transmission ranges), each to 1e-6 relative.
    def within(value: float, low: float, high: float) -> bool:
        return low - LIMIT_RTOL * max(abs(low), 1.0) <= value <= \
            high + LIMIT_RTOL * max(abs(high), 1.0)

    for s in plan.sources:
        assert within(s.output_w, 0.0, s.available_w), s.id
    for sc in plan.scanners:
        if sc.max_w is not None:
            assert within(sc.delivered_w, 0.0, sc.max_w), sc.id
    for e in plan.elements:
        node = net.node[e.id]
        if node.heat_limit_w is not None:
            assert within(e.absorbed_w, 0.0, node.heat_limit_w), e.id
        if node.behaviour is Behaviour.SPLIT:
            assert isinstance(e.setting, tuple)
            fractions = dict(e.setting)
            assert sum(fractions.values()) == pytest.approx(1.0, rel=1e-9)
            for p in node.ports:
                assert within(fractions[str(p.name)], p.fraction_min, p.fraction_max), e.id
        if node.behaviour is Behaviour.RANGE:
            assert isinstance(e.setting, float)
            assert within(e.setting, node.gain_min, node.gain_max), e.id


@PROPERTY
@given(layout_specs(), st.sampled_from(["headroom", "min-source", "priority"]))
def test_power_is_conserved_and_limits_hold(spec: LayoutSpec, goal: str) -> None:
    net = network_of(spec.yaml())
    plan = planned(net, goal)
    check_conservation(net, plan)
    check_limits(net, plan)


# -- monotonicity ----------------------------------------------------------------------


@PROPERTY
@given(layout_specs(max_scanners=15), st.floats(1.05, 3.0))
def test_more_source_power_never_lowers_the_factor(spec: LayoutSpec, scale: float) -> None:
    # Expected: the allocation for less power stays feasible (common practice, no source).
    net = network_of(spec.yaml())
    base = planned(net).headroom_factor
    more = spec.copy()
    sid = next(iter(more.sources))
    more.sources[sid]["power"] = round(more.sources[sid]["power"] * scale, 1)
    raised = planned(network_of(more.yaml())).headroom_factor
    assert raised >= base * (1 - FACTOR_RTOL) - factor_tolerance(net)


@PROPERTY
@given(layout_specs(max_scanners=15), st.data())
def test_lower_reflectivity_never_raises_the_factor(spec: LayoutSpec, data: st.DataObject
                                                    ) -> None:
    # Expected: for fixed settings every delivery falls with the reflectivity, and
    # with no limits downstream every setting stays feasible (see the module doc).
    mirrors = spec.mirrors()
    assume(mirrors)
    mirror = data.draw(st.sampled_from(mirrors))
    free = spec.without_limits(keep=mirror)
    net = network_of(free.yaml())
    base = planned(net).headroom_factor
    lower = free.copy()
    r = lower.elements[mirror]["reflectivity"]
    lower.elements[mirror]["reflectivity"] = round(r * data.draw(st.floats(0.5, 0.99)), 3)
    lowered = planned(network_of(lower.yaml())).headroom_factor
    assert lowered <= base * (1 + FACTOR_RTOL) + factor_tolerance(net)


@PROPERTY
@given(layout_specs(max_scanners=15), st.data())
def test_dropping_a_scanner_never_lowers_the_others_factor(spec: LayoutSpec,
                                                           data: st.DataObject) -> None:
    # Expected: the old allocation, with the dropped scanner's power dumped, is still
    # feasible for the others (common practice, no source).
    assume(len(spec.scanners) >= 2)
    gone = data.draw(st.sampled_from(sorted(spec.scanners)))
    net = network_of(spec.yaml())
    base = planned(net).headroom_factor
    dropped = planned(network_of(spec.drop_scanner(gone).yaml()))
    assert all(s.id != gone for s in dropped.scanners)
    assert dropped.headroom_factor >= base * (1 - FACTOR_RTOL) - factor_tolerance(net)


@PROPERTY
@given(layout_specs(max_scanners=12), st.sampled_from([0.5, 2.0, 4.0]))
def test_scaling_needs_scales_levels(spec: LayoutSpec, k: float) -> None:
    # Expected: delivered_j ≥ t × need_j with needs k × need_j has the solution
    # t / k for the same powers, so every level divides by k (hand calculation).
    free = spec.without_limits()
    net = network_of(free.yaml())
    base = planned(net)
    scaled = free.copy()
    for s in scaled.scanners.values():
        s["power"] = s["power"] * k
    other = planned(network_of(scaled.yaml()))
    tolerance = factor_tolerance(net)
    for a, b in zip(base.scanners, other.scanners, strict=True):
        assert b.delivered_w / b.need_w == pytest.approx(
            a.delivered_w / a.need_w / k, rel=1e-6, abs=tolerance), a.id
