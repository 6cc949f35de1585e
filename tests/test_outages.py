"""Outage sweeps: in-place edits equal rebuilt layouts; dominators agree with re-plans."""

from __future__ import annotations

from dataclasses import replace

import pytest
from hypothesis import HealthCheck, given, settings

import beamplan
from beamplan.analyses.outages import outage_cases, run_sweep
from beamplan.layout.loader import load_layout
from beamplan.network.dominators import single_points_of_failure
from beamplan.network.graph import build_network
from beamplan.optimise.live import LiveModel
from tests.conftest import layout_from_text
from tests.layoutgen import layouts

DEMOS = ["pilot-line", "two-bay", "coated-line", "overbooked"]


def _out_of_service(layout, node_id):  # type: ignore[no-untyped-def]
    """The layout rebuilt with one node's in_service set to false (the slow way)."""
    def off(group):  # type: ignore[no-untyped-def]
        return tuple(replace(x, in_service=False) if x.id == node_id else x for x in group)
    return replace(layout, sources=off(layout.sources), elements=off(layout.elements),
                   scanners=off(layout.scanners))


@pytest.mark.parametrize("name", DEMOS)
def test_in_place_outage_equals_a_rebuilt_layout(name: str) -> None:
    # Reference: the same LP built from scratch for a layout with the node out of
    # service (an independent route through the loader and the LP builder).
    layout = load_layout(f"layouts/{name}.yaml")
    live = LiveModel(build_network(layout))
    for node_id in layout.node_ids:
        with live.outage([node_id]):
            fast = live.plan("headroom")
        slow = beamplan.plan(build_network(_out_of_service(layout, node_id)))
        assert fast.headroom_factor == pytest.approx(slow.headroom_factor, rel=1e-6, abs=1e-9)
        for a, b in zip(fast.scanners, slow.scanners, strict=True):
            assert a.delivered_w == pytest.approx(b.delivered_w, rel=1e-6, abs=1e-6), node_id
    base = live.plan("headroom")  # everything restored afterwards
    assert base.headroom_factor == pytest.approx(beamplan.plan(layout).headroom_factor,
                                                 rel=1e-9)


def test_an_element_on_the_only_path_cuts_the_scanner_off() -> None:
    # pilot-line: m3 is on litho-p2's only path (hand reading of the layout).
    net = build_network(load_layout("layouts/pilot-line.yaml"))
    report = run_sweep(net, [("m3",)])
    [result] = report.results
    assert result.cut_off == ("litho-p2",)
    assert dict((s, w) for s, _, w in result.losing)["litho-p2"] == 0.0
    assert report.single_points["m3"] == ("litho-p2",)


@pytest.mark.parametrize("name", DEMOS)
def test_single_points_of_failure_agree_with_the_replans(name: str) -> None:
    net = build_network(load_layout(f"layouts/{name}.yaml"))
    report = run_sweep(net, outage_cases(net))
    assert report.disagreements == ()
    assert report.finished == report.total_cases == len(net.nodes)


@settings(max_examples=25, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(layouts(max_scanners=8))
def test_single_points_of_failure_agree_on_random_layouts(text: str) -> None:
    # Independent check: dominators (graph theory) against LP re-plans.
    net = build_network(layout_from_text(text))
    report = run_sweep(net, outage_cases(net))
    assert report.disagreements == (), report.disagreements


def test_pairs_and_filters() -> None:
    net = build_network(load_layout("layouts/pilot-line.yaml"))
    assert outage_cases(net, kinds=["mirror"]) == [("m1",), ("m2",), ("m3",)]
    pairs = outage_cases(net, ids=["m1", "m2", "m3"], pairs=True)
    assert pairs == [("m1", "m2"), ("m1", "m3"), ("m2", "m3")]  # 3 choose 2
    with pytest.raises(ValueError, match="exceed the bound"):
        outage_cases(net, pairs=True, max_pairs=10)  # 11 choose 2 = 55 pairs
    with pytest.raises(ValueError, match="did you mean 'm1'"):
        outage_cases(net, ids=["m11"])


def test_sweep_runs_on_a_process_pool_and_agrees_with_in_process() -> None:
    from concurrent.futures import ProcessPoolExecutor

    net = build_network(load_layout("layouts/two-bay.yaml"))
    cases = outage_cases(net)
    here = run_sweep(net, cases, chunk_size=10)
    with ProcessPoolExecutor(2) as pool:
        there = run_sweep(net, cases, executor=pool, chunk_size=10)
    assert [r.label for r in here.results] == [r.label for r in there.results]
    for a, b in zip(here.results, there.results, strict=True):
        assert a.headroom_factor == pytest.approx(b.headroom_factor, rel=1e-9, abs=1e-12)


def test_dominators_include_the_source() -> None:
    spof = single_points_of_failure(build_network(load_layout("layouts/pilot-line.yaml")))
    assert set(spof["halo-fel"]) == {"litho-p1", "litho-p2", "litho-p3"}


@pytest.mark.parametrize("name", DEMOS)
def test_screening_gives_the_exact_lowest_factor_and_shortfalls(name: str) -> None:
    # Reference: the full progressive filling (goal headroom) on the same cases.
    net = build_network(load_layout(f"layouts/{name}.yaml"))
    cases = outage_cases(net)
    fast = {r.label: r for r in run_sweep(net, cases).results}
    exact = {r.label: r for r in run_sweep(net, cases, exact=True).results}
    assert fast.keys() == exact.keys()
    for label, r in exact.items():
        f = fast[label]
        assert f.headroom_factor == pytest.approx(r.headroom_factor, rel=1e-6, abs=1e-9), label
        assert dict(f.short).keys() == dict(r.short).keys(), label
        for sid, short in r.short:
            assert dict(f.short)[sid] == pytest.approx(short, rel=1e-6, abs=1e-6), label
        assert f.cut_off == r.cut_off, label
