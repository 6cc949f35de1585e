"""Availability: two-state and series-parallel algebra, enumeration against Monte Carlo."""

from __future__ import annotations

import json
import pathlib

import pytest

import beamplan
from beamplan.analyses.availability import (
    Component,
    State,
    enumerate_states,
    expected_loss,
    plan_state,
    run_availability,
)
from beamplan.analyses.availability_sim import simulate
from beamplan.analyses.cost import throughput_models
from beamplan.cli.main import main
from beamplan.layout.economics import Economics, Reliability
from beamplan.network.graph import build_network
from beamplan.physics.reliability import (
    availability,
    parallel_availability,
    series_availability,
    state_probability,
)


def test_two_state_availability() -> None:
    # hand calculation (two-state model, Billinton and Allan 1996): 500 / (500 + 8)
    assert availability(500.0, 8.0) == pytest.approx(0.984252, rel=1e-6)


def test_series_parallel_against_its_closed_form() -> None:
    # a source (A = 0.98) feeding two redundant mirrors (0.99 each) in series with a
    # splitter (0.995): closed form 0.98 × (1 - 0.01²) × 0.995 (hand calculation)
    closed = 0.98 * (1 - 0.01 ** 2) * 0.995
    got = series_availability([0.98, parallel_availability([0.99, 0.99]), 0.995])
    assert got == pytest.approx(closed, rel=1e-12)
    # and by enumerating the 2^4 states of the four parts (Billinton and Allan: enumeration)
    q = [0.02, 0.01, 0.01, 0.005]
    up = 0.0
    for mask in range(16):
        down = [i for i in range(4) if mask >> i & 1]
        if 0 not in down and 3 not in down and not (1 in down and 2 in down):
            up += state_probability(q, down)
    assert up == pytest.approx(closed, rel=1e-12)


def test_enumeration_threshold_and_expected_loss() -> None:
    parts = [Component("a", "mirror", 990.0, 10.0), Component("b", "mirror", 990.0, 10.0)]
    cases, left = enumerate_states(parts, 1e-3)
    assert cases == [("a",), ("b",)]  # the pair 0.98 × (0.01 / 0.99)² = 1e-4 < 1e-3
    assert left == pytest.approx(1e-4, rel=1e-9)  # hand calculation
    s = State(("a",), 0.0099, 0.2, (("x", 10.0),), (("x", 40.0),), 0.0, ("sw: m -> n",))
    # hand calculation: 1000 h × 0.0099 × 10; with 1 h switching 1 - e^-0.2 of the stay at 40
    assert expected_loss([s], 0.0, 1000.0)["x"] == pytest.approx(99.0)
    f = 1 - 2.718281828459045 ** -0.2
    assert expected_loss([s], 1.0, 1000.0)["x"] == pytest.approx(99.0 * (1 - f) + 396.0 * f)


def test_two_bay_enumeration_agrees_with_monte_carlo() -> None:
    lay = beamplan.load("layouts/two-bay.yaml")
    net = build_network(lay)
    econ = Economics(hours_per_year=8000.0, switching_time_h=0.5,
                     by_id=(("fel-standby", Reliability(228.0, 12.0)),))
    report = run_availability(lay, net, econ)
    models, _ = throughput_models(net, econ)
    exposing = {s.id: s.exposing for s in report.scanners}
    base = {s.id: s.delivered_w for s in report.plan.scanners}
    sim = simulate(report.components, {frozenset(s.failed): s for s in report.states},
                   lambda f: plan_state(net, f, models, exposing, base),
                   years=1500, hours=8000.0, switching_time_h=0.5, seed=7)
    # the analytic expected loss lies inside the simulation's 95 % interval (seeded)
    assert sim.low <= report.wafers_lost <= sim.high, (sim, report.wafers_lost)
    assert sim.half_width < 0.05 * sim.mean  # the check has teeth: a 5 % interval
    assert report.ranking[0].id == "fel-main"


def test_availability_cli(tmp_path: pytest.TempPathFactory) -> None:
    out = f"{tmp_path}/a.json"
    code = main(["availability", "layouts/pilot-line.yaml", "--simulate", "300", "--json", out,
                 "--html", f"{tmp_path}/a.html", "--csv", f"{tmp_path}/csv", "-q"])
    assert code == 0
    doc = json.loads(pathlib.Path(out).read_text(encoding="utf-8"))
    assert doc["format"] == "beamplan-availability/1"
    assert doc["simulation"]["years"] == 300
    assert "Billinton" in doc["method"]
    assert "<svg" in pathlib.Path(f"{tmp_path}/a.html").read_text(encoding="utf-8")
    again = f"{tmp_path}/b.json"
    main(["availability", "layouts/pilot-line.yaml", "--simulate", "300", "--json", again, "-q"])
    # seeded: byte-identical on a re-run
    assert pathlib.Path(again).read_bytes() == pathlib.Path(out).read_bytes()


def test_ctrl_c_reports_what_was_planned(monkeypatch: pytest.MonkeyPatch,
                                         capsys: pytest.CaptureFixture[str]) -> None:
    from beamplan.analyses import outages

    real = outages.run_chunk
    calls = []

    def stop_after_one(*args: object) -> object:
        calls.append(1)
        if len(calls) > 1:
            raise KeyboardInterrupt
        return real(*args)  # type: ignore[arg-type]

    monkeypatch.setattr(outages, "run_chunk", stop_after_one)
    assert main(["availability", "layouts/two-bay.yaml", "-q"]) == 130
    assert "interrupted" in capsys.readouterr().err
