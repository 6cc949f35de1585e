"""The plan as one self-contained HTML file, to share, archive and print.

Everything is inline: the CSS, the diagram and the plots as SVG. There are
no scripts, no external fonts, images or links, so the file reads the same
offline, with JavaScript off and on paper (print CSS). Every text from the
layout or the plan goes through :func:`html.escape`. Writing the file is the
caller's job (:func:`beamplan.report.files.write_atomic`).
"""

from __future__ import annotations

import datetime
import os
import re
import string
from collections.abc import Iterable, Sequence
from html import escape

from beamplan.network.behaviour import GIVEN
from beamplan.network.graph import Network
from beamplan.optimise.result import ElementResult, Plan
from beamplan.report import CAUTION
from beamplan.report.document import signed_percent
from beamplan.report.draw import diagram_picture
from beamplan.report.palette import PALETTE
from beamplan.report.plots import Picture, headroom_chart, losses_chart
from beamplan.units import format_power
from beamplan.vocabulary import FAMILIES as FAMILY_INFO
from beamplan.vocabulary import ScannerStatus, reported_families

__all__ = ["CSS", "FAMILIES", "facts", "figure", "inline_svg", "page", "pct", "plan_html", "table"]

#: What each family of binding constraint means, in words.
FAMILIES: dict[str, str] = {f: FAMILY_INFO[f].meaning for f in reported_families()}

CSS = string.Template("""
:root { color-scheme: light; }
svg * { stroke-linejoin: round; stroke-linecap: butt; }
body { font-family: system-ui, sans-serif; color: $ink; background: #fff; line-height: 1.4;
       max-width: 75rem; margin: 0 auto; padding: 1rem 1.5rem 3rem; }
h1 { font-size: 1.5rem; margin: .5rem 0 .25rem; }
h2 { font-size: 1.15rem; margin: 2rem 0 .5rem; border-bottom: 2px solid $ink; }
table { border-collapse: collapse; margin: .5rem 0 1rem; font-variant-numeric: tabular-nums; }
caption { text-align: left; font-weight: bold; padding: .25rem 0; white-space: nowrap; }
th, td { padding: .15rem .7rem .15rem 0; border-bottom: 1px solid $rule; text-align: left;
         vertical-align: top; }
th { border-bottom: 1px solid $ink; }
.num { text-align: right; padding-left: .7rem; }
.status { font-weight: bold; }
.caution { border: 2px solid $ink; padding: .5rem .8rem; margin: 1rem 0; }
dl.facts { display: grid; grid-template-columns: max-content auto; gap: .1rem 1.2rem; }
dl.facts dt { font-weight: bold; }
dl.facts dd { margin: 0; overflow-wrap: anywhere; }
.scroll { overflow-x: auto; border: 1px solid $rule; }
.scroll svg { display: block; max-width: none; height: auto; }
figure { margin: 1rem 0; }
figure.plot svg { display: block; width: min(100%, 52rem); height: auto; }
figure.fit svg { display: block; width: min(100%, 60rem); height: auto; }
.scroll table { margin: 0; }
figcaption { font-size: .9rem; margin-top: .3rem; }
code { font-family: ui-monospace, monospace; overflow-wrap: anywhere; }
nav ol { columns: 3; font-size: .9rem; }
@media print {
  body { max-width: none; padding: 0; font-size: 9.5pt; }
  nav { display: none; }
  .scroll { overflow: visible; border: none; }
  .scroll svg { max-width: 100%; height: auto; }
  h2 { break-after: avoid; }
  figure, tr, .caution { break-inside: avoid; }
  thead { display: table-header-group; }
  * { print-color-adjust: exact; -webkit-print-color-adjust: exact; }
  @page { margin: 14mm; }
}
""").substitute(ink=PALETTE["ink"], rule=PALETTE["dump"])

_SECTIONS = (("summary", "Summary"), ("scanners", "Scanners"), ("diagram", "Power flow"),
             ("elements", "Elements"), ("settings", "Settings"), ("losses", "Losses"),
             ("binding", "Binding constraints"), ("warnings", "Warnings"),
             ("provenance", "Provenance"))


def pct(value: float) -> str:
    return signed_percent(value)


def table(caption: str, header: Sequence[str], rows: Iterable[Sequence[str]],
          numeric: Sequence[int] = ()) -> str:
    """An HTML table; every cell is escaped; columns in ``numeric`` align right."""
    def cell(tag: str, i: int, text: str) -> str:
        kind = ' class="num"' if i in numeric else ""
        scope = ' scope="col"' if tag == "th" else ""
        return f"<{tag}{kind}{scope}>{escape(text)}</{tag}>"

    head = "".join(cell("th", i, h) for i, h in enumerate(header))
    body = "\n".join("<tr>" + "".join(cell("td", i, c) for i, c in enumerate(row)) + "</tr>"
                     for row in rows)
    return (f"<table>\n<caption>{escape(caption)}</caption>\n<thead><tr>{head}</tr></thead>\n"
            f"<tbody>\n{body}\n</tbody>\n</table>")


def facts(pairs: Iterable[tuple[str, str]]) -> str:
    items = "\n".join(f"<dt>{escape(k)}</dt><dd>{escape(v)}</dd>" for k, v in pairs)
    return f'<dl class="facts">\n{items}\n</dl>'


_ID = re.compile(r'\bid="([^"]+)"')
_REF = re.compile(r'(href="#|url\(#)([^")]+)')


def inline_svg(picture: Picture, prefix: str, label: str) -> str:
    """A picture as an ``<svg>`` element for an HTML page.

    The XML prologue, the namespace declarations (an HTML parser puts
    ``<svg>`` in its namespace) and the style sheet (its rules are in the
    page's CSS) go, and every id is prefixed, so that several pictures can
    share one page.
    """
    svg = picture.svg()
    svg = svg[svg.index("<svg"):]
    svg = re.sub(r'\s+xmlns(:xlink)?="[^"]*"', "", svg, count=2)
    svg = re.sub(r"<metadata>.*?</metadata>\s*|<style[^>]*>[^<]*</style>\s*", "", svg,
                 flags=re.S)  # matplotlib's stroke defaults are in the page's CSS
    svg = _ID.sub(lambda m: f'id="{prefix}-{m.group(1)}"', svg)
    svg = _REF.sub(lambda m: f"{m.group(1)}{prefix}-{m.group(2)}", svg)
    return svg.replace("<svg ", f'<svg role="img" aria-label="{escape(label)}" ', 1).strip()


def _setting(e: ElementResult) -> str:
    if isinstance(e.setting, tuple):
        return ", ".join(f"{name} {fraction:.1%}" for name, fraction in e.setting)
    return "" if e.setting is None else f"transmission {e.setting:.1%}"


def _scanners(plan: Plan) -> str:
    rows = [[s.id, format_power(s.need_w), format_power(s.delivered_w), pct(s.headroom),
             "-" if s.max_w is None else format_power(s.max_w), str(s.priority),
             s.status if s.status == ScannerStatus.MET
             else f"{s.status}: {format_power(s.shortfall_w)}"]
            for s in plan.scanners]
    out = [table("Power at each scanner's intermediate focus (IF)", ["scanner", "need",
                 "delivered", "headroom", "max_power", "priority", "status"], rows,
                 (1, 2, 3, 4, 5))]
    short = [s for s in plan.scanners if s.status != ScannerStatus.MET]
    if short:
        out.append("<h3>Why scanners fall short</h3>\n<ul>" + "".join(
            f"<li><strong>{escape(s.id)}</strong> is {escape(s.status)}, "
            f"{escape(format_power(s.shortfall_w))} under its need: "
            f"{escape('; '.join(s.limits))}.</li>" for s in short) + "</ul>")
    modelled = [s for s in plan.scanners if s.target_wph is not None]
    if modelled:
        out.append(table("Throughput at the delivered power", ["scanner", "dose", "set by",
                         "target", "achieved", "limit"],
                         [[s.id, f"{(s.dose_j_m2 or 0) / 10:.1f} mJ/cm²", s.dose_set_by or "",
                           f"{s.target_wph:.0f} wph", f"{s.achieved_wph or 0:.1f} wph",
                           s.throughput_limit or ""] for s in modelled], (1, 3, 4)))
    if any(s.need_provenance not in ("", GIVEN) for s in plan.scanners):
        out.append(table("Where each need comes from", ["scanner", "need from"],
                         [[s.id, s.need_provenance] for s in plan.scanners]))
    return "\n".join(out)


def _elements(plan: Plan) -> str:
    rows = []
    for e in plan.elements:
        use = "-" if e.heat_limit_w is None else \
            f"{e.absorbed_w / e.heat_limit_w:.0%}" if e.heat_limit_w > 0 else "100%"
        rows.append([e.id, e.kind, format_power(e.incident_w), format_power(e.absorbed_w),
                     format_power(e.output_w), f"{e.gain:.4f}",
                     "-" if e.heat_limit_w is None else format_power(e.heat_limit_w), use])
    out = [table("Power in, absorbed and out of every element, and its heat limit",
                 ["element", "kind", "in", "absorbed", "out", "gain", "heat limit", "use"],
                 rows, (2, 3, 4, 5, 6, 7))]
    computed = [e for e in plan.elements if e.provenance and e.provenance != GIVEN]
    if computed:
        out.append(table("Gains computed from physics", ["element", "gain", "how"],
                         [[e.id, f"{e.gain:.4f}", e.provenance] for e in computed], (1,)))
    return "\n".join(out)


def _losses(plan: Plan) -> str:
    total = plan.losses.source_w or 1.0
    rows = [("delivered to scanners", plan.losses.delivered_w),
            *((f"absorbed in {kind} elements", w) for kind, w in plan.losses.by_kind),
            ("dumped", plan.losses.dumped_w), ("source output", plan.losses.source_w)]
    return table("Where the source power goes (sums to the source output)",
                 ["destination", "power", "share"],
                 [[name, format_power(w), f"{w / total:.1%}"] for name, w in rows], (1, 2))


def _binding(plan: Plan) -> str:
    if not plan.binding:
        return "<p>No constraint binds the goal's primary stage.</p>"
    listed = table("Constraints that bind, with their shadow prices",
                   ["constraint", "kind", "shadow price", "what one step more is worth"],
                   [[b.description, b.family, f"{b.shadow_price:.4g} {b.unit}", b.meaning]
                    for b in plan.binding], (2,))
    families = sorted({b.family for b in plan.binding})
    return listed + "\n<h3>What each kind means</h3>\n" + facts(
        (f, FAMILIES.get(f, f)) for f in families)


def figure(svg: str, caption: str, css: str) -> str:
    return (f'<figure class="{css}">\n{svg}\n<figcaption>{escape(caption)}</figcaption>\n'
            "</figure>")


def page(title: str, heading: str, status: str, sections: Sequence[tuple[str, str]],
         body: dict[str, str], footer: str, extra_css: str = "") -> str:
    """The page around the sections: head, header with the caution, contents, footer."""
    parts = "\n".join(f'<section id="{key}">\n<h2>{escape(name)}</h2>\n{body[key]}\n'
                      "</section>" for key, name in sections)
    toc = "".join(f'<li><a href="#{key}">{escape(name)}</a></li>' for key, name in sections)
    return f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{escape(title)}</title>
<style>{CSS}{extra_css}</style>
</head>
<body>
<header>
<h1>{escape(heading)}</h1>
<p class="status">{escape(status)}</p>
<p class="caution" role="note"><strong>Caution.</strong> {escape(CAUTION)}</p>
</header>
<nav aria-label="contents"><ol>{toc}</ol></nav>
<main>
{parts}
</main>
<footer><p>{escape(footer)} {escape(CAUTION)}</p></footer>
</body>
</html>
"""


def plan_html(plan: Plan, network: Network, *, layout_path: str, version: str,
              date: datetime.date | str | None = None, group_chains: bool = False,
              detail: bool | None = None) -> str:
    """The whole plan report as the text of one self-contained HTML file.

    Parameters
    ----------
    plan, network
        The plan and the network it was made for.
    layout_path
        The layout file; the report names it (not its folder).
    version
        The beamplan version, for the provenance.
    date
        The date of the report (default: today), so that tests can fix it.
    group_chains
        Draw chains of plain gain elements as one box in the diagram.
    detail
        Draw every box (``True``) or the summary with subtrees folded
        (``False``); by default the summary past ``SCALE_SCANNERS`` scanners.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(beamplan.load("layouts/pilot-line.yaml"))
    >>> page = plan_html(beamplan.plan(net), net, layout_path="layouts/pilot-line.yaml",
    ...                  version="0.1.0", date="2024-01-31")
    >>> page.startswith("<!DOCTYPE html>"), "2024-01-31" in page, "<script" in page
    (True, True, False)
    """
    when = date if isinstance(date, str) else (date or datetime.date.today()).isoformat()
    from beamplan.report.terminal import status_note

    status = plan.status.upper() + status_note(plan).replace("  (", " (")
    summary = [("layout", plan.layout), ("goal", plan.goal), ("status", status),
               ("source", f"{format_power(plan.source_used_w)} used of "
                          f"{format_power(plan.source_available_w)} available"),
               ("delivered", f"{format_power(plan.delivered_w)} at the IF, overall efficiency "
                             f"{plan.efficiency:.1%}"),
               ("headroom", f"factor {plan.headroom_factor:.4f} (lowest scanner "
                            f"{pct(plan.headroom_factor - 1)})"),
               ("light", f"{plan.wavelength_m * 1e9:.2f} nm, {plan.photon_energy_ev:.2f} eV "
                         "per photon")]
    if plan.electrical_per_delivered is not None:
        summary.append(("wall plug", f"{plan.electrical_per_delivered:.0f} kW electrical per "
                                     "kW delivered at the IF"))
    settings = [e for e in plan.elements if e.setting is not None]
    from beamplan.report.summary_diagram import SCALE_SCANNERS, at_scale
    from beamplan.report.summary_draw import summary_picture

    folded = at_scale(network) if detail is None else not detail
    picture = summary_picture(network, plan) if folded else \
        diagram_picture(network, plan, group_chains=group_chains)
    diagram = inline_svg(picture, "diagram", f"power-flow diagram of {plan.layout}")
    plots = {"headroom": inline_svg(headroom_chart(plan), "headroom", "headroom per scanner"),
             "kind": inline_svg(losses_chart(plan), "kind", "losses by element kind"),
             "element": inline_svg(losses_chart(plan, by="element"), "element",
                                   "losses by element")}
    provenance = [("layout file", os.path.basename(layout_path)), ("SHA-256", plan.sha256),
                  ("beamplan", version), ("solver", f"{plan.solver} {plan.solver_version}"),
                  ("LP stages", str(plan.stages)), ("goal", plan.goal), ("date", when)]
    body = {
        "summary": facts(summary),
        "scanners": _scanners(plan) + "\n" + figure(
            plots["headroom"], "Delivered power (bars) against each need (tick) and "
            "max_power (diamond). Hatched bars fall short.", "plot"),
        "diagram": figure(diagram, f"A summary of more than {SCALE_SCANNERS} scanners: "
                          "beam from top to bottom, each subtree of several scanners folded "
                          "into one box with its totals; line width is proportional to power. "
                          "'beamplan draw --detail' or '--focus ID' draws every box.", "fit")
        if folded else
        figure(f'<div class="scroll">\n{diagram}\n</div>',
               "Beam from left to right; line width is proportional to power. The "
               "legend below the diagram explains every mark. The diagram keeps "
               "its text size: scroll sideways for the rest; a print fits it to "
               "the page width.", "diagram"),
        "elements": _elements(plan),
        "settings": table("Settings chosen by the plan", ["element", "kind", "setting"],
                          [[e.id, e.kind, _setting(e)] for e in settings])
        if settings else "<p>Nothing to set: no splitter or adjustable attenuator.</p>",
        "losses": _losses(plan) + "\n" + figure(plots["kind"], "Losses by element kind.",
                                                "plot") + "\n" + figure(
            plots["element"], "Losses by element: the largest, then all the others.", "plot"),
        "binding": _binding(plan),
        "warnings": "<ul>" + "".join(f"<li><code>{escape(w)}</code></li>"
                                     for w in plan.warnings) + "</ul>"
        if plan.warnings else "<p>The layout check gave no warnings.</p>",
        "provenance": facts(provenance),
    }
    heading_status = (f"{status}: {format_power(plan.delivered_w)} delivered of "
                      f"{format_power(plan.source_used_w)} drawn, goal {plan.goal}, {when}")
    footer = (f"beamplan {version}; layout {os.path.basename(layout_path)} "
              f"(SHA-256 {plan.sha256}); {when}.")
    return page(f"beamplan: {plan.layout}, goal {plan.goal}, {plan.status}",
                f"Plan for {plan.layout}", heading_status, _SECTIONS, body, footer)
