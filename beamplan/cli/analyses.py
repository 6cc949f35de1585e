"""The ``cases`` (what-if comparison) and ``sweep`` (outage sweep) commands."""

from __future__ import annotations

import argparse
import re
import sys
from typing import TYPE_CHECKING, Any

from beamplan import __version__
from beamplan.cli.executors import add_executor_options, executor_from
from beamplan.errors import ExitCode, UsageError, excerpt
from beamplan.vocabulary import GOALS, SOLVERS, Goal, ScannerStatus, Solver

if TYPE_CHECKING:
    from beamplan.network.graph import Network

__all__ = ["register"]

_PAIR = re.compile(r"(\w+)=(.+?)(?=\s+\w+=|$)")


def _command_line_case(args: argparse.Namespace) -> list[tuple[str, int, Any]]:
    """The changes given as options: (verb, occurrence of the option, argument)."""
    changes: list[tuple[str, int, Any]] = []
    for verb in ("drop", "fail"):
        for n, item in enumerate(getattr(args, verb) or [], 1):
            changes.append((verb, n, item))
    for verb in ("set", "scale"):
        for n, item in enumerate(getattr(args, verb) or [], 1):
            key, sep, value = item.partition("=")
            if not sep or not key.strip() or not value.strip():
                raise UsageError(f"--{verb}, argument {n}: {excerpt(item)}: write "
                                 "ID.KEY=VALUE, e.g. fel-1.power=9kW")
            changes.append((verb, n, {key.strip(): value.strip()}))
    for n, item in enumerate(args.add or [], 1):
        sid, _, rest = item.strip().partition(" ")
        pairs = _PAIR.findall(rest)
        if not sid or not pairs:
            raise UsageError(f"--add, argument {n}: {excerpt(item)}: write 'ID "
                             "at=SPLITTER.OUTPUT power=300W' or 'ID behind=ELEMENT part=PART "
                             "power=300W'")
        changes.append(("add", n, {"scanner": sid, **{k: v.strip() for k, v in pairs}}))
    return changes


def _refuse_early(args: argparse.Namespace) -> None:
    """Refuse an output that clashes with an input or another output before any planning."""
    from beamplan.cli.outputs import check

    check([("--json", args.json), ("--html", args.html)], [("--csv", args.csv)],
          [args.layout, getattr(args, "cases", None)])


def _cases(args: argparse.Namespace) -> int:
    _refuse_early(args)
    from beamplan.analyses.cases import parse_cases
    from beamplan.analyses.changes import command_line_document
    from beamplan.analyses.compare import compare_cases
    from beamplan.cli.common import _existing_file
    from beamplan.layout.limits import LIMITS
    from beamplan.layout.loader import parse_layout
    from beamplan.layout.yamlpos import load_yaml

    limits = LIMITS[args.limits]
    base_doc = load_yaml(_existing_file(args.layout), limits)
    base = parse_layout(base_doc)
    cases = {}
    if args.cases:
        cases.update(parse_cases(load_yaml(_existing_file(args.cases), limits)))
    inline = _command_line_case(args)
    if inline:
        cases.update(parse_cases(command_line_document(inline)))
    if not cases:
        raise UsageError("no cases: give a case file or changes such as --drop ID, --fail ID, "
                         "--scale ID.KEY=FACTOR")
    for name in args.only or []:
        if name not in cases:
            raise UsageError(f"--only {name!r}: no such case; the cases are: "
                             f"{', '.join(cases)}")
    if args.steady is not None and args.goal != Goal.HEADROOM:
        raise UsageError("--steady works with --goal headroom")
    if args.steady_switches and args.steady is None:
        raise UsageError("--steady-switches works with --steady")
    from beamplan.cli.common import _stages

    with _stages(args) as stages:
        stages.show(f"planning the base layout and {len(args.only or cases)} case(s)")
        comparison = compare_cases(base, cases, goal=args.goal, base_doc=base_doc,
                                   steady=args.steady, solver=args.solver,
                                   names=args.only or None,
                                   steady_switches=args.steady_switches)
    _outputs(args, "cases", comparison)
    short = any(c.plan.status == ScannerStatus.SHORT for c in comparison.cases)
    return int(ExitCode.SHORT if short else ExitCode.OK)


def _outputs(args: argparse.Namespace, what: str, result: Any,
             network: Network | None = None) -> None:
    """Write the JSON, CSV and HTML reports asked for, then print the terminal report.

    ``network`` is the network swept (for ``sweep``; ``cases`` has its own in the plans).
    """
    from beamplan.cli.common import _console
    from beamplan.cli.outputs import STDOUT, emit
    from beamplan.report import analyses as rep

    inputs = [p for p in (args.layout, getattr(args, "cases", None)) if p]
    document = rep.cases_document if what == "cases" else rep.sweep_document
    if args.json:
        emit(args.json, rep.to_json(document(result, __version__)), inputs)
    if args.csv:
        from beamplan.report.files import write_tables

        tables = rep.cases_csv(result) if what == "cases" else rep.sweep_csv(result)
        write_tables(args.csv, tables, inputs)
    if args.html:
        from beamplan.report.html_analyses import cases_html, sweep_html

        if what == "cases":
            page = cases_html(result, layout_path=args.layout, cases_path=args.cases,
                              version=__version__)
        else:
            assert network is not None, "a sweep report needs the network swept"
            page = sweep_html(result, network, layout_path=args.layout, version=__version__,
                              top=args.top)
        emit(args.html, page, inputs)
    if STDOUT not in (args.json, args.html) and not args.quiet:
        view = (rep.cases_renderable(result) if what == "cases"
                else rep.sweep_renderable(result, args.top))
        _console().print(view)


def _sweep(args: argparse.Namespace) -> int:
    _refuse_early(args)
    from beamplan.analyses.outages import outage_cases, run_sweep
    from beamplan.cli.common import _load_network, _stages
    from beamplan.report.progress import progress_bar

    with _stages(args) as stages:
        stages.show("loading the layout")
        network = _load_network(args.layout, args.limits)
    try:
        cases = outage_cases(network, kinds=args.kind or (), ids=args.only or (),
                             pairs=args.pairs, max_pairs=args.max_pairs)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    with executor_from(args, work=len(cases), progress=None if args.quiet else sys.stderr) \
            as executor, progress_bar("outage cases", None if args.quiet else sys.stderr) as step:
        report = run_sweep(network, cases, goal=args.goal, solver=args.solver,
                           executor=executor, progress=step, exact=args.exact)
    _outputs(args, "sweep", report, network)
    if report.interrupted:
        sys.stderr.write(f"beamplan: interrupted after {report.finished} of "
                         f"{report.total_cases} cases; the report covers those\n")
        return 130
    return int(ExitCode.OK)


def _common(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("-g", "--goal", choices=GOALS,
                        default=Goal.HEADROOM, help="the planning goal (default headroom)")
    parser.add_argument("--json", metavar="PATH", help="write the JSON report ('-' for stdout)")
    parser.add_argument("--csv", metavar="DIR", help="write CSV tables into DIR, created or "
                        "replaced as a whole")
    parser.add_argument("--html", metavar="FILE", help="write a self-contained HTML report "
                        "(tables, chart, provenance) to FILE ('-' for stdout)")
    parser.add_argument("--solver", choices=SOLVERS, default=Solver.AUTO,
                        help="LP solver (default: HiGHS in process, CBC if highspy is missing)")
    parser.add_argument("-q", "--quiet", action="store_true", help="no terminal report")
    parser.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)
    from beamplan.cli.common import add_limits_option

    add_limits_option(parser)


def register(sub: Any) -> None:
    """Add ``cases`` and ``sweep``."""
    cases = sub.add_parser(
        "cases", help="plan what-if cases side by side with the base layout",
        description="Apply each case's changes to a copy of the layout, re-check it, plan it "
        "with the same goal and compare with the base: headroom, source power, delivered "
        "power, shortfalls, newly binding constraints. Exit 0 when every case meets every "
        "need, 3 when some case leaves a scanner short, 1 for invalid input.")
    cases.add_argument("layout", help="the base layout file")
    cases.add_argument("cases", nargs="?", help="a case file (see docs/cases.md)")
    cases.add_argument("--drop", action="append", metavar="SCANNER", help="drop a scanner")
    cases.add_argument("--fail", action="append", metavar="ID",
                       help="take a source, element or scanner out of service")
    cases.add_argument("--set", action="append", metavar="ID.KEY=VALUE",
                       help="set a property, e.g. m2.reflectivity=0.9")
    cases.add_argument("--scale", action="append", metavar="ID.KEY=FACTOR",
                       help="scale a property, e.g. fel-1.power=0.9")
    cases.add_argument("--add", action="append", metavar="'ID at=T.OUT power=P'",
                       help="add a scanner at a free splitter output (or behind=E part=P)")
    cases.add_argument("--only", action="append", metavar="CASE", help="plan only this case")
    cases.add_argument("--steady", nargs="?", type=float, const=0.0, metavar="TOL",
                       help="settings stability: serve each scanner at least (1 - TOL) of "
                       "its level in the plain case (default TOL 0) while moving the base "
                       "settings as little as possible")
    cases.add_argument("--steady-switches", action="store_true",
                       help="with --steady: switches may move too, only to positions that "
                       "restore service (fewest moves); without it they stay where the case "
                       "puts them")
    _common(cases)
    cases.set_defaults(handler=_cases)

    sweep = sub.add_parser(
        "sweep", help="fail every element, source and scanner in turn and rank the impact",
        description="Re-plan the layout with each node out of service (or each pair with "
        "--pairs), rank the outages by impact, and list the single points of failure. Exit 0 "
        "when the sweep finished, 130 when interrupted (the finished cases are reported).")
    sweep.add_argument("layout", help="the layout file")
    sweep.add_argument("--kind", action="append", help="only nodes of this kind (repeatable)")
    sweep.add_argument("--only", action="append", metavar="ID", help="only these ids")
    sweep.add_argument("--pairs", action="store_true", help="fail two at a time (N-2)")
    sweep.add_argument("--max-pairs", type=int, default=5000,
                       help="refuse more pairs than this (default 5000)")
    add_executor_options(sweep)
    sweep.add_argument("--top", type=int, default=20, help="rows in the terminal table")
    sweep.add_argument("--exact", action="store_true",
                       help="re-plan each case by full progressive filling (slower); by "
                       "default shortfalls and the lowest headroom are exact and the power "
                       "above the needs is spread by one LP")
    _common(sweep)
    sweep.set_defaults(handler=_sweep)
