"""Presentation: words, numbers and help text that a reader sees."""

from __future__ import annotations

import io
import re

import pytest
from rich.console import Console

import beamplan
from beamplan.cli.main import main
from beamplan.layout.kinds import KINDS
from beamplan.optimise.explain import watts
from beamplan.optimise.planner import plan_network
from beamplan.report.terminal import PLURALS, plan_renderable, plural
from tests.conftest import network_from_text

DEMOS = ["pilot-line", "two-bay", "coated-line", "overbooked"]
GOALS = ["headroom", "min-source", "priority"]


def render(plan: object) -> str:
    console = Console(file=io.StringIO(), width=100, color_system=None)
    console.print(plan_renderable(plan))  # type: ignore[arg-type]
    return console.file.getvalue()  # type: ignore[attr-defined]


def test_every_kind_has_a_proper_plural() -> None:
    # English plurals (hand written): "switches", not "switchs".
    assert set(KINDS) <= set(PLURALS)
    assert plural("switch") == "switches" and plural("switch", 1) == "switch"
    text = render(beamplan.plan("layouts/two-bay.yaml"))
    assert "absorbed in switches" in text and "switchs" not in text


def test_prices_are_powers_with_prefixes() -> None:
    # Hand-written expectations: engineering prefixes from 1 kW, three figures below.
    assert watts(9040.0) == "9.04 kW"
    assert watts(2.5e6) == "2.50 MW"
    assert watts(171.2) == "171 W"
    assert watts(-4.4412, signed=True) == "-4.44 W"
    for demo in DEMOS:
        for goal in GOALS:
            plan = beamplan.plan(f"layouts/{demo}.yaml", goal=goal)
            for b in plan.binding:
                assert not re.search(r"\de[+-]\d", b.meaning), (demo, goal, b.meaning)


@pytest.mark.parametrize("command", ["cases", "sweep", "plan"])
def test_solver_option_has_help(command: str, capsys: pytest.CaptureFixture[str]) -> None:
    assert main([command, "--help"]) == 0
    out = " ".join(capsys.readouterr().out.split())
    assert re.search(r"--solver \{auto,highs,cbc\} LP solver", out), out


def test_dir_shows_only_the_public_api() -> None:
    assert dir(beamplan) == sorted(beamplan.__all__)
    assert "Any" not in dir(beamplan) and "TYPE_CHECKING" not in dir(beamplan)


OFFLINE = """\
layout: offline
format: 1
sources: {src: {power: 5 kW}}
elements:
  sp: {kind: splitter, outputs: {a: {fraction: [0, 1]}, b: {fraction: [0, 1]},
                                 c: {fraction: [0, 1]}}}
scanners:
  s1: {power: 300 W}
  s2: {power: 300 W}
  s3: {power: 300 W, offline: true}
beamlines: ["src -> sp", "sp.a -> s1", "sp.b -> s2", "sp.c -> s3"]
"""


def test_header_counts_only_scanners_in_service() -> None:
    plan = plan_network(network_from_text(OFFLINE), "headroom", "auto")
    assert plan.status == "met"
    header = render(plan).splitlines()[2]
    assert "MET, 1 scanner offline" in header and "short" not in header, header
    short = plan_network(network_from_text(OFFLINE.replace("5 kW", "450 W")), "headroom",
                         "auto")
    header = render(short).splitlines()[2]
    # 450 W cannot serve two 300 W needs (hand calculation): both in-service scanners short.
    assert "(2 of 2 scanners short), 1 scanner offline" in header, header


def test_warnings_are_printed_once(capsys: pytest.CaptureFixture[str]) -> None:
    # coated-line has one warning (a heat limit that cannot bind): on stderr, once.
    assert main(["plan", "layouts/coated-line.yaml"]) == 0
    out, err = capsys.readouterr()
    assert err.count("warning:") == 1, err
    assert "warning" not in out and "beamplan check" not in out
