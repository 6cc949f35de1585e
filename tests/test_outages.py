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
    """The layout rebuilt with one node's in_use set to false (the slow way)."""
    def off(group):  # type: ignore[no-untyped-def]
        return tuple(replace(x, in_use=False) if x.id == node_id else x for x in group)
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


def _switched(layout, positions):  # type: ignore[no-untyped-def]
    """The layout rebuilt with switches set to other inputs (the slow way)."""
    return replace(layout, elements=tuple(
        replace(e, select=positions[e.id]) if e.id in positions else e
        for e in layout.elements))


def _same_plan(fast, slow, label):  # type: ignore[no-untyped-def]
    assert fast.headroom_factor == pytest.approx(slow.headroom_factor, rel=1e-6, abs=1e-9)
    for a, b in zip(fast.scanners, slow.scanners, strict=True):
        assert a.delivered_w == pytest.approx(b.delivered_w, rel=1e-6, abs=1e-6), label
    for a, b in zip(fast.sources, slow.sources, strict=True):
        assert a.output_w == pytest.approx(b.output_w, rel=1e-6, abs=1e-6), label


@pytest.mark.parametrize("name", ["two-bay", "seven-switches"])
def test_in_place_switching_equals_a_rebuilt_layout(name: str) -> None:
    # Reference: the layout rebuilt with 'select' changed (and the node out of
    # service), through the loader and the LP builder; every outage, every
    # other position of each switch.
    layout = (load_layout(f"layouts/{name}.yaml") if name == "two-bay"
              else layout_from_text(SEVEN_SWITCHES))
    live = LiveModel(build_network(layout))
    assert live.switches
    every = [None, *layout.node_ids] if name == "two-bay" else [None, "main", "ms", "sw3"]
    for node_id in every:
        failed = [node_id] if node_id else []
        for switch, inputs in live.switches.items():
            for choice in inputs[1:]:
                with live.outage(failed), live.switched({switch: choice}):
                    fast = live.plan("headroom")
                slow_layout = _switched(layout, {switch: choice})
                if node_id:
                    slow_layout = _out_of_service(slow_layout, node_id)
                slow = beamplan.plan(build_network(slow_layout))
                _same_plan(fast, slow, (node_id, switch, choice))
    _same_plan(live.plan("headroom"), beamplan.plan(layout), "restored")


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
    # Both views: dominators with the switches where they are against the
    # re-plans at failure, and dominators with any switch position against the
    # re-plans after corrective switching.
    net = build_network(load_layout(f"layouts/{name}.yaml"))
    report = run_sweep(net, outage_cases(net))
    assert report.disagreements == ()
    assert report.finished == report.total_cases == len(net.nodes)
    for r in report.results:
        assert set(r.cut_off) == set(report.single_points.get(r.failed[0], ())), r.label
        assert set(r.at_failure.cut_off) == set(
            report.single_points_at_failure.get(r.failed[0], ())), r.label


def test_the_standby_source_takes_over_after_switching() -> None:
    # two-bay (hand reading of the layout): fel-main, its folds and its tunnel
    # are single points of failure only while sw-source stays on src-tunnel;
    # after switching to sb-drift, fel-standby (4 kW) serves all twelve
    # scanners, short (5.06 kW of need) but none cut off. The switch itself and
    # everything after it stay single points of failure.
    net = build_network(load_layout("layouts/two-bay.yaml"))
    report = run_sweep(net, outage_cases(net))
    assert report.switch_search == "exhaustive"
    main_line = {"fel-main", "src-fold-1", "src-fold-2", "src-tunnel"}
    assert main_line <= set(report.single_points_at_failure)
    assert not main_line & set(report.single_points)
    assert len(report.single_points["sw-source"]) == 12
    by_label = {r.label: r for r in report.results}
    for node_id in main_line:
        r = by_label[node_id]
        assert [m.label for m in r.moves] == ["sw-source: src-tunnel -> sb-drift"]
        assert len(r.at_failure.cut_off) == 12 and r.cut_off == ()
        assert r.source_used_w == pytest.approx(4000.0, rel=1e-6)  # the standby, fully drawn
    assert by_label["an-fold"].moves == () and by_label["an-fold"].tried == 1
    # No switch can help a failure in a bay: the search tries the one other
    # position and keeps the switch where it is.
    assert by_label["sw-source"].tried == 0  # a failed switch is not moved


SEVEN_SWITCHES = """\
layout: seven-switches
format: 1
wavelength: 13.5 nm
sources:
  main: {power: 7 kW}
  spare: {power: 7 kW}
elements:
  ms: {kind: splitter, outputs: {o1: {}, o2: {}, o3: {}, o4: {}, o5: {}, o6: {}, o7: {}}}
  ss: {kind: splitter, outputs: {o1: {}, o2: {}, o3: {}, o4: {}, o5: {}, o6: {}, o7: {}}}
""" + "".join(f"  sw{i}: {{kind: switch, select: ms}}\n" for i in range(1, 8)) + """\
scanners:
""" + "".join(f"  s{i}: {{power: 500 W}}\n" for i in range(1, 8)) + """\
beamlines:
  - main -> ms
  - spare -> ss
""" + "".join(f"  - ms.o{i} -> sw{i} -> s{i}\n  - ss.o{i} -> sw{i}\n" for i in range(1, 8))


def test_many_switches_are_searched_greedily() -> None:
    # Seven two-way switches: 2**7 = 128 combinations, above the 64 tried in
    # full, so the search is greedy. Losing 'main' (hand reasoning): every
    # switch must move to the spare line, one at a time, and then every
    # scanner is served again; a splitter of the main line only needs the
    # spare for all seven as well.
    net = build_network(layout_from_text(SEVEN_SWITCHES))
    report = run_sweep(net, outage_cases(net, ids=["main", "ms", "sw3", "s2"]))
    assert report.switch_search == "greedy"
    assert report.disagreements == ()
    by_label = {r.label: r for r in report.results}
    for node_id in ("main", "ms"):
        r = by_label[node_id]
        assert len(r.at_failure.cut_off) == 7 and r.cut_off == () and r.status == "met"
        assert sorted(m.label for m in r.moves) == [f"sw{i}: ms -> ss" for i in range(1, 8)]
    # Losing sw3 cuts s3 off; the other six share 'main' (7 kW / 6 each, factor
    # 2.33). Greedy moves one switch at a time while the lowest factor rises:
    # 1 on the spare (min 7/5 kW), 2 (7/4 kW), 3 of the six (7/3 kW each, factor
    # 4.67); a fourth would leave two on main at 3.5 kW but four on the spare at
    # 1.75 kW, so it stops (hand calculation).
    r = by_label["sw3"]
    assert r.cut_off == ("s3",) and len(r.moves) == 3
    assert r.at_failure.headroom_factor == 0.0 and r.headroom_factor == 0.0  # s3 cut off
    assert r.at_failure.served_factor == pytest.approx(7000 / 6 / 500, rel=1e-6)
    assert r.after.served_factor == pytest.approx(7000 / 3 / 500, rel=1e-6)
    assert by_label["s2"].moves == () and by_label["s2"].tried == 0  # nobody worse off
    assert "main" not in report.single_points and "main" in report.single_points_at_failure


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
