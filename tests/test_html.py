"""The self-contained HTML report: well formed, complete, escaped, offline, and drawn.

Every demo layout in layouts/*.yaml is reported. The page must parse with
balanced tags, name every scanner, carry the layout's SHA-256 and the rest of
the provenance, and reference nothing outside itself. Where ``/usr/bin/chromium``
exists, a headless browser renders it and the screenshot must not be blank.
(The page has no script at all, which is how it reads with JavaScript off;
switching scripts off in headless chromium stops its screenshots, so the
browser check leaves them on.)
"""

from __future__ import annotations

import functools
import os
import pathlib
import re
import shutil
import subprocess
from html.parser import HTMLParser

import pytest

from beamplan import __version__
from beamplan.layout.loader import load_layout
from beamplan.network.graph import Network, build_network
from beamplan.optimise.planner import plan_network
from beamplan.optimise.result import Plan
from beamplan.report import CAUTION
from beamplan.report.html import FAMILIES, plan_html
from tests.conftest import LAYOUTS, network_from_text

DEMOS = sorted(p.name for p in LAYOUTS.glob("*.yaml"))
DATE = "2024-02-29"  # a fixed report date
CHROMIUM = "/usr/bin/chromium"
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source",
        "track", "wbr"}  # HTML void elements (WHATWG HTML, "void elements")


@functools.cache
def demo(name: str) -> tuple[Network, Plan, str]:
    """A demo layout's network, its plan and its report (made once per test run)."""
    network = build_network(load_layout(str(LAYOUTS / name)))
    plan = plan_network(network)
    page = plan_html(plan, network, layout_path=f"layouts/{name}", version=__version__,
                     date=DATE)
    return network, plan, page


class Checker(HTMLParser):
    """Collect tags, attributes and text; fail on any tag closed out of order."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.seen: list[str] = []
        self.attrs: list[tuple[str, str, str]] = []
        self.text: list[str] = []
        self.problems: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.seen.append(tag)
        self.attrs += [(tag, k, v or "") for k, v in attrs]
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.seen.append(tag)  # <path .../> in inline SVG
        self.attrs += [(tag, k, v or "") for k, v in attrs]

    def handle_endtag(self, tag: str) -> None:
        if not self.stack or self.stack[-1] != tag:
            self.problems.append(f"</{tag}> closes <{self.stack[-1] if self.stack else '-'}>")
        else:
            self.stack.pop()

    def handle_data(self, data: str) -> None:
        self.text.append(data)


def parse(page: str) -> Checker:
    checker = Checker()
    checker.feed(page)
    checker.close()
    return checker


@pytest.mark.parametrize("name", DEMOS)
def test_report_is_well_formed(name: str) -> None:
    _, _, page = demo(name)
    assert page.startswith("<!DOCTYPE html>\n<html lang=\"en\">")
    checker = parse(page)
    assert checker.problems == [] and checker.stack == []  # every tag closed, in order
    for tag in ("html", "head", "title", "body", "main", "header", "footer", "style"):
        assert checker.seen.count(tag) == 1, tag  # one style: the inline CSS
    assert checker.seen.count("svg") == 4  # the diagram and three plots
    assert ("meta", "charset", "utf-8") in checker.attrs
    ids = [v for _, k, v in checker.attrs if k == "id"]
    assert len(ids) == len(set(ids))  # the pictures' ids are prefixed apart


@pytest.mark.parametrize("name", DEMOS)
def test_report_holds_every_table_and_the_provenance(name: str) -> None:
    _, plan, page = demo(name)
    text = " ".join(parse(page).text)
    for s in plan.scanners:
        assert s.id in text
    for e in plan.elements:
        assert e.id in text
    assert plan.sha256 in text and len(plan.sha256) == 64  # SHA-256 in hex
    provenance = page[page.index('<section id="provenance">'):]
    assert f"<dt>layout file</dt><dd>{name}</dd>" in provenance
    assert "layouts/" not in provenance  # the file name only, not the folder it was in
    assert f"beamplan{__version__}" in text.replace(" ", "")
    assert plan.solver in text and plan.solver_version in text and DATE in text
    assert CAUTION in text
    for heading in ("Summary", "Scanners", "Power flow", "Elements", "Settings", "Losses",
                    "Binding constraints", "Warnings", "Provenance"):
        assert f"<h2>{heading}</h2>" in page
    for b in plan.binding:
        assert FAMILIES[b.family] in text
    for s in plan.scanners:
        if s.status != "met":
            assert "; ".join(s.limits) in text  # the shortfall reasons
    assert "@media print" in page


@pytest.mark.parametrize("name", DEMOS)
def test_report_references_nothing_outside_itself(name: str) -> None:
    _, _, page = demo(name)
    lowered = page.lower()
    for needle in ("http:", "https:", "<link", "<script", "<img", "<iframe", "<object",
                   "<embed", "@import", "src=", "//fonts", "@font-face"):
        assert needle not in lowered, needle
    refs = [v for _, k, v in parse(page).attrs if k in ("href", "xlink:href", "src")]
    assert refs and all(v.startswith("#") for v in refs)  # only links within the page
    assert all(u.startswith("#") for u in re.findall(r"url\(([^)]*)\)", page))


def test_report_escapes_what_the_layout_says() -> None:
    hostile = """\
layout: '<script>x</script> & "quoted"'
format: 1
sources: {src: {power: 1 kW}}
elements:
  m1: {kind: mirror, reflectivity: 0.9, heat_limit: 5 kW}
scanners: {s1: {power: 500 W}}
beamlines: ["src -> m1 -> s1"]
"""
    network = network_from_text(hostile)
    page = plan_html(plan_network(network), network, layout_path="a<b>.yaml",
                     version="<v>", date=DATE)
    assert "<script" not in page and "<b>" not in page and "<v>" not in page
    assert "&lt;script&gt;x&lt;/script&gt; &amp; &quot;quoted&quot;" in page
    checker = parse(page)
    assert checker.problems == [] and checker.stack == []


def test_report_date_defaults_to_today() -> None:
    import datetime

    network, plan, _ = demo(DEMOS[0])
    page = plan_html(plan, network, layout_path="x.yaml", version="0")
    assert datetime.date.today().isoformat() in page


@pytest.mark.skipif(not os.path.exists(CHROMIUM),
                    reason=f"no headless browser at {CHROMIUM}; the browser check needs it")
def test_browser_renders_the_report(tmp_path: pathlib.Path) -> None:
    from PIL import Image, ImageStat

    name = "two-bay.yaml" if "two-bay.yaml" in DEMOS else DEMOS[0]
    page = tmp_path / "report.html"
    page.write_text(demo(name)[2], encoding="utf-8")
    shot = tmp_path / "out.png"
    args = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
            "--no-first-run", "--disable-background-networking", "--disable-component-update",
            "--disable-sync", f"--user-data-dir={tmp_path / 'profile'}",
            f"--screenshot={shot}", "--window-size=1200,3000", page.as_uri()]
    subprocess.run(args, capture_output=True, timeout=180, check=False)
    assert shot.exists(), "chromium wrote no screenshot"
    with Image.open(shot) as image:
        grey = image.convert("L")
        assert grey.size == (1200, 3000)
        # a blank page has no variance; text, tables and pictures give plenty
        # (a standard deviation of 20 grey levels: our threshold, no source)
        assert ImageStat.Stat(grey).stddev[0] > 20
        # and not only at the top: the lower half (tables, diagram) is drawn too
        lower = grey.crop((0, 1500, 1200, 3000))
        assert ImageStat.Stat(lower).stddev[0] > 20
    shutil.rmtree(tmp_path / "profile", ignore_errors=True)


# -- campus scale and page width ---------------------------------------------------

def test_report_of_a_campus_draws_the_summary() -> None:
    from tests.perf.campus import campus_yaml

    network = network_from_text(campus_yaml(41), "campus.yaml")  # past the 40-scanner mark
    plan = plan_network(network)
    folded = plan_html(plan, network, layout_path="campus.yaml", version="0", date=DATE)
    assert '<figure class="fit">' in folded and "bay-2-m1 and below" in folded
    assert 'id="diagram-node-s2-3-f1"' not in folded  # inside a folded bay
    small_network, small_plan, small = demo("two-bay.yaml")  # 12 scanners: every box
    assert '<figure class="fit">' not in small and 'id="diagram-node-a-fold"' in small
    summary = plan_html(small_plan, small_network, layout_path="two-bay.yaml", version="0",
                        date=DATE, detail=False)
    assert '<figure class="fit">' in summary  # the outline; all 12 scanners fit unfolded


def _cases_page(layout: pathlib.Path | str, cases_text: str) -> str:
    from beamplan.analyses.cases import parse_cases
    from beamplan.analyses.compare import compare_cases
    from beamplan.layout.yamlpos import load_yaml, parse_yaml
    from beamplan.report.html_analyses import cases_html

    doc = load_yaml(str(layout))
    from beamplan.layout.loader import parse_layout

    comparison = compare_cases(parse_layout(doc), parse_cases(parse_yaml(cases_text, "c.yaml")),
                               base_doc=doc)
    return cases_html(comparison, layout_path=str(layout), cases_path="c.yaml",
                      version="0", date=DATE)


_PROBE = ("<script>document.body.setAttribute('data-scroll-width', "
          "String(document.documentElement.scrollWidth))</script>")


def _scroll_width(page: str, folder: pathlib.Path) -> int:
    """document.scrollWidth of ``page`` in headless chromium with a 1280 px wide window."""
    folder.mkdir()
    probe = folder / "probe.html"
    probe.write_text(page.replace("</body>", _PROBE + "</body>"), encoding="utf-8")
    args = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
            "--no-first-run", "--disable-background-networking", "--disable-component-update",
            "--disable-sync", f"--user-data-dir={folder / 'profile'}", "--window-size=1280,900",
            "--dump-dom", probe.as_uri()]
    done = subprocess.run(args, capture_output=True, text=True, timeout=180, check=False)
    shutil.rmtree(folder / "profile", ignore_errors=True)
    found = re.search(r'data-scroll-width="(\d+)"', done.stdout)
    assert found, f"chromium gave no width: {done.stderr[-500:]}"
    return int(found.group(1))


@pytest.mark.skipif(not os.path.exists(CHROMIUM),
                    reason=f"no headless browser at {CHROMIUM}; the browser check needs it")
def test_pages_fit_a_1280_px_window(tmp_path: pathlib.Path) -> None:
    from tests.perf.campus import campus_yaml

    campus = tmp_path / "campus.yaml"
    campus.write_text(campus_yaml(200), encoding="utf-8")
    network = build_network(load_layout(str(campus)))
    pages = {
        "two-bay plan": demo("two-bay.yaml")[2],
        "two-bay cases": _cases_page(LAYOUTS / "two-bay.yaml", (
            LAYOUTS / "cases" / "two-bay-cases.yaml").read_text(encoding="utf-8")),
        "campus plan": plan_html(plan_network(network), network, layout_path=str(campus),
                                 version="0", date=DATE),
        "campus cases": _cases_page(campus, "format: 1\ncases:\n  fel-down:\n    changes:\n"
                                    "      - scale: {fel.power: 0.9}\n  trunk-3-out:\n"
                                    "    changes:\n      - fail: trunk-3\n"),
    }
    for i, (name, page) in enumerate(pages.items()):
        # the window is 1280 px wide (the measure); a vertical scroll bar may take
        # part of it, never more
        assert _scroll_width(page, tmp_path / f"p{i}") <= 1280, name
    # the probe can fail: a page with something 2,000 px wide overflows
    wide = demo("two-bay.yaml")[2].replace("</body>", '<div style="width:2000px">x</div></body>')
    assert _scroll_width(wide, tmp_path / "wide") > 1280
