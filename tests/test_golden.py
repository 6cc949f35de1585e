"""Golden files for the reports: the terminal text at 80 columns and the JSON document.

Regenerate after an intended change with ``BEAMPLAN_UPDATE_GOLDEN=1 python -m pytest
tests/test_golden.py`` and review the diff.
"""

from __future__ import annotations

import io
import json
import os
import pathlib
from typing import Any

import pytest
from rich.console import Console

import beamplan
from beamplan.report.document import plan_json
from beamplan.report.terminal import plan_renderable

GOLDEN = pathlib.Path(__file__).parent / "golden"
UPDATE = os.environ.get("BEAMPLAN_UPDATE_GOLDEN") == "1"
CASES = [("pilot-line", "headroom"), ("pilot-line", "min-source")]


def _compare_text(name: str, text: str) -> None:
    path = GOLDEN / name
    if UPDATE:
        path.write_text(text, encoding="utf-8")
    assert path.exists(), f"missing golden file {path}; run with BEAMPLAN_UPDATE_GOLDEN=1"
    assert text == path.read_text(encoding="utf-8")


def _close(a: Any, b: Any, where: str = "") -> None:
    """Structural equality with floats compared to 1e-7 relative (or 1 µW)."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and list(a) == list(b), where  # same keys, same order
        for key in a:
            _close(a[key], b[key], f"{where}.{key}")
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _close(x, y, f"{where}[{i}]")
    elif isinstance(a, float) or isinstance(b, float):
        assert a == pytest.approx(b, rel=1e-7, abs=1e-6), where  # 1 µW: solver noise
    else:
        assert a == b, where


@pytest.mark.parametrize(("layout", "goal"), CASES)
def test_terminal_report_matches_golden(layout: str, goal: str) -> None:
    plan = beamplan.plan(f"layouts/{layout}.yaml", goal=goal)
    console = Console(file=io.StringIO(), width=80, color_system=None, highlight=False)
    console.print(plan_renderable(plan))
    text = console.file.getvalue()  # type: ignore[attr-defined]
    assert max(len(line) for line in text.splitlines()) <= 80  # fits an 80-column terminal
    _compare_text(f"{layout}.{goal}.txt", text)


@pytest.mark.parametrize(("layout", "goal"), CASES)
def test_json_report_matches_golden(layout: str, goal: str) -> None:
    plan = beamplan.plan(f"layouts/{layout}.yaml", goal=goal)
    text = plan_json(plan, "golden")
    doc = json.loads(text)
    doc["solver"]["version"] = "any"  # the solver's own version may move
    path = GOLDEN / f"{layout}.{goal}.json"
    if UPDATE:
        path.write_text(json.dumps(doc, indent=2, ensure_ascii=False) + "\n", encoding="utf-8")
    _close(doc, json.loads(path.read_text(encoding="utf-8")))
