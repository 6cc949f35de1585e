"""The tolerance command: outputs, reproducibility, located errors for broken input."""

from __future__ import annotations

import json
import pathlib

import pytest

from beamplan.cli.main import main

TWO_BAY = "layouts/two-bay.yaml"
TWO_BAY_TOL = "layouts/tolerances/two-bay.yaml"
FAST = ["-n", "3000", "--sensitivity", "64"]


def test_json_same_seed_same_bytes(tmp_path: pathlib.Path) -> None:
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    assert main(["tolerance", TWO_BAY, TWO_BAY_TOL, *FAST, "-q", "--json", str(a)]) == 0
    assert main(["tolerance", TWO_BAY, TWO_BAY_TOL, *FAST, "-q", "--json", str(b)]) == 0
    assert a.read_bytes() == b.read_bytes()
    doc = json.loads(a.read_text())
    assert doc["format"] == "beamplan-tolerance/1" and doc["samples"] == 3000
    assert not doc["partial"]
    assert 0.0 <= doc["all_met"]["low"] <= doc["all_met"]["probability"] <= \
        doc["all_met"]["high"] <= 1.0
    assert len(doc["scanners"]) == 12 and doc["sensitivity"]["ranking"]
    ranking = doc["sensitivity"]["ranking"]
    assert ranking[0]["total"] >= ranking[-1]["total"]


def test_csv_html_and_terminal(tmp_path: pathlib.Path, capsys: pytest.CaptureFixture[str]
                               ) -> None:
    out, page = tmp_path / "csv", tmp_path / "t.html"
    code = main(["tolerance", TWO_BAY, TWO_BAY_TOL, *FAST, "--width", "1%", "--csv", str(out),
                 "--html", str(page), "--mode", "fixed", "--sampler", "sobol"])
    assert code == 0
    text = capsys.readouterr().out
    assert "P(every scanner meets its need)" in text and "Tighten" in text
    assert "Samples for a 1 % wide interval" in text
    assert sorted(p.name for p in out.glob("*.csv")) == ["fab.csv", "scanners.csv",
                                                         "sensitivity.csv"]
    html = page.read_text()
    assert "<svg" in html and "What to tighten first" in html and "Wilson" in html


def test_retuned_mode_runs(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["tolerance", TWO_BAY, TWO_BAY_TOL, "--mode", "retuned", "-n", "100",
                 "--no-sensitivity", "--json", "-"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["mode"] == "retuned" and doc["sensitivity"] is None


def test_tolerances_section_in_the_layout(tmp_path: pathlib.Path) -> None:
    layout = pathlib.Path(TWO_BAY).read_text() + (
        "tolerances:\n  items:\n    - {source: fel-main, property: power, spread: 5%}\n")
    path = tmp_path / "with-tol.yaml"
    path.write_text(layout)
    out = tmp_path / "o.json"
    assert main(["tolerance", str(path), "-n", "2000", "-q", "--no-sensitivity", "--json",
                 str(out)]) == 0
    assert json.loads(out.read_text())["tolerances"][0]["source"] == "fel-main"
    assert main(["plan", str(path), "-q"]) in (0, 3)  # the loader lets the section through


BROKEN = [
    ("format: 1\ntolerances:\n  items:\n    - {part: if-fold, property: reflectivty, "
     "spread: 1%}\n", ":4:", "unknown property 'reflectivty'"),
    ("format: 1\ntolerances:\n  items:\n    - {part: if-fld, property: reflectivity, "
     "spread: 1%}\n", ":4:", "no part 'if-fld'"),
    ("format: 1\ntolerances:\n  items:\n    - {element: an-fold, property: reflectivity,\n"
     "       spread: 2 W}\n", ":5:", "spread"),
    ("format: 1\ntolerances:\n  items:\n    - {element: trunk, property: fraction, "
     "spread: 1%, distribution: truncnormal}\n", ":4:", "needs 'bounds'"),
    ("format: 1\ntolerances:\n  items:\n    - {element: an-fold, property: pressure, "
     "spread: 1%}\n", ":4:", "'pressure' has no tolerance on mirror 'an-fold'"),
    ("format: 1\ntolerances:\n  items:\n    - {element: an-fold, property: reflectivity, "
     "spread: 1%, group: batch}\n", ":4:", "unknown group 'batch'"),
    ("format: 1\ntolerances:\n  items:\n    - {property: reflectivity, spread: 1%}\n", ":4:",
     "no target"),
    ("format: 2\ntolerances:\n  items: []\n", ":1:", "format"),
]


@pytest.mark.parametrize(("text", "where", "message"), BROKEN)
def test_broken_tolerance_files_get_located_errors(
        tmp_path: pathlib.Path, capsys: pytest.CaptureFixture[str], text: str, where: str,
        message: str) -> None:
    path = tmp_path / "broken.tolerances.yaml"
    path.write_text(text)
    assert main(["tolerance", TWO_BAY, str(path), "-q"]) == 1
    err = capsys.readouterr().err
    first = err.strip().splitlines()[0]
    assert f"broken.tolerances.yaml{where}" in first and message in first
    assert "Traceback" not in err


def test_no_tolerances_is_a_usage_error(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["tolerance", TWO_BAY]) == 2
    assert "no tolerances" in capsys.readouterr().err


def test_ctrl_c_gives_a_partial_report_and_exit_130(
        monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    import beamplan.analyses.tolerance as tol

    real = tol.run_chunk
    calls: list[int] = []

    def interrupted(*args: object) -> object:
        calls.append(1)
        if len(calls) > 1:
            raise KeyboardInterrupt
        return real(*args)  # type: ignore[arg-type]

    monkeypatch.setattr(tol, "run_chunk", interrupted)
    assert main(["tolerance", TWO_BAY, TWO_BAY_TOL, "-n", "30000", "--json", "-"]) == 130
    captured = capsys.readouterr()
    doc = json.loads(captured.out)
    assert doc["partial"] and doc["samples"] == 8192 and doc["requested"] == 30000
    assert "interrupted after 8192 of 30000 samples" in captured.err
