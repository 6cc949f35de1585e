"""The power-flow diagram, the plan plots and the ``draw`` command.

Every demo layout in layouts/*.yaml is drawn with and without its plan; the
pictures must name every element and scanner (SVG text stays text), draw
link widths in the order of link powers, and the DOT text must give one edge
per link. ``link_powers`` must conserve power at every node.
"""

from __future__ import annotations

import functools
import html
import itertools
import pathlib
import re
import subprocess
import sys

import numpy as np
import pytest

from beamplan.layout.loader import load_layout
from beamplan.network.behaviour import Behaviour
from beamplan.network.graph import Network, build_network
from beamplan.optimise.planner import plan_network
from beamplan.optimise.result import CONSERVATION_RTOL, Plan
from beamplan.report.diagram import (
    FONT_PT,
    HEAT_BANDS,
    PALETTE,
    WIDTH_MAX_PT,
    WIDTH_MIN_PT,
    _spread,
    diagram_model,
    link_powers,
)
from beamplan.report.dot import diagram_dot
from beamplan.report.draw import diagram_picture
from beamplan.report.plots import (
    CASE_STYLES,
    MAX_PIXELS,
    headroom_across_cases,
    headroom_chart,
    loss_steps,
    losses_chart,
)
from tests.conftest import LAYOUTS, network_from_text

DEMOS = sorted(p.name for p in LAYOUTS.glob("*.yaml"))


@functools.cache
def demo(name: str) -> tuple[Network, Plan]:
    """A demo layout's network and its headroom plan (planned once per test run)."""
    network = build_network(load_layout(str(LAYOUTS / name)))
    return network, plan_network(network)


def svg_lines(svg: str) -> list[str]:
    """Every line of text in an SVG (matplotlib writes one <text> per line)."""
    return [html.unescape(t) for t in re.findall(r"<text\b[^>]*>([^<]*)</text>", svg)]


def svg_widths(svg: str) -> dict[int, float]:
    """The stroke width of each drawn link, from its ``link-<index>`` group."""
    found = re.findall(r'<g id="link-(\d+)">\s*<path [^>]*?stroke-width: ([0-9.]+)', svg)
    return {int(i): float(w) for i, w in found}


def test_every_demo_layout_is_tested() -> None:
    # the demos the project ships (README); a new one is picked up by the glob
    assert {"pilot-line.yaml", "coated-line.yaml", "two-bay.yaml"} <= set(DEMOS)


@pytest.mark.parametrize("name", DEMOS)
def test_link_powers_conserve_power_at_every_node(name: str) -> None:
    network, plan = demo(name)
    powers = link_powers(network, plan)
    scale = max(plan.source_used_w, 1.0)
    tol = CONSERVATION_RTOL * scale  # beamplan's own balance tolerance (optimise/result.py)
    elements = {e.id: e for e in plan.elements}
    sources = {s.id: s for s in plan.sources}
    for node in network.nodes:
        into = sum(powers[lk.index] for lk in network.in_links[node.id])
        out = sum(powers[lk.index] for lk in network.links if lk.tail == node.id)
        if node.is_source:
            assert out == pytest.approx(sources[node.id].output_w, abs=tol)
        elif node.is_scanner:
            assert into == pytest.approx(plan.scanner(node.id).delivered_w, abs=tol)
        else:
            e = elements[node.id]
            assert into == pytest.approx(e.incident_w, abs=tol), node.id
            assert out == pytest.approx(e.output_w, abs=tol), node.id
            assert into - out == pytest.approx(e.absorbed_w, abs=tol), node.id
    assert all(p >= 0 for p in powers)


@pytest.mark.parametrize("planned", [True, False], ids=["plan", "layout-only"])
@pytest.mark.parametrize("name", DEMOS)
def test_svg_names_every_element_and_scanner(name: str, planned: bool) -> None:
    network, plan = demo(name)
    svg = diagram_picture(network, plan if planned else None).svg()
    lines = set(svg_lines(svg))
    missing = [n.id for n in network.nodes if n.id not in lines]
    assert not missing  # each box's first line is its id, as text (svg.fonttype 'none')
    assert "font-family: sans-serif" in svg and "DejaVu" not in svg  # no named font


@pytest.mark.parametrize("name", DEMOS)
def test_grouped_svg_still_names_every_element(name: str) -> None:
    network, plan = demo(name)
    svg = diagram_picture(network, plan, group_chains=True).svg()
    words = {w for line in svg_lines(svg) for w in re.split(r"[\s›,()]+", line)}
    assert not [n.id for n in network.nodes if n.id not in words]


@pytest.mark.parametrize("name", DEMOS)
def test_link_widths_are_ordered_like_link_powers(name: str) -> None:
    network, plan = demo(name)
    powers = link_powers(network, plan)
    widths = svg_widths(diagram_picture(network, plan).svg())
    assert sorted(widths) == list(range(len(network.links)))  # every link drawn, once
    for i, j in itertools.permutations(range(len(powers)), 2):
        if powers[i] < powers[j]:
            assert widths[i] <= widths[j] + 1e-9, (network.links[i].label, network.links[j].label)
            if widths[i] > WIDTH_MIN_PT and powers[j] > powers[i] * (1 + 1e-4):
                assert widths[i] < widths[j]  # above the floor, width ∝ power: strict
                # (SVG keeps 6 decimals, so powers equal to 1e-4 may draw equal)
    top = max(range(len(powers)), key=powers.__getitem__)
    assert widths[top] == pytest.approx(WIDTH_MAX_PT)
    assert min(widths.values()) >= WIDTH_MIN_PT  # every link stays visible


def parse_dot(text: str) -> tuple[set[str], list[tuple[str, str]], dict[str, str]]:
    """A tiny DOT reader for our own output: node ids, edges, node labels."""
    assert text.startswith("digraph ") and text.rstrip().endswith("}")
    body = re.sub(r"//[^\n]*", "", text)
    assert body.count("{") == body.count("}")
    quoted = r'"((?:[^"\\]|\\.)*)"'
    nodes = dict(re.findall(rf"^\s*{quoted} \[label={quoted}", body, re.M))
    edges = re.findall(rf"^\s*{quoted} -> {quoted} \[", body, re.M)
    for line in body.splitlines()[1:-1]:
        assert not line.strip() or line.rstrip().endswith(";") or line.strip().startswith("{")
    return set(nodes), edges, nodes


@pytest.mark.parametrize("name", DEMOS)
def test_dot_parses_back_one_edge_per_link(name: str) -> None:
    network, plan = demo(name)
    for chosen in (plan, None):
        ids, edges, _ = parse_dot(diagram_dot(network, chosen))
        assert ids == {n.id for n in network.nodes}
        assert sorted(edges) == sorted((lk.tail, lk.head) for lk in network.links)


@pytest.mark.parametrize("name", DEMOS)
def test_grouped_dot_keeps_every_id_in_a_label(name: str) -> None:
    network, plan = demo(name)
    ids, edges, labels = parse_dot(diagram_dot(network, plan, group_chains=True))
    text = " ".join(labels.values()).replace("\\n", " ")
    assert all(re.search(rf"(^|[\s›]){re.escape(n.id)}($|[\s›])", text) for n in network.nodes)
    model = diagram_model(network, plan, group_chains=True)
    assert ids == set(model.boxes) and len(edges) == len(model.wires)
    hidden = len(network.links) - len(edges)  # links inside a chain
    assert hidden == sum(len(b.members) - 1 for b in model.boxes.values())


@pytest.mark.parametrize("group", [False, True])
@pytest.mark.parametrize("name", DEMOS)
def test_layout_runs_left_to_right_without_overlaps(name: str, group: bool) -> None:
    network, plan = demo(name)
    model = diagram_model(network, plan, group_chains=group)
    last = len(model.x) - 1
    for box in model.boxes.values():
        node = network.node[box.key]
        assert box.column == 0 if node.is_source else box.column > 0
        if node.is_scanner:
            assert box.column == last
    for w in model.wires:
        assert model.boxes[w.head].column > model.boxes[w.tail].column
        assert len(w.ys) == model.boxes[w.head].column - model.boxes[w.tail].column + 1
    assert_no_overlaps(model)


def assert_no_overlaps(model: object) -> None:
    boxes = sorted(model.boxes.values(), key=lambda b: (b.column, b.y))  # type: ignore[attr-defined]
    for a, b in itertools.pairwise(boxes):
        if a.column == b.column:
            assert b.y - a.y >= (a.height + b.height) / 2 - 1e-9, (a.key, b.key)


def test_spread_keeps_order_and_gaps_and_is_nearest() -> None:
    # hand calculation: two items wanting the same place split evenly around it
    assert _spread([1.0, 1.0], [1.0]) == pytest.approx([0.5, 1.5])
    assert _spread([0.0, 5.0, 5.2], [1.0, 1.0]) == pytest.approx([0.0, 4.6, 5.6])
    assert _spread([3.0], []) == [3.0]


SWITCHED = """\
layout: crossed
format: 1
sources: {a: {power: 2 kW}, b: {power: 2 kW}}
elements:
  ta: {kind: splitter, outputs: {x: {}, y: {}}}
  sw: {kind: switch}
scanners: {s1: {power: 300 W}, s2: {power: 300 W}}
beamlines: ["a -> ta", "ta.x -> sw", "b -> sw", "sw -> s2", "ta.y -> s1"]
"""


def crossings(model: object) -> int:
    """Pairs of drawn links that cross between two neighbouring columns."""
    segments: dict[int, list[tuple[float, float]]] = {}
    for w in model.wires:  # type: ignore[attr-defined]
        first = model.boxes[w.tail].column  # type: ignore[attr-defined]
        for c, (y0, y1) in enumerate(itertools.pairwise(w.ys), start=first):
            segments.setdefault(c, []).append((y0, y1))
    return sum(1 for segs in segments.values() for (a0, a1), (b0, b1) in
               itertools.combinations(segs, 2) if (a0 - b0) * (a1 - b1) < -1e-12)


def test_barycentre_order_untangles_a_switch() -> None:
    # depth-first order puts s2 (behind the switch) above s1 and crosses two links;
    # one barycentre sweep untangles them (hand-drawn: the graph is planar)
    network = network_from_text(SWITCHED)
    model = diagram_model(network, plan_network(network))
    assert crossings(model) == 0
    assert model.boxes["a"].y < model.boxes["b"].y
    assert_no_overlaps(model)


@pytest.mark.parametrize("name", DEMOS)
def test_demo_diagrams_have_no_crossings(name: str) -> None:
    network, plan = demo(name)  # every demo is drawn planar (they are trees plus switches)
    assert crossings(diagram_model(network, plan)) == 0


def large_layout(scanners: int = 50, chain: int = 9) -> str:
    """A fab of ``scanners`` scanners and about 10 elements each (500 for 50)."""
    lines = ["layout: large", "format: 1", "sources: {fel: {power: 60 kW}}", "elements:"]
    links, open_ports, k = ["fel -> m0"], ["m0"], 0
    lines.append("  m0: {kind: mirror, reflectivity: 0.97}")
    while len(open_ports) < scanners:  # a tree of splitters: one port becomes two
        k += 1
        port = open_ports.pop(0)
        lines.append(f"  t{k}: {{kind: splitter, outputs: {{l: {{}}, r: {{}}}}}}")
        links.append(f"{port} -> t{k}")
        open_ports += [f"t{k}.l", f"t{k}.r"]
    for i, port in enumerate(open_ports):
        ids = [f"b{i}-{j}" for j in range(chain)]
        for j, e in enumerate(ids):
            kind = "mirror, reflectivity: 0.95" if j % 2 else "drift, transmission: 0.99"
            lines.append(f"  {e}: {{kind: {kind}{', heat_limit: 90 W' if j == 1 else ''}}}")
        links.append(" -> ".join([port, *ids, f"s{i}"]))
    lines.append("scanners:")
    lines += [f"  s{i}: {{power: 250 W}}" for i in range(scanners)]
    lines.append("beamlines:")
    lines += [f"  - {link}" for link in links]
    return "\n".join(lines) + "\n"


def test_large_network_stays_legible() -> None:
    network = network_from_text(large_layout())
    assert len(network.scanners) == 50 and len(network.elements) >= 500  # the brief's size
    plan = plan_network(network)
    model = diagram_model(network, plan)
    assert_no_overlaps(model)
    picture = diagram_picture(network, plan)
    width, height = picture.figure.get_size_inches()
    # the figure grows with columns and rows instead of shrinking the text
    assert width >= len(model.x) * model.box_width and height >= model.height
    assert FONT_PT >= 6  # 6 pt: smallest print size we accept (common practice, no source)
    assert max(width, height) * min(150, MAX_PIXELS / max(width, height)) <= MAX_PIXELS + 1
    grouped = diagram_model(network, plan, group_chains=True)
    assert len(grouped.x) < len(model.x)  # the chains fold into one column each
    assert set(svg_lines(picture.svg())) >= {n.id for n in network.nodes}


@pytest.mark.parametrize("name", DEMOS)
def test_plots_run_on_every_demo(name: str) -> None:
    network, plan = demo(name)  # pytest runs with -W error: any warning fails here
    head = headroom_chart(plan).svg()
    assert set(svg_lines(head)) >= {s.id for s in plan.scanners}
    for by in ("kind", "element"):
        assert "delivered" in svg_lines(losses_chart(plan, by=by).svg())
    cases = [("headroom", plan), ("min-source", plan_network(network, "min-source"))]
    text = svg_lines(headroom_across_cases(cases).svg())
    assert {"headroom", "min-source"} <= set(text)


@pytest.mark.parametrize("by", ["kind", "element"])
@pytest.mark.parametrize("name", DEMOS)
def test_loss_steps_add_up_to_what_is_not_delivered(name: str, by: str) -> None:
    _, plan = demo(name)
    steps = loss_steps(plan, by, top=5)
    lost = plan.source_used_w - plan.delivered_w
    # steps under 1e-9 of the source are round-off and left out (plots.loss_steps)
    assert sum(w for _, w in steps) == pytest.approx(lost, rel=1e-6, abs=1e-6)
    assert len(steps) <= (6 if by == "element" else len(plan.losses.by_kind) + 1)


def test_pictures_render_every_format_deterministically() -> None:
    import matplotlib

    network, plan = demo("pilot-line.yaml")
    before = dict(matplotlib.rcParams)
    picture = diagram_picture(network, plan)
    assert picture.data("png").startswith(b"\x89PNG\r\n\x1a\n")  # PNG signature
    assert picture.data("pdf").startswith(b"%PDF-")  # PDF header
    assert picture.svg() == diagram_picture(network, plan).svg()  # no dates, fixed ids
    assert dict(matplotlib.rcParams) == before  # the caller's settings are left alone
    with pytest.raises(ValueError):
        picture.data("gif")


def test_report_modules_import_without_matplotlib() -> None:
    code = ("import sys, beamplan.report.diagram, beamplan.report.plots, beamplan.report.html, "
            "beamplan.cli.draw; print('matplotlib' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, cwd=LAYOUTS.parent)
    assert out.stdout.strip() == "False"


# -- the palette: colour-blind safe and legible in grey ------------------------------

# Machado, Oliveira & Fernandes (2009), "A physiologically-based model for
# simulation of color vision deficiency", severity 1.0, on linear RGB.
CVD = {
    "protan": [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216],
               [-0.003882, -0.048116, 1.051998]],
    "deutan": [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413],
               [-0.011820, 0.042940, 0.968881]],
    "tritan": [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602],
               [0.004733, 0.691367, 0.303900]],
}


def _linear(colour: str) -> np.ndarray:
    c = np.array([int(colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)  # sRGB, IEC 61966-2-1


def _lab(linear: np.ndarray) -> np.ndarray:
    xyz = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722],
                    [0.0193, 0.1192, 0.9505]]) @ np.clip(linear, 0, 1)
    t = xyz / np.array([0.95047, 1.0, 1.08883])  # D65 white
    f = np.where(t > (6 / 29) ** 3, np.cbrt(t), t / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])  # CIE 1976


def _delta(a: str, b: str, vision: str | None) -> float:
    m = np.eye(3) if vision is None else np.array(CVD[vision])
    return float(np.linalg.norm(_lab(m @ _linear(a)) - _lab(m @ _linear(b))))


def test_heat_bands_print_in_grey() -> None:
    lightness = [_lab(_linear(PALETTE[k]))[0] for k in ["heat-none", *(b[0] for b in HEAT_BANDS)]]
    # darker with every band, 10 L* apart at least: told apart on a grey print
    # (10 L*: clearly different greys, common practice, no source)
    assert all(a - b >= 10 for a, b in itertools.pairwise(lightness))


@pytest.mark.parametrize("vision", [None, *CVD])
def test_palette_stays_distinct_with_colour_blindness(vision: str | None) -> None:
    bands = ["heat-none", *(b[0] for b in HEAT_BANDS)]
    pairs = [*itertools.pairwise(bands), ("beam", "paper"), ("bind", "paper"), ("ink", "paper"),
             ("met", "beam"), ("idle", "paper"), ("heat-4", "paper")]
    # ΔE*ab ≥ 15 between marks that must be told apart (common practice, no source)
    low = {p: _delta(PALETTE[p[0]], PALETTE[p[1]], vision) for p in pairs}
    assert min(low.values()) >= 15, min(low, key=low.__getitem__)
    cases = [c for c, _ in CASE_STYLES]  # the cases differ by marker shape as well
    assert min(_delta(a, b, vision) for a, b in itertools.combinations(cases, 2)) >= 15


def test_dump_and_switch_marks(tmp_path: pathlib.Path) -> None:
    network, plan = demo("two-bay.yaml") if "two-bay.yaml" in DEMOS else demo(DEMOS[0])
    model = diagram_model(network, plan)
    kinds = {b.shape for b in model.boxes.values()}
    assert {"source", "element", "scanner"} <= kinds
    dumps = [n.id for n in network.nodes if n.behaviour is Behaviour.ABSORB]
    assert all(model.boxes[d].shape == "dump" and model.boxes[d].column == len(model.x) - 1
               for d in dumps)
    bound = {b.subject for b in plan.binding}
    assert all(model.boxes[s].binds for s in bound)  # every binding subject is ringed


# -- the draw command -----------------------------------------------------------------

@pytest.fixture
def cli(monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]):  # type: ignore[no-untyped-def]
    """``main`` with ``draw`` registered (until commands.register does it itself)."""
    from beamplan.cli import commands, draw
    from beamplan.cli.main import main

    original = commands.register

    def register(sub: object) -> None:
        original(sub)
        if "draw" not in sub.choices:  # type: ignore[attr-defined]
            draw.register(sub)

    monkeypatch.setattr(commands, "register", register)

    def run(*args: str) -> tuple[int, str, str]:
        code = main(list(args))
        out, err = capsys.readouterr()
        return code, out, err
    return run


PILOT = "layouts/pilot-line.yaml"


@pytest.mark.parametrize(("suffix", "magic"), [(".svg", b"<?xml"), (".png", b"\x89PNG"),
                                              (".pdf", b"%PDF-"), (".dot", b"digraph ")])
def test_draw_writes_the_format_its_suffix_names(cli, tmp_path: pathlib.Path, suffix: str,
                                                 magic: bytes) -> None:
    target = tmp_path / f"pilot{suffix}"
    code, out, _ = cli("draw", PILOT, "-o", str(target), "--plan")
    assert code == 0 and "drew 'pilot-line' with the headroom plan" in out
    assert target.read_bytes().startswith(magic)
    assert [p.name for p in tmp_path.iterdir()] == [target.name]  # no temporary file left


def test_draw_format_option_and_grouping(cli, tmp_path: pathlib.Path) -> None:
    target = tmp_path / "picture.out"
    code, _, _ = cli("draw", PILOT, "-o", str(target), "--format", "dot", "--group-chains",
                     "-q")
    assert code == 0
    assert '"m1" [label="m1 › m2' in target.read_text()  # m1 and m2 form one chain


def test_draw_to_stdout_and_its_limits(cli) -> None:
    code, out, _ = cli("draw", PILOT, "-o", "-", "-q")
    assert code == 0 and out.startswith("<?xml") and "litho-p1" in out
    code, _, err = cli("draw", PILOT, "-o", "-", "--format", "png")
    assert code == 2 and "binary" in err  # exit codes: docs/exit-codes.md


def test_draw_refuses_unknown_suffix_and_overwriting_the_input(cli, tmp_path: pathlib.Path
                                                               ) -> None:
    code, _, err = cli("draw", PILOT, "-o", str(tmp_path / "x.jpeg"))
    assert code == 2 and "--format" in err
    layout = tmp_path / "pilot.yaml"
    layout.write_text((LAYOUTS / "pilot-line.yaml").read_text())
    before = layout.read_bytes()
    code, _, err = cli("draw", str(layout), "-o", str(layout), "--format", "svg")
    assert code == 2 and "refusing to write over the input" in err
    assert layout.read_bytes() == before


def test_draw_exit_codes_for_missing_input_folder_and_shortfall(cli, tmp_path: pathlib.Path
                                                                ) -> None:
    assert cli("draw", "no-such.yaml", "-o", str(tmp_path / "a.svg"))[0] == 2
    assert cli("draw", PILOT, "-o", str(tmp_path / "none" / "a.svg"))[0] == 5
    short = tmp_path / "short.yaml"
    short.write_text(SWITCHED.replace("2 kW", "200 W"))  # 600 W of needs, 400 W of sources
    code, out, _ = cli("draw", str(short), "-o", str(tmp_path / "o.png"), "--goal",
                       "min-source")
    assert code == 3 and "(short)" in out  # --goal implies --plan; short plans exit 3
