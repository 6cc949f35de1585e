"""Useful ceilings, surplus modes, over-delivery reasons, wall-plug draw and magnitudes."""

from __future__ import annotations

import json
import pathlib

import pytest

import beamplan
from beamplan.cli.main import main
from beamplan.errors import LayoutError
from beamplan.physics.demand import ScannerTool, useful_ceiling_w

COATED = "layouts/coated-line.yaml"
TWO_BAY = "layouts/two-bay.yaml"

# One scanner by dose and wph (default tool) beside one given in watts.
SMALL = """\
layout: small
format: 1
sources: {src: {power: 3 kW, electrical: 4 MW, electrical_fixed: 1 MW{surplus}}}}}
elements:
  t1:
    kind: splitter
    outputs: {{a: {{fraction: [0.2, 0.8]}}, b: {{}}, c: {{fraction: [0, 0.5]}}}}
  att: {{kind: attenuator, transmission: [0.1, 1.0]}}
  d1: {{kind: dump}}
scanners:
  s1: {{dose: 30 mJ/cm^2, wph: 150{s1}}}
  s2: {{power: 200 W, max_power: 400 W}}
beamlines: ["src -> t1", "t1.a -> s1", "t1.b -> att -> s2", "t1.c -> d1"]
"""


def _small(tmp_path: pathlib.Path, surplus: str = "", s1: str = "") -> str:
    path = tmp_path / "small.yaml"
    text = SMALL.replace("{surplus}", surplus).replace("{s1}", s1)
    path.write_text(text.replace("{{", "{").replace("}}", "}"), encoding="utf-8")
    return str(path)


def _ceiling_default_tool() -> float:
    # Hand calculation (throughput model, shared/README.md): 300 J/m² × 0.026 m × 0.8 m/s
    # = 6.24 W at the wafer; ÷ (0.9 × 0.7^10 × 0.65 × 0.88²) = 487.6216 W at IF.
    return 487.6216494


def test_ceiling_bounds_a_dose_scanner(tmp_path: pathlib.Path) -> None:
    plan = beamplan.plan(_small(tmp_path))
    s1 = plan.scanner("s1")
    assert s1.useful_ceiling_w == pytest.approx(_ceiling_default_tool(), rel=1e-8)
    assert s1.delivered_w == pytest.approx(s1.useful_ceiling_w, rel=1e-6)
    assert plan.scanner("s2").delivered_w == pytest.approx(400.0, rel=1e-6)  # its max_power
    assert plan.scanner("s2").useful_ceiling_w is None  # given in watts: no ceiling
    # Both capped: the source is turned down, the rest left unused (hand calculation:
    # 487.62 W + 400 W / 0.1-1.0 attenuator at 1.0 = 887.62 W of 3 kW drawn).
    assert plan.source_used_w == pytest.approx(887.6216494, rel=1e-6)
    assert plan.unused_w == pytest.approx(3000 - 887.6216494, rel=1e-6)


def test_opt_out_and_lower_max_power(tmp_path: pathlib.Path) -> None:
    free = beamplan.plan(_small(tmp_path, s1=", cap_at_useful: false"))
    assert free.scanner("s1").delivered_w > 1000.0  # no ceiling: it takes the spare light
    lower = beamplan.plan(_small(tmp_path, s1=", max_power: 300 W"))
    assert lower.scanner("s1").delivered_w == pytest.approx(300.0, rel=1e-6)
    assert lower.scanner("s1").max_w == 300.0


def test_coated_line_litho_e1_stops_at_its_ceiling() -> None:
    plan = beamplan.plan(COATED)
    e1 = plan.scanner("litho-e1")
    # Hand calculation above: 30 mJ/cm² on the default-like full-field profile → 487.6 W.
    assert e1.useful_ceiling_w == pytest.approx(487.6216494, rel=1e-6)
    assert e1.delivered_w <= e1.useful_ceiling_w * (1 + 1e-6)
    assert e1.achieved_wph == pytest.approx(200.0, rel=1e-6)  # the stage limit still reached
    assert plan.losses.source_w == pytest.approx(
        plan.losses.delivered_w + plan.losses.absorbed_w + plan.losses.dumped_w, rel=1e-9)
    assert "useful ceiling" in e1.over_delivery_reason


@pytest.mark.parametrize("mode", ["turn-down", "dump", "attenuate"])
def test_surplus_modes_small(tmp_path: pathlib.Path, mode: str) -> None:
    plan = beamplan.plan(_small(tmp_path, surplus=f", surplus: {mode}"))
    base = beamplan.plan(_small(tmp_path))
    for s in plan.scanners:  # the scanners get exactly what the turned-down plan gives
        assert s.delivered_w == pytest.approx(base.scanner(s.id).delivered_w, rel=1e-7)
    loss = plan.losses
    assert loss.source_w == pytest.approx(loss.delivered_w + loss.absorbed_w + loss.dumped_w,
                                          rel=1e-9)
    assert plan.surplus_mode == mode
    if mode == "turn-down":
        assert plan.source_used_w == pytest.approx(base.source_used_w)
        assert plan.surplus_to == ()
    elif mode == "dump":
        # Hand calculation: output a keeps at least 20 %, and s1 is pinned at 487.62 W,
        # so the source gives at most 487.6216494 / 0.2 = 2438.108247 W; output c takes
        # up to 50 % of that: 1219.054124 W dumped (b keeps 731.4 W ≥ 400 W for s2).
        assert plan.source_used_w == pytest.approx(2438.108247, rel=1e-6)
        assert dict(plan.surplus_to)["d1"] == pytest.approx(1219.054124, rel=1e-6)
        assert loss.dumped_w == pytest.approx(1219.054124, rel=1e-6)
        assert plan.unused_w == pytest.approx(3000 - 2438.108247, rel=1e-6)
    else:
        # Hand calculation: the same 2438.108247 W at most; nothing dumped; output b
        # takes 2438.108 − 487.622 = 1950.486598 W and the attenuator passes 400 W of it
        # (transmission 0.205, within [0.1, 1]): 1550.486598 W absorbed as surplus.
        assert plan.source_used_w == pytest.approx(2438.108247, rel=1e-6)
        assert dict(plan.surplus_to)["att"] == pytest.approx(1550.486598, rel=1e-6)
        assert loss.dumped_w == pytest.approx(0.0, abs=1e-6)


def test_surplus_modes_coated_line(tmp_path: pathlib.Path) -> None:
    text = pathlib.Path(COATED).read_text(encoding="utf-8")
    att = tmp_path / "att.yaml"
    anchor = "    polarisation: 0.95"
    assert anchor in text
    att.write_text(text.replace(anchor, "    surplus: attenuate\n" + anchor), encoding="utf-8")
    plan = beamplan.plan(str(att))
    base = beamplan.plan(COATED)
    assert base.surplus_mode == "turn-down" and base.unused_w > 5000.0
    assert plan.source_used_w > base.source_used_w + 100.0  # a1 takes the surplus
    assert [eid for eid, _ in plan.surplus_to] == ["a1"]
    for s in plan.scanners:
        assert s.delivered_w == pytest.approx(base.scanner(s.id).delivered_w, rel=1e-7)
    dump = tmp_path / "dump.yaml"
    dump.write_text(text.replace(anchor, "    surplus: dump\n" + anchor), encoding="utf-8")
    with pytest.raises(LayoutError, match="no dump is reachable"):
        beamplan.plan(str(dump))  # coated-line has no dump


def test_over_delivery_two_bay_min_source() -> None:
    # The trunk's lower share bound forces more into bay A than its needs; where in
    # bay A the surplus lands is a tie between optima, so only bay A is asserted.
    plan = beamplan.plan(TWO_BAY, goal="min-source")
    over = [s for s in plan.scanners if s.headroom > 1e-6]
    assert over and max(s.headroom for s in over) > 0.25
    for s in over:
        assert s.id.startswith("litho-a"), s.id
        assert "trunk" in s.over_delivery_reason and "lower share bound" in s.over_delivery_reason
    met = [s for s in plan.scanners if s not in over]
    assert all(not s.over_delivery_reason for s in met)


FIXED = """\
layout: fixed
format: 1
sources: {src: {power: 2 kW}}
elements:
  t1: {kind: splitter, outputs: {a: {fraction: 0.5}, b: {}}}
scanners:
  s1: {power: 100 W}
  s2: {power: 600 W}
beamlines: ["src -> t1", "t1.a -> s1", "t1.b -> s2"]
"""


def test_over_delivery_fixed_split(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "fixed.yaml"
    path.write_text(FIXED, encoding="utf-8")
    plan = beamplan.plan(str(path), goal="min-source")
    # Hand calculation: s2 needs 600 W from a fixed 50 % split, so 1.2 kW in, 600 W to s1.
    assert plan.scanner("s1").delivered_w == pytest.approx(600.0, rel=1e-6)
    assert "fixed split" in plan.scanner("s1").over_delivery_reason
    assert plan.scanner("s2").over_delivery_reason == ""


def test_fully_drawn_source_is_binding() -> None:
    plan = beamplan.plan("layouts/pilot-line.yaml")
    assert plan.sources[0].output_w == pytest.approx(plan.sources[0].available_w)
    assert any(b.family == "available" and b.subject == "halo-fel" for b in plan.binding)
    from beamplan.network.graph import build_network
    from beamplan.report.diagram import diagram_model

    network = build_network(beamplan.load("layouts/pilot-line.yaml"))
    model = diagram_model(network, beamplan.plan(network))
    assert "all power drawn" in model.boxes["halo-fel"].binds


def test_electrical_draw_follows_the_output(tmp_path: pathlib.Path) -> None:
    plan = beamplan.plan(_small(tmp_path))
    # Hand calculation: 1 MW fixed + (4 − 1) MW / 3 kW = 1000 W per W × 887.62 W
    # = 1.88762 MW at the planned output, not the 4 MW rating.
    assert plan.electrical_w == pytest.approx(1e6 + 1000.0 * 887.6216494, rel=1e-6)
    assert plan.electrical_per_delivered == pytest.approx(plan.electrical_w / plan.delivered_w)


@pytest.mark.parametrize(("keys", "words"), [
    ("electrical: 0 W", "must be above 0"),
    ("electrical: 1 kW", "below the EUV power"),
    ("electrical: 1 MW, electrical_fixed: 2 MW", "above the draw at full output"),
    ("electrical_fixed: 2 MW", "needs 'electrical'"),
    ("electrical: 5 MW, electrical_per_euv_watt: 500", "not both"),
    ("surplus: spill", "give one of turn-down, dump, attenuate"),
])
def test_electrical_and_surplus_keys_are_checked(tmp_path: pathlib.Path,
                                                 capsys: pytest.CaptureFixture[str],
                                                 keys: str, words: str) -> None:
    path = tmp_path / "bad.yaml"
    path.write_text(f"layout: bad\nformat: 1\nsources: {{src: {{power: 3 kW, {keys}}}}}\n"
                    "scanners: {s1: {power: 100 W}}\nbeamlines: ['src -> s1']\n",
                    encoding="utf-8")
    assert main(["check", str(path)]) == 1
    err = capsys.readouterr().err
    assert words in err and f"{path}:3:" in err and "Traceback" not in err


def test_electrical_per_euv_watt(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "pw.yaml"
    path.write_text("layout: pw\nformat: 1\nsources: {src: {power: 10 kW, electrical_fixed: "
                    "2 MW, electrical_per_euv_watt: 500}}\nscanners: {s1: {power: 100 W, "
                    "max_power: 100 W}}\nbeamlines: ['src -> s1']\n", encoding="utf-8")
    plan = beamplan.plan(str(path))
    # Hand calculation: 2 MW + 500 × 100 W = 2.05 MW; full output 2 MW + 5 MW = 7 MW.
    assert plan.electrical_w == pytest.approx(2.05e6, rel=1e-9)
    assert plan.sources[0].electrical_full_w == pytest.approx(7e6, rel=1e-12)


@pytest.mark.parametrize(("source", "need"), [
    ("1 kW", "1 nW"), ("1 kW", "1e-12 W"), ("1 kW", "1e15 W"), ("2.5e26 W", "100 W")])
def test_magnitudes_refused_before_solving(tmp_path: pathlib.Path,
                                           capsys: pytest.CaptureFixture[str],
                                           source: str, need: str) -> None:
    path = tmp_path / "mag.yaml"
    path.write_text(f"layout: mag\nformat: 1\nsources: {{src: {{power: {source}}}}}\n"
                    f"scanners: {{s1: {{power: {need}}}}}\nbeamlines: ['src -> s1']\n",
                    encoding="utf-8")
    assert main(["plan", str(path)]) == 1
    err = capsys.readouterr().err
    # refused either by the planner's range (1 µW to 10 MW) or, for absurd values, by the
    # reader's range of any power (finite, at most 1e9 W); both state the range
    assert ("outside the range the planner handles" in err and "1 µW (1e-6 W)" in err) or (
        "at most 1e+09 W" in err)
    assert f"{path}:3:" in err or f"{path}:4:" in err
    assert "Traceback" not in err


def test_case_scaled_to_nothing_is_an_input_error(capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["cases", TWO_BAY, "--scale", "fel-main.power=1e-118"])
    err = capsys.readouterr().err
    assert code == 1, err
    assert "outside the range the planner handles" in err and "Traceback" not in err


def test_solver_failure_is_an_input_error() -> None:
    from beamplan.optimise.magnitudes import solver_failure

    err = solver_failure(3, "unbounded")
    assert err.exit_code == 1 and "what" not in str(err) and "keep powers" in str(err)


def test_json_fields(tmp_path: pathlib.Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["plan", COATED, "--json", "-"]) == 0
    doc = json.loads(capsys.readouterr().out)
    e1 = next(s for s in doc["scanners"] if s["id"] == "litho-e1")
    assert e1["useful_ceiling_w"] == pytest.approx(487.6216494, rel=1e-6)
    assert e1["over_delivery_reason"]
    assert doc["surplus"]["mode"] == "turn-down" and doc["surplus"]["unused_w"] > 5000
    assert doc["electrical_w"] < 14e6  # turned down: less than the rating


def test_ceiling_matches_physics() -> None:
    assert useful_ceiling_w(ScannerTool(), 300.0) == pytest.approx(_ceiling_default_tool(),
                                                                   rel=1e-8)


@pytest.mark.parametrize("value", ["0 W", "1 kW"])
def test_case_electrical_below_the_euv_power(capsys: pytest.CaptureFixture[str],
                                             value: str) -> None:
    # fel-main gives 11 kW of EUV (layouts/two-bay.yaml): a draw of 0 W or 1 kW cannot
    # feed it (energy conservation); once a ValueError deep in the physics.
    code = main(["cases", TWO_BAY, "--set", f"fel-main.electrical={value}"])
    err = capsys.readouterr().err
    assert code == 1, err
    assert "below its EUV power" in err and "Traceback" not in err


def test_report_says_where_the_surplus_went(tmp_path: pathlib.Path,
                                            capsys: pytest.CaptureFixture[str]) -> None:
    main(["plan", _small(tmp_path, surplus=", surplus: dump")])
    out = " ".join(capsys.readouterr().out.split())  # lines wrap at 80 columns
    # Hand calculation in test_surplus_modes_small: 1219.05 W to d1, 561.9 W unused.
    assert "more drawn for the dumps (d1 1.22 kW" in out
    assert "power left unused at the source: 561.9 W of 3.00 kW available" in out


SPAN = """\
layout: span
format: 1
sources: {src: {power: 1e7 W}}
elements:
  t1: {kind: splitter, outputs: {a: {fraction: [0.1, 0.9]}, b: {}}}
  m1: {kind: mirror, reflectivity: 0.9, heat_limit: 1e7 W}
scanners:
  s1: {power: NEED}
  s2: {power: 1e7 W, max_power: 1e7 W}
beamlines: ['src -> m1 -> t1', 't1.a -> s1', 't1.b -> s2']
"""


@pytest.mark.parametrize("need", ["1e-6 W", "3e-5 W"])
@pytest.mark.parametrize("goal", ["headroom", "priority"])
def test_powers_spanning_thirteen_decades(tmp_path: pathlib.Path, need: str, goal: str) -> None:
    # Regression: simplex ended "unbounded" in stage 1 (exit 4, then exit 1); the
    # interior-point retry solves it. Hand calculation: 9 MW leave m1; s2 needs 10 MW
    # and can get at most 0.9 × 9 MW = 8.1 MW, so the common factor is 0.81.
    path = tmp_path / "span.yaml"
    path.write_text(SPAN.replace("NEED", need), encoding="utf-8")
    plan = beamplan.plan(str(path), goal=goal)
    assert plan.headroom_factor == pytest.approx(0.81, rel=1e-6)
    assert plan.scanner("s2").delivered_w == pytest.approx(8.1e6, rel=1e-6)
