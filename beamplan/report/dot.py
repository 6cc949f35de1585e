"""The power-flow diagram as Graphviz DOT text.

The same boxes, marks and words as the matplotlib picture
(:func:`beamplan.report.diagram.diagram_model` decides them all); the
reader's Graphviz lays them out.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import textwrap

from beamplan.network.graph import Network
from beamplan.optimise.result import Plan
from beamplan.report import CAUTION
from beamplan.report.diagram import diagram_model
from beamplan.report.palette import PALETTE

__all__ = ["diagram_dot", "graphviz_picture", "summary_dot"]


def _dot_quote(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'


def diagram_dot(network: Network, plan: Plan | None = None, *,
                group_chains: bool = False) -> str:
    """The diagram as Graphviz DOT text (same marks, laid out by the reader's tool).

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> text = diagram_dot(build_network(beamplan.load("layouts/pilot-line.yaml")))
    >>> text.splitlines()[0], '"m1" -> "m2"' in text
    ('digraph "pilot-line" {', True)
    """
    d = diagram_model(network, plan, group_chains=group_chains)
    shapes = {"source": "cds", "scanner": "box", "element": "box", "chain": "box", "dump": "box"}
    out = [f"digraph {_dot_quote(network.name)} {{",
           "  // Beam left to right; pen width proportional to power. Fill: heat use "
           "(white none, light to dark: <50 %, 50-80 %, >80 %, at limit).",
           "  // Rounded: scanner (dashed when short); double border: chain of gain "
           "elements; cut corners: dump; thick outline: a binding constraint. See "
           "docs/pictures.md.",
           f"  graph [rankdir=LR, label={_dot_quote(d.title + chr(10) + d.subtitle)}, "
           'labelloc=t, fontname="sans-serif", nodesep=0.2, ranksep=0.6];',
           f'  node [fontname="sans-serif", fontsize=9, style=filled, color="{PALETTE["ink"]}"];',
           f'  edge [fontname="sans-serif", fontsize=8, color="{PALETTE["beam"]}", '
           "arrowsize=0.5];"]
    for b in d.boxes.values():
        style = ["filled"] + (["rounded"] if b.shape == "scanner" else []) + \
            (["dashed"] if b.dashed else []) + (["diagonals"] if b.shape == "dump" else [])
        extra = ", peripheries=2" if b.shape == "chain" else ""
        if b.binds:
            extra += f', penwidth=3, color="{PALETTE["bind"]}"'
        out.append(f"  {_dot_quote(b.key)} [label={_dot_quote(chr(10).join(b.lines))}, "
                   f'shape={shapes[b.shape]}, style="{",".join(style)}", '
                   f'fillcolor="{b.fill}"{extra}];')
    for w in d.wires:
        idle = ', style=dotted, color="' + PALETTE["idle"] + '"' if w.power_w == 0 else ""
        out.append(f"  {_dot_quote(w.tail)} -> {_dot_quote(w.head)} [penwidth="
                   f"{w.width_pt:.2f}, label={_dot_quote(w.label)}{idle}];")
    for rank, shape in (("source", "source"), ("sink", "scanner")):
        keys = " ".join(_dot_quote(b.key) for b in d.boxes.values() if b.shape == shape)
        if keys:
            out.append(f"  {{rank={rank}; {keys}}}")
    return "\n".join([*out, "}"]) + "\n"


def summary_dot(network: Network, plan: Plan | None = None) -> str:
    """The summary diagram (subtrees folded) as Graphviz DOT text, beam from top to bottom.

    Examples
    --------
    >>> import beamplan
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(beamplan.load("layouts/two-bay.yaml"))
    >>> text = summary_dot(net, beamplan.plan(net))
    >>> text.splitlines()[0], "rankdir=TB" in text
    ('digraph "two-bay" {', True)
    """
    from beamplan.report.summary_diagram import summary_model

    s = summary_model(network, plan)
    out = [f"digraph {_dot_quote(network.name)} {{",
           "  // Summary: each box with a heavy border is a folded subtree with its totals; "
           "pen width proportional to power. See docs/pictures.md.",
           f"  graph [rankdir=TB, label={_dot_quote(s.title + chr(10) + s.subtitle)}, "
           'labelloc=t, fontname="sans-serif", nodesep=0.25, ranksep=0.3];',
           f'  node [fontname="sans-serif", fontsize=9, shape=box, style=filled, '
           f'color="{PALETTE["ink"]}"];',
           f'  edge [color="{PALETTE["beam"]}", arrowsize=0.5];']
    for row in s.rows:
        b = row.box
        style = ["filled"] + (["rounded"] if b.shape == "scanner" else []) + \
            (["dashed"] if b.dashed else []) + (["bold"] if b.shape == "fold" else [])
        extra = ", penwidth=3" if b.shape == "fold" else ""
        out.append(f"  {_dot_quote(b.key)} [label={_dot_quote(chr(10).join(b.lines))}, "
                   f'style="{",".join(style)}", fillcolor="{b.fill}"{extra}];')
    for row in s.rows:
        if row.parent >= 0:
            out.append(f"  {_dot_quote(s.rows[row.parent].box.key)} -> "
                       f"{_dot_quote(row.box.key)} [penwidth={row.width_pt:.2f}];")
    return "\n".join([*out, "}"]) + "\n"


_GRAPH_LABEL = re.compile(r'^  graph \[rankdir=\w+, label=("(?:[^"\\]|\\.)*")', re.M)


def graphviz_picture(dot_text: str, fmt: str) -> bytes | None:
    """Lay out and render DOT text with Graphviz's ``dot`` program, if it is installed.

    The safety caution joins the title. Returns ``None`` when ``dot`` is not on
    the PATH: Graphviz is optional, and the caller falls back to beamplan's own
    layout. ``fmt`` is ``svg``, ``png`` or ``pdf``.

    Examples
    --------
    >>> import shutil
    >>> data = graphviz_picture('digraph "x" { "a" -> "b"; }', "svg")
    >>> data is None if shutil.which("dot") is None else data.startswith(b"<?xml")
    True
    """
    program = shutil.which("dot")
    if program is None:
        return None
    found = _GRAPH_LABEL.search(dot_text)
    caution = "\\n".join(textwrap.wrap(CAUTION, 100))
    if found:  # a later graph attribute wins: the title, then the caution
        label = found.group(1)[:-1] + "\\n\\n" + caution + '"'
        dot_text = dot_text.rstrip().removesuffix("}") + f"  graph [label={label}];\n}}\n"
    done = subprocess.run([program, f"-T{fmt}"], input=dot_text.encode("utf-8"),
                          capture_output=True, check=True, timeout=900)
    return done.stdout
