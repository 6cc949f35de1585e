"""The ``draw`` subcommand: the power-flow diagram of a layout, optionally with its plan."""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any

from beamplan.errors import ExitCode, UsageError
from beamplan.vocabulary import GOALS, SOLVERS, Goal, Solver

__all__ = ["SUFFIXES", "register"]

#: "At scale" (see beamplan.report.summary_diagram.SCALE_SCANNERS; kept here so that
#: the parser loads nothing heavy).
SCALE_SCANNERS = 40
SUFFIXES = {".svg": "svg", ".png": "png", ".pdf": "pdf", ".dot": "dot", ".gv": "dot"}


def _format(output: str, chosen: str | None) -> str:
    if chosen:
        return chosen
    if output == "-":
        return "svg"
    suffix = os.path.splitext(output)[1].lower()
    if suffix not in SUFFIXES:
        raise UsageError(f"cannot tell the picture format of {output!r} from its suffix; "
                         "name it .svg, .png, .pdf or .dot, or give --format")
    return SUFFIXES[suffix]


def _draw(args: argparse.Namespace) -> int:
    from beamplan.cli.common import _load_network, _print_warnings, _stages
    from beamplan.cli.outputs import STDOUT, check, emit

    fmt = _format(args.output, args.format)
    check([("--output", args.output)], [], [args.layout])
    if args.output == STDOUT and fmt in ("png", "pdf"):
        raise UsageError(f"{fmt.upper()} is binary: give a file name with -o, not '-'")
    if args.detail and args.summary:
        raise UsageError("--detail and --summary contradict each other: give one")
    with _stages(args) as stages:
        stages.show("loading the layout")
        network = _load_network(args.layout, args.limits)
        if not args.quiet:
            _print_warnings(network)
        plan = None
        if args.plan or args.goal:
            from beamplan.optimise.planner import plan_network

            stages.show("planning")
            plan = plan_network(network, args.goal or Goal.HEADROOM, args.solver)
        shown = network
        if args.focus:
            from beamplan.report.summary_diagram import focus_network

            if args.focus not in network.node:
                raise UsageError(f"--focus {args.focus!r}: no such element, source or scanner "
                                 f"in {args.layout}")
            shown = focus_network(network, args.focus)
        from beamplan.report.summary_diagram import at_scale

        summary = args.summary or (at_scale(shown) and not args.detail)
        stages.show(f"drawing the {'summary' if summary else 'diagram'} "
                    f"({len(shown.nodes)} nodes)")
        data = None
        if args.engine == "graphviz" and fmt != "dot":
            from beamplan.report.dot import graphviz_picture

            text = _picture(shown, plan, "dot", summary, args.group_chains).decode("utf-8")
            data = graphviz_picture(text, fmt)
            if data is None:
                sys.stderr.write("beamplan: note: Graphviz's 'dot' program is not installed; "
                                 "drawn with beamplan's own layout instead\n")
        if data is None:
            data = _picture(shown, plan, fmt, summary, args.group_chains)
        emit(args.output, data if fmt in ("png", "pdf") else data.decode("utf-8"),
             [args.layout])
    if args.output != STDOUT and not args.quiet:
        what = f"with the {plan.goal} plan ({plan.status})" if plan else "without a plan"
        view = " summary" if summary else ""
        sys.stdout.write(f"{args.layout}: drew '{shown.name}'{view} {what} to {args.output} "
                         f"({fmt.upper()})\n")
        if summary and not args.summary:
            sys.stdout.write(f"  more than {SCALE_SCANNERS} scanners: subtrees folded into "
                             "one box each; --detail draws every box, --focus ID one "
                             "subtree\n")
    return int(ExitCode.SHORT if plan is not None and not plan.all_met else ExitCode.OK)


def _picture(network: Any, plan: Any, fmt: str, summary: bool, group_chains: bool) -> bytes:
    if summary:
        from beamplan.report.dot import summary_dot
        from beamplan.report.summary_draw import summary_picture

        if fmt == "dot":
            return summary_dot(network, plan).encode("utf-8")
        return summary_picture(network, plan).data(fmt)
    from beamplan.report.dot import diagram_dot
    from beamplan.report.draw import diagram_picture

    if fmt == "dot":
        return diagram_dot(network, plan, group_chains=group_chains).encode("utf-8")
    return diagram_picture(network, plan, group_chains=group_chains).data(fmt)


def register(sub: Any) -> None:
    """Add the ``draw`` subcommand to an argparse subparsers object.

    Examples
    --------
    >>> import argparse
    >>> parser = argparse.ArgumentParser(prog="beamplan")
    >>> register(parser.add_subparsers())
    >>> args = parser.parse_args(["draw", "layouts/pilot-line.yaml", "-o", "x.svg", "--plan"])
    >>> args.plan, args.format, args.group_chains, args.detail, args.focus
    (True, None, False, False, None)
    """

    draw = sub.add_parser("draw", help="draw the power-flow diagram (SVG, PNG, PDF or DOT)",
                          description="Draw the power-flow diagram of a layout: sources on "
                          "the left, scanners on the right, every element in between. With "
                          "--plan, plan it first and draw the powers: line widths, heat use, "
                          "headroom and binding constraints, explained in the legend. Exit 0, "
                          "or 3 when a planned scanner falls short.")
    draw.add_argument("layout", help="the layout file (YAML)")
    draw.add_argument("-o", "--output", required=True, metavar="FILE",
                      help="the picture to write; its suffix (.svg, .png, .pdf, .dot) sets the "
                      "format; '-' writes SVG or DOT text to stdout")
    draw.add_argument("--plan", action="store_true",
                      help="plan the layout and draw its powers (default: the layout only)")
    draw.add_argument("-g", "--goal", choices=GOALS, default=None,
                      help="the planning goal (implies --plan; default headroom)")
    draw.add_argument("--solver", choices=SOLVERS, default=Solver.AUTO,
                      help="LP solver for --plan (default: HiGHS, CBC if highspy is missing)")
    draw.add_argument("--group-chains", action="store_true",
                      help="draw each run of plain mirrors, drifts and fixed attenuators as "
                      "one box with the ids and their combined gain")
    draw.add_argument("--detail", action="store_true",
                      help=f"draw every box even past {SCALE_SCANNERS} scanners (by default "
                      "a larger network is drawn as a summary, subtrees folded)")
    draw.add_argument("--summary", action="store_true",
                      help="draw the summary (subtrees folded) at any size")
    draw.add_argument("--focus", metavar="ID",
                      help="draw only the part under this node: the nodes every beam path "
                      "to which passes through it (a bay, a subtree)")
    draw.add_argument("--engine", choices=("builtin", "graphviz"), default="builtin",
                      help="who lays the picture out: beamplan itself (default) or Graphviz's "
                      "'dot' program, if installed (else beamplan, with a note)")
    draw.add_argument("--format", choices=("svg", "png", "pdf", "dot"), default=None,
                      help="the picture format, when the suffix of FILE does not say it")
    draw.add_argument("-q", "--quiet", action="store_true", help="print nothing but errors")
    draw.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    from beamplan.cli.common import add_limits_option

    add_limits_option(draw)
    draw.set_defaults(handler=_draw)
