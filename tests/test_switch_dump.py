"""A switch stops the inputs it does not select on its beam stop, binding nothing upstream.

Regression: with ``select`` written as an upper bound 0 on the deselected input
(and chains contracted), a fixed splitter share feeding that input forced the
whole splitter, and the scanners on its other outputs, to zero.
"""

from __future__ import annotations

import json
from dataclasses import replace

import pytest

import beamplan
from beamplan.analyses.outages import run_sweep
from beamplan.cli.main import main
from beamplan.layout.loader import load_layout
from beamplan.network.graph import build_network
from beamplan.optimise.live import LiveModel
from tests.conftest import layout_from_text

LAYOUT = """\
layout: hypothesis
format: 1
sources:
  src-a: {power: 1000.0 W}
  src-b: {power: 1000.0 W}
elements:
  m01: {kind: mirror, reflectivity: 0.5}
  m02: {kind: mirror, reflectivity: 0.5}
  m03: {kind: mirror, reflectivity: 0.5}
  t01: {kind: splitter, outputs: {o1: {}, o2: {fraction: [0.95, 0.95]}}}
  m04: {kind: mirror, reflectivity: 0.5}
  sw1: {kind: switch, select: m04}
  t02: {kind: splitter, outputs: {o1: {}, o2: {}}}
scanners:
  litho-01: {power: 50.0 W}
  litho-02: {power: 50.0 W}
  litho-03: {power: 50.0 W}
beamlines:
  - t01.o1 -> litho-03
  - t01.o2 -> m04 -> sw1
  - src-a -> m01 -> m02 -> m03 -> t01
  - src-b -> sw1
  - t02.o1 -> litho-01
  - t02.o2 -> litho-02
  - sw1 -> t02
"""

# Hand calculation: src-a at 1000 W through three mirrors of 0.5 gives 125 W at
# t01, whose o1 takes the 5 % left by o2's fixed 95 %: 6.25 W for litho-03.
LITHO_03_W = 1000.0 * 0.5**3 * 0.05


def _switched_layout():  # type: ignore[no-untyped-def]
    layout = layout_from_text(LAYOUT)
    return replace(layout, elements=tuple(
        replace(e, select="src-b") if e.id == "sw1" else
        replace(e, in_use=False) if e.id == "m04" else e for e in layout.elements))


def test_a_plan_feeds_the_other_output_of_a_splitter_behind_a_deselected_input() -> None:
    plan = beamplan.plan(build_network(_switched_layout()))
    assert plan.scanner("litho-03").delivered_w == pytest.approx(LITHO_03_W, rel=1e-6)
    # src-b through sw1 (gain 1) split over two scanners: 500 W each (hand calculation).
    assert plan.scanner("litho-01").delivered_w == pytest.approx(500.0, rel=1e-6)
    sources = {s.id: s.output_w for s in plan.sources}
    assert sources["src-a"] == pytest.approx(1000.0, rel=1e-6)  # the factor needs it all
    # m04 is out of service: what reaches it (950 × 0.125 = 118.75 W) is dumped there;
    # nothing reaches sw1 on its deselected input, so it dumps nothing itself.
    assert plan.element("sw1").dumped_w == pytest.approx(0.0, abs=1e-9)
    assert plan.losses.residual_w == pytest.approx(0.0, abs=1e-6)


def test_deselected_power_is_dumped_at_the_switch() -> None:
    # m04 in service but deselected: its output (1000 × 0.125 × 0.95 × 0.5 =
    # 59.375 W, hand calculation) ends on sw1's beam stop, counted as dumped.
    layout = _switched_layout()
    layout = replace(layout, elements=tuple(replace(e, in_use=True) if e.id == "m04"
                                            else e for e in layout.elements))
    plan = beamplan.plan(build_network(layout))
    sw1 = plan.element("sw1")
    assert sw1.dumped_w == pytest.approx(59.375, rel=1e-6)
    assert sw1.absorbed_w == pytest.approx(0.0, abs=1e-9)  # a lossless switch
    assert sw1.output_w == pytest.approx(1000.0, rel=1e-6)  # all of src-b
    assert plan.scanner("litho-03").delivered_w == pytest.approx(LITHO_03_W, rel=1e-6)
    assert plan.losses.dumped_w == pytest.approx(59.375, rel=1e-6)
    assert plan.losses.residual_w == pytest.approx(0.0, abs=1e-6)


def test_a_case_feeds_litho_03(tmp_path, capsys) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "switch.yaml"
    path.write_text(LAYOUT)
    assert main(["cases", str(path), "--fail", "m04", "--set", "sw1.select=src-b",
                 "--json", "-"]) == 3  # exit 3: scanners short
    doc = json.loads(capsys.readouterr().out)
    [case] = doc["cases"]
    got = {s["id"]: s["delivered_w"] for s in case["scanners"]}
    assert got["litho-03"] == pytest.approx(LITHO_03_W, rel=1e-6)


def test_a_sweep_after_switching_feeds_litho_03() -> None:
    net = build_network(layout_from_text(LAYOUT))
    report = run_sweep(net, [("m04",)])
    assert report.disagreements == ()
    [result] = report.results
    assert [m.label for m in result.moves] == ["sw1: m04 -> src-b"]
    assert "litho-03" not in result.cut_off
    assert "litho-03" not in report.single_points.get("m04", ())
    live = LiveModel(net)
    with live.outage(["m04"]), live.switched({"sw1": "src-b"}):
        summary = live.summary("headroom")
    assert summary.delivered_w["litho-03"] == pytest.approx(LITHO_03_W, rel=1e-6)


def test_the_standby_source_of_two_bay_is_off_and_on_standby() -> None:
    # two-bay: fel-standby sits behind sw-source's deselected input (hand reading).
    plan = beamplan.plan(build_network(load_layout("layouts/two-bay.yaml")))
    standby = next(s for s in plan.sources if s.id == "fel-standby")
    assert standby.standby and standby.output_w == 0.0
    assert plan.element("sw-source").dumped_w == 0.0


def test_sizing_serves_litho_03_through_the_splitter_behind_the_deselected_input() -> None:
    from beamplan.optimise.planner import plan_network
    from beamplan.optimise.sizing import size_network

    layout = layout_from_text(LAYOUT)
    layout = replace(layout, elements=tuple(replace(e, select="src-b") if e.id == "sw1"
                                            else e for e in layout.elements))
    net = build_network(layout)
    sizing = size_network(net, plan_network(net))
    assert sizing.short == ("litho-03",) and sizing.unreachable == ()
    # Hand calculation: litho-03 gets 0.5**3 × 0.05 of src-a, so 50 W takes
    # 8000 W there: 7000 W more than its 1000 W.
    assert sizing.source.closes
    assert dict(sizing.source.parts)["src-a"] == pytest.approx(7000.0, rel=1e-6)


LOSSY = LAYOUT.replace("sw1: {kind: switch, select: m04}",
                       "sw1: {kind: switch, select: m04, efficiency: 0.8, heat_limit: 30 W}")


@pytest.mark.parametrize("failed", [[], ["m04"], ["m02"], ["sw1"], ["src-b"]])
def test_moving_a_lossy_heat_limited_switch_in_place_equals_a_rebuilt_layout(
        failed: list[str]) -> None:
    # Reference: the layout rebuilt with select moved (through the loader and LP
    # builder); the heat row counts (1 - efficiency) × the selected input only.
    layout = layout_from_text(LOSSY)
    live = LiveModel(build_network(layout))
    for choice in ("src-b", "m04"):
        with live.outage(failed), live.switched({"sw1": choice}):
            fast = live.plan("headroom")
        slow_layout = replace(layout, elements=tuple(
            replace(e, select=choice) if e.id == "sw1" else e for e in layout.elements))
        slow_layout = replace(slow_layout, **{group: tuple(
            replace(x, in_use=False) if x.id in failed else x
            for x in getattr(slow_layout, group)) for group in ("sources", "elements")})
        slow = beamplan.plan(build_network(slow_layout))
        assert fast.headroom_factor == pytest.approx(slow.headroom_factor, rel=1e-6, abs=1e-9)
        for a, b in zip(fast.scanners, slow.scanners, strict=True):
            assert a.delivered_w == pytest.approx(b.delivered_w, rel=1e-6, abs=1e-6), choice
        sw = fast.element("sw1")
        if "sw1" not in failed:
            assert sw.absorbed_w <= 30.0 * (1 + 1e-6)
    restored = live.plan("headroom")
    assert restored.headroom_factor == pytest.approx(beamplan.plan(layout).headroom_factor,
                                                     rel=1e-9)
