"""The command line through its entry point and as a real process."""

from __future__ import annotations

import json
import os
import pathlib
import subprocess
import sys

import pytest

from beamplan.cli.main import main

PILOT = "layouts/pilot-line.yaml"

SHORT = """\
layout: short-demo
format: 1
sources: {src: {power: 1 kW}}
elements:
  t1: {kind: splitter, outputs: {a: {fraction: [0.2, 0.8]}, b: {}}}
scanners:
  s1: {power: 800 W}
  s2: {power: 800 W}
beamlines: ["src -> t1", "t1.a -> s1", "t1.b -> s2"]
"""

BROKEN = """\
layout: broken
format: 1
sources: {src: {power: 1 kW}}
elements:
  m1: {kind: mirror, reflectivity: 1.2}
scanners:
  s1: {power: 300 mJ}
beamlines: ["src -> m1 -> s9"]
"""


def run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    code = main(list(args))
    out, err = capsys.readouterr()
    return code, out, err


def test_check_valid_layout(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = run(capsys, "check", PILOT)
    assert code == 0
    assert "valid layout 'pilot-line'" in out


def test_check_reports_every_error_located_and_exits_1(
        capsys: pytest.CaptureFixture[str], tmp_path: pathlib.Path) -> None:
    path = tmp_path / "broken.yaml"
    path.write_text(BROKEN)
    code, out, err = run(capsys, "check", str(path))
    assert code == 1
    assert out == ""
    lines = [line for line in err.splitlines() if ": error: " in line]
    # Positions counted by hand in BROKEN above (1-based line:column).
    assert any(line.startswith(f"{path}:5:36: error:") and "reflectivity" in line
               for line in lines), err
    assert any(line.startswith(f"{path}:7:15: error:") and "is an energy, not a power" in line
               for line in lines), err
    assert any(line.startswith(f"{path}:8:27: error:") and "'s9'" in line and "did you mean 's1'"
               in line for line in lines), err
    assert "Traceback" not in err


def test_usage_errors_exit_2(capsys: pytest.CaptureFixture[str]) -> None:
    assert run(capsys, "plan")[0] == 2
    assert run(capsys, "plan", PILOT, "--goal", "fastest")[0] == 2
    code, _, err = run(capsys, "plan", "no/such/layout.yaml")
    assert code == 2 and "no such layout file" in err


def test_plan_met_exits_0_and_short_exits_3(capsys: pytest.CaptureFixture[str],
                                            tmp_path: pathlib.Path) -> None:
    code, out, _ = run(capsys, "plan", PILOT)
    assert code == 0
    assert "MET" in out and "litho-p1" in out and "Planning estimates" in out
    path = tmp_path / "short.yaml"
    path.write_text(SHORT)
    code, out, _ = run(capsys, "plan", str(path))
    # 1 kW for 1.6 kW of need: each scanner gets 500 W (hand calculation), 300 W short.
    assert code == 3
    assert "SHORT" in out and "short 300.0 W" in out


def test_json_to_stdout_is_the_document_and_nothing_else() -> None:
    # A real process: HiGHS prints a banner from C code on file descriptor 1.
    env = {**os.environ, "NO_COLOR": "1"}
    proc = subprocess.run([sys.executable, "-m", "beamplan.cli.main", "plan", PILOT, "--json",
                           "-"], capture_output=True, text=True, env=env, check=False)
    assert proc.returncode == 0, proc.stderr
    doc = json.loads(proc.stdout)
    assert doc["format"] == "beamplan-plan/1"
    assert [s["id"] for s in doc["scanners"]] == ["litho-p1", "litho-p2", "litho-p3"]
    again = subprocess.run([sys.executable, "-m", "beamplan.cli.main", "plan", PILOT, "--json",
                            "-"], capture_output=True, text=True, env=env, check=False)
    assert again.stdout == proc.stdout  # byte-identical for the same input


def test_outputs_are_written_and_inputs_never_overwritten(
        capsys: pytest.CaptureFixture[str], tmp_path: pathlib.Path) -> None:
    layout = tmp_path / "copy.yaml"
    layout.write_text(pathlib.Path(PILOT).read_text())
    before = layout.read_bytes()
    code, _, err = run(capsys, "plan", str(layout), "--json", str(layout), "--quiet")
    assert code == 2 and "refusing to write over the input file" in err
    assert layout.read_bytes() == before
    report = tmp_path / "plan.json"
    code, _, _ = run(capsys, "plan", str(layout), "--json", str(report), "--csv",
                     str(tmp_path / "tables"), "--quiet")
    assert code == 0
    assert json.loads(report.read_text())["status"] == "met"
    names = sorted(p.name for p in (tmp_path / "tables").iterdir() if p.name[0] != ".")
    assert names == ["binding.csv", "elements.csv", "losses.csv", "scanners.csv", "sources.csv"]
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".beamplan-")]


def test_unwritable_output_exits_5(capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run(capsys, "plan", PILOT, "--json", "/no/such/folder/plan.json", "--quiet")
    assert code == 5 and "cannot write" in err


def test_debug_shows_the_traceback(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "broken.yaml"
    path.write_text(BROKEN)
    quiet = subprocess.run([sys.executable, "-m", "beamplan.cli.main", "check", str(path)],
                           capture_output=True, text=True, check=False)
    loud = subprocess.run([sys.executable, "-m", "beamplan.cli.main", "--debug", "check",
                           str(path)], capture_output=True, text=True, check=False)
    assert quiet.returncode == 1 and "Traceback" not in quiet.stderr
    assert loud.returncode != 0 and "Traceback" in loud.stderr


@pytest.mark.parametrize("goal", ["headroom", "min-source", "priority"])
def test_every_goal_runs_on_the_cli(capsys: pytest.CaptureFixture[str], goal: str) -> None:
    code, out, _ = run(capsys, "plan", PILOT, "--goal", goal, "--brief")
    assert code == 0
    assert f"goal       {goal}" in out


BROKEN_DIR = pathlib.Path(__file__).parent / "broken"


@pytest.mark.parametrize("path", sorted(BROKEN_DIR.glob("*.yaml")), ids=lambda p: p.stem)
def test_every_broken_layout_exits_1_with_located_one_line_errors(
        capsys: pytest.CaptureFixture[str], path: pathlib.Path) -> None:
    # The corpus's own first line names the expected code and position (hand count).
    expect = path.read_text().splitlines()[0].split()
    code_name, where = expect[2], expect[3]
    assert main(["check", str(path)]) == 1
    err = capsys.readouterr().err
    errors = [line for line in err.splitlines() if ": error: " in line]
    assert errors and "Traceback" not in err
    assert all(line.startswith(f"{path}:") for line in errors)
    assert any(line.startswith(f"{path}:{where}: error: ") for line in errors), (code_name, err)
    assert main(["plan", str(path), "--quiet"]) == 1
    capsys.readouterr()
