"""HTML reports of what-if comparisons and outage sweeps, their charts, and ``--html``.

For the pilot line and the two-bay fab, a few what-if cases and a full
single-outage sweep are reported. Each page must parse with balanced tags,
name every case, outage and scanner, carry the layout's SHA-256 and the rest
of the provenance, and reference nothing outside itself. The charts must
render without a warning, and the CLI must write the pages and never write
over an input.
"""

from __future__ import annotations

import functools
import pathlib
import re
import subprocess
import sys
import warnings

import pytest

from beamplan import __version__
from beamplan.analyses.cases import parse_cases
from beamplan.analyses.compare import Comparison, compare_cases
from beamplan.analyses.outages import SweepReport, outage_cases, run_sweep
from beamplan.cli.main import main
from beamplan.layout.loader import parse_layout
from beamplan.layout.yamlpos import load_yaml, parse_yaml
from beamplan.network.graph import Network, build_network
from beamplan.report import CAUTION
from beamplan.report.html_analyses import cases_html, comparison_plans, sweep_html
from beamplan.report.plots import case_style, headroom_across_cases, outage_impact
from tests.conftest import LAYOUTS
from tests.test_diagram import svg_lines
from tests.test_html import parse

DATE = "2024-02-29"  # a fixed report date
PILOT, TWO_BAY = "pilot-line.yaml", "two-bay.yaml"
# Ids from the layout files: layouts/pilot-line.yaml (halo-fel, m3, litho-p1..p3) and
# layouts/two-bay.yaml (fel-main, an-fold, litho-b6).
CASES = {
    PILOT: """\
format: 1
cases:
  m3-out: {note: the litho-p2 fold mirror is out, changes: [{fail: m3}]}
  weak-source: {changes: [{scale: {halo-fel.power: 0.5}}]}
  no-p3: {changes: [{drop: litho-p3}]}
  p1-off: {changes: [{fail: litho-p1}]}
""",
    TWO_BAY: """\
format: 1
cases:
  an-fold-out: {note: bay A north aisle fold, changes: [{fail: an-fold}]}
  weak-main: {changes: [{scale: {fel-main.power: 0.9}}]}
  no-b6: {changes: [{drop: litho-b6}]}
""",
}
EXTERNAL = ("http:", "https:", "<link", "<script", "<img", "<iframe", "<object", "<embed",
            "@import", "src=", "//fonts", "@font-face")  # as tests/test_html.py


@functools.cache
def comparison(name: str) -> Comparison:
    """The comparison of a demo layout with its cases (made once per test run)."""
    doc = load_yaml(str(LAYOUTS / name))
    cases = parse_cases(parse_yaml(CASES[name], "cases.yaml"))
    return compare_cases(parse_layout(doc), cases, base_doc=doc)


@functools.cache
def sweep(name: str) -> tuple[Network, SweepReport]:
    """A demo layout's network and its single-outage sweep (made once per test run)."""
    network = build_network(parse_layout(load_yaml(str(LAYOUTS / name))))
    return network, run_sweep(network, outage_cases(network))


@functools.cache
def page(kind: str, name: str) -> str:
    if kind == "cases":
        return cases_html(comparison(name), layout_path=f"layouts/{name}",
                          cases_path="studies/cases.yaml", version=__version__, date=DATE)
    network, report = sweep(name)
    return sweep_html(report, network, layout_path=f"layouts/{name}", version=__version__,
                      date=DATE)


def text_of(html: str) -> str:
    return " ".join(parse(html).text)


PAGES = [(kind, name) for kind in ("cases", "sweep") for name in (PILOT, TWO_BAY)]


@pytest.mark.parametrize(("kind", "name"), PAGES)
def test_page_is_well_formed(kind: str, name: str) -> None:
    html = page(kind, name)
    assert html.startswith("<!DOCTYPE html>\n<html lang=\"en\">")
    checker = parse(html)
    assert checker.problems == [] and checker.stack == []  # every tag closed, in order
    for tag in ("html", "head", "title", "body", "main", "header", "footer", "style"):
        assert checker.seen.count(tag) == 1, tag  # one style: the inline CSS
    assert checker.seen.count("svg") == 1  # one chart per page (html_analyses)
    assert ("meta", "charset", "utf-8") in checker.attrs
    ids = [v for _, k, v in checker.attrs if k == "id"]
    assert len(ids) == len(set(ids))
    assert "@media print" in html  # the plan report's CSS (report/html.py)


@pytest.mark.parametrize(("kind", "name"), PAGES)
def test_page_carries_the_caution_and_the_provenance(kind: str, name: str) -> None:
    html = page(kind, name)
    text = text_of(html)
    base = comparison(name).base if kind == "cases" else sweep(name)[1].base
    assert len(base.sha256) == 64 and base.sha256 in text  # SHA-256 in hex
    provenance = html[html.index('<section id="provenance">'):]
    assert f"<dt>layout file</dt><dd>{name}</dd>" in provenance
    assert "layouts/" not in provenance  # the file name only, not its folder
    if kind == "cases":  # the case file by name, without "studies/"
        assert "<dt>cases file</dt><dd>cases.yaml</dd>" in provenance
    assert f"beamplan{__version__}" in text.replace(" ", "")
    assert base.solver in text and base.solver_version in text and DATE in text
    assert CAUTION in text


@pytest.mark.parametrize("name", [PILOT, TWO_BAY])
def test_cases_page_names_every_case_and_scanner(name: str) -> None:
    c = comparison(name)
    html = page("cases", name)
    text = text_of(html)
    for case in c.cases:
        assert case.name in text
        assert case.note in text  # notes from CASES above
        for move in case.moves:
            assert move.element in text
        for binding in case.newly_binding:
            assert binding in text
    for sid in c.scanner_ids:  # base and cases, in the order of Comparison.scanner_ids
        assert sid in text
    for heading in ("Summary", "Cases", "Scanners", "What changes per case",
                    "Headroom across cases", "Provenance"):
        assert f"<h2>{heading}</h2>" in html
    assert "dropped" in text  # each layout has a drop case (CASES above)
    if name == PILOT:
        # m3 feeds litho-p2 alone (layouts/pilot-line.yaml; tests/test_cases.py)
        assert "litho-p2 cut off" in text
        assert "out of service" in text  # p1-off fails a scanner (CASES above)


@pytest.mark.parametrize("name", [PILOT, TWO_BAY])
def test_sweep_page_ranks_every_outage(name: str) -> None:
    network, report = sweep(name)
    html = page("sweep", name)
    text = text_of(html)
    in_use = [n.id for n in network.nodes if n.in_use]
    # one case per node in service (outage_cases); 11 for the pilot line (tests/test_cases.py)
    assert report.total_cases == report.finished == len(in_use)
    assert name != PILOT or report.finished == 11
    rows = html[html.index('<section id="outages">'):html.index('<section id="chart">')]
    labels = re.findall(r"<tr><td class=\"num\">\d+</td><td>([^<]+)</td>", rows)
    assert labels == [r.label for r in report.results]  # every case, in the ranked order
    for s in network.scanners:
        assert s.id in text
    for node in report.single_points:
        assert node in text
    assert report.disagreements == ()  # dominators and re-plans agree (outages._cross_check)
    assert "re-plans agree" in text
    for heading in ("Outages ranked by impact", "Impact chart", "Single points of failure",
                    "Cross-check", "Base plan", "Provenance"):
        assert f"<h2>{heading}</h2>" in html


@pytest.mark.parametrize(("kind", "name"), PAGES)
def test_page_references_nothing_outside_itself(kind: str, name: str) -> None:
    html = page(kind, name)
    lowered = html.lower()
    for needle in EXTERNAL:
        assert needle not in lowered, needle
    refs = [v for _, k, v in parse(html).attrs if k in ("href", "xlink:href", "src")]
    assert refs and all(v.startswith("#") for v in refs)  # only links within the page
    assert all(u.startswith("#") for u in re.findall(r"url\(([^)]*)\)", html))


def test_pages_escape_what_the_layout_and_the_cases_say() -> None:
    hostile = """\
layout: '<script>x</script> & "quoted"'
format: 1
sources: {src: {power: 1 kW}}
elements:
  m1: {kind: mirror, reflectivity: 0.9}
scanners: {s1: {power: 500 W}, s2: {power: 100 W}}
beamlines: ["src -> m1", "m1 -> t1", "t1.a -> s1", "t1.b -> s2"]
"""
    hostile = hostile.replace("elements:\n", "elements:\n  t1: {kind: splitter, outputs: "
                              "{a: {efficiency: 0.9}, b: {efficiency: 0.9}}}\n")
    doc = parse_yaml(hostile, "h.yaml")
    cases = parse_cases(parse_yaml("format: 1\ncases:\n  '<b>c</b>': {note: '<i>n</i>', "
                                   "changes: [{drop: s2}]}\n", "cases.yaml"))
    c = compare_cases(parse_layout(doc), cases, base_doc=doc)
    network = build_network(parse_layout(doc))
    pages = [cases_html(c, layout_path="a<u>.yaml", cases_path="c<u>.yaml", version="<v>",
                        date=DATE),
             sweep_html(run_sweep(network, outage_cases(network)), network,
                        layout_path="a<u>.yaml", version="<v>", date=DATE)]
    for html in pages:
        for tag in ("<script", "<b>", "<i>", "<u>", "<v>"):
            assert tag not in html, tag
        assert "&lt;script&gt;x&lt;/script&gt; &amp; &quot;quoted&quot;" in html
        checker = parse(html)
        assert checker.problems == [] and checker.stack == []
    assert "&lt;b&gt;c&lt;/b&gt;" in pages[0] and "&lt;i&gt;n&lt;/i&gt;" in pages[0]


def test_date_defaults_to_today() -> None:
    import datetime

    network, report = sweep(PILOT)
    today = datetime.date.today().isoformat()
    assert today in cases_html(comparison(PILOT), layout_path="x.yaml", cases_path=None,
                               version="0")
    assert today in sweep_html(report, network, layout_path="x.yaml", version="0")


def test_steady_comparison_reports_its_tolerance() -> None:
    # litho-p1's max_power down to 1 kW: with settings stability at 20 % only a1
    # moves (tests/test_cases.py, test_settings_stability_moves_only_the_knob_that_must_move)
    doc = load_yaml(str(LAYOUTS / PILOT))
    cases = parse_cases(parse_yaml("format: 1\ncases:\n  c: {changes: [{set: "
                                   "{litho-p1.max_power: 1 kW}}]}\n", "cases.yaml"))
    c = compare_cases(parse_layout(doc), cases, base_doc=doc, steady=0.2)
    html = cases_html(c, layout_path=PILOT, cases_path=None, version="0", date=DATE)
    assert {m.element for m in c.cases[0].moves} == {"a1"}
    changes = html[html.index('<section id="changes">'):html.index('<section id="chart">')]
    assert "<td>a1</td>" in changes and "<td>t1</td>" not in changes
    assert "best factor" in html and "Settings stability: held within 20.00%" in html
    assert "none: changes given on the command line" in html  # cases_path=None


# -- the charts ---------------------------------------------------------------------

@pytest.mark.parametrize("name", [PILOT, TWO_BAY])
def test_charts_render_without_warnings(name: str) -> None:
    plans = comparison_plans(comparison(name))
    _, report = sweep(name)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        cases_svg = headroom_across_cases(plans).svg()
        impact_svg = outage_impact(report).svg()
        for picture in (headroom_across_cases(plans), outage_impact(report, top=5)):
            assert picture.data("png").startswith(b"\x89PNG\r\n\x1a\n")  # PNG signature
    assert caught == []
    lines = set(svg_lines(cases_svg))
    assert {case for case, _ in plans} <= lines  # the legend names every case
    assert set(comparison(name).scanner_ids) <= lines
    assert {r.label for r in report.results[:20]} <= set(svg_lines(impact_svg))  # top=20


def test_headroom_across_cases_leaves_out_a_scanner_out_of_service() -> None:
    # p1-off fails litho-p1 (CASES above); the planner gives it headroom 0.0, which
    # would sit on the need line (optimise/planner.py), so it gets no mark
    plans = comparison_plans(comparison(PILOT))
    ax = headroom_across_cases(plans).figure.axes[0]
    for (_, plan), line in zip(plans, ax.lines, strict=False):  # one line per case, first
        serving = [s for s in plan.scanners if s.status != "out of service"]
        assert len(line.get_xdata()) == len(serving)
    name, plan = plans[-1]
    assert name == "p1-off" and plan.scanner("litho-p1").status == "out of service"


def test_outage_impact_draws_the_top_cases_in_the_sweeps_order() -> None:
    _, report = sweep(PILOT)
    picture = outage_impact(report, top=5)
    ax = picture.figure.axes[0]
    assert len(ax.patches) == 5  # one bar per case shown
    widths = [p.get_width() for p in ax.patches]
    assert widths == pytest.approx([100 * r.headroom_lost for r in report.results[:5]])
    labels = [t.get_text() for t in ax.get_yticklabels()]
    assert labels == [r.label for r in report.results[:5]]
    # halo-fel ranks first: the one source cuts everyone off (run_sweep's doctest);
    # m3 cuts off litho-p2 alone (tests/test_cases.py, test_cli_sweep)
    assert labels[0] == "halo-fel"
    assert "cuts off litho-p2" in " ".join(svg_lines(outage_impact(report).svg()))
    assert "the top 5 of 11" in " ".join(svg_lines(picture.svg()))


def test_case_styles_stay_apart_for_many_cases() -> None:
    # 6 colours × 6 markers (plots.CASE_STYLES): 36 cases without a repeat
    assert len({case_style(k) for k in range(36)}) == 36


def test_new_report_modules_import_without_matplotlib() -> None:
    code = ("import sys, beamplan.report.html_analyses, beamplan.report.draw, "
            "beamplan.report.dot, beamplan.cli.analyses; print('matplotlib' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, cwd=LAYOUTS.parent)
    assert out.stdout.strip() == "False"


# -- the CLI --------------------------------------------------------------------------

LAYOUT = "layouts/pilot-line.yaml"


def test_cli_cases_writes_the_html(tmp_path: pathlib.Path,
                                   capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "cases.html"
    code = main(["cases", LAYOUT, "--fail", "m3", "--html", str(path)])
    capsys.readouterr()
    assert code == 3  # m3 out cuts litho-p2 off: a scanner short exits 3 (docs/exit-codes.md)
    html = path.read_text(encoding="utf-8")
    text = text_of(html)
    assert "command-line" in text  # the case made of options (cli/analyses.py)
    assert "none: changes given on the command line" in text
    assert "litho-p2 cut off" in text
    assert [p.name for p in tmp_path.iterdir()] == ["cases.html"]  # no temporary file left
    case_file = tmp_path / "study.yaml"
    case_file.write_text(CASES[PILOT])
    code = main(["cases", LAYOUT, str(case_file), "--html", str(path), "-q"])
    text = text_of(path.read_text(encoding="utf-8"))
    assert code == 3 and "study.yaml" in text and "weak-source" in text


def test_cli_sweep_writes_the_html(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "sweep.html"
    assert main(["sweep", LAYOUT, "--html", str(path), "-q", "--top", "3"]) == 0
    html = path.read_text(encoding="utf-8")
    assert "Single points of failure" in html and "The 3 most harmful outages" in html


def test_cli_refuses_to_write_the_html_over_an_input(tmp_path: pathlib.Path,
                                                     capsys: pytest.CaptureFixture[str]
                                                     ) -> None:
    layout = tmp_path / "pilot.yaml"
    layout.write_text((LAYOUTS / PILOT).read_text())
    case_file = tmp_path / "cases.yaml"
    case_file.write_text(CASES[PILOT])
    before = layout.read_bytes(), case_file.read_bytes()
    runs = [["cases", str(layout), "--fail", "m3", "--html", str(layout)],
            ["cases", str(layout), str(case_file), "--html", str(case_file)],
            ["sweep", str(layout), "--html", str(layout), "-q"]]
    for args in runs:
        assert main(args) == 2, args  # a usage error exits 2 (docs/exit-codes.md)
        assert "refusing to write over the input" in capsys.readouterr().err
    assert (layout.read_bytes(), case_file.read_bytes()) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["cases.yaml", "pilot.yaml"]
