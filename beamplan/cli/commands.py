"""The subcommands: ``check`` and ``plan`` (more register themselves here)."""

from __future__ import annotations

import argparse
import sys
from typing import Any

from beamplan import __version__
from beamplan.cli.common import (
    _console,
    _load_network,
    _print_warnings,
    _stages,
    add_limits_option,
)
from beamplan.errors import ExitCode
from beamplan.vocabulary import GOALS, SOLVERS, Goal, Solver

__all__ = ["register"]


def _check(args: argparse.Namespace) -> int:
    with _stages(args) as stages:
        stages.show("loading and checking the layout")
        network = _load_network(args.layout, args.limits)
    if not args.quiet:
        _print_warnings(network, args.all)
        elements = len(network.elements)
        sys.stdout.write(f"{args.layout}: valid layout '{network.name}': "
                         f"{len(network.sources)} source(s), {elements} element(s), "
                         f"{len(network.scanners)} scanner(s), {len(network.links)} link(s), "
                         f"{len(network.warnings)} warning(s)\n")
    return int(ExitCode.OK)


def _plan(args: argparse.Namespace) -> int:
    from beamplan.cli.outputs import check, emit
    from beamplan.optimise.planner import plan_network

    inputs = [args.layout]
    to_stdout = check([("--json", args.json), ("--html", args.html)], [("--csv", args.csv)],
                      inputs)
    with _stages(args) as stages:
        stages.show("loading the layout")
        network = _load_network(args.layout, args.limits)
        if not args.quiet:
            _print_warnings(network)
        stages.show("planning")
        plan = plan_network(network, args.goal, args.solver)
        sizing = None
        shown = not args.quiet or args.json or args.csv
        if shown and (args.what_it_takes or not plan.all_met):
            from beamplan.analyses.sizing_check import what_it_takes

            stages.show("working out what it takes")
            sizing = what_it_takes(network, plan, args.solver)
        if args.json:
            from beamplan.report.document import plan_json

            emit(args.json, plan_json(plan, __version__, sizing), inputs)
        if args.csv:
            from beamplan.report.document import write_csv

            write_csv(plan, args.csv, inputs, sizing)
        if args.html:
            from beamplan.report.html import plan_html

            stages.show("writing the HTML report")
            emit(args.html, plan_html(plan, network, layout_path=args.layout,
                                      version=__version__), inputs)
    if not to_stdout and not args.quiet:
        from beamplan.report.terminal import plan_renderable

        _console().print(plan_renderable(plan, elements=not args.brief, sizing=sizing))
    return int(ExitCode.OK if plan.all_met else ExitCode.SHORT)


def register(sub: Any) -> None:
    """Add the subcommands to an argparse subparsers object."""
    check = sub.add_parser("check", help="validate a layout file and list every problem",
                           description="Validate a layout: schema, units, beamlines and graph "
                           "checks. Exit 0 when valid, 1 when not.")
    check.add_argument("layout", help="the layout file (YAML)")
    check.add_argument("-q", "--quiet", action="store_true", help="print nothing when valid")
    check.add_argument("--all", action="store_true", help="list every warning")
    check.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    add_limits_option(check)
    check.set_defaults(handler=_check)

    plan = sub.add_parser("plan", help="optimise the allocation and report it",
                          description="Choose splitter shares, attenuator settings and source "
                          "power so that every scanner meets its need; report delivered power, "
                          "headroom, heat loads, losses and binding constraints. Exit 0 when "
                          "every need is met, 3 when some scanner falls short.")
    plan.add_argument("layout", help="the layout file (YAML)")
    plan.add_argument("-g", "--goal", choices=GOALS, default=Goal.HEADROOM,
                      help="headroom (default): lift every scanner's headroom, lowest first; "
                      "min-source: least source power that meets every need; priority: serve "
                      "tier 1 first, then tier 2, ...")
    plan.add_argument("--json", metavar="PATH", help="write the JSON report ('-' for stdout)")
    plan.add_argument("--csv", metavar="DIR", help="write one CSV file per table into DIR, "
                      "created or replaced as a whole")
    plan.add_argument("--html", metavar="FILE", help="write a self-contained HTML report "
                      "(tables, diagram, plots, provenance) to FILE ('-' for stdout)")
    plan.add_argument("--solver", choices=SOLVERS, default=Solver.AUTO,
                      help="LP solver (default: HiGHS in process, CBC if highspy is missing)")
    plan.add_argument("--brief", action="store_true", help="leave out the element table")
    plan.add_argument("--what-it-takes", action="store_true",
                      help="report what it takes to serve every need even when all are met "
                      "(then the margins: the least source power and how far each limit "
                      "reached sits from blocking); a plan that falls short always has it")
    plan.add_argument("-q", "--quiet", action="store_true",
                      help="no terminal report (files and exit code only)")
    plan.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    add_limits_option(plan)
    plan.set_defaults(handler=_plan)

    from beamplan.cli import ageing, analyses, calc, calc_beam, calc_tools, draw, tolerance

    ageing.register(sub)
    analyses.register(sub)
    draw.register(sub)
    calc.register(sub, calc_tools.add_demand, calc_tools.add_undulator, calc_beam.add_beam)
    tolerance.register(sub)
    from beamplan.cli import cost

    cost.register(sub)
    from beamplan.cli import schema

    schema.register(sub)
    from beamplan.cli import new

    new.register(sub)
    from beamplan.cli import completion

    completion.register(sub)
