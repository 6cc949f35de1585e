"""The ``cost`` and ``availability`` commands (docs/cost.md)."""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any

from beamplan import __version__
from beamplan.errors import ExitCode, UsageError
from beamplan.vocabulary import GOALS, SOLVERS, Goal, Solver

__all__ = ["register"]


def _executor(jobs: int) -> Any:
    if jobs <= 1:
        return None
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() else "spawn"
    return ProcessPoolExecutor(jobs, mp_context=multiprocessing.get_context(method))


def _load(path: str, economics: str | None) -> tuple[Any, Any, Any]:
    from beamplan.cli.common import _existing_file
    from beamplan.layout.economics import check_against, load_economics
    from beamplan.layout.loader import load_layout
    from beamplan.network.graph import build_network

    layout = load_layout(_existing_file(path))
    if economics is not None and not os.path.isfile(economics):
        raise UsageError(f"no such economics file: {economics!r}")
    econ = load_economics(economics, path)
    check_against(econ, layout)
    return layout, build_network(layout), econ


def _availability_of(args: argparse.Namespace, layout: Any, network: Any, econ: Any) -> Any:
    from beamplan.analyses.availability import run_availability
    from beamplan.report.progress import progress_bar

    executor = _executor(args.jobs)
    try:
        with progress_bar("outage states", sys.stderr) as step:
            return run_availability(layout, network, econ, goal=args.goal, solver=args.solver,
                                    executor=executor, progress=None if args.quiet else step,
                                    exact=args.exact)
    finally:
        if executor is not None:
            executor.shutdown(wait=False, cancel_futures=True)


def _simulate(args: argparse.Namespace, network: Any, report: Any) -> Any:
    if not args.simulate:
        return None
    from beamplan.analyses.availability import plan_state
    from beamplan.analyses.availability_sim import simulate
    from beamplan.analyses.cost import throughput_models

    econ = report.economics
    models, _ = throughput_models(network, econ)
    exposing = {s.id: s.exposing for s in report.scanners}
    base = {s.id: s.delivered_w for s in report.plan.scanners}
    states = {frozenset(s.failed): s for s in report.states}
    return simulate(report.components, states,
                    lambda failed: plan_state(network, failed, models, exposing, base,
                                              args.goal, args.solver),
                    years=args.simulate, hours=econ.hours_per_year,
                    switching_time_h=econ.switching_time_h, seed=args.seed)


def _interrupted(report: Any) -> None:
    planned = sum(1 for s in report.states if s.after or s.at_failure)
    sys.stderr.write(f"beamplan: interrupted; the report counts only the outage states "
                     f"planned before ({planned} with a loss), so it understates the loss\n")


def _cost(args: argparse.Namespace) -> int:
    from beamplan.analyses.cost import cost_of
    from beamplan.cli.common import _console
    from beamplan.cli.outputs import STDOUT, check, emit
    from beamplan.optimise.planner import plan_network
    from beamplan.report import cost_view as view
    from beamplan.report.document import to_json

    inputs = [args.layout, args.economics, *(args.compare or [])]
    check([("--json", args.json), ("--html", args.html)], [("--csv", args.csv)], inputs)
    layout, network, econ = _load(args.layout, args.economics)
    try:
        report = cost_of(plan_network(network, args.goal, args.solver), network, econ,
                         args.max_scanners)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    avail = _availability_of(args, layout, network, econ) if args.availability else None
    rows = []
    for path in [args.layout, *(args.compare or [])] if args.compare else []:
        lay, net, eco = _load(path, args.economics)
        rep = report if path == args.layout else cost_of(
            plan_network(net, args.goal, args.solver), net, eco, args.max_scanners)
        av = avail if path == args.layout and avail is not None else \
            _availability_of(args, lay, net, eco)
        rows.append({"layout": rep.layout, "file": path,
                     "sources": ", ".join(f"{s.id} {s.available_w / 1e3:g} kW"
                                          for s in rep.plan.sources),
                     "total_per_year": rep.total_per_year, "energy_mwh_per_year": rep.energy_mwh,
                     "cost_per_pass": rep.total_per_year / max(rep.passes_per_year, 1e-9),
                     "headroom_factor": rep.plan.headroom_factor,
                     "passes_lost_per_year": av.wafers_lost, "break_even": rep.break_even})
    document = view.cost_document(report, __version__, avail)
    if rows:
        document["compare"] = rows
    if avail is not None:
        from beamplan.report.availability_view import availability_document

        document["availability"] = availability_document(avail, __version__)
    if args.json:
        emit(args.json, to_json(document), inputs)
    if args.csv:
        from beamplan.report.files import write_tables

        tables = view.cost_csv(report)
        if avail is not None:
            from beamplan.report.availability_view import availability_csv

            tables.update(availability_csv(avail))
        write_tables(args.csv, tables, [p for p in inputs if p])
    if args.html:
        from beamplan.report.cost_pages import cost_html

        emit(args.html, cost_html(report, __version__, avail), inputs)
    if STDOUT not in (args.json, args.html) and not args.quiet:
        console = _console()
        console.print(view.cost_renderable(report))
        if avail is not None:
            from beamplan.report.availability_view import availability_renderable

            console.print(availability_renderable(avail, top=args.top))
        if rows:
            console.print(view.compare_renderable(rows, econ.currency))
    if avail is not None and avail.interrupted:
        _interrupted(avail)
        return 130
    return int(ExitCode.OK)


def _availability(args: argparse.Namespace) -> int:
    from beamplan.cli.common import _console
    from beamplan.cli.outputs import STDOUT, check, emit
    from beamplan.report import availability_view as view
    from beamplan.report.document import to_json

    inputs = [args.layout, args.economics]
    check([("--json", args.json), ("--html", args.html)], [("--csv", args.csv)], inputs)
    layout, network, econ = _load(args.layout, args.economics)
    try:
        report = _availability_of(args, layout, network, econ)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    sim = None if report.interrupted else _simulate(args, network, report)
    if args.json:
        emit(args.json, to_json(view.availability_document(report, __version__, sim)), inputs)
    if args.csv:
        from beamplan.report.files import write_tables

        write_tables(args.csv, view.availability_csv(report), [p for p in inputs if p])
    if args.html:
        from beamplan.report.cost_pages import availability_html

        emit(args.html, availability_html(report, __version__, sim), inputs)
    if STDOUT not in (args.json, args.html) and not args.quiet:
        _console().print(view.availability_renderable(report, sim, args.top))
    if report.interrupted:
        _interrupted(report)
        return 130
    return int(ExitCode.OK)


def _common(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("layout", help="the layout file")
    parser.add_argument("economics", nargs="?", help="an economics file (default: the layout's "
                        "'economics:' section, else illustrative defaults; docs/cost.md)")
    parser.add_argument("-g", "--goal", choices=GOALS,
                        default=Goal.HEADROOM, help="the planning goal (default headroom)")
    parser.add_argument("--json", metavar="PATH", help="write the JSON report ('-' for stdout)")
    parser.add_argument("--csv", metavar="DIR", help="write CSV tables into DIR")
    parser.add_argument("--html", metavar="FILE", help="write an HTML report ('-' for stdout)")
    parser.add_argument("--solver", choices=SOLVERS, default=Solver.AUTO,
                        help="LP solver (default: HiGHS in process)")
    parser.add_argument("--jobs", type=int, default=1, help="worker processes for the outage "
                        "states (default 1)")
    parser.add_argument("--exact", action="store_true", help="plan each outage state by full "
                        "progressive filling (slower)")
    parser.add_argument("--top", type=int, default=10, help="rows of the ranking shown")
    parser.add_argument("-q", "--quiet", action="store_true", help="no terminal report")
    parser.add_argument("--debug", action="store_true", help=argparse.SUPPRESS)


def register(sub: Any) -> None:
    """Add ``cost`` and ``availability``."""
    cost = sub.add_parser(
        "cost", help="energy and cost per wafer against one plasma source per scanner",
        description="Plan the layout, then give the yearly cost and energy of its shared "
        "sources, per scanner and per wafer, against one plasma source per scanner, and the "
        "break-even number of scanners. Exit 0, 1 for invalid input, 2 for bad usage.")
    _common(cost)
    cost.add_argument("--availability", action="store_true",
                      help="also the expected wafers lost to failures and the parts worth "
                      "hardening (beamplan availability)")
    cost.add_argument("--compare", nargs="+", metavar="LAYOUT",
                      help="other layouts side by side: cost, energy, headroom, availability")
    cost.add_argument("--max-scanners", type=int, default=0,
                      help="last N of the break-even curve (default 3 × the scanners)")
    cost.set_defaults(handler=_cost)
    avail = sub.add_parser(
        "availability", help="expected availability and wafers lost to failures",
        description="Enumerate the outage states (none, single, likely pairs), plan them "
        "after corrective switching and give each scanner's expected availability of full "
        "power and wafers lost per year, the fab's expected loss and the parts worth "
        "improving first. Exit 0, 130 when interrupted.")
    _common(avail)
    avail.add_argument("--simulate", type=int, default=0, metavar="YEARS",
                       help="check against a sequential Monte Carlo simulation of YEARS years")
    avail.add_argument("--seed", type=int, default=1, help="seed of the simulation (default 1)")
    avail.set_defaults(handler=_availability)
