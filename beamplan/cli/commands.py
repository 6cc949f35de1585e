"""The subcommands: ``check`` and ``plan`` (more register themselves here)."""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any

from beamplan import __version__
from beamplan.errors import ExitCode, UsageError

__all__ = ["register"]

GOALS = ("headroom", "min-source", "priority")


def _console(stream: Any = None) -> Any:
    from beamplan.report.console import make_console

    return make_console(stream or sys.stdout)


def _stages(args: argparse.Namespace) -> Any:
    """What a long command is doing, on stderr when it is a terminal and not ``-q``."""
    from beamplan.report.progress import progress_stages

    return progress_stages(sys.stderr, quiet=bool(getattr(args, "quiet", False)))


def _existing_file(path: str) -> str:
    if not os.path.isfile(path):
        raise UsageError(f"no such layout file: {path!r}")
    return path


def _load_network(path: str, limits: str = "standard") -> Any:
    from beamplan.layout.limits import LIMITS
    from beamplan.layout.loader import load_layout
    from beamplan.network.graph import build_network

    return build_network(load_layout(_existing_file(path), LIMITS[limits]))


def add_limits_option(parser: argparse.ArgumentParser) -> None:
    """The ``--limits`` option of every command that reads a layout."""
    parser.add_argument("--limits", choices=("standard", "large"), default="standard",
                        help="input size limits: standard (default; files up to 8 MB, "
                        "300,000 YAML nodes) or large (128 MB, 5,000,000 nodes) for a very "
                        "large campus; see docs/layout-format.md")


WARNINGS_PER_KIND = 5


def _print_warnings(network: Any, every: bool = False) -> None:
    """Warnings to stderr; past a few of one kind, a count (``check --all`` shows all)."""
    shown: dict[str, int] = {}
    for warning in network.warnings:
        shown[warning.code] = shown.get(warning.code, 0) + 1
        if every or shown[warning.code] <= WARNINGS_PER_KIND:
            sys.stderr.write(warning.format() + "\n")
    for code, count in shown.items():
        if not every and count > WARNINGS_PER_KIND:
            sys.stderr.write(f"... and {count - WARNINGS_PER_KIND} more warnings like these "
                             f"({code}); 'beamplan check --all' lists every one\n")


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
    plan.add_argument("-g", "--goal", choices=GOALS, default="headroom",
                      help="headroom (default): lift every scanner's headroom, lowest first; "
                      "min-source: least source power that meets every need; priority: serve "
                      "tier 1 first, then tier 2, ...")
    plan.add_argument("--json", metavar="PATH", help="write the JSON report ('-' for stdout)")
    plan.add_argument("--csv", metavar="DIR", help="write one CSV file per table into DIR, "
                      "created or replaced as a whole")
    plan.add_argument("--html", metavar="FILE", help="write a self-contained HTML report "
                      "(tables, diagram, plots, provenance) to FILE ('-' for stdout)")
    plan.add_argument("--solver", choices=("auto", "highs", "cbc"), default="auto",
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

    from beamplan.cli import analyses, calc, draw, tolerance

    analyses.register(sub)
    draw.register(sub)
    calc.register(sub)
    tolerance.register(sub)
    from beamplan.cli import cost

    cost.register(sub)
    from beamplan.cli import schema

    schema.register(sub)
    from beamplan.cli import new

    new.register(sub)
    from beamplan.cli import completion

    completion.register(sub)
