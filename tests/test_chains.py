"""The outages of one fixed-gain chain share a solve only where that is exact.

The reference is the same sweep with sharing off (every case solved on its
own): sharing may only save solves, never change a result.
"""

from __future__ import annotations

import importlib.util

import pytest

from beamplan.analyses.chains import chains, covered
from beamplan.analyses.outages import SweepReport, outage_cases, run_sweep
from beamplan.layout.loader import load_layout
from beamplan.network.graph import Network, build_network
from tests.conftest import ROOT, network_from_text

DEMOS = ["pilot-line", "two-bay", "coated-line", "overbooked"]

# A chain m1 -> m2 -> att behind a splitter output that must take 40-60 % of the beam.
FORCED = """\
layout: forced-chain
format: 1
sources:
  fel: {power: 10 kW}
elements:
  t: {kind: splitter, outputs: {a: {fraction: [0.4, 0.6]}, b: {fraction: [0.4, 0.6]}}}
  m1: {kind: mirror, reflectivity: 0.9, heat_limit: 100 W}
  m2: {kind: mirror, reflectivity: 0.9, heat_limit: 100 W}
  att: {kind: attenuator, transmission: [0.5, 1.0]}
scanners:
  litho-1: {power: 700 W}
  litho-2: {power: 3 kW}
beamlines:
  - fel -> t
  - t.a -> m1 -> m2 -> att -> litho-1
  - t.b -> litho-2
"""


def _campus(scanners: int) -> Network:
    spec = importlib.util.spec_from_file_location("campus", ROOT / "tests/perf/campus.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return network_from_text(module.campus_yaml(scanners), "campus.yaml")


def _same(shared: SweepReport, alone: SweepReport) -> None:
    assert [r.label for r in shared.results] == [r.label for r in alone.results]
    for a, b in zip(shared.results, alone.results, strict=True):
        assert a.kinds == b.kinds and a.cut_off == b.cut_off, a.label
        assert a.headroom_factor == pytest.approx(b.headroom_factor, rel=1e-9, abs=1e-12)
        assert a.delivered_w == pytest.approx(b.delivered_w, rel=1e-9, abs=1e-9), a.label
        assert dict(a.short).keys() == dict(b.short).keys(), a.label
        assert a.moves == b.moves, a.label


def test_a_bound_that_binds_is_not_shared() -> None:
    net = network_from_text(FORCED)
    assert chains(net) == {"m1": (1, 0), "m2": (1, 1), "att": (1, 2)}
    shared = run_sweep(net, outage_cases(net))
    alone = run_sweep(net, outage_cases(net), share=False)
    _same(shared, alone)
    by = {r.label: r for r in shared.results}
    # Hand calculation: with m1 out its heat limit goes and 60 % of 10 kW reaches litho-2;
    # with m2 out, m1 still takes at least 40 % of the beam and absorbs 10 % of it, so its
    # 100 W limit caps the beam at 100 / 0.1 / 0.4 = 2.5 kW: litho-2 gets 0.6 x 2.5 kW.
    assert by["m1"].delivered_w == pytest.approx(6000.0, rel=1e-9)
    assert by["m2"].delivered_w == pytest.approx(1500.0, rel=1e-9)
    assert by["m1"].same_as == () and by["m2"].same_as == ()  # the bound bound: solved
    # m2's own limit, 100 W / (0.1 x 0.9) = 1.11 kW, stays above the 1 kW m1 allows: shared.
    assert by["att"].same_as == ("m2",)
    assert shared.distinct == alone.distinct - 1 == len(alone.results) - 1


@pytest.mark.parametrize("name", DEMOS)
def test_sharing_changes_no_result_on_the_demos(name: str) -> None:
    net = build_network(load_layout(f"layouts/{name}.yaml"))
    cases = outage_cases(net)
    _same(run_sweep(net, cases), run_sweep(net, cases, share=False))


def test_sharing_on_a_campus_saves_solves_and_changes_nothing() -> None:
    net = _campus(20)
    cases = outage_cases(net)
    shared, alone = run_sweep(net, cases), run_sweep(net, cases, share=False)
    _same(shared, alone)
    # Each scanner branch is a chain of 8 fixed-gain elements and an attenuator
    # (tests/perf/campus.py): at most one solve per branch where the bounds allow.
    assert alone.distinct == len(cases)
    assert shared.distinct <= len(cases) - 20 * 8


def test_covered_needs_a_margin() -> None:
    assert covered(0.0, 0.0) and covered(1.0, 2.0)
    assert not covered(1.0, 1.0) and not covered(float("inf"), 5.0)  # a solve not optimal
    assert covered(float("inf"), float("inf"))  # no bound between: the very same LP


@pytest.mark.parametrize("name", DEMOS)
def test_the_case_network_of_an_outage_is_the_rebuilt_one(name: str) -> None:
    # Reference: Network.with_nodes, which the live model's faster copy stands in for.
    from beamplan.network.behaviour import out_of_service
    from beamplan.optimise.live import LiveModel

    net = build_network(load_layout(f"layouts/{name}.yaml"))
    live = LiveModel(net)
    for node in net.nodes:
        changed = {node.id: out_of_service(node)}
        with live.outage([node.id]) as ours:
            theirs = net.with_nodes(changed)
            assert ours == theirs and ours.node == theirs.node, node.id
            for family in ("sources", "scanners", "elements"):
                assert getattr(ours, family) == getattr(theirs, family), (node.id, family)
            assert ours.in_links is net.in_links and ours.out_link is net.out_link
