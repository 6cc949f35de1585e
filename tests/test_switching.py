"""Switch positions: the search, --steady-switches in cases, and both views in sweep reports."""

from __future__ import annotations

import csv
import io
import itertools
import json
import pathlib

import pytest

from beamplan.analyses.cases import parse_cases
from beamplan.analyses.compare import compare_cases
from beamplan.analyses.switching import EXHAUSTIVE_MAX, best_positions, search_kind
from beamplan.cli.main import main
from beamplan.layout.loader import parse_layout
from beamplan.layout.yamlpos import load_yaml, parse_yaml

TWO_BAY = "layouts/two-bay.yaml"
MAIN_LINE = ["fel-main", "src-fold-1", "src-fold-2", "src-tunnel"]  # hand reading of two-bay


# -- the search ---------------------------------------------------------------------

def _separable(n: int) -> tuple[dict[str, tuple[str, ...]], dict[str, str], object]:
    """n three-way switches whose scores add up: the best of each is position 'c'."""
    switches = {f"s{i}": ("a", "b", "c") for i in range(n)}
    score = {"a": 0, "b": 1, "c": 2}

    def evaluate(p: dict[str, str]) -> int:
        return sum(score[v] for v in p.values())

    return switches, {s: "a" for s in switches}, evaluate


@pytest.mark.parametrize("n", [1, 3, 4, 5])
def test_both_searches_find_the_best_when_the_switches_are_independent(n: int) -> None:
    # Reference: brute force over every combination (itertools.product).
    switches, current, evaluate = _separable(n)
    best, moves, tried = best_positions(switches, current, evaluate,  # type: ignore[arg-type]
                                        lambda v: -v, 0)
    brute = max(evaluate(dict(zip(switches, c, strict=True)))  # type: ignore[operator]
                for c in itertools.product("abc", repeat=n))
    assert best == brute == 2 * n
    assert sorted(m.label for m in moves) == [f"s{i}: a -> c" for i in range(n)]
    if 3 ** n <= EXHAUSTIVE_MAX:
        assert search_kind(switches) == "exhaustive" and tried == 3 ** n - 1
    else:  # 3**4 = 81 > 64: greedy, n rounds of 2n trials and one more to stop
        assert search_kind(switches) == "greedy" and tried == (n + 1) * 2 * n


def test_no_move_unless_it_serves_strictly_better() -> None:
    switches = {"s": ("a", "b")}
    best, moves, tried = best_positions(switches, {"s": "a"}, lambda p: 5, lambda v: -v, 5)
    assert (best, moves, tried) == (5, (), 1)


# -- cases with --steady-switches ------------------------------------------------------

def _compare(changes: str, **options: object):  # type: ignore[no-untyped-def]
    doc = load_yaml(TWO_BAY)
    cases = parse_cases(parse_yaml(f"format: 1\ncases:\n  c: {{changes: {changes}}}\n",
                                   "cases.yaml"))
    return compare_cases(parse_layout(doc), cases, base_doc=doc, **options).cases[0]


def test_steady_switches_brings_the_standby_in_when_the_main_fel_fails() -> None:
    # two-bay: with fel-main out, only sw-source on sb-drift serves anyone; then
    # fel-standby (4 kW) is fully drawn (hand reading of the layout).
    held = _compare("[{fail: fel-main}]", steady=0.0, steady_switches=True)
    assert [m.label for m in held.switch_moves] == ["sw-source: src-tunnel -> sb-drift"]
    used = {s.id: s.output_w for s in held.plan.sources}
    assert used["fel-standby"] == pytest.approx(4000.0, rel=1e-6)
    assert all(s.delivered_w > 0 for s in held.plan.scanners)
    stays = _compare("[{fail: fel-main}]", steady=0.0)  # not allowed: the switch stays
    assert stays.switch_moves == () and stays.plan.delivered_w == 0.0


def test_steady_switches_moves_no_switch_that_does_not_help() -> None:
    # an-fold is behind the switch: no switch position brings light around it.
    held = _compare("[{fail: an-fold}]", steady=0.0, steady_switches=True)
    assert held.switch_moves == ()
    plain = _compare("[{fail: an-fold}]")
    for s, p in zip(held.plan.scanners, plain.plan.scanners, strict=True):
        assert s.delivered_w >= p.delivered_w * (1 - 1e-6) - 1e-6, s.id


def test_cli_steady_switches(capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["cases", TWO_BAY, "--fail", "fel-main", "--steady", "--steady-switches",
                 "--json", "-"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 3  # 4 kW cannot meet 5.06 kW of need: short
    assert doc["steady_switches"] is True
    assert doc["cases"][0]["switch_moves"] == [
        {"switch": "sw-source", "from": "src-tunnel", "to": "sb-drift"}]
    main(["cases", TWO_BAY, "--fail", "fel-main", "--steady", "--steady-switches"])
    words = " ".join(capsys.readouterr().out.split())  # the report wraps at 80 columns
    assert "switches moved: sw-source: src-tunnel -> sb-drift" in words
    assert main(["cases", TWO_BAY, "--fail", "fel-main", "--steady-switches"]) == 2


# -- sweep reports: both views ----------------------------------------------------------

def test_sweep_json_keeps_both_views(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["sweep", TWO_BAY, "--json", "-"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["corrective_switching"] == {"search": "exhaustive",
                                           "switches": {"sw-source": ["src-tunnel", "sb-drift"]}}
    by_failed = {tuple(o["failed"]): o for o in doc["outages"]}
    for node_id in MAIN_LINE:
        o = by_failed[(node_id,)]
        assert o["switch_moves"] == [{"switch": "sw-source", "from": "src-tunnel",
                                      "to": "sb-drift"}]
        assert len(o["at_failure"]["cut_off"]) == 12 and o["cut_off"] == []
        assert o["at_failure"]["headroom_factor"] == 0.0 < o["headroom_factor"]
        assert node_id in doc["single_points_at_failure"]
        assert node_id not in doc["single_points_of_failure"]
    an = by_failed[("an-fold",)]
    assert an["switch_moves"] == [] and an["at_failure"]["cut_off"] == an["cut_off"]
    assert an["switch_positions_tried"] == 1
    assert doc["disagreements"] == []
    ranks = [len(o["cut_off"]) for o in doc["outages"]]
    assert ranks == sorted(ranks, reverse=True)  # ranked by the view after switching


def test_sweep_csv_and_html_keep_both_views(tmp_path: pathlib.Path,
                                            capsys: pytest.CaptureFixture[str]) -> None:
    out, page = tmp_path / "out", tmp_path / "sweep.html"
    assert main(["sweep", TWO_BAY, "--csv", str(out), "--html", str(page), "-q"]) == 0
    rows = {r["failed"]: r for r in csv.DictReader(io.StringIO(
        (out / "outages.csv").read_text()))}
    assert rows["fel-main"]["switch_moves"] == "sw-source: src-tunnel -> sb-drift"
    assert rows["fel-main"]["cut_off"] == ""
    assert len(rows["fel-main"]["at_failure_cut_off"].split(";")) == 12
    spof = {r["node"]: r for r in csv.DictReader(io.StringIO(
        (out / "single_points.csv").read_text()))}
    assert spof["fel-main"]["cuts_off"] == "" and spof["fel-main"]["cuts_off_at_failure"]
    html = page.read_text()
    assert "sw-source: src-tunnel -&gt; sb-drift" in html
    assert "at the moment of failure" in html and "every combination" in html


def test_sweep_terminal_report_shows_both_views(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["sweep", TWO_BAY, "--top", "80"]) == 0
    out = capsys.readouterr().out
    assert "ranked by impact after switching" in out
    assert "Corrective switching, sw-source (2 inputs): every combination" in out
    assert "only at the moment of failure" in out and "fel-main" in out
    fel = out[out.index("fel-main "):]
    assert "sw-source:" in fel.splitlines()[0] and "12 cut" in "".join(fel.splitlines()[:3])
