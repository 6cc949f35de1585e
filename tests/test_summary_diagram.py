"""The campus-scale picture: subtrees folded into summary boxes, --detail, --focus, thresholds.

The campuses come from tests/perf/campus.py: a trunk of taps, each tap feeding
a bay of ``per_bay`` scanners. Expected values are computed here independently
of the folding code: by walking the links (reachability), and from the plan's
own scanner and element results.
"""

from __future__ import annotations

import functools
import math
import pathlib
import re
import shutil

import pytest

from beamplan.cli import draw as cli_draw
from beamplan.cli.main import main
from beamplan.network.graph import Network
from beamplan.optimise.planner import plan_network
from beamplan.optimise.result import Plan
from beamplan.report import summary_diagram as sd
from beamplan.report.summary_draw import summary_picture
from tests.conftest import network_from_text
from tests.perf.campus import campus_yaml


@functools.cache
def campus(scanners: int) -> tuple[Network, Plan]:
    network = network_from_text(campus_yaml(scanners), "campus.yaml")
    return network, plan_network(network)


def reachable(network: Network, start: str) -> set[str]:
    """Every node downstream of ``start``, by walking the links (breadth first)."""
    seen, todo = {start}, [start]
    while todo:
        here = todo.pop()
        for link in network.links:
            if link.tail == here and link.head not in seen:
                seen.add(link.head)
                todo.append(link.head)
    return seen


def test_each_bay_folds_into_one_box_with_its_totals() -> None:
    network, plan = campus(200)
    s = sd.summary_model(network, plan)
    # 200 scanners in bays of 10: 20 bays (campus.py); every bay one box, the
    # last one together with the trunk's end dump
    assert len(s.folds) == 20
    assert len(s.rows) <= sd.BOX_BUDGET
    scanners = {r.id: r for r in plan.scanners}
    heat = {e.id: e for e in plan.elements}
    for root, fold in s.folds.items():
        below = reachable(network, root)
        assert set(fold.members) == below
        mine = [scanners[m] for m in below if m in scanners]
        assert len(fold.scanners) == len(mine) == 10
        assert fold.delivered_w == pytest.approx(sum(r.delivered_w for r in mine), rel=1e-12)
        assert fold.worst_headroom == min(r.headroom for r in mine)
        # the power into a bay is the power its first element receives
        assert fold.power_in_w == pytest.approx(heat[root].incident_w, rel=1e-9)
        uses = [heat[m].absorbed_w / heat[m].heat_limit_w for m in below
                if m in heat and heat[m].heat_limit_w]
        assert fold.hottest_use == pytest.approx(max(uses), rel=1e-12)
    # nothing lost: what the boxes deliver adds up to the plan's delivered power
    loose = sum(scanners[r.box.key].delivered_w for r in s.rows if r.box.key in scanners)
    total = sum(f.delivered_w or 0.0 for f in s.folds.values()) + loose
    assert total == pytest.approx(plan.delivered_w, rel=1e-9)


def test_the_folded_rows_are_an_outline_of_the_network() -> None:
    network, plan = campus(60)
    s = sd.summary_model(network, plan)
    for row in s.rows:  # every drawn link follows the beam: the child is downstream
        if row.parent >= 0:
            assert row.box.key in reachable(network, s.rows[row.parent].box.key)
    keys = [r.box.key for r in s.rows]
    assert len(keys) == len(set(keys))
    shown = set(keys) | {m for f in s.folds.values() for m in f.members}
    assert shown == set(network.node)


def test_a_small_budget_folds_the_demo_too() -> None:
    network, plan = campus(20)
    assert sd.summary_model(network, plan, budget=1000).folds == {}  # everything fits
    small = sd.summary_model(network, plan, budget=12)
    assert len(small.rows) <= 12 and small.folds


def test_threshold() -> None:
    assert cli_draw.SCALE_SCANNERS == sd.SCALE_SCANNERS == 40
    assert not sd.at_scale(campus(40)[0])
    assert sd.at_scale(campus(41)[0])


def _dot(tmp_path: pathlib.Path, scanners: int, *options: str) -> str:
    layout = tmp_path / "campus.yaml"
    layout.write_text(campus_yaml(scanners), encoding="utf-8")
    out = tmp_path / "out.dot"
    assert main(["draw", str(layout), "-o", str(out), "-q", *options]) == 0
    return out.read_text(encoding="utf-8")


def _ids(dot: str) -> set[str]:
    return set(re.findall(r'^  "([^"]+)" \[label=', dot, flags=re.M))


def test_draw_picks_the_summary_past_the_threshold(tmp_path: pathlib.Path) -> None:
    assert "rankdir=LR" in _dot(tmp_path, 40)   # 40 scanners: every box
    folded = _dot(tmp_path, 41, "--plan")       # 41: the summary
    assert "rankdir=TB" in folded
    network, _ = campus(41)
    assert len(_ids(folded)) < len(network.nodes) / 5


def test_detail_draws_every_id(tmp_path: pathlib.Path) -> None:
    network, _ = campus(41)
    assert _ids(_dot(tmp_path, 41, "--detail")) == set(network.node)


def test_focus_draws_the_subtree_ids(tmp_path: pathlib.Path) -> None:
    network, _ = campus(41)
    text = _dot(tmp_path, 41, "--focus", "bay-1-m1", "--plan")
    assert _ids(text) == reachable(network, "bay-1-m1")
    assert "rankdir=LR" in text  # 10 scanners under it: drawn in detail


def test_focus_on_an_unknown_id_is_a_usage_error(tmp_path: pathlib.Path,
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    layout = tmp_path / "campus.yaml"
    layout.write_text(campus_yaml(12), encoding="utf-8")
    assert main(["draw", str(layout), "-o", str(tmp_path / "x.svg"), "--focus", "bay-9"]) == 2
    assert "--focus 'bay-9': no such" in capsys.readouterr().err
    assert not (tmp_path / "x.svg").exists()


def test_the_summary_picture_is_small_and_names_its_boxes(tmp_path: pathlib.Path) -> None:
    from PIL import Image

    network, plan = campus(200)
    picture = summary_picture(network, plan)
    svg = picture.svg()
    assert "bay-7-m1 and below" in svg and "s7-3-f1" not in svg
    path = tmp_path / "s.png"
    path.write_bytes(picture.data("png"))
    with Image.open(path) as image:
        width, height = image.size
    # readable on a screen: a column of boxes at most 1,600 px wide (our target, no source)
    assert width <= 1600 and height < 16000
    assert math.isclose(picture.figure.get_size_inches()[0] * 150, width, abs_tol=2)


def test_graphviz_is_optional(tmp_path: pathlib.Path, monkeypatch: pytest.MonkeyPatch,
                              capsys: pytest.CaptureFixture[str]) -> None:
    import beamplan.report.dot as dot

    layout = tmp_path / "campus.yaml"
    layout.write_text(campus_yaml(12), encoding="utf-8")
    monkeypatch.setattr(dot.shutil, "which", lambda name: None)  # as on a machine without it
    out = tmp_path / "a.svg"
    assert main(["draw", str(layout), "-o", str(out), "--engine", "graphviz", "--summary"]) == 0
    assert "'dot' program is not installed" in capsys.readouterr().err
    assert "tap-0-0" in out.read_text(encoding="utf-8")  # drawn all the same, by beamplan


@pytest.mark.skipif(shutil.which("dot") is None,
                    reason="Graphviz's dot is not installed; --engine graphviz falls back")
def test_graphviz_draws_the_summary(tmp_path: pathlib.Path) -> None:
    layout = tmp_path / "campus.yaml"
    layout.write_text(campus_yaml(60), encoding="utf-8")
    out = tmp_path / "g.svg"
    assert main(["draw", str(layout), "-o", str(out), "--plan", "-q", "--engine",
                 "graphviz"]) == 0
    svg = out.read_text(encoding="utf-8")
    # Graphviz's own SVG: one <title> per node, the folded bays among them, and the caution
    assert "Generated by graphviz" in svg and "<title>bay&#45;2&#45;m1</title>" in svg
    assert "not a safety system" in svg
