"""The project's own words (beamplan/vocabulary.py): one owner, plain strings outside."""

from __future__ import annotations

import csv
import io
import json

import pytest

from beamplan.cli.main import build_parser
from beamplan.layout.kinds import KINDS
from beamplan.layout.loader import load_layout
from beamplan.network.graph import build_network
from beamplan.optimise.lp import build_lp
from beamplan.optimise.sizing_lp import build_sizing_lp
from beamplan.report.diagram import BINDS
from beamplan.report.html import FAMILIES as MEANINGS
from beamplan.vocabulary import (
    FAMILIES,
    GOALS,
    SOLVERS,
    Family,
    Goal,
    NodeKind,
    ScannerStatus,
    reported_families,
)


@pytest.mark.parametrize("word", [*Goal, *ScannerStatus, *Family, *NodeKind])
def test_a_member_is_written_as_its_plain_string(word: str) -> None:
    # Checked against the standard library's own json and csv writers.
    plain = str.__str__(word)
    assert json.dumps({"w": word}) == json.dumps({"w": plain})
    rows = [io.StringIO(), io.StringIO()]
    csv.writer(rows[0]).writerow([word])
    csv.writer(rows[1]).writerow([plain])
    assert rows[0].getvalue() == rows[1].getvalue() == plain + "\r\n"
    assert f"{word}" == str(word) == plain and repr(word) == repr(plain)


def test_a_typo_is_refused_where_a_string_comes_in() -> None:
    with pytest.raises(ValueError):
        Goal("headrom")
    assert Goal("min-source") is Goal.MIN_SOURCE


def test_every_family_of_the_lp_rows_is_in_the_registry() -> None:
    network = build_network(load_layout("layouts/two-bay.yaml"))
    families = {row.family for row in build_lp(network).row_info}
    families |= {limit.family for limit in build_sizing_lp(network).limits}
    assert families <= set(FAMILIES)
    assert all(isinstance(f, Family) for f in families)


def test_reports_take_their_family_words_from_the_registry() -> None:
    # The words as the reports printed them before the registry (golden files agree).
    assert MEANINGS["heat"] == "an element absorbs as much as its heat limit allows"
    assert BINDS["available"] == "all power drawn"
    assert list(MEANINGS) == [str(f) for f in reported_families()]
    assert set(BINDS) == set(MEANINGS)
    assert {f for f, info in FAMILIES.items() if info.per_element} == {
        Family.SHARE_LOW, Family.SHARE_HIGH, Family.RANGE_LOW, Family.RANGE_HIGH}


def test_the_command_line_offers_the_vocabulary() -> None:
    args = build_parser().parse_args(["plan", "x.yaml"])
    assert args.goal == Goal.HEADROOM and args.solver == "auto"
    with pytest.raises(SystemExit):
        build_parser().parse_args(["plan", "x.yaml", "--goal", "screen"])  # internal only
    assert [str(g) for g in GOALS] == ["headroom", "min-source", "priority"]
    assert [str(s) for s in SOLVERS] == ["auto", "highs", "cbc"]


def test_node_kinds_cover_the_layout_kinds() -> None:
    assert {str(k) for k in NodeKind} == {*KINDS, "source", "scanner"}


def test_nodes_and_elements_carry_their_kind_as_a_member() -> None:
    layout = load_layout("layouts/two-bay.yaml")
    assert layout.elements and all(type(e.kind) is NodeKind for e in layout.elements)
    network = build_network(layout)
    kinds = {n.id: n.kind for n in network.nodes}
    assert all(type(k) is NodeKind for k in kinds.values())
    assert {kinds[s.id] for s in layout.sources} == {NodeKind.SOURCE}
    assert {kinds[s.id] for s in layout.scanners} == {NodeKind.SCANNER}
    # Written as the plain word (standard library's json), as before the enum.
    assert json.dumps(sorted(kinds.values())) == json.dumps(sorted(map(str, kinds.values())))
